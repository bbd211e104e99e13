//! What the lab leaves for the waste bottle: every trial's spent mixture, every stock made up
//! but not delivered (overage, rinses, the flask's rounding), and the mass of each solute made
//! up — all of which ends as waste, in the mixtures or in the left-over stock.

use crate::lab::recipes::{Action, Preparation};
use crate::lab::totals::Totals;
use crate::solve::Solution;
use crate::spec::{Lab, Recipe, Spec};

#[derive(Debug, Clone, PartialEq)]
pub struct Waste {
    /// L of spent reaction mixture: every trial of every run at every station.
    pub spent: f64,
    /// L of each stock made up and left over: made − delivered into runs − drawn by dilutions.
    pub leftover: Vec<(usize, f64)>,
    /// g of each weighed or measured solute made up, by stock.
    pub solutes: Vec<(usize, f64)>,
}

pub fn waste(
    spec: &Spec,
    lab: &Lab,
    solution: &Solution,
    totals: &Totals,
    preps: &[Preparation],
) -> Waste {
    let trials = (spec.replicates * spec.stations) as f64 * solution.runs.len() as f64;
    let spent = trials * lab.total_volume;
    let leftover = preps
        .iter()
        .map(|p| {
            let made = p.flasks.total();
            let used = totals
                .stocks
                .iter()
                .find(|t| t.stock == p.stock)
                .map_or(0.0, |t| t.used);
            (p.stock, (made - used - p.drawn).max(0.0))
        })
        .collect();
    let solutes = preps
        .iter()
        .filter_map(|p| {
            let made = p.flasks.total();
            match (&p.action, &lab.stocks[p.stock].recipe) {
                (Action::Weigh { grams_per_l }, _) => Some((p.stock, grams_per_l * made)),
                (
                    Action::Measure { .. },
                    Recipe::Measure {
                        concentration,
                        molar_mass,
                        ..
                    },
                ) => Some((p.stock, concentration * made * molar_mass)),
                _ => None,
            }
        })
        .collect();
    Waste {
        spent,
        leftover,
        solutes,
    }
}
