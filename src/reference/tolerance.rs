//! Glassware tolerances (ASTM glassware classes, ISO 8655 piston pipettes;
//! `data/tolerances.toml`, each row naming its standard) and the standard uncertainty of one
//! delivery. A tolerance ±a is read as a rectangular distribution (standard uncertainty a/√3);
//! a piston pipette's random error is a standard deviation.

use crate::reference::glassware::{Class, Delivery, Device, DeviceKind};
use crate::units::{self, Kind};
use serde::Deserialize;
use std::sync::OnceLock;

#[derive(Debug, Clone, Deserialize)]
#[serde(deny_unknown_fields)]
struct Row {
    kind: String,
    capacity: String,
    tolerance: String,
    random: Option<String>,
    standard: String,
    checked: bool,
}

#[derive(Debug, Deserialize)]
struct Table {
    row: Vec<Row>,
}

/// A device's tolerance, as absolute volumes (L).
#[derive(Debug, Clone, PartialEq)]
pub struct Tolerance {
    /// Half-width of the rectangular systematic error.
    pub systematic: f64,
    /// Standard deviation of the random error (piston pipettes).
    pub random: f64,
    pub standard: String,
    pub checked: bool,
}

/// Parsed rows: kind, nominal capacity (L), systematic (L), random (L), standard, checked.
type Parsed = (DeviceKind, f64, f64, f64, String, bool);

fn table() -> &'static Vec<Parsed> {
    static T: OnceLock<Vec<Parsed>> = OnceLock::new();
    T.get_or_init(|| {
        let t: Table = toml::from_str(include_str!("data/tolerances.toml"))
            .expect("the tolerance table is valid (unit-tested)");
        t.row
            .into_iter()
            .map(|r| {
                let kind = DeviceKind::parse(&r.kind).expect("known kind");
                let cap = units::parse(&r.capacity, Kind::Volume).expect("capacity");
                let abs_or_pct = |s: &str| match units::parse_any(s).expect("tolerance") {
                    q if q.kind == Kind::Volume => q.value,
                    q => q.value * cap,
                };
                let random = r.random.as_deref().map_or(0.0, abs_or_pct);
                (
                    kind,
                    cap,
                    abs_or_pct(&r.tolerance),
                    random,
                    r.standard,
                    r.checked,
                )
            })
            .collect()
    })
}

/// The tolerance of a device: its kind's row at its capacity (or the next larger listed), class
/// B taken as twice class A when the class is B or not stated.
pub fn tolerance(d: &Device) -> Tolerance {
    // Looked up by its nominal capacity: one fill of a volumetric pipet, else its capacity.
    let cap = d.nominal();
    let rows: Vec<&Parsed> = table().iter().filter(|r| r.0 == d.kind).collect();
    let row = rows
        .iter()
        .filter(|r| r.1 >= cap * (1.0 - 1e-9))
        .min_by(|a, b| a.1.total_cmp(&b.1))
        .or_else(|| rows.iter().max_by(|a, b| a.1.total_cmp(&b.1)))
        .copied()
        .expect("every kind has rows");
    // A larger device than the largest row: scale the tolerance with capacity.
    let scale = if cap > row.1 { cap / row.1 } else { 1.0 };
    let class_factor = match (d.kind, d.class) {
        (DeviceKind::PistonPipette, _) => 1.0,
        (_, Some(Class::A)) => 1.0,
        _ => 2.0,
    };
    Tolerance {
        systematic: row.2 * scale * class_factor,
        random: row.3 * scale,
        standard: row.4.clone(),
        checked: row.5,
    }
}

/// Half-width of one reading of a graduated scale, as a fraction of its graduation: a
/// meniscus is read to about a fifth of a division (common practice).
pub const READING_FRACTION: f64 = 0.2;

/// How a device's error splits between what stays with the item and what each use draws
/// afresh, as standard uncertainties (L).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct ErrorSplit {
    /// The item's calibration error (its tolerance as a rectangular distribution): the same
    /// for every delivery it makes, so shared by every trial of the station that owns it.
    pub item: f64,
    /// One delivery's own scatter: a piston pipette's random error, plus two readings of the
    /// scale for a graduated device (initial and final level).
    pub per_delivery: f64,
}

/// A device's error split (see [`ErrorSplit`]). A transfer pipet's fill-to-fill scatter is
/// small beside its tolerance (common practice) and is not modelled.
pub fn error_split(d: &Device) -> ErrorSplit {
    let t = tolerance(d);
    let reading = match d.kind {
        DeviceKind::Buret | DeviceKind::GraduatedPipet | DeviceKind::GraduatedCylinder => {
            // Rectangular ±(fraction × graduation) per reading, two readings.
            2f64.sqrt() * READING_FRACTION * d.step / 3f64.sqrt()
        }
        DeviceKind::VolumetricPipet | DeviceKind::PistonPipette => 0.0,
    };
    ErrorSplit {
        item: t.systematic / 3f64.sqrt(),
        per_delivery: (t.random * t.random + reading * reading).sqrt(),
    }
}

/// Standard uncertainty (L) of one delivery.
pub fn delivery_u(delivery: &Delivery, devices: &[Device]) -> f64 {
    delivery
        .parts
        .iter()
        .map(|&(d, n)| {
            let t = tolerance(&devices[d]);
            let one = t.systematic * t.systematic / 3.0 + t.random * t.random;
            // Each fill of a volumetric pipet is its own delivery; an adjustable device
            // delivers its steps in one go.
            if devices[d].is_volumetric() {
                one * n as f64
            } else {
                one
            }
        })
        .sum::<f64>()
        .sqrt()
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::reference::glassware::{Class, Device, DeviceKind};
    use approx::assert_relative_eq;

    fn device(kind: DeviceKind, class: Option<Class>, ml: f64) -> Device {
        Device {
            name: "d".into(),
            kind,
            class,
            step: if kind == DeviceKind::VolumetricPipet {
                ml * 1e-3
            } else {
                0.01e-3
            },
            min: 0.0,
            max: ml * 1e-3,
            max_fills: 1,
            per_station: None,
            shared: false,
            dead_volume: 0.0,
        }
    }

    #[test]
    fn tolerance_rows_against_the_standards() {
        // ASTM E969-02 (2012) Table 1 (volumetric transfer pipets), class A:
        // 1 mL ±0.006 mL, 2 mL ±0.006 mL, 5 mL ±0.01 mL; class B twice class A (ASTM E694, 1.1.2).
        let t =
            |ml: f64, class| tolerance(&device(DeviceKind::VolumetricPipet, class, ml)).systematic;
        assert_relative_eq!(t(1.0, Some(Class::A)), 0.006e-3, max_relative = 1e-12);
        assert_relative_eq!(t(2.0, Some(Class::A)), 0.006e-3, max_relative = 1e-12);
        assert_relative_eq!(t(5.0, Some(Class::A)), 0.010e-3, max_relative = 1e-12);
        assert_relative_eq!(t(5.0, Some(Class::B)), 0.020e-3, max_relative = 1e-12);
        assert!(tolerance(&device(DeviceKind::VolumetricPipet, Some(Class::A), 5.0)).checked);
        // Rows from memory say so: ASTM E287 50 mL class A buret ±0.05 mL (from memory).
        let b = tolerance(&device(DeviceKind::Buret, Some(Class::A), 50.0));
        assert_relative_eq!(b.systematic, 0.05e-3, max_relative = 1e-12);
        assert!(!b.checked && b.standard.contains("from memory"));
        // ISO 8655-2 (from memory): 1000 µL piston pipette, 0.8 % systematic, 0.3 % random.
        let p = tolerance(&device(DeviceKind::PistonPipette, None, 1.0));
        assert_relative_eq!(p.systematic, 8e-6, max_relative = 1e-12);
        assert_relative_eq!(p.random, 3e-6, max_relative = 1e-12);
    }

    #[test]
    fn every_row_reads() {
        assert!(table().len() >= 25);
        for r in table() {
            assert!(r.1 > 0.0 && r.2 > 0.0 && !r.4.is_empty());
        }
    }

    #[test]
    fn error_split_of_a_buret_and_a_transfer_pipet() {
        // A class A 10 mL buret (±0.02 mL, ASTM E287 from memory) graduated in 0.05 mL: the
        // item's error 0.02/√3 mL; two readings each ±0.2 × 0.05 mL rectangular (common
        // practice): √2 × 0.01/√3 mL per delivery.
        let mut b = device(DeviceKind::Buret, Some(Class::A), 10.0);
        b.step = 0.05e-3;
        let s = error_split(&b);
        assert_relative_eq!(s.item, 0.02e-3 / 3f64.sqrt(), max_relative = 1e-12);
        assert_relative_eq!(
            s.per_delivery,
            2f64.sqrt() * 0.01e-3 / 3f64.sqrt(),
            max_relative = 1e-12
        );
        // A class A 5 mL transfer pipet (±0.01 mL, ASTM E969-02 Table 1): all of it stays
        // with the item.
        let p = error_split(&device(DeviceKind::VolumetricPipet, Some(Class::A), 5.0));
        assert_relative_eq!(p.item, 0.01e-3 / 3f64.sqrt(), max_relative = 1e-12);
        assert_eq!(p.per_delivery, 0.0);
    }
}
