//! One run's mixed-integer model: the tiers of the objective, solved in order with a time
//! limit and a caught solver panic.

use super::*;
use crate::reference::glassware::Delivery;
use crate::spec::WaterVessel;
use good_lp::{
    microlp, variable, Expression, ProblemVariables, ResolutionError, Solution as _, SolverModel,
    WithTimeLimit,
};

/// What one solve of a run's model minimises. Goals come in two tiers: the target species,
/// then the held ionic strength, so an inert salt never pulls a reactant off its target.
#[derive(Clone, Copy)]
pub(super) enum Objective {
    /// The largest deviation of a target species.
    MaxSpecies,
    /// With species capped, the deviation of the held ionic strength.
    MaxIonic,
    /// With both capped, the sum of all deviations, then precise glassware.
    Sum,
}

#[derive(Clone, Copy)]
pub(super) struct Stage {
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
pub(super) enum Relax {
    Integer,
    Continuous,
}

pub(super) struct Outcome {
    /// Integer solves: the additions of varied stocks, then water.
    pub(super) additions: Vec<Addition>,
    /// Volumes (mL) of the varied stocks.
    pub(super) volumes_ml: Vec<f64>,
    pub(super) z_species: f64,
    pub(super) z_ionic: f64,
}

pub(super) fn solve_model(
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
pub(super) fn solve_tiers(
    m: &RunModel,
    relax: Relax,
) -> std::result::Result<Outcome, ResolutionError> {
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
pub(super) fn keep_on_infeasible(
    later: std::result::Result<Outcome, ResolutionError>,
    earlier: Outcome,
) -> std::result::Result<Outcome, ResolutionError> {
    match later {
        Err(ResolutionError::Other(m)) if m == TIMED_OUT => Err(ResolutionError::Other(m)),
        Err(_) => Ok(earlier),
        ok => ok,
    }
}
