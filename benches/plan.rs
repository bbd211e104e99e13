//! Benchmarks of the whole plan (spec → solve → portions → totals → report): a 12-run class
//! plan, 1,000 distinct runs with the ionic strength held, and 2,400 runs in which targets
//! repeat (each distinct set is solved once).

use clockprep::error::SpecSource;
use criterion::{criterion_group, criterion_main, Criterion};
use std::hint::black_box;

const DEMO: &str = include_str!("../plans/maple-hollow-bromate.toml");

/// The demo plan with its runs replaced by `n` runs cycling through `distinct` target sets.
fn plan_with_runs(n: usize, distinct: usize) -> String {
    let head = &DEMO[..DEMO.find("[[run]]").unwrap()];
    let mut s = head.to_string();
    for i in 0..n {
        let k = i % distinct;
        let iodide = 1.50 + 0.25 * (k % 6) as f64;
        let bromate = 6.0 + 1.0 * (k / 6 % 4) as f64;
        let acid = 15.0 + 2.5 * (k / 24 % 4) as f64;
        s.push_str(&format!(
            "[[run]]\nname = \"run {i}\"\ntargets = {{ \"I-\" = \"{iodide:.2} mM\", \"BrO3-\" = \"{bromate:.2} mM\", \"H+\" = \"{acid:.1} mM\" }}\n\n"
        ));
    }
    s
}

/// The demo plan with 1,000 distinct runs on a 10 × 10 × 10 grid of iodide, bromate and acid;
/// the demo holds the ionic strength at the largest value any run reaches.
fn plan_thousand_distinct() -> String {
    let mut s = DEMO[..DEMO.find("[[run]]").unwrap()].to_string();
    for k in 0..1000 {
        let iodide = 1.50 + 0.05 * (k % 10) as f64;
        let bromate = 6.0 + 0.2 * (k / 10 % 10) as f64;
        let acid = 15.0 + 0.5 * (k / 100 % 10) as f64;
        s.push_str(&format!(
            "[[run]]\nname = \"run {k}\"\ntargets = {{ \"I-\" = \"{iodide:.2} mM\", \"BrO3-\" = \"{bromate:.2} mM\", \"H+\" = \"{acid:.1} mM\" }}\n\n"
        ));
    }
    s
}

fn bench(c: &mut Criterion) {
    let twelve = plan_with_runs(12, 12);
    c.bench_function("plan 12 distinct runs", |b| {
        b.iter(|| {
            clockprep::plan(SpecSource::new("bench.toml", black_box(twelve.clone()))).unwrap()
        })
    });
    let thousand = plan_thousand_distinct();
    let mut big = c.benchmark_group("distinct");
    big.sample_size(10);
    big.bench_function("plan 1000 distinct runs (ionic strength held)", |b| {
        b.iter(|| {
            clockprep::plan(SpecSource::new("bench.toml", black_box(thousand.clone()))).unwrap()
        })
    });
    big.finish();
    let many = plan_with_runs(2400, 96);
    let mut group = c.benchmark_group("large");
    group.sample_size(10);
    group.bench_function("plan 2400 runs (96 distinct)", |b| {
        b.iter(|| clockprep::plan(SpecSource::new("bench.toml", black_box(many.clone()))).unwrap())
    });
    group.finish();
}

criterion_group!(benches, bench);
criterion_main!(benches);
