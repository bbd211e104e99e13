//! The linear data of one run: which stocks vary, what each goal needs, and the variables of
//! each delivery choice.

use super::*;
use crate::reference::glassware::Device;
use crate::spec::{Lab, Run, Spec};
use good_lp::{variable, Expression, ProblemVariables, Variable};
use std::ops::Range;

/// The linear data of one run: which stocks vary and what each goal needs.
pub(super) struct RunModel<'a> {
    pub(super) spec: &'a Spec,
    pub(super) lab: &'a Lab,
    pub(super) run: &'a Run,
    /// Stocks whose volume the solve chooses.
    pub(super) vary: Vec<usize>,
    /// Volume left for varied stocks and water (mL).
    pub(super) free_ml: f64,
    pub(super) goals: Vec<GoalRow>,
    /// s per solve
    pub(super) time_limit: f64,
}

pub(super) struct GoalRow {
    pub(super) label: String,
    pub(super) target: f64,
    /// Per varied stock: amount per mL in mmol (i.e. mol/L).
    pub(super) coeffs: Vec<f64>,
    /// mmol from the constant additions.
    pub(super) constant: f64,
    /// The held ionic strength rather than a species.
    pub(super) ionic: bool,
    pub(super) span: Range<usize>,
}

impl<'a> RunModel<'a> {
    pub(super) fn new(
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

    pub(super) fn total_ml(&self) -> f64 {
        self.lab.total_volume * 1e3
    }

    /// Largest volume (mL) the allowed devices of a stock deliver in one addition.
    pub(super) fn cap_ml(&self, devices: &[usize]) -> f64 {
        devices
            .iter()
            .map(|&d| self.lab.devices[d].max * 1e3)
            .fold(0.0, f64::max)
            .min(self.free_ml)
    }
}

/// Variables of one delivery choice inside the integer model.
pub(super) struct DeliveryVars {
    /// (device, count variable)
    pub(super) counts: Vec<(usize, Variable)>,
    pub(super) volume: Expression,
    /// (binary, preference weight)
    pub(super) choices: Vec<(Variable, f64)>,
}

pub(super) fn delivery_vars(
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
