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
    synthetic_terms(spec, initial, &[k_factor], reps, sigma, rng)
}

/// The same with each term's k scaled by its own factor.
fn synthetic_terms(
    spec: &clockprep::spec::Spec,
    initial: &[Vec<(String, f64)>],
    factors: &[f64],
    reps: usize,
    sigma: f64,
    rng: &mut Rng,
) -> Vec<Trial> {
    let mut truth = spec.prior.as_ref().unwrap().reaction.clone();
    for (term, f) in truth.terms.iter_mut().zip(factors) {
        term.k_ref *= f;
    }
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

const PEROXIDE_DEMO: &str = "plans/willow-creek-peroxide-forecast.toml";

fn peroxide() -> (clockprep::spec::Spec, Vec<Vec<(String, f64)>>) {
    clockprep::initial_concentrations(SpecSource::new(
        PEROXIDE_DEMO,
        std::fs::read_to_string(PEROXIDE_DEMO).unwrap(),
    ))
    .unwrap()
}

#[test]
fn two_term_fit_gives_back_each_terms_k_from_exact_times() {
    // forecast → fit: noise-free times from k₁ × 1.3 and k₂ × 0.6 return both.
    use clockprep::kinetics::fit_terms::fit_terms;
    let (spec, initial) = peroxide();
    let prior = spec.prior.as_ref().unwrap();
    let trials = synthetic_terms(&spec, &initial, &[1.3, 0.6], 2, 0.0, &mut Rng(3));
    let f = fit_terms(&spec, prior, &initial, &trials).unwrap();
    let t = prior.settings.temperature;
    for (fitted, (term, factor)) in f
        .terms
        .iter()
        .zip(prior.reaction.terms.iter().zip([1.3, 0.6]))
    {
        approx::assert_relative_eq!(fitted.k.value, factor * term.k_at(t), max_relative = 1e-6);
    }
}

#[test]
fn two_term_standard_errors_match_the_spread_of_repeated_pilots() {
    // 300 seeded pilots of 3 replicates per run with 2 % timing noise: the standard deviation
    // of each fitted ln k over the pilots must match the mean Jacobian standard error within
    // 10 % (for a model close to linear in ln k, E[s²] = σ²), and each 95 % interval must
    // contain the truth in at least 90 % of them; the profile checks stay near 1.
    use clockprep::kinetics::fit_terms::fit_terms;
    let (spec, initial) = peroxide();
    let prior = spec.prior.as_ref().unwrap();
    let t = prior.settings.temperature;
    let truth: Vec<f64> = prior
        .reaction
        .terms
        .iter()
        .zip([1.3, 0.6])
        .map(|(term, f)| (f * term.k_at(t)).ln())
        .collect();
    let mut rng = Rng(20_261_202);
    let pilots = 300;
    let mut ln_k = vec![Vec::new(); 2];
    let mut se = [0.0; 2];
    let mut covered = [0usize; 2];
    let mut profile = Vec::new();
    for _ in 0..pilots {
        let trials = synthetic_terms(&spec, &initial, &[1.3, 0.6], 3, 0.02, &mut rng);
        let f = fit_terms(&spec, prior, &initial, &trials).unwrap();
        for m in 0..2 {
            let v = f.terms[m].k.value.ln();
            ln_k[m].push(v);
            se[m] += f.terms[m].ln_k_se / pilots as f64;
            if (f.terms[m].k.low.ln()..=f.terms[m].k.high.ln()).contains(&truth[m]) {
                covered[m] += 1;
            }
            profile.push(f.terms[m].profile.0);
            profile.push(f.terms[m].profile.1);
        }
    }
    let sd = |x: &[f64]| {
        let m = x.iter().sum::<f64>() / x.len() as f64;
        (x.iter().map(|v| (v - m).powi(2)).sum::<f64>() / (x.len() - 1) as f64).sqrt()
    };
    for m in 0..2 {
        eprintln!("term {m}: sd {:.4} vs mean se {:.4}", sd(&ln_k[m]), se[m]);
        approx::assert_relative_eq!(sd(&ln_k[m]), se[m], max_relative = 0.10);
        assert!(covered[m] as f64 >= 0.90 * pilots as f64, "{covered:?}");
    }
    assert!(
        profile.iter().all(|p| (0.8..=1.25).contains(p)),
        "{profile:?}"
    );
}

#[test]
fn two_term_fit_warns_when_the_runs_barely_separate_the_terms() {
    // The acid run at 0.104 M instead of 0.300 M: the two paths' shares hardly change between
    // the runs, so each k is known to worse than a factor of 1.6 and the fit says so.
    use clockprep::kinetics::fit_terms::fit_terms;
    let (spec, mut initial) = peroxide();
    let prior = spec.prior.as_ref().unwrap().clone();
    for (s, c) in initial[3].iter_mut() {
        if s == "H+" {
            *c = 0.104;
        }
    }
    let trials = synthetic_terms(&spec, &initial, &[1.3, 0.6], 3, 0.02, &mut Rng(11));
    let f = fit_terms(&spec, &prior, &initial, &trials).unwrap();
    assert!(
        f.warnings.iter().any(|w| w.contains("barely separate")),
        "{:?}",
        f.warnings
    );
    assert!(f.terms.iter().all(|t| t.ln_k_se > 0.5));
    // So weakly determined, the sum of squares is far from quadratic over the interval: the
    // profile check says the Jacobian interval is only a rough guide.
    assert!(
        f.warnings.iter().any(|w| w.contains("profile check")),
        "{:?}",
        f.warnings
    );
}
