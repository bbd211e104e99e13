//! clockprep: plan clock-reaction kinetics labs from one TOML spec.
//!
//! The data flow is one module per stage:
//! [`spec`] (parse, units, validate) → [`solve`] (the integer LP for deliverable volumes) →
//! [`mixing`] (the two portions mixed at t = 0) → [`totals`] (stock to prepare) →
//! [`report`] (the plan as data) → [`export`] (text, CSV, JSON, Markdown).

pub mod cli;
pub mod device;
pub mod error;
pub mod export;
pub mod mixing;
pub mod output;
pub mod report;
pub mod safety;
pub mod solve;
pub mod spec;
pub mod species;
pub mod totals;
pub mod units;

use error::{Result, SpecSource};

/// The whole job for one spec: checked plan → deliverable volumes → portions → stock totals →
/// report.
pub fn plan(source: SpecSource) -> Result<report::PlanReport> {
    let spec = spec::load(source)?;
    let solution = solve::solve(&spec)?;
    let mixing = mixing::split(&spec, &solution)?;
    let totals = totals::compute(&spec, &solution);
    Ok(report::build(&spec, &solution, &mixing, &totals))
}
