//! Snapshot tests of every output format for the demo plans. Review changes with
//! `cargo insta review` (or delete the .snap file and rerun) and commit the new snapshot.

use clockprep::error::SpecSource;
use clockprep::export::cards::{cards, Paper, Per};
use clockprep::export::{
    export, export_design, export_fit, export_forecast, export_stocks, export_tune, Format,
    SummaryFormat,
};

const FORMATS: [(Format, &str); 5] = [
    (Format::Text, "txt"),
    (Format::Csv, "csv"),
    (Format::Json, "json"),
    (Format::Markdown, "md"),
    (Format::Html, "html"),
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

fn source(path: &str) -> SpecSource {
    SpecSource::new(path, std::fs::read_to_string(path).unwrap())
}

#[test]
fn bromate_stock_sheet() {
    let sheet = clockprep::stocks(source("plans/maple-hollow-bromate.toml")).unwrap();
    for (format, ext) in FORMATS {
        let text = String::from_utf8(export_stocks(&sheet, format)).unwrap();
        insta::assert_snapshot!(format!("bromate_stocks_{ext}"), text);
    }
}

#[test]
fn bromate_cards_and_chart() {
    let r = report("plans/maple-hollow-bromate.toml");
    for (per, p) in [(Per::Run, "run"), (Per::Station, "station")] {
        let html = String::from_utf8(cards(&r, per, Paper::A4)).unwrap();
        insta::assert_snapshot!(format!("bromate_cards_{p}_a4"), html);
    }
    let (svg, _) = clockprep::chart(source("plans/maple-hollow-bromate.toml")).unwrap();
    insta::assert_snapshot!("bromate_chart_svg", svg);
}

const SUMMARY_FORMATS: [(SummaryFormat, &str); 5] = [
    (SummaryFormat::Text, "txt"),
    (SummaryFormat::Json, "json"),
    (SummaryFormat::Markdown, "md"),
    (SummaryFormat::Html, "html"),
    (SummaryFormat::Toml, "toml"),
];

#[test]
fn bromate_pilot_fit() {
    let sheet = clockprep::fit(
        source("plans/maple-hollow-bromate.toml"),
        source("plans/maple-hollow-pilot.csv"),
        None,
    )
    .unwrap();
    for (format, ext) in SUMMARY_FORMATS {
        let text = String::from_utf8(export_fit(&sheet, format)).unwrap();
        insta::assert_snapshot!(format!("bromate_fit_{ext}"), text);
    }
}

#[test]
fn peroxide_two_term_fit() {
    let sheet = clockprep::fit(
        source("plans/willow-creek-peroxide-forecast.toml"),
        source("plans/willow-creek-peroxide-pilot.csv"),
        None,
    )
    .unwrap();
    for (format, ext) in SUMMARY_FORMATS {
        let text = String::from_utf8(export_fit(&sheet, format)).unwrap();
        insta::assert_snapshot!(format!("peroxide_fit_terms_{ext}"), text);
    }
}

#[test]
fn bromate_labels() {
    let sheet = clockprep::stocks(source("plans/maple-hollow-bromate.toml")).unwrap();
    let html = String::from_utf8(clockprep::export::labels::labels(
        &sheet,
        clockprep::export::cards::Paper::A4,
    ))
    .unwrap();
    insta::assert_snapshot!("bromate_labels_a4", html);
}

#[test]
fn bromate_design() {
    let sheet = clockprep::design(source("plans/maple-hollow-bromate.toml")).unwrap();
    for (format, ext) in SUMMARY_FORMATS {
        let text = String::from_utf8(export_design(&sheet, format)).unwrap();
        insta::assert_snapshot!(format!("bromate_design_{ext}"), text);
    }
}

#[test]
fn peroxide_tune() {
    let sheet = clockprep::tune(source("plans/willow-creek-peroxide-forecast.toml")).unwrap();
    for (format, ext) in SUMMARY_FORMATS {
        let text = String::from_utf8(export_tune(&sheet, format)).unwrap();
        insta::assert_snapshot!(format!("peroxide_tune_{ext}"), text);
    }
}

#[test]
fn two_section_week() {
    // Two lab sections on two days: the mixing sheet (with each section's forecast), the
    // stocks sheet (schedule, checklist, fetch lists, waste by section) in every format, and
    // the labels on both sheet grids.
    check("birchfield-two-sections", "week");
    let sheet = clockprep::stocks(source("plans/birchfield-two-sections.toml")).unwrap();
    for (format, ext) in FORMATS {
        let text = String::from_utf8(export_stocks(&sheet, format)).unwrap();
        insta::assert_snapshot!(format!("week_stocks_{ext}"), text);
    }
    for (paper, p) in [(Paper::A4, "a4"), (Paper::Letter, "letter")] {
        let html = String::from_utf8(clockprep::export::labels::labels(&sheet, paper)).unwrap();
        insta::assert_snapshot!(format!("week_labels_{p}"), html);
    }
    let fc = clockprep::forecast_only(source("plans/birchfield-two-sections.toml")).unwrap();
    for (format, ext) in FORMATS {
        let text = String::from_utf8(export_forecast(&fc, format)).unwrap();
        insta::assert_snapshot!(format!("week_forecast_{ext}"), text);
    }
    // Station cards per section: each section's stations, its replicates, its forecast.
    let r = report("plans/birchfield-two-sections.toml");
    let html = String::from_utf8(cards(&r, Per::Station, Paper::Letter)).unwrap();
    insta::assert_snapshot!("week_cards_station_letter", html);
}
