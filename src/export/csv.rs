use super::Exporter;
use crate::report::PlanReport;

/// One row per delivered volume and per species of every run, for spreadsheets.
///
/// Columns: `run, row, name, vessel, mL, device, target_M, achieved_M, deviation`, where `row`
/// is `volume`, `species`, `ionic_strength` or `stock_total`. Cells that do not apply are empty.
pub struct Csv;

impl Exporter for Csv {
    fn export(&self, report: &PlanReport) -> Vec<u8> {
        let mut w = csv::Writer::from_writer(Vec::new());
        let row = |w: &mut csv::Writer<Vec<u8>>, cells: [String; 9]| {
            w.write_record(&cells)
                .expect("writing to memory cannot fail");
        };
        row(
            &mut w,
            [
                "run",
                "row",
                "name",
                "vessel",
                "mL",
                "device",
                "target_M",
                "achieved_M",
                "deviation",
            ]
            .map(String::from),
        );
        for r in &report.runs {
            for v in &r.volumes {
                row(
                    &mut w,
                    [
                        r.name.clone(),
                        "volume".into(),
                        v.stock.clone(),
                        v.vessel.clone(),
                        v.ml.to_string(),
                        v.device.clone(),
                        String::new(),
                        String::new(),
                        String::new(),
                    ],
                );
            }
            for (sp, c) in &r.concentrations.0 {
                let target = r.targets.get(sp).map(|t| t.to_string()).unwrap_or_default();
                let dev = r
                    .deviation
                    .get(sp)
                    .map(|d| d.to_string())
                    .unwrap_or_default();
                row(
                    &mut w,
                    [
                        r.name.clone(),
                        "species".into(),
                        sp.clone(),
                        String::new(),
                        String::new(),
                        String::new(),
                        target,
                        c.to_string(),
                        dev,
                    ],
                );
            }
            let held = r.targets.get("ionic strength");
            row(
                &mut w,
                [
                    r.name.clone(),
                    "ionic_strength".into(),
                    "I".into(),
                    String::new(),
                    String::new(),
                    String::new(),
                    held.map(|t| t.to_string()).unwrap_or_default(),
                    r.ionic_strength.to_string(),
                    r.deviation
                        .get("ionic strength")
                        .map(|d| d.to_string())
                        .unwrap_or_default(),
                ],
            );
        }
        for t in &report.stock_totals {
            row(
                &mut w,
                [
                    String::new(),
                    "stock_total".into(),
                    t.stock.clone(),
                    String::new(),
                    t.ml.to_string(),
                    format!("{} x {} mL flask", t.flask_count, t.flask_ml),
                    String::new(),
                    String::new(),
                    String::new(),
                ],
            );
        }
        w.into_inner().expect("writing to memory cannot fail")
    }
}
