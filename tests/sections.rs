//! Lab sections through the real binary: the same runs taught to several sections on several
//! days. Checked by hand arithmetic on the two-section demo, by the one-section case reducing to
//! the plain spec, by mass balance (everything made up ends as waste), and by Arrhenius.

mod common;

use approx::assert_relative_eq;
use common::{edit, json, refuses, run, BROMATE, WEEK};

fn stocks() -> serde_json::Value {
    let o = run("stocks", WEEK, &["-f", "json"]);
    assert_eq!(o.code, 0, "{}", o.stderr);
    json(&o.stdout)
}

fn plan() -> serde_json::Value {
    let o = run("plan", WEEK, &["-f", "json"]);
    assert!(o.code == 0 || o.code == 1, "{}", o.stderr);
    json(&o.stdout)
}

fn batches<'a>(sheet: &'a serde_json::Value, name: &str) -> Vec<&'a serde_json::Value> {
    sheet["stocks"]
        .as_array()
        .unwrap()
        .iter()
        .filter(|s| s["name"] == name)
        .collect()
}

fn f(v: &serde_json::Value) -> f64 {
    v.as_f64().unwrap_or_else(|| panic!("not a number: {v}"))
}

#[test]
fn a_fresh_stock_is_made_each_day_and_a_stable_one_once() {
    // Reagent data: thiosulfate and starch "fresh on the day" (keeps 0 days), bromate stable,
    // iodide a week (Monday to Wednesday is within it).
    let s = stocks();
    let thio = batches(&s, "Na2S2O3 5.00 mM");
    let made: Vec<&str> = thio
        .iter()
        .map(|b| b["made_on"].as_str().unwrap())
        .collect();
    assert_eq!(made, ["2026-12-07", "2026-12-09"]);
    assert_eq!(thio[0]["for_sections"], serde_json::json!(["01"]));
    assert_eq!(thio[1]["for_sections"], serde_json::json!(["02"]));
    for name in ["KBrO3 0.0400 M", "KI 0.0200 M", "HCl 0.100 M"] {
        let b = batches(&s, name);
        assert_eq!(b.len(), 1, "{name} is made once");
        assert_eq!(b[0]["made_on"], "2026-12-07");
        assert_eq!(b[0]["for_sections"], serde_json::json!(["01", "02"]));
    }
    // The schedule: Wednesday makes thiosulfate (and its concentrate) and starch, and uses
    // Monday's bromate.
    let wed = &s["schedule"][1];
    assert_eq!(wed["date"], "2026-12-09");
    assert_eq!(wed["weekday"], "Wed");
    let names = |key: &str| -> Vec<String> {
        wed[key]
            .as_array()
            .unwrap()
            .iter()
            .map(|m| m["stock"].as_str().unwrap().to_string())
            .collect()
    };
    assert_eq!(
        names("make"),
        ["Na2S2O3 0.100 M", "Na2S2O3 5.00 mM", "starch 1 %"]
    );
    assert!(names("from_earlier").contains(&"KBrO3 0.0400 M".to_string()));
    // Use-by from the planned day: bromate keeps 180 days (2026-12-07 + 180 d = 2027-06-05),
    // thiosulfate the day it is made.
    let check = s["checklist"].as_array().unwrap();
    let item = |name: &str, day: &str| {
        check
            .iter()
            .find(|c| c["stock"] == name && c["made_on"] == day)
            .unwrap_or_else(|| panic!("{name} on {day}"))
    };
    assert_eq!(
        item("KBrO3 0.0400 M", "2026-12-07")["use_by_date"],
        "2027-06-05"
    );
    assert_eq!(
        item("Na2S2O3 5.00 mM", "2026-12-09")["use_by_date"],
        "2026-12-09"
    );
}

#[test]
fn each_batch_holds_what_its_sections_use_by_hand() {
    // 4 runs; section 01: 6 stations × 2 replicates, section 02: 5 × 2, so 22 sets of runs in
    // the week, 12 on Monday and 10 on Wednesday. A stable stock's one batch serves all 22, a
    // fresh one's each day's.
    let p = plan();
    let totals = p["stock_totals"].as_array().unwrap();
    for t in totals {
        let one = f(&t["one_set_mL"]);
        let sets = match (t["stock"].as_str().unwrap(), t["made_on"].as_str().unwrap()) {
            ("Na2S2O3 5.00 mM" | "starch 1 %", "2026-12-07") => 12.0,
            ("Na2S2O3 5.00 mM" | "starch 1 %", "2026-12-09") => 10.0,
            (_, "2026-12-07") => 22.0,
            other => panic!("unexpected batch {other:?}"),
        };
        assert_relative_eq!(f(&t["used_mL"]), one * sets, max_relative = 1e-12);
        // What to prepare: used plus 10 % overage plus the stations' dead volume.
        assert_relative_eq!(
            f(&t["mL"]),
            one * sets * 1.10 + f(&t["dead_volume_mL"]),
            max_relative = 1e-9
        );
    }
    // KBrO3 0.0400 M: 8.00 mM in 40 mL is 8 mL, 16.0 mM 16 mL: 8 + 8 + 16 + 8 = 40 mL a set.
    let kbro3 = totals
        .iter()
        .find(|t| t["stock"] == "KBrO3 0.0400 M")
        .unwrap();
    assert_relative_eq!(f(&kbro3["one_set_mL"]), 40.0, max_relative = 1e-9);
    assert_relative_eq!(f(&kbro3["used_mL"]), 880.0, max_relative = 1e-9);
}

#[test]
fn the_week_fetch_list_is_the_sum_of_its_days() {
    let s = stocks();
    for item in s["fetch"].as_array().unwrap() {
        let key = if item["grams"].is_null() {
            "mL"
        } else {
            "grams"
        };
        if item[key].is_null() {
            continue; // made as usual: no amount
        }
        let days: f64 = s["schedule"]
            .as_array()
            .unwrap()
            .iter()
            .flat_map(|d| d["fetch"].as_array().unwrap())
            .filter(|x| x["item"] == item["item"])
            .map(|x| f(&x[key]))
            .sum();
        assert_relative_eq!(f(&item[key]), days, max_relative = 1e-9);
    }
    // Thiosulfate pentahydrate: one 50 mL flask of 0.100 M each day, 0.1 × 0.05 × 248.17 g
    // (IUPAC 2021 standard atomic weights) = 1.2409 g a day, 2.4817 g in the week.
    let thio = s["fetch"]
        .as_array()
        .unwrap()
        .iter()
        .find(|x| x["item"] == "Na2S2O3·5H2O")
        .unwrap();
    assert_relative_eq!(
        f(&thio["grams"]),
        2.0 * 0.1 * 0.05 * 248.1715,
        max_relative = 1e-5
    );
}

#[test]
fn the_week_waste_is_the_sum_of_its_sections_and_of_what_was_made() {
    let s = stocks();
    let w = &s["waste"];
    let by = w["by_section"].as_array().unwrap();
    assert_eq!(by.len(), 2);
    // Spent mixture: 22 sets × 4 runs × 40 mL = 3520 mL; 01 has 12 sets (1920 mL), 02 10.
    assert_relative_eq!(f(&w["spent_mixture_mL"]), 3520.0, max_relative = 1e-12);
    assert_relative_eq!(f(&by[0]["spent_mixture_mL"]), 1920.0, max_relative = 1e-12);
    assert_relative_eq!(f(&by[1]["spent_mixture_mL"]), 1600.0, max_relative = 1e-12);
    let sum = |key: &str| by.iter().map(|x| f(&x[key])).sum::<f64>();
    assert_relative_eq!(
        f(&w["leftover_total_mL"]),
        sum("leftover_total_mL"),
        max_relative = 1e-9
    );
    // Mass balance: every gram of KBrO3 made up ends as waste, 1.25 L × 0.0400 mol/L ×
    // 166.9993 g/mol (IUPAC 2021: K 39.0983, Br 79.904, O 15.999) = 8.34997 g.
    let grams = |x: &serde_json::Value| -> f64 {
        x["solutes"]
            .as_array()
            .unwrap()
            .iter()
            .filter(|y| y["solute"] == "KBrO3")
            .map(|y| f(&y["grams"]))
            .sum()
    };
    assert_relative_eq!(grams(w), 1.25 * 0.0400 * 166.9993, max_relative = 1e-6);
    assert_relative_eq!(
        grams(w),
        by.iter().map(grams).sum::<f64>(),
        max_relative = 1e-9
    );
    // Monday's section spends 12 sets × 40 mL of 0.0400 M bromate; the flask's rest is
    // discarded after Wednesday, the last section it serves.
    assert_relative_eq!(
        grams(&by[0]),
        12.0 * 0.040 * 0.0400 * 166.9993,
        max_relative = 1e-6
    );
}

#[test]
fn a_single_section_table_plans_as_the_plain_spec_does() {
    // The bromate demo with its 8 stations × 2 replicates given as one [[section]] instead.
    let one = edit(BROMATE, "stations = 8                  # bench groups working from this sheet\nreplicates = 2                # trials of each run per group\n", "");
    let one = edit(
        &one,
        "[timing]",
        "[[section]]\nname = \"Tue\"\ndate = \"2026-12-08\"\nstations = 8\nreplicates = 2\n\n[timing]",
    );
    let plain = json(&run("stocks", BROMATE, &["-f", "json"]).stdout);
    let sect = json(&run("stocks", &one, &["-f", "json"]).stdout);
    for key in ["need_mL", "flasks", "recipe"] {
        let a: Vec<_> = plain["stocks"]
            .as_array()
            .unwrap()
            .iter()
            .map(|s| &s[key])
            .collect();
        let b: Vec<_> = sect["stocks"]
            .as_array()
            .unwrap()
            .iter()
            .map(|s| &s[key])
            .collect();
        assert_eq!(a, b, "{key}");
    }
    assert_eq!(plain["fetch"], sect["fetch"]);
    assert_eq!(plain["waste"]["solutes"], sect["waste"]["solutes"]);
    assert_eq!(sect["schedule"][0]["sections"], serde_json::json!(["Tue"]));
}

#[test]
fn a_warmer_section_forecasts_faster_by_arrhenius() {
    // Section 02 at 22 °C, 01 at 20 °C; the preset's Ea is 54 kJ/mol, so the rate constant
    // rises by exp(Ea/R (1/293.15 − 1/295.15)) = 1.162 (R = 8.314462618 J/(mol K), CODATA
    // 2018). The time to colour (clock plus the visible wait, which barely depends on T) falls
    // by nearly that factor.
    let p = plan();
    let secs = p["sections"].as_array().unwrap();
    assert_eq!(secs[0]["temperature_C"], 20.0);
    assert_eq!(secs[1]["temperature_C"], 22.0);
    let ratio = (54000.0 / 8.314462618 * (1.0 / 293.15 - 1.0 / 295.15_f64)).exp();
    for (a, b) in secs[0]["runs"]
        .as_array()
        .unwrap()
        .iter()
        .zip(secs[1]["runs"].as_array().unwrap())
    {
        let r = f(&a["time_s"]) / f(&b["time_s"]);
        assert_relative_eq!(r, ratio, max_relative = 0.02);
    }
}

#[test]
fn section_mistakes_are_refused_where_they_are() {
    refuses(
        "plan",
        WEEK,
        "date = \"2026-12-09\"",
        "date = 2026-12-09T13:30:00",
        "has a time of day",
    );
    refuses(
        "stocks",
        WEEK,
        "date = \"2026-12-07\"",
        "date = \"07/12/2026\"",
        "is not a date",
    );
    refuses(
        "stocks",
        WEEK,
        "name = \"02\"",
        "name = \"01\"",
        "two sections are named '01'",
    );
    refuses(
        "plan",
        WEEK,
        "balance = \"0.01 g\"",
        "balance = \"0.01 g\"\nstations = 4",
        "[plan] stations and [[section]] both give the number of stations",
    );
    refuses("plan", WEEK, "stations = 5\n", "", "stations");
}

#[test]
fn a_stock_past_its_keeping_days_gets_a_new_batch_and_one_day_shares_one() {
    // Section 02 moved to the Tuesday after next (8 days on): iodide keeps 7 days, so it is
    // made again; bromate (180 days) still once.
    let later = edit(WEEK, "date = \"2026-12-09\"", "date = \"2026-12-15\"");
    let s = json(&run("stocks", &later, &["-f", "json"]).stdout);
    let days = |name: &str| -> Vec<String> {
        batches(&s, name)
            .iter()
            .map(|b| b["made_on"].as_str().unwrap().to_string())
            .collect()
    };
    assert_eq!(days("KI 0.0200 M"), ["2026-12-07", "2026-12-15"]);
    assert_eq!(days("KBrO3 0.0400 M"), ["2026-12-07"]);
    // Both sections on the Monday: one day, so thiosulfate is made once, for both.
    let same = edit(WEEK, "date = \"2026-12-09\"", "date = \"2026-12-07\"");
    let s = json(&run("stocks", &same, &["-f", "json"]).stdout);
    let thio = batches(&s, "Na2S2O3 5.00 mM");
    assert_eq!(thio.len(), 1);
    assert_eq!(thio[0]["for_sections"], serde_json::json!(["01", "02"]));
    assert_eq!(s["schedule"].as_array().unwrap().len(), 1);
    // Its leftover is discarded after the last section of the day.
    let by = s["waste"]["by_section"].as_array().unwrap();
    assert!(!by[1]["leftover"]
        .as_array()
        .unwrap()
        .iter()
        .all(|l| l["stock"] != "Na2S2O3 5.00 mM"));
    assert!(by[0]["leftover"]
        .as_array()
        .unwrap()
        .iter()
        .all(|l| l["stock"] != "Na2S2O3 5.00 mM"));
}

#[test]
fn every_format_carries_the_batches_and_the_sections() {
    // The stocks sheet: each batch (stock, planned day) in text, Markdown, HTML and CSV as in
    // JSON, and each section's spent mixture in the waste.
    let s = stocks();
    let batches: Vec<(String, String)> = s["stocks"]
        .as_array()
        .unwrap()
        .iter()
        .map(|b| {
            (
                b["name"].as_str().unwrap().to_string(),
                b["made_on"].as_str().unwrap().to_string(),
            )
        })
        .collect();
    let csv = run("stocks", WEEK, &["-f", "csv"]).stdout;
    let rows: Vec<(String, String)> = csv
        .lines()
        .skip(1)
        .map(|l| l.split(',').collect::<Vec<_>>())
        .filter(|c| ["weigh", "measure", "dilute", "as usual"].contains(&c[9]))
        .map(|c| (c[0].to_string(), c[1].to_string()))
        .collect();
    assert_eq!(rows, batches, "CSV batches");
    for format in ["text", "md", "html"] {
        // HTML typesets formulas (Na<sub>2</sub>…): read it as text.
        let out = ["<sub>", "</sub>", "<sup>", "</sup>"]
            .iter()
            .fold(run("stocks", WEEK, &["-f", format]).stdout, |t, tag| {
                t.replace(tag, "")
            });
        for (name, day) in &batches {
            assert!(
                out.contains(&format!("{name} (made {day}")),
                "{format}: no section for {name} made {day}"
            );
        }
        for spent in ["1920", "1600", "3520"] {
            assert!(
                out.contains(spent),
                "{format}: no {spent} mL of spent mixture"
            );
        }
    }
    // The mixing sheet: each section's predicted times in every format.
    let p = plan();
    for format in ["text", "md", "html", "csv"] {
        let out = run("plan", WEEK, &["-f", format]).stdout;
        for sec in p["sections"].as_array().unwrap() {
            for r in sec["runs"].as_array().unwrap() {
                let t = f(&r["time_s"]);
                let shown = if format == "csv" {
                    t.to_string()
                } else {
                    format!("{t:.1} s")
                };
                assert!(out.contains(&shown), "{format}: no {shown}");
            }
        }
    }
}

#[test]
fn the_starters_section_example_solves_when_uncommented() {
    // `clockprep init` shows a commented [[section]]; following its words (remove `stations`
    // from [plan], uncomment the section) gives a spec that plans for that section.
    let out = assert_cmd::Command::cargo_bin("clockprep")
        .unwrap()
        .arg("init")
        .output()
        .unwrap();
    let starter = String::from_utf8(out.stdout).unwrap();
    let edited: String = starter
        .lines()
        .filter(|l| !l.starts_with("stations = "))
        .map(|l| match l.strip_prefix("# ") {
            Some(rest)
                if rest.starts_with("[[section]]")
                    || rest.starts_with("name = ")
                    || rest.starts_with("date = ")
                    || rest.starts_with("stations = ") =>
            {
                rest.to_string()
            }
            _ => l.to_string(),
        })
        .collect::<Vec<_>>()
        .join("\n");
    assert!(edited.contains("\n[[section]]\n"), "{edited}");
    let o = run("stocks", &edited, &["-f", "json"]);
    assert_eq!(o.code, 0, "{}", o.stderr);
    let s = json(&o.stdout);
    assert_eq!(s["sections"][0]["name"], "Mon am");
    assert_eq!(s["schedule"][0]["date"], "2027-01-11");
}

#[test]
fn a_section_with_fewer_replicates_fills_its_tray_for_its_own() {
    // Section 02 doing one trial of each run: its set-up cards fill the KI bottle for one set
    // (25.0 mL, plus 10 % overage, plus the buret's rinse and fill), section 01's for two.
    let one = edit(
        WEEK,
        "stations = 5\nreplicates = 2",
        "stations = 5\nreplicates = 1",
    );
    let p = json(&run("plan", &one, &["-f", "json"]).stdout);
    let ki = p["tray"]
        .as_array()
        .unwrap()
        .iter()
        .find(|t| t["stock"] == "KI 0.0200 M")
        .unwrap();
    let dead = f(&ki["dead_volume_mL"]);
    assert_relative_eq!(f(&ki["use_mL"]), 50.0, max_relative = 1e-12);
    let cards = run("cards", &one, &["--per", "station"]).stdout;
    let fill = |text: &str| -> f64 {
        let at = text.find("KI 0.0200 M</td><td class=\"n\">").unwrap() + 30;
        text[at..].split('<').next().unwrap().parse().unwrap()
    };
    let mon = cards.find("Section 01").unwrap();
    let wed = cards.find("Section 02").unwrap();
    assert_relative_eq!(fill(&cards[mon..]), 50.0 * 1.10 + dead, epsilon = 0.05);
    assert_relative_eq!(fill(&cards[wed..]), 25.0 * 1.10 + dead, epsilon = 0.05);
    assert!(cards[wed..].contains("every run × 1 trial(s)"));
}

#[test]
fn the_forecast_sheet_gives_the_sections_the_mixing_sheet_gives() {
    // Both forecast from the delivered concentrations: the same times, section by section.
    let o = run("forecast", WEEK, &["-f", "json"]);
    assert!(o.code == 0 || o.code == 1, "{}", o.stderr);
    assert_eq!(json(&o.stdout)["sections"], plan()["sections"]);
}

#[test]
fn a_stock_made_in_batches_is_one_bottle_on_the_tray() {
    // Thiosulfate is made each day: two batches, but one bottle on each station's tray.
    let p = plan();
    let trays: Vec<&str> = p["tray"]
        .as_array()
        .unwrap()
        .iter()
        .map(|t| t["stock"].as_str().unwrap())
        .collect();
    let mut unique = trays.clone();
    unique.sort();
    unique.dedup();
    assert_eq!(
        trays.len(),
        unique.len(),
        "one tray line per bottle: {trays:?}"
    );
}
