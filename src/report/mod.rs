//! The plan as data: everything a sheet shows, with units in every field name, built once from
//! the stages before it. Exporters only format this; they compute nothing.

mod design;
mod fit;
pub mod page;
mod pages;
mod tune;
pub mod words;

pub use design::{DesignSheet, DesignedRunReport, PrecisionReport};
pub use fit::{FitOrder, FitResidual, FitSheet, Interval};
pub use tune::{TuneSheet, TunedRun};

use crate::flag::Flag;
use crate::kinetics::forecast::{Forecast, RunForecast};
use crate::lab::portions::{Mixing, Portion};
use crate::lab::totals::Totals;
use crate::lab::uncertainty::RunUncertainty;
use crate::reference::reagents;
use crate::solve::Solution;
use crate::spec::{ForecastSettings, Lab, Prior, Reaction, Spec};
use serde::ser::SerializeMap;
use serde::{Serialize, Serializer};

/// Version tag of the JSON layout; bumped when a field changes meaning or goes away.
pub const FORMAT: &str = "clockprep-plan/1";
/// Version tag of the `clockprep forecast` JSON layout.
pub const FORECAST_FORMAT: &str = "clockprep-forecast/1";

/// A map that keeps its insertion order when serialised (species in the order of the stocks).
#[derive(Debug, Clone, PartialEq, Default)]
pub struct Ordered(pub Vec<(String, f64)>);

impl Serialize for Ordered {
    fn serialize<S: Serializer>(&self, s: S) -> Result<S::Ok, S::Error> {
        let mut m = s.serialize_map(Some(self.0.len()))?;
        for (k, v) in &self.0 {
            m.serialize_entry(k, v)?;
        }
        m.end()
    }
}

impl Ordered {
    pub fn get(&self, key: &str) -> Option<f64> {
        self.0.iter().find(|(k, _)| k == key).map(|(_, v)| *v)
    }
}

#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Volume {
    pub stock: String,
    #[serde(rename = "mL")]
    pub ml: f64,
    pub device: String,
    /// "A", "B" or, for split water, "A+B".
    pub vessel: String,
}

#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct PortionItem {
    pub stock: String,
    #[serde(rename = "mL")]
    pub ml: f64,
    pub device: String,
}

#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Portions {
    #[serde(rename = "A")]
    pub a: Vec<PortionItem>,
    #[serde(rename = "B")]
    pub b: Vec<PortionItem>,
    #[serde(rename = "A_mL")]
    pub a_ml: f64,
    #[serde(rename = "B_mL")]
    pub b_ml: f64,
    /// e.g. "B into A"
    pub pour: String,
}

#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct RunReport {
    pub name: String,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub note: Option<String>,
    /// Name of an earlier run with identical targets whose recipe this one repeats.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub same_as: Option<String>,
    pub volumes: Vec<Volume>,
    /// Targets, mol/L.
    pub targets: Ordered,
    /// Every species as delivered, mol/L.
    pub concentrations: Ordered,
    /// (achieved − target)/target for each target (and ionic strength when held).
    pub deviation: Ordered,
    /// Relative standard uncertainty (k = 1) of each final concentration from the glassware
    /// tolerances and the stocks' concentration uncertainty.
    pub uncertainty: Ordered,
    #[serde(rename = "ionic_strength_M")]
    pub ionic_strength: f64,
    pub portions: Portions,
    pub flags: Vec<Flag>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub forecast: Option<ForecastReport>,
}

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

#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct StockTotal {
    pub stock: String,
    /// Volume to prepare: whole lab plus overage.
    #[serde(rename = "mL")]
    pub ml: f64,
    #[serde(rename = "used_mL")]
    pub used_ml: f64,
    /// One replicate set: every run done once.
    #[serde(rename = "one_set_mL")]
    pub one_set_ml: f64,
    /// What one station uses: every run × replicates (before overage).
    #[serde(rename = "per_station_mL")]
    pub per_station_ml: f64,
    #[serde(rename = "flask_mL")]
    pub flask_ml: f64,
    pub flask_count: u32,
}

#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct TimingReport {
    pub species: String,
    #[serde(rename = "concentration_M")]
    pub concentration: f64,
    pub stock: String,
    #[serde(rename = "mL")]
    pub ml: f64,
    pub device: String,
}

#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct IonicReport {
    #[serde(rename = "held_M")]
    pub held: f64,
    pub using: String,
}

#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct StockInfo {
    pub name: String,
    pub vessel: String,
    /// mol/L
    pub contains: Ordered,
}

#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct PlanReport {
    pub format: &'static str,
    pub title: String,
    pub spec: String,
    #[serde(rename = "total_volume_mL")]
    pub total_volume_ml: f64,
    pub stations: u32,
    pub replicates: u32,
    #[serde(rename = "overage_pct")]
    pub overage_pct: f64,
    #[serde(rename = "tolerance_pct")]
    pub tolerance_pct: f64,
    #[serde(rename = "temperature_C", skip_serializing_if = "Option::is_none")]
    pub temperature_c: Option<f64>,
    pub timing: TimingReport,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub ionic_strength: Option<IonicReport>,
    pub stocks: Vec<StockInfo>,
    pub runs: Vec<RunReport>,
    pub stock_totals: Vec<StockTotal>,
    #[serde(rename = "water_total_mL")]
    pub water_total_ml: f64,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub reaction: Option<ReactionReport>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub forecast_settings: Option<ForecastSettingsReport>,
    /// Plan-wide warnings (e.g. a session longer than the lab period).
    pub warnings: Vec<Flag>,
    /// True when any run carries a flag or forecast warning, or the plan a warning.
    pub flagged: bool,
    pub cautions: Vec<String>,
    /// The reagents of the plan with their GHS hazard codes (for compact card cautions).
    pub reagents: Vec<ReagentHazard>,
}

#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct ReagentHazard {
    pub name: String,
    pub ghs: Vec<String>,
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

/// mL with float noise removed (volumes are whole steps of at least 0.001 µL).
fn ml(litres: f64) -> f64 {
    // `+ 0.0` turns a negative zero (an empty float sum) into a plain zero.
    (litres * 1e3 * 1e9).round() / 1e9 + 0.0
}

/// A relative deviation with rounding noise below 1e-12 shown as exactly zero.
fn deviation(d: f64) -> f64 {
    if d.abs() < 1e-12 {
        0.0
    } else {
        sig10(d)
    }
}

/// Ten significant figures: removes float noise, keeps every digit that means anything.
pub(crate) fn sig10(v: f64) -> f64 {
    if v == 0.0 {
        return 0.0; // never -0
    }
    if !v.is_finite() {
        return v;
    }
    format!("{v:.9e}").parse().unwrap_or(v)
}

fn forecast_report(f: &RunForecast) -> ForecastReport {
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

fn reaction_report(r: &Reaction) -> ReactionReport {
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
        visible_source: r.visible.as_ref().and_then(|v| v.source.clone()),
    }
}

fn settings_report(f: &ForecastSettings) -> ForecastSettingsReport {
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
        warnings: forecast.warnings.clone(),
        flagged: forecast.flagged(),
        cautions: reagents::cautions(species.iter().map(|sp| (None, vec![*sp]))),
    }
}

pub fn build(
    spec: &Spec,
    lab: &Lab,
    solution: &Solution,
    mixing: &Mixing,
    totals: &Totals,
    forecast: Option<&Forecast>,
    uncertainty: &[RunUncertainty],
) -> PlanReport {
    let name =
        |s: Option<usize>| s.map_or_else(|| "water".to_string(), |s| lab.stocks[s].name.clone());
    let pour = format!("{} into {}", mixing.poured, mixing.poured.other());
    let vessel_of = |s: usize| {
        solution
            .used_stocks
            .iter()
            .position(|&u| u == s)
            .map(|i| mixing.vessel_of[i])
    };

    let portion_items = |p: &Portion| -> Vec<PortionItem> {
        p.items
            .iter()
            .map(|(s, v, d)| PortionItem {
                stock: name(*s),
                ml: ml(*v),
                device: d.describe(&lab.devices),
            })
            .collect()
    };

    let runs = solution
        .runs
        .iter()
        .zip(&spec.runs)
        .zip(&mixing.runs)
        .map(|((r, run), portions)| {
            let mut volumes: Vec<Volume> = solution
                .used_stocks
                .iter()
                .map(|&s| {
                    let add = r.additions.iter().find(|a| a.stock == Some(s));
                    Volume {
                        stock: name(Some(s)),
                        ml: ml(add.map_or(0.0, |a| a.volume)),
                        device: add.map_or("-".into(), |a| a.delivery.describe(&lab.devices)),
                        vessel: vessel_of(s).map_or("-".into(), |v| v.to_string()),
                    }
                })
                .collect();
            // Water as it is delivered: one row per portion that gets some, with that
            // portion's device (the same deliveries as the mixing sheet).
            for (label, portion) in [("A", &portions.a), ("B", &portions.b)] {
                for (_, v, d) in portion.items.iter().filter(|i| i.0.is_none()) {
                    volumes.push(Volume {
                        stock: "water".into(),
                        ml: ml(*v),
                        device: d.describe(&lab.devices),
                        vessel: label.into(),
                    });
                }
            }
            RunReport {
                name: run.name.clone(),
                note: run.note.clone(),
                same_as: r.same_as.map(|i| spec.runs[i].name.clone()),
                volumes,
                targets: Ordered(
                    r.goals
                        .iter()
                        .map(|g| (g.label.clone(), sig10(g.target)))
                        .collect(),
                ),
                concentrations: Ordered(
                    r.concentrations
                        .iter()
                        .map(|(s, c)| (s.clone(), sig10(*c)))
                        .collect(),
                ),
                deviation: Ordered(
                    r.goals
                        .iter()
                        .map(|g| (g.label.clone(), deviation(g.deviation)))
                        .collect(),
                ),
                ionic_strength: sig10(r.ionic_strength),
                uncertainty: Ordered::default(),
                portions: Portions {
                    a: portion_items(&portions.a),
                    b: portion_items(&portions.b),
                    a_ml: ml(portions.a.volume()),
                    b_ml: ml(portions.b.volume()),
                    pour: pour.clone(),
                },
                flags: r.flags.clone(),
                forecast: None,
            }
        })
        .collect::<Vec<_>>();
    let mut runs = runs;
    if let Some(f) = forecast {
        for (r, rf) in runs.iter_mut().zip(&f.runs) {
            r.forecast = Some(forecast_report(rf));
        }
    }
    for (r, u) in runs.iter_mut().zip(uncertainty) {
        r.uncertainty = Ordered(
            u.species
                .iter()
                .map(|(s, v)| (s.clone(), sig10(*v)))
                .collect(),
        );
        if let (Some(f), Some(t)) = (r.forecast.as_mut(), u.time) {
            f.volumetric_uncertainty_pct = Some(sig10(t * 100.0));
        }
    }

    let timing_add = solution.runs[0]
        .additions
        .iter()
        .find(|a| a.stock == Some(lab.timing_stock))
        .expect("the timing stock is in every run");

    let stocks_used = solution.used_stocks.iter().map(|&s| {
        let st = &lab.stocks[s];
        (
            st.solute.as_deref(),
            st.contains
                .iter()
                .map(|(sp, _)| sp.as_str())
                .collect::<Vec<_>>(),
        )
    });

    PlanReport {
        format: FORMAT,
        title: spec.title.clone(),
        spec: spec.source.name.clone(),
        total_volume_ml: ml(lab.total_volume),
        stations: spec.stations,
        replicates: spec.replicates,
        overage_pct: sig10(lab.overage * 100.0),
        tolerance_pct: sig10(lab.tolerance * 100.0),
        temperature_c: spec.temperature.map(|t| sig10(t - 273.15)),
        timing: TimingReport {
            species: spec.timing.species.clone(),
            concentration: sig10(spec.timing.concentration),
            stock: name(Some(lab.timing_stock)),
            ml: ml(timing_add.volume),
            device: timing_add.delivery.describe(&lab.devices),
        },
        ionic_strength: solution
            .ionic_target
            .zip(lab.ionic.as_ref())
            .map(|(held, i)| IonicReport {
                held: sig10(held),
                using: name(Some(i.stock)),
            }),
        stocks: solution
            .used_stocks
            .iter()
            .zip(&mixing.vessel_of)
            .map(|(&s, v)| StockInfo {
                name: name(Some(s)),
                vessel: v.to_string(),
                contains: Ordered(
                    lab.stocks[s]
                        .contains
                        .iter()
                        .map(|(sp, c)| (sp.clone(), sig10(*c)))
                        .collect(),
                ),
            })
            .collect(),
        flagged: runs.iter().any(|r: &RunReport| !r.flags.is_empty())
            || forecast.is_some_and(|f| f.flagged()),
        reaction: spec.prior.as_ref().map(|p| reaction_report(&p.reaction)),
        forecast_settings: spec.prior.as_ref().map(|p| settings_report(&p.settings)),
        warnings: forecast.map(|f| f.warnings.clone()).unwrap_or_default(),
        runs,
        stock_totals: totals
            .stocks
            .iter()
            .map(|t| StockTotal {
                stock: name(Some(t.stock)),
                ml: ml(t.need),
                used_ml: ml(t.used),
                one_set_ml: ml(t.per_station_set),
                per_station_ml: ml(t.per_station_set * spec.replicates as f64),
                flask_ml: ml(t.flask),
                flask_count: t.flask_count,
            })
            .collect(),
        water_total_ml: ml(totals.water),
        cautions: reagents::cautions(stocks_used.clone()),
        reagents: reagents::reagents(stocks_used)
            .into_iter()
            .map(|r| ReagentHazard {
                name: r.name.clone(),
                ghs: r.ghs.clone(),
            })
            .collect(),
    }
}

/// Version tag of the `clockprep stocks` JSON layout.
pub const STOCKS_FORMAT: &str = "clockprep-stocks/1";

/// The stock preparation sheet of `clockprep stocks`.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct StockSheet {
    pub format: &'static str,
    pub title: String,
    pub spec: String,
    pub stations: u32,
    pub replicates: u32,
    #[serde(rename = "overage_pct")]
    pub overage_pct: f64,
    pub stocks: Vec<StockPrep>,
    pub cautions: Vec<String>,
}

#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct StockPrep {
    pub name: String,
    pub solute: Option<String>,
    #[serde(rename = "molar_mass_g_per_mol")]
    pub molar_mass: Option<f64>,
    /// Concentration of the solute's formula unit, mol/L.
    #[serde(rename = "solute_concentration_M")]
    pub solute_concentration: Option<f64>,
    /// What to make: runs (with overage) plus what dilutions draw.
    #[serde(rename = "need_mL")]
    pub need_ml: f64,
    #[serde(rename = "drawn_by_dilutions_mL")]
    pub drawn_ml: f64,
    #[serde(rename = "flask_mL")]
    pub flask_ml: f64,
    pub flask_count: u32,
    pub recipe: RecipeReport,
    pub hazard_codes: Vec<String>,
    pub hazards: Option<String>,
    pub stability: Option<String>,
    /// Source of the hazard and stability lines.
    pub data_source: Option<String>,
}

#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct RecipeReport {
    /// "weigh", "measure", "dilute" or "as usual".
    pub kind: &'static str,
    #[serde(rename = "grams_per_flask")]
    pub grams: Option<f64>,
    #[serde(rename = "mL_per_flask")]
    pub ml: Option<f64>,
    pub from: Option<String>,
    #[serde(rename = "purity_pct")]
    pub purity_pct: Option<f64>,
    #[serde(rename = "mass_fraction_pct")]
    pub mass_fraction_pct: Option<f64>,
    #[serde(rename = "density_g_per_mL")]
    pub density: Option<f64>,
    /// The instruction in words, per flask.
    pub text: String,
}

pub fn build_stocks(
    spec: &Spec,
    lab: &Lab,
    preps: &[crate::lab::recipes::Preparation],
) -> StockSheet {
    use crate::lab::recipes::Action;
    use crate::spec::Recipe;
    let stocks = preps
        .iter()
        .map(|p| {
            let st = &lab.stocks[p.stock];
            let flask = format!("{} mL volumetric flask", sig10(p.flask * 1e3));
            let (molar_mass, solute_concentration, purity, w, rho) = match &st.recipe {
                Recipe::Weigh { concentration, molar_mass, purity, .. } => (Some(*molar_mass), Some(*concentration), Some(*purity), None, None),
                Recipe::Measure { concentration, molar_mass, mass_fraction, density, .. } => {
                    (Some(*molar_mass), Some(*concentration), None, Some(*mass_fraction), Some(*density))
                }
                _ => (None, None, None, None, None),
            };
            let solute = st.solute.clone().unwrap_or_default();
            let (kind, grams, volume, from, text) = match &p.action {
                Action::Weigh { grams } => (
                    "weigh",
                    Some(*grams),
                    None,
                    None,
                    format!(
                        "Weigh {grams:.4} g of {solute} ({:.2} g/mol{}) into a {flask}; dissolve in water and make up to the mark.",
                        molar_mass.unwrap_or(0.0),
                        purity.filter(|p| *p < 1.0).map(|p| format!(", assay {} %", sig10(p * 100.0))).unwrap_or_default()
                    ),
                ),
                Action::Measure { ml } => (
                    "measure",
                    None,
                    Some(*ml),
                    None,
                    format!(
                        "Half fill a {flask} with water, add {ml:.2} mL of {solute} reagent ({} %, {} g/mL) — always reagent into water — and make up to the mark once cool.",
                        sig10(w.unwrap_or(0.0) * 100.0),
                        rho.unwrap_or(0.0)
                    ),
                ),
                Action::Dilute { from, ml } => (
                    "dilute",
                    None,
                    Some(*ml),
                    Some(lab.stocks[*from].name.clone()),
                    format!("Deliver {ml:.2} mL of '{}' into a {flask} and make up to the mark with water.", lab.stocks[*from].name),
                ),
                Action::AsUsual => ("as usual", None, None, None, format!("Make up in a {flask} as your method describes (no formula to compute from).")),
            };
            let text = if p.flask_count > 1 { format!("{text} Make {} flasks.", p.flask_count) } else { text };
            let species: Vec<&str> = st.contains.iter().map(|(s, _)| s.as_str()).collect();
            let reagent = crate::reference::reagents::reagent_for(st.solute.as_deref(), &species);
            StockPrep {
                name: st.name.clone(),
                solute: st.solute.clone(),
                molar_mass: molar_mass.map(sig10),
                solute_concentration: solute_concentration.map(sig10),
                need_ml: ml(p.need),
                drawn_ml: ml(p.drawn),
                flask_ml: ml(p.flask),
                flask_count: p.flask_count,
                recipe: RecipeReport {
                    kind,
                    grams: grams.map(sig10),
                    ml: volume.map(sig10),
                    from,
                    purity_pct: purity.map(|p| sig10(p * 100.0)),
                    mass_fraction_pct: w.map(|x| sig10(x * 100.0)),
                    density: rho.map(sig10),
                    text,
                },
                hazard_codes: reagent.map(|r| r.ghs.clone()).unwrap_or_default(),
                hazards: reagent.map(|r| r.plain.clone()),
                stability: reagent.map(|r| r.stability.clone()),
                data_source: reagent.map(|r| r.source.clone()),
            }
        })
        .collect();
    let used = preps.iter().map(|p| {
        let st = &lab.stocks[p.stock];
        (
            st.solute.as_deref(),
            st.contains
                .iter()
                .map(|(s, _)| s.as_str())
                .collect::<Vec<_>>(),
        )
    });
    StockSheet {
        format: STOCKS_FORMAT,
        title: spec.title.clone(),
        spec: spec.source.name.clone(),
        stations: spec.stations,
        replicates: spec.replicates,
        overage_pct: sig10(lab.overage * 100.0),
        stocks,
        cautions: reagents::cautions(used),
    }
}

impl PlanReport {
    /// Runs that carry a flag of their own or a forecast warning.
    pub fn runs_needing_a_look(&self) -> usize {
        self.runs
            .iter()
            .filter(|r| {
                !r.flags.is_empty() || r.forecast.as_ref().is_some_and(|f| !f.warnings.is_empty())
            })
            .count()
    }

    /// Columns of the volumes-per-run overview: the stocks as the runs list them, water last.
    pub fn volume_columns(&self) -> Vec<&str> {
        let mut cols: Vec<&str> = Vec::new();
        for v in self.runs.iter().flat_map(|r| &r.volumes) {
            if !cols.contains(&v.stock.as_str()) {
                cols.push(&v.stock);
            }
        }
        if let Some(i) = cols.iter().position(|c| *c == "water") {
            let w = cols.remove(i);
            cols.push(w);
        }
        cols
    }
}

impl RunReport {
    /// mL of one stock (or "water", summed over both portions) in this run.
    pub fn volume_of(&self, stock: &str) -> f64 {
        // The volumes are already mL; only the float noise of the sum is removed.
        ml(self
            .volumes
            .iter()
            .filter(|v| v.stock == stock)
            .map(|v| v.ml)
            .sum::<f64>()
            * 1e-3)
    }
}

impl PlanReport {
    /// The runs with a forecast, as rows of the forecast chart.
    pub fn chart_rows(&self) -> Vec<page::ChartRow> {
        self.runs
            .iter()
            .filter_map(|r| {
                r.forecast.as_ref().map(|f| page::ChartRow {
                    name: r.name.clone(),
                    forecast: f.clone(),
                })
            })
            .collect()
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
