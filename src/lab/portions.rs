//! Portions: each run is made up in two vessels that are combined at t = 0.
//!
//! Stocks go to vessel A or B so that no vessel holds every species of a `keep_apart` group
//! (e.g. bromate, iodide and acid) before mixing. Stocks with a `vessel` in the spec stay
//! there; the others are placed by trying every assignment and keeping the one whose two
//! vessels are closest in volume over all runs (ties: the first in a fixed order, so output is
//! deterministic). Water is then split so the two vessels are as equal as the glassware allows.

use crate::error::Result;
use crate::reference::glassware::{find_delivery, Delivery};
use crate::solve::Solution;
use crate::spec::{Lab, Spec, Vessel, WaterVessel};
use std::collections::BTreeSet;

/// Most stocks placed automatically (2^n assignments are tried).
const MAX_AUTO: usize = 16;

/// What goes into one vessel for one run.
#[derive(Debug, Clone, PartialEq)]
pub struct Portion {
    pub vessel: Vessel,
    /// (stock index or None for water, volume L, delivery)
    pub items: Vec<(Option<usize>, f64, Delivery)>,
}

impl Portion {
    pub fn volume(&self) -> f64 {
        self.items.iter().map(|i| i.1).sum()
    }
}

#[derive(Debug, Clone, PartialEq)]
pub struct RunPortions {
    pub a: Portion,
    pub b: Portion,
}

#[derive(Debug, Clone, PartialEq)]
pub struct Mixing {
    /// Vessel of each used stock, parallel to `Solution::used_stocks`.
    pub vessel_of: Vec<Vessel>,
    /// Which vessel is poured into the other at t = 0.
    pub poured: Vessel,
    pub runs: Vec<RunPortions>,
}

/// Place stocks and water into the two vessels of every run.
pub fn split(spec: &Spec, lab: &Lab, solution: &Solution) -> Result<Mixing> {
    check_stocks_keep_apart(spec, lab, &solution.used_stocks)?;
    let vessel_of = assign_vessels(spec, lab, solution)?;
    let runs = solution
        .runs
        .iter()
        .map(|r| portions_of(lab, r, &solution.used_stocks, &vessel_of))
        .collect();
    Ok(Mixing {
        vessel_of,
        poured: lab.mixing.poured,
        runs,
    })
}

/// A single stock that holds a whole keep-apart group can never be kept apart.
fn check_stocks_keep_apart(spec: &Spec, lab: &Lab, used: &[usize]) -> Result<()> {
    let groups = &lab.mixing.keep_apart;
    for &s in used {
        let st = &lab.stocks[s];
        for g in groups {
            if g.iter().all(|sp| st.concentration_of(sp) > 0.0) {
                return Err(spec.source.error(
                    st.name_span.clone(),
                    format!(
                        "stock '{}' holds {} together, which must not meet before t = 0",
                        st.name,
                        g.join(", ")
                    ),
                    "reacts in the bottle",
                    "prepare these species as separate stocks, or change [mixing] keep_apart",
                ));
            }
        }
    }

    Ok(())
}

/// The vessel of every used stock: as the spec says, else the split that keeps each group
/// apart with the two vessels' volumes closest over all runs.
fn assign_vessels(spec: &Spec, lab: &Lab, solution: &Solution) -> Result<Vec<Vessel>> {
    let used = &solution.used_stocks;
    let groups = &lab.mixing.keep_apart;
    let fixed: Vec<Option<Vessel>> = used.iter().map(|&s| lab.stocks[s].vessel).collect();
    if groups.is_empty() && fixed.iter().any(Option::is_none) {
        let s = used[fixed.iter().position(Option::is_none).unwrap_or(0)];
        return Err(spec.source.error(
            lab.stocks[s].name_span.clone(),
            format!("clockprep cannot tell which vessel stock '{}' belongs in", lab.stocks[s].name),
            "no vessel",
            "name the species that must not meet before t = 0, e.g. [mixing] keep_apart = [[\"BrO3-\", \"I-\", \"H+\"]], or give every stock vessel = \"A\" or \"B\"",
        ));
    }
    let free: Vec<usize> = (0..used.len()).filter(|&i| fixed[i].is_none()).collect();
    if free.len() > MAX_AUTO {
        return Err(spec.source.error(
            lab.stocks[used[free[MAX_AUTO]]].name_span.clone(),
            format!("more than {MAX_AUTO} stocks without a vessel"),
            "too many to place",
            "give some stocks vessel = \"A\" or \"B\"",
        ));
    }

    let species_of = |assign: &[Vessel], v: Vessel| -> BTreeSet<&str> {
        used.iter()
            .zip(assign)
            .filter(|(_, &a)| a == v)
            .flat_map(|(&s, _)| lab.stocks[s].contains.iter().map(|(sp, _)| sp.as_str()))
            .collect()
    };
    let violates = |assign: &[Vessel]| -> Option<(Vessel, &Vec<String>)> {
        for v in [Vessel::A, Vessel::B] {
            let present = species_of(assign, v);
            if let Some(g) = groups
                .iter()
                .find(|g| g.iter().all(|sp| present.contains(sp.as_str())))
            {
                return Some((v, g));
            }
        }
        None
    };
    let imbalance = |assign: &[Vessel]| -> f64 {
        solution
            .runs
            .iter()
            .map(|r| {
                let mut d = 0.0;
                for (&s, &v) in used.iter().zip(assign) {
                    let vol = r.volume_of(s);
                    d += if v == Vessel::A { vol } else { -vol };
                }
                d.abs()
            })
            .sum()
    };

    let mut best: Option<(f64, Vec<Vessel>)> = None;
    for mask in 0u32..(1u32 << free.len()) {
        let mut assign: Vec<Vessel> = fixed.iter().map(|f| f.unwrap_or(Vessel::A)).collect();
        for (bit, &i) in free.iter().enumerate() {
            if mask & (1 << bit) != 0 {
                assign[i] = Vessel::B;
            }
        }
        if violates(&assign).is_some() {
            continue;
        }
        let cost = imbalance(&assign);
        if best.as_ref().is_none_or(|(c, _)| cost < *c - 1e-12) {
            best = Some((cost, assign));
        }
    }
    let Some((_, vessel_of)) = best else {
        let assign: Vec<Vessel> = fixed.iter().map(|f| f.unwrap_or(Vessel::A)).collect();
        let (v, g) = violates(&assign).expect("an assignment was rejected");
        let blame = used
            .iter()
            .zip(&fixed)
            .filter(|(_, f)| **f == Some(v))
            .filter_map(|(&s, _)| lab.stocks[s].vessel_span.clone())
            .next_back()
            .or_else(|| lab.mixing.span.clone())
            .unwrap_or(0..0);
        return Err(spec.source.error(
            blame,
            format!("no way to fill the two vessels keeps {} apart", g.join(", ")),
            "all in one vessel",
            format!("vessel {v} would hold all of them; move one of its stocks to the other vessel, or change keep_apart"),
        ));
    };
    Ok(vessel_of)
}

/// One run's two portions: each stock in its vessel, water split as the spec says.
fn portions_of(
    lab: &Lab,
    r: &crate::solve::RunSolution,
    used: &[usize],
    vessel_of: &[Vessel],
) -> RunPortions {
    let mut a = Portion {
        vessel: Vessel::A,
        items: Vec::new(),
    };
    let mut b = Portion {
        vessel: Vessel::B,
        items: Vec::new(),
    };
    for (&s, &v) in used.iter().zip(vessel_of) {
        let Some(add) = r.additions.iter().find(|x| x.stock == Some(s)) else {
            continue;
        };
        if add.volume <= 0.0 {
            continue;
        }
        let item = (Some(s), add.volume, add.delivery.clone());
        if v == Vessel::A {
            a.items.push(item)
        } else {
            b.items.push(item)
        }
    }
    let water = r.water();
    if water.volume > 0.0 {
        match lab.water_vessel {
            WaterVessel::Only(Vessel::A) => {
                a.items.push((None, water.volume, water.delivery.clone()))
            }
            WaterVessel::Only(Vessel::B) => {
                b.items.push((None, water.volume, water.delivery.clone()))
            }
            WaterVessel::Split => {
                let (wa, wb) =
                    split_water(lab, water.volume, &water.delivery, a.volume(), b.volume());
                if let Some(w) = wa {
                    a.items.push((None, w.0, w.1));
                }
                if let Some(w) = wb {
                    b.items.push((None, w.0, w.1));
                }
            }
        }
    }
    RunPortions { a, b }
}

type Part = Option<(f64, Delivery)>;

/// Split `water` (L) into two deliverable parts that bring the vessels closest in volume.
fn split_water(lab: &Lab, water: f64, whole: &Delivery, a: f64, b: f64) -> (Part, Part) {
    let devices = &lab.devices;
    // The portions use the devices the solve chose for the water, so that the station's
    // glassware list holds.
    let allowed: Vec<usize> = whole.parts.iter().map(|p| p.0).collect();
    let mut candidates: Vec<f64> = vec![0.0, water];
    for &d in &allowed {
        candidates.extend(devices[d].volumes().filter(|&x| x < water));
    }
    let mut best: Option<(f64, f64, Delivery, Delivery)> = None;
    for x in candidates {
        let rest = water - x;
        let rest = if rest.abs() < 1e-12 { 0.0 } else { rest };
        let diff = ((a + x) - (b + rest)).abs();
        if best.as_ref().is_some_and(|(d, ..)| diff >= *d - 1e-12) {
            continue;
        }
        let da = if x == water {
            Some(whole.clone())
        } else {
            find_delivery(x, &allowed, devices)
        };
        let db = if x == 0.0 {
            Some(whole.clone())
        } else {
            find_delivery(rest, &allowed, devices)
        };
        if let (Some(da), Some(db)) = (da, db) {
            best = Some((diff, x, da, db));
        }
    }
    let (_, x, da, db) = best.expect("the whole water volume is always a candidate");
    let rest = water - x;
    let part = |v: f64, d: Delivery| (v > 1e-12).then_some((v, d));
    (part(x, da), part(rest, db))
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::spec::fixture::Fixture;

    #[test]
    fn keeps_groups_apart_and_balances_water() {
        let spec = Fixture::new("mixing check", "40.0 mL")
            .keep_apart(&["BrO3-", "I-", "H+"])
            .keep_apart(&["S2O3^2-", "H+"])
            .stock("KI", &[("I-", "0.0400 M"), ("K+", "0.0400 M")])
            .stock("KBrO3", &[("BrO3-", "0.0400 M"), ("K+", "0.0400 M")])
            .stock("HCl", &[("H+", "0.100 M"), ("Cl-", "0.100 M")])
            .stock("thio", &[("S2O3^2-", "1.00 mM"), ("Na+", "2.00 mM")])
            .buret("buret", "50 mL", "0.05 mL")
            .run(
                "r",
                &[("I-", "4.00 mM"), ("BrO3-", "8.00 mM"), ("H+", "20.0 mM")],
            )
            .load()
            .unwrap();
        let lab = spec.lab.as_ref().unwrap();
        let sol = crate::solve::solve(&spec, lab).unwrap();
        let m = split(&spec, lab, &sol).unwrap();
        // Acid and thiosulfate never share a vessel; bromate, iodide and acid never all in one.
        let idx = |name: &str| {
            sol.used_stocks
                .iter()
                .position(|&s| lab.stocks[s].name == name)
                .unwrap()
        };
        assert_ne!(m.vessel_of[idx("HCl")], m.vessel_of[idx("thio")]);
        let three = [idx("KI"), idx("KBrO3"), idx("HCl")];
        assert!(!three
            .iter()
            .all(|&i| m.vessel_of[i] == m.vessel_of[three[0]]));
        // Stocks: KI 4 mL, KBrO3 8 mL, HCl 8 mL, thio 4 mL, water 16 mL: the vessels can be
        // made exactly 20 mL each on the 0.05 mL buret.
        let r = &m.runs[0];
        assert!(
            (r.a.volume() - r.b.volume()).abs() < 1e-9,
            "{} vs {}",
            r.a.volume(),
            r.b.volume()
        );
        assert!((r.a.volume() + r.b.volume() - 0.040).abs() < 1e-12);
    }
}
