//! One recompute of the page: the spec's text (and pilot times, if uploaded) through the same
//! library entry points and HTML renderers the CLI uses. Pure and synchronous, so the server
//! runs it on a worker thread and the benchmark calls it directly.

use super::form::{self, Form, Path};
use crate::error::{Error, SpecSource};
use crate::export::{self, Format, SummaryFormat};
use crate::spec;

/// Pilot or class times uploaded on the page: the file's name and its CSV text.
#[derive(Debug, Clone, serde::Deserialize, serde::Serialize, PartialEq)]
pub struct Times {
    pub name: String,
    pub csv: String,
}

/// A refusal located in the spec, as the page shows it.
#[derive(Debug, Clone, serde::Serialize, PartialEq)]
pub struct Located {
    /// What is wrong, in the user's words (the CLI's message).
    pub message: String,
    /// How to fix it (the CLI's help).
    pub help: Option<String>,
    /// `spec.toml:12:18`, as the CLI names the place.
    pub place: Option<String>,
    pub line: Option<usize>,
    pub column: Option<usize>,
    /// Byte range of the offending text.
    pub start: Option<usize>,
    pub end: Option<usize>,
    /// The form field it concerns, when one holds that text.
    pub field: Option<Path>,
    /// The whole message as the CLI prints it (with the line and the caret).
    pub report: String,
}

impl Located {
    pub fn of(e: &Error, form: Option<&Form>) -> Located {
        let mut report = String::new();
        let handler =
            miette::GraphicalReportHandler::new_themed(miette::GraphicalTheme::unicode_nocolor())
                .with_width(100)
                .with_links(false);
        let _ = handler.render_report(&mut report, e);
        let mut out = Located {
            message: e.message(),
            help: e.help_text(),
            place: None,
            line: None,
            column: None,
            start: None,
            end: None,
            field: None,
            report,
        };
        if let Error::Spec(s) = e {
            let src = SpecSource::new(s.src.name(), s.src.inner().as_str());
            let (start, len) = (s.span.offset(), s.span.len());
            let (line, column) = src.line_col(start);
            out.place = Some(format!("{}:{line}:{column}", s.src.name()));
            out.line = Some(line);
            out.column = Some(column);
            out.start = Some(start);
            out.end = Some(start + len);
            out.field = form.and_then(|f| f.locate(start..start + len));
        }
        out
    }

    /// A message that concerns no place in the spec (an edit the page could not apply).
    pub fn plain(message: String, field: Option<Path>) -> Located {
        Located {
            report: message.clone(),
            message,
            help: None,
            place: None,
            line: None,
            column: None,
            start: None,
            end: None,
            field,
        }
    }
}

/// One pane of the page: a sheet as the CLI's HTML, or a note why it is not shown.
#[derive(Debug, Clone, serde::Serialize, PartialEq)]
pub struct Pane {
    pub id: &'static str,
    pub html: Option<String>,
    /// Why the pane has no sheet (a table the spec lacks, the sheet's own refusal).
    pub note: Option<String>,
}

/// A suggestion a sheet makes, as the exact TOML its CLI command prints.
#[derive(Debug, Clone, serde::Serialize, PartialEq)]
pub struct Suggestion {
    /// `tune`, `design` or `fit`.
    pub kind: &'static str,
    /// What applying it does, in words.
    pub label: String,
    pub toml: String,
}

/// Everything the page shows for one text.
#[derive(Debug, Clone, serde::Serialize, PartialEq)]
pub struct Computed {
    /// The spec's refusal; when set, `panes` is empty and the page keeps its last good sheets.
    pub error: Option<Located>,
    pub panes: Vec<Pane>,
    pub suggestions: Vec<Suggestion>,
    /// Something on the sheets is flagged for a look (the CLI's exit code 1).
    pub flagged: bool,
}

/// The ids of the panes, in the order of the page's tabs.
pub const PANES: [&str; 7] = [
    "mixing",
    "stocks",
    "forecast",
    "glassware",
    "fit",
    "design",
    "tune",
];

fn html(bytes: Vec<u8>) -> Option<String> {
    Some(String::from_utf8_lossy(&bytes).into_owned())
}

fn note(id: &'static str, text: impl Into<String>) -> Pane {
    Pane {
        id,
        html: None,
        note: Some(text.into()),
    }
}

fn sheet(id: &'static str, bytes: Vec<u8>) -> Pane {
    Pane {
        id,
        html: html(bytes),
        note: None,
    }
}

/// What a sheet's own refusal says on its pane (the message and its help, with the place).
fn refusal(id: &'static str, e: &Error, form: Option<&Form>) -> Pane {
    note(id, Located::of(e, form).report)
}

/// Some of the panes, with their suggestions and whether they flag anything.
#[derive(Default)]
struct Part {
    panes: Vec<Pane>,
    suggestions: Vec<Suggestion>,
    flagged: bool,
}

impl Part {
    fn notes(ids: &[&'static str], why: &str) -> Part {
        Part {
            panes: ids.iter().map(|id| note(id, why)).collect(),
            ..Part::default()
        }
    }
}

/// Mixing, stocks and glassware: one solve. Its refusal is the spec's.
fn bench_part(source: SpecSource, has_lab: bool) -> Result<Part, Error> {
    if !has_lab {
        return Ok(Part::notes(&["mixing", "stocks", "glassware"], "This spec lists no [[stock]] and [[device]]: add them (or start from clockprep init) to get the mixing and stock sheets."));
    }
    let (report, stocks) = crate::plan_with_stocks(source)?;
    Ok(Part {
        panes: vec![
            sheet("mixing", export::export(&report, Format::Html)),
            sheet("stocks", export::export_stocks(&stocks, Format::Html)),
            sheet("glassware", export::render_html(&report.glassware_page())),
        ],
        suggestions: Vec::new(),
        flagged: report.flagged,
    })
}

const NO_PRIOR: &str = "Add a [reaction] table (e.g. preset = \"bromate-iodide\") to forecast the clock times, tune the timing reagent and fit pilot times.";

/// The forecast. Its refusal is the spec's.
fn forecast_part(source: SpecSource, has_prior: bool) -> Result<Part, Error> {
    if !has_prior {
        return Ok(Part::notes(&["forecast"], NO_PRIOR));
    }
    let f = crate::forecast_only(source)?;
    Ok(Part {
        panes: vec![sheet("forecast", export::export_forecast(&f, Format::Html))],
        suggestions: Vec::new(),
        flagged: f.flagged,
    })
}

/// Tune and fit: their own refusals stay on their panes.
fn prior_part(
    source: SpecSource,
    has_prior: bool,
    times: Option<&Times>,
    form: Option<&Form>,
) -> Part {
    if !has_prior {
        return Part::notes(&["tune", "fit"], NO_PRIOR);
    }
    let mut part = Part::default();
    match crate::tune(source.clone()) {
        Ok(t) => {
            part.panes
                .push(sheet("tune", export::export_tune(&t, SummaryFormat::Html)));
            let changes = (t.concentration_m - t.current_m).abs() > 1e-9 * t.current_m;
            if t.fits && changes {
                part.suggestions.push(Suggestion {
                    kind: "tune",
                    label: format!("Set [timing] concentration = \"{}\"", t.concentration),
                    toml: String::from_utf8_lossy(&export::export_tune(&t, SummaryFormat::Toml))
                        .into_owned(),
                });
            }
        }
        Err(e) => part.panes.push(refusal("tune", &e, form)),
    }
    match times {
        None => part.panes.push(note("fit", "Upload the pilot (or class) times as CSV with a header and the columns run, time and optionally temperature, one row per trial, to fit the prior rate law.")),
        Some(t) => match crate::fit(source, SpecSource::new(t.name.clone(), t.csv.clone()), None) {
            Ok(f) => {
                part.panes.push(sheet("fit", export::export_fit(&f, SummaryFormat::Html)));
                part.suggestions.push(Suggestion {
                    kind: "fit",
                    label: "Replace [reaction] with the fitted rate law".into(),
                    toml: String::from_utf8_lossy(&export::export_fit(&f, SummaryFormat::Toml))
                        .into_owned(),
                });
            }
            Err(e) => part.panes.push(refusal("fit", &e, form)),
        },
    }
    part
}

/// The design: its own refusal stays on its pane.
fn design_part(source: SpecSource, has_design: bool, form: Option<&Form>) -> Part {
    if !has_design {
        return Part::notes(&["design"], "Add a [design] table (base point, scheme, multipliers) to design a run set and see the precision it gives.");
    }
    match crate::design(source) {
        Ok(d) => Part {
            panes: vec![sheet(
                "design",
                export::export_design(&d, SummaryFormat::Html),
            )],
            suggestions: vec![Suggestion {
                kind: "design",
                label: format!(
                    "Replace the [[run]] list with the {} designed runs",
                    d.runs.len()
                ),
                toml: String::from_utf8_lossy(&export::export_design(&d, SummaryFormat::Toml))
                    .into_owned(),
            }],
            flagged: false,
        },
        Err(e) => Part {
            panes: vec![refusal("design", &e, form)],
            ..Part::default()
        },
    }
}

/// Recompute every pane for `text` (named `name` in messages). The four parts are
/// independent computations of the library and run side by side on the machine's cores.
pub fn compute(name: &str, text: &str, times: Option<&Times>) -> Computed {
    let form = form::read(text).ok();
    let source = SpecSource::new(name, text);
    let fail = |e: &Error| Computed {
        error: Some(Located::of(e, form.as_ref())),
        panes: Vec::new(),
        suggestions: Vec::new(),
        flagged: false,
    };
    let light = match spec::load_for(source.clone(), spec::Purpose::Forecast) {
        Ok(s) => s,
        Err(e) => return fail(&e),
    };
    let (lab, prior, design) = (
        light.lab.is_some(),
        light.prior.is_some(),
        light.design.is_some(),
    );
    let f = form.as_ref();
    let ((bench, forecast), (prior_panes, design_panes)) = rayon::join(
        || {
            rayon::join(
                || bench_part(source.clone(), lab),
                || forecast_part(source.clone(), prior),
            )
        },
        || {
            rayon::join(
                || prior_part(source.clone(), prior, times, f),
                || design_part(source.clone(), design, f),
            )
        },
    );
    let parts = match (bench, forecast) {
        (Err(e), _) | (Ok(_), Err(e)) => return fail(&e),
        (Ok(b), Ok(fc)) => [b, fc, prior_panes, design_panes],
    };
    let mut out = Computed {
        error: None,
        panes: Vec::new(),
        suggestions: Vec::new(),
        flagged: false,
    };
    for p in parts {
        out.panes.extend(p.panes);
        out.suggestions.extend(p.suggestions);
        out.flagged |= p.flagged;
    }
    out.panes
        .sort_by_key(|p| PANES.iter().position(|x| *x == p.id));
    out
}

/// The tables a suggestion replaces whole rather than key by key.
pub fn replaced_whole(kind: &str) -> &'static [&'static str] {
    match kind {
        "fit" => &["reaction"],
        _ => &[],
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    const DEMO: &str = include_str!("../../plans/maple-hollow-bromate.toml");

    #[test]
    fn the_demo_fills_every_pane_but_the_fit() {
        let c = compute("demo.toml", DEMO, None);
        assert!(c.error.is_none());
        let ids: Vec<_> = c.panes.iter().map(|p| p.id).collect();
        assert_eq!(ids, PANES);
        for p in &c.panes {
            assert_eq!(p.html.is_some(), p.id != "fit", "{}", p.id);
        }
        // The mixing pane is the CLI's HTML, byte for byte.
        let cli = crate::plan(SpecSource::new("demo.toml", DEMO)).unwrap();
        assert_eq!(
            c.panes[0].html.as_deref().unwrap().as_bytes(),
            export::export(&cli, Format::Html)
        );
        assert!(c.suggestions.iter().any(|s| s.kind == "design"));
    }

    #[test]
    fn a_bad_unit_is_located_at_its_field() {
        let bad = DEMO.replace("total_volume = \"50.0 mL\"", "total_volume = \"50.0 mQ\"");
        let c = compute("demo.toml", &bad, None);
        let e = c.error.expect("refused");
        assert!(e.message.contains("mQ"), "{}", e.message);
        assert_eq!(
            e.field,
            Some(vec![
                form::Seg::Key("plan".into()),
                form::Seg::Key("total_volume".into())
            ])
        );
        assert_eq!(e.line, Some(8));
        assert!(c.panes.is_empty());
    }
}
