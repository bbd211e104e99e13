//! The forecast stage: predicted time to colour for every run at the planned temperature and
//! across the temperature band, checked against the timing window, the initial-rate
//! assumption (small conversion) and the lab period. A forecast is a planning aid from a prior
//! rate law, never a guarantee.

use crate::kinetics::{NoClock, RunKinetics, Timing};
use crate::solve::Flag;
use crate::spec::Spec;

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
    /// Fraction of each reactant used up at the clock.
    pub conversions: Vec<(String, f64)>,
    /// The rate (M/s) students would compute from the predicted time, [timing]₀/(ν t).
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
/// Returns None when the spec has no rate law.
pub fn forecast(spec: &Spec, initial: &[Vec<(String, f64)>]) -> Option<Forecast> {
    let reaction = spec.reaction.as_ref()?;
    let settings = spec.forecast.as_ref()?;
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
            let fast = kin.at(warm).to_colour();
            let slow = kin.at(cool).to_colour();
            let time = at.to_colour();
            if fast < short {
                let when = if time < short { format!("at {}", celsius(t)) } else { format!("at the warm end of the band ({})", celsius(warm)) };
                warnings.push(Flag {
                    code: "too_fast",
                    message: format!("predicted {} {when}, under the {} that can be timed well; use less timing reagent or more dilute reactants", seconds(fast.min(time)), seconds(short)),
                });
            }
            if slow > long {
                let when = if time > long { format!("at {}", celsius(t)) } else { format!("at the cool end of the band ({})", celsius(cool)) };
                warnings.push(Flag {
                    code: "too_slow",
                    message: format!("predicted {} {when}, over the {} window; use less timing reagent or more concentrated reactants", seconds(slow.max(time)), seconds(long)),
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
    Some(Forecast { runs, warnings })
}
