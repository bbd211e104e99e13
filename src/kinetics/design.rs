//! Designing a run set before any lab work: the runs of a scheme around a base point, and how
//! well they will determine each order and ln k.
//!
//! Each station fits ln r = ln k + Σ nⱼ ln cⱼ to its trials by weighted least squares, so its
//! estimates are β̂ = A y with A = (XᵀWX)⁻¹XᵀW (rows X = [1, ln cⱼ …], one per trial,
//! W = diag(1/σᵢ²)). The trials' errors are not independent: every station uses the same stock
//! flasks (one draw per stock for the whole lab), a station keeps its own glassware all
//! period (one calibration error per device per station), and only the readings, the stopwatch
//! and the temperature scatter are drawn afresh in each trial. With Σ = Σ_lab + Σ_station +
//! Σ_trial over one station's trials,
//!
//!   Cov(β̂) per station = A Σ Aᵀ,   pooled over S stations = A (Σ_lab + (Σ_station + Σ_trial)/S) Aᵀ,
//!
//! so the lab-wide part sets a floor that no number of stations lowers. A thermometer's offset
//! is one draw per station and enters only k corrected to the reference temperature.

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
    /// "ln k at 1 M", "ln k at centre", "ln k, orders fixed", "ln k at … °C, orders fixed",
    /// or the species of an order.
    pub name: String,
    /// Standard error from one station's trials.
    pub station: f64,
    /// From all stations pooled.
    pub class: f64,
    /// The part of the pooled standard error that the shared stock flasks alone give: no
    /// number of stations lowers it.
    pub lab_wide: f64,
}

/// One designed run's error sources as contributions to ln t of one trial (k = 1).
#[derive(Debug, Clone, PartialEq, Default)]
pub struct RunErrors {
    /// Shared by the whole lab, one draw per stock flask: (stock, ∂ln t per standard error).
    pub lab: Vec<(String, f64)>,
    /// Shared by a station's trials, one draw per device per station: (device, ∂ln t).
    pub station: Vec<(String, f64)>,
    /// σ of ln t from each trial's own deliveries (readings, a piston pipette's random error).
    pub trial: f64,
    /// The lab-wide stocks that standardizing would improve (their uncertainty is well above
    /// what a titration gives).
    pub standardizable: Vec<String>,
}

/// σ of ln t by how far it is shared, for one run.
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub struct SigmaParts {
    pub lab: f64,
    pub station: f64,
    pub trial: f64,
}

impl SigmaParts {
    pub fn total(&self) -> f64 {
        (self.lab.powi(2) + self.station.powi(2) + self.trial.powi(2)).sqrt()
    }
}

#[derive(Debug, Clone, PartialEq)]
pub struct DesignReport {
    pub runs: Vec<DesignedRun>,
    /// σ of ln t of one trial, per run (all sources).
    pub sigma: Vec<f64>,
    /// The same by how far each part is shared.
    pub sigma_parts: Vec<SigmaParts>,
    /// The design's centre: the geometric mean of each species over the runs (mol/L).
    pub centre: Vec<(String, f64)>,
    /// Standard uncertainty (K) of a station thermometer's offset.
    pub thermometer: f64,
    pub precision: Vec<Precision>,
    /// Species of the rate law the design never varies (their orders cannot be determined).
    pub not_varied: Vec<String>,
    pub warnings: Vec<String>,
    /// What would improve the design without being wrong as it is (standardizing a stock).
    pub advice: Vec<String>,
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

/// The parts of one station's fit: which species are columns, the estimator A (p × trials),
/// and the trial rows' sources.
struct Fit {
    /// Indices into the species of the columns after the intercept.
    varied: Vec<usize>,
    /// β̂ = A y, rows: intercept then the varied species' orders.
    a: DMatrix<f64>,
    /// Weights of the trials, for the fixed-order mean.
    w: Vec<f64>,
    condition: f64,
}

/// The error model of one station's trials (replicates of each run in turn).
pub struct Trials<'a> {
    pub runs: &'a [DesignedRun],
    pub errors: &'a [RunErrors],
    /// σ of ln t drawn afresh in every trial besides its deliveries: stopwatch and temperature
    /// scatter, combined.
    pub fresh: f64,
    pub replicates: u32,
}

impl Trials<'_> {
    fn rows(&self) -> impl Iterator<Item = usize> + '_ {
        (0..self.runs.len()).flat_map(move |i| std::iter::repeat_n(i, self.replicates as usize))
    }

    fn parts(&self, i: usize) -> SigmaParts {
        let e = &self.errors[i];
        let norm = |v: &[(String, f64)]| v.iter().map(|x| x.1 * x.1).sum::<f64>().sqrt();
        SigmaParts {
            lab: norm(&e.lab),
            station: norm(&e.station),
            trial: (self.fresh.powi(2) + e.trial.powi(2)).sqrt(),
        }
    }

    /// The trials × sources matrix of a shared group (lab or station), sources in order of
    /// first appearance.
    fn shared(&self, pick: impl Fn(&RunErrors) -> &[(String, f64)]) -> DMatrix<f64> {
        let mut names: Vec<&str> = Vec::new();
        for e in self.errors {
            for (n, _) in pick(e) {
                if !names.contains(&n.as_str()) {
                    names.push(n);
                }
            }
        }
        let rows: Vec<usize> = self.rows().collect();
        DMatrix::from_fn(rows.len(), names.len(), |r, c| {
            pick(&self.errors[rows[r]])
                .iter()
                .find(|(n, _)| n == names[c])
                .map_or(0.0, |x| x.1)
        })
    }

    fn fit(&self, species: &[String]) -> Option<Fit> {
        // Only species that take two or more values can be columns.
        let varied: Vec<usize> = (0..species.len())
            .filter(|&j| {
                let mut v: Vec<f64> = self
                    .runs
                    .iter()
                    .map(|r| conc(r, &species[j]).ln())
                    .collect();
                v.sort_by(f64::total_cmp);
                v.dedup_by(|a, b| (*a - *b).abs() < 1e-9);
                v.len() >= 2
            })
            .collect();
        let rows: Vec<usize> = self.rows().collect();
        let p = 1 + varied.len();
        let x = DMatrix::from_fn(rows.len(), p, |r, c| match c {
            0 => 1.0,
            _ => conc(&self.runs[rows[r]], &species[varied[c - 1]]).ln(),
        });
        let w: Vec<f64> = rows
            .iter()
            .map(|&i| 1.0 / self.parts(i).total().powi(2))
            .collect();
        let xtw = DMatrix::from_fn(p, rows.len(), |c, r| x[(r, c)] * w[r]);
        let xtwx = &xtw * &x;
        let eig = xtwx.clone().symmetric_eigen();
        let (min, max) = eig
            .eigenvalues
            .iter()
            .fold((f64::INFINITY, 0.0f64), |(lo, hi), v| {
                (lo.min(*v), hi.max(*v))
            });
        let condition = if min > 0.0 { max / min } else { f64::INFINITY };
        let inv = xtwx
            .try_inverse()
            .filter(|_| condition.is_finite() && condition < 1e12);
        Some(Fit {
            varied,
            a: inv.map(|m| m * xtw)?,
            w,
            condition,
        })
    }
}

/// Variances of one linear estimate cᵀy of a station's trials: (lab-wide, station-wide,
/// per trial).
fn variance_parts(t: &Trials, lab: &DMatrix<f64>, station: &DMatrix<f64>, c: &[f64]) -> [f64; 3] {
    let along = |m: &DMatrix<f64>| -> f64 {
        (0..m.ncols())
            .map(|k| {
                (0..m.nrows())
                    .map(|r| c[r] * m[(r, k)])
                    .sum::<f64>()
                    .powi(2)
            })
            .sum()
    };
    let trial: f64 = t
        .rows()
        .enumerate()
        .map(|(r, i)| (c[r] * t.parts(i).trial).powi(2))
        .sum();
    [along(lab), along(station), trial]
}

/// A precision entry from variance parts, with an extra station-wide variance.
fn precision_of(name: String, v: [f64; 3], extra_station: f64, stations: u32) -> Precision {
    let s = stations as f64;
    let station = v[1] + extra_station;
    Precision {
        name,
        station: (v[0] + station + v[2]).sqrt(),
        class: (v[0] + (station + v[2]) / s).sqrt(),
        lab_wide: v[0].sqrt(),
    }
}

/// Standard errors of ln k (at 1 M) and the orders for `runs` with independent per-trial log
/// errors `sigma` and `replicates` trials per run: (XᵀWX)⁻¹. None for parameters the design
/// cannot identify; the condition number of XᵀWX.
pub fn standard_errors(
    runs: &[DesignedRun],
    sigma: &[f64],
    species: &[String],
    replicates: u32,
) -> (Vec<Option<f64>>, f64) {
    let errors: Vec<RunErrors> = sigma
        .iter()
        .map(|s| RunErrors {
            trial: *s,
            ..RunErrors::default()
        })
        .collect();
    let t = Trials {
        runs,
        errors: &errors,
        fresh: 0.0,
        replicates,
    };
    let mut out = vec![None; 1 + species.len()];
    let Some(fit) = t.fit(species) else {
        return (out, f64::INFINITY);
    };
    let none = DMatrix::zeros(fit.w.len(), 0);
    let se = |row: usize| {
        let c: Vec<f64> = fit.a.row(row).iter().copied().collect();
        variance_parts(&t, &none, &none, &c)[2].sqrt()
    };
    out[0] = Some(se(0));
    for (k, &j) in fit.varied.iter().enumerate() {
        out[1 + j] = Some(se(1 + k));
    }
    (out, fit.condition)
}

/// The lab-wide sources in the order [`Trials::shared`] lays them out.
fn lab_names(errors: &[RunErrors]) -> Vec<String> {
    let mut names: Vec<String> = Vec::new();
    for e in errors {
        for (n, _) in &e.lab {
            if !names.contains(n) {
                names.push(n.clone());
            }
        }
    }
    names
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

/// How well the designed runs determine the rate law. `errors` are each run's error sources
/// (found through the glassware and stocks by the caller when the spec lists them, else the
/// spec's flat volumetric error per trial) and `warnings` what the caller found on the way.
pub fn assess(
    spec: &Spec,
    d: &Design,
    runs: Vec<DesignedRun>,
    errors: &[RunErrors],
    mut warnings: Vec<String>,
) -> DesignReport {
    let designed = with_runs(spec, &runs);
    // d ln k / dT = Ea / (R T²), from the terms' largest Ea; and its reference temperature.
    let (species, dlnk_dt, t_ref): (Vec<String>, f64, Option<f64>) = match &spec.prior {
        Some(Prior {
            reaction: r,
            settings: f,
        }) => {
            let sp = r.rate_law_species().iter().map(|s| s.to_string()).collect();
            let steepest = r
                .terms
                .iter()
                .filter(|t| t.activation_energy.is_some())
                .max_by(|a, b| {
                    a.activation_energy
                        .unwrap_or(0.0)
                        .total_cmp(&b.activation_energy.unwrap_or(0.0))
                });
            let ea = steepest.and_then(|t| t.activation_energy).unwrap_or(0.0);
            (
                sp,
                ea / (R * f.temperature * f.temperature),
                steepest.map(|t| t.t_ref),
            )
        }
        _ => (d.base.iter().map(|(s, _)| s.clone()).collect(), 0.0, None),
    };
    let fresh = (d.timing_error.powi(2) + (dlnk_dt * d.temperature_spread).powi(2)).sqrt();
    let trials = Trials {
        runs: &runs,
        errors,
        fresh,
        replicates: spec.replicates,
    };
    let sigma_parts: Vec<SigmaParts> = (0..runs.len()).map(|i| trials.parts(i)).collect();
    let sigma: Vec<f64> = sigma_parts.iter().map(SigmaParts::total).collect();
    let centre: Vec<(String, f64)> = species
        .iter()
        .map(|sp| {
            let mean = runs.iter().map(|r| conc(r, sp).ln()).sum::<f64>() / runs.len() as f64;
            (sp.clone(), mean.exp())
        })
        .collect();
    let lab_m = trials.shared(|e| &e.lab);
    let station_m = trials.shared(|e| &e.station);
    let stations = spec.stations;
    let thermometer_ln_k = (dlnk_dt * d.thermometer_offset).powi(2);
    let mut precision = Vec::new();
    let mut not_varied = Vec::new();
    let fit = trials.fit(&species);
    let row = |f: &Fit, i: usize| -> Vec<f64> { f.a.row(i).iter().copied().collect() };
    if let Some(f) = &fit {
        precision.push(precision_of(
            "ln k at 1 M".into(),
            variance_parts(&trials, &lab_m, &station_m, &row(f, 0)),
            0.0,
            stations,
        ));
        // The fitted ln r at the centre less the centre's Σ nⱼ ln c̄ⱼ: the k that the runs
        // themselves determine, cᵀβ̂ with c = [1, ln c̄ⱼ …].
        let mut c = row(f, 0);
        for (k, &j) in f.varied.iter().enumerate() {
            let ln_centre = centre[j].1.ln();
            for (x, a) in c.iter_mut().zip(f.a.row(1 + k).iter()) {
                *x += ln_centre * a;
            }
        }
        precision.push(precision_of(
            "ln k at centre".into(),
            variance_parts(&trials, &lab_m, &station_m, &c),
            0.0,
            stations,
        ));
    }
    // With the orders fixed at whole values (the usual classroom analysis), ln k is the
    // weighted mean of the trials' ln k.
    let n_trials = trials.rows().count();
    let w: Vec<f64> = match &fit {
        Some(f) => f.w.clone(),
        None => trials.rows().map(|i| 1.0 / sigma[i].powi(2)).collect(),
    };
    let total_w: f64 = w.iter().sum();
    let mean: Vec<f64> = w.iter().map(|x| x / total_w).collect();
    debug_assert_eq!(mean.len(), n_trials);
    let fixed = variance_parts(&trials, &lab_m, &station_m, &mean);
    precision.push(precision_of(
        "ln k, orders fixed".into(),
        fixed,
        0.0,
        stations,
    ));
    if let (Some(t_ref), true) = (t_ref, thermometer_ln_k > 0.0) {
        precision.push(precision_of(
            format!("ln k at {} °C, orders fixed", trim(t_ref - 273.15)),
            fixed,
            thermometer_ln_k,
            stations,
        ));
    }
    for (j, sp) in species.iter().enumerate() {
        match fit
            .as_ref()
            .and_then(|f| f.varied.iter().position(|&v| v == j).map(|k| (f, k)))
        {
            Some((f, k)) => {
                let p = precision_of(
                    sp.clone(),
                    variance_parts(&trials, &lab_m, &station_m, &row(f, 1 + k)),
                    0.0,
                    stations,
                );
                if p.station > 0.25 {
                    warnings.push(format!("the order in {sp} is poorly determined (±{:.2} per station): widen its range or add replicates", p.station));
                }
                precision.push(p);
            }
            None => not_varied.push(sp.clone()),
        }
    }
    let condition = fit.as_ref().map_or(f64::INFINITY, |f| f.condition);
    if fit.is_none() {
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
    // A shared stock that carries most of the pooled variance of ln k: more stations will not
    // help, standardizing it will.
    let mut advice = Vec::new();
    if let Some(p) = precision.iter().find(|p| p.name == "ln k, orders fixed") {
        if p.lab_wide * p.lab_wide > 0.5 * p.class * p.class {
            let names = lab_names(errors);
            let (worst, share) = (0..lab_m.ncols())
                .map(|k| {
                    let v: f64 = (0..lab_m.nrows()).map(|r| mean[r] * lab_m[(r, k)]).sum();
                    (k, v * v)
                })
                .max_by(|a, b| a.1.total_cmp(&b.1))
                .unwrap_or((0, 0.0));
            let worth = |n: &String| errors.iter().any(|e| e.standardizable.contains(n));
            if let Some(name) = names.get(worst).filter(|n| worth(n)) {
                advice.push(format!(
                    "the stock '{name}', shared by every station, gives {:.0} % of the pooled variance of ln k: more stations will not lower it below ±{:.3}; standardize it and give its uncertainty in its [[stock]], e.g. uncertainty = \"0.3 %\"",
                    100.0 * share / (p.class * p.class),
                    p.lab_wide
                ));
            }
        }
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
        sigma_parts,
        centre,
        thermometer: d.thermometer_offset,
        precision,
        not_varied,
        warnings,
        advice,
        times,
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// A base point of three species and each doubled in turn.
    fn ofat_runs() -> Vec<DesignedRun> {
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
        runs
    }

    fn ofat(r: u32, sigma: f64) -> Vec<Option<f64>> {
        let runs = ofat_runs();
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
                // Through A D Aᵀ rather than (XᵀWX)⁻¹ itself: equal up to rounding.
                max_relative = 1e-8
            );
        }
        // Quadrupling the replicates halves every standard error.
        let se4 = ofat(8, 0.02);
        approx::assert_relative_eq!(se4[1].unwrap(), se[1].unwrap() / 2.0, max_relative = 1e-9);
    }

    #[test]
    fn shared_errors_by_hand() {
        // Base plus each species doubled, 2 replicates: every trial has a lab-wide error of
        // 0.02, a station-wide one of 0.01 (the same items in every run) and 0.03 of its own.
        // A constant shift of every ln t moves the intercept only (A·1 = e₀), so by hand:
        // orders: trial part alone, 0.03 √(2/2)/ln 2; ln k with orders fixed (the mean of 8
        // trials): per station √(0.02² + 0.01² + 0.03²/8), pooled over 8 stations
        // √(0.02² + (0.01² + 0.03²/8)/8), floor 0.02.
        let runs = ofat_runs();
        let errors = vec![
            RunErrors {
                lab: vec![("stock".into(), 0.02)],
                station: vec![("pipet".into(), 0.01)],
                trial: 0.03,
                standardizable: Vec::new(),
            };
            4
        ];
        let t = Trials {
            runs: &runs,
            errors: &errors,
            fresh: 0.0,
            replicates: 2,
        };
        let species: Vec<String> = ["A", "B", "C"].iter().map(|s| s.to_string()).collect();
        let fit = t.fit(&species).unwrap();
        let lab = t.shared(|e| &e.lab);
        let station = t.shared(|e| &e.station);
        for k in 1..4 {
            let c: Vec<f64> = fit.a.row(k).iter().copied().collect();
            let p = precision_of(
                "order".into(),
                variance_parts(&t, &lab, &station, &c),
                0.0,
                8,
            );
            approx::assert_relative_eq!(p.station, 0.03 / 2f64.ln(), max_relative = 1e-8);
            approx::assert_abs_diff_eq!(p.lab_wide, 0.0, epsilon = 1e-9);
        }
        let mean = vec![1.0 / 8.0; 8];
        let p = precision_of(
            "ln k".into(),
            variance_parts(&t, &lab, &station, &mean),
            0.0,
            8,
        );
        let (l, s, e) = (0.02f64, 0.01f64, 0.03f64 * 0.03 / 8.0);
        approx::assert_relative_eq!(p.station, (l * l + s * s + e).sqrt(), max_relative = 1e-12);
        approx::assert_relative_eq!(
            p.class,
            (l * l + (s * s + e) / 8.0).sqrt(),
            max_relative = 1e-12
        );
        approx::assert_relative_eq!(p.lab_wide, l, max_relative = 1e-12);
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
