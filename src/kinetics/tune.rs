//! Tuning the clock: the one timing-reagent concentration (the same in every run) that puts
//! every run inside the timing window at every temperature of the band with the most margin,
//! measured in log time (geometric centring). Kept small against the reactants: no run may use
//! up more than the conversion limit of a reactant by the clock.

use crate::kinetics::forecast::MAX_CONVERSION;
use crate::kinetics::RunKinetics;
use crate::spec::{Prior, Spec};

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

fn times(
    spec: &Spec,
    prior: &Prior,
    initial: &[Vec<(String, f64)>],
    c: f64,
) -> Option<Vec<RunTimes>> {
    let reaction = &prior.reaction;
    let f = &prior.settings;
    spec.runs
        .iter()
        .zip(initial)
        .map(|(r, c0)| {
            let mut c0 = c0.clone();
            if let Some(e) = c0.iter_mut().find(|(s, _)| *s == spec.timing.species) {
                e.1 = c;
            }
            let k = RunKinetics::new(reaction, &c0, c).ok()?;
            // The same band as the forecast's: temperature and the visible threshold's factor.
            let factor = reaction.visible.as_ref().map_or(1.0, |v| v.factor);
            let (fast, slow) = k.band_ends(f.temperature, f.band, factor);
            Some(RunTimes {
                name: r.name.clone(),
                fast: fast.to_colour(),
                at: k.at(f.temperature).to_colour(),
                slow: slow.to_colour(),
            })
        })
        .collect()
}

/// The smallest log margin to the window (negative when some run falls outside).
fn margin(prior: &Prior, runs: &[RunTimes]) -> f64 {
    let (short, long) = prior.settings.window;
    runs.iter()
        .map(|r| (r.fast / short).ln().min((long / r.slow).ln()))
        .fold(f64::INFINITY, f64::min)
}

/// The concentration at which the largest conversion of any reactant reaches the limit.
fn conversion_limit(prior: &Prior, initial: &[Vec<(String, f64)>]) -> Result<f64, NoTuning> {
    let reaction = &prior.reaction;
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
/// The timing concentration with the most margin, and that margin (ln; ≥ 0 fits).
fn best_concentration(
    spec: &Spec,
    prior: &Prior,
    initial: &[Vec<(String, f64)>],
    limit: f64,
) -> (f64, f64) {
    let score = |ln_c: f64| {
        times(spec, prior, initial, ln_c.exp()).map_or(f64::NEG_INFINITY, |r| margin(prior, &r))
    };
    let (mut a, mut b) = (limit.ln() - 6.0 * std::f64::consts::LN_10, limit.ln());
    let g = (5f64.sqrt() - 1.0) / 2.0;
    let mut c1 = b - g * (b - a);
    let mut c2 = a + g * (b - a);
    let (mut f1, mut f2) = (score(c1), score(c2));
    for _ in 0..GOLDEN_STEPS {
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
    let (best, at_best) = if f1 >= f2 { (c1, f1) } else { (c2, f2) };
    let at_limit = score(limit.ln());
    if at_limit > at_best {
        (limit, at_limit)
    } else {
        (best.exp(), at_best)
    }
}

/// Golden-section steps over six decades of concentration: 120 narrow it to about 1e-24 in ln.
const GOLDEN_STEPS: usize = 120;

/// The run set with the multipliers of `species` narrowed: each concentration c becomes
/// g·(c/g)^α, g the geometric mean of that species over the runs, rounded to three figures.
fn narrowed(
    initial: &[Vec<(String, f64)>],
    species: &[String],
    alpha: f64,
) -> Vec<Vec<(String, f64)>> {
    let mut out = initial.to_vec();
    for sp in species {
        let logs: Vec<f64> = initial
            .iter()
            .filter_map(|c| c.iter().find(|(s, _)| s == sp).map(|(_, v)| v.ln()))
            .collect();
        if logs.is_empty() {
            continue;
        }
        let g = logs.iter().sum::<f64>() / logs.len() as f64;
        for run in &mut out {
            if let Some(e) = run.iter_mut().find(|(s, _)| s == sp) {
                let v = (g + alpha * (e.1.ln() - g)).exp();
                let mag = 10f64.powi(v.log10().floor() as i32 - 2);
                e.1 = (v / mag).round() * mag;
            }
        }
    }
    out
}

/// When no timing concentration fits: the narrowing of the run set that does, found by
/// re-running the tuning on the narrowed set (so the advice is tested before it is given).
fn advise(
    spec: &Spec,
    prior: &Prior,
    initial: &[Vec<(String, f64)>],
    runs: &[RunTimes],
    limit: f64,
) -> Vec<String> {
    let (short, long) = prior.settings.window;
    let fastest = runs
        .iter()
        .min_by(|x, y| x.fast.total_cmp(&y.fast))
        .expect("runs");
    let slowest = runs
        .iter()
        .max_by(|x, y| x.slow.total_cmp(&y.slow))
        .expect("runs");
    let mut advice = vec![format!(
        "no single timing concentration fits: the runs span {:.1}x in time (from '{}' at the warm end to '{}' at the cool end), the window only {:.1}x",
        slowest.slow / fastest.fast,
        fastest.name,
        slowest.name,
        long / short
    )];
    // Species the runs vary, the timing species aside, most spread first.
    let mut varied: Vec<(f64, String)> = Vec::new();
    for (sp, _) in initial.first().map(|c| c.as_slice()).unwrap_or(&[]) {
        if *sp == spec.timing.species {
            continue;
        }
        let logs: Vec<f64> = initial
            .iter()
            .filter_map(|c| c.iter().find(|(s, _)| s == sp).map(|(_, v)| v.ln()))
            .collect();
        let spread = logs.iter().cloned().fold(f64::NEG_INFINITY, f64::max)
            - logs.iter().cloned().fold(f64::INFINITY, f64::min);
        if spread > 1e-9 {
            varied.push((spread, sp.clone()));
        }
    }
    varied.sort_by(|a, b| b.0.total_cmp(&a.0).then(a.1.cmp(&b.1)));
    let fits = |set: &[Vec<(String, f64)>]| {
        let limit = conversion_limit(prior, set).unwrap_or(limit);
        best_concentration(spec, prior, set, limit).1 >= 0.0
    };
    let mut candidates: Vec<Vec<String>> = varied.iter().map(|(_, s)| vec![s.clone()]).collect();
    if varied.len() > 1 {
        candidates.push(varied.iter().map(|(_, s)| s.clone()).collect());
    }
    for group in candidates {
        if !fits(&narrowed(initial, &group, 0.0)) {
            continue;
        }
        // The widest narrowing that still fits (bisection on α, 30 steps).
        let (mut lo, mut hi) = (0.0, 1.0);
        for _ in 0..30 {
            let mid = 0.5 * (lo + hi);
            if fits(&narrowed(initial, &group, mid)) {
                lo = mid;
            } else {
                hi = mid;
            }
        }
        let set = narrowed(initial, &group, lo);
        let (c, _) = best_concentration(
            spec,
            prior,
            &set,
            conversion_limit(prior, &set).unwrap_or(limit),
        );
        let how = if group.len() == 1 {
            format!("narrow the spread of {} alone", group[0])
        } else {
            format!(
                "no one species can close the gap: narrow {} together",
                group.join(", ")
            )
        };
        let mut changes = Vec::new();
        for (run, (before, after)) in spec.runs.iter().zip(initial.iter().zip(&set)) {
            let diffs: Vec<String> = after
                .iter()
                .zip(before)
                .filter(|((s, a), (_, b))| group.contains(s) && (a - b).abs() > 1e-12 * b.abs())
                .map(|((s, a), _)| format!("\"{s}\" = \"{}\"", crate::units::concentration(*a)))
                .collect();
            if !diffs.is_empty() {
                changes.push(format!("'{}': {}", run.name, diffs.join(", ")));
            }
        }
        advice.push(format!(
            "{how} (multipliers to the {:.2} power), e.g. targets {}; then the timing concentration {} fits every run (checked by re-running the tuning on those targets)",
            lo,
            changes.join("; "),
            crate::units::concentration(c)
        ));
        return advice;
    }
    advice.push(
        "even identical runs would not fit: the temperature band alone spans more than the window; narrow temperature_band (control the room) or widen the window".into(),
    );
    advice
}

pub fn tune(
    spec: &Spec,
    prior: &Prior,
    initial: &[Vec<(String, f64)>],
) -> Result<Tuning, NoTuning> {
    let limit = conversion_limit(prior, initial)?;
    let (concentration, _) = best_concentration(spec, prior, initial, limit);
    tuned_at(spec, prior, initial, concentration, limit)
}

/// As [`tune`], for a bench whose glassware delivers only some timing volumes: of the
/// concentrations `deliverable` gives near the best one (the best itself when it can be
/// delivered), the one with the widest margin within the conversion limit. When none is
/// offered, the best concentration as [`tune`] finds it.
pub fn tune_deliverable(
    spec: &Spec,
    prior: &Prior,
    initial: &[Vec<(String, f64)>],
    deliverable: impl Fn(f64) -> Vec<f64>,
) -> Result<Tuning, NoTuning> {
    let limit = conversion_limit(prior, initial)?;
    let (best, _) = best_concentration(spec, prior, initial, limit);
    let chosen = deliverable(best)
        .into_iter()
        .filter(|&c| c > 0.0 && c <= limit * (1.0 + 1e-9))
        .filter_map(|c| times(spec, prior, initial, c).map(|r| (c, margin(prior, &r))))
        .max_by(|a, b| a.1.total_cmp(&b.1))
        .map_or(best, |(c, _)| c);
    tuned_at(spec, prior, initial, chosen, limit)
}

fn tuned_at(
    spec: &Spec,
    prior: &Prior,
    initial: &[Vec<(String, f64)>],
    concentration: f64,
    limit: f64,
) -> Result<Tuning, NoTuning> {
    let runs = times(spec, prior, initial, concentration)
        .ok_or_else(|| NoTuning("a run has no clock at the best concentration".into()))?;
    let m = margin(prior, &runs);
    let mut advice = Vec::new();
    if m < 0.0 {
        advice = advise(spec, prior, initial, &runs, limit);
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
        let tuned = tune(&spec, spec.prior.as_ref().unwrap(), &initial).unwrap();
        approx::assert_relative_eq!(tuned.concentration, lo, max_relative = 1e-5);
        assert!(tuned.margin > 0.0 && tuned.advice.is_empty());
        // The conversion limit: 10 % of 10 mM bromate at ξ = c/6 gives c ≤ 6 mM.
        approx::assert_relative_eq!(tuned.limit, 6e-3, max_relative = 1e-6);
    }
}
