//! The plan as data: everything a sheet shows, with units in every field name, built once from
//! the stages before it. Exporters only format this; they compute nothing.

mod design;
mod fit;
mod fit_terms;
mod forecast;
pub mod page;
mod pages;
mod station;
mod stocks;
mod tune;
pub mod words;

pub use design::{DesignSheet, DesignedRunReport, PrecisionReport};
pub use fit::{FitOrder, FitResidual, FitSheet, Interval};
pub use fit_terms::{FitTerm, TermsFitSheet};

/// The report of `clockprep fit`: a one-term rate law (orders and Ea may be fitted) or several
/// terms (each k fitted).
#[derive(Debug, Clone)]
pub enum FitReport {
    OneTerm(FitSheet),
    Terms(TermsFitSheet),
}

impl FitReport {
    /// Whether the fit has warnings (exit code 1).
    pub fn flagged(&self) -> bool {
        match self {
            FitReport::OneTerm(s) => s.flagged,
            FitReport::Terms(s) => s.flagged,
        }
    }

    /// The fit's sheet.
    pub fn page(&self) -> page::Page {
        match self {
            FitReport::OneTerm(s) => s.page(),
            FitReport::Terms(s) => s.page(),
        }
    }
}
pub use forecast::*;
pub use station::{DeviceChoice, GlasswareItem, TrayItem};
pub use stocks::*;
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
    /// Everything else; runs with identical targets share one (a term's plan repeats a few
    /// dozen recipes over thousands of runs).
    #[serde(flatten)]
    pub recipe: std::sync::Arc<RunRecipe>,
}

impl std::ops::Deref for RunReport {
    type Target = RunRecipe;
    fn deref(&self) -> &RunRecipe {
        &self.recipe
    }
}

/// What a run delivers and what it should give: the same for runs with identical targets.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct RunRecipe {
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

#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct StockTotal {
    pub stock: String,
    /// With lab sections, the planned day this batch is made (null for a one-section spec);
    /// a stock made fresh each day has a total per day.
    pub made_on: Option<String>,
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
    /// Every station's rinsing and filling of the devices that hold it (included in mL).
    #[serde(rename = "dead_volume_mL")]
    pub dead_volume_ml: f64,
    /// The largest flask and how many in all; `flasks` in words, e.g. "1 x 1000 mL + 1 x 250 mL".
    #[serde(rename = "flask_mL")]
    pub flask_ml: f64,
    pub flask_count: u32,
    pub flasks: String,
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
    /// What one station sets up: each device, how many, and what it holds.
    pub glassware: Vec<GlasswareItem>,
    /// The device chosen for each stock and the water, for every run, and why.
    pub device_choices: Vec<DeviceChoice>,
    /// Each bottle one station needs and its fill volume.
    pub tray: Vec<TrayItem>,
    pub runs: Vec<RunReport>,
    pub stock_totals: Vec<StockTotal>,
    /// The lab sections (`[[section]]`) with each run's forecast at the section's temperature;
    /// empty for a one-section spec.
    pub sections: Vec<SectionForecast>,
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

/// A lab section on the mixing sheet: its day, size and temperature, and the runs' forecast
/// there (the same volumes; only the temperature and the session change).
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct SectionForecast {
    pub name: String,
    pub date: String,
    pub weekday: String,
    pub stations: u32,
    pub replicates: u32,
    /// The section's temperature, else the spec's (null when neither gives one).
    #[serde(rename = "temperature_C")]
    pub temperature_c: Option<f64>,
    /// Each run's predicted time to colour there (null without a prior or a clock), and its
    /// forecast flags' codes.
    pub runs: Vec<SectionRun>,
    /// The section's plan-wide warnings (e.g. its session longer than the lab period).
    pub warnings: Vec<Flag>,
}

#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct SectionRun {
    pub run: String,
    pub time_s: Option<f64>,
    /// Time to colour at the warm (fast) and cool (slow) ends of the band around the
    /// section's temperature.
    pub band_s: Option<[f64; 2]>,
    pub flags: Vec<Flag>,
}

/// The sections of a spec with their forecasts (one per section, or none without a prior).
pub fn section_forecasts(spec: &Spec, forecasts: &[Forecast]) -> Vec<SectionForecast> {
    spec.sections
        .iter()
        .enumerate()
        .map(|(i, s)| {
            let f = forecasts.get(i);
            let t = s
                .temperature
                .or(spec.prior.as_ref().map(|p| p.settings.temperature))
                .or(spec.temperature);
            SectionForecast {
                name: s.name.clone(),
                date: s.date_text(),
                weekday: crate::spec::day_text(s.date)[..3].to_string(),
                stations: s.stations,
                replicates: s.replicates,
                temperature_c: t.map(|t| sig10(t - 273.15)),
                runs: spec
                    .runs
                    .iter()
                    .enumerate()
                    .map(|(r, run)| SectionRun {
                        run: run.name.clone(),
                        time_s: f.and_then(|f| f.runs[r].time()).map(sig10),
                        band_s: f
                            .and_then(|f| f.runs[r].band_times)
                            .map(|(a, b)| [sig10(a), sig10(b)]),
                        flags: f.map(|f| f.runs[r].warnings.clone()).unwrap_or_default(),
                    })
                    .collect(),
                warnings: f.map(|f| f.warnings.clone()).unwrap_or_default(),
            }
        })
        .collect()
}

#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct ReagentHazard {
    pub name: String,
    pub ghs: Vec<String>,
}

/// mL with float noise removed (volumes are whole steps of at least 0.001 µL).
pub(crate) fn ml(litres: f64) -> f64 {
    // `+ 0.0` turns a negative zero (an empty float sum) into a plain zero.
    (litres * 1e3 * 1e9).round() / 1e9 + 0.0
}

/// A relative deviation with rounding noise below 1e-12 shown as exactly zero.
pub(crate) fn deviation(d: f64) -> f64 {
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

/// What building a plan report needs at hand.
struct PlanContext<'a> {
    lab: &'a Lab,
    solution: &'a Solution,
    mixing: &'a Mixing,
    pour: String,
}

impl PlanContext<'_> {
    fn name(&self, s: Option<usize>) -> String {
        s.map_or_else(|| "water".to_string(), |s| self.lab.stocks[s].name.clone())
    }

    fn vessel_of(&self, s: usize) -> Option<crate::spec::Vessel> {
        self.solution
            .used_stocks
            .iter()
            .position(|&u| u == s)
            .map(|i| self.mixing.vessel_of[i])
    }

    fn portion_items(&self, p: &Portion) -> Vec<PortionItem> {
        p.items
            .iter()
            .map(|(s, v, d)| PortionItem {
                stock: self.name(*s),
                ml: ml(*v),
                device: d.describe(&self.lab.devices),
            })
            .collect()
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
    let ctx = PlanContext {
        lab,
        solution,
        mixing,
        pour: format!("{} into {}", mixing.poured, mixing.poured.other()),
    };
    let name = |s: Option<usize>| ctx.name(s);
    let mut recipes: Vec<std::sync::Arc<RunRecipe>> = Vec::with_capacity(solution.runs.len());
    let mut runs: Vec<RunReport> = Vec::with_capacity(solution.runs.len());
    for (i, ((r, run), portions)) in solution
        .runs
        .iter()
        .zip(&spec.runs)
        .zip(&mixing.runs)
        .enumerate()
    {
        // A run that repeats an earlier one's targets shares its recipe (and its forecast,
        // which depends on the concentrations alone).
        let recipe = match r.same_as {
            Some(first) => recipes[first].clone(),
            None => {
                let mut body = run_recipe(&ctx, r, portions);
                if let Some(f) = forecast {
                    body.forecast = Some(forecast_report(&f.runs[i]));
                }
                let u = &uncertainty[i];
                body.uncertainty = Ordered(
                    u.species
                        .iter()
                        .map(|(s, v)| (s.clone(), sig10(*v)))
                        .collect(),
                );
                if let Some(f) = body.forecast.as_mut() {
                    f.volumetric_uncertainty_pct = u.time.map(|t| sig10(t * 100.0));
                    f.clock_volumetric_uncertainty_pct = u.clock.map(|t| sig10(t * 100.0));
                }
                std::sync::Arc::new(body)
            }
        };
        recipes.push(recipe.clone());
        runs.push(RunReport {
            name: run.name.clone(),
            note: run.note.clone(),
            same_as: r.same_as.map(|i| spec.runs[i].name.clone()),
            recipe,
        });
    }

    // The timing stock goes into every run with the same volume (the solve holds it fixed).
    let timing_add = solution.runs[0]
        .additions
        .iter()
        .find(|a| a.stock == Some(lab.timing_stock));

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
            ml: ml(timing_add.map_or(0.0, |a| a.volume)),
            device: timing_add.map_or("-".into(), |a| a.delivery.describe(&lab.devices)),
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
        glassware: station::glassware(lab, solution),
        device_choices: station::choices(spec, lab, solution),
        tray: station::tray(lab, totals, spec.replicates),
        runs,
        sections: Vec::new(),
        stock_totals: totals
            .stocks
            .iter()
            .map(|t| StockTotal {
                stock: name(Some(t.stock)),
                made_on: totals.week.days[t.days[0]].date.map(crate::spec::date_text),
                ml: ml(t.need),
                used_ml: ml(t.used),
                one_set_ml: ml(t.per_station_set),
                per_station_ml: ml(t.per_station_set * spec.replicates as f64),
                // Every station of the sections this batch serves.
                dead_volume_ml: ml(t.dead_per_station
                    * t.days
                        .iter()
                        .flat_map(|&d| &totals.week.days[d].groups)
                        .map(|&g| totals.week.groups[g].stations as f64)
                        .sum::<f64>()),
                flask_ml: ml(t.flasks.largest()),
                flask_count: t.flasks.count(),
                flasks: t.flasks.label(),
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

/// One run's recipe in the plan report: its volumes (water as delivered, per portion),
/// targets, concentrations, deviations, portions and flags.
fn run_recipe(
    ctx: &PlanContext,
    r: &crate::solve::RunSolution,
    portions: &crate::lab::portions::RunPortions,
) -> RunRecipe {
    let (lab, solution) = (ctx.lab, ctx.solution);
    let name = |s: Option<usize>| ctx.name(s);
    let vessel_of = |s: usize| ctx.vessel_of(s);
    let portion_items = |p: &Portion| ctx.portion_items(p);
    let pour = &ctx.pour;
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
    RunRecipe {
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
