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
//! reactants leave no room (all exact), or else after an exact search of those moves. Anything
//! else — a stock with two devices, shared species, water the devices cannot make up — goes to
//! the model. A recipe outside tolerance is still the optimum; the caller flags or explains it.

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
        if best.is_none_or(|(bd, bn)| {
            d < bd - 1e-12 * ml.abs().max(step) || (d <= bd + 1e-12 * ml.abs().max(step) && n < bn)
        }) {
            best = Some((d, n));
        }
    };
    // Saturating: a volume far beyond the device (a mistyped exponent) rounds to its top.
    let floor = x.floor().max(0.0) as u64;
    for n in [floor, floor.saturating_add(1)] {
        consider(n.clamp(lo as u64, hi as u64) as u32);
    }
    if allow_zero {
        consider(0);
    }
    best.map(|b| b.1)
}

/// The cap the model puts on a tier once the tier before it is solved.
fn slack(z: f64) -> f64 {
    z + 1e-9 + z * 1e-9
}

/// Most combinations of reactant volumes [`held_search`] looks at before leaving the run to
/// the model.
const SEARCH_LIMIT: usize = 20_000;

/// The model's tiers, by enumeration, for a separable run with a held ionic strength: every
/// reactant volume whose own deviation stays within the best largest deviation `z1`, the salt
/// nearest for each, then the least ionic deviation, then the least sum of deviations.
fn held_search(
    m: &RunModel,
    single: &[usize],
    owner: &[Option<usize>],
    salt: usize,
    z1: f64,
) -> Option<Vec<u32>> {
    let lab = m.lab;
    let total = m.total_ml();
    let step = |j: usize| lab.devices[single[j]].step * 1e3;
    // Per reactant: the counts inside the cap, with their deviations.
    let mut choices: Vec<Vec<(u32, f64)>> = Vec::new();
    let mut size = 1usize;
    for (j, g) in owner.iter().enumerate() {
        let Some(g) = g else {
            choices.push(vec![(0, 0.0)]);
            continue;
        };
        let row = &m.goals[*g];
        let dev = &lab.devices[single[j]];
        let (lo, hi) = dev.count_range();
        let ideal = (row.target * total - row.constant) / row.coeffs[j];
        let reach = slack(z1) * row.target * total / row.coeffs[j];
        let from = ((ideal - reach) / step(j)).floor().max(lo as f64) as u32;
        let to = ((ideal + reach) / step(j)).ceil().min(hi as f64) as u32;
        let list: Vec<(u32, f64)> = (from..=to)
            .map(|n| {
                let d = ((row.coeffs[j] * n as f64 * step(j) + row.constant)
                    / (total * row.target)
                    - 1.0)
                    .abs();
                (n, d)
            })
            .filter(|(_, d)| *d <= slack(z1))
            .collect();
        size = size.saturating_mul(list.len().max(1));
        choices.push(list);
    }
    if size > SEARCH_LIMIT || choices.iter().any(|c| c.is_empty()) {
        return None;
    }
    let row = m.goals.iter().find(|g| g.ionic)?;
    let salt_dev = lab.devices.get(single[salt])?;
    // (counts, ionic deviation, sum of deviations)
    let mut all: Vec<(Vec<u32>, f64, f64)> = Vec::with_capacity(size);
    let mut idx = vec![0usize; choices.len()];
    loop {
        let mut counts: Vec<u32> = idx.iter().zip(&choices).map(|(&i, c)| c[i].0).collect();
        let species_sum: f64 = idx
            .iter()
            .zip(&choices)
            .enumerate()
            .filter(|(j, _)| owner[*j].is_some())
            .map(|(_, (&i, c))| c[i].1)
            .sum();
        let rest: f64 = row.constant
            + (0..counts.len())
                .filter(|&k| k != salt)
                .map(|k| row.coeffs[k] * counts[k] as f64 * step(k))
                .sum::<f64>();
        let ideal = (row.target * total - rest) / row.coeffs[salt];
        counts[salt] = nearest_count(salt_dev, ideal.max(0.0), true)?;
        let ionic = ((rest + row.coeffs[salt] * counts[salt] as f64 * step(salt))
            / (total * row.target)
            - 1.0)
            .abs();
        all.push((counts, ionic, species_sum + ionic));
        // Next combination.
        let mut k = 0;
        loop {
            if k == idx.len() {
                let z2 = all.iter().map(|a| a.1).fold(f64::INFINITY, f64::min);
                return all
                    .into_iter()
                    .filter(|a| a.1 <= slack(z2))
                    .min_by(|a, b| a.2.total_cmp(&b.2))
                    .map(|a| a.0);
            }
            idx[k] += 1;
            if idx[k] < choices[k].len() {
                break;
            }
            idx[k] = 0;
            k += 1;
        }
    }
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
        // Both off: the model may move a reactant inside the largest deviation to help the
        // salt. Search those moves exactly.
        if dev > 1e-12 && worst_species > 1e-12 {
            counts = held_search(m, &single, &owner, j, worst_species)?;
        }
    }
    let mut additions = constant.additions.clone();
    for (j, &s) in m.vary.iter().enumerate() {
        // A stock not needed in this run is listed with nothing added, as the model does.
        let d = single[j];
        additions.push(Addition {
            stock: Some(s),
            volume: counts[j] as f64 * lab.devices[d].step,
            delivery: if counts[j] == 0 {
                Delivery::none()
            } else {
                Delivery {
                    parts: vec![(d, counts[j])],
                }
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

#[cfg(test)]
mod tests {
    use super::*;
    use crate::reference::glassware::{Class, DeviceKind};

    #[test]
    fn rounding_takes_the_nearest_step_inside_the_range_and_ties_to_fewer() {
        let buret = Device {
            name: "b".into(),
            kind: DeviceKind::Buret,
            class: Some(Class::A),
            step: 0.1e-3,
            min: 0.1e-3,
            max: 25e-3,
            max_fills: 1,
            per_station: None,
            shared: false,
            dead_volume: 0.0,
        };
        assert_eq!(nearest_count(&buret, 7.77, false), Some(78)); // 7.8 mL
        assert_eq!(nearest_count(&buret, 7.75, false), Some(77)); // a tie: 7.7 mL
        assert_eq!(nearest_count(&buret, 30.0, false), Some(250)); // capped at capacity
        assert_eq!(nearest_count(&buret, 0.02, false), Some(1)); // at least one step
        assert_eq!(nearest_count(&buret, 0.02, true), Some(0)); // or nothing, for a salt
                                                                // Regression (fuzz: a multiplier of 2e300): no overflow past the largest count.
        assert_eq!(nearest_count(&buret, 1e300, false), Some(250));
    }
}
