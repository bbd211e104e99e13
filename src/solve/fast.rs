//! The exact shortcut for the usual run: every target from its own stock, each stock with one
//! device. Each volume is then the deliverable volume nearest to the dilution law's
//! V = (T·V_total − n_fixed)/c, the salt of a held ionic strength is rounded the same way after
//! them, and water makes up the rest.
//!
//! This is the optimum of the run's integer model whenever it applies: with separate stocks
//! every target's deviation depends on its own volume only, so rounding each to its nearest
//! grid point minimises the largest deviation and the sum at once. The held ionic strength is
//! the one goal that couples them (the model may move a reactant inside the largest deviation
//! to help the salt), so the shortcut is taken only when the salt lands exactly or the
//! reactants leave no room (all exact). Anything else — a stock with two devices, shared
//! species, water the devices cannot make up, a recipe outside tolerance — goes to the model.

use super::*;
use crate::reference::glassware::Device;

/// The nearest count of steps (fills) to `ml`, inside the device's range; ties to fewer.
fn nearest_count(dev: &Device, ml: f64, allow_zero: bool) -> Option<u32> {
    let (lo, hi) = dev.count_range();
    if lo > hi {
        return None;
    }
    let step = dev.step * 1e3;
    let x = ml / step;
    let mut best: Option<(f64, u32)> = None;
    let mut consider = |n: u32| {
        let d = (n as f64 * step - ml).abs();
        if best.is_none_or(|(bd, bn)| d < bd - 1e-12 * ml.abs().max(step) || (d <= bd + 1e-12 * ml.abs().max(step) && n < bn)) {
            best = Some((d, n));
        }
    };
    let floor = x.floor().max(0.0) as u64;
    for n in [floor, floor + 1] {
        consider(n.clamp(lo as u64, hi as u64) as u32);
    }
    if allow_zero {
        consider(0);
    }
    best.map(|b| b.1)
}

/// The run's recipe by rounding, or `None` when the integer model must decide.
pub(super) fn solve(m: &RunModel, constant: &Constant, ionic: Option<f64>) -> Option<RunSolution> {
    let lab = m.lab;
    let single: Vec<usize> = m
        .vary
        .iter()
        .map(|&s| match lab.stocks[s].devices.as_slice() {
            [d] => Some(*d),
            _ => None,
        })
        .collect::<Option<_>>()?;
    let salt = lab
        .ionic
        .as_ref()
        .filter(|_| ionic.is_some())
        .and_then(|h| m.vary.iter().position(|&s| s == h.stock));
    // Each species goal from exactly one varied stock; each stock serves at most one goal;
    // the salt serves none.
    let mut owner = vec![None; m.vary.len()];
    for (g, row) in m.goals.iter().enumerate().filter(|(_, g)| !g.ionic) {
        let mut nz = row.coeffs.iter().enumerate().filter(|(_, a)| **a != 0.0);
        let (j, _) = nz.next()?;
        if nz.next().is_some() || owner[j].is_some() || Some(j) == salt {
            return None;
        }
        owner[j] = Some(g);
    }
    let total = m.total_ml();
    let mut counts = vec![0u32; m.vary.len()];
    for (j, g) in owner.iter().enumerate() {
        let Some(g) = g else {
            if Some(j) != salt {
                return None;
            }
            continue;
        };
        let row = &m.goals[*g];
        let ideal = (row.target * total - row.constant) / row.coeffs[j];
        if !(ideal.is_finite() && ideal > 0.0) {
            return None;
        }
        counts[j] = nearest_count(&lab.devices[single[j]], ideal, false)?;
    }
    let ml_of = |j: usize, counts: &[u32]| counts[j] as f64 * lab.devices[single[j]].step * 1e3;
    let species_dev = |counts: &[u32]| -> f64 {
        m.goals
            .iter()
            .filter(|g| !g.ionic)
            .map(|g| {
                let n: f64 = g.constant
                    + (0..m.vary.len())
                        .map(|j| g.coeffs[j] * ml_of(j, counts))
                        .sum::<f64>();
                (n / (total * g.target) - 1.0).abs()
            })
            .fold(0.0, f64::max)
    };
    let worst_species = species_dev(&counts);
    if let Some(j) = salt {
        let row = m.goals.iter().find(|g| g.ionic)?;
        let rest: f64 = row.constant
            + (0..m.vary.len())
                .filter(|&k| k != j)
                .map(|k| row.coeffs[k] * ml_of(k, &counts))
                .sum::<f64>();
        let per = row.coeffs[j];
        if per <= 0.0 {
            return None;
        }
        let ideal = (row.target * total - rest) / per;
        counts[j] = nearest_count(&lab.devices[single[j]], ideal.max(0.0), true)?;
        let dev = ((rest + per * ml_of(j, &counts)) / (total * row.target) - 1.0).abs();
        // The model could trade reactant deviation for the salt's only when both are off.
        if dev > 1e-12 && worst_species > 1e-12 {
            return None;
        }
        if dev > lab.tolerance {
            return None;
        }
    }
    if worst_species > lab.tolerance {
        return None;
    }
    let mut additions = constant.additions.clone();
    for (j, &s) in m.vary.iter().enumerate() {
        if counts[j] == 0 {
            continue;
        }
        let d = single[j];
        additions.push(Addition {
            stock: Some(s),
            volume: counts[j] as f64 * lab.devices[d].step,
            delivery: Delivery {
                parts: vec![(d, counts[j])],
            },
        });
    }
    additions.sort_by_key(|a| a.stock);
    let water = find_water(m, &additions).ok()?;
    if water.volume < 0.0 {
        return None;
    }
    additions.push(water);
    Some(evaluate(lab, m.run, additions, ionic))
}
