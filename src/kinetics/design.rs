//! Designing a run set before any lab work: the runs of a scheme around a base point, and how
//! well they will determine each order and ln k.
//!
//! For trials with relative (log) errors σᵢ, the fit of ln r = ln k + Σ nⱼ ln cⱼ has covariance
//! (Xᵀ W X)⁻¹ with rows X = [1, ln cⱼ …] and W = diag(1/σᵢ²). σᵢ combines the human timing
//! error, the glassware and stock uncertainty of the run (propagated when the spec lists its
//! stocks and glassware) and the unrecorded temperature scatter through Ea/(R T²).

use crate::kinetics::R;
use crate::spec::{Design, Prior, Run, Scheme, Spec, Target};
use nalgebra::DMatrix;

/// A designed run: name and targets (mol/L).
#[derive(Debug, Clone, PartialEq)]
pub struct DesignedRun {
    pub name: String,
    pub targets: Vec<(String, f64)>,
}

/// Expected precision of one parameter.
#[derive(Debug, Clone, PartialEq)]
pub struct Precision {
    /// "ln k" or the species of an order.
    pub name: String,
    /// Standard error from one station's trials.
    pub station: f64,
    /// From all stations pooled.
    pub class: f64,
}

#[derive(Debug, Clone, PartialEq)]
pub struct DesignReport {
    pub runs: Vec<DesignedRun>,
    /// σ of ln t per trial, per run.
    pub sigma: Vec<f64>,
    pub precision: Vec<Precision>,
    /// Species of the rate law the design never varies (their orders cannot be determined).
    pub not_varied: Vec<String>,
    pub warnings: Vec<String>,
    /// Predicted time at the planned temperature per run, when a prior is given.
    pub times: Vec<Option<f64>>,
}

fn trim(v: f64) -> String {
    let s = format!("{v:.4}");
    s.trim_end_matches('0').trim_end_matches('.').to_string()
}

/// The runs of the spec's `[design]` scheme.
pub fn generate(d: &Design) -> Vec<DesignedRun> {
    let base = &d.base;
    let mut runs = vec![DesignedRun {
        name: "base".into(),
        targets: base.clone(),
    }];
    let with = |j: usize, c: f64| -> Vec<(String, f64)> {
        base.iter()
            .enumerate()
            .map(|(i, (s, b))| (s.clone(), if i == j { c } else { *b }))
            .collect()
    };
    match d.scheme {
        Scheme::OneAtATime => {
            for (j, (s, b)) in base.iter().enumerate() {
                for m in &d.multipliers {
                    runs.push(DesignedRun {
                        name: format!("{s} x{}", trim(*m)),
                        targets: with(j, b * m),
                    });
                }
            }
        }
        Scheme::Levels => {
            for (s, values) in &d.levels {
                let j = base.iter().position(|(b, _)| b == s).expect("checked");
                for v in values {
                    runs.push(DesignedRun {
                        name: format!("{s} {}", crate::units::concentration(*v)),
                        targets: with(j, *v),
                    });
                }
            }
        }
        Scheme::Factorial => {
            let m = d.multipliers[0];
            runs.clear();
            for mask in 0u32..(1 << base.len()) {
                let targets: Vec<(String, f64)> = base
                    .iter()
                    .enumerate()
                    .map(|(j, (s, b))| (s.clone(), if mask & (1 << j) != 0 { b * m } else { *b }))
                    .collect();
                let name = base
                    .iter()
                    .enumerate()
                    .map(|(j, (s, _))| {
                        format!("{s} {}", if mask & (1 << j) != 0 { "high" } else { "low" })
                    })
                    .collect::<Vec<_>>()
                    .join(", ");
                runs.push(DesignedRun { name, targets });
            }
        }
    }
    runs
}

/// Standard errors of ln k and the orders for `runs` with per-trial log errors `sigma`,
/// `replicates` trials per run; None for parameters the design cannot identify.
pub fn standard_errors(
    runs: &[DesignedRun],
    sigma: &[f64],
    species: &[String],
    replicates: u32,
) -> (Vec<Option<f64>>, f64) {
    // Only species that take two or more values can be columns.
    let varied: Vec<usize> = (0..species.len())
        .filter(|&j| {
            let mut v: Vec<f64> = runs.iter().map(|r| conc(r, &species[j]).ln()).collect();
            v.sort_by(f64::total_cmp);
            v.dedup_by(|a, b| (*a - *b).abs() < 1e-9);
            v.len() >= 2
        })
        .collect();
    let p = 1 + varied.len();
    let mut xtwx = DMatrix::<f64>::zeros(p, p);
    for (r, s) in runs.iter().zip(sigma) {
        let mut row = vec![1.0];
        row.extend(varied.iter().map(|&j| conc(r, &species[j]).ln()));
        let w = replicates as f64 / (s * s);
        for a in 0..p {
            for b in 0..p {
                xtwx[(a, b)] += w * row[a] * row[b];
            }
        }
    }
    let eig = xtwx.clone().symmetric_eigen();
    let (min, max) = eig
        .eigenvalues
        .iter()
        .fold((f64::INFINITY, 0.0f64), |(lo, hi), v| {
            (lo.min(*v), hi.max(*v))
        });
    let condition = if min > 0.0 { max / min } else { f64::INFINITY };
    let inv = xtwx.try_inverse();
    let mut out = vec![None; 1 + species.len()];
    if let Some(inv) = inv.filter(|_| condition.is_finite() && condition < 1e12) {
        out[0] = Some(inv[(0, 0)].sqrt());
        for (k, &j) in varied.iter().enumerate() {
            out[1 + j] = Some(inv[(1 + k, 1 + k)].sqrt());
        }
    }
    (out, condition)
}

fn conc(r: &DesignedRun, species: &str) -> f64 {
    r.targets
        .iter()
        .find(|(s, _)| s == species)
        .map_or(f64::NAN, |(_, c)| *c)
}

/// The spec with its runs replaced by the designed ones (for solving and forecasting them).
pub fn with_runs(spec: &Spec, runs: &[DesignedRun]) -> Spec {
    let mut s = spec.clone();
    s.runs = runs
        .iter()
        .map(|r| Run {
            name: r.name.clone(),
            targets: r
                .targets
                .iter()
                .map(|(sp, c)| Target {
                    species: sp.clone(),
                    concentration: *c,
                    span: 0..0,
                })
                .collect(),
            note: None,
            span: 0..0,
        })
        .collect();
    s
}

/// How well the designed runs determine the rate law. `volumetric` is each run's relative
/// volumetric error (propagated through the glassware by the caller when the spec lists it, else
/// the spec's flat value) and `warnings` what the caller found on the way.
pub fn assess(
    spec: &Spec,
    d: &Design,
    runs: Vec<DesignedRun>,
    volumetric: &[f64],
    mut warnings: Vec<String>,
) -> DesignReport {
    let designed = with_runs(spec, &runs);
    let (species, temp_term): (Vec<String>, f64) = match &spec.prior {
        Some(Prior {
            reaction: r,
            settings: f,
        }) => {
            let sp = r.rate_law_species().iter().map(|s| s.to_string()).collect();
            // d ln k / dT = Ea / (R T²), summed over the terms' largest Ea.
            let ea = r
                .terms
                .iter()
                .filter_map(|t| t.activation_energy)
                .fold(0.0, f64::max);
            (
                sp,
                ea / (R * f.temperature * f.temperature) * d.temperature_spread,
            )
        }
        _ => (d.base.iter().map(|(s, _)| s.clone()).collect(), 0.0),
    };
    let sigma: Vec<f64> = volumetric
        .iter()
        .map(|v| (d.timing_error.powi(2) + v * v + temp_term * temp_term).sqrt())
        .collect();
    let (se, condition) = standard_errors(&runs, &sigma, &species, spec.replicates);
    let stations = (spec.stations as f64).sqrt();
    let mut precision = Vec::new();
    let mut not_varied = Vec::new();
    if let Some(s) = se[0] {
        precision.push(Precision {
            name: "ln k".into(),
            station: s,
            class: s / stations,
        });
    }
    // With the orders fixed at whole values (the usual classroom analysis), ln k is a weighted
    // mean of the trials: SE = 1/√(Σ wᵢ).
    let weight: f64 = sigma.iter().map(|s| spec.replicates as f64 / (s * s)).sum();
    let fixed = 1.0 / weight.sqrt();
    precision.push(Precision {
        name: "ln k, orders fixed".into(),
        station: fixed,
        class: fixed / stations,
    });
    for (j, sp) in species.iter().enumerate() {
        match se[1 + j] {
            Some(s) => {
                if s > 0.25 {
                    warnings.push(format!("the order in {sp} is poorly determined (±{s:.2} per station): widen its range or add replicates"));
                }
                precision.push(Precision {
                    name: sp.clone(),
                    station: s,
                    class: s / stations,
                });
            }
            None => not_varied.push(sp.clone()),
        }
    }
    if se[0].is_none() {
        warnings.push("the design cannot identify the rate law: its columns are collinear (two species always change together)".into());
    } else if condition > 1e8 {
        warnings.push(format!(
            "the design is poorly conditioned (condition number {condition:.1e})"
        ));
    }
    for sp in &not_varied {
        warnings.push(format!(
            "the design never varies {sp}: its order cannot be determined"
        ));
    }
    // Each designed run is forecast across the temperature band, and its flags (outside the
    // window at either end, high conversion, no clock) become the design's warnings.
    let times = match designed.prior.as_ref().map(|p| {
        crate::kinetics::forecast::forecast(
            &designed,
            p,
            &runs.iter().map(|r| r.targets.clone()).collect::<Vec<_>>(),
        )
    }) {
        Some(f) => {
            for (r, rf) in runs.iter().zip(&f.runs) {
                for w in &rf.warnings {
                    warnings.push(format!("run '{}': {}", r.name, w.message));
                }
            }
            for w in &f.warnings {
                warnings.push(w.message.clone());
            }
            f.runs.iter().map(|r| r.time()).collect()
        }
        None => vec![None; runs.len()],
    };
    DesignReport {
        runs,
        sigma,
        precision,
        not_varied,
        warnings,
        times,
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn ofat(r: u32, sigma: f64) -> Vec<Option<f64>> {
        let base = [("A", 0.01), ("B", 0.02), ("C", 0.05)];
        let mut runs = vec![DesignedRun {
            name: "base".into(),
            targets: base.iter().map(|(s, c)| (s.to_string(), *c)).collect(),
        }];
        for j in 0..3 {
            runs.push(DesignedRun {
                name: format!("x2 {j}"),
                targets: base
                    .iter()
                    .enumerate()
                    .map(|(i, (s, c))| (s.to_string(), if i == j { 2.0 * c } else { *c }))
                    .collect(),
            });
        }
        let species: Vec<String> = ["A", "B", "C"].iter().map(|s| s.to_string()).collect();
        standard_errors(&runs, &[sigma; 4], &species, r).0
    }

    #[test]
    fn one_at_a_time_variance_by_hand() {
        // Base plus each species doubled, r replicates, σ per trial: the design is saturated, so
        // each order is (ȳ_j − ȳ_base)/ln 2 and Var = σ²(1/r + 1/r)/ln²2 (hand computation from
        // σ²(XᵀX)⁻¹): SE = σ √(2/r) / ln 2 = 0.02 × 1 / 0.6931 = 0.02885 for σ = 0.02, r = 2.
        let se = ofat(2, 0.02);
        for s in &se[1..4] {
            approx::assert_relative_eq!(
                s.unwrap(),
                0.02 * (2.0f64 / 2.0).sqrt() / 2f64.ln(),
                max_relative = 1e-9
            );
        }
        // Quadrupling the replicates halves every standard error.
        let se4 = ofat(8, 0.02);
        approx::assert_relative_eq!(se4[1].unwrap(), se[1].unwrap() / 2.0, max_relative = 1e-9);
    }

    #[test]
    fn unvaried_species_is_not_identified() {
        let runs = vec![
            DesignedRun {
                name: "a".into(),
                targets: vec![("A".into(), 0.01), ("B".into(), 0.02)],
            },
            DesignedRun {
                name: "b".into(),
                targets: vec![("A".into(), 0.02), ("B".into(), 0.02)],
            },
        ];
        let species = vec!["A".to_string(), "B".to_string()];
        let (se, _) = standard_errors(&runs, &[0.02, 0.02], &species, 2);
        assert!(se[1].is_some());
        assert!(se[2].is_none());
    }
}
