//! What one station sets up, read off the solved runs: each device, how many of it, and the
//! stock (or water) each one holds.

use super::assign::{units_of, Holder};
use super::*;
use std::collections::{BTreeMap, BTreeSet};

/// One device on a station's bench.
#[derive(Debug, Clone, PartialEq)]
pub struct StationDevice {
    pub device: usize,
    /// How many of it one station needs.
    pub count: usize,
    /// What it holds, in spec order, water last. More holders than `count` means one pipet
    /// serves several stocks (the spec allows it with `shared = true`), rinsed in between.
    pub holds: Vec<Holder>,
}

/// The glassware list of one station: every device any run delivers with, in spec order.
pub fn glassware(lab: &Lab, runs: &[RunSolution]) -> Vec<StationDevice> {
    let mut used: BTreeMap<Holder, BTreeSet<usize>> = BTreeMap::new();
    for r in runs {
        for a in &r.additions {
            let h = a.stock.map_or(Holder::Water, Holder::Stock);
            used.entry(h)
                .or_default()
                .extend(a.delivery.parts.iter().map(|p| p.0));
        }
    }
    let holdings: Vec<(Holder, Vec<usize>)> = used
        .into_iter()
        .map(|(h, d)| (h, d.into_iter().collect()))
        .collect();
    units_of(&holdings)
        .into_iter()
        .map(|(device, holds)| StationDevice {
            device,
            count: units_needed(&lab.devices[device], holds.len()),
            holds,
        })
        .collect()
}

/// Refuse a plan that needs more of a device than `per_station` gives.
pub(super) fn check_counts(spec: &Spec, lab: &Lab, station: &[StationDevice]) -> Result<()> {
    let short: Vec<&StationDevice> = station
        .iter()
        .filter(|s| {
            lab.devices[s.device]
                .per_station
                .is_some_and(|n| s.count > n as usize)
        })
        .collect();
    let Some(first) = short.first() else {
        return Ok(());
    };
    let words: Vec<String> = short
        .iter()
        .map(|s| {
            let dev = &lab.devices[s.device];
            let have = dev.per_station.unwrap_or(0) as usize;
            let names: Vec<String> = s
                .holds
                .iter()
                .map(|h| match h {
                    Holder::Stock(i) => format!("'{}'", lab.stocks[*i].name),
                    Holder::Water => "water".into(),
                })
                .collect();
            format!(
                "'{}': {} needed per station ({}), {have} listed, {} short",
                dev.name,
                s.count,
                names.join(", "),
                s.count - have
            )
        })
        .collect();
    Err(spec.source.error(
        lab.device_spans[first.device].clone(),
        format!(
            "the plan needs more glassware than a station has: {}",
            words.join("; ")
        ),
        "too few per station",
        "some runs need a second device for a stock (see their flags without per_station); raise per_station, or allow a device that serves every run",
    ))
}
