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

use crate::error::{Error, Result, SpecSource};
use crate::kinetics::{Reaction, RunKinetics, Term, R};
use crate::spec::Spec;
use crate::units::{self, Kind};
use nalgebra::{DMatrix, DVector};
use statrs::distribution::{ContinuousCDF, StudentsT};

/// A studentized residual beyond this flags an outlier (common practice: about 3).
pub const OUTLIER: f64 = 3.0;

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
    /// Residuals divided by s√(1 − hᵢᵢ).
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
    let studentized = (0..n)
        .map(|i| {
            let row = xm.row(i);
            let h = (row * &inv * row.transpose())[(0, 0)];
            residuals[i] / (s * (1.0 - h).max(1e-12).sqrt())
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
    /// ln(t / predicted)
    pub residual: f64,
    pub studentized: f64,
    pub outlier: bool,
}

#[derive(Debug, Clone, PartialEq)]
pub struct Fit {
    /// k at `t_ref` (M^(1−n) s⁻¹), with its interval from ln k.
    pub k: Estimate,
    pub t_ref: f64,
    pub orders: Vec<Order>,
    /// J/mol; fitted when trials span two or more temperatures, else the prior's (no interval).
    pub activation_energy: Option<Estimate>,
    pub ea_fitted: bool,
    pub residuals: Vec<Residual>,
    pub trials: usize,
    pub dof: usize,
    /// Residual standard deviation of ln t.
    pub s: f64,
    pub iterations: usize,
}

/// Read the times file: columns `run`, `time` and optionally `temperature` (any order, with a
/// header). Times are seconds ("83.2"), with a unit ("83.2 s", "1.4 min") or minutes:seconds
/// ("1:23.2"); temperatures carry a unit ("21.5 °C") or are bare degrees Celsius.
pub fn read_times(source: &SpecSource, spec: &Spec) -> Result<Vec<Trial>> {
    let mut reader = csv::ReaderBuilder::new()
        .trim(csv::Trim::All)
        .flexible(true)
        .from_reader(source.text.as_bytes());
    let header_err = |msg: &str| {
        source.error(
            0..0,
            msg.to_string(),
            "header",
            "start the file with a header line such as: run,time,temperature",
        )
    };
    let headers = reader
        .headers()
        .map_err(|e| header_err(&format!("the times file is not readable CSV: {e}")))?
        .clone();
    let col = |want: &str| {
        headers
            .iter()
            .position(|h| h.to_ascii_lowercase().starts_with(want))
    };
    let run_col = col("run").ok_or_else(|| header_err("the times file has no 'run' column"))?;
    let time_col = col("time").ok_or_else(|| header_err("the times file has no 'time' column"))?;
    let temp_col = col("temp");
    let mut trials = Vec::new();
    for record in reader.records() {
        let record = record.map_err(|e| {
            let at = e.position().map_or(0, |p| p.byte() as usize);
            source.error(
                at..at,
                format!("the times file is not readable CSV: {e}"),
                "here",
                "one trial per line: run,time[,temperature]",
            )
        })?;
        let pos = record.position().expect("records have positions");
        let line = pos.line() as usize;
        let start = pos.byte() as usize;
        // Byte range of field i in the file (unquoted fields).
        let span = |i: usize| {
            let r = record.range(i).unwrap_or(0..0);
            start + r.start + i..start + r.end + i
        };
        if record.iter().all(|f| f.is_empty()) {
            continue;
        }
        let name = record.get(run_col).unwrap_or("");
        let run = spec
            .runs
            .iter()
            .position(|r| r.name == name)
            .ok_or_else(|| {
                source.error(
                    span(run_col),
                    format!("run '{name}' is not in the spec"),
                    "unknown run",
                    format!(
                        "runs in the spec: {}",
                        spec.runs
                            .iter()
                            .map(|r| format!("'{}'", r.name))
                            .collect::<Vec<_>>()
                            .join(", ")
                    ),
                )
            })?;
        let text = record.get(time_col).unwrap_or("");
        let time = parse_time(text).ok_or_else(|| {
            source.error(
                span(time_col),
                format!("'{text}' is not a time"),
                "not a time",
                "write seconds (83.2), a unit (83.2 s, 1.4 min) or minutes:seconds (1:23.2)",
            )
        })?;
        if time.is_nan() || time <= 0.0 {
            return Err(source.error(
                span(time_col),
                "a measured time must be positive",
                "not positive",
                "check the stopwatch reading; leave out trials that did not clock",
            ));
        }
        let temperature = match temp_col
            .and_then(|c| record.get(c))
            .filter(|t| !t.is_empty())
        {
            None => None,
            Some(t) => {
                let value = units::parse(t, Kind::Temperature)
                    .ok()
                    .or_else(|| t.parse::<f64>().ok().map(|c| c + 273.15));
                match value {
                    Some(v) if (273.15..=333.15).contains(&v) => Some(v),
                    _ => {
                        return Err(source.error(
                            span(temp_col.unwrap_or(0)),
                            format!("'{t}' is not a temperature from 0 to 60 °C"),
                            "not a temperature",
                            "write degrees Celsius (21.5) or with a unit (21.5 °C, 294.65 K)",
                        ))
                    }
                }
            }
        };
        trials.push(Trial {
            run,
            time,
            temperature,
            line,
        });
    }
    if trials.is_empty() {
        return Err(header_err("the times file has no trials"));
    }
    Ok(trials)
}

/// Seconds from "83.2", "83.2 s", "1.4 min" or "1:23.2".
pub fn parse_time(text: &str) -> Option<f64> {
    let t = text.trim();
    if let Some((m, s)) = t.split_once(':') {
        let m: f64 = m.trim().parse().ok()?;
        let s: f64 = s.trim().parse().ok()?;
        return (m >= 0.0 && (0.0..60.0).contains(&s)).then_some(m * 60.0 + s);
    }
    if let Ok(v) = t.parse::<f64>() {
        return v.is_finite().then_some(v);
    }
    units::parse(t, Kind::Time).ok()
}

/// How the orders are treated: fitted where the design varies them, or fixed.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct Options {
    /// Orders to hold fixed (species, order); the others are fitted.
    pub fixed: Vec<(String, f64)>,
}

/// Read `--orders`: "1,1,2" in the order of the rate law's species, or "I-=1,H+=2" by name
/// (naming only some of them fixes only those).
pub fn parse_orders(
    text: &str,
    species: &[String],
) -> std::result::Result<Vec<(String, f64)>, String> {
    let parts: Vec<&str> = text
        .split(',')
        .map(str::trim)
        .filter(|p| !p.is_empty())
        .collect();
    let number = |v: &str| {
        v.trim()
            .parse::<f64>()
            .ok()
            .filter(|n| n.is_finite() && (-2.0..=5.0).contains(n))
            .ok_or_else(|| format!("'{v}' is not an order from -2 to 5"))
    };
    if parts.iter().all(|p| !p.contains('=')) {
        if parts.len() != species.len() {
            return Err(format!(
                "{} orders given for {} species ({})",
                parts.len(),
                species.len(),
                species.join(", ")
            ));
        }
        return species
            .iter()
            .zip(&parts)
            .map(|(s, v)| Ok((s.clone(), number(v)?)))
            .collect();
    }
    parts
        .iter()
        .map(|p| {
            let (s, v) = p
                .split_once('=')
                .ok_or_else(|| format!("'{p}' is not species=order"))?;
            let s = crate::species::canonical(s);
            if !species.contains(&s) {
                return Err(format!(
                    "{s} is not in the rate law ({})",
                    species.join(", ")
                ));
            }
            Ok((s, number(v)?))
        })
        .collect()
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
    initial: &[Vec<(String, f64)>],
    trials: &[Trial],
    options: &Options,
) -> Result<Fit> {
    let reaction = spec.reaction.as_ref().ok_or_else(|| {
        refuse(
            spec,
            "a fit needs the prior rate law in [reaction]",
            "add [reaction] with a preset or a rate law",
        )
    })?;
    let settings = spec
        .forecast
        .as_ref()
        .expect("a reaction comes with forecast settings");
    let [term] = reaction.terms.as_slice() else {
        return Err(refuse(
            spec,
            "clockprep fits a one-term rate law; this prior has several terms",
            "fit one path at a time: spell out [reaction] with one [[reaction.term]]",
        ));
    };
    let species: Vec<String> = term.orders.iter().map(|(s, _)| s.clone()).collect();
    for (s, _) in &options.fixed {
        if !species.contains(s) {
            return Err(refuse(
                spec,
                &format!("--orders names {s}, which is not in the rate law"),
                &format!("the rate law's species are {}", species.join(", ")),
            ));
        }
    }
    let ln_c = |run: usize, sp: &str| {
        initial[run]
            .iter()
            .find(|(s, _)| s == sp)
            .map_or(f64::NAN, |(_, c)| c.ln())
    };
    let free: Vec<usize> = (0..species.len())
        .filter(|&j| !options.fixed.iter().any(|(s, _)| *s == species[j]))
        .collect();
    // An order can only be fitted when its species takes two or more values.
    for &j in &free {
        let mut values: Vec<f64> = trials.iter().map(|t| ln_c(t.run, &species[j])).collect();
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
    let temps: Vec<f64> = trials
        .iter()
        .map(|t| t.temperature.unwrap_or(settings.temperature))
        .collect();
    let mut distinct = temps.clone();
    distinct.sort_by(f64::total_cmp);
    distinct.dedup_by(|a, b| (*a - *b).abs() < 0.05);
    let fit_ea = distinct.len() >= 2;
    // With one temperature, k is fitted there; with several, at the prior's reference.
    let t_ref = if fit_ea { term.t_ref } else { distinct[0] };

    let mut orders: Vec<(String, f64)> = term
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
    let mut ols = None;
    let mut iterations = 0;
    for it in 1..=30 {
        iterations = it;
        let unit = unit_reaction(reaction, &orders);
        let mut x = Vec::new();
        let mut y = Vec::new();
        for (t, &temp) in trials.iter().zip(&temps) {
            let kin = RunKinetics::new(&unit, &initial[t.run], spec.timing.concentration).map_err(
                |e| {
                    refuse(
                        spec,
                        &format!(
                            "run '{}' has no clock under this rate law: {e}",
                            spec.runs[t.run].name
                        ),
                        "check the run's concentrations against the timing reagent",
                    )
                },
            )?;
            // t(k = 1) = J / Π c₀^n, so ln J = ln t₁ + Σ n ln c₀.
            let ln_j = kin.at(temp).to_colour().ln()
                + orders.iter().map(|(s, n)| n * ln_c(t.run, s)).sum::<f64>();
            let fixed_part: f64 = orders
                .iter()
                .enumerate()
                .filter(|(j, _)| !free.contains(j))
                .map(|(_, (s, n))| n * ln_c(t.run, s))
                .sum();
            let mut row = vec![1.0];
            row.extend(free.iter().map(|&j| ln_c(t.run, &species[j])));
            if fit_ea {
                row.push(-(1.0 / temp - 1.0 / t_ref) / R);
            }
            x.push(row);
            y.push(ln_j - t.time.ln() - fixed_part);
        }
        let solved = least_squares(&x, &y).map_err(|e| match e {
            OlsError::TooFewRows => refuse(
                spec,
                &format!(
                    "{} trials cannot fit {} parameters",
                    trials.len(),
                    x[0].len()
                ),
                "time more trials, or fix some orders with --orders",
            ),
            OlsError::RankDeficient(cols) => {
                let names: Vec<String> = cols
                    .iter()
                    .map(|&c| match c {
                        0 => "k".to_string(),
                        c if c <= free.len() => format!("the order in {}", species[free[c - 1]]),
                        _ => "the activation energy".to_string(),
                    })
                    .collect();
                refuse(
                    spec,
                    &format!("the timed runs cannot tell {} apart", names.join(" and ")),
                    "vary one species at a time, or fix orders with --orders",
                )
            }
        })?;
        let mut moved = 0.0f64;
        for (k, &j) in free.iter().enumerate() {
            moved = moved.max((solved.beta[1 + k] - orders[j].1).abs());
            orders[j].1 = solved.beta[1 + k];
        }
        ols = Some((solved, x, y));
        if moved < 1e-10 || free.is_empty() {
            break;
        }
    }
    let (ols, _, _) = ols.expect("at least one iteration");
    if ols.dof == 0 {
        return Err(refuse(
            spec,
            "as many parameters as trials: no error estimate is possible",
            "time replicates or more runs, or fix orders with --orders",
        ));
    }
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
    let order_out = orders
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
        .collect();
    let activation_energy = if fit_ea {
        Some(est(1 + free.len()))
    } else {
        term.activation_energy.map(|e| Estimate {
            value: e,
            se: f64::NAN,
            low: f64::NAN,
            high: f64::NAN,
        })
    };
    let residuals = trials
        .iter()
        .enumerate()
        .map(|(i, t)| {
            let r = ols.residuals[i];
            // y = ln J − ln t: a positive residual means the trial ran faster than fitted.
            Residual {
                run: spec.runs[t.run].name.clone(),
                line: t.line,
                time: t.time,
                predicted: t.time * r.exp(),
                residual: -r,
                studentized: ols.studentized[i],
                outlier: ols.studentized[i].abs() > OUTLIER,
            }
        })
        .collect();
    Ok(Fit {
        k,
        t_ref,
        orders: order_out,
        activation_energy,
        ea_fitted: fit_ea,
        residuals,
        trials: trials.len(),
        dof: ols.dof,
        s: ols.s,
        iterations,
    })
}

fn refuse(spec: &Spec, message: &str, help: &str) -> Error {
    spec.source
        .error(0..0, message.to_string(), "", help.to_string())
}

/// The updated prior as a TOML fragment to paste over `[reaction]`, with the fit as comments.
pub fn toml_fragment(spec: &Spec, fit: &Fit, times_name: &str) -> String {
    use std::fmt::Write;
    let reaction = spec.reaction.as_ref().expect("fitted against a reaction");
    let q = |s: &str| toml::Value::String(s.to_string()).to_string();
    let overall: f64 = fit
        .orders
        .iter()
        .map(|o| (o.estimate.value * 1e4).round() / 1e4)
        .sum();
    let unit = {
        let p = 1.0 - overall;
        if p.abs() < 1e-12 {
            "s^-1".to_string()
        } else {
            format!("M^{} s^-1", (p * 1e4).round() / 1e4)
        }
    };
    let mut out = String::new();
    let _ = writeln!(
        out,
        "# clockprep fit: {} trials from {} against {}",
        fit.trials, times_name, spec.source.name
    );
    let _ = writeln!(
        out,
        "# k = {} {unit} at {:.1} °C (95 % CI {} to {}); residual sd of ln t {:.4} ({} degrees of freedom)",
        sig4(fit.k.value),
        fit.t_ref - 273.15,
        sig4(fit.k.low),
        sig4(fit.k.high),
        fit.s,
        fit.dof
    );
    for o in &fit.orders {
        if o.fixed {
            let _ = writeln!(
                out,
                "# order in {}: {} (fixed)",
                o.species, o.estimate.value
            );
        } else {
            let verdict = if o.consistent {
                format!("consistent with {}", o.nearest)
            } else {
                format!("not consistent with {}", o.nearest)
            };
            let _ = writeln!(
                out,
                "# order in {}: {:.3} ± {:.3} (95 % CI {:.3} to {:.3}), {verdict}",
                o.species, o.estimate.value, o.estimate.se, o.estimate.low, o.estimate.high
            );
        }
    }
    if let Some(ea) = &fit.activation_energy {
        if fit.ea_fitted {
            let _ = writeln!(
                out,
                "# activation energy: {:.1} ± {:.1} kJ/mol (95 % CI {:.1} to {:.1})",
                ea.value / 1e3,
                ea.se / 1e3,
                ea.low / 1e3,
                ea.high / 1e3
            );
        } else {
            let _ = writeln!(out, "# activation energy: {:.1} kJ/mol kept from the prior (all trials at one temperature)", ea.value / 1e3);
        }
    }
    let _ = writeln!(
        out,
        "# residuals (line, run, measured s, fitted s, studentized):"
    );
    for r in &fit.residuals {
        let flag = if r.outlier { "  <- outlier" } else { "" };
        let _ = writeln!(
            out,
            "#   {:>4}  {:<20} {:>9.2} {:>9.2} {:>+7.2}{flag}",
            r.line, r.run, r.time, r.predicted, r.studentized
        );
    }
    let consistent: Vec<String> = fit
        .orders
        .iter()
        .map(|o| {
            format!(
                "{}={}",
                o.species,
                if o.consistent {
                    o.nearest
                } else {
                    o.estimate.value
                }
            )
        })
        .collect();
    if fit.orders.iter().any(|o| !o.fixed) {
        let _ = writeln!(
            out,
            "# to refit k with whole or half orders: clockprep fit SPEC TIMES --orders {}",
            consistent.join(",")
        );
    }
    let _ = writeln!(
        out,
        "# A prior from a few trials: check it against the next pilot run.\n"
    );
    let _ = writeln!(out, "[reaction]");
    let _ = writeln!(out, "rate_species = {}", q(&reaction.rate_species));
    let eq = |e: &crate::kinetics::Equation| {
        let side = |v: &Vec<(String, f64)>| {
            v.iter()
                .map(|(s, c)| {
                    if *c == 1.0 {
                        s.clone()
                    } else {
                        format!("{c} {s}")
                    }
                })
                .collect::<Vec<_>>()
                .join(" + ")
        };
        format!("{} -> {}", side(&e.reactants), side(&e.products))
    };
    let _ = writeln!(out, "main = {}", q(&eq(&reaction.main)));
    let _ = writeln!(out, "clock = {}", q(&eq(&reaction.clock)));
    if let Some(v) = &reaction.visible {
        let _ = writeln!(
            out,
            "visible = {{ threshold = {}, source = {} }}",
            q(&format!("{} M", sig4(v.threshold))),
            q(v.source.as_deref().unwrap_or(""))
        );
    }
    let _ = writeln!(out, "\n[[reaction.term]]");
    let _ = writeln!(out, "k = {}", q(&format!("{} {unit}", sig4(fit.k.value))));
    let _ = writeln!(out, "at = {}", q(&format!("{:.2} K", fit.t_ref)));
    if let Some(ea) = &fit.activation_energy {
        let _ = writeln!(
            out,
            "activation_energy = {}",
            q(&format!("{:.1} kJ/mol", ea.value / 1e3))
        );
    }
    let orders: Vec<String> = fit
        .orders
        .iter()
        .map(|o| {
            format!(
                "{} = {}",
                q(&o.species),
                (o.estimate.value * 1e4).round() / 1e4
            )
        })
        .collect();
    let _ = writeln!(out, "orders = {{ {} }}", orders.join(", "));
    let _ = writeln!(
        out,
        "source = {}",
        q(&format!(
            "fit to {} trials in {} (95 % CI of k {} to {})",
            fit.trials,
            times_name,
            sig4(fit.k.low),
            sig4(fit.k.high)
        ))
    );
    out
}

fn sig4(v: f64) -> String {
    if v == 0.0 || !v.is_finite() {
        return format!("{v}");
    }
    let mag = v.abs().log10().floor() as i32;
    if !(-3..6).contains(&mag) {
        return format!("{v:.3e}");
    }
    format!("{:.*}", (3 - mag).max(0) as usize, v)
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
