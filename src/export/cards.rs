//! Bench cards: printable HTML sized to A4 or US Letter, never split across a page break.
//!
//! Layout (fixed, so the page count is known before printing): `--per run` puts two half-page
//! cards on every page (one when there are more than four replicates to record), one card per
//! run with a blank for the station; `--per station` gives
//! each station full-page cards listing up to [`RUNS_PER_STATION_CARD`] runs each. Every card
//! carries the cautions, the pour order, the predicted time with its band (marked as a
//! forecast), and boxes to record measured times and temperatures.

use crate::report::{PlanReport, RunReport};
use maud::{html, Markup, PreEscaped, DOCTYPE};

#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Per {
    Station,
    Run,
}

#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Paper {
    A4,
    Letter,
}

impl Paper {
    /// Page width and height, mm.
    fn size(self) -> (f64, f64) {
        match self {
            Paper::A4 => (210.0, 297.0),
            Paper::Letter => (215.9, 279.4),
        }
    }

    fn css(self) -> &'static str {
        match self {
            Paper::A4 => "A4",
            Paper::Letter => "letter",
        }
    }
}

/// Most runs on one station card; a station with more gets several cards.
pub const RUNS_PER_STATION_CARD: usize = 3;
/// Page margin and the gap between two cards on a page, mm.
const MARGIN: f64 = 10.0;
const GAP: f64 = 6.0;

/// Cards on one page: one, so that the text stays at a size read at arm's length (11 pt body,
/// 9 pt cautions) without crowding.
fn per_page(_report: &PlanReport, _per: Per) -> usize {
    1
}

/// Pages the cards take: known from the layout alone.
pub fn pages(report: &PlanReport, per: Per) -> usize {
    // Each set of cards opens with the station's set-up card.
    let cards = match per {
        Per::Run => 1 + report.runs.len(),
        Per::Station => {
            sittings(report)
                .iter()
                .map(|s| s.stations as usize)
                .sum::<usize>()
                * (1 + report.runs.len().div_ceil(RUNS_PER_STATION_CARD))
        }
    };
    cards.div_ceil(per_page(report, per))
}

/// One meeting of the lab as the station cards see it: a lab section (its stations,
/// replicates and forecast), or the whole plan for a one-section spec.
struct Sitting<'a> {
    section: Option<&'a crate::report::SectionForecast>,
    stations: u32,
    replicates: u32,
}

impl Sitting<'_> {
    /// "Section 01, Mon 2026-12-07 · " before the station's number, or nothing.
    fn label(&self) -> String {
        self.section
            .map(|s| format!("Section {}, {} {} · ", s.name, s.weekday, s.date))
            .unwrap_or_default()
    }
}

/// The sittings of a plan: each lab section, else the plan itself.
fn sittings(report: &PlanReport) -> Vec<Sitting<'_>> {
    if report.sections.is_empty() {
        vec![Sitting {
            section: None,
            stations: report.stations,
            replicates: report.replicates,
        }]
    } else {
        report
            .sections
            .iter()
            .map(|s| Sitting {
                section: Some(s),
                stations: s.stations,
                replicates: s.replicates,
            })
            .collect()
    }
}

fn style(paper: Paper, per_page: usize) -> String {
    let (w, h) = paper.size();
    let inner_w = w - 2.0 * MARGIN;
    let inner_h = h - 2.0 * MARGIN;
    let card_h = match per_page {
        2 => (inner_h - GAP) / 2.0 - 1.0,
        _ => inner_h - 1.0,
    };
    format!(
        r#"
@page {{ size: {size}; margin: {MARGIN}mm; }}
* {{ box-sizing: border-box; }}
body {{ margin: 0; font-family: "DejaVu Sans", Arial, sans-serif; font-size: 11pt; color: #000; }}
.page {{ width: {inner_w:.1}mm; height: {inner_h:.1}mm; break-after: page; page-break-after: always; overflow: hidden; }}
.page:last-child {{ break-after: auto; page-break-after: auto; }}
.card {{ width: 100%; height: {card_h:.1}mm; border: 1.3pt solid #000; padding: 2.5mm 3.5mm; overflow: hidden;
         break-inside: avoid; page-break-inside: avoid; display: flex; flex-direction: column; }}
.card + .card {{ margin-top: {GAP}mm; }}
.head {{ display: flex; justify-content: space-between; align-items: baseline; border-bottom: 0.8pt solid #000; margin-bottom: 1.5mm; }}
.head .run {{ font-size: 14pt; font-weight: bold; }}
.head .plan {{ font-size: 9pt; }}
.station {{ font-size: 12pt; font-weight: bold; white-space: nowrap; }}
.vessels {{ display: flex; gap: 3mm; }}
.vessels > div {{ flex: 1; }}
table {{ border-collapse: collapse; width: 100%; }}
th, td {{ border: 0.6pt solid #555; padding: 0.6mm 1.2mm; text-align: left; vertical-align: top; }}
td.n {{ text-align: right; white-space: nowrap; }}
.pour {{ font-weight: bold; margin: 1.5mm 0 1mm 0; }}
.forecast {{ margin: 0.5mm 0 1mm 0; }}
.flag {{ font-weight: bold; margin: 0.5mm 0; }}
.record td {{ height: 6.5mm; }}
table.inner {{ width: 100%; border-collapse: collapse; }}
.record table.inner td, .record table.inner th {{ border: none; padding: 0 1.5mm 0.3mm 0; height: auto; vertical-align: top; }}
.record table.inner th {{ text-align: left; font-weight: bold; }}
table.inner td.dev {{ font-size: 9pt; }}
.record td.box {{ width: 13mm; }}
.expect {{ margin-top: 1mm; }}
.cautions {{ margin-top: auto; border: 1pt solid #000; padding: 1mm 2mm; font-size: 9pt; }}
.end {{ font-size: 9pt; text-align: right; color: #444; }}
"#,
        size = paper.css()
    )
}

fn vessel_table(label: &str, items: &[crate::report::PortionItem], dec: usize) -> Markup {
    html! {
        div {
            table {
                tr { th colspan="3" { "Vessel " (label) } }
                @for i in items {
                    tr { td { (i.stock) } td.n { strong { (format!("{:.dec$} mL", i.ml)) } } td { (i.device) } }
                }
            }
        }
    }
}

fn cautions(report: &PlanReport) -> Markup {
    html! {
        div.cautions {
            strong { "Cautions: " }
            "goggles, gloves and lab coat on. Follow the supplier's SDS, local rules and your safety officer. Waste as local rules require. "
            @if !report.reagents.is_empty() {
                "Reagents: "
                (report.reagents.iter().map(|r| if r.ghs.is_empty() { r.name.clone() } else { format!("{} ({})", r.name, r.ghs.join(", ")) }).collect::<Vec<_>>().join("; "))
                "."
            }
        }
    }
}

/// A time as a stopwatch reader takes it: whole seconds from 10 s (a human's reaction is about
/// 0.2 s), tenths below (common practice).
fn stopwatch(t: f64) -> String {
    if t >= 10.0 {
        format!("{t:.0} s")
    } else {
        format!("{t:.1} s")
    }
}

/// Two significant figures: the band is an estimate of an estimate.
fn two_figures(t: f64) -> String {
    if !(t.is_finite() && t > 0.0) {
        return "-".into();
    }
    let step = 10f64.powf(t.log10().floor() - 1.0);
    let v = (t / step).round() * step;
    if step >= 1.0 {
        format!("{v:.0}")
    } else {
        format!("{:.*}", (-step.log10()).round() as usize, v)
    }
}

/// The run's forecast for the bench: the expected time as a stopwatch reads it, the band over
/// the temperature range to two significant figures, and that it is a forecast.
fn forecast_line(run: &RunReport) -> Markup {
    html! {
        @if let Some(f) = &run.forecast {
            div.forecast {
                @match (f.time_s, f.band_s) {
                    (Some(t), Some([fast, slow])) => {
                        "Expected: about " strong { (stopwatch(t)) } " at " (format!("{:.0}", f.temperature_c)) " °C ("
                        (two_figures(fast)) "–" (two_figures(slow)) " s between " (format!("{:.0}", f.band_c[1])) " and "
                        (format!("{:.0}", f.band_c[0])) " °C). A forecast, not a guarantee."
                    }
                    (Some(t), None) => { "Expected: about " strong { (stopwatch(t)) } ". A forecast, not a guarantee." }
                    _ => { "No clock forecast for this run: see the sheet." }
                }
            }
        }
    }
}

/// Every flag of a run (its recipe's and its forecast's), in words.
fn run_flags(run: &RunReport) -> Vec<&crate::flag::Flag> {
    run.flags
        .iter()
        .chain(run.forecast.iter().flat_map(|f| f.warnings.iter()))
        .collect()
}

fn flag_lines(run: &RunReport) -> Markup {
    html! {
        @for f in run_flags(run) {
            div.flag { "Check before class (" (f.code) "): " (f.message) }
        }
    }
}

/// What a station sets up before its first run: the glassware list and the tray.
fn setup_card(
    report: &PlanReport,
    station: Option<(u32, &Sitting)>,
    card: usize,
    cards: usize,
) -> Markup {
    let replicates = station.map_or(report.replicates, |(_, s)| s.replicates);
    // The tray is for the plan's replicates; a section with fewer fills its bottles for its
    // own: its use scaled, plus the overage on that, plus the same rinse and fill.
    let fill = |t: &crate::report::TrayItem| -> f64 {
        if replicates == report.replicates {
            return t.fill_ml;
        }
        let used = t.use_ml * replicates as f64 / report.replicates as f64;
        used * (1.0 + report.overage_pct / 100.0) + t.dead_volume_ml
    };
    html! {
        div.card {
            div.head {
                div {
                    div.plan { (report.title) " · card " (card) " of " (cards) }
                    div.run { "Station set-up" }
                }
                div.station {
                    @if let Some((n, s)) = station { (s.label()) "Station " (n) " of " (s.stations) } @else { "Station ______" }
                }
            }
            div.vessels {
                div {
                    table {
                        tr { th { "glassware" } th { "how many" } th { "holds" } }
                        @for g in &report.glassware {
                            tr {
                                td { (g.device) }
                                td.n { (g.per_station) }
                                td {
                                    (g.holds.join(", "))
                                    @if g.rinse_between { " (one pipet: rinse it with the next stock)" }
                                }
                            }
                        }
                    }
                }
                div {
                    table {
                        tr { th { "tray: bottle" } th { "fill (mL)" } th { "ready" } }
                        @for t in &report.tray {
                            tr { td { (t.stock) } td.n { (format!("{:.1}", fill(t))) } td {} }
                        }
                    }
                }
            }
            div.pour {
                "Fill: every run × " (replicates) " trial(s), plus " (crate::report::words::sig(report.overage_pct, 3)) " % overage, plus what rinsing and filling the glassware takes. Label every bottle and device with the stock it holds; a buret keeps its stock for the whole lab."
            }
            (cautions(report))
            div.end { "end of card " (card) }
        }
    }
}

fn run_card(
    report: &PlanReport,
    run: &RunReport,
    n: usize,
    card: usize,
    cards: usize,
    dec: usize,
) -> Markup {
    let pour = &run.portions.pour;
    let (first, second) = pour.split_once(" into ").unwrap_or(("B", "A"));
    html! {
        div.card {
            div.head {
                div {
                    div.plan { (report.title) " · card " (card) " of " (cards) }
                    div.run { "Run " (n) " of " (report.runs.len()) ": " (run.name) }
                }
                div.station { "Station ______" }
            }
            div.vessels { (vessel_table("A", &run.portions.a, dec)) (vessel_table("B", &run.portions.b, dec)) }
            div.pour { "At t = 0 pour vessel " (first) " into vessel " (second) ", swirl, and start the timer at the moment of mixing." }
            (forecast_line(run))
            @if !report.sections.is_empty() {
                div.forecast {
                    "By section: "
                    (report.sections.iter().map(|s| {
                        let t = s.runs[n - 1].time_s.map_or("no forecast".into(), stopwatch);
                        let at = s.temperature_c.map(|c| format!(" at {c:.0} °C")).unwrap_or_default();
                        format!("{} ({} {}){at}: {t}", s.name, s.weekday, s.date)
                    }).collect::<Vec<_>>().join("; "))
                    "."
                }
            }
            (flag_lines(run))
            table.record {
                tr { th { "trial" } th { "time to colour (s)" } th { "temperature (°C)" } th { "initials" } }
                @for t in 1..=report.replicates { tr { td { (t) } td {} td {} td {} } }
            }
            (cautions(report))
            div.end { "end of card " (card) }
        }
    }
}

fn station_card(
    report: &PlanReport,
    (station, sitting): (u32, &Sitting),
    runs: &[(usize, &RunReport)],
    card: usize,
    cards: usize,
    dec: usize,
) -> Markup {
    // The expected time at the section's temperature when the plan has sections, else at the
    // plan's: (time, [fast, slow]).
    let expected = |n: usize, run: &RunReport| -> Option<(f64, [f64; 2])> {
        match sitting.section {
            Some(s) => {
                let r = &s.runs[n - 1];
                r.time_s.zip(r.band_s)
            }
            None => run.forecast.as_ref().and_then(|f| f.time_s.zip(f.band_s)),
        }
    };
    let flags = |n: usize, run: &RunReport| -> Vec<&'static str> {
        match sitting.section {
            Some(s) => run
                .flags
                .iter()
                .chain(&s.runs[n - 1].flags)
                .map(|f| f.code)
                .collect(),
            None => run_flags(run).iter().map(|f| f.code).collect(),
        }
    };
    let temperature = sitting
        .section
        .and_then(|s| s.temperature_c)
        .or(report.forecast_settings.as_ref().map(|s| s.temperature_c));
    let half_band = report.forecast_settings.as_ref().map(|s| s.band_c);
    let items = |list: &[crate::report::PortionItem]| -> Markup {
        // Stock, volume (bold) and device in columns of their own.
        html! {
            @for i in list {
                tr { td { (i.stock) } td.n { strong { (format!("{:.dec$} mL", i.ml)) } } td.dev { (i.device) } }
            }
        }
    };
    html! {
        div.card {
            div.head {
                div {
                    div.plan { (report.title) " · card " (card) " of " (cards) }
                    div.run { "Bench card" }
                }
                div.station { (sitting.label()) "Station " (station) " of " (sitting.stations) }
            }
            table {
                tr { th { "run" } th { "vessel: stock, volume, device" } @for t in 1..=sitting.replicates { th { "trial " (t) " (s)" } th { "°C" } } }
                @for (n, run) in runs {
                    tr.record {
                        td {
                            (n) ". " (run.name)
                            @if let Some((t, [fast, slow])) = expected(*n, run) {
                                div.expect { "expected " strong { (stopwatch(t)) } " (" (two_figures(fast)) "–" (two_figures(slow)) ")" }
                            }
                            @for f in flags(*n, run) { div.flag { "check: " (f.replace('_', " ")) } }
                        }
                        td {
                            table.inner {
                                tr { th colspan="3" { "Vessel A" } }
                                (items(&run.portions.a))
                                tr { th colspan="3" { "Vessel B" } }
                                (items(&run.portions.b))
                            }
                        }
                        @for _ in 1..=sitting.replicates { td.box {} td.box {} }
                    }
                }
            }
            div.pour { "For every run: at t = 0 pour vessel " (report.runs[0].portions.pour.replace(" into ", " into vessel ")) ", swirl, and start the timer at the moment of mixing." }
            @if let (Some(t), Some(b), true) = (temperature, half_band, runs.iter().any(|(n, r)| expected(*n, r).is_some())) {
                div.forecast {
                    "Expected: forecast time to colour at " (format!("{t:.0}")) " °C, in brackets the range between "
                    (format!("{:.0}", t + b)) " and " (format!("{:.0}", t - b)) " °C. Forecasts from a prior rate law, not guarantees."
                }
            }
            (cautions(report))
            div.end { "end of card " (card) }
        }
    }
}

/// The bench cards as one printable HTML document.
pub fn cards(report: &PlanReport, per: Per, paper: Paper) -> Vec<u8> {
    cards_copies(report, per, paper, 1)
}

/// The bench cards, the whole set printed `copies` times (e.g. a set per bench of a shared
/// station, or spares).
pub fn cards_copies(report: &PlanReport, per: Per, paper: Paper, copies: usize) -> Vec<u8> {
    let dec = crate::report::words::ml_decimals(report);
    let numbered: Vec<(usize, &RunReport)> = report
        .runs
        .iter()
        .enumerate()
        .map(|(i, r)| (i + 1, r))
        .collect();
    let mut cards: Vec<Markup> = Vec::new();
    match per {
        Per::Run => {
            let total = numbered.len() + 1;
            cards.push(setup_card(report, None, 1, total));
            for (k, (n, run)) in numbered.iter().enumerate() {
                cards.push(run_card(report, run, *n, k + 2, total, dec));
            }
        }
        Per::Station => {
            let chunks: Vec<&[(usize, &RunReport)]> =
                numbered.chunks(RUNS_PER_STATION_CARD).collect();
            let sittings = sittings(report);
            let total =
                sittings.iter().map(|s| s.stations as usize).sum::<usize>() * (chunks.len() + 1);
            let mut k = 0;
            for (station, sitting) in sittings
                .iter()
                .flat_map(|s| (1..=s.stations).map(move |n| (n, s)))
            {
                k += 1;
                cards.push(setup_card(report, Some((station, sitting)), k, total));
                for chunk in &chunks {
                    k += 1;
                    cards.push(station_card(
                        report,
                        (station, sitting),
                        chunk,
                        k,
                        total,
                        dec,
                    ));
                }
            }
        }
    }
    let copies = copies.max(1);
    let cards: Vec<Markup> = (0..copies).flat_map(|_| cards.iter().cloned()).collect();
    let per_page = per_page(report, per);
    let doc = html! {
        (DOCTYPE)
        html lang="en" {
            head {
                meta charset="utf-8";
                title { "Bench cards: " (report.title) }
                style { (PreEscaped(style(paper, per_page))) }
            }
            body {
                @for page in cards.chunks(per_page) {
                    div.page { @for c in page { (c) } }
                }
            }
        }
    };
    let mut out =
        super::typeset::document(&doc.into_string(), super::typeset::Style::Html).into_bytes();
    out.push(b'\n');
    out
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn stopwatch_times_and_two_figure_bands() {
        assert_eq!(stopwatch(117.94), "118 s");
        assert_eq!(stopwatch(8.26), "8.3 s");
        assert_eq!(two_figures(165.74), "170");
        assert_eq!(two_figures(86.77), "87");
        assert_eq!(two_figures(4.37), "4.4");
        assert_eq!(two_figures(1234.0), "1200");
    }
}
