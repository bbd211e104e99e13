//! Stock to prepare: per stock, the volume used by every run, times replicates and stations,
//! plus the overage, rounded up to a volumetric flask size.

use crate::lab::schedule::{keeps_days, Week};
use crate::solve::{Holder, Solution};
use crate::spec::{Lab, Spec};

#[derive(Debug, Clone, PartialEq)]
pub struct StockTotal {
    pub stock: usize,
    /// The days this batch serves (indices into [`Week::days`]); the first is the day it is
    /// made. A one-section spec has one day.
    pub days: Vec<usize>,
    /// L used by one station doing every run once.
    pub per_station_set: f64,
    /// L used by the sections this batch serves: all runs × replicates × stations.
    pub used: f64,
    /// L one station spends rinsing and filling the devices that hold this stock.
    pub dead_per_station: f64,
    /// L to prepare: used plus overage, plus every station's dead volume, each section.
    pub need: f64,
    /// The flasks to make it up in.
    pub flasks: FlaskSet,
}

/// Volumetric flasks to make one stock up in: (size L, count), largest first.
#[derive(Debug, Clone, PartialEq)]
pub struct FlaskSet(pub Vec<(f64, u32)>);

impl FlaskSet {
    /// L made up in all of them.
    pub fn total(&self) -> f64 {
        self.0.iter().map(|(f, n)| f * *n as f64).sum()
    }

    pub fn count(&self) -> u32 {
        self.0.iter().map(|x| x.1).sum()
    }

    pub fn largest(&self) -> f64 {
        self.0.first().map_or(0.0, |x| x.0)
    }

    pub fn smallest(&self) -> f64 {
        self.0.last().map_or(0.0, |x| x.0)
    }

    /// "1 x 1000 mL + 2 x 100 mL".
    pub fn label(&self) -> String {
        self.0
            .iter()
            .map(|(f, n)| {
                // Whole millilitres as "50", never "50.00" (to the microlitre otherwise).
                format!("{n} x {} mL", (f * 1e3 * 1e3).round() / 1e3)
            })
            .collect::<Vec<_>>()
            .join(" + ")
    }
}

#[derive(Debug, Clone, PartialEq)]
pub struct Totals {
    /// Every batch of every stock the runs use, by stock then day.
    pub stocks: Vec<StockTotal>,
    /// L of water used by every section as make-up (no overage added).
    pub water: f64,
    /// L of water one station uses as make-up, and spends rinsing and filling its devices.
    pub water_per_station: f64,
    pub water_dead_per_station: f64,
    pub week: Week,
}

/// What one station spends on rinsing and filling the devices that hold `holder`.
fn dead_volume(lab: &Lab, solution: &Solution, holder: Holder) -> f64 {
    solution
        .station
        .iter()
        .filter(|d| d.holds.contains(&holder))
        .map(|d| lab.devices[d.device].dead_volume)
        .sum()
}

/// The most flasks one stock is made up in before the largest size simply repeats.
const MAX_MIXED: usize = 4;

/// What one more flask must save in surplus to be worth making up, as a fraction of the need:
/// 5 % for an ordinary stock, 0.5 % for a hazardous one, whose every surplus millilitre is
/// hazardous waste (common practice: fewer flasks are less work and less error).
pub const EXTRA_FLASK: (f64, f64) = (0.05, 0.005);

/// The flasks that hold `need` with the least surplus plus a cost per extra flask (see
/// [`EXTRA_FLASK`]; `hazardous` takes the smaller), from combinations of up to four of the
/// shelf's sizes; beyond four of the largest, the largest repeats and the rest is chosen so.
/// Ties go to fewer flasks, then to larger ones.
pub fn flask_for(need: f64, flasks: &[f64], hazardous: bool) -> FlaskSet {
    let mut sizes: Vec<f64> = flasks.to_vec();
    sizes.sort_by(|a, b| b.total_cmp(a));
    sizes.dedup();
    let Some(&largest) = sizes.first() else {
        return FlaskSet(vec![(1.0, (need - 1e-12).ceil().max(1.0) as u32)]);
    };
    let weight = if hazardous {
        EXTRA_FLASK.1
    } else {
        EXTRA_FLASK.0
    } * need;
    // Whole largest flasks beyond what a mix of four can hold.
    let base = ((need / largest) - MAX_MIXED as f64 + 1.0).ceil().max(0.0) as u32;
    let rest = need - base as f64 * largest;
    let mut best: Option<(f64, usize, Vec<f64>)> = None;
    // Every multiset of up to MAX_MIXED sizes, in non-increasing order.
    fn walk(
        sizes: &[f64],
        start: usize,
        chosen: &mut Vec<f64>,
        rest: f64,
        weight: f64,
        best: &mut Option<(f64, usize, Vec<f64>)>,
    ) {
        let held: f64 = chosen.iter().sum();
        if held >= rest * (1.0 - 1e-12) && !chosen.is_empty() {
            let cost = (held - rest) + weight * (chosen.len() as f64 - 1.0);
            let better = match best {
                None => true,
                Some((c, n, _)) => {
                    cost < *c - 1e-12 || ((cost - *c).abs() <= 1e-12 && chosen.len() < *n)
                }
            };
            if better {
                *best = Some((cost, chosen.len(), chosen.clone()));
            }
            return;
        }
        if chosen.len() == MAX_MIXED {
            return;
        }
        for i in start..sizes.len() {
            chosen.push(sizes[i]);
            walk(sizes, i, chosen, rest, weight, best);
            chosen.pop();
        }
    }
    let mut chosen = Vec::new();
    if rest > 0.0 {
        walk(&sizes, 0, &mut chosen, rest, weight, &mut best);
    }
    let mut picked: Vec<f64> = vec![largest; base as usize];
    picked.extend(best.map(|b| b.2).unwrap_or_default());
    if picked.is_empty() {
        picked.push(*sizes.last().unwrap_or(&largest));
    }
    let mut set: Vec<(f64, u32)> = Vec::new();
    for f in picked {
        match set.iter_mut().find(|x| x.0 == f) {
            Some(x) => x.1 += 1,
            None => set.push((f, 1)),
        }
    }
    set.sort_by(|a, b| b.0.total_cmp(&a.0));
    FlaskSet(set)
}

/// The flasks for `need` L of a stock: [`flask_for`] over the shelf's sizes, leaving out a size
/// whose mass of a weighed solid would be under 100 readabilities of the balance (unless no
/// size is large enough; the stocks sheet then names the mass).
pub fn flasks_for_stock(lab: &Lab, stock: usize, need: f64) -> FlaskSet {
    let sizes: Vec<f64> = match &lab.stocks[stock].recipe {
        crate::spec::Recipe::Weigh {
            concentration,
            molar_mass,
            purity,
            ..
        } => {
            let grams_per_l = concentration * molar_mass / purity;
            let least = crate::spec::MIN_READABILITIES * lab.balance;
            let enough: Vec<f64> = lab
                .flasks
                .iter()
                .copied()
                .filter(|f| grams_per_l * f >= least)
                .collect();
            if enough.is_empty() {
                lab.flasks.clone()
            } else {
                enough
            }
        }
        _ => lab.flasks.clone(),
    };
    flask_for(need, &sizes, hazardous(lab, stock))
}

/// Whether a stock's reagent carries GHS hazard codes (its surplus is hazardous waste).
pub fn hazardous(lab: &Lab, stock: usize) -> bool {
    let st = &lab.stocks[stock];
    let species: Vec<&str> = st.contains.iter().map(|(s, _)| s.as_str()).collect();
    crate::reference::reagents::reagent_for(st.solute.as_deref(), &species)
        .is_some_and(|r| !r.ghs.is_empty())
}

pub fn compute(spec: &Spec, lab: &Lab, solution: &Solution) -> Totals {
    let week = Week::of(spec);
    let all_days: Vec<usize> = (0..week.days.len()).collect();
    let mut stocks = Vec::new();
    for &s in &solution.used_stocks {
        let per_station_set: f64 = solution.runs.iter().map(|r| r.volume_of(s)).sum();
        let dead_per_station = dead_volume(lab, solution, Holder::Stock(s));
        for days in week.batches(&all_days, keeps_days(lab, s).unwrap_or(0)) {
            let groups = days.iter().flat_map(|&d| &week.days[d].groups);
            let (sets, stations) = groups.fold((0.0, 0.0), |(sets, st), &g| {
                let g = &week.groups[g];
                (
                    sets + (g.replicates * g.stations) as f64,
                    st + g.stations as f64,
                )
            });
            let used = per_station_set * sets;
            let need = used * (1.0 + lab.overage) + dead_per_station * stations;
            stocks.push(StockTotal {
                stock: s,
                days,
                per_station_set,
                used,
                dead_per_station,
                need,
                flasks: flasks_for_stock(lab, s, need),
            });
        }
    }
    let one_set = solution.runs.iter().map(|r| r.water().volume).sum::<f64>();
    let sets: f64 = week
        .groups
        .iter()
        .map(|g| (g.replicates * g.stations) as f64)
        .sum();
    Totals {
        stocks,
        water: one_set * sets,
        water_per_station: one_set * spec.replicates as f64,
        water_dead_per_station: dead_volume(lab, solution, Holder::Water),
        week,
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn flask_labels_print_whole_millilitres() {
        // Was "1 x 50.00 mL" beside "1 x 1000 mL".
        let set = FlaskSet(vec![(1.0, 1), (0.05, 2), (0.0025, 1)]);
        assert_eq!(set.label(), "1 x 1000 mL + 2 x 50 mL + 1 x 2.5 mL");
    }

    #[test]
    fn flasks_by_least_surplus() {
        let flasks = [0.05, 0.1, 0.25, 0.5, 1.0];
        let f = |need, hazardous| flask_for(need, &flasks, hazardous).0;
        assert_eq!(f(0.0421, false), vec![(0.05, 1)]);
        assert_eq!(f(0.05, false), vec![(0.05, 1)]);
        assert_eq!(f(0.0501, false), vec![(0.1, 1)]);
        // 518 mL: 500 + 50 mL (32 mL over) rather than 1000 mL (482 mL over).
        assert_eq!(f(0.518, false), vec![(0.5, 1), (0.05, 1)]);
        // 1184 mL: 1000 + 250 mL for an ordinary stock (66 mL over, one extra flask is worth
        // 59 mL); 1000 + 2 x 100 mL (16 mL over) for a hazardous one (an extra flask 5.9 mL).
        assert_eq!(f(1.184, false), vec![(1.0, 1), (0.25, 1)]);
        assert_eq!(f(1.184, true), vec![(1.0, 1), (0.1, 2)]);
        // Far beyond the shelf: the largest repeats, the rest is mixed.
        let big = flask_for(7.3, &flasks, false);
        assert!(big.total() >= 7.3 && big.total() - 7.3 < 0.25);
        assert_eq!(big.0[0], (1.0, 7));
    }
}
