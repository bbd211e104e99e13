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
        let mut total = 0.0;
        let mut amount = vec![0.0; species.len()];
        for a in &run.additions {
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
            total += v;
            if let Some(s) = a.stock {
                for (k, sp) in species.iter().enumerate() {
                    amount[k] += lab.stocks[s].concentration_of(sp) * stock_factor[s] * v;
                }
            }
        }
        let c: Vec<(String, f64)> = species
            .iter()
            .cloned()
            .zip(amount.iter().map(|a| a / total))
            .collect();
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
