//! Calibrating the prior from pilot or class times.
//!
//! Each measured time is turned into a rate with the same model the forecast uses, so that
//! forecast → fit → forecast is consistent: for a one-term rate law r = k(T) Π cⱼ^nⱼ the time is
//! t = J(n) / (k(T) Π cⱼ₀^nⱼ), where J(n) = ∫ Π (cⱼ(ξ)/cⱼ₀)^−nⱼ dξ over the clock (and the wait
//! to visible colour) carries the conversion during the run. So
//!
//!   yᵢ = ln J(n) − ln tᵢ = ln k_ref − (Ea/R)(1/Tᵢ − 1/T_ref) + Σⱼ nⱼ ln cᵢⱼ₀,
//!
//! linear in ln k_ref, the free orders and (with trials at two or more temperatures) Ea. The fit
//! is ordinary least squares, re-evaluating J with the new orders until they settle; standard
//! errors come from s²(XᵀX)⁻¹ and 95 % intervals from Student's t.

use crate::error::{Error, Result};
pub use crate::kinetics::times::{parse_orders, parse_time, read_times};
use crate::kinetics::{Reaction, RunKinetics, Term, R};
use crate::spec::{Prior, Spec};
use crate::units::{self};
use nalgebra::{DMatrix, DVector};
use statrs::distribution::{ContinuousCDF, StudentsT};

/// A studentized residual beyond this flags an outlier (common practice: about 3).
pub const OUTLIER: f64 = 3.0;
/// Studentized residuals are shown up to this size (a perfect fit of the others gives ∞).
pub const STUDENTIZED_CAP: f64 = 99.0;
/// Plausible range of a fitted order: outside it the times are more likely wrong than the
/// chemistry (common practice: elementary steps give orders from 0 to 3; inhibition rarely
/// below −0.5).
pub const PLAUSIBLE_ORDERS: (f64, f64) = (-0.5, 4.0);
/// A measured time this many times longer or shorter than the prior's forecast is flagged:
/// a misplaced decimal point or a wrong run name (common practice).
pub const PRIOR_RATIO: f64 = 100.0;
/// Longest time accepted as a clock time at all: a day.
pub const LONGEST_TIME_S: f64 = 86_400.0;
/// The activation energy is fitted only when the trials' temperatures span at least this
/// much (K) and the fit determines it to a relative standard error below [`EA_MAX_RSE`];
/// otherwise the prior's Ea is kept and k is fitted at the trials' mean temperature.
pub const EA_MIN_SPAN_K: f64 = 3.0;
pub const EA_MAX_RSE: f64 = 0.30;

/// One timed trial.
#[derive(Debug, Clone, PartialEq)]
pub struct Trial {
    pub run: usize,
    /// s
    pub time: f64,
    /// K, when recorded
    pub temperature: Option<f64>,
    /// 1-based line in the times file
    pub line: usize,
}

/// Ordinary least squares with its statistics.
#[derive(Debug, Clone, PartialEq)]
pub struct Ols {
    pub beta: Vec<f64>,
    /// Standard errors (NaN without degrees of freedom).
    pub se: Vec<f64>,
    pub residuals: Vec<f64>,
    /// Externally studentized residuals, rᵢ / (s₍ᵢ₎ √(1 − hᵢᵢ)), capped at ±[`STUDENTIZED_CAP`].
    pub studentized: Vec<f64>,
    pub dof: usize,
    /// Residual standard deviation.
    pub s: f64,
    /// Two-sided 95 % Student t quantile for `dof`.
    pub t95: f64,
}

/// Why a least-squares problem cannot be solved.
#[derive(Debug, Clone, PartialEq)]
pub enum OlsError {
    /// Columns are linearly dependent: these parameters cannot be told apart.
    RankDeficient(Vec<usize>),
    TooFewRows,
}

/// Solve y ≈ X β by least squares (rows of `x` are observations).
pub fn least_squares(x: &[Vec<f64>], y: &[f64]) -> std::result::Result<Ols, OlsError> {
    let n = y.len();
    let p = x.first().map_or(0, |r| r.len());
    if n < p || p == 0 {
        return Err(OlsError::TooFewRows);
    }
    let xm = DMatrix::from_fn(n, p, |i, j| x[i][j]);
    let ym = DVector::from_column_slice(y);
    // Scale columns for the rank test, then solve the normal equations by Cholesky.
    let xtx = xm.transpose() * &xm;
    let norms: Vec<f64> = (0..p).map(|j| xtx[(j, j)].sqrt().max(1e-300)).collect();
    let scaled = DMatrix::from_fn(p, p, |i, j| xtx[(i, j)] / (norms[i] * norms[j]));
    let eig = scaled.clone().symmetric_eigen();
    let smallest = eig
        .eigenvalues
        .iter()
        .cloned()
        .fold(f64::INFINITY, f64::min);
    if smallest < 1e-10 {
        // The eigenvector of the smallest eigenvalue names the dependent columns.
        let k = eig
            .eigenvalues
            .iter()
            .position(|v| *v == smallest)
            .unwrap_or(0);
        let v = eig.eigenvectors.column(k);
        let cols = (0..p).filter(|&j| v[j].abs() > 0.1).collect();
        return Err(OlsError::RankDeficient(cols));
    }
    let inv = xtx
        .clone()
        .try_inverse()
        .ok_or(OlsError::RankDeficient((0..p).collect()))?;
    let beta = &inv * xm.transpose() * &ym;
    let fitted = &xm * &beta;
    let residuals: Vec<f64> = (0..n).map(|i| y[i] - fitted[i]).collect();
    let dof = n - p;
    let rss: f64 = residuals.iter().map(|r| r * r).sum();
    let s = if dof > 0 {
        (rss / dof as f64).sqrt()
    } else {
        f64::NAN
    };
    let se = (0..p).map(|j| s * inv[(j, j)].sqrt()).collect();
    // Externally studentized (deleted) residuals: rᵢ / (s₍ᵢ₎ √(1 − hᵢᵢ)), with s₍ᵢ₎ the
    // residual sd of the fit without trial i. Unlike rᵢ / (s √(1 − hᵢᵢ)), which can never
    // exceed √(n − p), these can flag a gross outlier in a small pilot. A trial that alone
    // fixes a parameter (hᵢᵢ = 1) cannot be tested and gets 0.
    let studentized = (0..n)
        .map(|i| {
            let row = xm.row(i);
            let h = (row * &inv * row.transpose())[(0, 0)];
            let keep = 1.0 - h;
            if keep < 1e-9 || dof < 2 {
                return 0.0;
            }
            let r = residuals[i];
            let s2 = ((rss - r * r / keep) / (dof - 1) as f64).max(0.0);
            let d = (s2 * keep).sqrt();
            if d <= 1e-300 {
                if r.abs() <= 1e-12 {
                    0.0
                } else {
                    STUDENTIZED_CAP.copysign(r)
                }
            } else {
                (r / d).clamp(-STUDENTIZED_CAP, STUDENTIZED_CAP)
            }
        })
        .collect();
    let t95 = if dof > 0 {
        StudentsT::new(0.0, 1.0, dof as f64).map_or(f64::NAN, |t| t.inverse_cdf(0.975))
    } else {
        f64::NAN
    };
    Ok(Ols {
        beta: beta.iter().copied().collect(),
        se,
        residuals,
        studentized,
        dof,
        s,
        t95,
    })
}

/// A fitted quantity with its standard error and 95 % interval.
#[derive(Debug, Clone, PartialEq)]
pub struct Estimate {
    pub value: f64,
    pub se: f64,
    pub low: f64,
    pub high: f64,
}

#[derive(Debug, Clone, PartialEq)]
pub struct Order {
    pub species: String,
    pub estimate: Estimate,
    pub fixed: bool,
    /// Nearest integer or half-integer, and whether the 95 % interval contains it.
    pub nearest: f64,
    pub consistent: bool,
}

#[derive(Debug, Clone, PartialEq)]
pub struct Residual {
    pub run: String,
    pub line: usize,
    pub time: f64,
    pub predicted: f64,
    /// ln(t / predicted): positive when the trial ran slower than the fit.
    pub residual: f64,
    /// Externally studentized, with the sign of `residual`.
    pub studentized: f64,
    pub outlier: bool,
}

#[derive(Debug, Clone, PartialEq)]
pub struct Fit {
    /// k at `t_ref` (M^(1−n) s⁻¹), with its interval from ln k.
    pub k: Estimate,
    pub t_ref: f64,
    pub orders: Vec<Order>,
    /// J/mol; fitted when the trials span [`EA_MIN_SPAN_K`] and determine it, else the prior's
    /// (no interval).
    pub activation_energy: Option<Estimate>,
    pub ea_fitted: bool,
    pub residuals: Vec<Residual>,
    /// How the activation energy was treated, in words.
    pub ea_note: String,
    /// What a person should look at before using the fit (each also sets the exit code 1).
    pub warnings: Vec<String>,
    pub trials: usize,
    pub dof: usize,
    /// Residual standard deviation of ln t.
    pub s: f64,
    pub iterations: usize,
}

/// How the orders are treated: fitted where the design varies them, or fixed.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct Options {
    /// Orders to hold fixed (species, order); the others are fitted.
    pub fixed: Vec<(String, f64)>,
}

/// The one-term reaction with k = 1, no temperature dependence and the given orders, whose
/// clock time is J(n) / Π c₀^n.
fn unit_reaction(reaction: &Reaction, orders: &[(String, f64)]) -> Reaction {
    let mut r = reaction.clone();
    r.terms = vec![Term {
        k_ref: 1.0,
        t_ref: 298.15,
        activation_energy: None,
        orders: orders.to_vec(),
        source: None,
    }];
    r
}

/// Fit the prior's one-term rate law to measured times. `initial` holds each run's initial
/// concentrations (the same ones the forecast uses).
pub fn fit(
    spec: &Spec,
    prior: &Prior,
    initial: &[Vec<(String, f64)>],
    trials: &[Trial],
    options: &Options,
) -> Result<Fit> {
    let (reaction, settings) = (&prior.reaction, &prior.settings);
    let [term] = reaction.terms.as_slice() else {
        return Err(refuse(
            spec,
            "clockprep fits a one-term rate law; this prior has several terms",
            "fit one path at a time: spell out [reaction] with one [[reaction.term]]",
        ));
    };
    let species: Vec<String> = term.orders.iter().map(|(s, _)| s.clone()).collect();
    let free = free_orders(spec, term, &species, initial, trials, options)?;
    let temps: Vec<f64> = trials
        .iter()
        .map(|t| t.temperature.unwrap_or(settings.temperature))
        .collect();
    let start: Vec<(String, f64)> = term
        .orders
        .iter()
        .map(|(s, n)| {
            (
                s.clone(),
                options
                    .fixed
                    .iter()
                    .find(|(f, _)| f == s)
                    .map_or(*n, |f| f.1),
            )
        })
        .collect();
    let problem = Problem {
        spec,
        reaction,
        initial,
        trials,
        temps: &temps,
        species: &species,
        free: &free,
        prior_ea: term.activation_energy,
    };
    let (solved, ea_fitted, ea_note, t_ref) = solve_with_ea_rule(&problem, term, start)?;
    check_solved(spec, &solved)?;
    let ols = &solved.ols;
    let est = |i: usize| Estimate {
        value: ols.beta[i],
        se: ols.se[i],
        low: ols.beta[i] - ols.t95 * ols.se[i],
        high: ols.beta[i] + ols.t95 * ols.se[i],
    };
    let ln_k = est(0);
    let k = Estimate {
        value: ln_k.value.exp(),
        se: ln_k.value.exp() * ln_k.se,
        low: ln_k.low.exp(),
        high: ln_k.high.exp(),
    };
    let orders = fitted_orders(&solved, &free, &est);
    let activation_energy = if ea_fitted {
        Some(est(1 + free.len()))
    } else {
        term.activation_energy.map(|e| Estimate {
            value: e,
            se: f64::NAN,
            low: f64::NAN,
            high: f64::NAN,
        })
    };
    let residuals = residuals_of(spec, trials, ols);
    let warnings = warnings_of(&problem, &residuals, &orders);
    Ok(Fit {
        k,
        t_ref,
        orders,
        activation_energy,
        ea_fitted,
        residuals,
        ea_note,
        warnings,
        trials: trials.len(),
        dof: ols.dof,
        s: ols.s,
        iterations: solved.iterations,
    })
}

/// The orders to fit (indices into the rate law's species): those not fixed, each of which must
/// take two or more values over the timed runs.
fn free_orders(
    spec: &Spec,
    term: &crate::spec::Term,
    species: &[String],
    initial: &[Vec<(String, f64)>],
    trials: &[Trial],
    options: &Options,
) -> Result<Vec<usize>> {
    for (s, _) in &options.fixed {
        if !species.contains(s) {
            return Err(refuse(
                spec,
                &format!("--orders names {s}, which is not in the rate law"),
                &format!("the rate law's species are {}", species.join(", ")),
            ));
        }
    }
    let free: Vec<usize> = (0..species.len())
        .filter(|&j| !options.fixed.iter().any(|(s, _)| *s == species[j]))
        .collect();
    for &j in &free {
        let mut values: Vec<f64> = trials
            .iter()
            .map(|t| ln_conc(initial, t.run, &species[j]))
            .collect();
        values.sort_by(f64::total_cmp);
        values.dedup_by(|a, b| (*a - *b).abs() < 1e-9);
        if values.len() < 2 {
            return Err(refuse(
                spec,
                &format!(
                    "the timed runs never vary {}, so its order cannot be fitted",
                    species[j]
                ),
                &format!(
                    "fix it, e.g. --orders {}={}, or time a run that changes {}",
                    species[j], term.orders[j].1, species[j]
                ),
            ));
        }
    }
    Ok(free)
}

/// The activation energy rule: fitted only from a wide enough temperature span, and kept only
/// when the data determine it; else the prior's, with k at the trials' mean temperature.
/// Returns the fit, whether Ea was fitted, the note saying which rule applied, and the
/// temperature k refers to.
fn solve_with_ea_rule(
    problem: &Problem,
    term: &crate::spec::Term,
    start: Vec<(String, f64)>,
) -> Result<(Solved, bool, String, f64)> {
    let mut sorted = problem.temps.to_vec();
    sorted.sort_by(f64::total_cmp);
    let (lo, hi) = (sorted[0], sorted[sorted.len() - 1]);
    let span = hi - lo;
    let mean_t = sorted.iter().sum::<f64>() / sorted.len() as f64;
    let c = |t: f64| t - 273.15;
    let free = problem.free.len();
    let fitted = if span >= EA_MIN_SPAN_K {
        let s = problem.solve(start.clone(), Some(term.t_ref))?;
        let (value, se) = (s.ols.beta[1 + free], s.ols.se[1 + free]);
        if value > 0.0 && se / value < EA_MAX_RSE {
            Ok((
                s,
                format!(
                    "fitted from trials spanning {:.1} °C ({:.1} to {:.1} °C)",
                    span,
                    c(lo),
                    c(hi)
                ),
            ))
        } else {
            Err(format!(
                ": the trials' {:.1} °C span gives {:.0} ± {:.0} kJ/mol (relative standard error above {:.0} %)",
                span,
                value / 1e3,
                se / 1e3,
                EA_MAX_RSE * 100.0
            ))
        }
    } else if span < 0.05 {
        Err(format!(" (all trials at {:.1} °C)", c(mean_t)))
    } else {
        Err(format!(
            ": the trials span {:.1} °C, less than the {:.0} °C needed to fit it; k is fitted at their mean temperature",
            span, EA_MIN_SPAN_K
        ))
    };
    Ok(match fitted {
        Ok((s, note)) => (s, true, note, term.t_ref),
        Err(why) => {
            let note = match term.activation_energy {
                Some(_) => format!("kept from the prior{why}"),
                None => format!("none: the prior has none{why}"),
            };
            (problem.solve(start, None)?, false, note, mean_t)
        }
    })
}

/// A fit needs an error estimate and finite numbers.
fn check_solved(spec: &Spec, solved: &Solved) -> Result<()> {
    if solved.ols.dof == 0 {
        return Err(refuse(
            spec,
            "as many parameters as trials: no error estimate is possible",
            "time replicates or more runs, or fix orders with --orders",
        ));
    }
    if solved
        .ols
        .beta
        .iter()
        .chain(&solved.ols.se)
        .any(|v| !v.is_finite())
    {
        return Err(refuse(
            spec,
            "the times give no finite fit (a time far out of range?)",
            "check each time against the stopwatch reading; the fit needs times of the same order as the prior's forecast",
        ));
    }
    Ok(())
}

/// Each order with its interval (a fixed one without), its nearest whole or half value and
/// whether the interval contains it.
fn fitted_orders(solved: &Solved, free: &[usize], est: &dyn Fn(usize) -> Estimate) -> Vec<Order> {
    solved
        .orders
        .iter()
        .enumerate()
        .map(|(j, (s, n))| {
            let (estimate, fixed) = match free.iter().position(|&f| f == j) {
                Some(k) => (est(1 + k), false),
                None => (
                    Estimate {
                        value: *n,
                        se: 0.0,
                        low: *n,
                        high: *n,
                    },
                    true,
                ),
            };
            let nearest = (estimate.value * 2.0).round() / 2.0;
            let consistent = fixed || (estimate.low..=estimate.high).contains(&nearest);
            Order {
                species: s.clone(),
                estimate,
                fixed,
                nearest,
                consistent,
            }
        })
        .collect()
}

pub(crate) fn residuals_of(spec: &Spec, trials: &[Trial], ols: &Ols) -> Vec<Residual> {
    trials
        .iter()
        .enumerate()
        .map(|(i, t)| {
            // y = ln J − ln t: a positive OLS residual means the trial ran faster than fitted,
            // so both residuals are turned to read as ln(measured / fitted).
            let r = ols.residuals[i];
            Residual {
                run: spec.runs[t.run].name.clone(),
                line: t.line,
                time: t.time,
                predicted: t.time * r.exp(),
                residual: -r,
                studentized: -ols.studentized[i],
                outlier: ols.studentized[i].abs() > OUTLIER,
            }
        })
        .collect()
}

/// What to look at before using the fit: outliers, implausible orders, times far from the
/// prior's forecast.
fn warnings_of(problem: &Problem, residuals: &[Residual], orders: &[Order]) -> Vec<String> {
    let mut warnings = outlier_warnings(residuals);
    for o in orders.iter().filter(|o| !o.fixed) {
        let (lo, hi) = PLAUSIBLE_ORDERS;
        if !(lo..=hi).contains(&o.estimate.value) {
            warnings.push(format!(
                "the order in {} came out as {:.2}, outside the plausible {lo} to {hi}: check the times for a misplaced decimal point or a wrong run name before using it",
                o.species, o.estimate.value
            ));
        }
    }
    warnings.extend(far_from_prior(
        problem.spec,
        problem.reaction,
        problem.initial,
        problem.trials,
        problem.temps,
    ));
    warnings
}

/// A warning per outlying trial.
pub(crate) fn outlier_warnings(residuals: &[Residual]) -> Vec<String> {
    residuals
        .iter()
        .filter(|r| r.outlier)
        .map(|r| format!(
            "line {}: run '{}' took {} s against {} s fitted (studentized residual {:+.1}): check that trial, or leave it out and refit",
            r.line, r.run, units::sig3(r.time), units::sig3(r.predicted), r.studentized
        ))
        .collect()
}

/// A warning per trial more than [`PRIOR_RATIO`] times longer or shorter than the prior's
/// forecast.
pub(crate) fn far_from_prior(
    spec: &Spec,
    reaction: &Reaction,
    initial: &[Vec<(String, f64)>],
    trials: &[Trial],
    temps: &[f64],
) -> Vec<String> {
    let mut warnings = Vec::new();
    for (t, &temp) in trials.iter().zip(temps) {
        let Ok(kin) = RunKinetics::new(reaction, &initial[t.run], spec.timing.concentration) else {
            continue;
        };
        let prior = kin.at(temp).to_colour();
        let ratio = t.time / prior;
        if prior.is_finite() && !(1.0 / PRIOR_RATIO..=PRIOR_RATIO).contains(&ratio) {
            warnings.push(format!(
                "line {}: {} s for run '{}' is {} the prior's forecast of {} s: a misplaced decimal point?",
                t.line,
                units::sig3(t.time),
                spec.runs[t.run].name,
                if ratio > 1.0 {
                    format!("{} times", units::sig3(ratio))
                } else {
                    format!("1/{} of", units::sig3(1.0 / ratio))
                },
                units::sig3(prior)
            ));
        }
    }
    warnings
}

/// ln of a run's initial concentration of a species (NaN when the run lacks it).
fn ln_conc(initial: &[Vec<(String, f64)>], run: usize, sp: &str) -> f64 {
    initial[run]
        .iter()
        .find(|(s, _)| s == sp)
        .map_or(f64::NAN, |(_, c)| c.ln())
}

/// The least-squares problem of a fit: data, and which orders are free.
struct Problem<'a> {
    spec: &'a Spec,
    reaction: &'a Reaction,
    initial: &'a [Vec<(String, f64)>],
    trials: &'a [Trial],
    temps: &'a [f64],
    species: &'a [String],
    free: &'a [usize],
    prior_ea: Option<f64>,
}

/// A solved fit: the least squares and the orders it settled on.
struct Solved {
    ols: Ols,
    orders: Vec<(String, f64)>,
    iterations: usize,
}

/// Most re-evaluations of J with new orders before the fit is taken as it stands.
const MAX_ITERATIONS: usize = 30;

impl Problem<'_> {
    fn ln_c(&self, run: usize, sp: &str) -> f64 {
        ln_conc(self.initial, run, sp)
    }

    /// Fit with the activation energy as a parameter (`ea_ref` = its reference temperature),
    /// or with the prior's Ea held and k fitted at the trials' mean temperature.
    fn solve(&self, mut orders: Vec<(String, f64)>, ea_ref: Option<f64>) -> Result<Solved> {
        let spec = self.spec;
        let mean_t = self.temps.iter().sum::<f64>() / self.temps.len() as f64;
        let mut last = None;
        for it in 1..=MAX_ITERATIONS {
            let unit = unit_reaction(self.reaction, &orders);
            let mut x = Vec::new();
            let mut y = Vec::new();
            for (t, &temp) in self.trials.iter().zip(self.temps) {
                let kin = RunKinetics::new(&unit, &self.initial[t.run], spec.timing.concentration)
                    .map_err(|e| {
                        refuse(
                            spec,
                            &format!(
                                "run '{}' has no clock under this rate law: {e}",
                                spec.runs[t.run].name
                            ),
                            "check the run's concentrations against the timing reagent",
                        )
                    })?;
                // t(k = 1) = J / Π c₀^n, so ln J = ln t₁ + Σ n ln c₀.
                let ln_j = kin.at(temp).to_colour().ln()
                    + orders
                        .iter()
                        .map(|(s, n)| n * self.ln_c(t.run, s))
                        .sum::<f64>();
                let fixed_part: f64 = orders
                    .iter()
                    .enumerate()
                    .filter(|(j, _)| !self.free.contains(j))
                    .map(|(_, (s, n))| n * self.ln_c(t.run, s))
                    .sum();
                let mut row = vec![1.0];
                row.extend(
                    self.free
                        .iter()
                        .map(|&j| self.ln_c(t.run, &self.species[j])),
                );
                // ln k(T) = ln k(T_ref) − (Ea/R)(1/T − 1/T_ref).
                let held_ea = match ea_ref {
                    Some(t_ref) => {
                        row.push(-(1.0 / temp - 1.0 / t_ref) / R);
                        0.0
                    }
                    None => self
                        .prior_ea
                        .map_or(0.0, |ea| ea / R * (1.0 / temp - 1.0 / mean_t)),
                };
                x.push(row);
                y.push(ln_j - t.time.ln() - fixed_part + held_ea);
            }
            let solved = least_squares(&x, &y).map_err(|e| self.explain(e, x[0].len()))?;
            let mut moved = 0.0f64;
            for (k, &j) in self.free.iter().enumerate() {
                let next = solved.beta[1 + k];
                if !next.is_finite() {
                    return Err(refuse(
                        spec,
                        "the times give no finite fit (a time far out of range?)",
                        "check each time against the stopwatch reading",
                    ));
                }
                moved = moved.max((next - orders[j].1).abs());
                // Keep the orders the rate law can integrate while the fit settles.
                orders[j].1 = next.clamp(-2.0, 5.0);
            }
            let done = moved < 1e-10 || self.free.is_empty();
            last = Some(Solved {
                ols: solved,
                orders: orders.clone(),
                iterations: it,
            });
            if done {
                break;
            }
        }
        Ok(last.expect("at least one iteration"))
    }

    fn explain(&self, e: OlsError, params: usize) -> Error {
        let spec = self.spec;
        match e {
            OlsError::TooFewRows => refuse(
                spec,
                &format!(
                    "{} trials cannot fit {params} parameters",
                    self.trials.len()
                ),
                "time more trials, or fix some orders with --orders",
            ),
            OlsError::RankDeficient(cols) => {
                let names: Vec<String> = cols
                    .iter()
                    .map(|&c| match c {
                        0 => "k".to_string(),
                        c if c <= self.free.len() => {
                            format!("the order in {}", self.species[self.free[c - 1]])
                        }
                        _ => "the activation energy".to_string(),
                    })
                    .collect();
                refuse(
                    spec,
                    &format!("the timed runs cannot tell {} apart", names.join(" and ")),
                    "vary one species at a time, or fix orders with --orders",
                )
            }
        }
    }
}

pub(crate) fn refuse(spec: &Spec, message: &str, help: &str) -> Error {
    spec.source.error(
        spec.source.table("[reaction]"),
        message.to_string(),
        "the prior fitted",
        help.to_string(),
    )
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;

    #[test]
    fn textbook_initial_rates() {
        // NH4+ + NO2- → N2 + 2 H2O, initial rates (Zumdahl & Zumdahl, Chemistry, section
        // "Determining the form of the rate law", table of three experiments; from memory):
        // [NH4+] 0.100, [NO2-] 0.0050 → 1.35e-7 M/s; 0.100, 0.010 → 2.70e-7; 0.200, 0.010 → 5.40e-7.
        // The book finds rate = k[NH4+][NO2-] with k = 2.7e-4 M⁻¹ s⁻¹.
        let data = [
            (0.100, 0.0050, 1.35e-7),
            (0.100, 0.010, 2.70e-7),
            (0.200, 0.010, 5.40e-7),
        ];
        let x: Vec<Vec<f64>> = data
            .iter()
            .map(|(a, b, _)| vec![1.0, f64::ln(*a), f64::ln(*b)])
            .collect();
        let y: Vec<f64> = data.iter().map(|(_, _, r)| f64::ln(*r)).collect();
        let ols = least_squares(&x, &y).unwrap();
        assert_relative_eq!(ols.beta[1], 1.0, epsilon = 1e-9);
        assert_relative_eq!(ols.beta[2], 1.0, epsilon = 1e-9);
        assert_relative_eq!(ols.beta[0].exp(), 2.7e-4, max_relative = 1e-9);
    }

    #[test]
    fn collinear_design_is_named() {
        // Two species always varied together cannot be told apart.
        let x = vec![
            vec![1.0, 0.0, 0.0],
            vec![1.0, 1.0, 1.0],
            vec![1.0, 2.0, 2.0],
            vec![1.0, 3.0, 3.0],
        ];
        let y = vec![0.0, 1.0, 2.0, 3.0];
        assert_eq!(
            least_squares(&x, &y).unwrap_err(),
            OlsError::RankDeficient(vec![1, 2])
        );
    }

    #[test]
    fn student_t_and_times() {
        // t(0.975, 10) = 2.228 (any statistics table, e.g. NIST/SEMATECH e-Handbook 1.3.6.7.2).
        let x: Vec<Vec<f64>> = (0..12).map(|i| vec![1.0, i as f64]).collect();
        let y: Vec<f64> = (0..12)
            .map(|i| 2.0 * i as f64 + if i % 2 == 0 { 0.1 } else { -0.1 })
            .collect();
        let ols = least_squares(&x, &y).unwrap();
        assert_eq!(ols.dof, 10);
        assert_relative_eq!(ols.t95, 2.228, epsilon = 5e-4);
        assert_eq!(parse_time("1:23.5"), Some(83.5));
        assert_eq!(parse_time("83.5"), Some(83.5));
        assert_eq!(parse_time("1.5 min"), Some(90.0));
        assert_eq!(parse_time("soon"), None);
    }
}
