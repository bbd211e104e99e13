//! Integration tests through the built binary: good plans, outputs, exit codes, and bad input
//! that must exit 2 with a located message and write nothing.

mod common;
use assert_cmd::Command;
use common::located;
use predicates::prelude::*;
use std::path::Path;

const DEMO: &str = include_str!("../plans/maple-hollow-bromate.toml");

fn clockprep() -> Command {
    Command::cargo_bin("clockprep").unwrap()
}

#[test]
fn demo_plan_prints_a_mixing_sheet() {
    clockprep()
        .args(["plan", "plans/maple-hollow-bromate.toml"])
        .assert()
        .code(0)
        .stdout(predicate::str::contains("Mixing sheet: Maple Hollow CC"))
        .stdout(predicate::str::contains(
            "start the timer at the moment of mixing",
        ))
        .stdout(predicate::str::contains("Stock to prepare"))
        .stdout(predicate::str::contains("safety officer"));
}

#[test]
fn output_is_deterministic_in_every_format() {
    for format in ["text", "csv", "json", "md"] {
        for plan in [
            "plans/maple-hollow-bromate.toml",
            "plans/quarry-lane-persulfate.toml",
        ] {
            let a = clockprep()
                .args(["plan", plan, "-f", format])
                .output()
                .unwrap();
            let b = clockprep()
                .args(["plan", plan, "-f", format])
                .output()
                .unwrap();
            assert!(a.status.success(), "{plan} {format}");
            assert_eq!(a.stdout, b.stdout, "{plan} {format}");
        }
    }
}

#[test]
fn writes_files_atomically_and_keeps_existing_ones() {
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("sheet.json");
    clockprep()
        .args([
            "plan",
            "plans/maple-hollow-bromate.toml",
            "-f",
            "json",
            "-o",
        ])
        .arg(&out)
        .assert()
        .code(0)
        .stdout("");
    let first = std::fs::read(&out).unwrap();
    let json: serde_json::Value = serde_json::from_slice(&first).unwrap();
    assert_eq!(json["runs"].as_array().unwrap().len(), 5);

    std::fs::write(&out, "keep me").unwrap();
    clockprep()
        .args([
            "plan",
            "plans/maple-hollow-bromate.toml",
            "-f",
            "json",
            "-o",
        ])
        .arg(&out)
        .assert()
        .code(2)
        .stderr(predicate::str::contains("already exists"));
    assert_eq!(std::fs::read_to_string(&out).unwrap(), "keep me");

    clockprep()
        .args([
            "plan",
            "plans/maple-hollow-bromate.toml",
            "-f",
            "json",
            "--force",
            "-o",
        ])
        .arg(&out)
        .assert()
        .code(0);
    assert_eq!(std::fs::read(&out).unwrap(), first);
    let leftovers: Vec<_> = std::fs::read_dir(dir.path()).unwrap().collect();
    assert_eq!(leftovers.len(), 1, "no temporary file is left behind");
}

#[test]
fn never_overwrites_the_spec() {
    let dir = tempfile::tempdir().unwrap();
    let spec = dir.path().join("plan.toml");
    std::fs::write(&spec, DEMO).unwrap();
    clockprep()
        .arg("plan")
        .arg(&spec)
        .arg("--force")
        .arg("-o")
        .arg(&spec)
        .assert()
        .code(2)
        .stderr(predicate::str::contains("over an input"));
    assert_eq!(std::fs::read_to_string(&spec).unwrap(), DEMO);
}

#[test]
fn flagged_plan_exits_1() {
    // A 2.03 mM iodide target needs 10.15 mL of 0.0100 M KI: the 0.10 mL buret gives 10.10 or
    // 10.20 mL (-0.49 % / +0.49 %), beyond a 0.2 % tolerance, so the run is flagged.
    let dir = tempfile::tempdir().unwrap();
    let spec = dir.path().join("plan.toml");
    let text = DEMO
        .replace("tolerance = \"1 %\"", "tolerance = \"0.2 %\"")
        .replacen(
            "name = \"reference\"\ntargets = { \"I-\" = \"2.00 mM\"",
            "name = \"reference\"\ntargets = { \"I-\" = \"2.03 mM\"",
            1,
        );
    std::fs::write(&spec, text).unwrap();
    clockprep()
        .arg("plan")
        .arg(&spec)
        .assert()
        .code(1)
        .stdout(predicate::str::contains("FLAG [off_target] I-"));
}

/// Each bad spec: (what it tests, text to replace, replacement, expected words in the message).
const BAD: &[(&str, &str, &str, &str)] = &[
    (
        "per_station zero",
        "graduation = \"0.10 mL\"",
        "graduation = \"0.10 mL\"\nper_station = 0",
        "per_station must be a whole number from 1 to 100",
    ),
    (
        "a shared buret",
        "graduation = \"0.10 mL\"",
        "graduation = \"0.10 mL\"\nshared = true",
        "a buret cannot be shared between stocks",
    ),
    (
        "negative dead volume",
        "graduation = \"0.10 mL\"",
        "graduation = \"0.10 mL\"\ndead_volume = \"-2 mL\"",
        "dead_volume cannot be negative",
    ),
    (
        "stations not a whole number",
        "stations = 8 ",
        "stations = 2.5 ",
        "stations is a whole number of bench groups",
    ),
    (
        "replicates in quotes",
        "replicates = 2 ",
        "replicates = \"2\" ",
        "replicates is a whole number, written without quotes",
    ),
    (
        "a [run] table where [[run]] is needed",
        "[[run]]\nname = \"reference\"",
        "[run]\nname = \"reference\"",
        "[run] is a single table, but a spec lists each run as [[run]]",
    ),
    (
        "decimal comma",
        "total_volume = \"50.0 mL\"",
        "total_volume = \"50,0 mL\"",
        "decimal comma",
    ),
    (
        "thousands separator",
        "overage = \"15 %\"",
        "overage = \"1,500 %\"",
        "thousands separator",
    ),
    (
        "toml syntax",
        "title = \"Maple",
        "title = Maple",
        "not valid",
    ),
    (
        "missing unit",
        "total_volume = \"50.0 mL\"",
        "total_volume = 50",
        "bare number has no unit",
    ),
    (
        "wrong unit kind",
        "total_volume = \"50.0 mL\"",
        "total_volume = \"50.0 mM\"",
        "is a concentration, but a volume is needed",
    ),
    (
        "unknown unit",
        "total_volume = \"50.0 mL\"",
        "total_volume = \"50.0 mg\"",
        "unknown unit 'mg'",
    ),
    (
        "negative concentration",
        "\"I-\" = \"0.0100 M\"",
        "\"I-\" = \"-0.0100 M\"",
        "must be greater than zero",
    ),
    (
        "zero concentration",
        "concentration = \"0.100 mM\"",
        "concentration = \"0 mM\"",
        "must be greater than zero",
    ),
    (
        "target above what the stock allows",
        "\"H+\" = \"40.0 mM\"",
        "\"H+\" = \"400 mM\"",
        "out of reach",
    ),
    (
        "unknown species",
        "\"H+\" = \"40.0 mM\"",
        "\"Fe^3+\" = \"40.0 mM\"",
        "no stock contains Fe^3+",
    ),
    (
        "unknown stock",
        "using = \"KNO3 0.500 M\"",
        "using = \"NaNO3 0.500 M\"",
        "unknown stock 'NaNO3 0.500 M'",
    ),
    (
        "duplicate names",
        "name = \"iodide x2\"",
        "name = \"reference\"",
        "two runs are named 'reference'",
    ),
    (
        "timing reagent in no stock",
        "species = \"S2O3^2-\"",
        "species = \"SCN-\"",
        "no stock contains SCN-",
    ),
    (
        "no device delivers the timing volume",
        "devices = [\"5 mL transfer pipet\"]",
        "devices = [\"1 mL transfer pipet\"]",
        "no allowed device delivers 5 mL",
    ),
    (
        "total smaller than fixed additions",
        "fixed_volume = \"1.00 mL\"",
        "fixed_volume = \"60.0 mL\"",
        "add up to more than the whole 50 mL run",
    ),
    (
        "empty runs",
        "targets = { \"I-\" = \"4.00 mM\", \"BrO3-\" = \"8.00 mM\", \"H+\" = \"20.0 mM\" }",
        "targets = { }",
        "has no targets",
    ),
    (
        "NaN text",
        "concentration = \"0.100 mM\"",
        "concentration = \"NaN mM\"",
        "not finite",
    ),
    (
        "inf text",
        "total_volume = \"50.0 mL\"",
        "total_volume = \"inf mL\"",
        "not finite",
    ),
    (
        "unknown key",
        "stations = 8",
        "statons = 8",
        "unknown field `statons`",
    ),
    (
        "unknown device kind",
        "kind = \"buret\"",
        "kind = \"spoon\"",
        "unknown kind of device 'spoon'",
    ),
    (
        "unknown device",
        "devices = [\"10 mL graduated pipet\"]",
        "devices = [\"10 mL pipet\"]",
        "unknown device '10 mL pipet'",
    ),
    (
        "temperature out of range",
        "temperature = \"21 °C\"",
        "temperature = \"80 °C\"",
        "outside 0–60 °C",
    ),
    (
        "species missing from a run",
        "targets = { \"I-\" = \"2.00 mM\", \"BrO3-\" = \"8.00 mM\", \"H+\" = \"30.0 mM\" }",
        "targets = { \"I-\" = \"2.00 mM\", \"BrO3-\" = \"8.00 mM\" }",
        "targets different species",
    ),
    (
        "one stock holds a keep-apart group",
        "fixed_volume = \"1.00 mL\"",
        "fixed_volume = \"1.00 mL\"\ncontains = { \"S2O3^2-\" = \"1.00 mM\", \"Na+\" = \"2.00 mM\" }",
        "more than one stock",
    ),
    (
        "timing species as a target",
        "\"H+\" = \"40.0 mM\"",
        "\"S2O3^2-\" = \"0.2 mM\"",
        "is the timing species",
    ),
    (
        "bad species charge",
        "\"I-\" = \"0.0100 M\"",
        "\"I^x-\" = \"0.0100 M\"",
        "charge is not readable",
    ),
];

/// A snapshot name from a table entry's description.
fn slug(what: &str) -> String {
    let mut out = String::new();
    for c in what.chars() {
        if c.is_ascii_alphanumeric() {
            out.push(c.to_ascii_lowercase());
        } else if !out.ends_with('_') {
            out.push('_');
        }
    }
    out.trim_matches('_').to_string()
}

#[test]
fn bad_specs_exit_2_with_a_located_message_and_write_nothing() {
    assert!(BAD.len() >= 15);
    for (what, from, to, expect) in BAD {
        assert!(
            DEMO.contains(from),
            "{what}: the demo no longer contains {from:?}"
        );
        let dir = tempfile::tempdir().unwrap();
        let spec = dir.path().join("bad.toml");
        std::fs::write(&spec, DEMO.replacen(from, to, 1)).unwrap();
        let out = dir.path().join("sheet.txt");
        let result = clockprep()
            .arg("plan")
            .arg(&spec)
            .arg("-o")
            .arg(&out)
            .output()
            .unwrap();
        let stderr = String::from_utf8_lossy(&result.stderr);
        assert_eq!(result.status.code(), Some(2), "{what}: {stderr}");
        assert!(
            stderr.contains(expect),
            "{what}: expected {expect:?} in\n{stderr}"
        );
        assert!(
            located(&stderr, &spec),
            "{what}: no file:line:col in\n{stderr}"
        );
        assert!(stderr.contains("help:"), "{what}: no hint in\n{stderr}");
        // The whole message as the user sees it, reviewed once and kept.
        insta::assert_snapshot!(
            format!("bad_spec_{}", slug(what)),
            stderr.replace(&spec.display().to_string(), "bad.toml")
        );
        assert!(
            !stderr.contains("expected i64") && !stderr.contains("invalid type"),
            "{what}: a TOML type error in serde's words:\n{stderr}"
        );
        assert!(!Path::new(&out).exists(), "{what}: wrote an output");
        assert_eq!(
            std::fs::read_dir(dir.path()).unwrap().count(),
            1,
            "{what}: left a file behind"
        );
    }
}

#[test]
fn missing_spec_file_exits_2() {
    clockprep()
        .args(["plan", "plans/no-such-plan.toml"])
        .assert()
        .code(2)
        .stderr(predicate::str::contains("cannot read the spec"));
}

const FORECAST_DEMO: &str = include_str!("../plans/willow-creek-peroxide-forecast.toml");

#[test]
fn forecast_demo_times_every_run() {
    clockprep()
        .args(["forecast", "plans/willow-creek-peroxide-forecast.toml"])
        .assert()
        .code(0)
        .stdout(predicate::str::contains(
            "Clock-time forecast: Willow Creek Academy",
        ))
        .stdout(predicate::str::contains("not guarantees"))
        .stdout(predicate::str::contains("calibrate it with a pilot run"))
        .stdout(predicate::str::contains("Liebhafsky"))
        .stdout(predicate::str::contains("safety officer"));
}

#[test]
fn forecast_json_has_the_documented_fields() {
    let out = clockprep()
        .args([
            "forecast",
            "plans/willow-creek-peroxide-forecast.toml",
            "-f",
            "json",
        ])
        .output()
        .unwrap();
    let json: serde_json::Value = serde_json::from_slice(&out.stdout).unwrap();
    assert_eq!(json["format"], "clockprep-forecast/1");
    for run in json["runs"].as_array().unwrap() {
        let f = &run["forecast"];
        for key in [
            "clock_s",
            "time_s",
            "initial_rate_s",
            "rate_M_per_s",
            "max_conversion",
        ] {
            assert!(f[key].as_f64().unwrap() > 0.0, "{key}");
        }
        let band = f["band_s"].as_array().unwrap();
        assert!(band[0].as_f64().unwrap() < band[1].as_f64().unwrap());
        assert!(f["warnings"].as_array().unwrap().is_empty());
    }
    // The plan sheet carries the same forecast per run.
    let out = clockprep()
        .args(["plan", "plans/maple-hollow-bromate.toml", "-f", "json"])
        .output()
        .unwrap();
    let json: serde_json::Value = serde_json::from_slice(&out.stdout).unwrap();
    for run in json["runs"].as_array().unwrap() {
        assert!(run["forecast"]["clock_s"].as_f64().unwrap() > 15.0);
    }
    assert_eq!(json["reaction"]["nu"], 6.0);
}

#[test]
fn a_run_set_that_times_badly_exits_1() {
    // A tenth of the timing reagent makes every peroxide run clock in a tenth of the time:
    // 11-25 s against a 20 s lower limit.
    let dir = tempfile::tempdir().unwrap();
    let spec = dir.path().join("draft.toml");
    std::fs::write(
        &spec,
        FORECAST_DEMO.replace(
            "concentration = \"1.00 mM\"",
            "concentration = \"0.100 mM\"",
        ),
    )
    .unwrap();
    clockprep()
        .arg("forecast")
        .arg(&spec)
        .assert()
        .code(1)
        .stdout(predicate::str::contains("FLAG [too_fast]"));
}

/// Bad reaction and forecast settings, on the forecast demo.
const BAD_FORECAST: &[(&str, &str, &str, &str)] = &[
    (
        "salt effect without stocks",
        "preset = \"peroxide-iodide\"",
        "preset = \"peroxide-iodide\"\nk_at_ionic_strength = \"0.1 M\"",
        "k_at_ionic_strength needs the stocks",
    ),
    (
        "unknown visible criterion",
        "preset = \"peroxide-iodide\"",
        "preset = \"peroxide-iodide\"\nvisible = { threshold = \"10 uM\", as = \"iodine\" }",
        "unknown visible criterion 'iodine'",
    ),
    (
        "threshold factor below 1",
        "preset = \"peroxide-iodide\"",
        "preset = \"peroxide-iodide\"\nvisible = { threshold = \"10 uM\", factor = 0.5 }",
        "factor must be a number from 1 to 10",
    ),
    ("unknown preset", "preset = \"peroxide-iodide\"", "preset = \"peroxide-bromide\"", "unknown reaction preset 'peroxide-bromide'"),
    ("missing temperature", "temperature = \"20 °C\"\n", "", "needs the planned room temperature"),
    ("band too wide", "temperature_band = \"2 °C\"", "temperature_band = \"30 °C\"", "from 0 to 15 °C"),
    ("window reversed", "window = [\"20 s\", \"8 min\"]", "window = [\"8 min\", \"20 s\"]", "longer to shorter"),
    ("no reaction", "[reaction]\npreset = \"peroxide-iodide\"", "", "a forecast needs a [reaction]"),
    (
        "k units do not match the orders",
        "preset = \"peroxide-iodide\"",
        "preset = \"peroxide-iodide\"\n[[reaction.term]]\nk = \"0.69 L mol^-1 min^-1\"\nat = \"25 °C\"\norders = { \"H2O2\" = 1, \"I-\" = 1, \"H+\" = 1 }",
        "overall order 3 needs M^-2 s^-1",
    ),
    (
        "rate-law species missing from the runs",
        "preset = \"peroxide-iodide\"",
        "preset = \"peroxide-iodide\"\n[[reaction.term]]\nk = \"0.69 L mol^-1 min^-1\"\nat = \"25 °C\"\norders = { \"H2O2\" = 1, \"Fe^3+\" = 1 }",
        "the rate law needs Fe^3+",
    ),
    ("bad equation", "preset = \"peroxide-iodide\"", "preset = \"peroxide-iodide\"\nmain = \"H2O2 + 2 I- 2 H+ -> I2 + 2 H2O\"", "expected '+' or '->'"),
    (
        "activation energy without its unit",
        "preset = \"peroxide-iodide\"",
        "preset = \"peroxide-iodide\"\n[[reaction.term]]\nk = \"0.0115 M^-1 s^-1\"\nat = \"25 °C\"\nactivation_energy = \"56\"\norders = { \"H2O2\" = 1, \"I-\" = 1 }",
        "activation_energy",
    ),
];

#[test]
fn bad_reactions_exit_2_with_a_located_message() {
    for (what, from, to, expect) in BAD_FORECAST {
        assert!(
            FORECAST_DEMO.contains(from),
            "{what}: the demo no longer contains {from:?}"
        );
        let dir = tempfile::tempdir().unwrap();
        let spec = dir.path().join("bad.toml");
        std::fs::write(&spec, FORECAST_DEMO.replacen(from, to, 1)).unwrap();
        let result = clockprep().arg("forecast").arg(&spec).output().unwrap();
        let stderr = String::from_utf8_lossy(&result.stderr);
        assert_eq!(result.status.code(), Some(2), "{what}: {stderr}");
        assert!(
            stderr.contains(expect),
            "{what}: expected {expect:?} in\n{stderr}"
        );
        assert!(stderr.contains("help:"), "{what}: no hint in\n{stderr}");
        insta::assert_snapshot!(
            format!("bad_reaction_{}", slug(what)),
            stderr.replace(&spec.display().to_string(), "bad.toml")
        );
        assert!(result.stdout.is_empty(), "{what}: printed a sheet");
    }
}

#[test]
fn stocks_chart_and_cards_commands() {
    clockprep()
        .args(["stocks", "plans/maple-hollow-bromate.toml"])
        .assert()
        .code(0)
        .stdout(predicate::str::contains("Weigh 6.6934 g of KBrO3"))
        .stdout(predicate::str::contains("safety officer"));
    clockprep()
        .args(["chart", "plans/willow-creek-peroxide-forecast.toml"])
        .assert()
        .code(0)
        .stdout(predicate::str::starts_with("<?xml"))
        .stdout(predicate::str::contains("</svg>"));
    clockprep()
        .args([
            "cards",
            "plans/quarry-lane-persulfate.toml",
            "--per",
            "run",
            "--paper",
            "letter",
        ])
        .assert()
        .code(0)
        .stdout(predicate::str::contains("size: letter"))
        .stdout(predicate::str::contains("Station ______"));
}

#[test]
fn pdf_without_a_browser_says_how_to_install_one_and_keeps_the_html() {
    let dir = tempfile::tempdir().unwrap();
    let html = dir.path().join("cards.html");
    let pdf = dir.path().join("cards.pdf");
    clockprep()
        .env("CLOCKPREP_CHROMIUM", dir.path().join("no-such-browser"))
        .args(["cards", "plans/maple-hollow-bromate.toml", "-o"])
        .arg(&html)
        .arg("--pdf")
        .arg(&pdf)
        .assert()
        .code(2)
        .stderr(predicate::str::contains("apt-get install chromium"));
    assert!(std::fs::read_to_string(&html)
        .unwrap()
        .contains("Bench cards"));
    assert!(!pdf.exists());
}

#[test]
fn fit_writes_a_prior_that_loads_again() {
    let out = clockprep()
        .args([
            "fit",
            "plans/maple-hollow-bromate.toml",
            "plans/maple-hollow-pilot.csv",
        ])
        .output()
        .unwrap();
    assert_eq!(
        out.status.code(),
        Some(0),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let fragment = String::from_utf8(out.stdout).unwrap();
    assert!(fragment.contains("consistent with 2"));
    // The fragment replaces the spec's [reaction] and the plan still runs, with the new prior.
    let spec = DEMO.replace("[reaction]                    # the prior rate law used for the forecast\npreset = \"bromate-iodide\"     # calibrate it with a pilot run\n", "");
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("calibrated.toml");
    std::fs::write(&path, format!("{spec}\n{fragment}")).unwrap();
    clockprep()
        .arg("plan")
        .arg(&path)
        .assert()
        .code(0)
        .stdout(predicate::str::contains("fit to 10 trials"));
    // Fixing the orders fits k alone; "prior" fixes them at the spec's values.
    for (orders, expect) in [
        ("1,1,2", "Order in H+: 2 (fixed)"),
        ("prior", "Order in BrO3-: 1 (fixed)"),
    ] {
        clockprep()
            .args([
                "fit",
                "plans/maple-hollow-bromate.toml",
                "plans/maple-hollow-pilot.csv",
                "--orders",
                orders,
            ])
            .assert()
            .code(0)
            .stdout(predicate::str::contains(expect));
    }
}

#[test]
fn fit_refuses_bad_times_with_a_location() {
    let pilot = include_str!("../plans/maple-hollow-pilot.csv");
    let cases = [
        (
            "a run not in the spec",
            pilot.replacen("iodide x2,", "iodide x3,", 1),
            "run 'iodide x3' is not in the spec",
        ),
        (
            "a non-positive time",
            pilot.replacen("131.7", "-4", 1),
            "must be positive",
        ),
        (
            "a time that is not one",
            pilot.replacen("131.7", "soon", 1),
            "'soon' is not a time",
        ),
    ];
    for (what, text, expect) in cases {
        let dir = tempfile::tempdir().unwrap();
        let times = dir.path().join("times.csv");
        std::fs::write(&times, text).unwrap();
        let out = clockprep()
            .args(["fit", "plans/maple-hollow-bromate.toml"])
            .arg(&times)
            .output()
            .unwrap();
        let stderr = String::from_utf8_lossy(&out.stderr);
        assert_eq!(out.status.code(), Some(2), "{what}: {stderr}");
        assert!(stderr.contains(expect), "{what}: {stderr}");
        assert!(located(&stderr, &times), "{what}: {stderr}");
    }
    // Only the reference and the iodide runs timed: bromate and acid never vary.
    let dir = tempfile::tempdir().unwrap();
    let times = dir.path().join("times.csv");
    let few: String = pilot
        .lines()
        .filter(|l| l.starts_with("run") || l.starts_with("reference") || l.starts_with("iodide"))
        .map(|l| format!("{l}\n"))
        .collect();
    std::fs::write(&times, few).unwrap();
    clockprep()
        .args(["fit", "plans/maple-hollow-bromate.toml"])
        .arg(&times)
        .assert()
        .code(2)
        .stderr(predicate::str::contains("never vary BrO3-"));
    // The fit never writes over the spec.
    clockprep()
        .args([
            "fit",
            "plans/maple-hollow-bromate.toml",
            "plans/maple-hollow-pilot.csv",
            "--force",
            "-o",
            "plans/maple-hollow-bromate.toml",
        ])
        .assert()
        .code(2);
    assert_eq!(
        std::fs::read_to_string("plans/maple-hollow-bromate.toml").unwrap(),
        DEMO
    );
}

#[test]
fn design_writes_runs_that_plan() {
    let out = clockprep()
        .args(["design", "plans/maple-hollow-bromate.toml"])
        .output()
        .unwrap();
    assert_eq!(out.status.code(), Some(0));
    let runs = String::from_utf8(out.stdout).unwrap();
    assert!(runs.contains("order in H+: ±0.062 per station"), "{runs}");
    assert_eq!(runs.matches("[[run]]").count(), 4);
    // The designed runs replace the spec's runs and plan as they are.
    let head = &DEMO[..DEMO.find("[[run]]").unwrap()];
    let dir = tempfile::tempdir().unwrap();
    let spec = dir.path().join("designed.toml");
    std::fs::write(&spec, format!("{head}\n{runs}")).unwrap();
    clockprep()
        .arg("plan")
        .arg(&spec)
        .assert()
        .code(0)
        .stdout(predicate::str::contains("Run 4 of 4: H+ x2"));
}

#[test]
fn tune_centres_or_says_what_to_change() {
    clockprep()
        .args(["tune", "plans/willow-creek-peroxide-forecast.toml"])
        .assert()
        .code(0)
        .stdout(predicate::str::contains(
            "Best single timing concentration: S2O3^2- 0.570 mM",
        ));
    // Acid ×3 in a run set that also has a slow base: with a 20 s to 40 s window nothing fits.
    let dir = tempfile::tempdir().unwrap();
    let spec = dir.path().join("narrow.toml");
    std::fs::write(
        &spec,
        FORECAST_DEMO.replace(
            "window = [\"20 s\", \"8 min\"]",
            "window = [\"20 s\", \"40 s\"]",
        ),
    )
    .unwrap();
    clockprep()
        .arg("tune")
        .arg(&spec)
        .assert()
        .code(1)
        .stdout(predicate::str::contains(
            "no single timing concentration fits",
        ))
        .stdout(predicate::str::contains("e.g. targets"));
}

#[test]
fn completions_for_a_shell() {
    clockprep()
        .args(["completions", "bash"])
        .assert()
        .code(0)
        .stdout(predicate::str::contains("clockprep"))
        .stdout(predicate::str::contains("forecast"));
}

#[test]
fn two_term_fit_refuses_terms_the_timed_runs_cannot_separate_and_names_the_run_that_would() {
    // Without the acid run every timed run has the same [H+], so the acid-independent and
    // acid-assisted terms keep the same shares of the rate: refused, naming 'acid x3'.
    let dir = tempfile::tempdir().unwrap();
    let times = dir.path().join("no-acid.csv");
    let pilot = std::fs::read_to_string("plans/willow-creek-peroxide-pilot.csv").unwrap();
    let kept: Vec<&str> = pilot.lines().filter(|l| !l.starts_with("acid")).collect();
    std::fs::write(&times, kept.join("\n") + "\n").unwrap();
    let out = clockprep()
        .args(["fit", "plans/willow-creek-peroxide-forecast.toml"])
        .arg(&times)
        .output()
        .unwrap();
    assert_eq!(out.status.code(), Some(2));
    let err = String::from_utf8(out.stderr).unwrap();
    assert!(
        err.contains("cannot separate the terms H2O2·I- and H2O2·I-·H+")
            && err.contains("time 'acid x3' too")
            && err.contains("H+"),
        "{err}"
    );
    // With the acid run timed the same fit goes through.
    clockprep()
        .args([
            "fit",
            "plans/willow-creek-peroxide-forecast.toml",
            "plans/willow-creek-peroxide-pilot.csv",
        ])
        .assert()
        .code(0);
    // --orders belongs to one-term rate laws.
    clockprep()
        .args([
            "fit",
            "plans/willow-creek-peroxide-forecast.toml",
            "plans/willow-creek-peroxide-pilot.csv",
            "--orders",
            "prior",
        ])
        .assert()
        .code(2)
        .stderr(predicate::str::contains(
            "--orders fixes the orders of a one-term rate law",
        ));
}

#[test]
fn two_term_fit_fragment_pasted_back_forecasts_the_fitted_times() {
    // The [reaction] fragment replaces the prior; the forecast at the plan's 20 °C then gives
    // the fitted time of the base run's trial at 20.0 °C (k written to four figures).
    let out = clockprep()
        .args([
            "fit",
            "plans/willow-creek-peroxide-forecast.toml",
            "plans/willow-creek-peroxide-pilot.csv",
            "-f",
            "json",
        ])
        .output()
        .unwrap();
    let fit: serde_json::Value = serde_json::from_slice(&out.stdout).unwrap();
    assert_eq!(fit["format"], "clockprep-fit-terms/1");
    let fragment = fit["reaction_toml"].as_str().unwrap();
    let spec = std::fs::read_to_string("plans/willow-creek-peroxide-forecast.toml").unwrap();
    let start = spec.find("[reaction]").unwrap();
    let end = spec.find("[[run]]").unwrap();
    let pasted = format!("{}{fragment}\n{}", &spec[..start], &spec[end..]);
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("refit.toml");
    std::fs::write(&path, pasted).unwrap();
    let out = clockprep()
        .arg("forecast")
        .arg(&path)
        .args(["-f", "json"])
        .output()
        .unwrap();
    assert_eq!(
        out.status.code(),
        Some(0),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let forecast: serde_json::Value = serde_json::from_slice(&out.stdout).unwrap();
    let base = forecast["runs"][0]["forecast"]["time_s"].as_f64().unwrap();
    let fitted = fit["residuals"][0]["fitted_s"].as_f64().unwrap();
    assert_eq!(fit["residuals"][0]["line"], 2);
    approx::assert_relative_eq!(base, fitted, max_relative = 5e-4);
}

#[test]
fn init_writes_a_starter_that_solves_as_written_for_every_preset() {
    // Each preset's starter at a few run volumes plans with exit 0 (nothing flagged) and its
    // stocks sheet is made; the largest run count too.
    let dir = tempfile::tempdir().unwrap();
    for (preset, runs) in [
        ("bromate-iodide", "7"),
        ("persulfate-iodide", "5"),
        ("peroxide-iodide", "7"),
    ] {
        for volume in ["10", "37", "100"] {
            let path = dir.path().join(format!("{preset}-{volume}.toml"));
            clockprep()
                .args([
                    "init", "--preset", preset, "--volume", volume, "--runs", runs, "-o",
                ])
                .arg(&path)
                .assert()
                .code(0);
            let text = std::fs::read_to_string(&path).unwrap();
            assert!(text.contains("safety officer") && text.contains("SDS"));
            for command in ["plan", "stocks", "forecast"] {
                let out = clockprep().arg(command).arg(&path).output().unwrap();
                assert_eq!(
                    out.status.code(),
                    Some(0),
                    "{preset} {volume} mL {command}: {}{}",
                    String::from_utf8_lossy(&out.stdout),
                    String::from_utf8_lossy(&out.stderr)
                );
            }
        }
    }
    // Out of range: refused, naming the flag, nothing written.
    let path = dir.path().join("too-many.toml");
    clockprep()
        .args(["init", "--runs", "9", "-o"])
        .arg(&path)
        .assert()
        .code(2)
        .stderr(predicate::str::contains("--runs 9"));
    assert!(!path.exists());
}

#[test]
fn a_spec_read_from_standard_input_as_dash() {
    let out = clockprep()
        .args(["plan", "-", "-f", "json"])
        .write_stdin(DEMO)
        .output()
        .unwrap();
    assert_eq!(out.status.code(), Some(0));
    let report: serde_json::Value = serde_json::from_slice(&out.stdout).unwrap();
    assert_eq!(report["runs"][0]["name"], "reference");
    // Errors name it as <stdin>, with line and column.
    clockprep()
        .args(["plan", "-"])
        .write_stdin(DEMO.replace("stations = 8", "statons = 8"))
        .assert()
        .code(2)
        .stderr(predicate::str::contains("<stdin>:9:1"));
    // The spec and the times cannot both come from standard input.
    clockprep()
        .args(["fit", "-", "-"])
        .write_stdin(DEMO)
        .assert()
        .code(2)
        .stderr(predicate::str::contains(
            "cannot both be read from standard input",
        ));
}

#[test]
fn labels_one_per_flask_with_signal_word_and_sds_on_both_papers() {
    // The bromate demo makes 13 flasks (each stock's flask count on the stocks sheet); every one
    // gets a label, KBrO3's saying Danger with H350, each with the SDS line.
    let stocks: serde_json::Value = serde_json::from_slice(
        &clockprep()
            .args(["stocks", "plans/maple-hollow-bromate.toml", "-f", "json"])
            .output()
            .unwrap()
            .stdout,
    )
    .unwrap();
    let flasks: u64 = stocks["stocks"]
        .as_array()
        .unwrap()
        .iter()
        .map(|s| s["flask_count"].as_u64().unwrap())
        .sum();
    for paper in ["a4", "letter"] {
        let out = clockprep()
            .args([
                "labels",
                "plans/maple-hollow-bromate.toml",
                "--paper",
                paper,
            ])
            .output()
            .unwrap();
        assert_eq!(out.status.code(), Some(0));
        let html = String::from_utf8(out.stdout).unwrap();
        assert_eq!(html.matches("<div class=\"label\">").count() as u64, flasks);
        // Every label carries the cautions: goggles, gloves, SDS, waste.
        assert_eq!(
            html.matches("Goggles and gloves. See the SDS; waste and local rules apply.")
                .count() as u64,
            flasks
        );
        assert!(html.contains("<span class=\"signal\">Danger</span>: H271, H301, H350"));
        assert!(html.contains("on the day made"));
    }
}

#[test]
fn cards_copies_print_the_whole_set_that_many_times() {
    let count = |copies: &str| {
        let out = clockprep()
            .args([
                "cards",
                "plans/maple-hollow-bromate.toml",
                "--per",
                "run",
                "--copies",
                copies,
            ])
            .output()
            .unwrap();
        assert_eq!(out.status.code(), Some(0));
        let html = String::from_utf8(out.stdout).unwrap();
        (
            html.matches("<div class=\"page\">").count(),
            html.matches("safety officer").count(),
        )
    };
    let (pages, cautions) = count("1");
    assert_eq!(count("3"), (3 * pages, 3 * cautions));
    clockprep()
        .args(["cards", "plans/maple-hollow-bromate.toml", "--copies", "0"])
        .assert()
        .code(2);
}
