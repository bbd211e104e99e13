//! The result of `clockprep tune` ("format": "clockprep-tune/1") and its page.

use super::page::{Block, Page, Section, Table};
use super::words::NOT_A_GUARANTEE;
use crate::kinetics::tune::Tuning;
use crate::spec::{Prior, Spec};
use crate::units;
use serde::Serialize;

#[derive(Debug, Clone, Serialize)]
pub struct TunedRun {
    pub name: String,
    /// Predicted times at the warm end, the planned temperature and the cool end, s.
    pub warm_s: f64,
    pub planned_s: f64,
    pub cool_s: f64,
}

/// The report of `clockprep tune`.
#[derive(Debug, Clone, Serialize)]
pub struct TuneSheet {
    pub format: &'static str,
    pub title: String,
    pub spec: String,
    pub timing_species: String,
    /// The best single timing concentration, mol/L, and the same as the spec writes it.
    #[serde(rename = "concentration_M")]
    pub concentration_m: f64,
    pub concentration: String,
    /// The spec's timing concentration now, mol/L.
    #[serde(rename = "current_M")]
    pub current_m: f64,
    /// The largest concentration the conversion limit allows, mol/L.
    #[serde(rename = "limit_M")]
    pub limit_m: f64,
    /// Smallest factor between a run's time and the window edge (> 1 inside).
    pub margin_factor: f64,
    /// The visible threshold's factor (×/÷) that widens the band with the temperature's.
    pub threshold_factor: Option<f64>,
    pub fits: bool,
    pub window_s: [f64; 2],
    /// Warm and cool ends of the band, °C.
    #[serde(rename = "band_C")]
    pub band_c: [f64; 2],
    pub runs: Vec<TunedRun>,
    /// When nothing fits: what to change, checked by re-running the tuning.
    pub advice: Vec<String>,
}

impl TuneSheet {
    pub fn build(spec: &Spec, prior: &Prior, t: &Tuning) -> TuneSheet {
        let f = &prior.settings;
        TuneSheet {
            format: "clockprep-tune/1",
            title: spec.title.clone(),
            spec: spec.source.name.clone(),
            timing_species: spec.timing.species.clone(),
            concentration_m: t.concentration,
            concentration: units::concentration(t.concentration),
            current_m: spec.timing.concentration,
            limit_m: t.limit,
            margin_factor: t.margin.exp(),
            threshold_factor: prior.reaction.visible.as_ref().map(|v| v.factor),
            fits: t.margin >= 0.0,
            window_s: [f.window.0, f.window.1],
            band_c: [
                super::sig10(f.temperature - f.band - 273.15),
                super::sig10(f.temperature + f.band - 273.15),
            ],
            runs: t
                .runs
                .iter()
                .map(|r| TunedRun {
                    name: r.name.clone(),
                    warm_s: r.fast,
                    planned_s: r.at,
                    cool_s: r.slow,
                })
                .collect(),
            advice: t.advice.clone(),
        }
    }

    /// The next step, in words: set the concentration, or change the runs as advised.
    pub fn next_step(&self) -> String {
        if self.fits {
            format!("Set [timing] concentration = \"{}\", then run clockprep plan to check that the timing stock volume is deliverable. {NOT_A_GUARANTEE}", self.concentration)
        } else {
            format!("No timing concentration fits these runs as they stand: change the runs as advised, then run clockprep tune again. {NOT_A_GUARANTEE}")
        }
    }

    pub fn page(&self) -> Page {
        let title = format!("Clock tuning: {}", self.title);
        let mut head = Section::new(title.clone());
        head.para(format!("Spec: {}", self.spec));
        head.para(format!(
            "Best single timing concentration: {} {} (now {}); the conversion limit allows up to {}.",
            self.timing_species,
            self.concentration,
            units::concentration(self.current_m),
            units::concentration(self.limit_m)
        ));
        head.para(format!(
            "Smallest margin to the {:.0} s to {:.0} s window across {:.1} to {:.1} °C{}: x{:.2} {}.",
            self.window_s[0],
            self.window_s[1],
            self.band_c[0],
            self.band_c[1],
            self.threshold_factor
                .filter(|f| *f > 1.0)
                .map(|f| format!(" and the visible threshold ×/÷ {}", crate::units::sig(f, 2)))
                .unwrap_or_default(),
            self.margin_factor,
            if self.fits {
                "(inside)"
            } else {
                "(outside: see below)"
            }
        ));
        let rows = self
            .runs
            .iter()
            .map(|r| {
                vec![
                    r.name.clone(),
                    format!("{:.1}", r.warm_s),
                    format!("{:.1}", r.planned_s),
                    format!("{:.1}", r.cool_s),
                ]
            })
            .collect();
        let mut table = Section::untitled();
        table.push(Block::Table(Table::numeric(
            super::page::headers(&["run", "warm (s)", "planned (s)", "cool (s)"]),
            rows,
        )));
        let mut sections = vec![head, table];
        for a in &self.advice {
            let mut s = Section::untitled();
            s.para(a.clone());
            sections.push(s);
        }
        let mut next = Section::untitled();
        next.para(self.next_step());
        sections.push(next);
        sections.push(super::page::general_cautions());
        Page { title, sections }
    }
}
