//! Forecast throughput: one clock-time forecast (clock integral plus the visible-colour wait)
//! for a compiled run, and the band (three temperatures). Forecasts per second = 1 / time.

use clockprep::kinetics::RunKinetics;
use clockprep::reference::equation::parse_equation;
use clockprep::spec::{Reaction, Term, Visible};
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
}

criterion_group!(benches, bench);
criterion_main!(benches);
