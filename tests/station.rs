//! The station's glassware: one device per stock for the whole lab, the most precise one that
//! serves every run, the station's counts (`per_station`, `shared`), and the tray and stock
//! totals with the devices' dead volume. Through the real binary, on the demo plans.

mod common;
use common::*;

/// The bromate demo with KI, KBrO3, HCl 0.100 M and water all on the 50 mL buret.
fn all_on_the_buret(per_station: &str) -> String {
    let s = edit(
        BROMATE,
        "contains = { \"I-\" = \"0.0100 M\", \"K+\" = \"0.0100 M\" }",
        "contains = { \"I-\" = \"0.0100 M\", \"K+\" = \"0.0100 M\" }\ndevices = [\"50 mL buret\"]",
    );
    let s = edit(
        &s,
        "contains = { \"BrO3-\" = \"0.0400 M\", \"K+\" = \"0.0400 M\" }",
        "contains = { \"BrO3-\" = \"0.0400 M\", \"K+\" = \"0.0400 M\" }\ndevices = [\"50 mL buret\"]",
    );
    let s = edit(
        &s,
        "dilute_from = \"HCl 1.00 M\"",
        "dilute_from = \"HCl 1.00 M\"\ndevices = [\"50 mL buret\"]",
    );
    let s = edit(
        &s,
        "devices = [\"50 mL buret\", \"50 mL graduated cylinder\"]",
        "devices = [\"50 mL buret\"]",
    );
    edit(
        &s,
        "graduation = \"0.10 mL\"",
        &format!("graduation = \"0.10 mL\"\n{per_station}"),
    )
}

fn glassware<'a>(report: &'a serde_json::Value, device: &str) -> &'a serde_json::Value {
    report["glassware"]
        .as_array()
        .unwrap()
        .iter()
        .find(|g| g["device"] == device)
        .unwrap_or_else(|| panic!("no {device} in {}", report["glassware"]))
}

fn choice<'a>(report: &'a serde_json::Value, stock: &str) -> &'a serde_json::Value {
    report["device_choices"]
        .as_array()
        .unwrap()
        .iter()
        .find(|c| c["stock"] == stock)
        .unwrap_or_else(|| panic!("no choice for {stock}"))
}

#[test]
fn a_station_with_too_few_burets_is_refused_naming_the_short_device_and_how_many() {
    let o = run("plan", &all_on_the_buret("per_station = 2"), &[]);
    assert_refused(
        &o,
        "'50 mL buret': 4 needed per station ('KI 0.0100 M', 'KBrO3 0.0400 M', 'HCl 0.100 M', water), 2 listed, 2 short",
    );
    assert!(says(&o.stderr, "raise per_station"), "{}", o.stderr);
    // Following the advice: four burets per station solve, one per stock and one for water.
    let o = run(
        "plan",
        &all_on_the_buret("per_station = 4"),
        &["-f", "json"],
    );
    assert_eq!(o.code, 0, "{}", o.stderr);
    let r = json(&o.stdout);
    let b = glassware(&r, "50 mL buret");
    assert_eq!(b["per_station"], 4);
    assert_eq!(
        b["holds"],
        serde_json::json!(["KI 0.0100 M", "KBrO3 0.0400 M", "HCl 0.100 M", "water"])
    );
}

#[test]
fn with_too_few_burets_a_stock_moves_to_the_next_most_precise_device() {
    let text = edit(
        BROMATE,
        "graduation = \"0.10 mL\"",
        "graduation = \"0.10 mL\"\nper_station = 3",
    );
    let o = run("plan", &text, &["-f", "json"]);
    assert_eq!(o.code, 0, "{}", o.stderr);
    let r = json(&o.stdout);
    assert_eq!(glassware(&r, "50 mL buret")["per_station"], 3);
    let moved = choice(&r, "HCl 0.100 M");
    assert_eq!(moved["device"], "50 mL graduated cylinder");
    assert!(
        moved["why"].as_str().unwrap().contains("per_station"),
        "{moved}"
    );
    // And every run delivers it with that device.
    for run in r["runs"].as_array().unwrap() {
        for v in run["volumes"].as_array().unwrap() {
            if v["stock"] == "HCl 0.100 M" {
                assert_eq!(v["device"], "50 mL graduated cylinder", "{run}");
            }
        }
    }
}

#[test]
fn every_stock_keeps_one_device_in_every_run_of_the_demo_plans() {
    for plan in [BROMATE, PERSULFATE] {
        let o = run("plan", plan, &["-f", "json"]);
        assert_eq!(o.code, 0, "{}", o.stderr);
        let r = json(&o.stdout);
        for c in r["device_choices"].as_array().unwrap() {
            assert_eq!(c["second_device_runs"], serde_json::json!([]), "{c}");
            let stock = c["stock"].as_str().unwrap();
            let device = c["device"].as_str().unwrap();
            for run in r["runs"].as_array().unwrap() {
                for v in run["volumes"].as_array().unwrap() {
                    if v["stock"] == stock && v["mL"].as_f64().unwrap() > 0.0 {
                        assert_eq!(v["device"], device, "{stock} in {}", run["name"]);
                    }
                }
            }
        }
    }
}

#[test]
fn the_most_precise_device_that_serves_every_run_is_chosen() {
    // 1.60 mL of thiosulfate with a 25 mL or a 50 mL class A buret. ASTM E287 class A
    // tolerances (from memory, as in the tolerance table): ±0.03 mL and ±0.05 mL, read as
    // rectangular: u = 0.03/√3 = 0.0173 mL (1.08 % of 1.60 mL) against 0.0289 mL (1.80 %).
    let text = edit(
        BROMATE,
        "devices = [\"5 mL transfer pipet\"]",
        "devices = [\"50 mL buret\", \"25 mL buret\"]",
    );
    let text = edit(
        &text,
        "concentration = \"0.100 mM\"",
        "concentration = \"0.0320 mM\"",
    );
    let text = edit(
        &text,
        "[[device]]\nname = \"10 mL graduated pipet\"",
        "[[device]]\nname = \"25 mL buret\"\nkind = \"buret\"\ncapacity = \"25 mL\"\ngraduation = \"0.05 mL\"\nclass = \"A\"\n\n[[device]]\nname = \"10 mL graduated pipet\"",
    );
    let o = run("plan", &text, &["-f", "json"]);
    assert!(o.code <= 1, "{}", o.stderr);
    let r = json(&o.stdout);
    let thio = choice(&r, "Na2S2O3 1.00 mM");
    assert_eq!(thio["device"], "25 mL buret");
    let u = thio["worst_u_pct"].as_f64().unwrap();
    approx::assert_relative_eq!(u, 0.03 / 3f64.sqrt() / 1.60 * 100.0, max_relative = 1e-6);
    assert_eq!(r["timing"]["device"], "25 mL buret");
    // The starch in the persulfate demo: 200 µL with a P200 or a P1000 piston pipette.
    // ISO 8655-2 (from memory, as in the table): P200 at 200 µL ±0.8 % systematic, 0.3 %
    // random: u = √(0.8²/3 + 0.3²) = 0.548 %; a P1000 at 200 µL would be ±8 µL, 3 µL: 2.75 %.
    let o = run("plan", PERSULFATE, &["-f", "json"]);
    let r = json(&o.stdout);
    let starch = choice(&r, "starch 0.2 %");
    assert_eq!(starch["device"], "P200 pipette");
    approx::assert_relative_eq!(
        starch["worst_u_pct"].as_f64().unwrap(),
        (0.8f64.powi(2) / 3.0 + 0.3f64.powi(2)).sqrt(),
        max_relative = 1e-6
    );
}

#[test]
fn a_pipet_the_spec_lets_stocks_share_serves_both_and_the_sheet_says_to_rinse() {
    let text = edit(
        BROMATE,
        "devices = [\"1 mL transfer pipet\"]",
        "devices = [\"10 mL graduated pipet\"]",
    );
    let shared = edit(
        &text,
        "graduation = \"0.1 mL\"",
        "graduation = \"0.1 mL\"\nper_station = 1\nshared = true",
    );
    let o = run("plan", &shared, &["-f", "json"]);
    assert_eq!(o.code, 0, "{}", o.stderr);
    let r = json(&o.stdout);
    let p = glassware(&r, "10 mL graduated pipet");
    assert_eq!(p["per_station"], 1);
    assert_eq!(
        p["holds"],
        serde_json::json!(["KNO3 0.500 M", "starch 1 %"])
    );
    assert_eq!(p["rinse_between"], true);
    let o = run("plan", &shared, &[]);
    assert!(
        says(
            &o.stdout,
            "KNO3 0.500 M, starch 1 % (one pipet: rinse it with the next stock)"
        ),
        "{}",
        o.stdout
    );
    // Without `shared`, one pipet per station is one too few.
    let alone = edit(
        &text,
        "graduation = \"0.1 mL\"",
        "graduation = \"0.1 mL\"\nper_station = 1",
    );
    let o = run("plan", &alone, &[]);
    assert_refused(
        &o,
        "'10 mL graduated pipet': 2 needed per station ('KNO3 0.500 M', 'starch 1 %'), 1 listed, 1 short",
    );
}

#[test]
fn a_buret_shared_between_stocks_is_refused() {
    refuses(
        "plan",
        BROMATE,
        "graduation = \"0.10 mL\"",
        "graduation = \"0.10 mL\"\nshared = true",
        "device '50 mL buret': a buret cannot be shared between stocks",
    );
}

#[test]
fn the_tray_fill_is_use_plus_overage_plus_dead_volume_and_the_totals_include_it() {
    // KI: 60.0 mL per set × 2 replicates = 120.0 mL; overage 15 % = 18.0 mL; a 50 mL buret's
    // default dead volume is 20 % of its capacity, 10.0 mL (common practice): fill 148.0 mL.
    // The whole lab: 960 mL × 1.15 + 8 stations × 10.0 mL = 1184 mL.
    let o = run("plan", BROMATE, &["-f", "json"]);
    let r = json(&o.stdout);
    let ki = &r["tray"][0];
    assert_eq!(ki["stock"], "KI 0.0100 M");
    assert_eq!(ki["use_mL"], 120.0);
    assert_eq!(ki["overage_mL"], 18.0);
    assert_eq!(ki["dead_volume_mL"], 10.0);
    assert_eq!(ki["fill_mL"], 148.0);
    assert_eq!(r["stock_totals"][0]["mL"], 1184.0);
    assert_eq!(r["stock_totals"][0]["dead_volume_mL"], 80.0);
    // `dead_volume` overrides the default.
    let text = edit(
        BROMATE,
        "graduation = \"0.10 mL\"",
        "graduation = \"0.10 mL\"\ndead_volume = \"2 mL\"",
    );
    let r = json(&run("plan", &text, &["-f", "json"]).stdout);
    assert_eq!(r["tray"][0]["fill_mL"], 140.0);
    assert_eq!(r["stock_totals"][0]["mL"], 1120.0);
}

#[test]
fn a_run_no_single_device_can_serve_is_flagged_naming_the_stock_and_device() {
    // A 0.200 M sulfate stock needs 0.29 mL in one run (below the P5000's 0.50 mL) and up to
    // 1.6 mL in others (above the P1000's 1 mL): no one pipette serves every run.
    let text = edit(
        PERSULFATE,
        "contains = { \"NH4+\" = \"0.200 M\", \"SO4^2-\" = \"0.100 M\" }",
        "contains = { \"NH4+\" = \"0.400 M\", \"SO4^2-\" = \"0.200 M\" }",
    )
    .replace("(NH4)2SO4 0.100 M", "(NH4)2SO4 0.200 M");
    let o = run("plan", &text, &["-f", "json"]);
    assert_eq!(o.code, 1, "{}", o.stderr);
    let r = json(&o.stdout);
    let salt = choice(&r, "(NH4)2SO4 0.200 M");
    assert_eq!(salt["device"], "P5000 pipette");
    assert_eq!(
        salt["second_device_runs"],
        serde_json::json!(["persulfate x2"])
    );
    let run2 = r["runs"]
        .as_array()
        .unwrap()
        .iter()
        .find(|x| x["name"] == "persulfate x2")
        .unwrap();
    let flag = run2["flags"]
        .as_array()
        .unwrap()
        .iter()
        .find(|f| f["code"] == "second_device")
        .unwrap_or_else(|| panic!("{}", run2["flags"]));
    assert!(
        flag["message"]
            .as_str()
            .unwrap()
            .contains("'(NH4)2SO4 0.200 M' with 'P1000 pipette'"),
        "{flag}"
    );
    assert!(glassware(&r, "P1000 pipette")["holds"]
        .as_array()
        .unwrap()
        .contains(&serde_json::json!("(NH4)2SO4 0.200 M")));
}
