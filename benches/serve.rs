//! The page's server-side work for one edit of the demo: the edit applied to the TOML text,
//! every pane recomputed through the library and rendered as the CLI's HTML, and the form read
//! off the new text. The budget is 10 ms median on this 2-core machine.

use clockprep::serve::form::{Edit, Seg};
use clockprep::serve::{reply, reply_to_edit, EditRequest};
use criterion::{criterion_group, criterion_main, Criterion};
use std::hint::black_box;

const DEMO: &str = include_str!("../plans/maple-hollow-bromate.toml");
const PILOT: &str = include_str!("../plans/maple-hollow-pilot.csv");

fn edit(value: &str) -> EditRequest {
    EditRequest {
        text: DEMO.to_string(),
        times: None,
        edits: vec![Edit::Set {
            path: vec![
                Seg::Key("run".into()),
                Seg::Index(1),
                Seg::Key("targets".into()),
                Seg::Key("I-".into()),
            ],
            value: value.into(),
        }],
    }
}

fn bench(c: &mut Criterion) {
    let mut g = c.benchmark_group("serve");
    g.bench_function("demo: edit a target, recompute every pane", |b| {
        let mut flip = false;
        b.iter(|| {
            flip = !flip;
            let r = reply_to_edit("demo.toml", edit(if flip { "3.00 mM" } else { "2.50 mM" }));
            black_box(r.computed.panes.len())
        })
    });
    g.bench_function("demo: recompute with the pilot times (fit pane too)", |b| {
        let times = clockprep::serve::compute::Times {
            name: "pilot.csv".into(),
            csv: PILOT.into(),
        };
        b.iter(|| black_box(reply("demo.toml", DEMO.to_string(), Some(&times)).server_ms))
    });
    g.finish();
}

criterion_group!(benches, bench);
criterion_main!(benches);
