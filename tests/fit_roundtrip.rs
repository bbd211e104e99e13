//! The fit against synthetic times made by the forecast model itself, and its least squares
//! against an SVD solve from nalgebra.

mod common;

use common::Rng;

use clockprep::error::SpecSource;
use clockprep::kinetics::fit::{fit, least_squares, Options, Trial};
use clockprep::kinetics::RunKinetics;
use nalgebra::{DMatrix, DVector};

const DEMO: &str = "plans/maple-hollow-bromate.toml";

/// Times the forecast gives with k scaled by `k_factor`, each run timed `reps` times with
/// relative noise `sigma`.
fn synthetic(
    spec: &clockprep::spec::Spec,
    initial: &[Vec<(String, f64)>],
    k_factor: f64,
    reps: usize,
    sigma: f64,
    rng: &mut Rng,
) -> Vec<Trial> {
    let mut truth = spec.prior.as_ref().unwrap().reaction.clone();
    truth.terms[0].k_ref *= k_factor;
    let t = spec.prior.as_ref().unwrap().settings.temperature;
    let mut trials = Vec::new();
    for (run, c0) in initial.iter().enumerate() {
        let time = RunKinetics::new(&truth, c0, spec.timing.concentration)
            .unwrap()
            .at(t)
            .to_colour();
        for _ in 0..reps {
            trials.push(Trial {
                run,
                time: time * (sigma * rng.normal()).exp(),
                temperature: None,
                line: 0,
            });
        }
    }
    trials
}

fn demo() -> (clockprep::spec::Spec, Vec<Vec<(String, f64)>>) {
    clockprep::initial_concentrations(SpecSource::new(
        DEMO,
        std::fs::read_to_string(DEMO).unwrap(),
    ))
    .unwrap()
}

#[test]
fn exact_times_give_back_the_model() {
    // forecast → fit → forecast: noise-free times from k × 0.8 return k × 0.8 and the orders.
    let (spec, initial) = demo();
    let trials = synthetic(&spec, &initial, 0.8, 2, 0.0, &mut Rng(1));
    let f = fit(
        &spec,
        spec.prior.as_ref().unwrap(),
        &initial,
        &trials,
        &Options::default(),
    )
    .unwrap();
    let prior = &spec.prior.as_ref().unwrap().reaction.terms[0];
    let t = spec.prior.as_ref().unwrap().settings.temperature;
    approx::assert_relative_eq!(f.k.value, 0.8 * prior.k_at(t), max_relative = 1e-7);
    for (o, (_, n)) in f.orders.iter().zip(&prior.orders) {
        approx::assert_relative_eq!(o.estimate.value, *n, epsilon = 1e-7);
        assert!(o.consistent);
    }
}

#[test]
fn intervals_cover_the_truth_in_repeated_pilots() {
    // 200 seeded pilots of 3 replicates per run with 3 % timing noise: each 95 % interval must
    // contain the true value in at least 90 % of them.
    let (spec, initial) = demo();
    let prior = spec.prior.as_ref().unwrap().reaction.terms[0].clone();
    let t = spec.prior.as_ref().unwrap().settings.temperature;
    let true_k = 1.3 * prior.k_at(t);
    let mut covered = vec![0usize; 1 + prior.orders.len()];
    let seeds = 200;
    for seed in 0..seeds {
        let trials = synthetic(&spec, &initial, 1.3, 3, 0.03, &mut Rng(seed));
        let f = fit(
            &spec,
            spec.prior.as_ref().unwrap(),
            &initial,
            &trials,
            &Options::default(),
        )
        .unwrap();
        if (f.k.low..=f.k.high).contains(&true_k) {
            covered[0] += 1;
        }
        for (j, (o, (_, n))) in f.orders.iter().zip(&prior.orders).enumerate() {
            if (o.estimate.low..=o.estimate.high).contains(n) {
                covered[j + 1] += 1;
            }
        }
    }
    for (j, c) in covered.iter().enumerate() {
        assert!(
            *c as f64 >= 0.9 * seeds as f64,
            "parameter {j}: covered in {c} of {seeds}"
        );
    }
}

#[test]
fn least_squares_matches_an_svd_solve() {
    let mut rng = Rng(42);
    for _ in 0..20 {
        let (n, p) = (12, 4);
        let x: Vec<Vec<f64>> = (0..n)
            .map(|_| {
                (0..p)
                    .map(|j| if j == 0 { 1.0 } else { rng.normal() })
                    .collect()
            })
            .collect();
        let y: Vec<f64> = (0..n).map(|_| rng.normal()).collect();
        let ours = least_squares(&x, &y).unwrap();
        let a = DMatrix::from_fn(n, p, |i, j| x[i][j]);
        let reference = a
            .svd(true, true)
            .solve(&DVector::from_column_slice(&y), 1e-12)
            .unwrap();
        for j in 0..p {
            approx::assert_relative_eq!(
                ours.beta[j],
                reference[j],
                epsilon = 1e-10,
                max_relative = 1e-9
            );
        }
    }
}

#[test]
fn two_temperatures_give_the_activation_energy() {
    // Exact times at 18 °C and 25 °C from the prior with Ea = 62 kJ/mol instead of its 54:
    // the fit returns 62 kJ/mol and k at the prior's reference temperature (Arrhenius,
    // R from CODATA 2018).
    let (spec, initial) = demo();
    let mut truth = spec.prior.as_ref().unwrap().reaction.clone();
    truth.terms[0].activation_energy = Some(62_000.0);
    let mut trials = Vec::new();
    for (run, c0) in initial.iter().enumerate() {
        for celsius in [18.0, 25.0] {
            let temperature = 273.15 + celsius;
            let time = RunKinetics::new(&truth, c0, spec.timing.concentration)
                .unwrap()
                .at(temperature)
                .to_colour();
            trials.push(Trial {
                run,
                time,
                temperature: Some(temperature),
                line: 0,
            });
        }
    }
    let f = fit(
        &spec,
        spec.prior.as_ref().unwrap(),
        &initial,
        &trials,
        &Options::default(),
    )
    .unwrap();
    assert!(f.ea_fitted);
    approx::assert_relative_eq!(
        f.activation_energy.unwrap().value,
        62_000.0,
        max_relative = 1e-6
    );
    approx::assert_relative_eq!(f.t_ref, truth.terms[0].t_ref);
    approx::assert_relative_eq!(f.k.value, truth.terms[0].k_ref, max_relative = 1e-6);
}
