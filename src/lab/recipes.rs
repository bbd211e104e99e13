//! Stock preparation: for every stock the plan needs, the flask to make it in and how to make
//! it — the mass of solid to weigh (c·V·M / purity), the volume of a liquid reagent to measure
//! (c·V·M / (w·ρ)), or the volume of a stronger stock to dilute (M1V1 = M2V2). Stocks that are
//! only diluted (bench concentrates) are added with the volume the dilutions draw from them.

use crate::lab::totals::{flask_for, flasks_for_stock, hazardous, FlaskSet, Totals};
use crate::spec::{Lab, Recipe};

/// How a stock is made up, per litre of it (each flask takes its share).
#[derive(Debug, Clone, PartialEq)]
pub enum Action {
    /// Grams of solid per litre.
    Weigh { grams_per_l: f64 },
    /// mL of liquid reagent per litre.
    Measure { ml_per_l: f64 },
    /// mL of another stock per litre.
    Dilute { from: usize, ml_per_l: f64 },
    /// Follow the method in use (no formula to compute from).
    AsUsual,
}

#[derive(Debug, Clone, PartialEq)]
pub struct Preparation {
    pub stock: usize,
    /// The days this batch serves (indices into the week's days); the first is the day it is
    /// made. A stock made fresh each day has one batch a day.
    pub days: Vec<usize>,
    /// L needed: by the runs (with overage) plus what dilutions draw.
    pub need: f64,
    /// L drawn by dilutions of other stocks (their aliquots, with the overage).
    pub drawn: f64,
    /// L delivered from it into the runs of the sections it serves (no overage).
    pub used: f64,
    /// L of it that the dilutions' aliquots take (no overage): the rest of `drawn` stays in
    /// the flask.
    pub aliquots: f64,
    pub flasks: FlaskSet,
    pub action: Action,
}

impl Action {
    /// The amount (g or mL) for one flask of `litres`.
    pub fn for_flask(&self, litres: f64) -> Option<f64> {
        match self {
            Action::Weigh { grams_per_l } => Some(grams_per_l * litres),
            Action::Measure { ml_per_l } => Some(ml_per_l * litres),
            Action::Dilute { ml_per_l, .. } => Some(ml_per_l * litres),
            Action::AsUsual => None,
        }
    }
}

/// Mass (g) of a solid to weigh for `volume` L at `concentration` mol/L.
pub fn mass_to_weigh(concentration: f64, volume: f64, molar_mass: f64, purity: f64) -> f64 {
    concentration * volume * molar_mass / purity
}

/// Volume (L) of a stronger solution to dilute to `volume` L: V1 = C2·V2 / C1.
pub fn dilution_volume(c_stock: f64, c_target: f64, volume: f64) -> f64 {
    c_target * volume / c_stock
}

/// Volume (mL) of a liquid reagent of mass fraction `w` and density `rho` (g/mL) holding
/// `concentration` × `volume` mol of a solute of molar mass `molar_mass`.
pub fn liquid_volume_ml(concentration: f64, volume: f64, molar_mass: f64, w: f64, rho: f64) -> f64 {
    concentration * volume * molar_mass / (w * rho)
}

/// Every batch to make: each batch of a stock the runs use (see [`Totals`]), with what the
/// dilutions made that day draw from it, and each batch of a stock only diluted (a bench
/// concentrate), made on the days its dilutions are. By stock, then day.
pub fn prepare(lab: &Lab, totals: &Totals) -> Vec<Preparation> {
    // Draws of dilutions from their sources (one level: a source is never itself a dilution):
    // (source, day made, L with the overage for rinses and transfers, L of the aliquots).
    let draws: Vec<(usize, usize, f64, f64)> = totals
        .stocks
        .iter()
        .filter_map(|b| match lab.stocks[b.stock].recipe {
            Recipe::Dilute { from, factor } => {
                let aliquot = b.flasks.total() * factor;
                Some((from, b.days[0], aliquot * (1.0 + lab.overage), aliquot))
            }
            _ => None,
        })
        .collect();
    let mut listed: Vec<usize> = totals
        .stocks
        .iter()
        .map(|b| b.stock)
        .chain(draws.iter().map(|d| d.0))
        .collect();
    listed.sort_unstable();
    listed.dedup();
    let mut out = Vec::new();
    for s in listed {
        // (days, need by runs, used by runs, drawn, aliquots)
        let mut batches: Vec<(Vec<usize>, f64, f64, f64, f64)> = totals
            .stocks
            .iter()
            .filter(|b| b.stock == s)
            .map(|b| (b.days.clone(), b.need, b.used, 0.0, 0.0))
            .collect();
        let mine: Vec<_> = draws.iter().filter(|d| d.0 == s).collect();
        if batches.is_empty() {
            let mut needed: Vec<usize> = mine.iter().map(|d| d.1).collect();
            needed.sort_unstable();
            needed.dedup();
            let keeps = crate::lab::schedule::keeps_days(lab, s).unwrap_or(0);
            batches = totals
                .week
                .batches(&needed, keeps)
                .into_iter()
                .map(|days| (days, 0.0, 0.0, 0.0, 0.0))
                .collect();
        }
        for d in mine {
            // The batch that serves the day the dilution is made (else the last made before).
            let i = batches
                .iter()
                .position(|b| b.0.contains(&d.1))
                .or_else(|| batches.iter().rposition(|b| b.0[0] <= d.1))
                .unwrap_or(0);
            batches[i].3 += d.2;
            batches[i].4 += d.3;
        }
        let action = action_of(lab, s);
        for (days, need, used, drawn, aliquots) in batches {
            let total = need + drawn;
            out.push(Preparation {
                stock: s,
                days,
                need: total,
                drawn,
                used,
                aliquots,
                flasks: flasks_for_stock(lab, s, total),
                action: action.clone(),
            });
        }
    }
    out
}

/// How a stock is made up, per litre.
fn action_of(lab: &Lab, s: usize) -> Action {
    match &lab.stocks[s].recipe {
        Recipe::Weigh {
            concentration,
            molar_mass,
            purity,
            ..
        } => Action::Weigh {
            grams_per_l: mass_to_weigh(*concentration, 1.0, *molar_mass, *purity),
        },
        Recipe::Measure {
            concentration,
            molar_mass,
            mass_fraction,
            density,
            ..
        } => Action::Measure {
            ml_per_l: liquid_volume_ml(*concentration, 1.0, *molar_mass, *mass_fraction, *density),
        },
        Recipe::Dilute { from, factor } => Action::Dilute {
            from: *from,
            ml_per_l: factor * 1e3,
        },
        Recipe::None => Action::AsUsual,
    }
}

/// A mass too small for the balance, and how to weigh more.
#[derive(Debug, Clone, PartialEq)]
pub struct SmallMass {
    pub stock: usize,
    /// g in the stock's smallest flask, and how many readabilities of the balance that is.
    pub grams: f64,
    pub readabilities: f64,
    /// A stronger stock to weigh instead and dilute (M1V1 = M2V2), when one fits the flasks.
    pub concentrate: Option<Concentrate>,
    /// The smallest larger flask whose mass is enough: (flask L, g), when the stock is made in
    /// one flask and the shelf has one.
    pub larger_flask: Option<(f64, f64)>,
}

/// A ×`factor` concentrate of a weighed stock: weighed in its own flask, then an aliquot of it
/// made up in the stock's flask.
#[derive(Debug, Clone, PartialEq)]
pub struct Concentrate {
    pub factor: f64,
    /// The concentrate's flasks, and g in the smallest of them.
    pub flasks: FlaskSet,
    pub grams: f64,
    /// L of concentrate per (smallest) flask of the stock: its volume / factor.
    pub aliquot: f64,
}

/// Concentrate factors tried, smallest first (round dilutions, common practice).
const FACTORS: [f64; 7] = [10.0, 20.0, 50.0, 100.0, 200.0, 500.0, 1000.0];
/// Smallest aliquot a concentrate is diluted by: 1 mL, the smallest transfer pipet of a
/// teaching prep room (common practice).
const MIN_ALIQUOT: f64 = 1e-3;

/// Every weighed mass under [`MIN_READABILITIES`] readabilities of the lab's balance, with the
/// alternatives: the smallest round concentrate whose own mass is enough (its flask from the
/// shelf holding what the dilution draws) and the smallest larger flask whose mass is enough.
///
/// [`MIN_READABILITIES`]: crate::spec::MIN_READABILITIES
pub fn small_masses(lab: &Lab, preps: &[Preparation]) -> Vec<SmallMass> {
    let least = crate::spec::MIN_READABILITIES * lab.balance;
    let mut out: Vec<SmallMass> = Vec::new();
    let each = preps.iter().filter_map(|p| {
        let Action::Weigh { grams_per_l } = p.action else {
            return None;
        };
        // The smallest flask of the set weighs the least.
        let flask = p.flasks.smallest();
        let grams = grams_per_l * flask;
        let Recipe::Weigh {
            concentration,
            molar_mass,
            purity,
            ..
        } = &lab.stocks[p.stock].recipe
        else {
            return None;
        };
        if grams >= least {
            return None;
        }
        let concentrate = FACTORS.iter().find_map(|&factor| {
            let aliquot = flask / factor;
            if aliquot < MIN_ALIQUOT {
                return None;
            }
            let drawn = p.flasks.total() / factor * (1.0 + lab.overage);
            let set = flask_for(drawn, &lab.flasks, hazardous(lab, p.stock));
            let g = mass_to_weigh(concentration * factor, set.smallest(), *molar_mass, *purity);
            (g >= least).then_some(Concentrate {
                factor,
                flasks: set,
                grams: g,
                aliquot,
            })
        });
        let larger_flask = if p.flasks.count() == 1 {
            lab.flasks
                .iter()
                .find(|&&f| f > flask && grams * f / flask >= least)
                .map(|&f| (f, grams * f / flask))
        } else {
            None
        };
        Some(SmallMass {
            stock: p.stock,
            grams,
            readabilities: grams / lab.balance,
            concentrate,
            larger_flask,
        })
    });
    // One entry per stock: the smallest mass of any of its batches (lab sections make a
    // stock fresh each day, in flasks that may differ), whose alternative fixes them all.
    for m in each {
        match out.iter_mut().find(|o| o.stock == m.stock) {
            Some(o) if m.grams < o.grams => *o = m,
            Some(_) => {}
            None => out.push(m),
        }
    }
    out
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;

    #[test]
    fn worked_recipes_by_hand() {
        // 500 mL of 0.0400 M KBrO3 (167.00 g/mol, IUPAC 2021 weights) at 99.8 % assay:
        // m = C·V·M/purity = 0.0400 × 0.500 × 167.00 / 0.998 = 3.3467 g.
        assert_relative_eq!(
            mass_to_weigh(0.0400, 0.500, 167.00, 0.998),
            3.346_693,
            max_relative = 1e-6
        );
        // M1V1 = M2V2 (common practice): 1000 mL of 0.100 M from 1.00 M takes 100 mL.
        assert_relative_eq!(
            dilution_volume(1.00, 0.100, 1.000),
            0.100,
            max_relative = 1e-12
        );
        // 250 mL of 1.00 M HCl (36.46 g/mol) from 37 % acid of 1.18 g/mL:
        // 1.00 × 0.250 × 36.46 / (0.37 × 1.18) = 20.88 mL.
        assert_relative_eq!(
            liquid_volume_ml(1.00, 0.250, 36.46, 0.37, 1.18),
            20.877,
            max_relative = 1e-4
        );
    }
}
