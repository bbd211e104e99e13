//! clockprep: plan clock-reaction kinetics labs from one TOML spec.
//!
//! The data flow is one module per stage:
//! [`spec`] (parse, units, validate) → [`solve`] (the integer LP for deliverable volumes) →
//! [`mixing`] (the two portions mixed at t = 0) → [`totals`] (stock to prepare) →
//! [`report`] (the plan as data) → [`export`] (text, CSV, JSON, Markdown).

pub mod device;
pub mod error;
pub mod species;
pub mod spec;
pub mod solve;
pub mod units;
