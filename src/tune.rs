//! Tuning the clock: the one timing-reagent concentration (the same in every run) that puts
//! every run inside the timing window at every temperature of the band with the most margin,
//! measured in log time (geometric centring). Kept small against the reactants: no run may use
//! up more than the conversion limit of a reactant by the clock.

use crate::forecast::MAX_CONVERSION;
use crate::kinetics::RunKinetics;
use crate::spec::Spec;

#[derive(Debug, Clone, PartialEq)]
pub struct RunTimes {
    pub name: String,
    /// Warm end, planned temperature, cool end (s).
    pub fast: f64,
    pub at: f64,
    pub slow: f64,
}

#[derive(Debug, Clone, PartialEq)]
pub struct Tuning {
    /// The timing-reagent concentration chosen (mol/L).
    pub concentration: f64,
    /// Smallest log margin to the window over all runs and the band (ln units; > 0 fits).
    pub margin: f64,
    /// Largest concentration the conversion limit allows (mol/L).
    pub limit: f64,
    pub runs: Vec<RunTimes>,
    /// When no value fits: what to change, in words.
    pub advice: Vec<String>,
}

/// Why no tuning is possible at all.
#[derive(Debug, Clone, PartialEq)]
pub struct NoTuning(pub String);

fn times(spec: &Spec, initial: &[Vec<(String, f64)>], c: f64) -> Option<Vec<RunTimes>> {
    let reaction = spec.reaction.as_ref()?;
    let f = spec.forecast.as_ref()?;
    spec.runs
        .iter()
        .zip(initial)
        .map(|(r, c0)| {
            let mut c0 = c0.clone();
            if let Some(e) = c0.iter_mut().find(|(s, _)| *s == spec.timing.species) {
                e.1 = c;
            }
            let k = RunKinetics::new(reaction, &c0, c).ok()?;
            Some(RunTimes {
                name: r.name.clone(),
                fast: k.at(f.temperature + f.band).to_colour(),
                at: k.at(f.temperature).to_colour(),
                slow: k.at(f.temperature - f.band).to_colour(),
            })
        })
        .collect()
}

/// The smallest log margin to the window (negative when some run falls outside).
fn margin(spec: &Spec, runs: &[RunTimes]) -> f64 {
    let (short, long) = spec.forecast.as_ref().expect("settings").window;
    runs.iter()
        .map(|r| (r.fast / short).ln().min((long / r.slow).ln()))
        .fold(f64::INFINITY, f64::min)
}

/// The concentration at which the largest conversion of any reactant reaches the limit.
fn conversion_limit(spec: &Spec, initial: &[Vec<(String, f64)>]) -> Result<f64, NoTuning> {
    let reaction = spec
        .reaction
        .as_ref()
        .ok_or_else(|| NoTuning("tuning needs the prior rate law in [reaction]".into()))?;
    // Conversion is proportional to the timing concentration: scale from a tiny probe.
    let probe = 1e-9;
    let mut worst: f64 = 0.0;
    for c0 in initial {
        let k = RunKinetics::new(reaction, c0, probe)
            .map_err(|e| NoTuning(format!("a run has no clock: {e}")))?;
        worst = worst.max(k.conversions().map(|(_, x)| x).fold(0.0, f64::max));
    }
    Ok(if worst > 0.0 {
        MAX_CONVERSION * probe / worst
    } else {
        1.0
    })
}

/// Find the best timing concentration.
pub fn tune(spec: &Spec, initial: &[Vec<(String, f64)>]) -> Result<Tuning, NoTuning> {
    let limit = conversion_limit(spec, initial)?;
    let (short, long) = spec.forecast.as_ref().expect("settings").window;
    let score = |ln_c: f64| {
        times(spec, initial, ln_c.exp()).map_or(f64::NEG_INFINITY, |r| margin(spec, &r))
    };
    // Golden-section search on ln c over six decades below the limit; the margin rises and then
    // falls with c (faster runs gain, slower runs lose), so it is unimodal.
    let (mut a, mut b) = (limit.ln() - 6.0 * std::f64::consts::LN_10, limit.ln());
    let g = (5f64.sqrt() - 1.0) / 2.0;
    let mut c1 = b - g * (b - a);
    let mut c2 = a + g * (b - a);
    let (mut f1, mut f2) = (score(c1), score(c2));
    for _ in 0..120 {
        if f1 < f2 {
            a = c1;
            c1 = c2;
            f1 = f2;
            c2 = a + g * (b - a);
            f2 = score(c2);
        } else {
            b = c2;
            c2 = c1;
            f2 = f1;
            c1 = b - g * (b - a);
            f1 = score(c1);
        }
    }
    let best = if f1 >= f2 { c1 } else { c2 };
    // The limit itself may be best (every run still too slow below it).
    let best = if score(limit.ln()) > score(best) {
        limit.ln()
    } else {
        best
    };
    let concentration = best.exp();
    let runs = times(spec, initial, concentration)
        .ok_or_else(|| NoTuning("a run has no clock at the best concentration".into()))?;
    let m = margin(spec, &runs);
    let mut advice = Vec::new();
    if m < 0.0 {
        let fastest = runs
            .iter()
            .min_by(|x, y| x.fast.total_cmp(&y.fast))
            .expect("runs");
        let slowest = runs
            .iter()
            .max_by(|x, y| x.slow.total_cmp(&y.slow))
            .expect("runs");
        let spread = slowest.slow / fastest.fast;
        let window = long / short;
        let shrink = spread / window;
        advice.push(format!(
            "no single timing concentration fits: the runs span {:.1}x in time (from '{}' at the warm end to '{}' at the cool end), the window only {:.1}x",
            spread, fastest.name, slowest.name, window
        ));
        // Which species makes the span: compare the two extreme runs.
        if let Some(reaction) = &spec.reaction {
            let fi = spec
                .runs
                .iter()
                .position(|r| r.name == fastest.name)
                .expect("run");
            let si = spec
                .runs
                .iter()
                .position(|r| r.name == slowest.name)
                .expect("run");
            let conc = |i: usize, sp: &str| {
                initial[i]
                    .iter()
                    .find(|(s, _)| s == sp)
                    .map_or(0.0, |(_, c)| *c)
            };
            // Effective order of each species that differs between them: −∂ln t/∂ln c at the
            // fast run (works for several rate-law terms too).
            let ln_t = |c0: &[(String, f64)]| {
                RunKinetics::new(reaction, c0, concentration).ok().map(|k| {
                    k.at(spec.forecast.as_ref().expect("settings").temperature)
                        .to_colour()
                        .ln()
                })
            };
            let mut parts: Vec<(f64, String, f64, f64)> = Vec::new();
            for (sp, c_fast) in &initial[fi] {
                let ratio = c_fast / conc(si, sp);
                if !(ratio.is_finite() && ratio > 0.0)
                    || (ratio - 1.0).abs() < 1e-9
                    || *sp == spec.timing.species
                {
                    continue;
                }
                let bumped = |f: f64| {
                    let mut c = initial[fi].clone();
                    if let Some(e) = c.iter_mut().find(|(s, _)| s == sp) {
                        e.1 *= f;
                    }
                    ln_t(&c)
                };
                if let (Some(up), Some(down)) = (bumped(1.001), bumped(1.0 / 1.001)) {
                    let n = -(up - down) / (2.0 * 1.001f64.ln());
                    if (ratio.ln() * n).abs() > 1e-6 {
                        parts.push(((ratio.ln() * n).abs(), sp.clone(), ratio, n));
                    }
                }
            }
            parts.sort_by(|a, b| b.0.total_cmp(&a.0));
            if let Some((_, sp, ratio, n)) = parts.first() {
                let narrower = ratio.powf(1.0 - shrink.ln() / (ratio.ln() * n).abs());
                advice.push(format!(
                    "narrowest change: {sp} differs x{:.2} between those runs; bring it to about x{:.2} (a smaller multiplier for {sp}), or widen the window",
                    ratio.max(1.0 / ratio),
                    narrower.max(1.0 / narrower)
                ));
            }
        }
    }
    Ok(Tuning {
        concentration,
        margin: m,
        limit,
        runs,
        advice,
    })
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::error::SpecSource;
    use crate::spec::{load_for, Purpose};

    #[test]
    fn centres_the_runs_in_the_window_in_log_time() {
        // rate = k[BrO3-][I-], k = 0.1 M⁻¹ s⁻¹, no temperature dependence, iodide regenerated:
        // t(c) = ln(B / (B − c/6)) / (k I) (analytic). Two runs, I = 1 mM and 4 mM. The best c
        // balances the fast run at the short end and the slow run at the long end in log time:
        // t_fast(c) · t_slow(c) = 15 s · 600 s. Solved here independently by bisection.
        let text = r#"
[plan]
title = "tune check"
temperature = "25 °C"
temperature_band = "0 °C"

[timing]
species = "S2O3^2-"
concentration = "0.1 mM"

[reaction]
rate_species = "BrO3-"
main = "BrO3- + 6 I- + 6 H+ -> Br- + 3 I2 + 3 H2O"
clock = "I2 + 2 S2O3^2- -> 2 I- + S4O6^2-"
[[reaction.term]]
k = "0.1 M^-1 s^-1"
at = "25 °C"
orders = { "BrO3-" = 1, "I-" = 1 }

[[run]]
name = "slow"
targets = { "BrO3-" = "10 mM", "I-" = "1 mM", "H+" = "1 M" }

[[run]]
name = "fast"
targets = { "BrO3-" = "10 mM", "I-" = "4 mM", "H+" = "1 M" }
"#;
        let spec = load_for(SpecSource::new("t.toml", text), Purpose::Forecast).unwrap();
        let initial: Vec<_> = spec
            .runs
            .iter()
            .map(|r| r.target_concentrations())
            .collect();
        let t = |c: f64, i: f64| (0.01f64 / (0.01 - c / 6.0)).ln() / (0.1 * i);
        let (mut lo, mut hi) = (1e-9f64, 5e-3f64);
        for _ in 0..200 {
            let mid = (lo * hi).sqrt();
            if t(mid, 4e-3) * t(mid, 1e-3) < 15.0 * 600.0 {
                lo = mid
            } else {
                hi = mid
            }
        }
        let tuned = tune(&spec, &initial).unwrap();
        approx::assert_relative_eq!(tuned.concentration, lo, max_relative = 1e-5);
        assert!(tuned.margin > 0.0 && tuned.advice.is_empty());
        // The conversion limit: 10 % of 10 mM bromate at ξ = c/6 gives c ≤ 6 mM.
        approx::assert_relative_eq!(tuned.limit, 6e-3, max_relative = 1e-6);
    }
}
