//! The spec's JSON Schema (`clockprep schema`) against every spec in plans/ and every starter
//! `clockprep init` writes, with the general-purpose `jsonschema` validator crate; and a
//! misspelled key is caught by the schema as by clockprep.

mod common;

use assert_cmd::Command;

fn schema() -> serde_json::Value {
    let out = Command::cargo_bin("clockprep")
        .unwrap()
        .arg("schema")
        .output()
        .unwrap();
    assert_eq!(out.status.code(), Some(0));
    serde_json::from_slice(&out.stdout).expect("the schema is JSON")
}

fn as_json(toml_text: &str) -> serde_json::Value {
    toml::from_str(toml_text).expect("TOML")
}

#[test]
fn the_schema_validates_every_spec_in_plans_and_every_starter() {
    let validator = jsonschema::validator_for(&schema()).expect("a valid JSON Schema");
    let mut checked = 0;
    for entry in std::fs::read_dir("plans").unwrap() {
        let path = entry.unwrap().path();
        if path.extension().is_some_and(|e| e == "toml") {
            let doc = as_json(&std::fs::read_to_string(&path).unwrap());
            let errors: Vec<String> = validator.iter_errors(&doc).map(|e| e.to_string()).collect();
            assert!(errors.is_empty(), "{}: {errors:?}", path.display());
            checked += 1;
        }
    }
    assert!(checked >= 3);
    for preset in ["bromate-iodide", "persulfate-iodide", "peroxide-iodide"] {
        let out = Command::cargo_bin("clockprep")
            .unwrap()
            .args(["init", "--preset", preset])
            .output()
            .unwrap();
        let doc = as_json(&String::from_utf8(out.stdout).unwrap());
        assert!(validator.is_valid(&doc), "starter {preset}");
    }
}

#[test]
fn the_schema_refuses_a_misspelled_key_as_clockprep_does() {
    let validator = jsonschema::validator_for(&schema()).unwrap();
    let bad = common::BROMATE.replace("stations = 8", "statons = 8");
    assert!(!validator.is_valid(&as_json(&bad)));
    assert_eq!(common::run("plan", &bad, &[]).code, 2);
    // A section with the wrong shape too: a run without targets.
    let no_targets = common::BROMATE.replacen(
        "targets = { \"I-\" = \"2.00 mM\", \"BrO3-\" = \"8.00 mM\", \"H+\" = \"20.0 mM\" }",
        "",
        1,
    );
    assert_ne!(no_targets, common::BROMATE);
    assert!(!validator.is_valid(&as_json(&no_targets)));
}
