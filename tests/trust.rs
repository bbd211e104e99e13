//! Regression tests for sheets that were once wrong without a word: every input that can be
//! cross-checked is, and a refusal says where and how to fix it.

mod common;
use common::*;

const THIO: &str = r#"contains = { "S2O3^2-" = "1.00 mM", "Na+" = "2.00 mM" }"#;

fn stock<'a>(report: &'a serde_json::Value, name: &str) -> &'a serde_json::Value {
    report["stocks"]
        .as_array()
        .unwrap()
        .iter()
        .find(|s| s["name"] == name)
        .unwrap_or_else(|| panic!("no stock {name}"))
}

#[test]
fn solute_mass_does_not_depend_on_the_order_of_contains_keys() {
    let swapped = edit(
        BROMATE,
        THIO,
        r#"contains = { "Na+" = "2.00 mM", "S2O3^2-" = "1.00 mM" }"#,
    );
    let a = run("stocks", BROMATE, &["-f", "json"]);
    let b = run("stocks", &swapped, &["-f", "json"]);
    assert_eq!(a.code, 0, "{}", a.stderr);
    assert_eq!(b.code, 0, "{}", b.stderr);
    let (a, b) = (json(&a.stdout), json(&b.stdout));
    let (sa, sb) = (stock(&a, "Na2S2O3 1.00 mM"), stock(&b, "Na2S2O3 1.00 mM"));
    assert_eq!(sa["recipe"], sb["recipe"]);
    // m = c·V·M with M(Na2S2O3·5H2O) = 248.18 g/mol from the IUPAC 2021 standard atomic
    // weights (Prohaska et al., Pure Appl. Chem. 94, 573, 2022).
    let flask_l = sb["flask_mL"].as_f64().unwrap() / 1000.0;
    let grams = sb["recipe"]["grams_per_flask"].as_f64().unwrap();
    approx::assert_relative_eq!(grams, 1.00e-3 * flask_l * 248.18, max_relative = 2e-4);
    approx::assert_relative_eq!(sb["solute_concentration_M"].as_f64().unwrap(), 1.00e-3);
}

#[test]
fn contains_ratios_that_disagree_with_the_formula_are_refused() {
    let bad = edit(
        BROMATE,
        THIO,
        r#"contains = { "S2O3^2-" = "1.00 mM", "Na+" = "1.00 mM" }"#,
    );
    let o = run("stocks", &bad, &[]);
    assert_refused(&o, "Na2S2O3·5H2O gives 2 Na+ per 1 S2O3^2-");
    // Pasting either suggestion back is accepted.
    assert!(
        says(
            &o.stderr,
            "\"Na+\" = \"2.00 mM\" beside \"S2O3^2-\" = \"1.00 mM\""
        ),
        "{}",
        o.stderr
    );
    assert!(
        says(
            &o.stderr,
            "\"S2O3^2-\" = \"0.500 mM\" beside \"Na+\" = \"1.00 mM\""
        ),
        "{}",
        o.stderr
    );
    let first = edit(&bad, "\"Na+\" = \"1.00 mM\"", "\"Na+\" = \"2.00 mM\"");
    assert_eq!(run("stocks", &first, &[]).code, 0);
    let second = edit(
        &bad,
        "\"S2O3^2-\" = \"1.00 mM\"",
        "\"S2O3^2-\" = \"0.500 mM\"",
    );
    let o = run("stocks", &second, &[]);
    assert!(
        o.code == 0 || !says(&o.stderr, "ratio does not match"),
        "{}",
        o.stderr
    );
}

#[test]
fn a_zero_typed_for_the_letter_o_in_a_solute_is_refused() {
    refuses(
        "stocks",
        BROMATE,
        "solute = \"KBrO3\"",
        "solute = \"KBr03\"",
        "starts with a zero; did you mean the letter O?",
    );
}

#[test]
fn a_solute_that_cannot_supply_a_listed_species_is_refused_naming_both() {
    refuses(
        "stocks",
        BROMATE,
        "solute = \"KBrO3\"",
        "solute = \"KBr3\"",
        "solute 'KBr3' has no O, so it cannot supply BrO3-",
    );
}

#[test]
fn a_counter_ion_left_out_of_contains_is_named() {
    refuses(
        "stocks",
        BROMATE,
        r#"contains = { "I-" = "0.0100 M", "K+" = "0.0100 M" }"#,
        r#"contains = { "I-" = "0.0100 M" }"#,
        "solute 'KI' gives I- and also K+",
    );
}

#[test]
fn solute_concentration_that_disagrees_with_contains_is_refused() {
    refuses(
        "stocks",
        BROMATE,
        "solute = \"KI\"",
        "solute = \"KI\"\nsolute_concentration = \"0.0200 M\"",
        "solute_concentration 20.0 mM disagrees with contains",
    );
    // Agreeing with contains, it is accepted.
    let ok = edit(
        BROMATE,
        "solute = \"KI\"",
        "solute = \"KI\"\nsolute_concentration = \"0.0100 M\"",
    );
    assert_eq!(run("stocks", &ok, &[]).code, 0);
}

#[test]
fn a_dilution_that_leaves_out_a_species_of_its_source_is_refused() {
    let o = refuses(
        "stocks",
        BROMATE,
        r#"contains = { "H+" = "0.100 M", "Cl-" = "0.100 M" }"#,
        r#"contains = { "H+" = "0.100 M" }"#,
        "stock 'HCl 0.100 M' leaves out Cl-",
    );
    assert!(says(&o.stderr, "\"Cl-\" = \"0.100 M\""), "{}", o.stderr);
}

#[test]
fn unbalanced_equations_are_refused_naming_element_and_charge() {
    let atoms = edit(
        BROMATE,
        "preset = \"bromate-iodide\"",
        "preset = \"bromate-iodide\"\nmain = \"BrO3- + 6 I- + 6 H+ -> Br- + 3 I2 + 2 H2O\"",
    );
    let o = run("forecast", &atoms, &[]);
    assert_refused(&o, "does not balance");
    assert!(
        says(&o.stderr, "O 3 on the left, 2 on the right"),
        "{}",
        o.stderr
    );
    assert!(
        says(&o.stderr, "H 6 on the left, 4 on the right"),
        "{}",
        o.stderr
    );
    let charge = edit(
        BROMATE,
        "preset = \"bromate-iodide\"",
        "preset = \"bromate-iodide\"\nclock = \"I2 + 2 S2O3^2- -> I- + S4O6^2-\"",
    );
    let o = run("forecast", &charge, &[]);
    assert_refused(&o, "I 2 on the left, 1 on the right");
    assert!(
        says(
            &o.stderr,
            "charge \u{2212}4 on the left, \u{2212}3 on the right"
        ),
        "{}",
        o.stderr
    );
}

#[test]
fn a_charge_written_after_its_digit_is_refused_with_the_caret_form() {
    let o = run("plan", &PERSULFATE.replace("SO4^2-", "SO4-2"), &[]);
    assert_refused(&o, "the charge's number comes after its sign");
    assert!(says(&o.stderr, "\"SO4^2-\""), "{}", o.stderr);
}

#[test]
fn repeated_minus_signs_are_the_same_species_as_the_caret() {
    let a = run("plan", BROMATE, &["-f", "json"]);
    let b = run(
        "plan",
        &BROMATE.replace("S2O3^2-", "S2O3--"),
        &["-f", "json"],
    );
    assert_eq!(a.code, 0, "{}", a.stderr);
    assert_eq!(b.code, 0, "{}", b.stderr);
    let (a, b) = (json(&a.stdout), json(&b.stdout));
    assert_eq!(a["runs"], b["runs"]);
    assert_eq!(a["stock_totals"], b["stock_totals"]);
}

#[test]
fn an_en_dash_for_a_minus_sign_is_named() {
    let o = run(
        "plan",
        &BROMATE.replacen("\"I-\" = \"0.0100 M\"", "\"I\u{2013}\" = \"0.0100 M\"", 1),
        &[],
    );
    assert_refused(&o, "en dash, U+2013");
}

#[test]
fn a_concentrate_without_solute_is_worked_out_from_its_species() {
    let without = edit(BROMATE, "solute = \"HCl\"\n", "");
    let a = run("stocks", BROMATE, &["-f", "json"]);
    let b = run("stocks", &without, &["-f", "json"]);
    assert_eq!(b.code, 0, "{}", b.stderr);
    let (a, b) = (json(&a.stdout), json(&b.stdout));
    assert_eq!(
        stock(&a, "HCl 1.00 M")["recipe"]["mL_per_flask"],
        stock(&b, "HCl 1.00 M")["recipe"]["mL_per_flask"]
    );
    assert_eq!(stock(&b, "HCl 1.00 M")["recipe"]["kind"], "measure");
}

#[test]
fn a_concentrate_whose_species_do_not_fix_the_formula_asks_for_the_solute() {
    let bad = edit(
        BROMATE,
        "solute = \"HCl\"\ncontains = { \"H+\" = \"1.00 M\", \"Cl-\" = \"1.00 M\" }",
        "contains = { \"H+\" = \"1.00 M\", \"Cl-\" = \"0.500 M\" }",
    );
    let o = run("stocks", &bad, &[]);
    assert_refused(
        &o,
        "the liquid reagent's formula does not follow from its species",
    );
    assert!(
        says(&o.stderr, "solute = \\\"HCl\\\"") || says(&o.stderr, "solute = \"HCl\""),
        "{}",
        o.stderr
    );
}

const PILOT: &str = include_str!("../plans/maple-hollow-pilot.csv");

fn fit(csv: &str, args: &[&str]) -> Outcome {
    let mut all = vec!["times.csv"];
    all.extend_from_slice(args);
    run_with("fit", BROMATE, &[("times.csv", csv)], &all)
}

#[test]
fn fit_flags_a_gross_outlier_in_a_six_trial_pilot() {
    // "1337" typed for 133.7 in a pilot of six trials: internally studentized residuals can
    // never exceed √(n − p) = √2 here; the deleted residual does.
    let csv = "run,time,temperature\nreference,131.7,21.0\nreference,1337,21.0\niodide x2,65.9,21.0\nbromate x2,64.9,21.0\nacid x2,33.7,21.0\nacid x1.5,59.9,21.0\n";
    let o = fit(csv, &[]);
    assert_eq!(o.code, 1, "{}{}", o.stdout, o.stderr);
    let line = o.stdout.lines().find(|l| l.contains("  1337 ")).unwrap();
    assert!(line.contains("<- outlier"), "{line}");
    assert!(
        o.stdout.contains("WARNING: line 3: run 'reference'"),
        "{}",
        o.stdout
    );
}

#[test]
fn fit_flags_a_time_typed_without_its_decimal_point() {
    let csv = PILOT.replacen("iodide x2,65.9", "iodide x2,6590", 1);
    let o = fit(&csv, &[]);
    assert_eq!(o.code, 1, "{}{}", o.stdout, o.stderr);
    assert!(
        says(
            &o.stdout,
            "6590 s for run 'iodide x2' is 118 times the prior's forecast"
        ),
        "{}",
        o.stdout
    );
    assert!(
        says(&o.stdout, "outside the plausible -0.5 to 4"),
        "{}",
        o.stdout
    );
}

#[test]
fn fit_refit_hint_lists_whole_or_half_orders_that_are_accepted_when_pasted() {
    let csv = PILOT.replacen("iodide x2,65.9", "iodide x2,6590", 1);
    let o = fit(&csv, &[]);
    let hint = o
        .stdout
        .lines()
        .find(|l| l.contains("--orders "))
        .expect("a refit hint");
    let orders = hint.rsplit("--orders ").next().unwrap().trim();
    for part in orders.split(',') {
        let v: f64 = part.split('=').nth(1).unwrap().parse().unwrap();
        assert_eq!(
            (v * 2.0).fract(),
            0.0,
            "{part} is not a whole or half order"
        );
    }
    let again = fit(&csv, &["--orders", orders]);
    assert_ne!(again.code, 2, "{}", again.stderr);
}

#[test]
fn fit_refuses_a_time_longer_than_a_day_instead_of_hanging() {
    let csv = PILOT.replacen("iodide x2,65.9", "iodide x2,1e308", 1);
    let o = fit(&csv, &[]);
    assert_eq!(o.code, 2, "{}", o.stderr);
    assert!(says(&o.stderr, "longer than a day"), "{}", o.stderr);
    assert!(
        located(&o.stderr, &o.dir.path().join("times.csv")) || o.stderr.contains("times.csv:4:"),
        "{}",
        o.stderr
    );
}

#[test]
fn fit_keeps_the_prior_activation_energy_over_a_narrow_temperature_spread() {
    // The demo pilot with half its trials at 21.6 °C: a 0.6 °C spread cannot determine Ea.
    let mut csv = String::from("run,time,temperature\n");
    for (i, line) in PILOT.lines().skip(1).enumerate() {
        let t = if i % 2 == 0 { "21.0" } else { "21.6" };
        let (head, _) = line.rsplit_once(',').unwrap();
        csv.push_str(&format!("{head},{t}\n"));
    }
    let o = fit(&csv, &[]);
    assert_eq!(o.code, 0, "{}{}", o.stdout, o.stderr);
    assert!(
        says(
            &o.stdout,
            "kept from the prior: the trials span 0.6 °C, less than the 3 °C"
        ),
        "{}",
        o.stdout
    );
    // The bromate preset's 54 kJ/mol stays, and k is given at the mean temperature, 21.3 °C.
    assert!(
        o.stdout.contains("activation_energy = \"54.0 kJ/mol\""),
        "{}",
        o.stdout
    );
    assert!(o.stdout.contains("at = \"294.45 K\""), "{}", o.stdout);
}

#[test]
fn fit_residual_signs_match_the_measured_and_fitted_columns() {
    let o = fit(PILOT, &[]);
    for line in o.stdout.lines().filter(|l| l.contains("reference ")) {
        let cols: Vec<&str> = line.split_whitespace().collect();
        // #, line, run, measured, fitted, ln ratio, studentized
        let n = cols.len();
        let (measured, fitted): (f64, f64) =
            (cols[n - 4].parse().unwrap(), cols[n - 3].parse().unwrap());
        let (ln_ratio, stud): (f64, f64) =
            (cols[n - 2].parse().unwrap(), cols[n - 1].parse().unwrap());
        assert_eq!(measured > fitted, ln_ratio > 0.0, "{line}");
        assert_eq!(ln_ratio > 0.0, stud > 0.0, "{line}");
    }
}

#[test]
fn fit_residuals_of_millisecond_times_are_shown_in_ms() {
    let csv: String = PILOT
        .lines()
        .enumerate()
        .map(|(i, l)| {
            if i == 0 {
                return format!("{l}\n");
            }
            let f: Vec<&str> = l.split(',').collect();
            let ms: f64 = f[1].parse::<f64>().unwrap() / 1000.0;
            format!("{},{ms},{}\n", f[0], f[2])
        })
        .collect();
    let o = fit(&csv, &[]);
    assert!(
        o.stdout.contains("measured (ms)") && o.stdout.contains("fitted (ms)"),
        "{}",
        o.stdout
    );
    assert!(o.stdout.contains(" 131.7 "), "{}", o.stdout);
}

#[test]
fn a_species_the_run_does_not_deliver_has_no_uncertainty_and_no_negative_zero() {
    let o = run("plan", BROMATE, &["-f", "json"]);
    assert!(!o.stdout.contains("-0.0"), "a negative zero in the JSON");
    let report = json(&o.stdout);
    let run = &report["runs"][3]; // "acid x2" needs no KNO3
    assert_eq!(run["concentrations"]["NO3-"], 0.0);
    assert!(
        run["uncertainty"].get("NO3-").is_none(),
        "{}",
        run["uncertainty"]
    );
    let text = run_with("plan", BROMATE, &[], &[]).stdout;
    let row = text
        .lines()
        .filter(|l| l.trim_start().starts_with("NO3-"))
        .find(|l| l.contains(" 0.000 "))
        .expect("a run without nitrate");
    assert!(row.trim_end().ends_with('-'), "{row}");
}

#[test]
fn every_format_carries_the_deliveries_of_the_mixing_sheet() {
    let report = json(&run("plan", BROMATE, &["-f", "json"]).stdout);
    let csv = run("plan", BROMATE, &["-f", "csv"]).stdout;
    for r in report["runs"].as_array().unwrap() {
        // The portions are what the sheet tells a person to pour.
        let mut poured: Vec<(String, String, String, String)> = Vec::new();
        for vessel in ["A", "B"] {
            for item in r["portions"][vessel].as_array().unwrap() {
                poured.push((
                    item["stock"].as_str().unwrap().into(),
                    vessel.into(),
                    item["mL"].to_string(),
                    item["device"].as_str().unwrap().into(),
                ));
            }
        }
        let mut listed: Vec<(String, String, String, String)> = r["volumes"]
            .as_array()
            .unwrap()
            .iter()
            .filter(|v| v["mL"].as_f64().unwrap() > 0.0)
            .map(|v| {
                (
                    v["stock"].as_str().unwrap().into(),
                    v["vessel"].as_str().unwrap().into(),
                    v["mL"].to_string(),
                    v["device"].as_str().unwrap().into(),
                )
            })
            .collect();
        let name = r["name"].as_str().unwrap();
        let mut in_csv: Vec<(String, String, String, String)> = csv
            .lines()
            .filter(|l| l.starts_with(&format!("{name},volume,")))
            .map(|l| l.split(',').collect::<Vec<_>>())
            .filter(|c| c[4] != "0")
            .map(|c| {
                (
                    c[2].into(),
                    c[3].into(),
                    format!("{:?}", c[4].parse::<f64>().unwrap()),
                    c[5].into(),
                )
            })
            .collect();
        poured.sort();
        listed.sort();
        in_csv.sort();
        assert_eq!(poured, listed, "run {name}: JSON volumes vs portions");
        let poured_csv: Vec<_> = poured
            .iter()
            .map(|(s, v, ml, d)| {
                (
                    s.clone(),
                    v.clone(),
                    format!("{:?}", ml.parse::<f64>().unwrap()),
                    d.clone(),
                )
            })
            .collect();
        assert_eq!(poured_csv, in_csv, "run {name}: CSV volumes vs portions");
    }
}

#[test]
fn per_station_volume_is_what_one_station_uses_over_its_replicates() {
    let report = json(&run("plan", BROMATE, &["-f", "json"]).stdout);
    let replicates = report["replicates"].as_f64().unwrap();
    let stations = report["stations"].as_f64().unwrap();
    for t in report["stock_totals"].as_array().unwrap() {
        let one = t["one_set_mL"].as_f64().unwrap();
        approx::assert_relative_eq!(t["per_station_mL"].as_f64().unwrap(), one * replicates);
        approx::assert_relative_eq!(t["used_mL"].as_f64().unwrap(), one * replicates * stations);
    }
}

#[test]
fn a_reference_temperature_above_60_c_is_refused() {
    refuses("forecast", BROMATE, "preset = \"bromate-iodide\"", "preset = \"bromate-iodide\"\n[[reaction.term]]\nk = \"40 M^-3 s^-1\"\nat = \"75 °C\"\norders = { \"BrO3-\" = 1, \"I-\" = 1, \"H+\" = 2 }", "at = 75.0 °C is outside 0–60 °C");
}

#[test]
fn an_empty_flask_list_is_refused() {
    refuses(
        "stocks",
        BROMATE,
        "tolerance = \"1 %\"",
        "tolerance = \"1 %\"\nflasks = []",
        "flasks is an empty list",
    );
}

fn forecast_json(spec: &str) -> (i32, serde_json::Value) {
    let o = run("forecast", spec, &["-f", "json"]);
    assert_ne!(o.code, 2, "{}", o.stderr);
    (o.code, json(&o.stdout))
}

fn warning_codes(run: &serde_json::Value) -> Vec<String> {
    run["forecast"]["warnings"]
        .as_array()
        .unwrap()
        .iter()
        .map(|w| w["code"].as_str().unwrap().to_string())
        .collect()
}

#[test]
fn a_run_too_fast_is_told_to_use_more_timing_reagent_and_that_works() {
    let fast = edit(
        PEROXIDE,
        "concentration = \"1.00 mM\"",
        "concentration = \"0.150 mM\"",
    );
    let (code, report) = forecast_json(&fast);
    assert_eq!(code, 1);
    let runs = report["runs"].as_array().unwrap();
    let flagged: Vec<&serde_json::Value> = runs
        .iter()
        .filter(|r| warning_codes(r).contains(&"too_fast".to_string()))
        .collect();
    assert!(!flagged.is_empty());
    for r in &flagged {
        let message = r["forecast"]["warnings"][0]["message"].as_str().unwrap();
        assert!(message.contains("use more timing reagent"), "{message}");
    }
    // Following the advice: twice the timing reagent.
    let followed = edit(
        PEROXIDE,
        "concentration = \"1.00 mM\"",
        "concentration = \"0.300 mM\"",
    );
    let (code, report) = forecast_json(&followed);
    assert_eq!(code, 0, "{}", report);
    for r in report["runs"].as_array().unwrap() {
        assert!(warning_codes(r).is_empty(), "{r}");
    }
}

#[test]
fn a_run_too_slow_is_told_to_use_less_timing_reagent_and_that_works() {
    let slow = edit(
        PEROXIDE,
        "concentration = \"1.00 mM\"",
        "concentration = \"2.00 mM\"",
    );
    let (code, report) = forecast_json(&slow);
    assert_eq!(code, 1);
    let base = &report["runs"][0];
    assert!(warning_codes(base).contains(&"too_slow".to_string()));
    let message = base["forecast"]["warnings"][0]["message"].as_str().unwrap();
    assert!(message.contains("use less timing reagent"), "{message}");
    let (code, _) = forecast_json(PEROXIDE);
    assert_eq!(code, 0);
}

#[test]
fn a_timing_flag_quotes_the_time_at_the_temperature_it_names() {
    let fast = edit(
        PEROXIDE,
        "concentration = \"1.00 mM\"",
        "concentration = \"0.100 mM\"",
    );
    let (_, report) = forecast_json(&fast);
    let mut checked = 0;
    for r in report["runs"].as_array().unwrap() {
        let f = &r["forecast"];
        let Some(w) = f["warnings"].as_array().unwrap().first() else {
            continue;
        };
        let message = w["message"].as_str().unwrap();
        let at = f["time_s"].as_f64().unwrap();
        let warm = f["band_s"][0].as_f64().unwrap();
        if at < 20.0 {
            assert!(
                message.contains(&format!("{at:.1} s at 20.0 °C")),
                "{message} vs {at}"
            );
        }
        assert!(
            message.contains(&format!("{warm:.1} s at the warm end")),
            "{message} vs {warm}"
        );
        checked += 1;
    }
    assert!(checked >= 2);
}

#[test]
fn the_sheet_counts_every_run_that_carries_a_flag() {
    // Thiosulfate at a fifth: every run of the demo is too fast somewhere in the band.
    let fast = BROMATE
        .replace(
            "concentration = \"0.100 mM\"",
            "concentration = \"0.0200 mM\"",
        )
        .replace(
            "devices = [\"5 mL transfer pipet\"]",
            "devices = [\"1 mL transfer pipet\"]",
        );
    let o = run("plan", &fast, &[]);
    assert_eq!(o.code, 1, "{}", o.stderr);
    let report = json(&run("plan", &fast, &["-f", "json"]).stdout);
    let flagged = report["runs"]
        .as_array()
        .unwrap()
        .iter()
        .filter(|r| {
            !r["flags"].as_array().unwrap().is_empty()
                || !r["forecast"]["warnings"].as_array().unwrap().is_empty()
        })
        .count();
    assert!(flagged >= 3, "{flagged}");
    assert!(
        o.stdout
            .contains(&format!("FLAGGED: {flagged} runs need a look")),
        "{}",
        o.stdout
    );
}

#[test]
fn every_suggested_timing_concentration_is_accepted_when_pasted_back() {
    // A 3.33 mM thiosulfate stock: the 3-figure 0.799 mM needs 2.3994 mL, which no pipette
    // step gives; the suggestions must each be deliverable as written.
    let spec = PERSULFATE
        .replace(
            r#"contains = { "S2O3^2-" = "10.0 mM", "Na+" = "20.0 mM" }"#,
            r#"contains = { "S2O3^2-" = "3.33 mM", "Na+" = "6.66 mM" }"#,
        )
        .replace(
            "concentration = \"0.800 mM\"",
            "concentration = \"0.799 mM\"",
        );
    let o = run("plan", &spec, &[]);
    assert_refused(&o, "no allowed device delivers 2.3994 mL");
    let flat = flat(&o.stderr);
    let suggestions: Vec<&str> = flat
        .split("concentration = \"")
        .skip(1)
        .map(|s| s.split('"').next().unwrap())
        .filter(|s| !s.contains("0.799 mM"))
        .collect();
    assert_eq!(suggestions.len(), 2, "{flat}");
    for s in suggestions {
        let pasted = spec.replace(
            "concentration = \"0.799 mM\"",
            &format!("concentration = \"{s}\""),
        );
        let again = run("plan", &pasted, &[]);
        assert_ne!(again.code, 2, "{s} was refused:\n{}", again.stderr);
    }
}

#[test]
fn a_timing_volume_a_hair_from_a_deliverable_one_is_that_one() {
    // 0.1000004 mM of the 1.00 mM stock in 50 mL is 5.00002 mL, within 1e-5 of the 5 mL
    // transfer pipet: delivered with it.
    let near = edit(
        BROMATE,
        "concentration = \"0.100 mM\"",
        "concentration = \"0.1000004 mM\"",
    );
    assert_ne!(run("plan", &near, &[]).code, 2);
}

/// Apply the "e.g. targets 'run': "sp" = "value", …; 'run': …" part of a tune advice line.
fn follow_tune_advice(spec: &str, advice: &str) -> String {
    let part = advice
        .split("e.g. targets ")
        .nth(1)
        .expect("targets in the advice")
        .split("; then")
        .next()
        .unwrap();
    let mut out: Vec<String> = spec.lines().map(String::from).collect();
    for change in part.split("; '") {
        let change = change.trim_start_matches('\'');
        let (run, values) = change.split_once("': ").unwrap();
        let at = out
            .iter()
            .position(|l| l.trim() == format!("name = \"{run}\""))
            .unwrap_or_else(|| panic!("no run {run}"));
        let line = &mut out[at + 1];
        assert!(line.starts_with("targets = {"), "{line}");
        for pair in values.split(", ") {
            let (sp, value) = pair.split_once(" = ").unwrap();
            let start = line.find(&format!("{sp} = \"")).unwrap() + sp.len() + 4;
            let end = start + line[start..].find('"').unwrap();
            line.replace_range(start..end, value.trim_matches('"'));
        }
    }
    out.join("\n")
}

#[test]
fn tune_without_a_fit_gives_advice_that_works_when_followed_and_no_set_line() {
    let narrow = edit(
        PEROXIDE,
        "window = [\"20 s\", \"8 min\"]",
        "window = [\"20 s\", \"45 s\"]",
    );
    let o = run("tune", &narrow, &[]);
    assert_eq!(o.code, 1, "{}{}", o.stdout, o.stderr);
    assert!(!o.stdout.contains("Set [timing]"), "{}", o.stdout);
    let advice = o
        .stdout
        .lines()
        .find(|l| l.contains("e.g. targets"))
        .expect("advice with targets");
    let followed = follow_tune_advice(&narrow, advice);
    let again = run("tune", &followed, &[]);
    assert_eq!(
        again.code, 0,
        "following the advice did not fit:\n{}",
        again.stdout
    );
    assert!(
        again.stdout.contains("Set [timing] concentration"),
        "{}",
        again.stdout
    );
}

#[test]
fn tune_says_when_the_band_alone_is_wider_than_the_window() {
    let narrow = edit(
        PEROXIDE,
        "window = [\"20 s\", \"8 min\"]",
        "window = [\"20 s\", \"22 s\"]",
    );
    let o = run("tune", &narrow, &[]);
    assert_eq!(o.code, 1);
    assert!(
        o.stdout
            .contains("the temperature band alone spans more than the window"),
        "{}",
        o.stdout
    );
    assert!(!o.stdout.contains("Set [timing]"));
}

#[test]
fn design_flags_runs_outside_the_window_anywhere_in_the_band_and_exits_1() {
    // A 15 s to 60 s window: the base run is slow already at 21 °C, 'I- x2' only at the
    // cool end of the band (18 °C); both must be flagged.
    let narrow = edit(
        BROMATE,
        "window = [\"15 s\", \"10 min\"]",
        "window = [\"15 s\", \"60 s\"]",
    );
    let o = run("design", &narrow, &[]);
    assert_eq!(o.code, 1, "{}{}", o.stdout, o.stderr);
    assert!(
        says(&o.stdout, "WARNING: run 'base': predicted"),
        "{}",
        o.stdout
    );
    assert!(
        says(
            &o.stdout,
            "WARNING: run 'I- x2': predicted 77.3 s at the cool end of the band (18.0 °C)"
        ),
        "{}",
        o.stdout
    );
    assert_eq!(run("design", BROMATE, &[]).code, 0);
}

#[test]
fn chart_exits_like_forecast() {
    let fast = edit(
        PEROXIDE,
        "concentration = \"1.00 mM\"",
        "concentration = \"0.150 mM\"",
    );
    assert_eq!(run("forecast", &fast, &[]).code, 1);
    assert_eq!(run("chart", &fast, &[]).code, 1);
    assert_eq!(run("chart", PEROXIDE, &[]).code, 0);
}

#[test]
fn cards_show_a_runs_flags() {
    let fast = BROMATE
        .replace(
            "concentration = \"0.100 mM\"",
            "concentration = \"0.0200 mM\"",
        )
        .replace(
            "devices = [\"5 mL transfer pipet\"]",
            "devices = [\"1 mL transfer pipet\"]",
        );
    for per in ["run", "station"] {
        let o = run("cards", &fast, &["--per", per]);
        assert_eq!(o.code, 1, "{}", o.stderr);
        assert!(
            o.stdout.contains("too fast") || o.stdout.contains("too_fast"),
            "--per {per}"
        );
    }
    let o = run("cards", &fast, &["--per", "run"]);
    assert!(o.stdout.contains("use more timing reagent"));
}

#[test]
fn the_persulfate_caution_names_the_salt_the_spec_uses() {
    let o = run("plan", PERSULFATE, &[]);
    assert!(o.stdout.contains("Ammonium persulfate ("), "{}", o.stdout);
    let potassium = PERSULFATE
        .replace("solute = \"(NH4)2S2O8\"", "solute = \"K2S2O8\"")
        .replace(
            r#"contains = { "S2O8^2-" = "0.100 M", "NH4+" = "0.200 M" }"#,
            r#"contains = { "S2O8^2-" = "0.100 M", "K+" = "0.200 M" }"#,
        );
    let o = run("plan", &potassium, &[]);
    assert_ne!(o.code, 2, "{}", o.stderr);
    assert!(o.stdout.contains("Potassium persulfate ("), "{}", o.stdout);
    assert!(!o.stdout.contains("Ammonium persulfate"), "{}", o.stdout);
}

#[test]
fn a_target_no_device_can_deliver_is_refused_before_any_solve() {
    // A pH 8 control: 1e-8 M H+ from a 0.100 M acid would need 5e-6 mL.
    let spec = edit(
        BROMATE,
        r#"targets = { "I-" = "2.00 mM", "BrO3-" = "8.00 mM", "H+" = "20.0 mM" }"#,
        r#"targets = { "I-" = "2.00 mM", "BrO3-" = "8.00 mM", "H+" = "1e-8 M" }"#,
    );
    let o = run("plan", &spec, &[]);
    assert_refused(
        &o,
        "run 'reference': H+ 0.0100 µM needs 5.00e-6 mL of 'HCl 0.100 M'",
    );
    assert!(!o.stderr.contains("bug"), "{}", o.stderr);
}

#[test]
fn a_missing_table_is_named_in_its_label_not_at_1_1() {
    let no_runs: String = PEROXIDE.split("[[run]]").next().unwrap().to_string();
    let o = run("forecast", &no_runs, &[]);
    assert_eq!(o.code, 2);
    assert!(says(&o.stderr, "no [[run]] in the spec"), "{}", o.stderr);
    assert!(!o.stderr.contains(":1:1]"), "{}", o.stderr);
}

#[test]
fn no_input_is_ever_an_output_whatever_the_spelling_or_flags() {
    let dir = tempfile::tempdir().unwrap();
    let spec = dir.path().join("spec.toml");
    let times = dir.path().join("t.csv");
    std::fs::write(&spec, BROMATE).unwrap();
    std::fs::write(&times, PILOT).unwrap();
    let link = dir.path().join("link.csv");
    #[cfg(unix)]
    std::os::unix::fs::symlink(&times, &link).unwrap();
    for out in ["./t.csv", "link.csv", "../$DIR/t.csv", "./spec.toml"] {
        let out = out.replace("$DIR", dir.path().file_name().unwrap().to_str().unwrap());
        let o = assert_cmd::Command::cargo_bin("clockprep")
            .unwrap()
            .current_dir(dir.path())
            .args(["fit", "spec.toml", "t.csv", "-o", &out, "--force"])
            .output()
            .unwrap();
        assert_eq!(o.status.code(), Some(2), "{out}");
        assert!(
            String::from_utf8_lossy(&o.stderr).contains("over an input"),
            "{out}"
        );
    }
    assert_eq!(std::fs::read_to_string(&times).unwrap(), PILOT);
    assert_eq!(std::fs::read_to_string(&spec).unwrap(), BROMATE);
}

#[cfg(target_os = "linux")]
#[test]
fn a_failed_write_to_standard_output_exits_2() {
    let full = std::fs::File::options()
        .write(true)
        .open("/dev/full")
        .unwrap();
    let o = std::process::Command::new(assert_cmd::cargo::cargo_bin("clockprep"))
        .args(["plan", "plans/maple-hollow-bromate.toml"])
        .stdout(full)
        .output()
        .unwrap();
    assert_eq!(o.status.code(), Some(2));
    let err = String::from_utf8_lossy(&o.stderr);
    assert!(err.contains("cannot write standard output"), "{err}");
    assert_eq!(
        err.matches("os error 28").count(),
        1,
        "the OS error printed more than once:\n{err}"
    );
}

#[test]
fn a_times_file_that_is_not_utf8_names_its_line() {
    let dir = tempfile::tempdir().unwrap();
    std::fs::write(dir.path().join("spec.toml"), BROMATE).unwrap();
    std::fs::write(dir.path().join("t.csv"), b"run,time\nreference,131\xe9\n").unwrap();
    let o = assert_cmd::Command::cargo_bin("clockprep")
        .unwrap()
        .current_dir(dir.path())
        .args(["fit", "spec.toml", "t.csv"])
        .output()
        .unwrap();
    assert_eq!(o.status.code(), Some(2));
    let err = String::from_utf8_lossy(&o.stderr);
    assert!(
        says(
            &err,
            "the times file t.csv is not UTF-8 text: line 2, column 14"
        ),
        "{err}"
    );
    assert!(says(&err, "save it as UTF-8"), "{err}");
}

#[test]
fn the_volumes_overview_adds_up_to_each_runs_total() {
    // Regression: summing the water portions once scaled the whole overview by 1000.
    let text = run("plan", BROMATE, &[]).stdout;
    let md = run("plan", BROMATE, &["-f", "md"]).stdout;
    let row = text.lines().find(|l| l.starts_with("reference ")).unwrap();
    let sum: f64 = row
        .split_whitespace()
        .skip(1)
        .take(7)
        .map(|v| v.parse::<f64>().unwrap())
        .sum();
    approx::assert_relative_eq!(sum, 50.0, max_relative = 1e-9);
    let row = md.lines().find(|l| l.starts_with("| reference |")).unwrap();
    let sum: f64 = row
        .split('|')
        .skip(2)
        .take(7)
        .map(|v| v.trim().parse::<f64>().unwrap())
        .sum();
    approx::assert_relative_eq!(sum, 50.0, max_relative = 1e-9);
}

#[test]
fn the_timing_line_tune_writes_as_toml_is_accepted_when_pasted_back() {
    // The [timing] line of `tune -f toml`, pasted over the spec's, loads, and tuning again
    // finds the same concentration inside the window.
    let o = run("tune", PEROXIDE, &["-f", "toml"]);
    assert_eq!(o.code, 0, "{}", o.stderr);
    let line = o
        .stdout
        .lines()
        .find(|l| l.starts_with("concentration = "))
        .expect("a concentration line");
    let spec = edit(PEROXIDE, "concentration = \"1.00 mM\"", line);
    let again = run("tune", &spec, &["-f", "toml"]);
    assert_eq!(again.code, 0, "{}", again.stderr);
    assert!(again.stdout.contains(line), "{}", again.stdout);
    let forecast = run("forecast", &spec, &[]);
    assert_ne!(forecast.code, 2, "{}", forecast.stderr);
}

#[test]
fn the_salt_effect_scales_k_to_the_runs_ionic_strength_as_davies_predicts() {
    // The bromate demo with its k stated at infinite dilution. Its runs hold I = 50.3 mM, so by
    // the Brønsted–Bjerrum relation with the Davies equation (Atkins and de Paula, Physical
    // Chemistry): f(I) = √0.0503/(1 + √0.0503) − 0.3 · 0.0503 = 0.168100; Δ = −4 for
    // k [BrO3-][I-][H+]^2; A = 0.5077 at 21 °C (tables: 0.5070 at 20 °C, 0.5108 at 25 °C).
    // k falls by 10^(4 · 0.5077 · 0.168100) = 2.195, and every time (∝ 1/k) grows by as much.
    let off = json(&run("plan", BROMATE, &["-f", "json"]).stdout);
    let on_text = edit(
        BROMATE,
        "preset = \"bromate-iodide\"",
        "preset = \"bromate-iodide\"\nk_at_ionic_strength = \"0 M\"",
    );
    let o = run("plan", &on_text, &["-f", "json"]);
    let on = json(&o.stdout);
    assert_eq!(on["reaction"]["k_at_ionic_strength_M"], 0.0);
    approx::assert_relative_eq!(
        on["runs"][0]["ionic_strength_M"].as_f64().unwrap(),
        0.0503,
        max_relative = 1e-9
    );
    let t = |r: &serde_json::Value| r["runs"][0]["forecast"]["time_s"].as_f64().unwrap();
    approx::assert_relative_eq!(t(&on) / t(&off), 2.195, max_relative = 3e-3);
    let sheet = run("plan", &on_text, &[]).stdout;
    assert!(says(&sheet, "the salt effect is on"), "{sheet}");
}

#[test]
fn an_acid_diluted_from_nominal_reagent_is_advised_for_standardizing_and_the_advice_holds() {
    // HCl 1.00 M measured from 37 % reagent: √(1.2² + 0.2² + 0.046²) % = 1.217 %; HCl 0.100 M
    // diluted from it: √(1.217² + 0.2² + 0.046²) % = 1.235 % by default. Its H+ enters every
    // run alone, so the stocks sheet says to standardize it.
    let o = run("stocks", BROMATE, &["-f", "json"]);
    let r = json(&o.stdout);
    let hcl = r["stocks"]
        .as_array()
        .unwrap()
        .iter()
        .find(|s| s["name"] == "HCl 0.100 M")
        .unwrap();
    approx::assert_relative_eq!(
        hcl["uncertainty_pct"].as_f64().unwrap(),
        (1.2f64.powi(2) + 2.0 * 0.2f64.powi(2) + 2.0 * 0.046f64.powi(2)).sqrt(),
        max_relative = 1e-3
    );
    // (The sheet's other advice, the thiosulfate mass on the default balance, is another test's.)
    let advice: Vec<&str> = r["advice"]
        .as_array()
        .unwrap()
        .iter()
        .filter_map(|a| a.as_str())
        .filter(|a| a.starts_with("Standardize"))
        .collect();
    assert_eq!(advice.len(), 1, "{advice:?}");
    let text = advice[0];
    assert!(
        text.contains("Standardize 'HCl 0.100 M'") && text.contains("H+"),
        "{text}"
    );
    // Following it: the titrated stock's stated uncertainty is accepted, the advice goes and
    // the H+ uncertainty of the runs falls.
    let titrated = edit(
        BROMATE,
        "dilute_from = \"HCl 1.00 M\"",
        "dilute_from = \"HCl 1.00 M\"\nuncertainty = \"0.3 %\"",
    );
    let after = json(&run("stocks", &titrated, &["-f", "json"]).stdout);
    assert!(!after["advice"]
        .as_array()
        .unwrap()
        .iter()
        .any(|a| a.as_str().unwrap().starts_with("Standardize")));
    let h = |text: &str| {
        json(&run("plan", text, &["-f", "json"]).stdout)["runs"][0]["uncertainty"]["H+"]
            .as_f64()
            .unwrap()
    };
    assert!(h(&titrated) < 0.5 * h(BROMATE));
}

#[test]
fn design_names_the_shared_stock_that_floors_ln_k_and_following_the_advice_lowers_it() {
    // The acid diluted from nominal 37 % reagent (u 1.2 %, H+ squared) is used by every station
    // from the same flask: more stations do not average it away, so design says to
    // standardize it. Following the advice (the titrated stock's uncertainty pasted back as
    // the warning words it) is accepted, the warning goes and the pooled ln k tightens. On an
    // analytical balance, so the thiosulfate's weighing is not the larger share (see
    // design_names_a_thiosulfate_weighed_on_a_top_loader_and_titrating_it_is_accepted).
    let base = edit(BROMATE, "[plan]\n", "[plan]\nbalance = \"0.0001 g\"\n");
    let before = json(&run("design", &base, &["-f", "json"]).stdout);
    assert_eq!(before["flagged"], false, "advice is not a flag");
    let warnings = before["advice"].as_array().unwrap();
    let advice = warnings
        .iter()
        .filter_map(|w| w.as_str())
        .find(|w| w.contains("shared by every station"))
        .unwrap_or_else(|| panic!("{warnings:?}"));
    assert!(advice.contains("'HCl 0.100 M'"), "{advice}");
    let suggested = advice
        .split("e.g. ")
        .nth(1)
        .unwrap()
        .trim_end_matches('.')
        .to_string();
    let pooled = |r: &serde_json::Value, what: &str| -> (f64, f64) {
        let p = r["precision"]
            .as_array()
            .unwrap()
            .iter()
            .find(|p| p["parameter"] == what)
            .unwrap();
        (
            p["pooled"].as_f64().unwrap(),
            p["lab_wide_floor"].as_f64().unwrap(),
        )
    };
    let (p0, floor0) = pooled(&before, "ln k, orders fixed");
    assert!(floor0 * floor0 > 0.5 * p0 * p0);
    let titrated = edit(
        &base,
        "dilute_from = \"HCl 1.00 M\"",
        &format!("dilute_from = \"HCl 1.00 M\"\n{suggested}"),
    );
    let after = json(&run("design", &titrated, &["-f", "json"]).stdout);
    assert!(
        after["advice"].as_array().unwrap().is_empty(),
        "{}",
        after["advice"]
    );
    let (p1, floor1) = pooled(&after, "ln k, orders fixed");
    assert!(
        p1 < 0.6 * p0 && floor1 < 0.5 * floor0,
        "{p0} {p1} {floor0} {floor1}"
    );
    // The orders do not feel a stock every run shares in proportion: one-at-a-time doubles
    // one species at a time, so a stock error shifts every ln t alike and only ln k moves.
    let (o0, _) = pooled(&before, "H+");
    let (o1, _) = pooled(&after, "H+");
    approx::assert_relative_eq!(o0, o1, max_relative = 0.02);
}

#[test]
fn fit_fragment_keeps_the_salt_reference_and_the_visible_criterion_of_the_model_it_fitted() {
    // The fitted k holds at the spec's k_at_ionic_strength and under its visible criterion; a
    // fragment without them would, pasted back, forecast with a different model. Pasted back,
    // the prior forecasts the same time as the fit's model for a trial at the plan temperature.
    let salted = edit(
        BROMATE,
        "preset = \"bromate-iodide\"",
        "preset = \"bromate-iodide\"\nk_at_ionic_strength = \"0.050 M\"\nvisible = { threshold = \"20 uM\", as = \"total\", factor = 1.3, source = \"invented for this test\" }",
    );
    let pilot = include_str!("../plans/maple-hollow-pilot.csv");
    let o = run_with(
        "fit",
        &salted,
        &[("pilot.csv", pilot)],
        &["pilot.csv", "-f", "json"],
    );
    let fit = json(&o.stdout);
    let fragment = fit["reaction_toml"].as_str().unwrap();
    assert!(
        fragment.contains("k_at_ionic_strength = \"0.05000 M\"")
            && fragment.contains("as = \"total\"")
            && fragment.contains("factor = 1.300"),
        "{fragment}"
    );
    let start = salted.find("[reaction]").unwrap();
    let end = salted[start..].find("\n[mixing]").unwrap() + start;
    let pasted = format!("{}{fragment}{}", &salted[..start], &salted[end..]);
    let f = run("forecast", &pasted, &["-f", "json"]);
    let forecast = json(&f.stdout);
    // The pilot's first trial: run 'reference' at 21.0 °C, the plan's temperature.
    assert_eq!(fit["residuals"][0]["run"], "reference");
    approx::assert_relative_eq!(
        forecast["runs"][0]["forecast"]["time_s"].as_f64().unwrap(),
        fit["residuals"][0]["fitted_s"].as_f64().unwrap(),
        max_relative = 5e-4
    );
}

#[test]
fn forecast_of_a_spec_with_stocks_sees_the_delivered_ionic_strength_as_plan_does() {
    // With the salt effect on, k depends on every ion a run holds. `forecast` once took the
    // targets alone (no K+, NO3-, Cl-, no KNO3 filler) and forecast 92 s where `plan` said
    // 124 s for the same run; now both forecast the delivered concentrations.
    let salted = edit(
        BROMATE,
        "preset = \"bromate-iodide\"",
        "preset = \"bromate-iodide\"\nk_at_ionic_strength = \"0.050 M\"",
    );
    let plan = json(&run("plan", &salted, &["-f", "json"]).stdout);
    let forecast = json(&run("forecast", &salted, &["-f", "json"]).stdout);
    for (p, f) in plan["runs"]
        .as_array()
        .unwrap()
        .iter()
        .zip(forecast["runs"].as_array().unwrap())
    {
        assert_eq!(p["name"], f["name"]);
        approx::assert_relative_eq!(
            p["forecast"]["time_s"].as_f64().unwrap(),
            f["forecast"]["time_s"].as_f64().unwrap(),
            max_relative = 1e-9
        );
    }
}

#[test]
fn a_mass_too_small_for_the_balance_is_flagged_and_the_concentrate_it_suggests_is_accepted() {
    // 0.1241 g of thiosulfate on the default two-decimal balance is 12 readabilities (one is 8 %
    // of the mass; 100 readabilities keep the rounding near 1 %, common practice). The advice:
    // weigh a ×100 concentrate (1.2409 g in 50 mL) and dilute 5 mL of it into the 500 mL flask
    // (M1V1 = M2V2). Following it exactly as printed, the stock becomes a dilution of the
    // concentrate, no mass is too small, and the runs deliver the same.
    let before = json(&run("stocks", BROMATE, &["-f", "json"]).stdout);
    assert_eq!(before["balance_g"], 0.01);
    assert_eq!(before["balance_stated"], false);
    let small = before["small_masses"].as_array().unwrap();
    assert_eq!(small.len(), 1, "{small:?}");
    assert_eq!(small[0]["stock"], "Na2S2O3 1.00 mM");
    approx::assert_relative_eq!(
        small[0]["readabilities"].as_f64().unwrap(),
        12.41,
        epsilon = 0.01
    );
    let c = &small[0]["concentrate"];
    assert_eq!(c["factor"], 100.0);
    assert_eq!(c["aliquot_mL"], 5.0);
    let name = c["name"].as_str().unwrap();
    // Its [[stock]] above the thiosulfate's, which takes dilute_from instead of its solute.
    let advice = before["advice"].as_array().unwrap();
    assert!(advice.iter().any(|a| a.as_str().unwrap().contains(&format!(
        "above that of 'Na2S2O3 1.00 mM' and give it dilute_from = \"{name}\""
    ))));
    let pasted = edit(
        &edit(
            BROMATE,
            "solute = \"Na2S2O3·5H2O\"",
            &format!("dilute_from = \"{name}\""),
        ),
        "[[stock]]\nname = \"Na2S2O3 1.00 mM\"",
        &format!(
            "{}\n[[stock]]\nname = \"Na2S2O3 1.00 mM\"",
            c["toml"].as_str().unwrap()
        ),
    );
    let after = json(&run("stocks", &pasted, &["-f", "json"]).stdout);
    assert_eq!(after["small_masses"], serde_json::json!([]));
    let thio = stock(&after, "Na2S2O3 1.00 mM");
    assert_eq!(thio["recipe"]["kind"], "dilute");
    assert_eq!(thio["recipe"]["mL_per_flask"], 5.0);
    let conc = stock(&after, name);
    approx::assert_relative_eq!(
        conc["recipe"]["grams_per_flask"].as_f64().unwrap(),
        c["grams"].as_f64().unwrap(),
        max_relative = 1e-9
    );
    assert!(conc["recipe"]["grams_per_flask"].as_f64().unwrap() >= 1.0);
    // The runs deliver the same volumes and concentrations (only the thiosulfate's
    // uncertainty changes with its recipe).
    let plan = |t: &str| -> Vec<(serde_json::Value, serde_json::Value)> {
        json(&run("plan", t, &["-f", "json"]).stdout)["runs"]
            .as_array()
            .unwrap()
            .iter()
            .map(|r| (r["volumes"].clone(), r["concentrations"].clone()))
            .collect()
    };
    assert!(plan(BROMATE) == plan(&pasted), "the runs changed");
    // On an analytical balance the same mass is fine.
    let fine = edit(BROMATE, "[plan]\n", "[plan]\nbalance = \"0.0001 g\"\n");
    let sheet = json(&run("stocks", &fine, &["-f", "json"]).stdout);
    assert_eq!(sheet["small_masses"], serde_json::json!([]));
    assert_eq!(sheet["balance_stated"], true);
}

#[test]
fn waste_totals_follow_from_the_plan_by_hand() {
    // Bromate demo: 5 runs × 2 replicates × 8 stations × 50 mL = 4000 mL of spent mixture.
    // KBrO3 0.0400 M: 1184 mL needed, made in 1000 + 250 mL (6.6934 g per litre, 8.3668 g in
    // all, H350 among its codes); 10 + 10 + 20 + 10 + 10 mL per station set × 2 × 8 = 960 mL
    // delivered, so 290 mL is left over. HCl 1.00 M is only diluted: what the dilutions'
    // aliquots do not take is left (their overage for rinsing ends as waste too). The waste
    // holds the pure solute: 1.25 L × 0.0400 mol/L × 166.9993 g/mol = 8.34997 g of KBrO3
    // (IUPAC 2021 standard atomic weights: K 39.0983, Br 79.904, O 15.999), the weighed
    // 8.3668 g less its 0.2 % impurity.
    let r = json(&run("stocks", BROMATE, &["-f", "json"]).stdout);
    let w = &r["waste"];
    assert_eq!(w["spent_mixture_mL"], 4000.0);
    let left = |name: &str| {
        w["leftover"]
            .as_array()
            .unwrap()
            .iter()
            .find(|x| x["stock"] == name)
            .unwrap()["mL"]
            .as_f64()
            .unwrap()
    };
    approx::assert_relative_eq!(left("KBrO3 0.0400 M"), 290.0, max_relative = 1e-9);
    let hcl = stock(&r, "HCl 1.00 M");
    approx::assert_relative_eq!(
        left("HCl 1.00 M"),
        hcl["flasks"]
            .as_array()
            .unwrap()
            .iter()
            .map(|f| f["mL"].as_f64().unwrap() * f["count"].as_f64().unwrap())
            .sum::<f64>()
            - hcl["drawn_by_dilutions_mL"].as_f64().unwrap() / 1.15,
        max_relative = 1e-9
    );
    let bromate = w["solutes"]
        .as_array()
        .unwrap()
        .iter()
        .find(|x| x["solute"] == "KBrO3")
        .unwrap();
    approx::assert_relative_eq!(
        bromate["grams"].as_f64().unwrap(),
        1.25 * 0.0400 * 166.9993,
        max_relative = 1e-6
    );
    assert!(bromate["hazard_codes"]
        .as_array()
        .unwrap()
        .iter()
        .any(|c| c == "H350"));
    let total: f64 = w["leftover"]
        .as_array()
        .unwrap()
        .iter()
        .map(|x| x["mL"].as_f64().unwrap())
        .sum();
    approx::assert_relative_eq!(
        w["leftover_total_mL"].as_f64().unwrap(),
        total,
        max_relative = 1e-9
    );
}

#[test]
fn dilutions_name_the_glassware_for_each_aliquot() {
    // HCl 0.100 M from 1.00 M (×1/10) in 1000 + 250 + 50 mL flasks: aliquots of 100, 25 and
    // 5 mL. The spec's 5 mL transfer pipet delivers 5 mL in one fill; 25 mL is one reading of
    // the 50 mL buret; 100 mL is two buret fillings. Each is named where it is delivered.
    let r = json(&run("stocks", BROMATE, &["-f", "json"]).stdout);
    let text = stock(&r, "HCl 0.100 M")["recipe"]["text"]
        .as_str()
        .unwrap()
        .to_string();
    assert!(
        text.contains("Deliver 100.00 mL of 'HCl 1.00 M' (with the 50 mL buret + 50 mL buret)"),
        "{text}"
    );
    assert!(
        text.contains("25.00 mL in it (with the 50 mL buret)"),
        "{text}"
    );
    assert!(
        text.contains("5.00 mL in it (with the 5 mL transfer pipet)"),
        "{text}"
    );
    let line = r["checklist"]
        .as_array()
        .unwrap()
        .iter()
        .find(|c| c["stock"] == "HCl 0.100 M")
        .unwrap();
    assert_eq!(
        line["with"],
        "aliquots 100 mL: with the 50 mL buret + 50 mL buret; 25 mL: with the 50 mL buret; 5 mL: with the 5 mL transfer pipet"
    );
}

#[test]
fn a_weighed_stock_carries_the_rounding_of_its_balance() {
    // Bromate demo: 0.1241 g of Na2S2O3·5H2O in its 500 mL flask. A weighing is two readings
    // (tare, gross), each rounded to one readability d, rectangular (JCGM 100:2008 (GUM)
    // 4.3.7): u = √2 · d/√12 / m. On the default 0.01 g balance 0.0040825/0.12409 = 3.29 %;
    // with the flask's 0.046 % (ASTM E288 class A, from memory) 3.29 %. On an analytical
    // balance (0.0001 g) the rounding is 0.033 %, under the 0.1 % floor: √(0.1² + 0.046²) =
    // 0.11 %. KNO3 (5.0551 g, 0.081 %) is at the floor either way.
    let u = |text: &str, name: &str| {
        stock(&json(&run("stocks", text, &["-f", "json"]).stdout), name)["uncertainty_pct"]
            .as_f64()
            .unwrap()
    };
    let rounding = 2f64.sqrt() * 0.01 / 12f64.sqrt() / 0.1240857693;
    approx::assert_relative_eq!(
        u(BROMATE, "Na2S2O3 1.00 mM"),
        100.0 * (rounding.powi(2) + 0.00046f64.powi(2)).sqrt(),
        max_relative = 1e-6
    );
    let fine = edit(BROMATE, "[plan]\n", "[plan]\nbalance = \"0.0001 g\"\n");
    approx::assert_relative_eq!(
        u(&fine, "Na2S2O3 1.00 mM"),
        100.0 * (0.001f64.powi(2) + 0.00046f64.powi(2)).sqrt(),
        max_relative = 1e-6
    );
    approx::assert_relative_eq!(
        u(BROMATE, "KNO3 0.500 M"),
        100.0 * (0.001f64.powi(2) + 0.00046f64.powi(2)).sqrt(),
        max_relative = 1e-6
    );
}

#[test]
fn design_names_a_thiosulfate_weighed_on_a_top_loader_and_titrating_it_is_accepted() {
    // 0.12 g on a 0.01 g balance is 3.3 % (see above), and every station shares the flask:
    // design names the thiosulfate. Its suggested uncertainty pasted into the stock is
    // accepted, and the thiosulfate is no longer named.
    let before = json(&run("design", BROMATE, &["-f", "json"]).stdout);
    let advice: Vec<String> = before["advice"]
        .as_array()
        .unwrap()
        .iter()
        .map(|a| a.as_str().unwrap().to_string())
        .collect();
    let named = advice
        .iter()
        .find(|a| a.contains("'Na2S2O3 1.00 mM'"))
        .unwrap_or_else(|| panic!("{advice:?}"));
    let suggested = named.split("e.g. ").nth(1).unwrap().trim_end_matches('.');
    let titrated = edit(
        BROMATE,
        "devices = [\"5 mL transfer pipet\"]",
        &format!("devices = [\"5 mL transfer pipet\"]\n{suggested}"),
    );
    let after = run("design", &titrated, &["-f", "json"]);
    assert_eq!(after.code, 0, "{}", after.stderr);
    let after = json(&after.stdout);
    assert!(
        !after["advice"]
            .as_array()
            .unwrap()
            .iter()
            .any(|a| a.as_str().unwrap().contains("'Na2S2O3 1.00 mM'")),
        "{}",
        after["advice"]
    );
}

/// Apply `clockprep tune -f toml`'s [timing] line to a spec as the page (and a user) would.
fn tuned(spec: &str) -> Option<String> {
    let o = run("tune", spec, &["-f", "toml"]);
    let line = o
        .stdout
        .lines()
        .find(|l| l.starts_with("concentration = "))?;
    let old = spec
        .lines()
        .skip_while(|l| l.trim() != "[timing]")
        .find(|l| l.starts_with("concentration = "))?;
    Some(spec.replacen(old, line, 1))
}

#[test]
fn the_tuned_timing_concentration_pasted_back_solves() {
    // Was: the bromate demo's tune said 0.178 mM, i.e. 8.9 mL of its 1.00 mM thiosulfate,
    // which its only allowed device (a 5 mL transfer pipet) cannot deliver; pasted back,
    // `plan` refused it. Now only a timing volume the bench can deliver, with every run still
    // fitting in its volume, is suggested.
    let buret = BROMATE.replace("devices = [\"5 mL transfer pipet\"]\n", "");
    for (name, spec) in [
        ("bromate", BROMATE.to_string()),
        ("persulfate", PERSULFATE.to_string()),
        ("week", WEEK.to_string()),
        ("bromate, thiosulfate by buret", buret),
    ] {
        let Some(after) = tuned(&spec) else { continue };
        let o = run("plan", &after, &[]);
        assert_ne!(o.code, 2, "{name}: {}", o.stderr);
    }
}
