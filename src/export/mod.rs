//! Exporters: pure functions from a report to bytes. Text, Markdown and HTML are backends over
//! the report's page ([`crate::report::page`]); CSV and JSON are typed serializers of the
//! report itself; TOML is the fragment `fit`, `design` and `tune` hand back to paste into a
//! spec. The CLI decides where the bytes go.

pub mod cards;
pub mod chart;
mod csv;
mod html;
mod json;
pub mod labels;
mod markdown;
pub mod pdf;
mod text;
mod toml;
pub mod typeset;
pub mod xlsx;

use crate::report::page::Page;
use crate::report::{DesignSheet, FitReport, ForecastSheet, PlanReport, StockSheet, TuneSheet};

pub use self::csv::Csv;
pub use self::json::Json;

/// Turns a sheet into the bytes of one tabular format.
pub trait Exporter {
    /// The mixing sheet of `clockprep plan`.
    fn plan(&self, report: &PlanReport) -> Vec<u8>;
    /// The sheet of `clockprep forecast`.
    fn forecast(&self, sheet: &ForecastSheet) -> Vec<u8>;
    /// The stock preparation sheet of `clockprep stocks`.
    fn stocks(&self, sheet: &StockSheet) -> Vec<u8>;
}

/// The output formats of the sheets of `plan`, `forecast` and `stocks`.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Format {
    Text,
    Csv,
    Json,
    Markdown,
    Html,
}

/// The output formats of `fit`, `design` and `tune`: the page, JSON, or the TOML fragment to
/// paste into the spec.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum SummaryFormat {
    Text,
    Json,
    Markdown,
    Html,
    Toml,
}

/// A page in one of the page formats.
fn render(page: &Page, format: Format) -> Option<Vec<u8>> {
    match format {
        Format::Text => Some(text::render(page)),
        Format::Markdown => Some(markdown::render(page)),
        Format::Html => Some(html::render(page)),
        Format::Csv | Format::Json => None,
    }
}

/// A page as the HTML document every sheet prints as.
pub fn render_html(page: &Page) -> Vec<u8> {
    html::render(page)
}

/// Export a plan report in `format`.
pub fn export(report: &PlanReport, format: Format) -> Vec<u8> {
    match format {
        Format::Csv => Csv.plan(report),
        Format::Json => Json.plan(report),
        _ => render(&report.page(), format).unwrap_or_default(),
    }
}

/// Export a stock preparation sheet in `format`.
pub fn export_stocks(sheet: &StockSheet, format: Format) -> Vec<u8> {
    match format {
        Format::Csv => Csv.stocks(sheet),
        Format::Json => Json.stocks(sheet),
        _ => render(&sheet.page(), format).unwrap_or_default(),
    }
}

/// Export a forecast sheet in `format`.
pub fn export_forecast(sheet: &ForecastSheet, format: Format) -> Vec<u8> {
    match format {
        Format::Csv => Csv.forecast(sheet),
        Format::Json => Json.forecast(sheet),
        _ => render(&sheet.page(), format).unwrap_or_default(),
    }
}

fn summary(
    page: Page,
    json: Vec<u8>,
    toml: impl FnOnce() -> String,
    format: SummaryFormat,
) -> Vec<u8> {
    match format {
        SummaryFormat::Text => text::render(&page),
        SummaryFormat::Markdown => markdown::render(&page),
        SummaryFormat::Html => html::render(&page),
        SummaryFormat::Json => json,
        SummaryFormat::Toml => toml().into_bytes(),
    }
}

/// Export the result of `clockprep fit`.
pub fn export_fit(report: &FitReport, format: SummaryFormat) -> Vec<u8> {
    match report {
        FitReport::OneTerm(sheet) => summary(
            sheet.page(),
            json::pretty(sheet),
            || toml::fit(sheet.summary(), &sheet.reaction_toml),
            format,
        ),
        FitReport::Terms(sheet) => summary(
            sheet.page(),
            json::pretty(sheet),
            || toml::fit(sheet.summary(), &sheet.reaction_toml),
            format,
        ),
    }
}

/// Export the result of `clockprep design`.
pub fn export_design(sheet: &DesignSheet, format: SummaryFormat) -> Vec<u8> {
    summary(
        sheet.page(),
        json::pretty(sheet),
        || toml::design(sheet),
        format,
    )
}

/// Export the result of `clockprep tune`.
pub fn export_tune(sheet: &TuneSheet, format: SummaryFormat) -> Vec<u8> {
    summary(
        sheet.page(),
        json::pretty(sheet),
        || toml::tune(sheet),
        format,
    )
}
