//! A [[device]]: the glassware kind, its size, graduation or range, and its class.

use super::checker::{inner, Checker};
use super::raw::*;
use crate::error::Result;
use crate::reference::glassware::{Class, Device, DeviceKind};
use crate::units::Kind;
use std::ops::Range;

/// The device being checked, for messages.
struct Ctx<'a> {
    name: &'a str,
    kind: DeviceKind,
    span: Range<usize>,
}

/// Step, smallest and largest delivery (L), and fills per addition.
type Dims = (f64, f64, f64, u32);

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
        let class = self.device_class(r)?;
        let ctx = Ctx {
            name: &name,
            kind,
            span: span.clone(),
        };
        let (step, min, max, max_fills) = match kind {
            DeviceKind::VolumetricPipet => self.volumetric_pipet(r, &ctx)?,
            DeviceKind::PistonPipette => self.piston_pipette(r, &ctx)?,
            _ => self.graduated(r, &ctx)?,
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
        let per_station = match &r.per_station {
            None => None,
            Some(n) if (1..=100).contains(n.get_ref()) => Some(*n.get_ref() as u32),
            Some(n) => {
                return Err(self.err(
                    n.span(),
                    "per_station must be a whole number from 1 to 100",
                    "out of range",
                    "how many of this device each station has, e.g. per_station = 2; leave it out for as many as the plan needs",
                ))
            }
        };
        let shared = match &r.shared {
            Some(s) if *s.get_ref() && kind == DeviceKind::Buret => {
                return Err(self.err(
                    s.span(),
                    format!("device '{name}': a buret cannot be shared between stocks"),
                    "not for a buret",
                    "remove shared; a buret holds one stock for the whole lab (list more with per_station)",
                ))
            }
            Some(s) => *s.get_ref(),
            None => false,
        };
        let mut device = Device {
            name,
            kind,
            class,
            step,
            min,
            max,
            max_fills,
            per_station,
            shared,
            dead_volume: 0.0,
        };
        device.dead_volume = match &r.dead_volume {
            None => Device::default_dead_volume(kind, device.nominal()),
            Some(q) => self.non_negative(q, Kind::Volume, "dead_volume")?,
        };
        Ok(device)
    }

    fn device_class(&self, r: &RawDevice) -> Result<Option<Class>> {
        let Some(c) = &r.class else {
            return Ok(None);
        };
        match c.get_ref().trim() {
            "A" => Ok(Some(Class::A)),
            "B" => Ok(Some(Class::B)),
            other => Err(self.err(
                inner(c.span(), &self.src.text),
                format!("unknown tolerance class '{other}'"),
                "not A or B",
                "write class = \"A\" or class = \"B\"",
            )),
        }
    }

    /// A volume the kind requires.
    fn need(&self, q: &Option<Q>, field: &str, example: &str, ctx: &Ctx) -> Result<f64> {
        match q {
            Some(q) => self.positive(q, Kind::Volume, field),
            None => Err(self.err(
                ctx.span.clone(),
                format!("device '{}' ({}) needs {field}", ctx.name, ctx.kind),
                "incomplete device",
                format!("add e.g. {field} = {example}"),
            )),
        }
    }

    /// A key the kind does not take.
    fn forbid(&self, q: &Option<Q>, field: &str, ctx: &Ctx) -> Result<()> {
        match q {
            Some(q) => Err(self.err(
                q.span(),
                format!("{field} does not apply to a {}", ctx.kind),
                "not for this kind",
                "remove it; the README lists the keys of each kind of device",
            )),
            None => Ok(()),
        }
    }

    fn volumetric_pipet(&self, r: &RawDevice, ctx: &Ctx) -> Result<Dims> {
        self.forbid(&r.capacity, "capacity", ctx)?;
        self.forbid(&r.graduation, "graduation", ctx)?;
        self.forbid(&r.step, "step", ctx)?;
        self.forbid(&r.min, "min", ctx)?;
        if let Some(rg) = &r.range {
            return Err(self.err(
                rg.span(),
                format!("range does not apply to a {}", ctx.kind),
                "not for this kind",
                "a volumetric pipet has one volume",
            ));
        }
        let v = self.need(&r.volume, "volume", "\"10 mL\"", ctx)?;
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
        Ok((v, v, v * fills as f64, fills))
    }

    fn piston_pipette(&self, r: &RawDevice, ctx: &Ctx) -> Result<Dims> {
        self.forbid(&r.capacity, "capacity", ctx)?;
        self.forbid(&r.graduation, "graduation", ctx)?;
        self.forbid(&r.volume, "volume", ctx)?;
        self.forbid(&r.min, "min", ctx)?;
        let rg = r.range.as_ref().ok_or_else(|| {
            self.err(
                ctx.span.clone(),
                format!("device '{}' (piston pipette) needs range", ctx.name),
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
        let step = self.need(&r.step, "step", "\"1 uL\"", ctx)?;
        Ok((step, lo, hi, 1))
    }

    /// Burets, graduated pipets and cylinders: capacity and graduation.
    fn graduated(&self, r: &RawDevice, ctx: &Ctx) -> Result<Dims> {
        self.forbid(&r.volume, "volume", ctx)?;
        self.forbid(&r.step, "step", ctx)?;
        if let Some(rg) = &r.range {
            return Err(self.err(
                rg.span(),
                format!("range does not apply to a {}", ctx.kind),
                "not for this kind",
                "give capacity and graduation instead",
            ));
        }
        if let Some(f) = &r.fills {
            return Err(self.err(
                f.span(),
                format!("fills does not apply to a {}", ctx.kind),
                "not for this kind",
                "only volumetric pipets are refilled for one addition",
            ));
        }
        let cap = self.need(&r.capacity, "capacity", "\"25 mL\"", ctx)?;
        let grad = self.need(&r.graduation, "graduation", "\"0.05 mL\"", ctx)?;
        // A graduated cylinder is not read below about a tenth of its capacity (common
        // practice); other graduated glassware down to one graduation.
        let default_min = if ctx.kind == DeviceKind::GraduatedCylinder {
            cap / 10.0
        } else {
            grad
        };
        let min = match &r.min {
            None => default_min,
            Some(q) => self.positive(q, Kind::Volume, "min")?,
        };
        Ok((grad, min, cap, 1))
    }
}
