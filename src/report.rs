//! The plan as data: everything a sheet shows, with units in every field name, built once from
//! the stages before it. Exporters only format this; they compute nothing.

use crate::mixing::{Mixing, Portion};
use crate::safety;
use crate::solve::{Flag, Solution};
use crate::spec::Spec;
use crate::totals::Totals;
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
    pub volumes: Vec<Volume>,
    /// Targets, mol/L.
    pub targets: Ordered,
    /// Every species as delivered, mol/L.
    pub concentrations: Ordered,
    /// (achieved − target)/target for each target (and ionic strength when held).
    pub deviation: Ordered,
    #[serde(rename = "ionic_strength_M")]
    pub ionic_strength: f64,
    pub portions: Portions,
    pub flags: Vec<Flag>,
}

#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct StockTotal {
    pub stock: String,
    /// Volume to prepare: whole lab plus overage.
    #[serde(rename = "mL")]
    pub ml: f64,
    #[serde(rename = "used_mL")]
    pub used_ml: f64,
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
    /// True when any run carries a flag.
    pub flagged: bool,
    pub cautions: Vec<String>,
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
fn sig10(v: f64) -> f64 {
    if v == 0.0 || !v.is_finite() {
        return v;
    }
    format!("{v:.9e}").parse().unwrap_or(v)
}

pub fn build(spec: &Spec, solution: &Solution, mixing: &Mixing, totals: &Totals) -> PlanReport {
    let name =
        |s: Option<usize>| s.map_or_else(|| "water".to_string(), |s| spec.stocks[s].name.clone());
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
                device: d.describe(&spec.devices),
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
                        device: add.map_or("-".into(), |a| a.delivery.describe(&spec.devices)),
                        vessel: vessel_of(s).map_or("-".into(), |v| v.to_string()),
                    }
                })
                .collect();
            let w = r.water();
            let in_a = portions.a.items.iter().any(|i| i.0.is_none());
            let in_b = portions.b.items.iter().any(|i| i.0.is_none());
            volumes.push(Volume {
                stock: "water".into(),
                ml: ml(w.volume),
                device: w.delivery.describe(&spec.devices),
                vessel: match (in_a, in_b) {
                    (true, true) => "A+B".into(),
                    (true, false) => "A".into(),
                    (false, true) => "B".into(),
                    (false, false) => "-".into(),
                },
            });
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
                portions: Portions {
                    a: portion_items(&portions.a),
                    b: portion_items(&portions.b),
                    a_ml: ml(portions.a.volume()),
                    b_ml: ml(portions.b.volume()),
                    pour: pour.clone(),
                },
                flags: r.flags.clone(),
            }
        })
        .collect::<Vec<_>>();

    let timing_add = solution.runs[0]
        .additions
        .iter()
        .find(|a| a.stock == Some(spec.timing.stock))
        .expect("the timing stock is in every run");

    let species_used: Vec<&str> = solution
        .used_stocks
        .iter()
        .flat_map(|&s| spec.stocks[s].contains.iter().map(|(sp, _)| sp.as_str()))
        .collect();

    PlanReport {
        format: FORMAT,
        title: spec.title.clone(),
        spec: spec.source.name.clone(),
        total_volume_ml: ml(spec.total_volume),
        stations: spec.stations,
        replicates: spec.replicates,
        overage_pct: sig10(spec.overage * 100.0),
        tolerance_pct: sig10(spec.tolerance * 100.0),
        temperature_c: spec.temperature.map(|t| sig10(t - 273.15)),
        timing: TimingReport {
            species: spec.timing.species.clone(),
            concentration: sig10(spec.timing.concentration),
            stock: name(Some(spec.timing.stock)),
            ml: ml(timing_add.volume),
            device: timing_add.delivery.describe(&spec.devices),
        },
        ionic_strength: solution
            .ionic_target
            .zip(spec.ionic.as_ref())
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
                    spec.stocks[s]
                        .contains
                        .iter()
                        .map(|(sp, c)| (sp.clone(), sig10(*c)))
                        .collect(),
                ),
            })
            .collect(),
        flagged: runs.iter().any(|r: &RunReport| !r.flags.is_empty()),
        runs,
        stock_totals: totals
            .stocks
            .iter()
            .map(|t| StockTotal {
                stock: name(Some(t.stock)),
                ml: ml(t.need),
                used_ml: ml(t.used),
                per_station_ml: ml(t.per_station_set),
                flask_ml: ml(t.flask),
                flask_count: t.flask_count,
            })
            .collect(),
        water_total_ml: ml(totals.water),
        cautions: safety::cautions(species_used),
    }
}
