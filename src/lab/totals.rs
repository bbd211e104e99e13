//! Stock to prepare: per stock, the volume used by every run, times replicates and stations,
//! plus the overage, rounded up to a volumetric flask size.

use crate::solve::{Holder, Solution};
use crate::spec::{Lab, Spec};

#[derive(Debug, Clone, PartialEq)]
pub struct StockTotal {
    pub stock: usize,
    /// L used by one station doing every run once.
    pub per_station_set: f64,
    /// L used by the whole lab: all runs × replicates × stations.
    pub used: f64,
    /// L one station spends rinsing and filling the devices that hold this stock.
    pub dead_per_station: f64,
    /// L to prepare: used plus overage, plus every station's dead volume.
    pub need: f64,
    /// Flask size (L) and how many of them to make up.
    pub flask: f64,
    pub flask_count: u32,
}

#[derive(Debug, Clone, PartialEq)]
pub struct Totals {
    pub stocks: Vec<StockTotal>,
    /// L of water used by the whole lab as make-up (no overage added).
    pub water: f64,
    /// L of water one station uses as make-up, and spends rinsing and filling its devices.
    pub water_per_station: f64,
    pub water_dead_per_station: f64,
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

/// Smallest flask that holds `need`, or as many of the largest as it takes.
pub fn flask_for(need: f64, flasks: &[f64]) -> (f64, u32) {
    if let Some(&f) = flasks.iter().find(|&&f| f >= need * (1.0 - 1e-12)) {
        return (f, 1);
    }
    let largest = flasks.last().copied().unwrap_or(1.0);
    (largest, (need / largest - 1e-12).ceil() as u32)
}

pub fn compute(spec: &Spec, lab: &Lab, solution: &Solution) -> Totals {
    let sets = (spec.replicates * spec.stations) as f64;
    let stocks = solution
        .used_stocks
        .iter()
        .map(|&s| {
            let per_station_set: f64 = solution.runs.iter().map(|r| r.volume_of(s)).sum();
            let used = per_station_set * sets;
            let dead_per_station = dead_volume(lab, solution, Holder::Stock(s));
            let need = used * (1.0 + lab.overage) + dead_per_station * spec.stations as f64;
            let (flask, flask_count) = flask_for(need, &lab.flasks);
            StockTotal {
                stock: s,
                per_station_set,
                used,
                dead_per_station,
                need,
                flask,
                flask_count,
            }
        })
        .collect();
    let one_set = solution.runs.iter().map(|r| r.water().volume).sum::<f64>();
    Totals {
        stocks,
        water: one_set * sets,
        water_per_station: one_set * spec.replicates as f64,
        water_dead_per_station: dead_volume(lab, solution, Holder::Water),
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn flasks_round_up() {
        let flasks = [0.05, 0.1, 0.25, 0.5, 1.0];
        assert_eq!(flask_for(0.0421, &flasks), (0.05, 1));
        assert_eq!(flask_for(0.05, &flasks), (0.05, 1));
        assert_eq!(flask_for(0.0501, &flasks), (0.1, 1));
        assert_eq!(flask_for(2.3, &flasks), (1.0, 3));
    }
}
