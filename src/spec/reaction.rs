//! [reaction] (the prior rate law, from a preset or spelled out) and the forecast settings
//! of [plan] and [timing].

use super::checker::{inner, toml_error, Checker};
use super::model::*;
use super::raw::*;
use crate::error::{Result, SpecSource};
use crate::spec::{Visible, VisibleAs};
use crate::units::{self, Kind};
use toml::{Spanned, Value};

impl Checker<'_> {
    pub(super) fn forecast_settings(
        &self,
        plan_span: &Spanned<RawPlan>,
        plan: &RawPlan,
        t: &RawTiming,
        temperature: Option<f64>,
    ) -> Result<ForecastSettings> {
        let temperature = temperature.ok_or_else(|| {
            self.err(
                plan_span.span().start..plan_span.span().start,
                "a forecast needs the planned room temperature",
                "in [plan]",
                "add temperature = \"21 °C\" to [plan]",
            )
        })?;
        let band = match &plan.temperature_band {
            None => DEFAULT_BAND_K,
            Some(q) => {
                let b = self.special(
                    q,
                    "temperature_band",
                    Kind::Temperature,
                    "\"3 °C\"",
                    units::parse_temperature_difference,
                )?;
                if !(0.0..=15.0).contains(&b) {
                    return Err(self.err(
                        inner(q.span(), &self.src.text),
                        "temperature_band must be from 0 to 15 °C",
                        "out of range",
                        "e.g. temperature_band = \"3 °C\"",
                    ));
                }
                if temperature - b < 273.15 || temperature + b > 333.15 {
                    return Err(self.err(
                        inner(q.span(), &self.src.text),
                        "the temperature band reaches outside 0–60 °C",
                        "out of range",
                        "narrow the band or plan for a temperature nearer the room's",
                    ));
                }
                b
            }
        };
        let window = match &t.window {
            None => DEFAULT_WINDOW_S,
            Some(w) => {
                let [lo, hi] = w.get_ref().as_slice() else {
                    return Err(self.err(
                        w.span(),
                        "window needs two times: shortest and longest",
                        "here",
                        "e.g. window = [\"15 s\", \"10 min\"]",
                    ));
                };
                let lo = self.positive(lo, Kind::Time, "window")?;
                let hi = self.positive(hi, Kind::Time, "window")?;
                if lo >= hi {
                    return Err(self.err(
                        w.span(),
                        "window runs from longer to shorter",
                        "reversed",
                        "write the shortest time first, e.g. window = [\"15 s\", \"10 min\"]",
                    ));
                }
                (lo, hi)
            }
        };
        let lab_period = t
            .lab_period
            .as_ref()
            .map(|q| self.positive(q, Kind::Time, "lab_period"))
            .transpose()?;
        let handling = match &t.handling_per_run {
            None => DEFAULT_HANDLING_S,
            Some(q) => {
                let v = self.qty(q, Kind::Time, "handling_per_run")?;
                if v < 0.0 {
                    return Err(self.err(
                        inner(q.span(), &self.src.text),
                        "handling_per_run cannot be negative",
                        "negative",
                        "e.g. handling_per_run = \"3 min\"",
                    ));
                }
                v
            }
        };
        Ok(ForecastSettings {
            temperature,
            band,
            window,
            lab_period,
            handling,
        })
    }

    /// The `[reaction]` table, with any preset filled in under the keys the spec leaves out.
    pub(super) fn reaction(
        &self,
        r: &Spanned<RawReaction>,
        timing: &str,
        available: &dyn Fn(&str) -> bool,
    ) -> Result<crate::spec::Reaction> {
        use crate::reference::equation::parse_equation;
        use crate::spec::{Reaction, MAX_TERMS};
        let raw = r.get_ref();
        let table = r.span().start..r.span().start;
        let preset = match &raw.preset {
            None => None,
            Some(name) => {
                let key = name.get_ref().trim();
                let text = crate::spec::presets::get(key).ok_or_else(|| {
                    self.err(
                        inner(name.span(), &self.src.text),
                        format!("unknown reaction preset '{key}'"),
                        "no such preset",
                        format!("presets: {}", crate::spec::presets::NAMES.join(", ")),
                    )
                })?;
                let src = SpecSource::new(format!("preset {key}"), text);
                let parsed: RawReaction = toml::from_str(text).map_err(|e| toml_error(&src, e))?;
                Some((key.to_string(), src, parsed))
            }
        };
        // The preset's own checker, so its values are located in the preset's text.
        let preset = preset.as_ref().map(|(key, src, parsed)| {
            (
                key,
                Checker {
                    src,
                    purpose: self.purpose,
                },
                parsed,
            )
        });
        let missing = |what: &str, example: &str| {
            self.err(
                table.clone(),
                format!("[reaction] needs {what}"),
                "incomplete reaction",
                format!(
                    "add {example}, or use a preset ({})",
                    crate::spec::presets::NAMES.join(", ")
                ),
            )
        };
        // Each key: the spec's own value, else the preset's (checked against the preset text).
        let pick_name = |own: &Option<Name>,
                         theirs: &dyn Fn(&RawReaction) -> Option<Name>|
         -> Option<(&Checker, Name)> {
            if let Some(v) = own {
                return Some((self, v.clone()));
            }
            let (_, checker, p) = preset.as_ref()?;
            theirs(p).map(|v| (checker, v))
        };
        let (c, rate_name) = pick_name(&raw.rate_species, &|p| p.rate_species.clone())
            .ok_or_else(|| missing("rate_species", "rate_species = \"BrO3-\""))?;
        let rate_species = c.species(&rate_name)?;
        let equation = |c: &Checker, n: &Name| {
            parse_equation(n.get_ref()).map_err(|e| {
                let at = inner(n.span(), &c.src.text);
                c.err(
                    at.start + e.at.start..at.start + e.at.end,
                    format!("equation: {}", e.message),
                    "here",
                    "e.g. main = \"BrO3- + 6 I- + 6 H+ -> Br- + 3 I2 + 3 H2O\"",
                )
            })
        };
        let (mc, main_name) = pick_name(&raw.main, &|p| p.main.clone()).ok_or_else(|| {
            missing(
                "main (the main reaction)",
                "main = \"BrO3- + 6 I- + 6 H+ -> Br- + 3 I2 + 3 H2O\"",
            )
        })?;
        let main = equation(mc, &main_name)?;
        let (cc, clock_name) = pick_name(&raw.clock, &|p| p.clock.clone()).ok_or_else(|| {
            missing(
                "clock (the clock reaction)",
                "clock = \"I2 + 2 S2O3^2- -> 2 I- + S4O6^2-\"",
            )
        })?;
        let clock = equation(cc, &clock_name)?;

        let (tc, raw_terms): (&Checker, &Vec<Spanned<RawTerm>>) = match (
            &raw.term,
            preset
                .as_ref()
                .and_then(|(_, c, p)| p.term.as_ref().map(|t| (c, t))),
        ) {
            (Some(t), _) => (self, t),
            (None, Some((c, t))) => (c, t),
            (None, None) => {
                return Err(missing(
                    "at least one [[reaction.term]]",
                    "[[reaction.term]] with k, at, orders",
                ))
            }
        };
        if raw_terms.is_empty() || raw_terms.len() > MAX_TERMS {
            return Err(self.err(
                table.clone(),
                format!("a rate law needs 1 to {MAX_TERMS} terms"),
                "here",
                "one term is the common case; two cover an acid-assisted path",
            ));
        }
        let mut terms = Vec::new();
        for rt in raw_terms {
            terms.push(tc.term(rt, available, self.purpose)?);
        }

        let visible = match (
            &raw.visible,
            preset
                .as_ref()
                .and_then(|(_, c, p)| p.visible.as_ref().map(|v| (c, v))),
        ) {
            (Some(v), _) => Some((self, v)),
            (None, Some((c, v))) => Some((c, v)),
            (None, None) => None,
        };
        let visible = match visible {
            None => None,
            Some((c, v)) => Some(c.visible(v, &main)?),
        };
        let name = match &preset {
            Some((key, ..)) if raw.main.is_none() && raw.clock.is_none() && raw.term.is_none() => {
                key.to_string()
            }
            Some((key, ..)) => format!("{key} (adjusted)"),
            None => raw.description.clone().unwrap_or_else(|| "custom".into()),
        };
        let mut reaction = Reaction::new(name, rate_species, timing.to_string(), main, clock, terms, visible)
            .map_err(|e| mc.err(inner(main_name.span(), &mc.src.text), format!("the reaction does not make a clock: {e}"), "here", "the main reaction must consume the rate species and make what the clock reaction removes with the timing species"))?;
        // The spec's own setting only: a preset's k is used as stated unless its source gives
        // the ionic strength it holds at.
        if let Some(q) = &raw.k_at_ionic_strength {
            let i = self.non_negative(q, Kind::Concentration, "k_at_ionic_strength")?;
            if i > crate::spec::DAVIES_LIMIT {
                return Err(self.err(
                    inner(q.span(), &self.src.text),
                    format!("k_at_ionic_strength: {} is beyond the Davies equation's range (up to 0.5 M)", units::concentration(i)),
                    "too high",
                    "give the ionic strength at which k was measured, 0 to 0.5 M",
                ));
            }
            reaction.salt_reference = Some(i);
        }
        Ok(reaction)
    }
    /// One `[[reaction.term]]`: orders over species the runs give, k in units that match the
    /// overall order, its temperature, and the activation energy.
    fn term(
        &self,
        rt: &Spanned<RawTerm>,
        available: &dyn Fn(&str) -> bool,
        purpose: Purpose,
    ) -> Result<crate::spec::Term> {
        use crate::spec::Term;
        let tc = self;
        let t = rt.get_ref();
        let mut orders = Vec::new();
        for (k, v) in &t.orders.get_ref().0 {
            let sp = tc.species(k)?;
            let n = match v.get_ref() {
                Value::Integer(i) => *i as f64,
                Value::Float(f) => *f,
                _ => f64::NAN,
            };
            if !n.is_finite() || !(-2.0..=5.0).contains(&n) {
                return Err(tc.err(
                    v.span(),
                    format!("the order in {sp} must be a number from -2 to 5"),
                    "not an order",
                    "e.g. orders = { \"BrO3-\" = 1, \"H+\" = 2 } (fractions such as 0.5 are fine)",
                ));
            }
            if !available(&sp) {
                return Err(tc.err(
                    inner(k.span(), &tc.src.text),
                    format!(
                        "the rate law needs {sp}, but {}",
                        if purpose == Purpose::Plan {
                            "no stock contains it"
                        } else {
                            "the runs give no concentration for it"
                        }
                    ),
                    "missing from the runs",
                    "add it to the stocks and run targets, or change the rate law",
                ));
            }
            orders.push((sp, n));
        }
        if orders.is_empty() {
            return Err(tc.err(
                t.orders.span(),
                "a rate-law term needs orders",
                "empty",
                "e.g. orders = { \"BrO3-\" = 1, \"I-\" = 1, \"H+\" = 2 }",
            ));
        }
        let k = tc.special(
            &t.k,
            "k",
            Kind::Time,
            "\"40 M^-3 s^-1\"",
            units::parse_rate_constant,
        )?;
        let overall: f64 = orders.iter().map(|(_, n)| n).sum();
        if (k.conc_exponent - (1.0 - overall)).abs() > 1e-9 {
            return Err(tc.err(
            inner(t.k.span(), &tc.src.text),
            format!("k has units of M^{} s^-1, but a term of overall order {overall} needs M^{} s^-1", k.conc_exponent, 1.0 - overall),
            "units do not match the orders",
            format!("write k in M^{} s^-1 (or the same in L, mol and min)", 1.0 - overall),
        ));
        }
        if k.value <= 0.0 {
            return Err(tc.err(
                inner(t.k.span(), &tc.src.text),
                "k must be greater than zero",
                "not positive",
                "e.g. k = \"40 M^-3 s^-1\"",
            ));
        }
        let t_ref = tc.qty(&t.at, Kind::Temperature, "at")?;
        if !(273.15..=333.15).contains(&t_ref) {
            return Err(tc.err(
                inner(t.at.span(), &tc.src.text),
                format!("at = {} °C is outside 0–60 °C", units::sig3(t_ref - 273.15)),
                "out of range",
                "give k at a temperature of the teaching lab, e.g. at = \"25 °C\"",
            ));
        }
        let activation_energy = match &t.activation_energy {
            None => None,
            Some(q) => {
                let ea = tc.special(
                    q,
                    "activation_energy",
                    Kind::Fraction,
                    "\"54 kJ/mol\"",
                    units::parse_energy,
                )?;
                if !(0.0..=300_000.0).contains(&ea) {
                    return Err(tc.err(
                        inner(q.span(), &tc.src.text),
                        "activation_energy must be from 0 to 300 kJ/mol",
                        "out of range",
                        "e.g. activation_energy = \"54 kJ/mol\"",
                    ));
                }
                Some(ea)
            }
        };
        Ok(Term {
            k_ref: k.value,
            t_ref,
            activation_energy,
            orders,
            source: t.source.clone(),
        })
    }
}

impl Checker<'_> {
    /// The visible end point: threshold, what it measures and within what factor it is known.
    fn visible(
        &self,
        v: &Spanned<RawVisible>,
        main: &crate::reference::equation::Equation,
    ) -> Result<Visible> {
        let r = v.get_ref();
        let threshold = self.positive(&r.threshold, Kind::Concentration, "threshold")?;
        // An iodine clock: the main reaction makes I2 with iodide present.
        let iodine = main.net("I2") > 0.0 && main.species().any(|s| s == "I-");
        let criterion = match &r.measured_as {
            None if iodine => VisibleAs::Triiodide,
            None => VisibleAs::Total,
            Some(a) => match a.get_ref().trim() {
                "triiodide" if iodine => VisibleAs::Triiodide,
                "triiodide" => {
                    return Err(self.err(
                        inner(a.span(), &self.src.text),
                        "as = \"triiodide\" needs an iodine clock: a main reaction that makes I2 from I-",
                        "not an iodine clock",
                        "write as = \"total\": the threshold is then the intermediate's total concentration",
                    ))
                }
                "total" => VisibleAs::Total,
                other => {
                    return Err(self.err(
                        inner(a.span(), &self.src.text),
                        format!("unknown visible criterion '{other}'"),
                        "not triiodide or total",
                        "write as = \"triiodide\" (starch shows I3-) or as = \"total\" (the intermediate's total concentration)",
                    ))
                }
            },
        };
        let factor = match &r.factor {
            None => crate::spec::prior::THRESHOLD_FACTOR,
            Some(f) if (1.0..=10.0).contains(f.get_ref()) => *f.get_ref(),
            Some(f) => {
                return Err(self.err(
                    f.span(),
                    "factor must be a number from 1 to 10",
                    "out of range",
                    "the threshold is known within ×/÷ this factor, e.g. factor = 1.5",
                ))
            }
        };
        Ok(Visible {
            threshold,
            criterion,
            factor,
            source: r.source.clone(),
        })
    }
}
