//! What the lab leaves for the waste bottle, section by section and for the week: every
//! trial's spent mixture, every batch of stock made up but not delivered (overage, rinses, the
//! flasks' rounding; a batch is discarded after the last section it serves), and the mass of
//! each solute in both. Everything made up ends as waste, so the solute masses of the week add
//! up to what was weighed or measured.

use crate::lab::recipes::Preparation;
use crate::lab::totals::Totals;
use crate::solve::Solution;
use crate::spec::{Lab, Recipe};

/// The waste of one section (or of the week).
#[derive(Debug, Clone, PartialEq, Default)]
pub struct Waste {
    /// L of spent reaction mixture: every trial of every run at every station.
    pub spent: f64,
    /// L of each stock left over and discarded after this section: made − delivered into runs
    /// − taken by dilutions' aliquots. By stock, in the order of the stocks sheet.
    pub leftover: Vec<(usize, f64)>,
    /// g of each solute (its formula) in the spent mixtures and the left-over stock, and the
    /// stocks it comes in.
    pub solutes: Vec<Solute>,
}

#[derive(Debug, Clone, PartialEq)]
pub struct Solute {
    pub formula: String,
    /// The stock it is weighed or measured into (the source of any dilutions).
    pub stock: usize,
    pub grams: f64,
}

/// The week's waste: each section's (in the week's order), and their sum.
#[derive(Debug, Clone, PartialEq)]
pub struct WeekWaste {
    pub sections: Vec<Waste>,
    pub week: Waste,
}

/// A stock's solute: (formula, mol/L, g/mol, the stock it is weighed or measured into),
/// along its chain of dilutions. None for a stock made "as usual".
pub fn solute_of(lab: &Lab, s: usize) -> Option<(String, f64, f64, usize)> {
    let st = &lab.stocks[s];
    match &st.recipe {
        Recipe::Weigh {
            concentration,
            molar_mass,
            ..
        }
        | Recipe::Measure {
            concentration,
            molar_mass,
            ..
        } => Some((
            st.solute.clone().unwrap_or_default(),
            *concentration,
            *molar_mass,
            s,
        )),
        Recipe::Dilute { from, factor } => {
            solute_of(lab, *from).map(|(f, c, m, src)| (f, c * factor, m, src))
        }
        Recipe::None => None,
    }
}

impl Waste {
    fn add_solute(&mut self, lab: &Lab, stock: usize, litres: f64) {
        if let Some((formula, c, m, source)) = solute_of(lab, stock) {
            self.merge_solute(Solute {
                formula,
                stock: source,
                grams: c * m * litres,
            });
        }
    }

    fn merge_solute(&mut self, x: Solute) {
        match self
            .solutes
            .iter_mut()
            .find(|y| y.formula == x.formula && y.stock == x.stock)
        {
            Some(y) => y.grams += x.grams,
            None => self.solutes.push(x),
        }
    }

    fn merge_leftover(&mut self, stock: usize, litres: f64) {
        match self.leftover.iter_mut().find(|x| x.0 == stock) {
            Some(x) => x.1 += litres,
            None => self.leftover.push((stock, litres)),
        }
    }

    fn add_leftover(&mut self, lab: &Lab, stock: usize, litres: f64) {
        self.merge_leftover(stock, litres);
        self.add_solute(lab, stock, litres);
    }

    fn add(&mut self, other: &Waste) {
        self.spent += other.spent;
        for &(s, l) in &other.leftover {
            self.merge_leftover(s, l);
        }
        for x in &other.solutes {
            self.merge_solute(x.clone());
        }
    }

    fn sort(&mut self) {
        self.leftover.sort_by_key(|x| x.0);
        self.solutes.sort_by_key(|x| x.stock);
    }
}

pub fn waste(lab: &Lab, solution: &Solution, totals: &Totals, preps: &[Preparation]) -> WeekWaste {
    let week = &totals.week;
    let mut sections: Vec<Waste> = week
        .groups
        .iter()
        .map(|g| {
            let sets = (g.replicates * g.stations) as f64;
            let mut w = Waste {
                spent: sets * solution.runs.len() as f64 * lab.total_volume,
                ..Waste::default()
            };
            // The solutes the runs deliver into the spent mixtures.
            for t in totals.stocks.iter().filter(|t| t.days.contains(&g.day)) {
                w.add_solute(lab, t.stock, t.per_station_set * sets);
            }
            w
        })
        .collect();
    // Each batch's leftover goes with the last section of the last day it serves.
    for p in preps {
        let left = (p.flasks.total() - p.used - p.aliquots).max(0.0);
        let last = *p.days.last().expect("a batch serves a day");
        sections[week.last_group(last)].add_leftover(lab, p.stock, left);
    }
    let mut total = Waste::default();
    for s in &mut sections {
        s.sort();
        total.add(s);
    }
    total.sort();
    WeekWaste {
        sections,
        week: total,
    }
}
