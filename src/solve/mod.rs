//! The solve: for each run, the stock volumes that the glassware on the bench can actually
//! deliver and that come closest to the target final concentrations.
//!
//! Each run is its own small mixed-integer linear program (volumes in mL inside the model):
//!
//! * every varied stock is delivered by at most one of its allowed devices: an adjustable
//!   device delivers a whole number of steps inside its range, volumetric pipets deliver a
//!   combination of fills (integer variables, with a binary per choice);
//! * the volumes add up exactly to the total; water is the make-up and is itself deliverable;
//! * the timing stock and fixed additions (indicator) have the same volume in every run;
//! * the objective is lexicographic: first the largest relative deviation of any target (and the
//!   held ionic strength), then the sum of all deviations, then a tiny preference for the more
//!   precise kind of glassware.
//!
//! Before the integer model, a continuous model of the same run checks that the targets are
//! reachable at all; when they are not, the reason is stated in the user's terms.

mod assign;
mod checks;
mod explain;
mod fast;
mod milp;
mod model;
pub mod station;

use assign::Distinct;
pub use assign::{units_needed, Assignment, Choice, Holder};
use rayon::prelude::*;
pub use station::StationDevice;

use crate::error::{Error, Result};
use crate::reference::glassware::{find_delivery, find_delivery_in_two, Delivery, Device};
use crate::spec::{IonicTarget, Lab, Run, Spec, WaterVessel};
use crate::units;
use checks::*;
use explain::*;
use good_lp::ResolutionError;
use milp::*;
use model::*;
use std::collections::HashMap;

/// Safety net against a runaway branch-and-bound; a normal run solves in milliseconds.
/// Longest one solve may take by default, s (`CLOCKPREP_SOLVE_TIMEOUT` overrides it). A run's
/// models solve in milliseconds; a model still open after this long is refused as "no recipe
/// found in time", never used half-solved (an incumbent found under a time limit would make
/// the output depend on the machine's speed).
pub const TIME_LIMIT_S: f64 = 5.0;

/// The time limit of one solve, s.
pub fn time_limit() -> f64 {
    std::env::var("CLOCKPREP_SOLVE_TIMEOUT")
        .ok()
        .and_then(|v| v.trim().parse::<f64>().ok())
        .filter(|s| s.is_finite() && *s >= 0.0)
        .unwrap_or(TIME_LIMIT_S)
}
/// The solver's word for a model it could not handle numerically.
const SOLVER_PANICKED: &str = "clockprep: the solver could not handle the numbers";
/// The solver's word for a solve stopped by [`TIME_LIMIT_S`].
const TIMED_OUT: &str = "clockprep: the solve reached its time limit";

/// A best deliverable recipe further off than this (or ten tolerances) is reported as no
/// recipe (exit 2) rather than flagged (exit 1).
const GROSS_DEVIATION: f64 = 0.10;

/// One addition to a run: a stock (or water, `stock == None`), its volume and how to deliver it.
#[derive(Debug, Clone, PartialEq)]
pub struct Addition {
    pub stock: Option<usize>,
    /// L
    pub volume: f64,
    pub delivery: Delivery,
}

/// A quantity the solve aims at in a run: a species' final concentration or the ionic strength.
#[derive(Debug, Clone, PartialEq)]
pub struct Goal {
    /// Species name, or `ionic strength`.
    pub label: String,
    /// mol/L
    pub target: f64,
    /// mol/L as delivered
    pub achieved: f64,
    /// (achieved − target) / target
    pub deviation: f64,
}

use crate::flag::Flag;

#[derive(Debug, Clone, PartialEq)]
pub struct RunSolution {
    /// Every stock used anywhere in the plan, in spec order, then water.
    pub additions: Vec<Addition>,
    pub goals: Vec<Goal>,
    /// All species in the run, in order of first appearance in the stocks (mol/L).
    pub concentrations: Vec<(String, f64)>,
    /// mol/L, ½ Σ cᵢ zᵢ²
    pub ionic_strength: f64,
    /// The earlier run with identical targets whose recipe this one reuses.
    pub same_as: Option<usize>,
    pub flags: Vec<Flag>,
}

impl RunSolution {
    pub fn water(&self) -> &Addition {
        self.additions
            .last()
            .expect("water is always the last addition")
    }

    pub fn volume_of(&self, stock: usize) -> f64 {
        self.additions
            .iter()
            .find(|a| a.stock == Some(stock))
            .map_or(0.0, |a| a.volume)
    }
}

#[derive(Debug, Clone, PartialEq)]
pub struct Solution {
    /// Stocks that appear in at least one run, in spec order.
    pub used_stocks: Vec<usize>,
    /// The ionic strength held in every run (mol/L), when one is held.
    pub ionic_target: Option<f64>,
    pub runs: Vec<RunSolution>,
    /// The devices chosen for each stock and the water, and why.
    pub assignment: Assignment,
    /// What one station sets up: each device, how many, and what it holds.
    pub station: Vec<StationDevice>,
}

/// Fixed parts of every run: the timing stock and fixed additions.
/// What is the same for every run: the constant additions, their volume, and the solver's
/// time limit (read once per plan).
struct Constant {
    additions: Vec<Addition>,
    volume: f64,
    time_limit: f64,
    /// Take the rounding shortcut ([`fast`]) where it applies.
    shortcut: bool,
}

/// Solve every run of the plan: choose the devices once ([`assign`]), then each distinct set
/// of targets once, in parallel, and copy the recipe to runs that repeat it.
pub fn solve(spec: &Spec, lab: &Lab) -> Result<Solution> {
    solve_mode(spec, lab, true)
}

/// The same solve with every run through the integer model, never the rounding shortcut: the
/// reference the shortcut is tested against.
pub fn solve_by_model(spec: &Spec, lab: &Lab) -> Result<Solution> {
    solve_mode(spec, lab, false)
}

fn solve_mode(spec: &Spec, lab: &Lab, shortcut: bool) -> Result<Solution> {
    check_distinct_runs(spec)?;
    let mut constant = constant_additions(spec, lab)?;
    constant.shortcut = shortcut;
    check_reachable_low(spec, lab)?;
    check_hold_reachable(spec, lab, &constant)?;
    let (distinct, first_of) = distinct_runs(spec);
    let assigned = assign::assign(spec, lab, &constant, &distinct)?;
    let (narrow, constant) = (&assigned.lab, &assigned.constant);
    let solve_all = |ionic: Option<f64>| -> Result<Vec<RunSolution>> {
        distinct
            .par_iter()
            .map(|d| {
                let run = &spec.runs[d.run];
                let forced = assigned
                    .forced
                    .get(&d.run)
                    .map_or(&[][..], |v| v.as_slice());
                solve_assigned(spec, lab, narrow, run, constant, ionic, forced)
            })
            .collect::<Vec<_>>()
            .into_iter()
            .collect()
    };
    let ionic_target = match lab.ionic.as_ref().map(|i| i.target) {
        None => None,
        Some(IonicTarget::Value(v)) => Some(v),
        // First pass without the salt; hold every run at the largest value found.
        Some(IonicTarget::Max) => Some(
            solve_all(None)?
                .iter()
                .map(|s| s.ionic_strength)
                .fold(0.0, f64::max),
        ),
    };
    let solved = solve_all(ionic_target)?;
    let mut runs: Vec<RunSolution> = Vec::with_capacity(spec.runs.len());
    for (i, &k) in first_of.iter().enumerate() {
        let mut r = solved[k].clone();
        if distinct[k].run != i {
            r.same_as = Some(distinct[k].run);
        }
        runs.push(r);
    }

    // Keep only stocks used somewhere; every run lists the same ones, in spec order.
    let used_stocks: Vec<usize> = (0..lab.stocks.len())
        .filter(|&s| solved.iter().any(|r| r.volume_of(s) > 0.0))
        .collect();
    for r in &mut runs {
        r.additions
            .retain(|a| a.stock.is_none_or(|s| used_stocks.contains(&s)));
    }
    let station = station::glassware(lab, &solved);
    station::check_counts(spec, lab, &station)?;
    let mut assignment = assigned.assignment;
    assignment.choices.retain(|c| {
        matches!(c.holder, Holder::Water)
            || matches!(c.holder, Holder::Stock(s) if used_stocks.contains(&s))
    });
    Ok(Solution {
        used_stocks,
        ionic_target,
        runs,
        assignment,
        station,
    })
}

/// The distinct target sets (first run, how many share it) and each run's set.
fn distinct_runs(spec: &Spec) -> (Vec<Distinct>, Vec<usize>) {
    let mut distinct: Vec<Distinct> = Vec::new();
    let mut seen: HashMap<Vec<(&str, u64)>, usize> = HashMap::with_capacity(spec.runs.len());
    let first_of = spec
        .runs
        .iter()
        .enumerate()
        .map(|(i, run)| {
            let k = *seen.entry(targets_key(run)).or_insert_with(|| {
                distinct.push(Distinct { run: i, count: 0 });
                distinct.len() - 1
            });
            distinct[k].count += 1;
            k
        })
        .collect();
    (distinct, first_of)
}

/// Solve a run with the assigned devices; when they cannot serve it within tolerance (the
/// assignment said so for the `forced` stocks, or the solve fails), solve it again with those
/// stocks (or, after a failure, every stock and the water) back on all their allowed devices,
/// and say which stock needed a second device.
fn solve_assigned(
    spec: &Spec,
    full: &Lab,
    narrow: &Lab,
    run: &Run,
    constant: &Constant,
    ionic: Option<f64>,
    forced: &[usize],
) -> Result<RunSolution> {
    let first = solve_run(spec, narrow, run, constant, ionic);
    let off = |r: &RunSolution| r.flags.iter().filter(|f| f.code == "off_target").count();
    let widen: Vec<usize> = match &first {
        Ok(r) if off(r) > 0 => forced.to_vec(),
        Ok(_) => return first,
        Err(_) => (0..full.stocks.len()).collect(),
    };
    // With nothing narrowed, the full lists cannot do better.
    let mut wide = narrow.clone();
    let mut changed = false;
    for s in widen {
        changed |= wide.stocks[s].devices != full.stocks[s].devices;
        wide.stocks[s].devices = full.stocks[s].devices.clone();
    }
    if first.is_err() {
        changed |= wide.water_devices != full.water_devices;
        wide.water_devices = full.water_devices.clone();
    }
    if !changed {
        return first;
    }
    // When both fail, the refusal speaks of every device the spec allows.
    let mut second = match solve_run(spec, &wide, run, constant, ionic) {
        Ok(s) => s,
        Err(e) if first.is_err() => return Err(e),
        Err(_) => return first,
    };
    if let Ok(r) = &first {
        if off(&second) >= off(r) {
            return first;
        }
    }
    let mut moved = Vec::new();
    for a in &second.additions {
        let allowed = match a.stock {
            Some(s) => &narrow.stocks[s].devices,
            None => &narrow.water_devices,
        };
        let others: Vec<&str> = a
            .delivery
            .parts
            .iter()
            .filter(|(d, _)| !allowed.contains(d))
            .map(|&(d, _)| full.devices[d].name.as_str())
            .collect();
        if !others.is_empty() {
            let who = a.stock.map_or("water".to_string(), |s| {
                format!("'{}'", full.stocks[s].name)
            });
            moved.push(format!("{who} with '{}'", others.join("' + '")));
        }
    }
    if !moved.is_empty() {
        second.flags.push(Flag {
            code: "second_device",
            message: format!(
                "this run needs a second device: {}; the device kept for the other runs cannot deliver its volume within tolerance",
                moved.join(", ")
            ),
        });
    }
    Ok(second)
}

/// Runs with equal keys have identical targets and share one recipe.
fn targets_key(run: &Run) -> Vec<(&str, u64)> {
    let mut key: Vec<(&str, u64)> = run
        .targets
        .iter()
        .map(|t| (t.species.as_str(), t.concentration.to_bits()))
        .collect();
    key.sort();
    key
}

fn constant_additions(spec: &Spec, lab: &Lab) -> Result<Constant> {
    let mut additions = Vec::new();
    let t = &spec.timing;
    let timing_stock = lab.timing_stock;
    let stock = &lab.stocks[timing_stock];
    let c_stock = stock.concentration_of(&t.species);
    let v_timing = t.concentration * lab.total_volume / c_stock;
    let fixed_sum: f64 = lab
        .stocks
        .iter()
        .filter(|s| s.in_runs)
        .filter_map(|s| s.fixed_volume)
        .sum();
    if v_timing + fixed_sum > lab.total_volume * (1.0 + 1e-12) {
        let (span, what) = if fixed_sum > 0.0 {
            (
                lab.total_span.clone(),
                format!(
                    "the timing stock ({} mL) and fixed additions ({} mL) add up to more than the whole {} mL run",
                    trim_ml(v_timing),
                    trim_ml(fixed_sum),
                    trim_ml(lab.total_volume)
                ),
            )
        } else {
            (
                t.span.clone(),
                format!(
                    "{} {} needs {} mL of '{}', more than the whole {} mL run",
                    t.species,
                    units::concentration(t.concentration),
                    trim_ml(v_timing),
                    stock.name,
                    trim_ml(lab.total_volume)
                ),
            )
        };
        return Err(spec.source.error(
            span,
            what,
            "too small",
            "raise total_volume, lower the fixed volumes, or use a more concentrated timing stock",
        ));
    }
    // A timing volume within TIMING_SNAP of a deliverable one is that one: the stated
    // concentration was rounded (e.g. pasted from a suggestion below).
    let (below, above) = nearest_deliverable(v_timing, &stock.devices, &lab.devices);
    let v_timing = match find_delivery(v_timing, &stock.devices, &lab.devices) {
        Some(_) => v_timing,
        None => [below, above]
            .into_iter()
            .flatten()
            .find(|v| ((v - v_timing) / v_timing).abs() <= TIMING_SNAP)
            .unwrap_or(v_timing),
    };
    let delivery = find_delivery(v_timing, &stock.devices, &lab.devices).ok_or_else(|| {
        let mut options = Vec::new();
        for v in [below, above].into_iter().flatten() {
            // Six figures, so that the value pasted back lands within TIMING_SNAP.
            options.push(format!(
                "concentration = \"{}\" ({} mL)",
                units::concentration_figures(v * c_stock / lab.total_volume, 6),
                trim_ml(v)
            ));
        }
        let help = if options.is_empty() {
            format!(
                "allow a device for '{}' that can deliver this volume",
                stock.name
            )
        } else {
            format!(
                "the timing volume must be the same deliverable volume in every run; nearest: {}",
                options.join(" or ")
            )
        };
        spec.source.error(
            t.span.clone(),
            format!(
                "no allowed device delivers {} mL of '{}', the volume that gives {} {}",
                trim_ml(v_timing),
                stock.name,
                t.species,
                units::concentration(t.concentration)
            ),
            "not deliverable",
            help,
        )
    })?;
    if delivery.parts.is_empty() {
        return Err(spec.source.error(
            t.span.clone(),
            format!(
                "{} {} needs {} mL of '{}': too little to deliver",
                t.species,
                units::concentration(t.concentration),
                units::sig3(v_timing * 1e3),
                stock.name
            ),
            "too small",
            "raise the timing concentration, or use a more dilute timing stock",
        ));
    }
    additions.push(Addition {
        stock: Some(timing_stock),
        volume: v_timing,
        delivery,
    });
    for (i, s) in lab.stocks.iter().enumerate() {
        let Some(v) = s.fixed_volume.filter(|_| s.in_runs) else {
            continue;
        };
        let delivery = find_delivery(v, &s.devices, &lab.devices).ok_or_else(|| {
            spec.source.error(
                s.name_span.clone(),
                format!(
                    "no allowed device delivers the fixed {} mL of '{}'",
                    trim_ml(v),
                    s.name
                ),
                "not deliverable",
                "allow a device that delivers this volume, or change fixed_volume",
            )
        })?;
        additions.push(Addition {
            stock: Some(i),
            volume: v,
            delivery,
        });
    }
    let volume = additions.iter().map(|a| a.volume).sum();
    Ok(Constant {
        additions,
        volume,
        time_limit: time_limit(),
        shortcut: true,
    })
}

/// Relative distance within which a timing volume is taken as the deliverable volume next to
/// it: 1e-5, far inside any tolerance, and wider than the rounding of a six-figure value.
pub const TIMING_SNAP: f64 = 1e-5;

/// A volume in mL without trailing zeros, for messages ("0.37", "3", "12.5").
fn trim_ml(litres: f64) -> String {
    if litres.abs() < 1e-7 {
        return units::sig3(litres * 1e3); // less than 0.0001 mL
    }
    let s = format!("{:.4}", litres * 1e3);
    let s = s.trim_end_matches('0').trim_end_matches('.');
    s.to_string()
}

/// The timing concentrations the bench can give near `c` (mol/L): `c` itself when its volume
/// of the timing stock is deliverable by that stock's devices, else the deliverable volumes
/// just below and above it, as concentrations. Empty when the spec's timing stock delivers
/// no volume near it.
pub fn deliverable_timing(spec: &Spec, lab: &Lab, c: f64) -> Vec<f64> {
    let stock = &lab.stocks[lab.timing_stock];
    let c_stock = stock.concentration_of(&spec.timing.species);
    if c_stock <= 0.0 || lab.total_volume <= 0.0 {
        return Vec::new();
    }
    let v = c * lab.total_volume / c_stock;
    if find_delivery(v, &stock.devices, &lab.devices).is_some() {
        return vec![c];
    }
    let (below, above) = nearest_deliverable(v, &stock.devices, &lab.devices);
    [below, above]
        .into_iter()
        .flatten()
        .map(|v| v * c_stock / lab.total_volume)
        .collect()
}

/// Nearest volumes below and above `v` that the allowed devices deliver in one addition.
fn nearest_deliverable(
    v: f64,
    allowed: &[usize],
    devices: &[Device],
) -> (Option<f64>, Option<f64>) {
    let mut below: Option<f64> = None;
    let mut above: Option<f64> = None;
    for &d in allowed {
        for x in devices[d].volumes() {
            if x < v && below.is_none_or(|b| x > b) {
                below = Some(x);
            }
            if x > v && above.is_none_or(|a| x < a) {
                above = Some(x);
            }
        }
    }
    (below, above)
}

fn solve_run(
    spec: &Spec,
    lab: &Lab,
    run: &Run,
    constant: &Constant,
    ionic: Option<f64>,
) -> Result<RunSolution> {
    let m = RunModel::new(spec, lab, run, constant, ionic);
    // The rounding shortcut, where it applies, is the integer model's optimum; within
    // tolerance nothing more is needed.
    let shortcut = constant
        .shortcut
        .then(|| fast::solve(&m, constant, ionic))
        .flatten();
    let within = |s: &RunSolution| s.goals.iter().all(|g| g.deviation.abs() <= lab.tolerance);
    let shortcut = match shortcut {
        Some(s) if within(&s) => return Ok(s),
        other => other,
    };
    let solver_error = |e: ResolutionError| {
        match e {
        ResolutionError::Other(why) if why == TIMED_OUT => spec.source.error(
            run.span.clone(),
            format!(
                "run '{}': no best recipe found within the solver's {} s time limit",
                run.name, m.time_limit
            ),
            "too slow to solve",
            "give each stock fewer devices (devices = [...]), or fewer stocks that hold the same species",
        ),
        ResolutionError::Other(why) if why == SOLVER_PANICKED => spec.source.error(
            run.span.clone(),
            format!("run '{}': the solver cannot work with these numbers (concentrations or a held ionic strength many decades apart)", run.name),
            "numbers too far apart",
            "check the run's targets, the stocks' concentrations and [ionic_strength] hold for a misplaced exponent",
        ),
        e => Error::Solver {
            run: run.name.clone(),
            reason: e.to_string(),
        },
    }
    };
    let relaxed = solve_tiers(&m, Relax::Continuous).map_err(|e| match e {
        ResolutionError::Infeasible => water_error(&m),
        other => solver_error(other),
    })?;
    let best = relaxed.z_species.max(relaxed.z_ionic);
    if best > lab.tolerance {
        return Err(explain_unreachable(&m, best));
    }
    let ideal = relaxed.volumes_ml;
    let solution = match shortcut {
        Some(s) => s,
        None => {
            let outcome = match solve_tiers(&m, Relax::Integer) {
                Ok(o) => o,
                Err(ResolutionError::Infeasible) => {
                    return Err(explain_integer_infeasible(&m, &ideal))
                }
                Err(e) => return Err(solver_error(e)),
            };
            let mut additions = constant.additions.clone();
            additions.extend(outcome.additions.into_iter().filter(|a| a.stock.is_some()));
            additions.sort_by_key(|a| a.stock);
            // Water last; recompute from the delivered volumes so the sum is exact.
            let water = find_water(&m, &additions)?;
            additions.push(water);
            evaluate(lab, run, additions, ionic)
        }
    };
    let worst = solution
        .goals
        .iter()
        .map(|g| g.deviation.abs())
        .fold(0.0, f64::max);
    let mut solution = solution;
    if worst > lab.tolerance {
        let too_small = TooSmall::find(&m, &ideal);
        // Far off target, the nearest deliverable recipe is no recipe at all.
        if worst > GROSS_DEVIATION.max(10.0 * lab.tolerance) {
            return Err(match too_small {
                Some(t) => t.error(&m),
                None => spec.source.error(
                    run.span.clone(),
                    format!(
                        "run '{}': the nearest deliverable recipe is {:.1} % off target",
                        run.name,
                        worst * 100.0
                    ),
                    "no usable recipe",
                    "allow finer glassware for the stocks of this run, or use more dilute stocks",
                ),
            });
        }
        let cause = match &too_small {
            Some(t) => t.describe(lab),
            None => "the nearest deliverable volumes of its stocks".to_string(),
        };
        for g in &solution.goals {
            if g.deviation.abs() > lab.tolerance {
                solution.flags.push(Flag {
                    code: "off_target",
                    message: format!(
                        "{} is {:+.2} % from its target (tolerance {} %): {cause}; a finer device or a more dilute stock would help",
                        g.label,
                        g.deviation * 100.0,
                        units::sig3(lab.tolerance * 100.0)
                    ),
                });
            }
        }
    }
    Ok(solution)
}

/// The water addition that makes the delivered stocks up to the total exactly.
fn find_water(m: &RunModel, stocks: &[Addition]) -> Result<Addition> {
    let lab = m.lab;
    let used: f64 = stocks.iter().map(|a| a.volume).sum();
    let mut w = lab.total_volume - used;
    if w.abs() < 1e-12 {
        w = 0.0;
    }
    let delivery = match lab.water_vessel {
        WaterVessel::Split => find_delivery_in_two(w, &lab.water_devices, &lab.devices),
        WaterVessel::Only(_) => find_delivery(w, &lab.water_devices, &lab.devices),
    };
    let delivery = delivery.ok_or_else(|| Error::Solver {
        run: m.run.name.clone(),
        reason: format!("water {} mL is not deliverable after rounding", trim_ml(w)),
    })?;
    Ok(Addition {
        stock: None,
        volume: w,
        delivery,
    })
}

/// Achieved concentrations, deviations and ionic strength of a finished recipe.
pub fn evaluate(lab: &Lab, run: &Run, additions: Vec<Addition>, ionic: Option<f64>) -> RunSolution {
    let total = lab.total_volume;
    let mut concentrations: Vec<(String, f64)> = Vec::new();
    let mut ionic_strength = 0.0;
    for a in &additions {
        let Some(s) = a.stock else { continue };
        let st = &lab.stocks[s];
        ionic_strength += st.ionic_strength() * a.volume / total;
        for (sp, c) in &st.contains {
            let amount = c * a.volume / total;
            match concentrations.iter_mut().find(|(n, _)| n == sp) {
                Some(entry) => entry.1 += amount,
                None => concentrations.push((sp.clone(), amount)),
            }
        }
    }
    let achieved = |sp: &str| {
        concentrations
            .iter()
            .find(|(n, _)| n == sp)
            .map_or(0.0, |(_, c)| *c)
    };
    let mut goals: Vec<Goal> = run
        .targets
        .iter()
        .map(|t| {
            let a = achieved(&t.species);
            Goal {
                label: t.species.clone(),
                target: t.concentration,
                achieved: a,
                deviation: (a - t.concentration) / t.concentration,
            }
        })
        .collect();
    if let Some(target) = ionic {
        goals.push(Goal {
            label: "ionic strength".into(),
            target,
            achieved: ionic_strength,
            deviation: (ionic_strength - target) / target,
        });
    }
    RunSolution {
        additions,
        goals,
        concentrations,
        ionic_strength,
        same_as: None,
        flags: Vec::new(),
    }
}

#[cfg(test)]
mod tests {
    /// Solve a test spec, which always lists stocks.
    fn solve_spec(s: &Spec) -> Result<Solution> {
        solve(s, s.lab.as_ref().unwrap())
    }

    use super::*;
    use crate::error::SpecSource;
    use approx::assert_relative_eq;

    fn spec(text: &str) -> Spec {
        crate::spec::load(SpecSource::new("t.toml", text)).unwrap()
    }

    /// Two runs from single-purpose stocks and one buret: every volume follows from M1V1.
    fn base() -> String {
        crate::spec::fixture::Fixture::new("dilution check", "50.0 mL")
            .plan("tolerance = \"0.5 %\"")
            .timing("S2O3^2-", "0.200 mM")
            .keep_apart(&["I-", "BrO3-"])
            .stock("KI 0.0500 M", &[("I-", "0.0500 M"), ("K+", "0.0500 M")])
            .stock(
                "KBrO3 0.0400 M",
                &[("BrO3-", "0.0400 M"), ("K+", "0.0400 M")],
            )
            .stock(
                "thio 2.00 mM",
                &[("S2O3^2-", "2.00 mM"), ("Na+", "4.00 mM")],
            )
            .buret("50 mL buret", "50 mL", "0.10 mL")
            .run("r1", &[("I-", "10.0 mM"), ("BrO3-", "8.00 mM")])
            .run("r2", &[("I-", "5.00 mM"), ("BrO3-", "8.00 mM")])
            .text()
    }

    #[test]
    fn single_species_stocks_follow_the_dilution_law() {
        // M1V1 = M2V2 (common practice): V = C_target · V_total / C_stock.
        // r1: I- 10.0 mM × 50 mL / 50.0 mM = 10.0 mL; BrO3- 8.00 mM × 50 / 40.0 = 10.0 mL;
        // thiosulfate 0.200 mM × 50 / 2.00 = 5.00 mL; water 25.0 mL.
        let s = spec(&base());
        let sol = solve_spec(&s).unwrap();
        let r1 = &sol.runs[0];
        assert_relative_eq!(r1.volume_of(0), 10.0e-3, epsilon = 1e-12);
        assert_relative_eq!(r1.volume_of(1), 10.0e-3, epsilon = 1e-12);
        assert_relative_eq!(r1.volume_of(2), 5.0e-3, epsilon = 1e-12);
        assert_relative_eq!(r1.water().volume, 25.0e-3, epsilon = 1e-12);
        let r2 = &sol.runs[1];
        assert_relative_eq!(r2.volume_of(0), 5.0e-3, epsilon = 1e-12);
        assert_relative_eq!(r2.water().volume, 30.0e-3, epsilon = 1e-12);
        for g in &r1.goals {
            assert!(g.deviation.abs() < 1e-9, "{g:?}");
        }
        // K+ comes from both KI and KBrO3: (0.0500·10 + 0.0400·10)/50 = 18.0 mM.
        let k = r1.concentrations.iter().find(|(s, _)| s == "K+").unwrap().1;
        assert_relative_eq!(k, 0.018, max_relative = 1e-12);
    }

    #[test]
    fn multi_species_stock_worked_by_hand() {
        // A stock holding both H+ and BrO3- (acidified bromate) plus a plain HCl stock.
        // Targets: BrO3- 4.00 mM, H+ 50.0 mM in 50 mL.
        // Acidified bromate 0.0400 M BrO3- / 0.100 M H+: V_b = 4.00·50/40.0 = 5.00 mL,
        // bringing 0.100·5.00/50 = 10.0 mM H+; HCl 0.200 M makes up 40.0 mM: V = 40.0·50/200 = 10.0 mL.
        let text = base()
            .replace(
                "contains = { \"BrO3-\" = \"0.0400 M\", \"K+\" = \"0.0400 M\" }",
                "contains = { \"BrO3-\" = \"0.0400 M\", \"K+\" = \"0.0400 M\", \"H+\" = \"0.100 M\", \"Cl-\" = \"0.100 M\" }",
            )
            .replace(
                "[[device]]",
                "[[stock]]\nname = \"HCl 0.200 M\"\ncontains = { \"H+\" = \"0.200 M\", \"Cl-\" = \"0.200 M\" }\n\n[[device]]",
            )
            .replace(
                "targets = { \"I-\" = \"10.0 mM\", \"BrO3-\" = \"8.00 mM\" }",
                "targets = { \"I-\" = \"10.0 mM\", \"BrO3-\" = \"4.00 mM\", \"H+\" = \"50.0 mM\" }",
            )
            .replace(
                "targets = { \"I-\" = \"5.00 mM\", \"BrO3-\" = \"8.00 mM\" }",
                "targets = { \"I-\" = \"5.00 mM\", \"BrO3-\" = \"4.00 mM\", \"H+\" = \"50.0 mM\" }",
            );
        let s = spec(&text);
        let sol = solve_spec(&s).unwrap();
        let r1 = &sol.runs[0];
        assert_relative_eq!(r1.volume_of(1), 5.0e-3, epsilon = 1e-12);
        assert_relative_eq!(r1.volume_of(3), 10.0e-3, epsilon = 1e-12);
        let cl = r1
            .concentrations
            .iter()
            .find(|(s, _)| s == "Cl-")
            .unwrap()
            .1;
        // Cl-: (0.100·5 + 0.200·10)/50 = 50.0 mM
        assert_relative_eq!(cl, 0.050, max_relative = 1e-12);
    }

    #[test]
    fn off_grid_target_is_the_best_deliverable() {
        // 7.77 mM I- in 50 mL from 50.0 mM needs 7.77 mL; the 0.10 mL buret gives 7.80 mL,
        // +0.386 % (within 0.5 %), the nearest on its graduation.
        let text = base().replace("\"I-\" = \"10.0 mM\"", "\"I-\" = \"7.77 mM\"");
        let sol = solve_spec(&spec(&text)).unwrap();
        assert_relative_eq!(sol.runs[0].volume_of(0), 7.8e-3, epsilon = 1e-12);
        assert!(sol.runs[0].flags.is_empty());
    }

    #[test]
    fn unreachable_target_names_run_species_and_stock() {
        let text = base().replace("\"I-\" = \"10.0 mM\"", "\"I-\" = \"60.0 mM\"");
        let e = solve_spec(&spec(&text)).unwrap_err();
        let msg = e.message();
        assert!(msg.contains("run 'r1'"), "{msg}");
        assert!(msg.contains("I- 60.0 mM"), "{msg}");
        assert!(msg.contains("KI 0.0500 M"), "{msg}");
    }

    #[test]
    fn identical_runs_are_solved_once() {
        let text = base().replace("\"I-\" = \"5.00 mM\"", "\"I-\" = \"10.0 mM\"");
        let sol = solve_spec(&spec(&text)).unwrap();
        assert_eq!(sol.runs[1].same_as, Some(0));
        assert_eq!(sol.runs[1].additions, sol.runs[0].additions);
    }

    #[test]
    fn held_ionic_strength_never_pulls_a_reactant_off_target() {
        // I = ½ Σ c z² (IUPAC Gold Book, "ionic strength"). r1 without salt:
        // KI 0.0100 M + KBrO3 0.00800 M + thiosulfate ½(0.2 mM·4 + 0.4 mM) = 0.0186 M.
        // Holding 0.100 M needs 4.07 mL of 1.00 M KNO3, but a 1 mL pipet gives 4 or 5 mL:
        // I = 0.0986 M (-1.4 %), flagged, while iodide and bromate stay exact.
        let text = base()
            .replace(
                "[[device]]",
                "[[stock]]\nname = \"KNO3 1.00 M\"\ncontains = { \"K+\" = \"1.00 M\", \"NO3-\" = \"1.00 M\" }\ndevices = [\"1 mL pipet\"]\n\n[[device]]\nname = \"1 mL pipet\"\nkind = \"volumetric pipet\"\nvolume = \"1 mL\"\nfills = 5\n\n[[device]]",
            )
            .replace("[mixing]", "[ionic_strength]\nhold = \"0.100 M\"\nusing = \"KNO3 1.00 M\"\n\n[mixing]");
        let sol = solve_spec(&spec(&text)).unwrap();
        let r1 = &sol.runs[0];
        for g in r1.goals.iter().filter(|g| g.label != "ionic strength") {
            assert!(g.deviation.abs() < 1e-9, "{g:?}");
        }
        assert_relative_eq!(r1.volume_of(3), 4.0e-3, epsilon = 1e-12);
        assert_relative_eq!(r1.ionic_strength, 0.0986, max_relative = 1e-9);
        assert_eq!(r1.flags.len(), 1);
        assert!(
            r1.flags[0].message.starts_with("ionic strength is -1.40 %"),
            "{}",
            r1.flags[0].message
        );
    }
}
