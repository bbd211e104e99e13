//! A [[device]]: the glassware kind, its size, graduation or range, and its class.

use super::checker::{inner, Checker};
use super::raw::*;
use crate::error::Result;
use crate::reference::glassware::{Class, Device, DeviceKind};
use crate::units::Kind;
use std::ops::Range;

impl Checker<'_> {
    pub(super) fn device(&self, r: &RawDevice, span: Range<usize>) -> Result<Device> {
        let name = r.name.get_ref().trim().to_string();
        if name.is_empty() {
            return Err(self.err(
                r.name.span(),
                "a device has an empty name",
                "empty",
                "e.g. name = \"25 mL buret\"",
            ));
        }
        let kind = DeviceKind::parse(r.kind.get_ref()).ok_or_else(|| {
            self.err(
                inner(r.kind.span(), &self.src.text),
                format!("unknown kind of device '{}'", r.kind.get_ref()),
                "unknown kind",
                format!("use {}", DeviceKind::ACCEPTED),
            )
        })?;
        let need = |q: &Option<Q>, field: &str, example: &str| -> Result<f64> {
            match q {
                Some(q) => self.positive(q, Kind::Volume, field),
                None => Err(self.err(
                    span.clone(),
                    format!("device '{name}' ({kind}) needs {field}"),
                    "incomplete device",
                    format!("add e.g. {field} = {example}"),
                )),
            }
        };
        let forbid = |q: &Option<Q>, field: &str| -> Result<()> {
            match q {
                Some(q) => Err(self.err(
                    q.span(),
                    format!("{field} does not apply to a {kind}"),
                    "not for this kind",
                    "remove it; the README lists the keys of each kind of device",
                )),
                None => Ok(()),
            }
        };
        let class = match &r.class {
            None => None,
            Some(c) => Some(match c.get_ref().trim() {
                "A" => Class::A,
                "B" => Class::B,
                other => {
                    return Err(self.err(
                        inner(c.span(), &self.src.text),
                        format!("unknown tolerance class '{other}'"),
                        "not A or B",
                        "write class = \"A\" or class = \"B\"",
                    ))
                }
            }),
        };
        let (step, min, max, max_fills) = match kind {
            DeviceKind::VolumetricPipet => {
                forbid(&r.capacity, "capacity")?;
                forbid(&r.graduation, "graduation")?;
                forbid(&r.step, "step")?;
                forbid(&r.min, "min")?;
                if let Some(rg) = &r.range {
                    return Err(self.err(
                        rg.span(),
                        format!("range does not apply to a {kind}"),
                        "not for this kind",
                        "a volumetric pipet has one volume",
                    ));
                }
                let v = need(&r.volume, "volume", "\"10 mL\"")?;
                let fills = match &r.fills {
                    None => 1,
                    Some(f) if (1..=20).contains(f.get_ref()) => *f.get_ref() as u32,
                    Some(f) => {
                        return Err(self.err(
                            f.span(),
                            "fills must be a whole number from 1 to 20",
                            "out of range",
                            "fills = 2 lets one addition take two fills of this pipet",
                        ))
                    }
                };
                (v, v, v * fills as f64, fills)
            }
            DeviceKind::PistonPipette => {
                forbid(&r.capacity, "capacity")?;
                forbid(&r.graduation, "graduation")?;
                forbid(&r.volume, "volume")?;
                forbid(&r.min, "min")?;
                let rg = r.range.as_ref().ok_or_else(|| {
                    self.err(
                        span.clone(),
                        format!("device '{name}' (piston pipette) needs range"),
                        "incomplete device",
                        "add e.g. range = [\"100 uL\", \"1000 uL\"]",
                    )
                })?;
                let [lo, hi] = rg.get_ref().as_slice() else {
                    return Err(self.err(
                        rg.span(),
                        "range needs two volumes: smallest and largest",
                        "here",
                        "e.g. range = [\"100 uL\", \"1000 uL\"]",
                    ));
                };
                let lo = self.positive(lo, Kind::Volume, "range")?;
                let hi = self.positive(hi, Kind::Volume, "range")?;
                if lo > hi {
                    return Err(self.err(
                        rg.span(),
                        "range runs from larger to smaller",
                        "reversed",
                        "write the smallest volume first",
                    ));
                }
                let step = need(&r.step, "step", "\"1 uL\"")?;
                (step, lo, hi, 1)
            }
            _ => {
                forbid(&r.volume, "volume")?;
                forbid(&r.step, "step")?;
                if let Some(rg) = &r.range {
                    return Err(self.err(
                        rg.span(),
                        format!("range does not apply to a {kind}"),
                        "not for this kind",
                        "give capacity and graduation instead",
                    ));
                }
                if let Some(f) = &r.fills {
                    return Err(self.err(
                        f.span(),
                        format!("fills does not apply to a {kind}"),
                        "not for this kind",
                        "only volumetric pipets are refilled for one addition",
                    ));
                }
                let cap = need(&r.capacity, "capacity", "\"25 mL\"")?;
                let grad = need(&r.graduation, "graduation", "\"0.05 mL\"")?;
                // A graduated cylinder is not read below about a tenth of its capacity
                // (common practice); other graduated glassware down to one graduation.
                let default_min = if kind == DeviceKind::GraduatedCylinder {
                    cap / 10.0
                } else {
                    grad
                };
                let min = match &r.min {
                    None => default_min,
                    Some(q) => self.positive(q, Kind::Volume, "min")?,
                };
                (grad, min, cap, 1)
            }
        };
        if step > max * (1.0 + 1e-12) {
            return Err(self.err(
                span,
                format!("device '{name}': its step is larger than its capacity"),
                "inconsistent device",
                "check the graduation or step against the capacity or range",
            ));
        }
        if max / step > 200_000.0 {
            return Err(self.err(
                span,
                format!("device '{name}': more than 200000 steps between zero and its capacity"),
                "step too fine",
                "give the graduation you can actually read, e.g. graduation = \"0.05 mL\"",
            ));
        }
        if min > max {
            return Err(self.err(
                span,
                format!("device '{name}': min is larger than its capacity"),
                "inconsistent device",
                "lower min",
            ));
        }
        Ok(Device {
            name,
            kind,
            class,
            step,
            min,
            max,
            max_fills,
        })
    }
}
