//! The station's glassware list, the device chosen for each stock and why, and the tray list:
//! what one bench group sets up before its first run.

use super::{ml, sig10};
use crate::lab::totals::Totals;
use crate::solve::{Holder, Solution};
use crate::spec::{Lab, Spec};
use serde::Serialize;

/// One device on a station's bench: how many, and what each holds.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct GlasswareItem {
    pub device: String,
    pub kind: String,
    /// How many of it one station needs.
    pub per_station: usize,
    /// The stocks (and water) it holds, in spec order.
    pub holds: Vec<String>,
    /// One pipet serves several stocks (`shared = true`): rinse it with the next stock.
    pub rinse_between: bool,
    /// Stock spent rinsing and filling one of it before the first delivery.
    #[serde(rename = "dead_volume_mL")]
    pub dead_volume_ml: f64,
}

/// The device chosen for one stock (or the water) for the whole lab, and why.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct DeviceChoice {
    pub stock: String,
    pub device: String,
    /// Largest relative standard uncertainty (k = 1) of one delivery over the runs, %.
    #[serde(rename = "worst_u_pct", skip_serializing_if = "Option::is_none")]
    pub worst_u_pct: Option<f64>,
    pub why: String,
    /// Runs that needed another device for this stock.
    pub second_device_runs: Vec<String>,
}

/// One bottle on a station's tray and how much to fill it with.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct TrayItem {
    pub stock: String,
    /// What the station delivers: every run × replicates.
    #[serde(rename = "use_mL")]
    pub use_ml: f64,
    #[serde(rename = "overage_mL")]
    pub overage_ml: f64,
    /// Rinsing and filling the devices that hold it.
    #[serde(rename = "dead_volume_mL")]
    pub dead_volume_ml: f64,
    /// use + overage + dead volume.
    #[serde(rename = "fill_mL")]
    pub fill_ml: f64,
}

fn holder_name(lab: &Lab, h: Holder) -> String {
    match h {
        Holder::Stock(s) => lab.stocks[s].name.clone(),
        Holder::Water => "water".into(),
    }
}

pub(super) fn glassware(lab: &Lab, solution: &Solution) -> Vec<GlasswareItem> {
    solution
        .station
        .iter()
        .map(|d| {
            let dev = &lab.devices[d.device];
            GlasswareItem {
                device: dev.name.clone(),
                kind: dev.kind.to_string(),
                per_station: d.count,
                holds: d.holds.iter().map(|&h| holder_name(lab, h)).collect(),
                rinse_between: d.holds.len() > d.count,
                dead_volume_ml: ml(dev.dead_volume),
            }
        })
        .collect()
}

pub(super) fn choices(spec: &Spec, lab: &Lab, solution: &Solution) -> Vec<DeviceChoice> {
    solution
        .assignment
        .choices
        .iter()
        .map(|c| {
            let who = holder_name(lab, c.holder);
            // Runs that used another device for it, read off the solved runs.
            let second: Vec<String> = solution
                .runs
                .iter()
                .zip(&spec.runs)
                .filter(|(r, _)| {
                    r.additions.iter().any(|a| {
                        a.stock.map_or(Holder::Water, Holder::Stock) == c.holder
                            && a.delivery.parts.iter().any(|p| !c.devices.contains(&p.0))
                    })
                })
                .map(|(_, run)| run.name.clone())
                .collect();
            DeviceChoice {
                stock: who,
                device: c
                    .devices
                    .iter()
                    .map(|&d| lab.devices[d].name.as_str())
                    .collect::<Vec<_>>()
                    .join(" + "),
                worst_u_pct: c.worst_u.map(|u| sig10(u * 100.0)),
                why: c.why.clone(),
                second_device_runs: second,
            }
        })
        .collect()
}

pub(super) fn tray(lab: &Lab, totals: &Totals, replicates: u32) -> Vec<TrayItem> {
    let item = |stock: String, use_: f64, dead: f64, overage: f64| TrayItem {
        stock,
        use_ml: ml(use_),
        overage_ml: ml(use_ * overage),
        dead_volume_ml: ml(dead),
        fill_ml: ml(use_ * (1.0 + overage) + dead),
    };
    // One line per stock: a stock made in batches (lab sections) has one total per batch,
    // but the same tray at every station.
    let mut out: Vec<TrayItem> = totals
        .stocks
        .iter()
        .enumerate()
        .filter(|(i, t)| !totals.stocks[..*i].iter().any(|u| u.stock == t.stock))
        .map(|(_, t)| {
            item(
                lab.stocks[t.stock].name.clone(),
                t.per_station_set * replicates as f64,
                t.dead_per_station,
                lab.overage,
            )
        })
        .collect();
    out.push(item(
        "water".into(),
        totals.water_per_station,
        totals.water_dead_per_station,
        lab.overage,
    ));
    out
}
