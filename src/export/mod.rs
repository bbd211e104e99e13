//! Exporters: pure functions from a [`PlanReport`] to bytes, one small type per format behind
//! one trait. The CLI decides where the bytes go.

pub mod cards;
pub mod chart;
mod csv;
mod html;
mod json;
mod markdown;
pub mod pdf;
mod text;

use crate::report::{ForecastSheet, PlanReport, StockSheet};

pub use self::csv::Csv;
pub use self::html::Html;
pub use self::json::Json;
pub use self::markdown::Markdown;
pub use self::text::Text;

/// Turns a report into the bytes of one output format.
pub trait Exporter {
    /// The mixing sheet of `clockprep plan`.
    fn plan(&self, report: &PlanReport) -> Vec<u8>;
    /// The sheet of `clockprep forecast`.
    fn forecast(&self, sheet: &ForecastSheet) -> Vec<u8>;
    /// The stock preparation sheet of `clockprep stocks`.
    fn stocks(&self, sheet: &StockSheet) -> Vec<u8>;
}

/// The output formats of `clockprep plan`.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Format {
    Text,
    Csv,
    Json,
    Markdown,
    Html,
}

impl Format {
    pub fn exporter(self) -> &'static dyn Exporter {
        match self {
            Format::Text => &Text,
            Format::Csv => &Csv,
            Format::Json => &Json,
            Format::Markdown => &Markdown,
            Format::Html => &Html,
        }
    }
}

/// Export a plan report in `format`.
pub fn export(report: &PlanReport, format: Format) -> Vec<u8> {
    format.exporter().plan(report)
}

/// Export a stock preparation sheet in `format`.
pub fn export_stocks(sheet: &StockSheet, format: Format) -> Vec<u8> {
    format.exporter().stocks(sheet)
}

/// Export a forecast sheet in `format`.
pub fn export_forecast(sheet: &ForecastSheet, format: Format) -> Vec<u8> {
    format.exporter().forecast(sheet)
}

/// A number with `n` significant figures, without exponent for lab-sized values.
pub(crate) fn sig(v: f64, n: i32) -> String {
    if v == 0.0 {
        return format!("{:.*}", (n - 1).max(0) as usize, 0.0);
    }
    crate::units::sig(v, n)
}

/// Decimal places that show every volume of the plan exactly (at least 2, at most 3).
pub(crate) fn ml_decimals(report: &PlanReport) -> usize {
    let all = report
        .runs
        .iter()
        .flat_map(|r| r.volumes.iter().map(|v| v.ml));
    let mut d = 2;
    for v in all {
        while d < 3 && ((v * 10f64.powi(d as i32)).round() - v * 10f64.powi(d as i32)).abs() > 1e-6
        {
            d += 1;
        }
    }
    d
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn significant_figures() {
        assert_eq!(sig(2.5, 3), "2.50");
        assert_eq!(sig(150.0, 3), "150");
        assert_eq!(sig(0.0123, 3), "0.0123");
        assert_eq!(sig(0.0, 3), "0.00");
        // Regression: a huge value printed as a 300-digit number.
        assert_eq!(sig(1.5e300, 3), "1.50e300");
        assert_eq!(sig(-0.0001, 1), "-0.0001");
        assert_eq!(sig(-1e-12, 2), "-1.0e-12");
    }
}
