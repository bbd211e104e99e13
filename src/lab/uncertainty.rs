//! Uncertainty from glassware and stocks: each device's tolerance (ASTM glassware classes,
//! ISO 8655 piston pipettes; `src/reference/data/tolerances.toml`, read in [`crate::reference::tolerance`]) and the stocks' concentration
//! uncertainty, propagated to first order to every final concentration and to the forecast
//! time through log sensitivities. Results are relative standard uncertainties (k = 1).
//!
//! A tolerance ±a is read as a rectangular distribution (standard uncertainty a/√3); a piston
//! pipette's random error is a standard deviation. Volumetric pipet fills and separate
//! additions are independent.

use crate::kinetics::design::RunErrors;
use crate::kinetics::RunKinetics;
pub use crate::reference::tolerance::{delivery_u, error_split, tolerance, ErrorSplit, Tolerance};
use crate::solve::RunSolution;
use crate::spec::{Lab, Spec};

/// Relative standard uncertainties of one run.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct RunUncertainty {
    /// Per species, as in the run's concentrations.
    pub species: Vec<(String, f64)>,
    /// Of the forecast time (to visible colour when a threshold is known), when there is one.
    pub time: Option<f64>,
    /// Of the clock time alone (until the timing reagent is used up).
    pub clock: Option<f64>,
}

/// First-order propagation for one solved run.
pub fn propagate(spec: &Spec, lab: &Lab, run: &RunSolution) -> RunUncertainty {
    let adds = &run.additions;
    let u_add: Vec<f64> = adds
        .iter()
        .map(|a| delivery_u(&a.delivery, &lab.devices))
        .collect();
    // Each stock's own relative uncertainty (from its recipe, or as the spec states it).
    let u_stock: Vec<f64> = adds
        .iter()
        .map(|a| a.stock.map_or(0.0, |s| lab.stocks[s].uncertainty))
        .collect();
    let combine = |d_v: &[f64], share: &[f64]| -> f64 {
        let vol: f64 = d_v.iter().zip(&u_add).map(|(d, u)| (d * u).powi(2)).sum();
        let stock: f64 = share
            .iter()
            .zip(&u_stock)
            .map(|(w, u)| (w * u).powi(2))
            .sum();
        (vol + stock).sqrt()
    };
    // A species the run does not deliver has no relative uncertainty.
    let species: Vec<(String, f64)> = run
        .concentrations
        .iter()
        .filter(|(_, c)| *c > 0.0)
        .map(|(sp, _)| {
            let (d_v, share) = partials(lab, adds, sp);
            (sp.clone(), combine(&d_v, &share))
        })
        .collect();

    let time = time_sensitivity(spec, lab, run).map(|g| combine(&g.volume, &g.stock));
    let visible = spec
        .prior
        .as_ref()
        .is_some_and(|p| p.reaction.visible.is_some());
    let clock = if visible {
        sensitivity_of(spec, lab, run, |t| t.clock).map(|g| combine(&g.volume, &g.stock))
    } else {
        time
    };
    RunUncertainty {
        species,
        time,
        clock,
    }
}

/// How the forecast time of one run answers each addition and its stock.
#[derive(Debug, Clone, PartialEq)]
pub struct TimeSensitivity {
    /// ∂ln t/∂V (1/L) of each addition's volume.
    pub volume: Vec<f64>,
    /// ∂ln t/∂ln C of each addition's stock concentration (0 for water).
    pub stock: Vec<f64>,
}

/// ∂ln cᵢ/∂V of each addition and the share of species `sp` that each addition brings.
fn partials(lab: &Lab, adds: &[crate::solve::Addition], sp: &str) -> (Vec<f64>, Vec<f64>) {
    let v_total: f64 = adds.iter().map(|a| a.volume).sum();
    let conc =
        |a: &crate::solve::Addition| a.stock.map_or(0.0, |s| lab.stocks[s].concentration_of(sp));
    let n: f64 = adds.iter().map(|a| conc(a) * a.volume).sum();
    let d_v = adds
        .iter()
        .map(|a| (if n > 0.0 { conc(a) / n } else { 0.0 }) - 1.0 / v_total)
        .collect();
    let share = adds
        .iter()
        .map(|a| if n > 0.0 { conc(a) * a.volume / n } else { 0.0 })
        .collect();
    (d_v, share)
}

/// Log sensitivities of a run's forecast time to each addition's volume and stock: the time's
/// log sensitivity to every species (central differences, the timing species included) chained
/// through the dilution. None without a prior or when the run has no clock.
pub fn time_sensitivity(spec: &Spec, lab: &Lab, run: &RunSolution) -> Option<TimeSensitivity> {
    sensitivity_of(spec, lab, run, crate::kinetics::Timing::to_colour)
}

/// The same for the time `pick` takes from the forecast (the clock alone, or to colour).
fn sensitivity_of(
    spec: &Spec,
    lab: &Lab,
    run: &RunSolution,
    pick: fn(&crate::kinetics::Timing) -> f64,
) -> Option<TimeSensitivity> {
    let p = spec.prior.as_ref()?;
    let (reaction, f) = (&p.reaction, &p.settings);
    let adds = &run.additions;
    let c0 = &run.concentrations;
    let timing = spec.timing.concentration;
    let ln_t = |c0: &[(String, f64)], timing: f64| -> Option<f64> {
        RunKinetics::new(reaction, c0, timing)
            .ok()
            .map(|k| pick(&k.at(f.temperature)).ln())
    };
    ln_t(c0, timing)?;
    let h: f64 = 1e-4;
    let mut volume = vec![0.0; adds.len()];
    let mut stock = vec![0.0; adds.len()];
    for (j, (sp, _)) in c0.iter().enumerate() {
        let bump = |factor: f64| -> Option<f64> {
            let mut c = c0.clone();
            c[j].1 *= factor;
            let t = if *sp == spec.timing.species {
                timing * factor
            } else {
                timing
            };
            ln_t(&c, t)
        };
        let s_j = (bump(h.exp())? - bump((-h).exp())?) / (2.0 * h);
        if s_j == 0.0 {
            continue;
        }
        let (d_v, share) = partials(lab, adds, sp);
        for a in 0..adds.len() {
            volume[a] += s_j * d_v[a];
            stock[a] += s_j * share[a];
        }
    }
    Some(TimeSensitivity { volume, stock })
}

/// A run's error sources for `design`'s correlated model: each stock flask's error (one
/// flask serves the whole lab), each device's calibration error (one item per station, the
/// same in every trial of that station) and each trial's own delivery scatter, all as
/// contributions to ln t (k = 1). None when the run has no forecast time to propagate to.
pub fn design_errors(spec: &Spec, lab: &Lab, run: &RunSolution) -> Option<RunErrors> {
    let g = time_sensitivity(spec, lab, run)?;
    let mut errors = RunErrors::default();
    let mut trial = 0.0;
    for (a, add) in run.additions.iter().enumerate() {
        if let Some(s) = add.stock {
            let c = g.stock[a] * lab.stocks[s].uncertainty;
            let name = &lab.stocks[s].name;
            if lab.stocks[s].uncertainty >= WORTH_STANDARDIZING
                && !errors.standardizable.contains(name)
            {
                errors.standardizable.push(name.clone());
            }
            match errors.lab.iter_mut().find(|(x, _)| x == name) {
                Some((_, v)) => *v += c,
                None => errors.lab.push((name.clone(), c)),
            }
        }
        for &(d, n) in &add.delivery.parts {
            let split = error_split(&lab.devices[d]);
            // Every fill of a transfer pipet carries the same item's error; an adjustable
            // device delivers its steps in one go.
            let (uses, fills) = if lab.devices[d].is_volumetric() {
                (n as f64, n as f64)
            } else {
                (1.0, 1.0)
            };
            let c = g.volume[a] * uses * split.item;
            let name = &lab.devices[d].name;
            match errors.station.iter_mut().find(|(x, _)| x == name) {
                Some((_, v)) => *v += c,
                None => errors.station.push((name.clone(), c)),
            }
            trial += (g.volume[a] * split.per_delivery).powi(2) * fills;
        }
    }
    errors.trial = trial.sqrt();
    Some(errors)
}

/// Every run's uncertainties, propagated once per distinct recipe: a run that repeats an
/// earlier one's targets (`same_as`) gets an empty entry, as the report shares the first's.
pub fn propagate_distinct(
    spec: &Spec,
    lab: &Lab,
    solution: &crate::solve::Solution,
) -> Vec<RunUncertainty> {
    solution
        .runs
        .iter()
        .map(|r| match r.same_as {
            None => propagate(spec, lab, r),
            Some(_) => RunUncertainty::default(),
        })
        .collect()
}

/// Below this a stock is not worth standardizing: a titration itself gives about 0.2–0.3 %
/// (common practice).
pub const WORTH_STANDARDIZING: f64 = 0.005;

/// Stocks of at least [`WORTH_STANDARDIZING`] whose own concentration uncertainty is more than
/// half the variance of a target species' uncertainty in some run, with those species in
/// order: the stocks worth standardizing.
pub fn dominant_stocks(
    spec: &Spec,
    lab: &Lab,
    runs: &[RunSolution],
    uncertainties: &[RunUncertainty],
) -> Vec<(usize, Vec<String>)> {
    let mut out: Vec<(usize, Vec<String>)> = Vec::new();
    for ((r, u), run) in runs.iter().zip(uncertainties).zip(&spec.runs) {
        if r.same_as.is_some() {
            continue;
        }
        for t in &run.targets {
            let Some(total) = u.species.iter().find(|(s, _)| *s == t.species).map(|x| x.1) else {
                continue;
            };
            let amounts: Vec<(usize, f64)> = r
                .additions
                .iter()
                .filter_map(|a| {
                    a.stock
                        .map(|s| (s, lab.stocks[s].concentration_of(&t.species) * a.volume))
                })
                .collect();
            let n: f64 = amounts.iter().map(|x| x.1).sum();
            if n <= 0.0 {
                continue;
            }
            for (s, amount) in amounts {
                let u_s = lab.stocks[s].uncertainty;
                let own = amount / n * u_s;
                if u_s >= WORTH_STANDARDIZING && own * own > 0.5 * total * total {
                    match out.iter_mut().find(|(x, _)| *x == s) {
                        Some((_, list)) if !list.contains(&t.species) => {
                            list.push(t.species.clone())
                        }
                        Some(_) => {}
                        None => out.push((s, vec![t.species.clone()])),
                    }
                }
            }
        }
    }
    out.sort_by_key(|x| x.0);
    out
}
