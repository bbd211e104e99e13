use super::Exporter;
use crate::report::{ForecastSheet, PlanReport, StockSheet};
use serde::Serialize;

pub(crate) fn pretty(value: &impl Serialize) -> Vec<u8> {
    let mut out = serde_json::to_vec_pretty(value).expect("a report always serialises");
    out.push(b'\n');
    out
}

/// The report as pretty-printed JSON; the layout is documented in the README.
pub struct Json;

impl Exporter for Json {
    fn plan(&self, report: &PlanReport) -> Vec<u8> {
        pretty(report)
    }

    fn forecast(&self, sheet: &ForecastSheet) -> Vec<u8> {
        pretty(sheet)
    }

    fn stocks(&self, sheet: &StockSheet) -> Vec<u8> {
        pretty(sheet)
    }
}
