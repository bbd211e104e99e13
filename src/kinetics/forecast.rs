//! The forecast stage: predicted time to colour for every run at the planned temperature and
//! across the temperature band, checked against the timing window, the initial-rate
//! assumption (small conversion) and the lab period. A forecast is a planning aid from a prior
//! rate law, never a guarantee.

use crate::flag::Flag;
use crate::kinetics::{NoClock, RunKinetics, Timing, QUADRATURE_ACCEPTED};
use crate::spec::{Prior, Spec};

/// Largest fraction of a reactant that may be used up by the clock before the initial-rate
/// method is in doubt (common practice: about 10 %).
pub const MAX_CONVERSION: f64 = 0.10;

#[derive(Debug, Clone, PartialEq)]
pub struct RunForecast {
    /// Planned temperature and the band's cool and warm ends, K.
    pub temperature: f64,
    pub band: (f64, f64),
    /// At the planned temperature; None when the run has no clock.
    pub timing: Option<Timing>,
    /// Times to colour at the warm (fast) and cool (slow) ends of the band, s.
    pub band_times: Option<(f64, f64)>,
    /// Whether the reported time includes the wait from the clock to visible colour.
    pub uses_visible: bool,
    /// The visible wait at the planned temperature with the threshold at the low and high end
    /// of its factor, s.
    pub visible_range: Option<(f64, f64)>,
    /// Fraction of each reactant used up at the clock.
    pub conversions: Vec<(String, f64)>,
    /// The rate (M/s) students would compute from the predicted time, `[timing]`₀/(ν t).
    pub implied_rate: Option<f64>,
    pub warnings: Vec<Flag>,
}

impl RunForecast {
    pub fn max_conversion(&self) -> Option<(&str, f64)> {
        self.conversions
            .iter()
            .map(|(s, c)| (s.as_str(), *c))
            .max_by(|a, b| a.1.total_cmp(&b.1))
    }

    /// The reported time to colour at the planned temperature, s.
    pub fn time(&self) -> Option<f64> {
        self.timing.map(|t| t.to_colour())
    }
}

#[derive(Debug, Clone, PartialEq)]
pub struct Forecast {
    pub runs: Vec<RunForecast>,
    /// Plan-wide warnings, such as a station's session not fitting the lab period.
    pub warnings: Vec<Flag>,
}

impl Forecast {
    pub fn flagged(&self) -> bool {
        !self.warnings.is_empty() || self.runs.iter().any(|r| !r.warnings.is_empty())
    }
}

fn seconds(t: f64) -> String {
    if t >= 600.0 {
        format!("{:.1} min", t / 60.0)
    } else {
        format!("{t:.1} s")
    }
}

fn celsius(t: f64) -> String {
    format!("{:.1} °C", t - 273.15)
}

/// Forecast every run from its initial concentrations (species → mol/L, one list per run).
pub fn forecast(spec: &Spec, prior: &Prior, initial: &[Vec<(String, f64)>]) -> Forecast {
    let reaction = &prior.reaction;
    let settings = &prior.settings;
    let t = settings.temperature;
    let (cool, warm) = (t - settings.band, t + settings.band);
    let (short, long) = settings.window;
    let runs: Vec<RunForecast> = initial
        .iter()
        .map(|c0| {
            let mut warnings = Vec::new();
            let mut out = RunForecast {
                temperature: t,
                band: (cool, warm),
                timing: None,
                band_times: None,
                uses_visible: reaction.visible.is_some(),
                visible_range: None,
                conversions: Vec::new(),
                implied_rate: None,
                warnings: Vec::new(),
            };
            let kin = match RunKinetics::new(reaction, c0, spec.timing.concentration) {
                Ok(k) => k,
                Err(e) => {
                    let code = match e {
                        NoClock::Missing(_) => "no_reaction",
                        NoClock::Exhausted(_) => "no_clock",
                    };
                    out.warnings.push(Flag { code, message: e.to_string() });
                    return out;
                }
            };
            let at = kin.at(t);
            // The band: the warm end with the threshold at its low end (×/÷ its factor), the
            // cool end with it at its high end.
            let factor = reaction.visible.as_ref().map_or(1.0, |v| v.factor);
            let (at_warm, at_cool) = kin.band_ends(t, settings.band, factor);
            if factor > 1.0 {
                out.visible_range =
                    Some((kin.visible_wait(t, 1.0 / factor), kin.visible_wait(t, factor)));
            }
            let fast = at_warm.to_colour();
            let slow = at_cool.to_colour();
            let time = at.to_colour();
            // Each flag quotes the time at the temperature it names.
            if fast < short {
                let quoted = if time < short {
                    format!("{} at {} ({} at the warm end, {})", seconds(time), celsius(t), seconds(fast), celsius(warm))
                } else {
                    format!("{} at the warm end of the band ({})", seconds(fast), celsius(warm))
                };
                warnings.push(Flag {
                    code: "too_fast",
                    message: format!("predicted {quoted}, under the {} that can be timed well; use more timing reagent (a longer wait) or more dilute reactants", seconds(short)),
                });
            }
            if slow > long {
                let quoted = if time > long {
                    format!("{} at {} ({} at the cool end, {})", seconds(time), celsius(t), seconds(slow), celsius(cool))
                } else {
                    format!("{} at the cool end of the band ({})", seconds(slow), celsius(cool))
                };
                warnings.push(Flag {
                    code: "too_slow",
                    message: format!("predicted {quoted}, over the {} window; use less timing reagent (a shorter wait) or more concentrated reactants", seconds(long)),
                });
            }
            let accuracy = [at, at_warm, at_cool]
                .iter()
                .map(|t| t.relative_error)
                .fold(0.0, f64::max);
            if accuracy.is_nan() || accuracy > QUADRATURE_ACCEPTED {
                warnings.push(Flag {
                    code: "inaccurate_time",
                    message: format!("the clock-time integral reached a relative accuracy of only {} (wanted {QUADRATURE_ACCEPTED:e}); treat this run's time with caution and check its concentrations", crate::units::sig(accuracy, 2)),
                });
            }
            out.conversions = kin.conversions().map(|(s, c)| (s.to_string(), c)).collect();
            if let Some((s, c)) = out.max_conversion() {
                if c > MAX_CONVERSION {
                    warnings.push(Flag {
                        code: "high_conversion",
                        message: format!("{s} is {:.1} % used up by the clock; the initial-rate method assumes little conversion (under {:.0} %)", c * 100.0, MAX_CONVERSION * 100.0),
                    });
                }
            }
            out.implied_rate = Some(kin.rate_from_time(time));
            out.timing = Some(at);
            out.band_times = Some((fast, slow));
            out.warnings = warnings;
            out
        })
        .collect();

    let mut warnings = Vec::new();
    if let Some(period) = settings.lab_period {
        let trials = (spec.runs.len() as u32 * spec.replicates) as f64;
        let reaction_time: f64 = runs
            .iter()
            .filter_map(|r| r.band_times.map(|b| b.1))
            .sum::<f64>()
            * spec.replicates as f64;
        let session = reaction_time + trials * settings.handling;
        if session > period {
            warnings.push(Flag {
                code: "session_too_long",
                message: format!(
                    "one station's {trials} trials need about {:.0} min ({:.0} min of reaction at the cool end of the band plus {:.0} min handling), longer than the {:.0} min lab period",
                    session / 60.0,
                    reaction_time / 60.0,
                    trials * settings.handling / 60.0,
                    period / 60.0
                ),
            });
        }
    }
    Forecast { runs, warnings }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::error::SpecSource;
    use crate::spec::{load_for, Purpose};

    /// A forecast-only spec with rate = k [BrO3-][I-] (k = 1 M⁻¹ s⁻¹ at 21 °C, Ea 54 kJ/mol) and
    /// iodide regenerated while thiosulfate lasts, so t = ln(B/(B − ξc)) / (k [I-]) exactly.
    /// Acid (0.1 M) is consumed by the main reaction but is not in this rate law.
    fn spec(thio_mm: f64, runs: &[(&str, f64, f64)], band: &str, extra: &str) -> Spec {
        let mut text = format!(
            r#"
[plan]
title = "forecast check"
temperature = "21 °C"
temperature_band = "{band}"
replicates = 2

[timing]
species = "S2O3^2-"
concentration = "{thio_mm} mM"
{extra}

[reaction]
rate_species = "BrO3-"
main = "BrO3- + 6 I- + 6 H+ -> Br- + 3 I2 + 3 H2O"
clock = "I2 + 2 S2O3^2- -> 2 I- + S4O6^2-"

[[reaction.term]]
k = "1 M^-1 s^-1"
at = "21 °C"
activation_energy = "54 kJ/mol"
orders = {{ "BrO3-" = 1, "I-" = 1 }}
"#
        );
        for (name, b, i) in runs {
            text.push_str(&format!("\n[[run]]\nname = \"{name}\"\ntargets = {{ \"BrO3-\" = \"{b:e} M\", \"I-\" = \"{i:e} M\", \"H+\" = \"0.1 M\" }}\n"));
        }
        load_for(SpecSource::new("f.toml", text), Purpose::Forecast).unwrap()
    }

    fn run(spec: &Spec) -> Forecast {
        let initial: Vec<_> = spec
            .runs
            .iter()
            .map(|r| r.target_concentrations())
            .collect();
        forecast(spec, spec.prior.as_ref().unwrap(), &initial)
    }

    fn codes(f: &RunForecast) -> Vec<&'static str> {
        f.warnings.iter().map(|w| w.code).collect()
    }

    #[test]
    fn too_fast_and_too_slow_are_flagged() {
        // ξc = 0.06 mM / 6 = 1e-5 M. Fast: B = 0.125 mM, I = 10 mM: t = ln(1/0.92)/0.01 = 8.34 s
        // (analytic), under 15 s. Slow: B = 1 mM, I = 8.33 µM: t = ln(1/0.99)/8.33e-6 = 1206 s,
        // over 10 min. Middle: B = 1 mM, I = 0.2 mM: t = 50.25 s, inside at every temperature.
        let s = spec(
            0.06,
            &[
                ("fast", 1.25e-4, 0.01),
                ("slow", 1e-3, 8.333e-6),
                ("middle", 1e-3, 2e-4),
            ],
            "3 °C",
            "",
        );
        let f = run(&s);
        let t = |i: usize| f.runs[i].time().unwrap();
        approx::assert_relative_eq!(t(0), (1.0f64 / 0.92).ln() / 0.01, max_relative = 1e-9);
        assert!(t(0) < 9.0 && t(1) > 1200.0);
        assert_eq!(codes(&f.runs[0]), vec!["too_fast"]);
        assert_eq!(codes(&f.runs[1]), vec!["too_slow"]);
        assert!(codes(&f.runs[2]).is_empty());
        assert!(f.flagged());
    }

    #[test]
    fn a_band_that_crosses_the_window_is_flagged() {
        // 20.5 s at 21 °C, inside the window; at 26 °C k is exp(54000/R·(1/294.15 − 1/299.15))
        // = 1.446 times larger (Arrhenius), so about 14.2 s: under 15 s at the warm end.
        let s = spec(0.03, &[("edge", 1e-4, 2.5e-3)], "5 °C", "");
        let f = run(&s);
        let r = &f.runs[0];
        assert!(r.time().unwrap() > 15.0);
        assert!(r.band_times.unwrap().0 < 15.0);
        assert_eq!(codes(r), vec!["too_fast"]);
        assert!(r.warnings[0].message.contains("warm end"));
    }

    #[test]
    fn high_conversion_and_session_length() {
        // ξc = 1e-5 M of 5e-5 M bromate: 20 % used up, over the 10 % limit.
        let s = spec(
            0.06,
            &[("greedy", 5e-5, 2e-3)],
            "3 °C",
            "lab_period = \"5 min\"\nhandling_per_run = \"3 min\"",
        );
        let f = run(&s);
        assert!(codes(&f.runs[0]).contains(&"high_conversion"));
        // Two trials at 3 min handling each already exceed a 5 min period.
        assert_eq!(f.warnings.len(), 1);
        assert_eq!(f.warnings[0].code, "session_too_long");
    }

    #[test]
    fn exhausted_oxidant_has_no_clock() {
        // 0.6 mM thiosulfate needs 0.1 mM bromate; 0.05 mM runs out first.
        let s = spec(0.6, &[("never", 5e-5, 1e-2)], "3 °C", "");
        let f = run(&s);
        assert!(f.runs[0].time().is_none());
        assert_eq!(codes(&f.runs[0]), vec!["no_clock"]);
    }

    #[test]
    fn peroxide_preset_carries_the_published_constant() {
        // 0.69 L mol⁻¹ min⁻¹ at 25 °C (Liebhafsky & Mohammad, J. Am. Chem. Soc. 55, 3977, 1933)
        // = 0.0115 M⁻¹ s⁻¹.
        let text = r#"
[plan]
title = "preset check"
temperature = "25 °C"

[timing]
species = "S2O3^2-"
concentration = "1 mM"

[reaction]
preset = "peroxide-iodide"

[[run]]
name = "r"
targets = { "H2O2" = "10 mM", "I-" = "10 mM", "H+" = "0.1 M" }
"#;
        let s = load_for(SpecSource::new("p.toml", text), Purpose::Forecast).unwrap();
        let r = &s.prior.as_ref().unwrap().reaction;
        approx::assert_relative_eq!(r.terms[0].k_ref, 0.0115, max_relative = 1e-12);
        approx::assert_relative_eq!(r.terms[0].t_ref, 298.15);
        assert!(r.terms[0].source.as_deref().unwrap().contains("Liebhafsky"));
        // Both persulfate and bromate presets load and derive their ν (2 and 6; common practice).
        for (preset, nu) in [("persulfate-iodide", 2.0), ("bromate-iodide", 6.0)] {
            let t = text
                .replace("peroxide-iodide", preset)
                .replace("{ \"H2O2\" = \"10 mM\", \"I-\" = \"10 mM\", \"H+\" = \"0.1 M\" }", "{ \"S2O8^2-\" = \"10 mM\", \"BrO3-\" = \"10 mM\", \"I-\" = \"10 mM\", \"H+\" = \"0.1 M\" }");
            let s = load_for(SpecSource::new("p.toml", t), Purpose::Forecast).unwrap();
            approx::assert_relative_eq!(s.prior.unwrap().reaction.nu, nu);
        }
    }
}
