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
    /// Standard deviation of ln t of one trial, all sources.
    pub sigma_ln_t: f64,
    /// The same split by how far each part is shared.
    pub sigma_ln_t_parts: SigmaPartsReport,
    /// Predicted time at the planned temperature (s), when the spec has a prior.
    pub predicted_s: Option<f64>,
}

/// σ of ln t of one trial by how far it is shared.
#[derive(Debug, Clone, Serialize)]
pub struct SigmaPartsReport {
    /// From the stock flasks the whole lab shares.
    pub lab_wide: f64,
    /// From the station's own glassware (the same items in all its trials).
    pub station_wide: f64,
    /// Drawn afresh in each trial: stopwatch, temperature scatter, scale readings.
    pub per_trial: f64,
}

#[derive(Debug, Clone, Serialize)]
pub struct PrecisionReport {
    /// "ln k at 1 M", "ln k at centre", "ln k, orders fixed", "ln k at … °C, orders fixed",
    /// or the species of an order.
    pub parameter: String,
    /// Expected standard error from one station's trials.
    pub per_station: f64,
    /// Expected standard error with all stations pooled.
    pub pooled: f64,
    /// The part of `pooled` from the shared stock flasks, which no number of stations lowers.
    pub lab_wide_floor: f64,
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
    /// Standard uncertainty of a station thermometer's offset, K (one per station).
    #[serde(rename = "thermometer_u_K")]
    pub thermometer_u_k: f64,
    /// The design's centre: each species' geometric mean over the runs (mol/L).
    pub centre: super::Ordered,
    pub runs: Vec<DesignedRunReport>,
    pub precision: Vec<PrecisionReport>,
    pub not_varied: Vec<String>,
    pub warnings: Vec<String>,
    /// What would improve the design without being wrong as it is: a shared stock worth
    /// standardizing. Not a flag.
    pub advice: Vec<String>,
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
            thermometer_u_k: report.thermometer,
            centre: super::Ordered(report.centre.clone()),
            runs: report
                .runs
                .iter()
                .zip(&report.sigma_parts)
                .zip(&report.times)
                .map(|((r, s), t)| DesignedRunReport {
                    name: r.name.clone(),
                    targets: super::Ordered(r.targets.clone()),
                    sigma_ln_t: s.total(),
                    sigma_ln_t_parts: SigmaPartsReport {
                        lab_wide: s.lab,
                        station_wide: s.station,
                        per_trial: s.trial,
                    },
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
                    lab_wide_floor: p.lab_wide,
                })
                .collect(),
            not_varied: report.not_varied.clone(),
            warnings: report.warnings.clone(),
            advice: report.advice.clone(),
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
                "{what}: ±{:.3} per station (±{:.3} pooled, of which ±{:.3} from the shared stocks)",
                p.per_station, p.pooled, p.lab_wide_floor
            ));
        }
        let centre: Vec<String> = self
            .centre
            .0
            .iter()
            .map(|(sp, c)| format!("{sp} {} mM", super::words::mm(*c)))
            .collect();
        s.para(format!(
            "ln k at centre is the fitted rate at the design's centre ({}) less the centre's Σ n ln c; ln k at 1 M extrapolates the orders' errors to 1 M.",
            centre.join(", ")
        ));
        s.para(format!(
            "Errors: the stock flasks are shared by the whole lab, each station's glassware and thermometer (offset u {:.2} K) by its trials; the stopwatch ({} %), the temperature scatter ({} °C) and the scale readings are drawn afresh in each trial.",
            self.thermometer_u_k,
            trim(self.timing_error * 100.0),
            trim(self.temperature_spread_k)
        ));
        s.push(Block::Warnings(self.warnings.clone()));
        for a in &self.advice {
            s.para(format!("Advice: {a}."));
        }
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
        cols.extend(
            [
                "σ(ln t)",
                "σ lab-wide",
                "σ station-wide",
                "σ per trial",
                "predicted (s)",
            ]
            .map(String::from),
        );
        let rows = self
            .runs
            .iter()
            .map(|r| {
                let mut row = vec![r.name.clone()];
                row.extend(r.targets.0.iter().map(|(_, c)| super::words::mm(*c)));
                row.push(format!("{:.3}", r.sigma_ln_t));
                let p = &r.sigma_ln_t_parts;
                for v in [p.lab_wide, p.station_wide, p.per_trial] {
                    row.push(format!("{v:.3}"));
                }
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
