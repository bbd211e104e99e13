//! The bench side of a solved plan: the two portions mixed at t = 0, the stock to prepare, the
//! recipes that make it up, and the uncertainty the glassware and stocks carry into each run.

pub mod portions;
pub mod recipes;
pub mod schedule;
pub mod totals;
pub mod uncertainty;
pub mod waste;
pub mod weighing;
