//! Size limits, time bounds and determinism: a spec that would run away is refused before any
//! work with the limit in the message, and the same spec always gives the same bytes.

mod common;
use common::*;

fn runs(n: usize, distinct: usize) -> String {
    let mut s = PEROXIDE.split("[[run]]").next().unwrap().to_string();
    for i in 0..n {
        let h2o2 = 10.0 + (i % distinct) as f64 * 0.01;
        s.push_str(&format!(
            "[[run]]\nname = \"r{i}\"\ntargets = {{ \"H2O2\" = \"{h2o2:.2} mM\", \"I-\" = \"10.0 mM\", \"H+\" = \"0.100 M\" }}\n\n"
        ));
    }
    s
}

#[test]
fn more_runs_than_the_limit_are_refused_with_the_limit() {
    let o = run("forecast", &runs(5_001, 5), &[]);
    assert_refused(&o, "the spec has 5001 runs, over the limit of 5000");
}

#[test]
fn a_forecast_just_under_the_run_limit_completes() {
    let o = run("forecast", &runs(5_000, 50), &["-f", "csv"]);
    assert_ne!(o.code, 2, "{}", o.stderr);
    assert!(o.stdout.lines().count() > 5_000);
}

#[test]
fn a_spec_over_the_size_limit_is_refused_before_parsing() {
    let big = format!("{}\n# {}\n", PEROXIDE, "x".repeat(1 << 20));
    let o = run("forecast", &big, &[]);
    assert_eq!(o.code, 2);
    assert!(
        says(&o.stderr, "over the 1048576 byte limit"),
        "{}",
        o.stderr
    );
}

#[test]
fn a_name_over_the_length_limit_is_refused() {
    let long = edit(
        BROMATE,
        "name = \"reference\"",
        &format!("name = \"{}\"", "r".repeat(201)),
    );
    refuses_text(
        "plan",
        &long,
        "a name of 201 characters, over the limit of 200",
    );
}

fn refuses_text(command: &str, spec: &str, expect: &str) {
    let o = run(command, spec, &[]);
    assert_refused(&o, expect);
}

#[test]
fn too_many_distinct_runs_to_plan_are_refused_naming_the_first_over() {
    // The bromate demo's reference run, its iodide varied in 1001 steps of 0.001 mM.
    let mut s = BROMATE.split("[[run]]").next().unwrap().to_string();
    for i in 0..1001 {
        s.push_str(&format!(
            "[[run]]\nname = \"r{i}\"\ntargets = {{ \"I-\" = \"{:.3} mM\", \"BrO3-\" = \"8.00 mM\", \"H+\" = \"20.0 mM\" }}\n\n",
            2.0 + i as f64 * 0.001
        ));
    }
    refuses_text(
        "plan",
        &s,
        "run 'r1000' is distinct set of targets number 1001; a plan solves at most 1000",
    );
}

#[test]
fn a_solve_past_its_time_limit_is_refused_naming_the_run() {
    // An acidified bromate stock shares H+ with the acid stock, so the runs go to the
    // integer model (the rounding shortcut needs one stock per target).
    let dir = tempfile::tempdir().unwrap();
    let spec = dir.path().join("spec.toml");
    let text = BROMATE.replacen(
        "[[device]]",
        "[[stock]]\nname = \"acid bromate\"\ncontains = { \"BrO3-\" = \"0.0400 M\", \"K+\" = \"0.0400 M\", \"H+\" = \"0.100 M\", \"Cl-\" = \"0.100 M\" }\n\n[[device]]",
        1,
    );
    std::fs::write(&spec, text).unwrap();
    let o = assert_cmd::Command::cargo_bin("clockprep")
        .unwrap()
        .env("CLOCKPREP_SOLVE_TIMEOUT", "0")
        .arg("plan")
        .arg(&spec)
        .output()
        .unwrap();
    assert_eq!(o.status.code(), Some(2));
    let err = String::from_utf8_lossy(&o.stderr);
    assert!(
        says(
            &err,
            "run 'reference': no best recipe found within the solver's 0 s time limit"
        ),
        "{err}"
    );
    assert!(located(&err, &spec), "{err}");
}

#[test]
fn a_times_csv_with_more_trials_than_the_limit_is_refused() {
    let mut csv = String::from("run,time\n");
    for _ in 0..20_001 {
        csv.push_str("reference,131.7\n");
    }
    let o = run_with("fit", BROMATE, &[("t.csv", &csv)], &["t.csv"]);
    assert_eq!(o.code, 2);
    assert!(
        says(&o.stderr, "more than 20000 trials in the times CSV"),
        "{}",
        o.stderr
    );
}

#[test]
fn every_format_and_the_cards_are_byte_identical_run_to_run() {
    for (cmd, spec, args) in [
        ("plan", BROMATE, vec!["-f", "html"]),
        ("plan", PERSULFATE, vec!["-f", "html"]),
        ("stocks", BROMATE, vec!["-f", "html"]),
        ("stocks", WEEK, vec!["-f", "csv"]),
        ("plan", WEEK, vec!["-f", "json"]),
        ("cards", WEEK, vec!["--per", "station"]),
        ("labels", WEEK, vec!["--paper", "letter"]),
        ("forecast", PEROXIDE, vec!["-f", "html"]),
        ("chart", BROMATE, vec![]),
        ("cards", BROMATE, vec!["--per", "station"]),
        (
            "cards",
            PERSULFATE,
            vec!["--per", "run", "--paper", "letter"],
        ),
        ("design", BROMATE, vec![]),
        ("tune", PEROXIDE, vec![]),
    ] {
        let a = run(cmd, spec, &args);
        let b = run(cmd, spec, &args);
        assert_ne!(a.code, 2, "{cmd}: {}", a.stderr);
        // The spec path differs between the two folders; everything else must not.
        let strip = |o: &Outcome| o.stdout.replace(&o.spec.display().to_string(), "SPEC");
        assert_eq!(strip(&a), strip(&b), "{cmd} {args:?}");
    }
}

#[test]
fn a_quantity_outside_a_labs_range_is_refused_naming_the_range() {
    refuses_text(
        "plan",
        &edit(
            BROMATE,
            "concentration = \"0.100 mM\"",
            "concentration = \"1e-320 mM\"",
        ),
        "timing concentration: 9.88e-318 µM is outside what a teaching lab uses (1 pM to 100 M)",
    );
    refuses_text(
        "plan",
        &edit(
            BROMATE,
            "total_volume = \"50.0 mL\"",
            "total_volume = \"5e6 L\"",
        ),
        "outside what a teaching lab uses (1 nL to 1000 L)",
    );
}

#[test]
fn a_held_ionic_strength_below_the_timing_stocks_is_refused() {
    refuses_text(
        "plan",
        &edit(PERSULFATE, "hold = \"0.180 M\"", "hold = \"1.00 mM\""),
        "hold = 1.00 mM is below the 2.40 mM that the timing stock and fixed additions alone give",
    );
}
