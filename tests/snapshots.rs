//! Snapshot tests of every output format for the demo plans. Review changes with
//! `cargo insta review` (or delete the .snap file and rerun) and commit the new snapshot.

use clockprep::error::SpecSource;
use clockprep::export::{export, export_forecast, Format};

const FORMATS: [(Format, &str); 4] = [
    (Format::Text, "txt"),
    (Format::Csv, "csv"),
    (Format::Json, "json"),
    (Format::Markdown, "md"),
];

fn report(path: &str) -> clockprep::report::PlanReport {
    let text = std::fs::read_to_string(path).unwrap();
    clockprep::plan(SpecSource::new(path, text)).unwrap()
}

fn check(plan: &str, tag: &str) {
    let r = report(&format!("plans/{plan}.toml"));
    for (format, ext) in FORMATS {
        let bytes = export(&r, format);
        let text = String::from_utf8(bytes).unwrap();
        insta::assert_snapshot!(format!("{tag}_{ext}"), text);
    }
}

#[test]
fn bromate_demo() {
    check("maple-hollow-bromate", "bromate");
}

#[test]
fn persulfate_demo() {
    check("quarry-lane-persulfate", "persulfate");
}

#[test]
fn peroxide_forecast_demo() {
    let path = "plans/willow-creek-peroxide-forecast.toml";
    let text = std::fs::read_to_string(path).unwrap();
    let sheet = clockprep::forecast_only(SpecSource::new(path, text)).unwrap();
    for (format, ext) in FORMATS {
        let text = String::from_utf8(export_forecast(&sheet, format)).unwrap();
        insta::assert_snapshot!(format!("peroxide_forecast_{ext}"), text);
    }
}
