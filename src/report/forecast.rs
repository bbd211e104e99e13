//! The forecast as data: per-run forecast reports, the prior and its settings as reported, and
//! the sheet of `clockprep forecast` ("format": "clockprep-forecast/1").

use super::*;
use crate::spec::VisibleAs;

/// Version tag of the `clockprep forecast` JSON layout.
pub const FORECAST_FORMAT: &str = "clockprep-forecast/1";

/// The forecast of one run. Times in s, temperatures in °C, rates in mol L⁻¹ s⁻¹.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct ForecastReport {
    #[serde(rename = "temperature_C")]
    pub temperature_c: f64,
    /// Cool and warm ends of the band.
    #[serde(rename = "band_C")]
    pub band_c: [f64; 2],
    /// The reported time to colour at the planned temperature (clock plus visible wait).
    pub time_s: Option<f64>,
    /// "visible colour" when a visible threshold is known, else "clock".
    pub uses: &'static str,
    /// Until the timing reagent is used up.
    pub clock_s: Option<f64>,
    /// From then until the colour is visible.
    pub visible_extra_s: Option<f64>,
    /// Time to colour at the warm (fast) and cool (slow) ends of the band.
    pub band_s: Option<[f64; 2]>,
    /// The initial-rate approximation `[timing]`₀/(ν r₀) of the clock time.
    pub initial_rate_s: Option<f64>,
    /// (approximation − exact clock time)/exact, percent.
    pub initial_rate_difference_pct: Option<f64>,
    /// The rate a student computes from the predicted time: `[timing]`₀/(ν t).
    #[serde(rename = "rate_M_per_s")]
    pub rate: Option<f64>,
    /// The true initial rate r₀ of the prior rate law.
    #[serde(rename = "initial_rate_M_per_s")]
    pub initial_rate: Option<f64>,
    /// Relative standard uncertainty (k = 1) of the time from glassware and stocks, percent.
    pub volumetric_uncertainty_pct: Option<f64>,
    /// The same for the clock time alone, percent.
    pub clock_volumetric_uncertainty_pct: Option<f64>,
    /// The visible wait with the threshold at the low and high end of its factor, s.
    pub visible_extra_range_s: Option<[f64; 2]>,
    /// Relative standard uncertainty (k = 1) of the time to colour from the visible
    /// threshold's factor (half the range above, over the time), percent.
    pub threshold_uncertainty_pct: Option<f64>,
    /// The same half range over the visible wait itself, percent.
    pub visible_extra_uncertainty_pct: Option<f64>,
    /// Largest fraction of a reactant used up at the clock, and which one.
    pub max_conversion: Option<f64>,
    pub max_conversion_species: Option<String>,
    pub warnings: Vec<Flag>,
}

#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct TermReport {
    /// k in SI units (M^(1−n) s⁻¹), at `at_C`.
    pub k: f64,
    pub k_unit: String,
    #[serde(rename = "at_C")]
    pub at_c: f64,
    #[serde(rename = "activation_energy_kJ_per_mol")]
    pub activation_energy: Option<f64>,
    pub orders: Ordered,
    pub source: Option<String>,
}

#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct ReactionReport {
    pub name: String,
    pub rate_species: String,
    pub timing_species: String,
    pub intermediate: String,
    /// mol of timing reagent per mol of rate species.
    pub nu: f64,
    pub terms: Vec<TermReport>,
    #[serde(rename = "visible_threshold_M")]
    pub visible_threshold: Option<f64>,
    /// What the threshold measures: "triiodide" (I3-, which starch shows) or "total" (the
    /// intermediate's total concentration).
    pub visible_as: Option<&'static str>,
    /// The threshold is known within ×/÷ this factor (k = 1).
    pub visible_factor: Option<f64>,
    /// I2 + I- ⇌ I3- at 25 °C and its enthalpy, when the threshold is triiodide.
    #[serde(rename = "triiodide_K_25C", skip_serializing_if = "Option::is_none")]
    pub triiodide_k: Option<f64>,
    #[serde(
        rename = "triiodide_dH_kJ_per_mol",
        skip_serializing_if = "Option::is_none"
    )]
    pub triiodide_dh: Option<f64>,
    /// The ionic strength at which k holds, when k is scaled to each run's (salt effect on).
    #[serde(rename = "k_at_ionic_strength_M")]
    pub k_at_ionic_strength: Option<f64>,
    pub visible_source: Option<String>,
}

#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct ForecastSettingsReport {
    #[serde(rename = "temperature_C")]
    pub temperature_c: f64,
    /// Half-width of the band, °C (= K).
    #[serde(rename = "band_C")]
    pub band_c: f64,
    pub window_s: [f64; 2],
    pub lab_period_s: Option<f64>,
    pub handling_per_run_s: f64,
}

/// The output of `clockprep forecast`: forecasts from the target concentrations alone.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct ForecastSheet {
    pub format: &'static str,
    pub title: String,
    pub spec: String,
    pub timing: TimingTarget,
    pub reaction: ReactionReport,
    pub forecast_settings: ForecastSettingsReport,
    pub runs: Vec<ForecastRun>,
    /// The lab sections with each run's forecast at the section's temperature (as on the
    /// mixing sheet); empty for a one-section spec.
    pub sections: Vec<SectionForecast>,
    pub warnings: Vec<Flag>,
    pub flagged: bool,
    pub cautions: Vec<String>,
}

#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct TimingTarget {
    pub species: String,
    #[serde(rename = "concentration_M")]
    pub concentration: f64,
}

#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct ForecastRun {
    pub name: String,
    /// The run's targets, mol/L.
    pub concentrations: Ordered,
    pub forecast: ForecastReport,
}

pub(super) fn forecast_report(f: &RunForecast) -> ForecastReport {
    let c = |t: f64| sig10(t - 273.15);
    let max = f.max_conversion();
    ForecastReport {
        temperature_c: c(f.temperature),
        band_c: [c(f.band.0), c(f.band.1)],
        time_s: f.time().map(sig10),
        uses: if f.uses_visible {
            "visible colour"
        } else {
            "clock"
        },
        clock_s: f.timing.map(|t| sig10(t.clock)),
        visible_extra_s: f
            .timing
            .filter(|_| f.uses_visible)
            .map(|t| sig10(t.visible_extra)),
        band_s: f.band_times.map(|(a, b)| [sig10(a), sig10(b)]),
        initial_rate_s: f.timing.map(|t| sig10(t.initial_rate)),
        initial_rate_difference_pct: f
            .timing
            .map(|t| sig10((t.initial_rate - t.clock) / t.clock * 100.0)),
        rate: f.implied_rate.map(sig10),
        initial_rate: f.timing.map(|t| sig10(t.rate0)),
        volumetric_uncertainty_pct: None,
        clock_volumetric_uncertainty_pct: None,
        visible_extra_range_s: f.visible_range.map(|(a, b)| [sig10(a), sig10(b)]),
        threshold_uncertainty_pct: f
            .visible_range
            .zip(f.time())
            .map(|((a, b), t)| sig10((b - a) / 2.0 / t * 100.0)),
        visible_extra_uncertainty_pct: f
            .visible_range
            .zip(f.timing)
            .filter(|(_, t)| t.visible_extra > 0.0)
            .map(|((a, b), t)| sig10((b - a) / 2.0 / t.visible_extra * 100.0)),
        max_conversion: max.map(|m| sig10(m.1)),
        max_conversion_species: max.map(|m| m.0.to_string()),
        warnings: f.warnings.clone(),
    }
}

fn unit_of_k(order: f64) -> String {
    let p = 1.0 - order;
    if p == 0.0 {
        "s^-1".into()
    } else {
        format!("M^{p} s^-1")
    }
}

pub(super) fn reaction_report(r: &Reaction) -> ReactionReport {
    ReactionReport {
        name: r.name.clone(),
        rate_species: r.rate_species.clone(),
        timing_species: r.timing_species.clone(),
        intermediate: r.intermediate.clone(),
        nu: sig10(r.nu),
        terms: r
            .terms
            .iter()
            .map(|t| TermReport {
                k: sig10(t.k_ref),
                k_unit: unit_of_k(t.overall_order()),
                at_c: sig10(t.t_ref - 273.15),
                activation_energy: t.activation_energy.map(|e| sig10(e / 1e3)),
                orders: Ordered(t.orders.clone()),
                source: t.source.clone(),
            })
            .collect(),
        visible_threshold: r.visible.as_ref().map(|v| sig10(v.threshold)),
        visible_as: r.visible.as_ref().map(|v| v.criterion.word()),
        k_at_ionic_strength: r.salt_reference.map(sig10),
        visible_factor: r.visible.as_ref().map(|v| sig10(v.factor)),
        triiodide_k: r
            .visible
            .as_ref()
            .filter(|v| v.criterion == VisibleAs::Triiodide)
            .map(|_| crate::kinetics::TRIIODIDE_K25),
        triiodide_dh: r
            .visible
            .as_ref()
            .filter(|v| v.criterion == VisibleAs::Triiodide)
            .map(|_| crate::kinetics::TRIIODIDE_DH / 1e3),
        visible_source: r.visible.as_ref().and_then(|v| v.source.clone()),
    }
}

pub(super) fn settings_report(f: &ForecastSettings) -> ForecastSettingsReport {
    ForecastSettingsReport {
        temperature_c: sig10(f.temperature - 273.15),
        band_c: sig10(f.band),
        window_s: [sig10(f.window.0), sig10(f.window.1)],
        lab_period_s: f.lab_period.map(sig10),
        handling_per_run_s: sig10(f.handling),
    }
}

/// The report of `clockprep forecast`.
pub fn build_forecast(spec: &Spec, prior: &Prior, forecast: &Forecast) -> ForecastSheet {
    let reaction = &prior.reaction;
    // No stocks here: each species stands for the reagent that brings it.
    let mut species: Vec<&str> = vec![spec.timing.species.as_str()];
    for t in spec.runs.iter().flat_map(|r| &r.targets) {
        if !species.contains(&t.species.as_str()) {
            species.push(&t.species);
        }
    }
    ForecastSheet {
        format: FORECAST_FORMAT,
        title: spec.title.clone(),
        spec: spec.source.name.clone(),
        timing: TimingTarget {
            species: spec.timing.species.clone(),
            concentration: sig10(spec.timing.concentration),
        },
        reaction: reaction_report(reaction),
        forecast_settings: settings_report(&prior.settings),
        runs: spec
            .runs
            .iter()
            .zip(&forecast.runs)
            .map(|(r, f)| ForecastRun {
                name: r.name.clone(),
                concentrations: Ordered(
                    r.targets
                        .iter()
                        .map(|t| (t.species.clone(), sig10(t.concentration)))
                        .collect(),
                ),
                forecast: forecast_report(f),
            })
            .collect(),
        sections: Vec::new(),
        warnings: forecast.warnings.clone(),
        flagged: forecast.flagged(),
        cautions: reagents::cautions(species.iter().map(|sp| (None, vec![*sp]))),
    }
}

impl ForecastSheet {
    /// Every run as a row of the forecast chart.
    pub fn chart_rows(&self) -> Vec<page::ChartRow> {
        self.runs
            .iter()
            .map(|r| page::ChartRow {
                name: r.name.clone(),
                forecast: r.forecast.clone(),
            })
            .collect()
    }
}
