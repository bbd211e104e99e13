//! Calibrating a rate law of several terms (e.g. an acid-independent and an acid-assisted path)
//! from pilot times, by nonlinear least squares on the forecast's own model.
//!
//! Each term keeps the prior's orders and activation energy; the parameters are θₘ = ln kₘ at
//! the trials' mean temperature, so every k stays positive. The residual of a trial is
//! ln t_model(θ) − ln t_measured, where t_model is the forecast's clock time (the exact clock
//! integral, the conversion during the run and the visible wait). The Levenberg–Marquardt
//! solver of the `levenberg-marquardt` crate minimises Σ rᵢ²; the Jacobian is by central
//! differences of the forecast. Standard errors are s √((JᵀJ)⁻¹)ₘₘ from the Jacobian at the
//! optimum, intervals from Student's t, and a **profile check** refits the other terms with
//! θₘ held at each end of its interval: for a model linear in θ the rise of Σ r² there is
//! exactly s² t², so the ratio (ΔΣr²)/(s² t²) far from 1 says the Jacobian interval is not to be
//! trusted.
//!
//! Before fitting, the terms' shares of the initial rate in the timed runs must not be
//! proportional: two terms whose shares never change together cannot be told apart, and the fit
//! refuses, naming the spec's runs (or the species) whose timing would separate them.

use crate::error::Result;
use crate::kinetics::fit::{
    far_from_prior, least_squares, outlier_warnings, refuse, residuals_of, Estimate, Residual,
    Trial,
};
use crate::kinetics::{Reaction, RunKinetics};
use crate::spec::{Prior, Spec};
use levenberg_marquardt::{LeastSquaresProblem, LevenbergMarquardt};
use nalgebra::{DMatrix, DVector, Dyn, Owned};

/// A profile check ratio outside this range warns that a term's interval is unreliable.
pub const PROFILE_RANGE: (f64, f64) = (0.5, 2.0);
/// A term whose ln k has a standard error above this (k known to worse than about ×1.6) is
/// reported as poorly separated.
pub const POOR_LN_K_SE: f64 = 0.5;
/// Step of the central differences in ln k.
const H: f64 = 1e-5;

/// One fitted term.
#[derive(Debug, Clone, PartialEq)]
pub struct TermEstimate {
    /// The term's orders (held at the prior's).
    pub orders: Vec<(String, f64)>,
    /// k at the fit temperature (SI, M^(1−n) s⁻¹), interval from ln k.
    pub k: Estimate,
    /// Standard error of ln k.
    pub ln_k_se: f64,
    /// The prior's k at the same temperature.
    pub prior_k: f64,
    /// J/mol, the prior's (held).
    pub activation_energy: Option<f64>,
    /// Profile check at the interval's low and high ends: ΔΣr² / (s² t²), 1 when linear.
    pub profile: (f64, f64),
    /// The term's smallest and largest share of the fitted initial rate over the timed runs.
    pub share: (f64, f64),
}

/// A fit of every term's k.
#[derive(Debug, Clone, PartialEq)]
pub struct TermsFit {
    pub terms: Vec<TermEstimate>,
    /// K: the trials' mean temperature, at which every k is given.
    pub t_fit: f64,
    /// Correlation of the terms' ln k estimates.
    pub correlation: Vec<Vec<f64>>,
    pub residuals: Vec<Residual>,
    pub warnings: Vec<String>,
    pub trials: usize,
    pub dof: usize,
    /// Residual standard deviation of ln t.
    pub s: f64,
    /// Model evaluations the solver used (profiles included).
    pub evaluations: usize,
    /// How the activation energies were treated, in words.
    pub ea_note: String,
}

/// The data of the fit and its model.
struct Model<'a> {
    spec: &'a Spec,
    reaction: &'a Reaction,
    initial: &'a [Vec<(String, f64)>],
    trials: &'a [Trial],
    temps: Vec<f64>,
    t_fit: f64,
    ln_t: Vec<f64>,
}

impl Model<'_> {
    /// The reaction with every term's k at `t_fit` set to exp(θₘ).
    fn with(&self, theta: &[f64]) -> Reaction {
        let mut r = self.reaction.clone();
        for (term, th) in r.terms.iter_mut().zip(theta) {
            term.k_ref = th.exp();
            term.t_ref = self.t_fit;
        }
        r
    }

    /// ln t of every trial under θ; None when a run has no clock there.
    fn ln_times(&self, theta: &[f64]) -> Option<Vec<f64>> {
        let r = self.with(theta);
        self.trials
            .iter()
            .zip(&self.temps)
            .map(|(t, &temp)| {
                RunKinetics::new(&r, &self.initial[t.run], self.spec.timing.concentration)
                    .ok()
                    .map(|k| k.at(temp).to_colour().ln())
                    .filter(|v| v.is_finite())
            })
            .collect()
    }

    fn residuals(&self, theta: &[f64]) -> Option<Vec<f64>> {
        let m = self.ln_times(theta)?;
        Some(m.iter().zip(&self.ln_t).map(|(a, b)| a - b).collect())
    }

    /// ∂ln t/∂θ of every trial (trials × parameters), by central differences.
    fn jacobian(&self, theta: &[f64]) -> Option<DMatrix<f64>> {
        let mut j = DMatrix::zeros(self.trials.len(), theta.len());
        for c in 0..theta.len() {
            let mut up = theta.to_vec();
            let mut down = theta.to_vec();
            up[c] += H;
            down[c] -= H;
            let (a, b) = (self.ln_times(&up)?, self.ln_times(&down)?);
            for r in 0..self.trials.len() {
                j[(r, c)] = (a[r] - b[r]) / (2.0 * H);
            }
        }
        Some(j)
    }

    /// Each term's share of the initial rate of each trial under θ (trials × terms).
    fn shares(&self, theta: &[f64]) -> DMatrix<f64> {
        let r = self.with(theta);
        DMatrix::from_fn(self.trials.len(), r.terms.len(), |i, m| {
            let t = &self.trials[i];
            let rate = |term: &crate::spec::Term| {
                term.k_at(self.temps[i])
                    * term
                        .orders
                        .iter()
                        .map(|(s, n)| conc(&self.initial[t.run], s).powf(*n))
                        .product::<f64>()
            };
            let total: f64 = r.terms.iter().map(rate).sum();
            rate(&r.terms[m]) / total
        })
    }
}

fn conc(c: &[(String, f64)], sp: &str) -> f64 {
    c.iter().find(|(s, _)| s == sp).map_or(0.0, |x| x.1)
}

/// The solver's view: the free parameters, with one θ optionally held (a profile).
struct Problem<'a> {
    model: &'a Model<'a>,
    theta: Vec<f64>,
    held: Option<usize>,
    evaluations: std::cell::Cell<usize>,
}

impl Problem<'_> {
    fn free(&self) -> Vec<usize> {
        (0..self.theta.len())
            .filter(|&i| Some(i) != self.held)
            .collect()
    }
}

impl LeastSquaresProblem<f64, Dyn, Dyn> for Problem<'_> {
    type ResidualStorage = Owned<f64, Dyn>;
    type JacobianStorage = Owned<f64, Dyn, Dyn>;
    type ParameterStorage = Owned<f64, Dyn>;

    fn set_params(&mut self, x: &DVector<f64>) {
        for (k, i) in self.free().into_iter().enumerate() {
            self.theta[i] = x[k];
        }
    }

    fn params(&self) -> DVector<f64> {
        DVector::from_iterator(
            self.free().len(),
            self.free().iter().map(|&i| self.theta[i]),
        )
    }

    fn residuals(&self) -> Option<DVector<f64>> {
        self.evaluations.set(self.evaluations.get() + 1);
        self.model.residuals(&self.theta).map(DVector::from_vec)
    }

    fn jacobian(&self) -> Option<DMatrix<f64>> {
        let free = self.free();
        self.evaluations
            .set(self.evaluations.get() + 2 * free.len());
        let j = self.model.jacobian(&self.theta)?;
        Some(DMatrix::from_fn(j.nrows(), free.len(), |r, c| {
            j[(r, free[c])]
        }))
    }
}

/// Minimise from `theta` with `held` fixed; the θ reached, Σ r², and the evaluations used.
fn minimise(model: &Model, theta: Vec<f64>, held: Option<usize>) -> Option<(Vec<f64>, f64, usize)> {
    let problem = Problem {
        model,
        theta,
        held,
        evaluations: std::cell::Cell::new(0),
    };
    let (p, report) = LevenbergMarquardt::new()
        .with_patience(200)
        .minimize(problem);
    if !report.termination.was_successful() {
        return None;
    }
    let sse = model
        .residuals(&p.theta)?
        .iter()
        .map(|r| r * r)
        .sum::<f64>();
    Some((p.theta.clone(), sse, p.evaluations.get()))
}

/// A label for a term: its species and orders, e.g. `H2O2·I-·H+`.
pub fn term_label(orders: &[(String, f64)]) -> String {
    orders
        .iter()
        .map(|(s, n)| {
            if *n == 1.0 {
                s.clone()
            } else {
                format!("{s}^{}", crate::units::fmt_count(*n))
            }
        })
        .collect::<Vec<_>>()
        .join("·")
}

/// Smallest eigenvalue of the shares' correlation-scaled normal matrix, and its eigenvector.
fn separation(shares: &DMatrix<f64>) -> (f64, DVector<f64>) {
    let sts = shares.transpose() * shares;
    let p = sts.nrows();
    let norms: Vec<f64> = (0..p).map(|j| sts[(j, j)].sqrt().max(1e-300)).collect();
    let scaled = DMatrix::from_fn(p, p, |i, j| sts[(i, j)] / (norms[i] * norms[j]));
    let eig = scaled.symmetric_eigen();
    let k = (0..p)
        .min_by(|a, b| eig.eigenvalues[*a].total_cmp(&eig.eigenvalues[*b]))
        .unwrap_or(0);
    (eig.eigenvalues[k], eig.eigenvectors.column(k).into_owned())
}

/// Below this smallest scaled eigenvalue the timed runs cannot separate the terms.
const INSEPARABLE: f64 = 1e-8;

/// Fit every term's k of a several-term prior to measured times, the orders and activation
/// energies held at the prior's.
pub fn fit_terms(
    spec: &Spec,
    prior: &Prior,
    initial: &[Vec<(String, f64)>],
    trials: &[Trial],
) -> Result<TermsFit> {
    let reaction = &prior.reaction;
    let settings = &prior.settings;
    let temps: Vec<f64> = trials
        .iter()
        .map(|t| t.temperature.unwrap_or(settings.temperature))
        .collect();
    let t_fit = temps.iter().sum::<f64>() / temps.len() as f64;
    let model = Model {
        spec,
        reaction,
        initial,
        trials,
        temps: temps.clone(),
        t_fit,
        ln_t: trials.iter().map(|t| t.time.ln()).collect(),
    };
    let p = reaction.terms.len();
    let labels: Vec<String> = reaction
        .terms
        .iter()
        .map(|t| term_label(&t.orders))
        .collect();
    if trials.len() <= p {
        return Err(refuse(
            spec,
            &format!(
                "{} trials cannot fit the {p} terms' k with an error estimate",
                trials.len()
            ),
            "time replicates or more runs",
        ));
    }
    let prior_theta: Vec<f64> = reaction.terms.iter().map(|t| t.k_at(t_fit).ln()).collect();
    // The terms must change their shares of the rate between the timed runs.
    let (smallest, vector) = separation(&model.shares(&prior_theta));
    if smallest < INSEPARABLE {
        let together: Vec<usize> = (0..p).filter(|&m| vector[m].abs() > 0.1).collect();
        return Err(inseparable(
            spec, reaction, initial, trials, &labels, &together,
        ));
    }
    // Start from the prior scaled to the times' overall level.
    let Some(at_prior) = model.residuals(&prior_theta) else {
        return Err(refuse(
            spec,
            "a timed run has no clock under the prior",
            "check the run's concentrations against the timing reagent",
        ));
    };
    let shift = at_prior.iter().sum::<f64>() / at_prior.len() as f64;
    let start: Vec<f64> = prior_theta.iter().map(|t| t + shift).collect();
    let no_fit = || {
        refuse(
            spec,
            "the times give no finite fit of the terms (a time far out of range?)",
            "check each time against the stopwatch reading; the fit needs times of the same order as the prior's forecast",
        )
    };
    let (theta, sse, mut evaluations) = minimise(&model, start, None).ok_or_else(no_fit)?;
    let residuals = model.residuals(&theta).ok_or_else(no_fit)?;
    let jac = model.jacobian(&theta).ok_or_else(no_fit)?;
    // The linearised problem at the optimum, y = Xθ̂ + e with X = −J: its least squares is θ̂
    // with the residuals e, and gives the Jacobian standard errors and studentized residuals.
    let x: Vec<Vec<f64>> = (0..trials.len())
        .map(|r| (0..p).map(|c| -jac[(r, c)]).collect())
        .collect();
    let y: Vec<f64> = (0..trials.len())
        .map(|r| (0..p).map(|c| x[r][c] * theta[c]).sum::<f64>() + residuals[r])
        .collect();
    let ols = least_squares(&x, &y).map_err(|_| {
        inseparable(
            spec,
            reaction,
            initial,
            trials,
            &labels,
            &(0..p).collect::<Vec<_>>(),
        )
    })?;
    let xm = DMatrix::from_fn(trials.len(), p, |r, c| x[r][c]);
    let cov = (xm.transpose() * &xm)
        .try_inverse()
        .ok_or_else(no_fit)?
        .scale(ols.s * ols.s);
    let correlation: Vec<Vec<f64>> = (0..p)
        .map(|a| {
            (0..p)
                .map(|b| cov[(a, b)] / (cov[(a, a)] * cov[(b, b)]).sqrt())
                .collect()
        })
        .collect();
    let shares = model.shares(&theta);
    let mut terms = Vec::new();
    let mut warnings = Vec::new();
    for m in 0..p {
        let se = ols.se[m];
        let (lo, hi) = (theta[m] - ols.t95 * se, theta[m] + ols.t95 * se);
        // Profile: hold θₘ at each end, refit the rest, compare the rise with s² t².
        let expected = ols.s * ols.s * ols.t95 * ols.t95;
        let mut ratio = |end: f64| -> f64 {
            // Times the model reproduces exactly leave nothing to compare against.
            if expected <= 1e-24 {
                return f64::NAN;
            }
            let mut start = theta.clone();
            start[m] = end;
            match minimise(&model, start, Some(m)) {
                Some((_, s2, e)) => {
                    evaluations += e;
                    (s2 - sse) / expected
                }
                None => f64::NAN,
            }
        };
        let profile = (ratio(lo), ratio(hi));
        let col: Vec<f64> = (0..trials.len()).map(|r| shares[(r, m)]).collect();
        let share = (
            col.iter().copied().fold(f64::INFINITY, f64::min),
            col.iter().copied().fold(f64::NEG_INFINITY, f64::max),
        );
        let term = &reaction.terms[m];
        if se > POOR_LN_K_SE {
            warnings.push(format!(
                "the timed runs barely separate the term {} (ln k ± {se:.2}, k known to a factor of {:.1}): time runs that change its share of the rate ({:.0} % to {:.0} % here)",
                labels[m],
                se.exp(),
                share.0 * 100.0,
                share.1 * 100.0
            ));
        }
        let (plo, phi) = PROFILE_RANGE;
        let off = |r: f64| r.is_finite() && !(plo..=phi).contains(&r);
        if off(profile.0) || off(profile.1) {
            warnings.push(format!(
                "profile check of the term {}: the fit rises {:.2} and {:.2} times as much as a linear model at the ends of its 95 % interval, so that interval is only a rough guide",
                labels[m], profile.0, profile.1
            ));
        }
        terms.push(TermEstimate {
            orders: term.orders.clone(),
            k: Estimate {
                value: theta[m].exp(),
                se: theta[m].exp() * se,
                low: lo.exp(),
                high: hi.exp(),
            },
            ln_k_se: se,
            prior_k: term.k_at(t_fit),
            activation_energy: term.activation_energy,
            profile,
            share,
        });
    }
    let residuals = residuals_of(spec, trials, &ols);
    warnings.splice(0..0, outlier_warnings(&residuals));
    warnings.extend(far_from_prior(spec, reaction, initial, trials, &temps));
    let mut sorted = temps.clone();
    sorted.sort_by(f64::total_cmp);
    let span = sorted[sorted.len() - 1] - sorted[0];
    let ea_note = format!(
        "held at the prior's for every term (a several-term fit does not fit them); k at the trials' mean temperature{}",
        if span >= 0.05 {
            format!(", the trials spanning {span:.1} °C")
        } else {
            String::new()
        }
    );
    Ok(TermsFit {
        terms,
        t_fit,
        correlation,
        residuals,
        warnings,
        trials: trials.len(),
        dof: ols.dof,
        s: ols.s,
        evaluations,
        ea_note,
    })
}

/// The refusal for terms the timed runs cannot tell apart: which spec runs would separate
/// them, else which species to vary.
fn inseparable(
    spec: &Spec,
    reaction: &Reaction,
    initial: &[Vec<(String, f64)>],
    trials: &[Trial],
    labels: &[String],
    together: &[usize],
) -> crate::error::Error {
    let names: Vec<&str> = together.iter().map(|&m| labels[m].as_str()).collect();
    let timed: Vec<usize> = {
        let mut v: Vec<usize> = trials.iter().map(|t| t.run).collect();
        v.sort_unstable();
        v.dedup();
        v
    };
    // A spec run separates them when adding it to the timed runs makes the shares independent.
    let share_rows = |runs: &[usize]| -> DMatrix<f64> {
        let t = reaction.terms.first().map_or(298.15, |t| t.t_ref);
        DMatrix::from_fn(runs.len(), reaction.terms.len(), |i, m| {
            let rate = |term: &crate::spec::Term| {
                term.k_at(t)
                    * term
                        .orders
                        .iter()
                        .map(|(s, n)| conc(&initial[runs[i]], s).powf(*n))
                        .product::<f64>()
            };
            let total: f64 = reaction.terms.iter().map(rate).sum();
            rate(&reaction.terms[m]) / total
        })
    };
    let would: Vec<String> = (0..spec.runs.len())
        .filter(|r| !timed.contains(r))
        .filter(|&r| {
            let mut runs = timed.clone();
            runs.push(r);
            separation(&share_rows(&runs)).0 >= INSEPARABLE
        })
        .map(|r| format!("'{}'", spec.runs[r].name))
        .collect();
    // The species whose orders differ between the terms.
    let mut differ: Vec<String> = Vec::new();
    for &a in together {
        for &b in together {
            for (s, n) in &reaction.terms[a].orders {
                let other = reaction.terms[b]
                    .orders
                    .iter()
                    .find(|(x, _)| x == s)
                    .map_or(0.0, |x| x.1);
                if (other - n).abs() > 1e-12 && !differ.contains(s) {
                    differ.push(s.clone());
                }
            }
        }
    }
    let help = if would.is_empty() {
        format!(
            "time runs that change {} against the other species",
            differ.join(" or ")
        )
    } else {
        format!(
            "time {} too: {} change {} and so the terms' shares",
            would.join(", "),
            if would.len() == 1 {
                "it would"
            } else {
                "they would"
            },
            differ.join(" or ")
        )
    };
    refuse(
        spec,
        &format!(
            "the timed runs cannot separate the terms {}: their shares of the rate are the same in every timed run",
            names.join(" and ")
        ),
        &help,
    )
}
