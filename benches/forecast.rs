//! Forecast throughput: one clock-time forecast (clock integral plus the visible-colour wait)
//! for a compiled run, and the band (three temperatures). Forecasts per second = 1 / time.

use clockprep::error::SpecSource;
use clockprep::kinetics::RunKinetics;
use clockprep::reference::equation::parse_equation;
use clockprep::spec::{Reaction, Term, Visible, VisibleAs};
use criterion::{criterion_group, criterion_main, Criterion, Throughput};
use std::hint::black_box;

fn bromate() -> RunKinetics {
    let reaction = Reaction::new(
        "bromate".into(),
        "BrO3-".into(),
        "S2O3^2-".into(),
        parse_equation("BrO3- + 6 I- + 6 H+ -> Br- + 3 I2 + 3 H2O").unwrap(),
        parse_equation("I2 + 2 S2O3^2- -> 2 I- + S4O6^2-").unwrap(),
        vec![Term {
            k_ref: 40.0,
            t_ref: 298.15,
            activation_energy: Some(54_000.0),
            orders: vec![
                ("BrO3-".into(), 1.0),
                ("I-".into(), 1.0),
                ("H+".into(), 2.0),
            ],
            source: None,
        }],
        Some(Visible {
            threshold: 1e-5,
            criterion: VisibleAs::Triiodide,
            factor: 1.5,
            source: None,
        }),
    )
    .unwrap();
    let c0 = [
        ("BrO3-".to_string(), 0.008),
        ("I-".to_string(), 0.002),
        ("H+".to_string(), 0.02),
    ];
    RunKinetics::new(&reaction, &c0, 1e-4).unwrap()
}

/// The peroxide demo's runs repeated to `n` (each renamed, its peroxide varied), forecast and
/// built into a sheet: the cost should be linear in the number of runs.
fn many_runs(n: usize) -> (clockprep::spec::Spec, Vec<Vec<(String, f64)>>) {
    let text = include_str!("../plans/willow-creek-peroxide-forecast.toml");
    let mut spec = clockprep::spec::load_for(
        SpecSource::new("bench.toml", text),
        clockprep::spec::Purpose::Forecast,
    )
    .unwrap();
    let base = spec.runs.clone();
    spec.runs = (0..n)
        .map(|i| {
            let mut r = base[i % base.len()].clone();
            r.name = format!("run {i}");
            r.targets[0].concentration *= 1.0 + (i % 97) as f64 * 1e-3;
            r
        })
        .collect();
    let initial = spec
        .runs
        .iter()
        .map(|r| r.target_concentrations())
        .collect();
    (spec, initial)
}

fn bench(c: &mut Criterion) {
    let run = bromate();
    let mut g = c.benchmark_group("forecast");
    g.throughput(Throughput::Elements(1));
    g.bench_function("one forecast (bromate, 21 °C)", |b| {
        b.iter(|| black_box(&run).at(black_box(294.15)))
    });
    g.bench_function("forecast with band (3 temperatures)", |b| {
        b.iter(|| {
            let r = black_box(&run);
            (r.at(291.15), r.at(294.15), r.at(297.15))
        })
    });
    g.finish();
    let mut g = c.benchmark_group("forecast-only runs");
    g.sample_size(10);
    for n in [10_000usize, 100_000] {
        let (spec, initial) = many_runs(n);
        let prior = spec.prior.as_ref().unwrap();
        g.throughput(Throughput::Elements(n as u64));
        g.bench_function(format!("{n} runs"), |b| {
            b.iter(|| {
                let f = clockprep::kinetics::forecast::forecast(&spec, prior, black_box(&initial));
                clockprep::report::build_forecast(&spec, prior, &f)
            })
        });
    }
    g.finish();
}

criterion_group!(benches, bench);
criterion_main!(benches);
