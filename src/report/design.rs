//! The result of `clockprep design` ("format": "clockprep-design/1") and its page. The designed
//! runs as `[[run]]` TOML are part of the report.

use super::page::{Block, Page, Section, Table};
use crate::kinetics::design::DesignReport;
use crate::spec::{Design, Scheme, Spec};
use serde::Serialize;

#[derive(Debug, Clone, Serialize)]
pub struct DesignedRunReport {
    pub name: String,
    /// Species → target (mol/L), in the order of the base point.
    pub targets: super::Ordered,
    /// Standard deviation of ln t of one trial.
    pub sigma_ln_t: f64,
    /// Predicted time at the planned temperature (s), when the spec has a prior.
    pub predicted_s: Option<f64>,
}

#[derive(Debug, Clone, Serialize)]
pub struct PrecisionReport {
    /// "ln k", "ln k, orders fixed", or the species of an order.
    pub parameter: String,
    /// Expected standard error from one station's trials.
    pub per_station: f64,
    /// Expected standard error with all stations pooled.
    pub pooled: f64,
}

/// The report of `clockprep design`.
#[derive(Debug, Clone, Serialize)]
pub struct DesignSheet {
    pub format: &'static str,
    pub title: String,
    pub spec: String,
    pub scheme: &'static str,
    pub stations: u32,
    pub replicates: u32,
    /// Relative timing error of one trial.
    pub timing_error: f64,
    /// Unrecorded trial-to-trial temperature scatter, K.
    #[serde(rename = "temperature_spread_K")]
    pub temperature_spread_k: f64,
    pub runs: Vec<DesignedRunReport>,
    pub precision: Vec<PrecisionReport>,
    pub not_varied: Vec<String>,
    pub warnings: Vec<String>,
    /// The runs as `[[run]]` tables to paste into a spec.
    pub runs_toml: String,
    pub flagged: bool,
}

/// A number to four decimals without trailing zeros.
fn trim(v: f64) -> String {
    let s = format!("{v:.4}");
    s.trim_end_matches('0').trim_end_matches('.').to_string()
}

fn runs_toml(report: &DesignReport) -> String {
    let q = |s: &str| toml::Value::String(s.to_string()).to_string();
    let mut out = String::new();
    for ((r, s), t) in report.runs.iter().zip(&report.sigma).zip(&report.times) {
        let time = t
            .map(|t| format!(", predicted {t:.0} s"))
            .unwrap_or_default();
        out.push_str(&format!("[[run]]    # σ(ln t) {s:.3}{time}\n"));
        out.push_str(&format!("name = {}\n", q(&r.name)));
        let targets: Vec<String> = r
            .targets
            .iter()
            .map(|(sp, c)| format!("{} = {}", q(sp), q(&crate::units::concentration(*c))))
            .collect();
        out.push_str(&format!("targets = {{ {} }}\n\n", targets.join(", ")));
    }
    out
}

impl DesignSheet {
    pub fn build(spec: &Spec, d: &Design, report: &DesignReport) -> DesignSheet {
        DesignSheet {
            format: "clockprep-design/1",
            title: spec.title.clone(),
            spec: spec.source.name.clone(),
            scheme: match d.scheme {
                Scheme::OneAtATime => "one-at-a-time",
                Scheme::Factorial => "factorial",
                Scheme::Levels => "levels",
            },
            stations: spec.stations,
            replicates: spec.replicates,
            timing_error: d.timing_error,
            temperature_spread_k: d.temperature_spread,
            runs: report
                .runs
                .iter()
                .zip(&report.sigma)
                .zip(&report.times)
                .map(|((r, s), t)| DesignedRunReport {
                    name: r.name.clone(),
                    targets: super::Ordered(r.targets.clone()),
                    sigma_ln_t: *s,
                    predicted_s: *t,
                })
                .collect(),
            precision: report
                .precision
                .iter()
                .map(|p| PrecisionReport {
                    parameter: p.name.clone(),
                    per_station: p.station,
                    pooled: p.class,
                })
                .collect(),
            not_varied: report.not_varied.clone(),
            warnings: report.warnings.clone(),
            runs_toml: runs_toml(report),
            flagged: !report.warnings.is_empty(),
        }
    }

    /// The design in sentences: what was generated and how precise it will be.
    pub fn summary(&self) -> Section {
        let mut s = Section::new(format!("Design: {}", self.title));
        s.para(format!(
            "{} runs, {}, from {}.",
            self.runs.len(),
            self.scheme,
            self.spec
        ));
        s.para(format!(
            "Expected standard errors with {} replicate(s) per station (all {} stations pooled):",
            self.replicates, self.stations
        ));
        for p in &self.precision {
            let what = if p.parameter.starts_with("ln k") {
                p.parameter.clone()
            } else {
                format!("order in {}", p.parameter)
            };
            s.detail(format!(
                "{what}: ±{:.3} per station (±{:.3} pooled)",
                p.per_station, p.pooled
            ));
        }
        s.para(format!(
            "Per-trial error: timing {} %, temperature scatter {} °C, glassware and stocks per run.",
            trim(self.timing_error * 100.0),
            trim(self.temperature_spread_k)
        ));
        s.push(Block::Warnings(self.warnings.clone()));
        s
    }

    pub fn page(&self) -> Page {
        let summary = self.summary();
        let species: Vec<String> = self
            .runs
            .first()
            .map(|r| {
                r.targets
                    .0
                    .iter()
                    .map(|(s, _)| format!("{s} (mM)"))
                    .collect()
            })
            .unwrap_or_default();
        let mut cols = vec!["run".to_string()];
        cols.extend(species);
        cols.extend(["σ(ln t)".to_string(), "predicted (s)".to_string()]);
        let rows = self
            .runs
            .iter()
            .map(|r| {
                let mut row = vec![r.name.clone()];
                row.extend(r.targets.0.iter().map(|(_, c)| super::words::mm(*c)));
                row.push(format!("{:.3}", r.sigma_ln_t));
                row.push(r.predicted_s.map_or("-".into(), |t| format!("{t:.0}")));
                row
            })
            .collect();
        let mut runs = Section::new("Designed runs");
        runs.push(Block::Table(Table::numeric(cols, rows)));
        let mut toml = Section::new("As [[run]] tables (paste into the spec)");
        toml.push(Block::Verbatim(self.runs_toml.clone()));
        Page {
            title: summary.heading.clone().unwrap_or_default(),
            sections: vec![summary, runs, toml, super::page::general_cautions()],
        }
    }
}
