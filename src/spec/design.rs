//! The [design] table of `clockprep design`.

use super::checker::{inner, Checker};
use super::model::*;
use super::raw::*;
use crate::error::Result;
use crate::units::{self, Kind};
use std::collections::BTreeSet;
use toml::Spanned;

impl Checker<'_> {
    pub(super) fn design(
        &self,
        d: &Spanned<RawDesign>,
        known: &BTreeSet<&str>,
        check_species: bool,
        timing: &str,
    ) -> Result<Design> {
        let r = d.get_ref();
        let mut base = Vec::new();
        for (k, q) in &r.base.get_ref().0 {
            let sp = self.species(k)?;
            if check_species && !known.contains(sp.as_str()) {
                return Err(self.err(
                    inner(k.span(), &self.src.text),
                    format!("no stock contains {sp}"),
                    "unknown species",
                    "design with species the stocks hold",
                ));
            }
            if sp == timing {
                return Err(self.err(
                    inner(k.span(), &self.src.text),
                    format!("{sp} is the timing species; it stays fixed in every run"),
                    "fixed",
                    "leave it out of the base",
                ));
            }
            base.push((
                sp.clone(),
                self.positive(q, Kind::Concentration, &format!("base {sp}"))?,
            ));
        }
        if base.is_empty() {
            return Err(self.err(
                r.base.span(),
                "the design's base is empty",
                "empty",
                "e.g. base = { \"I-\" = \"2.00 mM\", \"BrO3-\" = \"8.00 mM\" }",
            ));
        }
        let scheme = match r
            .scheme
            .as_ref()
            .map(|s| s.get_ref().trim().to_ascii_lowercase())
        {
            None => Scheme::OneAtATime,
            Some(s) if s == "one-at-a-time" || s == "ofat" => Scheme::OneAtATime,
            Some(s) if s == "factorial" => Scheme::Factorial,
            Some(s) if s == "levels" => Scheme::Levels,
            Some(other) => {
                let n = r.scheme.as_ref().expect("scheme");
                return Err(self.err(
                    inner(n.span(), &self.src.text),
                    format!("unknown scheme '{other}'"),
                    "here",
                    "use \"one-at-a-time\", \"factorial\" or \"levels\"",
                ));
            }
        };
        let multipliers = match &r.multipliers {
            None => vec![2.0],
            Some(m) => {
                let v: Vec<f64> = m.get_ref().iter().map(|x| *x.get_ref()).collect();
                if v.is_empty()
                    || v.iter()
                        .any(|x| !((0.01..=100.0).contains(x) && (*x - 1.0).abs() > 1e-9))
                {
                    // Beyond a hundredfold either way a run leaves any clock lab's range (and
                    // a mistyped exponent would reach the solver).
                    return Err(self.err(
                        m.span(),
                        "multipliers must be numbers from 0.01 to 100, other than 1",
                        "here",
                        "e.g. multipliers = [2.0] or [0.5, 2.0]",
                    ));
                }
                v
            }
        };
        let mut levels = Vec::new();
        if let Some(l) = &r.levels {
            for (k, qs) in &l.get_ref().0 {
                let sp = self.species(k)?;
                if !base.iter().any(|(b, _)| *b == sp) {
                    return Err(self.err(
                        inner(k.span(), &self.src.text),
                        format!("{sp} has levels but no base value"),
                        "not in the base",
                        "add it to base",
                    ));
                }
                let mut vals = Vec::new();
                for q in qs {
                    vals.push(self.positive(q, Kind::Concentration, &format!("levels {sp}"))?);
                }
                levels.push((sp, vals));
            }
        }
        if scheme == Scheme::Levels && levels.is_empty() {
            return Err(self.err(
                d.span(),
                "scheme \"levels\" needs levels",
                "here",
                "e.g. levels = { \"H+\" = [\"15 mM\", \"30 mM\"] }",
            ));
        }
        let frac = |q: &Option<Q>, field: &str, default: f64| -> Result<f64> {
            match q {
                None => Ok(default),
                Some(q) => {
                    let v = self.qty(q, Kind::Fraction, field)?;
                    if !(0.0..=0.5).contains(&v) {
                        return Err(self.err(
                            inner(q.span(), &self.src.text),
                            format!("{field} must be from 0 % to 50 %"),
                            "out of range",
                            format!("e.g. {field} = \"2 %\""),
                        ));
                    }
                    Ok(v)
                }
            }
        };
        // A human timing error of about 2 % (0.3 s on a 15 s run; common practice) and about
        // 0.5 % from glassware when none is listed to propagate.
        let timing_error = frac(&r.timing_error, "timing_error", 0.02)?;
        let volumetric_error = frac(&r.volumetric_error, "volumetric_error", 0.005)?;
        let temperature_spread = match &r.temperature_spread {
            None => 0.5,
            Some(q) => self.special(
                q,
                "temperature_spread",
                Kind::Temperature,
                "\"0.5 °C\"",
                units::parse_temperature_difference,
            )?,
        };
        // A general-purpose laboratory thermometer reads within about ±0.5 °C (from memory),
        // read as a rectangular distribution: standard uncertainty 0.5/√3 K. The spec states
        // the ± half-width.
        let thermometer_offset = match &r.thermometer_offset {
            None => 0.5,
            Some(q) => self.special(
                q,
                "thermometer_offset",
                Kind::Temperature,
                "\"0.5 °C\"",
                units::parse_temperature_difference,
            )?,
        } / 3f64.sqrt();
        Ok(Design {
            base,
            scheme,
            multipliers,
            levels,
            timing_error,
            temperature_spread,
            thermometer_offset,
            volumetric_error,
        })
    }
}
