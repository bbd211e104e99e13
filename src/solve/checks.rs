//! Checks made before any solver runs: how many distinct runs, whether a held ionic strength
//! and the smallest targets can be reached at all.

use super::*;
use crate::error::Result;
use crate::spec::{IonicTarget, Lab, Spec};
use crate::units;

/// At most [`limits::DISTINCT_RUNS`] distinct target sets are solved in one plan.
pub(super) fn check_distinct_runs(spec: &Spec) -> Result<()> {
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
pub(super) fn check_hold_reachable(spec: &Spec, lab: &Lab, constant: &Constant) -> Result<()> {
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
pub(super) fn check_reachable_low(spec: &Spec, lab: &Lab) -> Result<()> {
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
