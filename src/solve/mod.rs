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

use crate::error::{Error, Result};
use crate::reference::glassware::{find_delivery, find_delivery_in_two, Delivery, Device};
use crate::spec::{IonicTarget, Lab, Run, Spec, WaterVessel};
use crate::units;
use good_lp::{
    microlp, variable, Expression, ProblemVariables, ResolutionError, Solution as _, SolverModel,
    Variable, WithTimeLimit,
};
use std::collections::HashMap;
use std::ops::Range;

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
}

/// Fixed parts of every run: the timing stock and fixed additions.
/// What is the same for every run: the constant additions, their volume, and the solver's
/// time limit (read once per plan).
struct Constant {
    additions: Vec<Addition>,
    volume: f64,
    time_limit: f64,
}

/// Solve every run of the plan.
pub fn solve(spec: &Spec, lab: &Lab) -> Result<Solution> {
    check_distinct_runs(spec)?;
    let constant = constant_additions(spec, lab)?;
    check_reachable_low(spec, lab)?;
    check_hold_reachable(spec, lab, &constant)?;
    let ionic_target = match lab.ionic.as_ref().map(|i| i.target) {
        None => None,
        Some(IonicTarget::Value(v)) => Some(v),
        Some(IonicTarget::Max) => {
            // First pass without the salt; hold every run at the largest value found.
            let mut highest: f64 = 0.0;
            let mut seen = std::collections::HashSet::new();
            for run in &spec.runs {
                if seen.insert(targets_key(run)) {
                    let s = solve_run(spec, lab, run, &constant, None)?;
                    highest = highest.max(s.ionic_strength);
                }
            }
            Some(highest)
        }
    };

    let mut runs: Vec<RunSolution> = Vec::with_capacity(spec.runs.len());
    let mut seen: HashMap<Vec<(String, u64)>, usize> = HashMap::new();
    for (i, run) in spec.runs.iter().enumerate() {
        let key = targets_key(run);
        if let Some(&first) = seen.get(&key) {
            let mut copy = runs[first].clone();
            copy.same_as = Some(first);
            runs.push(copy);
            continue;
        }
        seen.insert(key, i);
        runs.push(solve_run(spec, lab, run, &constant, ionic_target)?);
    }

    // Keep only stocks used somewhere; every run lists the same ones, in spec order.
    let used_stocks: Vec<usize> = (0..lab.stocks.len())
        .filter(|&s| runs.iter().any(|r| r.volume_of(s) > 0.0))
        .collect();
    for r in &mut runs {
        r.additions
            .retain(|a| a.stock.is_none_or(|s| used_stocks.contains(&s)));
    }
    Ok(Solution {
        used_stocks,
        ionic_target,
        runs,
    })
}

/// Runs with equal keys have identical targets and share one recipe.
fn targets_key(run: &Run) -> Vec<(String, u64)> {
    let mut key: Vec<(String, u64)> = run
        .targets
        .iter()
        .map(|t| (t.species.clone(), t.concentration.to_bits()))
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
    })
}

/// At most [`limits::DISTINCT_RUNS`] distinct target sets are solved in one plan.
fn check_distinct_runs(spec: &Spec) -> Result<()> {
    let limit = crate::spec::limits::DISTINCT_RUNS;
    let mut seen = std::collections::HashSet::new();
    for run in &spec.runs {
        if seen.insert(targets_key(run)) && seen.len() > limit {
            return Err(spec.source.error(
                run.span.clone(),
                format!(
                    "run '{}' is distinct set of targets number {}; a plan solves at most {limit}",
                    run.name,
                    limit + 1
                ),
                "too many distinct runs",
                format!("split the plan into specs of at most {limit} distinct target sets (runs with identical targets count once); forecast-only specs may list up to {} runs", crate::spec::limits::RUNS),
            ));
        }
    }
    Ok(())
}

/// A held ionic strength below what the additions made to every run (timing stock, fixed
/// volumes) already give cannot be reached by adding salt: refuse it before any solve.
fn check_hold_reachable(spec: &Spec, lab: &Lab, constant: &Constant) -> Result<()> {
    let Some(hold) = &lab.ionic else {
        return Ok(());
    };
    let IonicTarget::Value(target) = hold.target else {
        return Ok(());
    };
    let floor: f64 = constant
        .additions
        .iter()
        .filter_map(|a| a.stock.map(|s| lab.stocks[s].ionic_strength() * a.volume))
        .sum::<f64>()
        / lab.total_volume;
    if target < floor * (1.0 - lab.tolerance) {
        return Err(spec.source.error(
            hold.span.clone(),
            format!(
                "hold = {} is below the {} that the timing stock and fixed additions alone give every run",
                units::concentration(target),
                units::concentration(floor)
            ),
            "unreachable",
            format!(
                "hold the ionic strength at {} or more, or use hold = \"max\"",
                units::concentration(floor)
            ),
        ));
    }
    Ok(())
}

/// Refuse, before any solver runs, a target so small that the least any allowed device can
/// deliver of any stock holding the species overshoots it grossly (and leaving it out misses
/// it grossly too): a pH 8 control of 1e-8 M H+ from a 0.1 M acid, say.
fn check_reachable_low(spec: &Spec, lab: &Lab) -> Result<()> {
    let gross = GROSS_DEVIATION.max(10.0 * lab.tolerance);
    if gross >= 1.0 {
        return Ok(()); // leaving the stock out is within the accepted miss
    }
    for run in &spec.runs {
        for t in &run.targets {
            let least = lab
                .stocks
                .iter()
                .filter(|s| s.in_runs && s.fixed_volume.is_none())
                .filter_map(|s| {
                    let c = s.concentration_of(&t.species);
                    let smallest = s
                        .devices
                        .iter()
                        .filter_map(|&d| lab.devices[d].volumes().next())
                        .fold(f64::INFINITY, f64::min);
                    (c > 0.0 && smallest.is_finite())
                        .then(|| (c * smallest / lab.total_volume, s, smallest))
                })
                .min_by(|a, b| a.0.total_cmp(&b.0));
            let Some((c_least, stock, smallest)) = least else {
                continue;
            };
            if c_least > t.concentration * (1.0 + gross) {
                let needed =
                    t.concentration * lab.total_volume / stock.concentration_of(&t.species);
                let dilute = t.concentration * lab.total_volume / smallest;
                return Err(spec.source.error(
                    t.span.clone(),
                    format!(
                        "run '{}': {} {} needs {} mL of '{}', far below the {} mL its smallest device delivers",
                        run.name,
                        t.species,
                        units::concentration(t.concentration),
                        units::sig3(needed * 1e3),
                        stock.name,
                        units::sig3(smallest * 1e3)
                    ),
                    "no device delivers this little",
                    format!(
                        "use a stock of at most {} {} for this target (or a smaller device); a near-zero target is better left out of the run's targets",
                        units::concentration(dilute),
                        t.species
                    ),
                ));
            }
        }
    }
    Ok(())
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

/// The linear data of one run: which stocks vary and what each goal needs.
struct RunModel<'a> {
    spec: &'a Spec,
    lab: &'a Lab,
    run: &'a Run,
    /// Stocks whose volume the solve chooses.
    vary: Vec<usize>,
    /// Volume left for varied stocks and water (mL).
    free_ml: f64,
    goals: Vec<GoalRow>,
    /// s per solve
    time_limit: f64,
}

struct GoalRow {
    label: String,
    target: f64,
    /// Per varied stock: amount per mL in mmol (i.e. mol/L).
    coeffs: Vec<f64>,
    /// mmol from the constant additions.
    constant: f64,
    /// The held ionic strength rather than a species.
    ionic: bool,
    span: Range<usize>,
}

impl<'a> RunModel<'a> {
    fn new(
        spec: &'a Spec,
        lab: &'a Lab,
        run: &'a Run,
        constant: &Constant,
        ionic: Option<f64>,
    ) -> Self {
        let fixed: Vec<usize> = constant.additions.iter().filter_map(|a| a.stock).collect();
        let vary: Vec<usize> = (0..lab.stocks.len())
            .filter(|&s| lab.stocks[s].in_runs && !fixed.contains(&s))
            .filter(|&s| {
                let st = &lab.stocks[s];
                let is_salt = ionic.is_some() && lab.ionic.as_ref().is_some_and(|i| i.stock == s);
                is_salt
                    || run
                        .targets
                        .iter()
                        .any(|t| st.concentration_of(&t.species) > 0.0)
            })
            .collect();
        let constant_of = |f: &dyn Fn(usize) -> f64| -> f64 {
            constant
                .additions
                .iter()
                .map(|a| f(a.stock.unwrap_or(usize::MAX)) * a.volume * 1e3)
                .sum()
        };
        let mut goals: Vec<GoalRow> = run
            .targets
            .iter()
            .map(|t| GoalRow {
                label: t.species.clone(),
                target: t.concentration,
                coeffs: vary
                    .iter()
                    .map(|&s| lab.stocks[s].concentration_of(&t.species))
                    .collect(),
                constant: constant_of(&|s| {
                    lab.stocks
                        .get(s)
                        .map_or(0.0, |st| st.concentration_of(&t.species))
                }),
                span: t.span.clone(),
                ionic: false,
            })
            .collect();
        if let (Some(target), Some(hold)) = (ionic, &lab.ionic) {
            goals.push(GoalRow {
                label: "ionic strength".into(),
                target,
                coeffs: vary
                    .iter()
                    .map(|&s| lab.stocks[s].ionic_strength())
                    .collect(),
                constant: constant_of(&|s| lab.stocks.get(s).map_or(0.0, |st| st.ionic_strength())),
                span: hold.span.clone(),
                ionic: true,
            });
        }
        RunModel {
            spec,
            lab,
            run,
            vary,
            free_ml: (lab.total_volume - constant.volume) * 1e3,
            goals,
            time_limit: constant.time_limit,
        }
    }

    fn total_ml(&self) -> f64 {
        self.lab.total_volume * 1e3
    }

    /// Largest volume (mL) the allowed devices of a stock deliver in one addition.
    fn cap_ml(&self, devices: &[usize]) -> f64 {
        devices
            .iter()
            .map(|&d| self.lab.devices[d].max * 1e3)
            .fold(0.0, f64::max)
            .min(self.free_ml)
    }
}

/// Variables of one delivery choice inside the integer model.
struct DeliveryVars {
    /// (device, count variable)
    counts: Vec<(usize, Variable)>,
    volume: Expression,
    /// (binary, preference weight)
    choices: Vec<(Variable, f64)>,
}

fn delivery_vars(
    vars: &mut ProblemVariables,
    allowed: &[usize],
    devices: &[Device],
    constraints: &mut Vec<good_lp::Constraint>,
) -> DeliveryVars {
    let mut counts = Vec::new();
    let mut volume = Expression::from(0.0);
    let mut choices = Vec::new();
    let mut pipet_sum = Expression::from(0.0);
    let mut pipet_fills = 0.0;
    for &d in allowed {
        let dev = &devices[d];
        let (lo, hi) = dev.count_range();
        let step_ml = dev.step * 1e3;
        if dev.is_volumetric() {
            let n = vars.add(variable().integer().min(0).max(hi as f64));
            counts.push((d, n));
            volume += step_ml * n;
            pipet_sum += n;
            pipet_fills += hi as f64;
        } else {
            if lo > hi {
                continue;
            }
            let n = vars.add(variable().integer().min(0).max(hi as f64));
            let y = vars.add(variable().binary());
            constraints.push((n - (lo as f64) * y).geq(0.0));
            constraints.push((n - (hi as f64) * y).leq(0.0));
            counts.push((d, n));
            volume += step_ml * n;
            choices.push((y, dev.kind.preference()));
        }
    }
    if pipet_fills > 0.0 {
        let y = vars.add(variable().binary());
        constraints.push((pipet_sum.clone() - pipet_fills * y).leq(0.0));
        constraints.push((pipet_sum - y).geq(0.0));
        choices.push((y, 0.0));
    }
    if choices.len() > 1 {
        let sum: Expression = choices.iter().map(|(y, _)| *y).sum();
        constraints.push(sum.leq(1.0));
    }
    DeliveryVars {
        counts,
        volume,
        choices,
    }
}

/// What one solve of a run's model minimises. Goals come in two tiers: the target species,
/// then the held ionic strength, so an inert salt never pulls a reactant off its target.
#[derive(Clone, Copy)]
enum Objective {
    /// The largest deviation of a target species.
    MaxSpecies,
    /// With species capped, the deviation of the held ionic strength.
    MaxIonic,
    /// With both capped, the sum of all deviations, then precise glassware.
    Sum,
}

#[derive(Clone, Copy)]
struct Stage {
    objective: Objective,
    species_cap: Option<f64>,
    ionic_cap: Option<f64>,
}

impl Stage {
    fn first() -> Stage {
        Stage {
            objective: Objective::MaxSpecies,
            species_cap: None,
            ionic_cap: None,
        }
    }
}

/// Integer: every volume a deliverable one. Continuous: volumes free between zero and what the
/// allowed devices hold, to tell an unreachable target from a rounding problem.
#[derive(Clone, Copy, PartialEq)]
enum Relax {
    Integer,
    Continuous,
}

struct Outcome {
    /// Integer solves: the additions of varied stocks, then water.
    additions: Vec<Addition>,
    /// Volumes (mL) of the varied stocks.
    volumes_ml: Vec<f64>,
    z_species: f64,
    z_ionic: f64,
}

fn solve_model(
    m: &RunModel,
    relax: Relax,
    stage: Stage,
) -> std::result::Result<Outcome, ResolutionError> {
    let lab = m.lab;
    let mut vars = ProblemVariables::new();
    let mut cons = Vec::new();
    // Split water is two additions, one per vessel; otherwise one.
    let water_parts = if lab.water_vessel == WaterVessel::Split {
        2
    } else {
        1
    };
    let (stock_vars, waters): (Vec<DeliveryVars>, Vec<DeliveryVars>) = match relax {
        Relax::Integer => (
            m.vary
                .iter()
                .map(|&s| delivery_vars(&mut vars, &lab.stocks[s].devices, &lab.devices, &mut cons))
                .collect(),
            (0..water_parts)
                .map(|_| delivery_vars(&mut vars, &lab.water_devices, &lab.devices, &mut cons))
                .collect(),
        ),
        Relax::Continuous => {
            let free = |vars: &mut ProblemVariables, cap: f64| {
                let v = vars.add(variable().min(0.0).max(cap));
                DeliveryVars {
                    counts: Vec::new(),
                    volume: v.into(),
                    choices: Vec::new(),
                }
            };
            let stocks = m
                .vary
                .iter()
                .map(|&s| free(&mut vars, m.cap_ml(&lab.stocks[s].devices)))
                .collect();
            let water_cap = (m.cap_ml(&lab.water_devices) * water_parts as f64).min(m.free_ml);
            (stocks, vec![free(&mut vars, water_cap)])
        }
    };
    let z_species = vars.add(variable().min(0.0));
    let z_ionic = vars.add(variable().min(0.0));
    let mut sum_dev = Expression::from(0.0);
    let total = m.total_ml();

    let mut volume_sum = Expression::from(0.0);
    for dv in stock_vars.iter().chain(&waters) {
        volume_sum += dv.volume.clone();
    }
    cons.push(volume_sum.eq(m.free_ml));

    for g in &m.goals {
        // relative achieved = (Σ a v + n) / (V T)
        let scale = 1.0 / (total * g.target);
        let mut rel = Expression::from(g.constant * scale);
        for (dv, &a) in stock_vars.iter().zip(&g.coeffs) {
            if a != 0.0 {
                rel += dv.volume.clone() * (a * scale);
            }
        }
        let z = if g.ionic { z_ionic } else { z_species };
        cons.push((rel.clone() - 1.0 - z).leq(0.0));
        cons.push((1.0 - rel.clone() - z).leq(0.0));
        if let Objective::Sum = stage.objective {
            let e = vars.add(variable().min(0.0));
            cons.push((rel.clone() - 1.0 - e).leq(0.0));
            cons.push((1.0 - rel - e).leq(0.0));
            sum_dev += e;
        }
    }
    let slack = |z: f64| z + 1e-9 + z * 1e-9;
    if let Some(cap) = stage.species_cap {
        cons.push(Expression::from(z_species).leq(slack(cap)));
    }
    if let Some(cap) = stage.ionic_cap {
        cons.push(Expression::from(z_ionic).leq(slack(cap)));
    }
    let objective = match stage.objective {
        Objective::MaxSpecies => Expression::from(z_species),
        Objective::MaxIonic => Expression::from(z_ionic),
        Objective::Sum => {
            let mut o = sum_dev;
            for dv in stock_vars.iter().chain(&waters) {
                for (y, pref) in &dv.choices {
                    o += (1e-7 * (1.0 + pref)) * *y;
                }
            }
            o
        }
    };
    let mut model = vars
        .minimise(objective)
        .using(microlp)
        .with_time_limit(m.time_limit);
    for c in cons {
        model = model.with(c);
    }
    // microlp asserts on numbers it cannot condition; such a run is refused, not a crash.
    let solved = std::panic::catch_unwind(std::panic::AssertUnwindSafe(|| model.solve()))
        .map_err(|_| ResolutionError::Other(SOLVER_PANICKED))?;
    let sol = solved.map_err(|e| match e {
        ResolutionError::Other(m) if m.contains("Time limit") => ResolutionError::Other(TIMED_OUT),
        e => e,
    })?;
    if !matches!(sol.status(), good_lp::SolutionStatus::Optimal) {
        return Err(ResolutionError::Other(TIMED_OUT));
    }

    let read = |dv: &DeliveryVars| -> Delivery {
        let parts = dv
            .counts
            .iter()
            .filter_map(|&(d, n)| {
                let k = sol.value(n).round();
                (k >= 0.5).then_some((d, k as u32))
            })
            .collect();
        Delivery { parts }
    };
    let mut additions = Vec::new();
    if relax == Relax::Integer {
        for (dv, &s) in stock_vars.iter().zip(&m.vary) {
            let delivery = read(dv);
            additions.push(Addition {
                stock: Some(s),
                volume: delivery.volume(&lab.devices),
                delivery,
            });
        }
        let mut delivery = Delivery::none();
        for w in &waters {
            delivery.parts.extend(read(w).parts);
        }
        additions.push(Addition {
            stock: None,
            volume: delivery.volume(&lab.devices),
            delivery,
        });
    }
    Ok(Outcome {
        additions,
        volumes_ml: stock_vars.iter().map(|dv| sol.eval(&dv.volume)).collect(),
        z_species: sol.value(z_species),
        z_ionic: sol.value(z_ionic),
    })
}

/// Solve the tiers in order: species, then ionic strength (when held), then the sums.
fn solve_tiers(m: &RunModel, relax: Relax) -> std::result::Result<Outcome, ResolutionError> {
    let first = solve_model(m, relax, Stage::first())?;
    let held = m.goals.iter().any(|g| g.ionic);
    let second = if held {
        let stage = Stage {
            objective: Objective::MaxIonic,
            species_cap: Some(first.z_species),
            ionic_cap: None,
        };
        keep_on_infeasible(solve_model(m, relax, stage), first)?
    } else {
        first
    };
    if relax == Relax::Continuous {
        return Ok(second);
    }
    let stage = Stage {
        objective: Objective::Sum,
        species_cap: Some(second.z_species),
        ionic_cap: held.then_some(second.z_ionic),
    };
    keep_on_infeasible(solve_model(m, relax, stage), second)
}

/// A later tier that cannot meet the earlier caps (rounding) keeps the earlier result; a solve
/// stopped by the time limit is an error.
fn keep_on_infeasible(
    later: std::result::Result<Outcome, ResolutionError>,
    earlier: Outcome,
) -> std::result::Result<Outcome, ResolutionError> {
    match later {
        Err(ResolutionError::Other(m)) if m == TIMED_OUT => Err(ResolutionError::Other(m)),
        Err(_) => Ok(earlier),
        ok => ok,
    }
}

fn solve_run(
    spec: &Spec,
    lab: &Lab,
    run: &Run,
    constant: &Constant,
    ionic: Option<f64>,
) -> Result<RunSolution> {
    let m = RunModel::new(spec, lab, run, constant, ionic);
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
    let outcome = match solve_tiers(&m, Relax::Integer) {
        Ok(o) => o,
        Err(ResolutionError::Infeasible) => return Err(explain_integer_infeasible(&m, &ideal)),
        Err(e) => return Err(solver_error(e)),
    };

    let mut additions = constant.additions.clone();
    additions.extend(outcome.additions.into_iter().filter(|a| a.stock.is_some()));
    additions.sort_by_key(|a| a.stock);
    // Water last; recompute from the delivered volumes so the sum is exact.
    let water = find_water(&m, &additions)?;
    additions.push(water);

    let solution = evaluate(lab, run, additions, ionic);
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

// ---------------------------------------------------------------------------------------------
// Explanations, in the user's terms
// ---------------------------------------------------------------------------------------------

fn water_error(m: &RunModel) -> Error {
    let (spec, lab) = (m.spec, m.lab);
    spec.source.error(
        m.run.span.clone(),
        format!(
            "run '{}': the water devices cannot make the run up to {} mL",
            m.run.name,
            units::ml(lab.total_volume, 2)
        ),
        "no way to make up the volume",
        "allow a larger device for water in [water] devices",
    )
}

/// The continuous model cannot meet the targets: say which one, and why.
fn explain_unreachable(m: &RunModel, best: f64) -> Error {
    let (spec, lab) = (m.spec, m.lab);
    let run = &m.run.name;
    let total = m.total_ml();
    // 1. A single goal out of reach on its own.
    for g in &m.goals {
        // Greedy: fill the free volume with the richest stocks first, each up to its device cap.
        let mut order: Vec<usize> = (0..m.vary.len()).filter(|&i| g.coeffs[i] > 0.0).collect();
        order.sort_by(|&a, &b| g.coeffs[b].total_cmp(&g.coeffs[a]));
        let mut left = m.free_ml;
        let mut most = g.constant;
        let mut used_names = Vec::new();
        let mut limited_by_device = false;
        for &i in &order {
            let cap = m.cap_ml(&lab.stocks[m.vary[i]].devices);
            let take = left.min(cap);
            if cap < left {
                limited_by_device = true;
            }
            most += take * g.coeffs[i];
            left -= take;
            used_names.push((m.vary[i], take));
            if left <= 0.0 {
                break;
            }
        }
        let most_c = most / total;
        let least_c = g.constant / total;
        let what = if g.label == "ionic strength" {
            format!("ionic strength {}", units::concentration(g.target))
        } else {
            format!("{} {}", g.label, units::concentration(g.target))
        };
        if g.target > most_c * (1.0 + lab.tolerance) {
            let (message, help) = match used_names.as_slice() {
                [] => (
                    format!("run '{run}': {what} cannot be reached: no stock that varies holds it"),
                    "add a stock that holds this species".to_string(),
                ),
                [(s, take)] => {
                    let name = &lab.stocks[*s].name;
                    let limit = if limited_by_device {
                        format!(
                            "the {} mL its largest allowed device delivers",
                            trim_ml(take * 1e-3)
                        )
                    } else {
                        format!("the whole {} mL left in the run", trim_ml(m.free_ml * 1e-3))
                    };
                    (
                        format!(
                            "run '{run}': {what} is out of reach: {limit}, all of it '{name}', gives at most {}",
                            units::concentration(most_c)
                        ),
                        if limited_by_device {
                            "allow a larger device for this stock, use a stronger stock, or lower the target".to_string()
                        } else {
                            "use a stronger stock, a smaller total volume, or a lower target".to_string()
                        },
                    )
                }
                many => (
                    format!(
                        "run '{run}': {what} is out of reach: all of {} together give at most {}",
                        many.iter()
                            .map(|(s, _)| format!("'{}'", lab.stocks[*s].name))
                            .collect::<Vec<_>>()
                            .join(", "),
                        units::concentration(most_c)
                    ),
                    "use a stronger stock, a smaller total volume, or a lower target".to_string(),
                ),
            };
            return spec
                .source
                .error(g.span.clone(), message, "out of reach", help);
        }
        if g.target < least_c * (1.0 - lab.tolerance) {
            return spec.source.error(
                g.span.clone(),
                format!(
                    "run '{run}': {what} is below the {} that the timing stock and fixed additions already bring",
                    units::concentration(least_c)
                ),
                "below the floor",
                "raise the target, or keep this species out of the timing stock and fixed additions",
            );
        }
    }
    // 2. Each goal alone is reachable, but the volumes needed do not fit together.
    let mut needed = Vec::new();
    let mut sum_needed = 0.0;
    for g in &m.goals {
        if let Some((i, &a)) = g
            .coeffs
            .iter()
            .enumerate()
            .filter(|(_, &a)| a > 0.0)
            .max_by(|x, y| x.1.total_cmp(y.1))
        {
            let v = ((g.target * total - g.constant) / a).max(0.0);
            sum_needed += v;
            needed.push(format!(
                "{} mL of '{}'",
                trim_ml(v * 1e-3),
                lab.stocks[m.vary[i]].name
            ));
        }
    }
    if sum_needed > m.free_ml * (1.0 + lab.tolerance) {
        return spec.source.error(
            m.run.span.clone(),
            format!(
                "run '{run}': the stocks needed add up to more than the {} mL available: {}",
                trim_ml(m.free_ml * 1e-3),
                needed.join(" + ")
            ),
            "does not fit",
            "use stronger stocks, a larger total volume, or lower targets",
        );
    }
    // 3. Stocks that carry several target species in a fixed ratio.
    spec.source.error(
        m.run.span.clone(),
        format!(
            "run '{run}': the targets cannot all be met together (best largest deviation {:.1} %): the stocks bring these species in fixed ratios",
            best * 100.0
        ),
        "conflicting targets",
        "add a stock that holds only one of the conflicting species, or change the targets",
    )
}

/// A stock whose ideal volume is below what any of its allowed devices delivers.
struct TooSmall {
    stock: usize,
    ideal: f64,
    min: f64,
    device: usize,
}

impl TooSmall {
    fn find(m: &RunModel, ideal: &[f64]) -> Option<TooSmall> {
        let lab = m.lab;
        ideal.iter().enumerate().find_map(|(i, &v_ml)| {
            if v_ml <= 1e-9 {
                return None;
            }
            let stock = m.vary[i];
            let (min, device) = lab.stocks[stock]
                .devices
                .iter()
                .map(|&d| (lab.devices[d].min, d))
                .min_by(|a, b| a.0.total_cmp(&b.0))?;
            (v_ml * 1e-3 < min * (1.0 - lab.tolerance)).then_some(TooSmall {
                stock,
                ideal: v_ml * 1e-3,
                min,
                device,
            })
        })
    }

    fn describe(&self, lab: &Lab) -> String {
        format!(
            "no allowed device delivers {} mL of '{}' (the smallest is {} mL with '{}')",
            trim_ml(self.ideal),
            lab.stocks[self.stock].name,
            trim_ml(self.min),
            lab.devices[self.device].name
        )
    }

    fn error(&self, m: &RunModel) -> Error {
        let (spec, lab) = (m.spec, m.lab);
        spec.source.error(
            lab.stocks[self.stock].name_span.clone(),
            format!("run '{}': {}", m.run.name, self.describe(lab)),
            "volume too small for its devices",
            "allow a smaller device for this stock (devices = [...]), or use a more dilute stock",
        )
    }
}

/// The integer model has no solution although the continuous one does.
fn explain_integer_infeasible(m: &RunModel, ideal: &[f64]) -> Error {
    if let Some(t) = TooSmall::find(m, ideal) {
        return t.error(m);
    }
    let (spec, lab) = (m.spec, m.lab);
    let steps: Vec<String> = lab
        .water_devices
        .iter()
        .map(|&d| {
            let dev = &lab.devices[d];
            format!("'{}' ({} mL steps)", dev.name, trim_ml(dev.step))
        })
        .collect();
    spec.source.error(
        lab.total_span.clone(),
        format!(
            "run '{}': no combination of deliverable volumes adds up to exactly {} mL",
            m.run.name,
            trim_ml(lab.total_volume)
        ),
        "cannot be made up exactly",
        format!(
            "the fixed additions leave {} mL for stocks and water, and water comes from {}; pick a total and fixed volumes on the devices' graduations",
            trim_ml(m.free_ml * 1e-3),
            steps.join(", ")
        ),
    )
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

    const BASE: &str = r#"
[plan]
title = "dilution check"
total_volume = "50.0 mL"
tolerance = "0.5 %"

[timing]
species = "S2O3^2-"
concentration = "0.200 mM"

[mixing]
keep_apart = [["I-", "BrO3-"]]

[[stock]]
name = "KI 0.0500 M"
contains = { "I-" = "0.0500 M", "K+" = "0.0500 M" }

[[stock]]
name = "KBrO3 0.0400 M"
contains = { "BrO3-" = "0.0400 M", "K+" = "0.0400 M" }

[[stock]]
name = "thio 2.00 mM"
contains = { "S2O3^2-" = "2.00 mM", "Na+" = "4.00 mM" }

[[device]]
name = "50 mL buret"
kind = "buret"
capacity = "50 mL"
graduation = "0.10 mL"

[[run]]
name = "r1"
targets = { "I-" = "10.0 mM", "BrO3-" = "8.00 mM" }

[[run]]
name = "r2"
targets = { "I-" = "5.00 mM", "BrO3-" = "8.00 mM" }
"#;

    #[test]
    fn single_species_stocks_follow_the_dilution_law() {
        // M1V1 = M2V2 (common practice): V = C_target · V_total / C_stock.
        // r1: I- 10.0 mM × 50 mL / 50.0 mM = 10.0 mL; BrO3- 8.00 mM × 50 / 40.0 = 10.0 mL;
        // thiosulfate 0.200 mM × 50 / 2.00 = 5.00 mL; water 25.0 mL.
        let s = spec(BASE);
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
        let text = BASE
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
        let text = BASE.replace("\"I-\" = \"10.0 mM\"", "\"I-\" = \"7.77 mM\"");
        let sol = solve_spec(&spec(&text)).unwrap();
        assert_relative_eq!(sol.runs[0].volume_of(0), 7.8e-3, epsilon = 1e-12);
        assert!(sol.runs[0].flags.is_empty());
    }

    #[test]
    fn unreachable_target_names_run_species_and_stock() {
        let text = BASE.replace("\"I-\" = \"10.0 mM\"", "\"I-\" = \"60.0 mM\"");
        let e = solve_spec(&spec(&text)).unwrap_err();
        let msg = e.message();
        assert!(msg.contains("run 'r1'"), "{msg}");
        assert!(msg.contains("I- 60.0 mM"), "{msg}");
        assert!(msg.contains("KI 0.0500 M"), "{msg}");
    }

    #[test]
    fn identical_runs_are_solved_once() {
        let text = BASE.replace("\"I-\" = \"5.00 mM\"", "\"I-\" = \"10.0 mM\"");
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
        let text = BASE
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
