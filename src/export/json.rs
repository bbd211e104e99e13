use super::Exporter;
use crate::report::PlanReport;

/// The report as pretty-printed JSON; the layout is documented in the README.
pub struct Json;

impl Exporter for Json {
    fn export(&self, report: &PlanReport) -> Vec<u8> {
        let mut out = serde_json::to_vec_pretty(report).expect("a report always serialises");
        out.push(b'\n');
        out
    }
}
