//! Mutation fuzzing on stable Rust: every spec in plans/ and the demo times CSV are mutated
//! structurally and textually (keys and tables deleted or duplicated, values swapped, units
//! changed, numbers scaled by 1e±300 or replaced by NaN, inf, 0 or negatives, charge notations
//! changed, files truncated, bytes flipped, runs duplicated), and every mutant goes through the
//! library: no panic, an error that names a location or key, and a bounded time. A sample also
//! goes through the real binary: exit code 0, 1 or 2, a located message on exit 2, and no
//! output file on error.
//!
//! `cargo test --test fuzz` runs `CLOCKPREP_FUZZ_MUTANTS` mutants (default 20,000);
//! the release check is `cargo test --release --test fuzz -- --ignored fuzz_long`
//! (`CLOCKPREP_FUZZ_MUTANTS`, default 1,000,000), which prints the count and the slowest mutant.

mod common;

use common::Rng;

use clockprep::error::{Error, SpecSource};
use std::panic::{catch_unwind, AssertUnwindSafe};
use std::time::{Duration, Instant};

const SPECS: [(&str, &str); 3] = [
    ("maple-hollow-bromate.toml", common::BROMATE),
    ("quarry-lane-persulfate.toml", common::PERSULFATE),
    ("willow-creek-peroxide-forecast.toml", common::PEROXIDE),
];
const PILOT: &str = include_str!("../plans/maple-hollow-pilot.csv");

/// Longest one mutant may take through the library (debug build), s. Real specs take well
/// under a second; this catches a hang, not a slow path.
const BOUND: Duration = Duration::from_secs(20);

/// Byte ranges of the numbers in a text (digits with an optional point and exponent).
fn numbers(text: &str) -> Vec<std::ops::Range<usize>> {
    let b = text.as_bytes();
    let mut out = Vec::new();
    let mut i = 0;
    while i < b.len() {
        if b[i].is_ascii_digit() {
            let start = i;
            while i < b.len() && (b[i].is_ascii_digit() || b[i] == b'.') {
                i += 1;
            }
            out.push(start..i);
        } else {
            i += 1;
        }
    }
    out
}

fn lines(text: &str) -> Vec<&str> {
    text.split_inclusive('\n').collect()
}

/// Blocks of a TOML text: each table header with the lines up to the next header.
fn blocks(text: &str) -> Vec<std::ops::Range<usize>> {
    let mut out = Vec::new();
    let mut start = None;
    let mut offset = 0;
    for line in lines(text) {
        if line.trim_start().starts_with('[') {
            if let Some(s) = start {
                out.push(s..offset);
            }
            start = Some(offset);
        }
        offset += line.len();
    }
    if let Some(s) = start {
        out.push(s..text.len());
    }
    out
}

const UNITS: [&str; 16] = [
    "mL",
    "mg",
    "M",
    "N",
    "mM",
    "µL",
    "L",
    "s",
    "min",
    "%",
    "°C",
    "K",
    "kJ/mol",
    "g/mL",
    "uM",
    "M^-3 s^-1",
];
const SPECIALS: [&str; 12] = [
    "NaN", "inf", "-inf", "0", "-0", "-1", "1e309", "1e-320", "0.0", "1e300", "1e-300", "99999999",
];
const CHARGES: [(&str, &str); 10] = [
    ("^2-", "-2"),
    ("^2-", "--"),
    ("^2-", "2-"),
    ("^2-", "^2\u{2013}"),
    ("-\"", "^-\""),
    ("-\"", "\u{2212}\""),
    ("+\"", "++\""),
    ("+\"", "\""),
    ("^2-", "^0-"),
    ("-\"", "^99-\""),
];

/// One mutation of `text` (as bytes: a byte flip may leave invalid UTF-8).
fn mutate_once(text: &[u8], rng: &mut Rng) -> Vec<u8> {
    let Ok(s) = std::str::from_utf8(text) else {
        let mut b = text.to_vec();
        if !b.is_empty() {
            let i = rng.below(b.len());
            b.truncate(i.max(1));
        }
        return b;
    };
    let ls = lines(s);
    let out: String = match rng.below(12) {
        // delete a line (a key)
        0 if !ls.is_empty() => {
            let i = rng.below(ls.len());
            ls.iter()
                .enumerate()
                .filter(|(j, _)| *j != i)
                .map(|(_, l)| *l)
                .collect()
        }
        // duplicate a line
        1 if !ls.is_empty() => {
            let i = rng.below(ls.len());
            let mut v: Vec<&str> = ls.clone();
            v.insert(i, ls[i]);
            v.concat()
        }
        // delete or duplicate a table
        2 | 3 => {
            let bs = blocks(s);
            if bs.is_empty() {
                s.to_string()
            } else {
                let b = rng.pick(&bs).clone();
                if rng.below(2) == 0 {
                    format!("{}{}", &s[..b.start], &s[b.end..])
                } else {
                    format!("{}{}{}", &s[..b.end], &s[b.clone()], &s[b.end..])
                }
            }
        }
        // swap the values of two `key = value` lines
        4 => {
            let kv: Vec<usize> = (0..ls.len()).filter(|&i| ls[i].contains(" = ")).collect();
            if kv.len() < 2 {
                s.to_string()
            } else {
                let (a, b) = (*rng.pick(&kv), *rng.pick(&kv));
                let val = |l: &str| {
                    l.split_once(" = ")
                        .map(|x| x.1.to_string())
                        .unwrap_or_default()
                };
                let key = |l: &str| {
                    l.split_once(" = ")
                        .map(|x| x.0.to_string())
                        .unwrap_or_default()
                };
                let mut v: Vec<String> = ls.iter().map(|l| l.to_string()).collect();
                let (va, vb) = (val(ls[a]), val(ls[b]));
                v[a] = format!("{} = {}", key(ls[a]), vb);
                v[b] = format!("{} = {}", key(ls[b]), va);
                v.concat()
            }
        }
        // change a unit
        5 => {
            let unit = *rng.pick(&UNITS);
            let targets: Vec<usize> = s
                .match_indices(" mL\"")
                .chain(s.match_indices(" mM\""))
                .chain(s.match_indices(" M\""))
                .chain(s.match_indices(" °C\""))
                .chain(s.match_indices(" s\""))
                .map(|(i, _)| i)
                .collect();
            if targets.is_empty() {
                s.to_string()
            } else {
                let at = *rng.pick(&targets);
                let end = at + s[at..].find('"').unwrap_or(0);
                format!("{} {unit}{}", &s[..at], &s[end..])
            }
        }
        // scale a number by 1e±300, or by a random power of ten
        6 => {
            let ns = numbers(s);
            if ns.is_empty() {
                s.to_string()
            } else {
                let r = rng.pick(&ns).clone();
                let e = match rng.below(3) {
                    0 => 300,
                    1 => -300,
                    _ => rng.below(13) as i32 - 6,
                };
                format!("{}{}e{e}{}", &s[..r.start], &s[r.clone()], &s[r.end..])
            }
        }
        // a special value in place of a number
        7 => {
            let ns = numbers(s);
            if ns.is_empty() {
                s.to_string()
            } else {
                let r = rng.pick(&ns).clone();
                format!("{}{}{}", &s[..r.start], rng.pick(&SPECIALS), &s[r.end..])
            }
        }
        // change a species' charge notation
        8 => {
            let (from, to) = *rng.pick(&CHARGES);
            let at: Vec<usize> = s.match_indices(from).map(|(i, _)| i).collect();
            if at.is_empty() {
                s.to_string()
            } else {
                let i = *rng.pick(&at);
                format!("{}{to}{}", &s[..i], &s[i + from.len()..])
            }
        }
        // truncate at a random byte
        9 => {
            let mut b = text.to_vec();
            b.truncate(rng.below(b.len() + 1));
            return b;
        }
        // flip a byte (possibly into invalid UTF-8)
        10 if !text.is_empty() => {
            let mut b = text.to_vec();
            let i = rng.below(b.len());
            b[i] = (rng.next_u64() & 0xff) as u8;
            return b;
        }
        // a quoted string emptied or made very long
        _ => {
            let q: Vec<usize> = s.match_indices('"').map(|(i, _)| i).collect();
            if q.len() < 2 {
                s.to_string()
            } else {
                let k = rng.below(q.len() / 2) * 2;
                let (a, b) = (q[k], q[k + 1]);
                let filler = if rng.below(2) == 0 {
                    String::new()
                } else {
                    "x".repeat(300)
                };
                format!("{}\"{filler}\"{}", &s[..a], &s[b + 1..])
            }
        }
    };
    out.into_bytes()
}

fn mutant(base: &str, rng: &mut Rng) -> Vec<u8> {
    let mut m = base.as_bytes().to_vec();
    for _ in 0..1 + rng.below(3) {
        m = mutate_once(&m, rng);
    }
    m
}

/// A refusal names where: a non-empty span or a label saying which table or key.
fn is_located(e: &Error) -> bool {
    match e {
        Error::Spec(s) => !s.message.is_empty() && (!s.span.is_empty() || !s.label.is_empty()),
        _ => false,
    }
}

#[derive(Default)]
struct Tally {
    mutants: usize,
    refused: usize,
    accepted: usize,
    slowest: (Duration, String),
    failures: Vec<String>,
}

impl Tally {
    fn merge(&mut self, o: Tally) {
        self.mutants += o.mutants;
        self.refused += o.refused;
        self.accepted += o.accepted;
        if o.slowest.0 > self.slowest.0 {
            self.slowest = o.slowest;
        }
        self.failures.extend(o.failures);
    }
}

/// Everything the library does with a spec: plan with every format and the cards, the stock
/// sheet, the forecast, the chart, design and tune where they apply.
fn exercise_spec(text: &str) -> Result<(), Error> {
    use clockprep::export::{self, cards, Format};
    let src = || SpecSource::new("mutant.toml", text);
    let light = clockprep::spec::load_for(src(), clockprep::spec::Purpose::Forecast)?;
    if light.lab.is_none() {
        let sheet = clockprep::forecast_only(src())?;
        for f in [
            Format::Text,
            Format::Csv,
            Format::Json,
            Format::Markdown,
            Format::Html,
        ] {
            export::export_forecast(&sheet, f);
        }
        clockprep::tune(src())?;
    } else {
        let (report, sheet) = clockprep::plan_with_stocks(src())?;
        for f in [
            Format::Text,
            Format::Csv,
            Format::Json,
            Format::Markdown,
            Format::Html,
        ] {
            export::export(&report, f);
            export::export_stocks(&sheet, f);
        }
        cards::cards(&report, cards::Per::Station, cards::Paper::A4);
    }
    if light.design.is_some() {
        clockprep::design(src())?;
    }
    Ok(())
}

/// A times CSV against the demo spec.
fn exercise_times(text: &str) -> Result<(), Error> {
    clockprep::fit(
        SpecSource::new("plans/maple-hollow-bromate.toml", common::BROMATE),
        SpecSource::new("times.csv", text),
        None,
    )
    .map(|_| ())
}

fn judge(tally: &mut Tally, what: &str, bytes: &[u8], f: fn(&str) -> Result<(), Error>) {
    tally.mutants += 1;
    // Not UTF-8: the binary refuses it (read_input); the library takes text only.
    let Ok(text) = std::str::from_utf8(bytes) else {
        tally.refused += 1;
        return;
    };
    let started = Instant::now();
    let outcome = catch_unwind(AssertUnwindSafe(|| f(text)));
    let took = started.elapsed();
    if took > tally.slowest.0 {
        tally.slowest = (took, what.to_string());
    }
    let verdict = match outcome {
        Err(_) => Some("panicked".to_string()),
        Ok(Ok(())) => {
            tally.accepted += 1;
            None
        }
        Ok(Err(e)) if is_located(&e) => {
            tally.refused += 1;
            None
        }
        Ok(Err(e)) => Some(format!("refused without a location: {e}")),
    };
    let verdict = verdict.or_else(|| (took > BOUND).then(|| format!("took {took:?}")));
    if let Some(v) = verdict {
        tally.failures.push(format!(
            "{what}: {v}\n--- mutant ---\n{text}\n--------------"
        ));
    }
}

/// Run `count` mutants from `seed` on two threads.
fn fuzz(count: usize, seed: u64) -> Tally {
    let previous = std::panic::take_hook();
    std::panic::set_hook(Box::new(|_| {}));
    let mut total = Tally::default();
    let threads = 2;
    let parts: Vec<Tally> = std::thread::scope(|scope| {
        let handles: Vec<_> = (0..threads)
            .map(|t| {
                scope.spawn(move || {
                    let mut tally = Tally::default();
                    for i in (t..count).step_by(threads) {
                        let mut rng =
                            Rng(seed ^ (i as u64 + 1).wrapping_mul(0x9E37_79B9_7F4A_7C15));
                        rng.next_u64();
                        // One mutant in eight is a times CSV, the others specs.
                        if rng.below(8) == 0 {
                            let m = mutant(PILOT, &mut rng);
                            judge(&mut tally, &format!("times #{i}"), &m, exercise_times);
                        } else {
                            let (name, base) = *rng.pick(&SPECS);
                            let m = mutant(base, &mut rng);
                            judge(&mut tally, &format!("{name} #{i}"), &m, exercise_spec);
                        }
                    }
                    tally
                })
            })
            .collect();
        handles.into_iter().map(|h| h.join().unwrap()).collect()
    });
    std::panic::set_hook(previous);
    for p in parts {
        total.merge(p);
    }
    total
}

fn count(default: usize) -> usize {
    std::env::var("CLOCKPREP_FUZZ_MUTANTS")
        .ok()
        .and_then(|v| v.parse().ok())
        .unwrap_or(default)
}

fn report(t: &Tally) {
    eprintln!(
        "fuzz: {} mutants, {} accepted, {} refused with a location, {} failures; slowest {:?} ({})",
        t.mutants,
        t.accepted,
        t.refused,
        t.failures.len(),
        t.slowest.0,
        t.slowest.1
    );
    for f in t.failures.iter().take(5) {
        eprintln!("{f}");
    }
}

#[test]
fn mutants_never_panic_hang_or_refuse_without_a_location() {
    let t = fuzz(count(20_000), 0x00C1_0C4B);
    report(&t);
    assert!(
        t.failures.is_empty(),
        "{} failures (first above)",
        t.failures.len()
    );
    assert!(
        t.accepted > 0 && t.refused > 0,
        "the mutants must reach both outcomes"
    );
}

#[test]
#[ignore = "release check: cargo test --release --test fuzz -- --ignored fuzz_long"]
fn fuzz_long() {
    let t = fuzz(count(1_000_000), 0x5EED_2026);
    report(&t);
    assert!(
        t.failures.is_empty(),
        "{} failures (first above)",
        t.failures.len()
    );
}

#[test]
fn sampled_mutants_through_the_binary_exit_0_1_or_2_and_write_nothing_on_error() {
    let mut rng = Rng(0x0B1A_57ED);
    let dir = tempfile::tempdir().unwrap();
    for i in 0..120 {
        let (_, base) = *rng.pick(&SPECS);
        let m = mutant(base, &mut rng);
        let spec = dir.path().join(format!("m{i}.toml"));
        std::fs::write(&spec, &m).unwrap();
        let out = dir.path().join(format!("m{i}.txt"));
        let command = if base.contains("[[stock]]") {
            "plan"
        } else {
            "forecast"
        };
        let o = assert_cmd::Command::cargo_bin("clockprep")
            .unwrap()
            .arg(command)
            .arg(&spec)
            .arg("-o")
            .arg(&out)
            .timeout(BOUND)
            .output()
            .unwrap();
        let code = o.status.code();
        let stderr = String::from_utf8_lossy(&o.stderr);
        assert!(
            matches!(code, Some(0..=2)),
            "mutant {i}: exit {code:?}\n{stderr}"
        );
        if code == Some(2) {
            assert!(!out.exists(), "mutant {i}: wrote an output on error");
            let located =
                common::located(&stderr, &spec) || stderr.contains(&spec.display().to_string());
            assert!(located, "mutant {i}: no location in\n{stderr}");
            assert!(!stderr.contains("panicked"), "mutant {i}:\n{stderr}");
        } else {
            assert!(out.exists(), "mutant {i}: exit {code:?} but no output");
        }
    }
}

/// Mutants the fuzzer found that once panicked, each as an edit of a demo spec; every one
/// must now be refused with a location.
const FOUND: &[(&str, &str, &str)] = &[
    // A design multiplier of 2e300: the rounding shortcut overflowed its step count.
    (
        common::BROMATE,
        "multipliers = [2.0]",
        "multipliers = [2.0e300]",
    ),
    // A denormal timing concentration: no timing volume at all, and the report panicked.
    (
        common::BROMATE,
        "concentration = \"0.100 mM\"",
        "concentration = \"1e-320 mM\"",
    ),
    (
        common::PERSULFATE,
        "concentration = \"0.800 mM\"",
        "concentration = \"1e-320 mM\"",
    ),
    // A denormal held ionic strength: microlp's dual simplex asserted on non-finite norms.
    (
        common::PERSULFATE,
        "hold = \"0.180 M\"",
        "hold = \"1e-320 M\"",
    ),
    // In range, but below what the timing stock alone gives: the LP was hopelessly scaled.
    (
        common::PERSULFATE,
        "hold = \"0.180 M\"",
        "hold = \"1e-12 M\"",
    ),
];

#[test]
fn mutants_that_once_panicked_are_refused_with_a_location() {
    for (base, from, to) in FOUND {
        let text = common::edit(base, from, to);
        let outcome = catch_unwind(AssertUnwindSafe(|| exercise_spec(&text)));
        match outcome {
            Err(_) => panic!("{to}: panicked"),
            Ok(Ok(())) => panic!("{to}: accepted"),
            Ok(Err(e)) => assert!(is_located(&e), "{to}: {e}"),
        }
    }
}
