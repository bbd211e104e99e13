//! Glassware on the bench and the volumes each piece can deliver.
//!
//! Adjustable devices (burets, graduated pipets, piston pipettes, graduated cylinders) deliver
//! any whole number of steps between their smallest and largest volume. Volumetric (transfer)
//! pipets deliver their one volume, and may be filled more than once and combined with each
//! other for one addition (e.g. 10 mL + 5 mL), up to their stated number of fills.

use serde::Serialize;
use std::fmt;

#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum DeviceKind {
    Buret,
    GraduatedPipet,
    VolumetricPipet,
    PistonPipette,
    GraduatedCylinder,
}

impl DeviceKind {
    /// The words accepted in a spec for each kind.
    pub fn parse(text: &str) -> Option<DeviceKind> {
        let t = text.trim().to_ascii_lowercase().replace(['-', '_'], " ");
        Some(match t.as_str() {
            "buret" | "burette" => DeviceKind::Buret,
            "graduated pipet"
            | "graduated pipette"
            | "mohr pipet"
            | "mohr pipette"
            | "serological pipet"
            | "serological pipette" => DeviceKind::GraduatedPipet,
            "volumetric pipet" | "volumetric pipette" | "transfer pipet" | "transfer pipette"
            | "bulb pipet" | "bulb pipette" => DeviceKind::VolumetricPipet,
            "piston pipette"
            | "piston pipet"
            | "micropipette"
            | "micropipet"
            | "air displacement pipette" => DeviceKind::PistonPipette,
            "graduated cylinder" | "measuring cylinder" | "cylinder" => {
                DeviceKind::GraduatedCylinder
            }
            _ => return None,
        })
    }

    pub const ACCEPTED: &'static str = "\"buret\", \"graduated pipet\", \"volumetric pipet\", \"piston pipette\" or \"graduated cylinder\"";

    /// Tie-break preference when two devices deliver the same volume: lower is preferred.
    /// Volumetric pipets and burets are the more precise choices for a fixed volume
    /// (common practice).
    pub fn preference(self) -> f64 {
        match self {
            DeviceKind::VolumetricPipet => 0.0,
            DeviceKind::Buret => 1.0,
            DeviceKind::PistonPipette => 2.0,
            DeviceKind::GraduatedPipet => 3.0,
            DeviceKind::GraduatedCylinder => 4.0,
        }
    }
}

impl fmt::Display for DeviceKind {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(match self {
            DeviceKind::Buret => "buret",
            DeviceKind::GraduatedPipet => "graduated pipet",
            DeviceKind::VolumetricPipet => "volumetric pipet",
            DeviceKind::PistonPipette => "piston pipette",
            DeviceKind::GraduatedCylinder => "graduated cylinder",
        })
    }
}

/// Tolerance class of volumetric glassware.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
pub enum Class {
    A,
    B,
}

/// One piece of glassware, validated. Volumes in litres.
#[derive(Debug, Clone, PartialEq)]
pub struct Device {
    pub name: String,
    pub kind: DeviceKind,
    pub class: Option<Class>,
    /// Adjustable devices: the step between deliverable volumes. Volumetric pipets: their volume.
    pub step: f64,
    /// Smallest volume delivered in one addition (one step count or one fill).
    pub min: f64,
    /// Largest volume delivered in one addition.
    pub max: f64,
    /// Volumetric pipets: how many fills one addition may take.
    pub max_fills: u32,
    /// How many of this device each station has; `None`: as many as the plan needs.
    pub per_station: Option<u32>,
    /// A pipet that may serve more than one stock at a station, rinsed with the next stock
    /// between them. Burets are never shared.
    pub shared: bool,
    /// Stock (L) a station spends on rinsing and filling this device, beyond what it delivers.
    pub dead_volume: f64,
}

impl Device {
    /// Stock (L) a station spends on rinsing and filling a device of this kind and size
    /// before its first delivery, when the spec gives no `dead_volume` (common practice:
    /// a buret is rinsed twice with about a tenth of its capacity; a pipet is rinsed with
    /// about one fill in small portions; a piston pipette's tip is pre-wetted once; a
    /// cylinder is rinsed once with about a tenth of its capacity).
    pub fn default_dead_volume(kind: DeviceKind, nominal: f64) -> f64 {
        match kind {
            DeviceKind::Buret => 0.2 * nominal,
            DeviceKind::VolumetricPipet | DeviceKind::GraduatedPipet => nominal,
            DeviceKind::PistonPipette => nominal,
            DeviceKind::GraduatedCylinder => 0.1 * nominal,
        }
    }

    /// A device's own volume: a volumetric pipet's one fill, otherwise its capacity (L).
    pub fn nominal(&self) -> f64 {
        if self.is_volumetric() {
            self.step
        } else {
            self.max
        }
    }

    pub fn is_volumetric(&self) -> bool {
        self.kind == DeviceKind::VolumetricPipet
    }

    /// Smallest and largest step counts (fills for a volumetric pipet) in one addition.
    pub fn count_range(&self) -> (u32, u32) {
        if self.is_volumetric() {
            (1, self.max_fills)
        } else {
            let lo = (self.min / self.step - 1e-9).ceil().max(1.0) as u32;
            let hi = (self.max / self.step + 1e-9).floor() as u32;
            (lo, hi)
        }
    }

    /// Whether this device alone delivers `volume` (litres) exactly, and in how many steps.
    pub fn steps_for(&self, volume: f64) -> Option<u32> {
        let n = (volume / self.step).round();
        if n < 0.5 || (n * self.step - volume).abs() > 1e-9 * self.step.max(volume) {
            return None;
        }
        let (lo, hi) = self.count_range();
        let n = n as u32;
        (lo..=hi).contains(&n).then_some(n)
    }

    /// Every volume (litres) this device delivers in one addition, smallest first.
    pub fn volumes(&self) -> impl Iterator<Item = f64> + '_ {
        let (lo, hi) = self.count_range();
        (lo..=hi).map(move |n| n as f64 * self.step)
    }
}

/// How one addition is delivered: one adjustable device, or a set of volumetric pipet fills.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Delivery {
    /// (device index, count of steps or fills), in device order; empty for nothing added.
    pub parts: Vec<(usize, u32)>,
}

impl Delivery {
    pub fn none() -> Self {
        Delivery { parts: Vec::new() }
    }

    pub fn volume(&self, devices: &[Device]) -> f64 {
        self.parts
            .iter()
            .map(|&(d, n)| n as f64 * devices[d].step)
            .sum()
    }

    /// A bench description such as "25 mL buret" or "2 × 10 mL pipet + 5 mL pipet".
    pub fn describe(&self, devices: &[Device]) -> String {
        if self.parts.is_empty() {
            return "-".into();
        }
        let words: Vec<String> = self
            .parts
            .iter()
            .map(|&(d, n)| {
                let dev = &devices[d];
                if dev.is_volumetric() && n > 1 {
                    format!("{n} × {}", dev.name)
                } else {
                    dev.name.clone()
                }
            })
            .collect();
        words.join(" + ")
    }
}

/// Find a way to deliver `volume` with the `allowed` devices (indices into `devices`):
/// one adjustable device, or a combination of volumetric pipet fills. Prefers volumetric pipets,
/// then the kind order of [`DeviceKind::preference`], then the fewest fills.
pub fn find_delivery(volume: f64, allowed: &[usize], devices: &[Device]) -> Option<Delivery> {
    if volume.abs() < 1e-12 {
        return Some(Delivery::none());
    }
    let vols: Vec<usize> = allowed
        .iter()
        .copied()
        .filter(|&d| devices[d].is_volumetric())
        .collect();
    if let Some(parts) = volumetric_combination(volume, &vols, devices) {
        return Some(Delivery { parts });
    }
    let mut adjustable: Vec<usize> = allowed
        .iter()
        .copied()
        .filter(|&d| !devices[d].is_volumetric())
        .collect();
    adjustable.sort_by(|&a, &b| {
        devices[a]
            .kind
            .preference()
            .total_cmp(&devices[b].kind.preference())
            .then(a.cmp(&b))
    });
    adjustable.into_iter().find_map(|d| {
        devices[d].steps_for(volume).map(|n| Delivery {
            parts: vec![(d, n)],
        })
    })
}

/// Find a way to deliver `volume` in at most two additions from the `allowed` devices (as when
/// make-up water is split between the two vessels). A single addition is preferred.
pub fn find_delivery_in_two(
    volume: f64,
    allowed: &[usize],
    devices: &[Device],
) -> Option<Delivery> {
    if let Some(d) = find_delivery(volume, allowed, devices) {
        return Some(d);
    }
    for &d in allowed {
        for x in devices[d].volumes() {
            if x >= volume {
                break;
            }
            if let (Some(first), Some(second)) = (
                find_delivery(x, allowed, devices),
                find_delivery(volume - x, allowed, devices),
            ) {
                let mut parts = first.parts;
                parts.extend(second.parts);
                return Some(Delivery { parts });
            }
        }
    }
    None
}

/// Fewest total fills of the given volumetric pipets that add up to `volume`.
fn volumetric_combination(
    volume: f64,
    pipets: &[usize],
    devices: &[Device],
) -> Option<Vec<(usize, u32)>> {
    fn search(
        i: usize,
        left: f64,
        pipets: &[usize],
        devices: &[Device],
        current: &mut Vec<(usize, u32)>,
        best: &mut Option<Vec<(usize, u32)>>,
    ) {
        let fills = |v: &Vec<(usize, u32)>| v.iter().map(|p| p.1).sum::<u32>();
        if left.abs() < 1e-9 * 1e-3 {
            if best.as_ref().is_none_or(|b| fills(current) < fills(b)) {
                *best = Some(current.clone());
            }
            return;
        }
        if i == pipets.len() || left < 0.0 {
            return;
        }
        let d = &devices[pipets[i]];
        for n in (0..=d.max_fills).rev() {
            let used = n as f64 * d.step;
            if used > left + 1e-12 {
                continue;
            }
            if n > 0 {
                current.push((pipets[i], n));
            }
            search(i + 1, left - used, pipets, devices, current, best);
            if n > 0 {
                current.pop();
            }
        }
    }
    let mut best = None;
    search(0, volume, pipets, devices, &mut Vec::new(), &mut best);
    best
}

#[cfg(test)]
pub(crate) mod tests {
    use super::*;

    pub(crate) fn buret() -> Device {
        Device {
            name: "25 mL buret".into(),
            kind: DeviceKind::Buret,
            class: Some(Class::A),
            step: 0.05e-3,
            min: 0.05e-3,
            max: 25e-3,
            max_fills: 1,
            per_station: None,
            shared: false,
            dead_volume: 5e-3,
        }
    }

    /// A class A volumetric pipet of `ml` mL that takes up to two fills.
    pub(crate) fn pipet(ml: f64) -> Device {
        Device {
            name: format!("{ml} mL pipet"),
            kind: DeviceKind::VolumetricPipet,
            class: Some(Class::A),
            step: ml * 1e-3,
            min: ml * 1e-3,
            max: 2.0 * ml * 1e-3,
            max_fills: 2,
            per_station: None,
            shared: false,
            dead_volume: ml * 1e-3,
        }
    }

    #[test]
    fn buret_delivers_multiples_of_its_graduation() {
        let b = buret();
        assert_eq!(b.steps_for(3.00e-3), Some(60));
        assert_eq!(b.steps_for(3.02e-3), None);
        assert_eq!(b.steps_for(26e-3), None);
        assert_eq!(b.count_range(), (1, 500));
    }

    #[test]
    fn pipets_combine() {
        let devices = vec![pipet(10.0), pipet(5.0), buret()];
        let d = find_delivery(15e-3, &[0, 1, 2], &devices).unwrap();
        assert_eq!(d.parts, vec![(0, 1), (1, 1)]);
        assert_eq!(d.describe(&devices), "10 mL pipet + 5 mL pipet");
        let d = find_delivery(20e-3, &[0, 1, 2], &devices).unwrap();
        assert_eq!(d.parts, vec![(0, 2)]);
        let d = find_delivery(12.35e-3, &[0, 1, 2], &devices).unwrap();
        assert_eq!(d.parts, vec![(2, 247)]);
        assert!(find_delivery(12.35e-3, &[0, 1], &devices).is_none());
        assert_eq!(find_delivery(0.0, &[], &devices), Some(Delivery::none()));
    }

    #[test]
    fn kinds_parse() {
        assert_eq!(DeviceKind::parse("Burette"), Some(DeviceKind::Buret));
        assert_eq!(
            DeviceKind::parse("transfer-pipet"),
            Some(DeviceKind::VolumetricPipet)
        );
        assert_eq!(DeviceKind::parse("spoon"), None);
    }
}
