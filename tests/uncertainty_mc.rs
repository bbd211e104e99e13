//! Seeded Monte Carlo check of the first-order uncertainty propagation on the bromate demo:
//! every delivered volume drawn from its tolerance (rectangular systematic part, normal random
//! part), every stock concentration from its relative uncertainty; the spread of the final
//! concentrations and of the forecast time must match the first-order values within 5 %.

mod common;

use common::Rng;

use clockprep::error::SpecSource;
use clockprep::kinetics::RunKinetics;
use clockprep::lab::uncertainty::{propagate, tolerance};

fn sd(x: &[f64]) -> f64 {
    let m = x.iter().sum::<f64>() / x.len() as f64;
    (x.iter().map(|v| (v - m).powi(2)).sum::<f64>() / (x.len() - 1) as f64).sqrt()
}

/// The final concentrations of a run mixed with these delivered `volumes` (one per addition)
/// from stocks whose concentrations are off by `stock_factor`: Σ c·V / Σ V per species.
fn mixed(
    lab: &clockprep::spec::Lab,
    run: &clockprep::solve::RunSolution,
    volumes: &[f64],
    stock_factor: &[f64],
) -> Vec<(String, f64)> {
    let total: f64 = volumes.iter().sum();
    run.concentrations
        .iter()
        .map(|(sp, _)| {
            let amount: f64 = run
                .additions
                .iter()
                .zip(volumes)
                .filter_map(|(a, v)| {
                    a.stock
                        .map(|s| lab.stocks[s].concentration_of(sp) * stock_factor[s] * v)
                })
                .sum();
            (sp.clone(), amount / total)
        })
        .collect()
}

#[test]
fn first_order_agrees_with_monte_carlo() {
    let path = "plans/maple-hollow-bromate.toml";
    let spec = clockprep::spec::load(SpecSource::new(
        path,
        std::fs::read_to_string(path).unwrap(),
    ))
    .unwrap();
    let lab = spec.lab.as_ref().unwrap();
    let solution = clockprep::solve::solve(&spec, lab).unwrap();
    // The stocks' uncertainties as the sheets use them: weighed ones from the masses weighed.
    let lab = &clockprep::lab::weighing::with_weighed_masses(&spec, lab, &solution);
    let run = &solution.runs[0];
    let first = propagate(&spec, lab, run);
    let prior = spec.prior.as_ref().unwrap();
    let reaction = &prior.reaction;
    let temperature = prior.settings.temperature;
    let mut rng = Rng(20261202);
    let n = 20_000;
    let species: Vec<String> = run.concentrations.iter().map(|(s, _)| s.clone()).collect();
    let mut ln_c: Vec<Vec<f64>> = vec![Vec::with_capacity(n); species.len()];
    let mut ln_t = Vec::with_capacity(n);
    for _ in 0..n {
        let stock_factor: Vec<f64> = lab
            .stocks
            .iter()
            .map(|s| 1.0 + s.uncertainty * rng.normal())
            .collect();
        let volumes: Vec<f64> = run
            .additions
            .iter()
            .map(|a| {
                let mut v = a.volume;
                for &(d, fills) in &a.delivery.parts {
                    let t = tolerance(&lab.devices[d]);
                    let draws = if lab.devices[d].is_volumetric() {
                        fills
                    } else {
                        1
                    };
                    for _ in 0..draws {
                        v += t.systematic * (2.0 * rng.uniform() - 1.0) + t.random * rng.normal();
                    }
                }
                v
            })
            .collect();
        let c = mixed(lab, run, &volumes, &stock_factor);
        for (k, (_, ck)) in c.iter().enumerate() {
            ln_c[k].push(ck.ln());
        }
        let timing = c.iter().find(|(s, _)| *s == spec.timing.species).unwrap().1;
        let kin = RunKinetics::new(reaction, &c, timing).unwrap();
        ln_t.push(kin.at(temperature).to_colour().ln());
    }
    for (k, (sp, u)) in first.species.iter().enumerate() {
        let mc = sd(&ln_c[k]);
        assert!(
            (mc - u).abs() / u < 0.05,
            "{sp}: first order {u}, Monte Carlo {mc}"
        );
    }
    let u_t = first.time.unwrap();
    let mc_t = sd(&ln_t);
    assert!(
        (mc_t - u_t).abs() / u_t < 0.05,
        "time: first order {u_t}, Monte Carlo {mc_t}"
    );
}

/// Seeded Monte Carlo of whole labs for `design`'s correlated error model: each lab draws one
/// error per stock flask, each station one calibration error per device (rectangular within
/// its tolerance) and one thermometer offset (rectangular ±0.5 °C), each trial its own scale
/// readings (rectangular ± a fifth of a graduation, two readings), stopwatch error and
/// temperature; the times come from the kinetics at the perturbed concentrations and
/// temperature, and every station fits ln(1/t) on the nominal ln c by weighted least squares.
/// The spread of the fitted orders and ln k, per station and pooled over the stations, must
/// match the model's standard errors within 10 %.
#[test]
fn design_standard_errors_agree_with_monte_carlo_of_the_fits() {
    use clockprep::kinetics::design::{generate, with_runs};
    use nalgebra::{DMatrix, DVector};
    let path = "plans/maple-hollow-bromate.toml";
    let text = std::fs::read_to_string(path).unwrap();
    let sheet = clockprep::design(SpecSource::new(path, text.clone())).unwrap();
    let spec = clockprep::spec::load_for(
        SpecSource::new(path, text),
        clockprep::spec::Purpose::Design,
    )
    .unwrap();
    let d = spec.design.as_ref().unwrap();
    let runs = generate(d);
    let designed = with_runs(&spec, &runs);
    let lab = designed.lab.as_ref().unwrap();
    let solution = clockprep::solve::solve(&designed, lab).unwrap();
    let lab = &clockprep::lab::weighing::with_weighed_masses(&designed, lab, &solution);
    let prior = designed.prior.as_ref().unwrap();
    let reaction = &prior.reaction;
    let t_plan = prior.settings.temperature;
    let term = &reaction.terms[0];
    let ea = term.activation_energy.unwrap();
    let rate_species: Vec<String> = term.orders.iter().map(|(s, _)| s.clone()).collect();
    let stations = spec.stations as usize;
    let reps = spec.replicates as usize;
    let weights: Vec<f64> = sheet
        .runs
        .iter()
        .map(|r| 1.0 / (r.sigma_ln_t * r.sigma_ln_t))
        .collect();
    // The station's estimator: rows [1, ln c…] per trial, weighted least squares.
    let rows: Vec<usize> = (0..runs.len())
        .flat_map(|i| std::iter::repeat_n(i, reps))
        .collect();
    let p = 1 + rate_species.len();
    let x = DMatrix::from_fn(rows.len(), p, |r, c| match c {
        0 => 1.0,
        _ => {
            let (_, v) = runs[rows[r]]
                .targets
                .iter()
                .find(|(s, _)| *s == rate_species[c - 1])
                .unwrap();
            v.ln()
        }
    });
    let w = DMatrix::from_diagonal(&DVector::from_iterator(
        rows.len(),
        rows.iter().map(|&i| weights[i]),
    ));
    let estimator = (x.transpose() * &w * &x).try_inverse().unwrap() * x.transpose() * &w;
    let total_w: f64 = rows.iter().map(|&i| weights[i]).sum();
    let centre: Vec<f64> = (1..p)
        .map(|c| (0..rows.len()).map(|r| x[(r, c)]).sum::<f64>() / rows.len() as f64)
        .collect();
    let orders_whole: Vec<f64> = term.orders.iter().map(|(_, n)| *n).collect();

    let mut rng = Rng(7_122_026);
    let labs = 600;
    // Per parameter: the station estimates and the pooled (station mean) estimate per lab.
    let names = [
        "ln k at 1 M",
        "ln k at centre",
        "ln k, orders fixed",
        "ln k at 25 °C, orders fixed",
    ];
    let n_par = names.len() + rate_species.len();
    let mut per_station: Vec<Vec<f64>> = vec![Vec::new(); n_par];
    let mut pooled: Vec<Vec<f64>> = vec![Vec::new(); n_par];
    let r_gas = 8.314462618;
    for _ in 0..labs {
        let stock_factor: Vec<f64> = lab
            .stocks
            .iter()
            .map(|s| 1.0 + s.uncertainty * rng.normal())
            .collect();
        let mut sums = vec![0.0; n_par];
        for _ in 0..stations {
            let bias: Vec<f64> = lab
                .devices
                .iter()
                .map(|dev| tolerance(dev).systematic * (2.0 * rng.uniform() - 1.0))
                .collect();
            let thermometer = 0.5 * (2.0 * rng.uniform() - 1.0);
            let mut y = Vec::with_capacity(rows.len());
            for &i in &rows {
                let run = &solution.runs[i];
                let volumes: Vec<f64> = run
                    .additions
                    .iter()
                    .map(|a| {
                        let mut v = a.volume;
                        for &(dv, n) in &a.delivery.parts {
                            let dev = &lab.devices[dv];
                            let tol = tolerance(dev);
                            if dev.is_volumetric() {
                                v += n as f64 * bias[dv];
                            } else {
                                v += bias[dv] + tol.random * rng.normal();
                                let graduated = !matches!(
                                    dev.kind,
                                    clockprep::reference::glassware::DeviceKind::PistonPipette
                                );
                                if graduated {
                                    // Final minus initial reading.
                                    let read = || 0.2 * dev.step;
                                    v += read() * (2.0 * rng.uniform() - 1.0)
                                        - read() * (2.0 * rng.uniform() - 1.0);
                                }
                            }
                        }
                        v
                    })
                    .collect();
                let c = mixed(lab, run, &volumes, &stock_factor);
                let timing = c.iter().find(|(s, _)| *s == spec.timing.species).unwrap().1;
                let t_trial = t_plan + d.temperature_spread * rng.normal();
                let t = RunKinetics::new(reaction, &c, timing)
                    .unwrap()
                    .at(t_trial)
                    .to_colour();
                // The stopwatch's relative error.
                y.push(-(t * (1.0 + d.timing_error * rng.normal())).ln());
            }
            let beta = &estimator * DVector::from_vec(y.clone());
            let at_centre = beta[0]
                + centre
                    .iter()
                    .zip(beta.iter().skip(1))
                    .map(|(c, b)| c * b)
                    .sum::<f64>();
            // Orders fixed at their whole values: ln k is the weighted mean of the trials'.
            let fixed = rows
                .iter()
                .enumerate()
                .map(|(r, &i)| {
                    let ln_prod: f64 = (1..p).map(|c| orders_whole[c - 1] * x[(r, c)]).sum();
                    weights[i] * (y[r] - ln_prod)
                })
                .sum::<f64>()
                / total_w;
            // Corrected to the reference temperature with the station's thermometer reading.
            let t_read = t_plan + thermometer;
            let at_ref = fixed + ea / r_gas * (1.0 / t_read - 1.0 / term.t_ref);
            let values: Vec<f64> = [beta[0], at_centre, fixed, at_ref]
                .into_iter()
                .chain(beta.iter().skip(1).copied())
                .collect();
            for (k, v) in values.iter().enumerate() {
                per_station[k].push(*v);
                sums[k] += v;
            }
        }
        for k in 0..n_par {
            pooled[k].push(sums[k] / stations as f64);
        }
    }
    let model = |name: &str| {
        sheet
            .precision
            .iter()
            .find(|p| p.parameter == name)
            .unwrap_or_else(|| panic!("no precision entry {name}"))
    };
    let labels: Vec<String> = names
        .iter()
        .map(|s| s.to_string())
        .chain(rate_species.iter().cloned())
        .collect();
    for (k, name) in labels.iter().enumerate() {
        let m = model(name);
        let (mc_station, mc_pooled) = (sd(&per_station[k]), sd(&pooled[k]));
        eprintln!(
            "{name}: station {mc_station:.4} vs {:.4}, pooled {mc_pooled:.4} vs {:.4}",
            m.per_station, m.pooled
        );
        approx::assert_relative_eq!(mc_station, m.per_station, max_relative = 0.10);
        approx::assert_relative_eq!(mc_pooled, m.pooled, max_relative = 0.10);
    }
}
