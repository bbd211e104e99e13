//! The README against the program: every TOML block in it reads as TOML (and a block with a
//! `[plan]` loads as a spec), and the JSON section names every field the JSON outputs carry
//! and no field that none of them carries.

mod common;

use common::{run_with, BROMATE, PEROXIDE, WEEK};
use std::collections::BTreeSet;

const README: &str = include_str!("../README.md");

fn blocks(lang: &str) -> Vec<String> {
    let fence = format!("```{lang}\n");
    README
        .split(&fence)
        .skip(1)
        .map(|rest| rest.split("```").next().unwrap_or("").to_string())
        .collect()
}

#[test]
fn every_toml_block_of_the_readme_reads() {
    let found = blocks("toml");
    assert!(!found.is_empty(), "the README has TOML examples");
    for b in found {
        let value: Result<toml::Table, _> = toml::from_str(&b);
        assert!(
            value.is_ok(),
            "a README TOML block does not parse: {value:?}\n{b}"
        );
        if b.contains("[plan]") && b.contains("[timing]") {
            let src = clockprep::error::SpecSource::new("README.md", b.clone());
            let spec = clockprep::spec::load_for(src, clockprep::spec::Purpose::Forecast);
            assert!(
                spec.is_ok(),
                "a README spec does not load: {:?}\n{b}",
                spec.err()
            );
        }
    }
}

/// Keys whose values are keyed by species (or run) names, not by fields.
const NAMED_MAPS: [&str; 7] = [
    "centre",
    "contains",
    "targets",
    "concentrations",
    "deviation",
    "uncertainty",
    "orders",
];

fn keys(v: &serde_json::Value, out: &mut BTreeSet<String>) {
    match v {
        serde_json::Value::Object(m) => {
            for (k, v) in m {
                out.insert(k.clone());
                if !(NAMED_MAPS.contains(&k.as_str()) && v.is_object()) {
                    keys(v, out);
                }
            }
        }
        serde_json::Value::Array(a) => a.iter().for_each(|x| keys(x, out)),
        _ => {}
    }
}

/// The JSON documents of every command that writes JSON.
fn documents() -> Vec<serde_json::Value> {
    let pilot = include_str!("../plans/maple-hollow-pilot.csv");
    let outputs = [
        run_with("plan", BROMATE, &[], &["-f", "json"]),
        run_with("stocks", BROMATE, &[], &["-f", "json"]),
        run_with("forecast", PEROXIDE, &[], &["-f", "json"]),
        run_with("design", BROMATE, &[], &["-f", "json"]),
        run_with("tune", PEROXIDE, &[], &["-f", "json"]),
    ];
    let mut docs: Vec<serde_json::Value> = outputs
        .iter()
        .map(|o| serde_json::from_str(&o.stdout).expect("JSON output"))
        .collect();
    let dir = tempfile::tempdir().unwrap();
    std::fs::write(dir.path().join("spec.toml"), BROMATE).unwrap();
    std::fs::write(dir.path().join("pilot.csv"), pilot).unwrap();
    let fit = assert_cmd::Command::cargo_bin("clockprep")
        .unwrap()
        .current_dir(dir.path())
        .args(["fit", "spec.toml", "pilot.csv", "-f", "json"])
        .output()
        .unwrap();
    docs.push(serde_json::from_slice(&fit.stdout).expect("fit JSON"));
    let pilot2 = include_str!("../plans/willow-creek-peroxide-pilot.csv");
    std::fs::write(dir.path().join("peroxide.toml"), PEROXIDE).unwrap();
    std::fs::write(dir.path().join("peroxide.csv"), pilot2).unwrap();
    let fit2 = assert_cmd::Command::cargo_bin("clockprep")
        .unwrap()
        .current_dir(dir.path())
        .args(["fit", "peroxide.toml", "peroxide.csv", "-f", "json"])
        .output()
        .unwrap();
    docs.push(serde_json::from_slice(&fit2.stdout).expect("two-term fit JSON"));
    // Lab sections: the fields only a spec with sections fills in.
    for command in ["plan", "stocks"] {
        let o = run_with(command, WEEK, &[], &["-f", "json"]);
        docs.push(serde_json::from_str(&o.stdout).expect("JSON output"));
    }
    docs
}

/// Backticked words of the README's JSON section.
fn documented() -> BTreeSet<String> {
    let start = README.find("## JSON output").expect("a JSON section");
    let section = &README[start..];
    let end = section[3..].find("\n## ").map_or(section.len(), |e| e + 3);
    let section = &section[..end];
    let mut out = BTreeSet::new();
    for (i, chunk) in section.split('`').enumerate() {
        if i % 2 == 1 {
            for w in chunk.split(|c: char| !(c.is_ascii_alphanumeric() || c == '_')) {
                if !w.is_empty() {
                    out.insert(w.to_string());
                }
            }
        }
    }
    out
}

#[test]
fn the_readme_documents_every_json_field_and_no_other() {
    let mut fields = BTreeSet::new();
    for d in documents() {
        keys(&d, &mut fields);
    }
    let doc = documented();
    let undocumented: Vec<&String> = fields.iter().filter(|f| !doc.contains(*f)).collect();
    assert!(
        undocumented.is_empty(),
        "JSON fields the README does not name: {undocumented:?}"
    );
    // Every field named in the first column of the README's JSON tables exists.
    let start = README.find("## JSON output").unwrap();
    let mut missing = Vec::new();
    for line in README[start..].lines().filter(|l| l.starts_with("| `")) {
        let first = line.split('|').nth(1).unwrap_or("");
        for (i, chunk) in first.split('`').enumerate() {
            if i % 2 == 1 && !fields.contains(chunk) {
                missing.push(chunk.to_string());
            }
        }
    }
    assert!(
        missing.is_empty(),
        "README fields no JSON output has: {missing:?}"
    );
}

#[test]
fn json_reads_back_into_typed_structs() {
    #[derive(serde::Deserialize)]
    struct Fit {
        format: String,
        trials: usize,
        k: Interval,
        orders: Vec<Order>,
        reaction_toml: String,
    }
    #[derive(serde::Deserialize)]
    struct Interval {
        value: f64,
        low: f64,
        high: f64,
    }
    #[derive(serde::Deserialize)]
    struct Order {
        species: String,
        value: f64,
    }
    let docs = documents();
    let fit: Fit = serde_json::from_value(docs[5].clone()).unwrap();
    assert_eq!(fit.format, "clockprep-fit/1");
    assert_eq!(fit.trials, 10);
    assert!(fit.k.low < fit.k.value && fit.k.value < fit.k.high);
    assert_eq!(fit.orders.len(), 3);
    assert!(fit
        .orders
        .iter()
        .any(|o| o.species == "H+" && o.value > 1.5));
    // The fragment in the JSON is the one the toml format writes, and it reads as TOML.
    assert!(toml::from_str::<toml::Table>(&fit.reaction_toml).is_ok());
}
