//! A weighed stock's uncertainty from the mass actually weighed. Before the solve the spec
//! can only take the worst case (the smallest flask the stock may be made up in); once the
//! flasks are chosen, each weighed stock's default uncertainty is recomputed from the smallest
//! flask of its batches (the smallest mass weighed), and so is every dilution made from it.

use crate::lab::{recipes, totals};
use crate::solve::Solution;
use crate::spec::{recipe_uncertainty, Balance, Lab, Spec};

/// The lab with every default stock uncertainty recomputed from the flasks chosen.
pub fn with_weighed_masses(spec: &Spec, lab: &Lab, solution: &Solution) -> Lab {
    let totals = totals::compute(spec, lab, solution);
    weighed_from(lab, &recipes::prepare(lab, &totals))
}

/// As [`with_weighed_masses`], from batches already prepared (the flasks never depend on the
/// stocks' uncertainties, so the batches of the unpatched lab are those of the patched one).
pub fn weighed_from(lab: &Lab, preps: &[recipes::Preparation]) -> Lab {
    let mut out = lab.clone();
    for i in 0..out.stocks.len() {
        if !out.stocks[i].uncertainty_by_recipe {
            continue;
        }
        let smallest = preps
            .iter()
            .filter(|p| p.stock == i)
            .map(|p| p.flasks.smallest())
            .reduce(f64::min);
        let flasks = smallest.map_or_else(|| lab.flasks.clone(), |f| vec![f]);
        let balance = Balance {
            readability: lab.balance,
            flasks: &flasks,
        };
        let (earlier, rest) = out.stocks.split_at_mut(i);
        let (u, basis) = recipe_uncertainty(&rest[0].recipe, earlier, &balance);
        rest[0].uncertainty = u;
        rest[0].uncertainty_basis = basis;
    }
    out
}
