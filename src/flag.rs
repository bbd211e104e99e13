//! A reason to look twice at a run or a plan. Every stage that judges (solve, forecast, fit,
//! design) reports with it and every renderer prints it, so it depends on nothing.

/// A machine-readable code plus the words for a person.
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct Flag {
    pub code: &'static str,
    pub message: String,
}
