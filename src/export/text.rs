use super::{ml_decimals, sig, Exporter};
use crate::flag::Flag;
use crate::report::{
    ForecastReport, ForecastSettingsReport, ForecastSheet, PlanReport, ReactionReport, RunReport,
    StockSheet,
};
use std::fmt::Write;

/// The mixing sheet as aligned plain text, units in every header.
pub struct Text;

/// Column alignment.
#[derive(Clone, Copy)]
pub(crate) enum Align {
    Left,
    Right,
}

/// An aligned table with a rule under the header; `indent` spaces before every line.
pub(crate) fn table(
    indent: usize,
    headers: &[&str],
    aligns: &[Align],
    rows: &[Vec<String>],
) -> String {
    let width = |s: &str| s.chars().count();
    let mut widths: Vec<usize> = headers.iter().map(|h| width(h)).collect();
    for r in rows {
        for (i, c) in r.iter().enumerate() {
            widths[i] = widths[i].max(width(c));
        }
    }
    let line = |cells: Vec<&str>| -> String {
        let mut s = " ".repeat(indent);
        for (i, c) in cells.iter().enumerate() {
            let pad = widths[i] - width(c);
            let last = i + 1 == cells.len();
            match aligns[i] {
                Align::Left if last => s.push_str(c),
                Align::Left => {
                    s.push_str(c);
                    s.push_str(&" ".repeat(pad));
                }
                Align::Right => {
                    s.push_str(&" ".repeat(pad));
                    s.push_str(c);
                }
            }
            if !last {
                s.push_str("  ");
            }
        }
        s.truncate(s.trim_end().len());
        s.push('\n');
        s
    };
    let mut out = line(headers.to_vec());
    let rule: Vec<String> = widths.iter().map(|w| "-".repeat(*w)).collect();
    out.push_str(&line(rule.iter().map(String::as_str).collect()));
    for r in rows {
        out.push_str(&line(r.iter().map(String::as_str).collect()));
    }
    out
}

fn heading(out: &mut String, text: &str) {
    let _ = writeln!(out, "{text}\n{}", "=".repeat(text.chars().count()));
}

/// Concentrations in a run's table are shown in mM (4 significant figures).
fn mm(molar: f64) -> String {
    sig(molar * 1e3, 4)
}

fn run_block(out: &mut String, r: &RunReport, n: usize, of: usize, dec: usize) {
    heading(out, &format!("Run {n} of {of}: {}", r.name));
    if let Some(first) = &r.same_as {
        let _ = writeln!(out, "Same targets and recipe as run '{first}'.");
    }
    if let Some(note) = &r.note {
        let _ = writeln!(out, "Note: {note}");
    }
    let p = &r.portions;
    let (first, second) = if p.pour.starts_with('B') {
        ("B", "A")
    } else {
        ("A", "B")
    };
    for (label, items, total) in [("A", &p.a, p.a_ml), ("B", &p.b, p.b_ml)] {
        let mut rows: Vec<Vec<String>> = items
            .iter()
            .map(|i| {
                vec![
                    i.stock.clone(),
                    format!("{:.*}", dec, i.ml),
                    i.device.clone(),
                ]
            })
            .collect();
        rows.push(vec![
            format!("total in vessel {label}"),
            format!("{:.*}", dec, total),
            String::new(),
        ]);
        let _ = writeln!(out, "\nVessel {label}");
        out.push_str(&table(
            2,
            &["add", "volume (mL)", "deliver with"],
            &[Align::Left, Align::Right, Align::Left],
            &rows,
        ));
    }
    let _ = writeln!(out, "\nAt t = 0 pour vessel {first} into vessel {second}, swirl, and start the timer at the moment of mixing.\n");
    let rows: Vec<Vec<String>> = r
        .concentrations
        .0
        .iter()
        .map(|(sp, c)| {
            let t = r.targets.get(sp);
            vec![
                sp.clone(),
                t.map(mm).unwrap_or_else(|| "-".into()),
                mm(*c),
                r.deviation
                    .get(sp)
                    .map(|d| format!("{:+.2}", d * 100.0))
                    .unwrap_or_else(|| "-".into()),
                r.uncertainty
                    .get(sp)
                    .map(|u| format!("{:.2}", u * 100.0))
                    .unwrap_or_else(|| "-".into()),
            ]
        })
        .collect();
    out.push_str(&table(
        2,
        &[
            "species",
            "target (mM)",
            "final (mM)",
            "deviation (%)",
            "u (%)",
        ],
        &[
            Align::Left,
            Align::Right,
            Align::Right,
            Align::Right,
            Align::Right,
        ],
        &rows,
    ));
    let _ = writeln!(
        out,
        "  u: standard uncertainty (k = 1) from glassware tolerances and stock concentrations."
    );
    match (
        r.targets.get("ionic strength"),
        r.deviation.get("ionic strength"),
    ) {
        (Some(t), Some(d)) => {
            let _ = writeln!(
                out,
                "  ionic strength: {} mM (held at {} mM, {:+.2} %)",
                mm(r.ionic_strength),
                mm(t),
                d * 100.0
            );
        }
        _ => {
            let _ = writeln!(out, "  ionic strength: {} mM", mm(r.ionic_strength));
        }
    }
    if let Some(f) = &r.forecast {
        forecast_lines(out, f);
    }
    flag_lines(out, &r.flags, "  ");
    out.push('\n');
}

/// A time in seconds, or minutes past ten minutes.
pub(crate) fn secs(t: f64) -> String {
    if t >= 600.0 {
        format!("{:.1} min", t / 60.0)
    } else {
        format!("{t:.1} s")
    }
}

fn flag_lines(out: &mut String, flags: &[Flag], indent: &str) {
    for f in flags {
        let _ = writeln!(out, "{indent}FLAG [{}] {}", f.code, f.message);
    }
}

/// The forecast of one run, in sentences.
fn forecast_lines(out: &mut String, f: &ForecastReport) {
    match (f.time_s, f.band_s, f.clock_s, f.initial_rate_s) {
        (Some(t), Some([fast, slow]), Some(clock), Some(approx)) => {
            let _ = writeln!(
                out,
                "  Predicted time to {}: {} at {:.1} °C ({} to {} over {:.1} to {:.1} °C); an estimate, not a guarantee.",
                f.uses,
                secs(t),
                f.temperature_c,
                secs(slow),
                secs(fast),
                f.band_c[0],
                f.band_c[1]
            );
            let visible = f
                .visible_extra_s
                .map(|v| format!(" + {} to visible colour", secs(v)))
                .unwrap_or_default();
            let _ = writeln!(
                out,
                "  Clock {}{visible}; initial-rate estimate {} ({:+.1} %).",
                secs(clock),
                secs(approx),
                f.initial_rate_difference_pct.unwrap_or(0.0)
            );
            if let (Some(rate), Some(r0)) = (f.rate, f.initial_rate) {
                let _ = writeln!(out, "  Expected rate from that time: {rate:.3e} M/s (prior initial rate {r0:.3e} M/s).");
            }
            if let (Some(c), Some(s)) = (f.max_conversion, &f.max_conversion_species) {
                let _ = writeln!(
                    out,
                    "  Largest conversion at the clock: {s} {:.1} %.",
                    c * 100.0
                );
            }
            if let Some(u) = f.volumetric_uncertainty_pct {
                let _ = writeln!(
                    out,
                    "  Glassware and stocks alone make the time uncertain by {u:.2} % (k = 1)."
                );
            }
        }
        _ => {
            let _ = writeln!(out, "  No predicted time: see the flag below.");
        }
    }
    flag_lines(out, &f.warnings, "  ");
}

/// The prior rate law with every value's source.
fn reaction_section(out: &mut String, r: &ReactionReport, s: &ForecastSettingsReport) {
    heading(out, "Rate law prior");
    let _ = writeln!(
        out,
        "{}: rate species {}, timing species {} via {}; nu = {} mol {} per mol {}.",
        r.name,
        r.rate_species,
        r.timing_species,
        r.intermediate,
        sig(r.nu, 3),
        r.timing_species,
        r.rate_species
    );
    for t in &r.terms {
        let orders: Vec<String> = t
            .orders
            .0
            .iter()
            .map(|(sp, n)| format!("[{sp}]^{n}"))
            .collect();
        let ea = t
            .activation_energy
            .map(|e| format!(", Ea {e} kJ/mol"))
            .unwrap_or_else(|| ", no activation energy (no temperature scaling)".into());
        let _ = writeln!(
            out,
            "- k = {} {} at {:.1} °C{ea}; rate term k {}",
            t.k,
            t.k_unit,
            t.at_c,
            orders.join(" ")
        );
        if let Some(src) = &t.source {
            let _ = writeln!(out, "  source: {src}");
        }
    }
    if let Some(v) = r.visible_threshold {
        let _ = writeln!(
            out,
            "- visible at {} µM {}",
            sig(v * 1e6, 3),
            r.intermediate
        );
        if let Some(src) = &r.visible_source {
            let _ = writeln!(out, "  source: {src}");
        }
    }
    let period = s
        .lab_period_s
        .map(|p| format!("; lab period {}", secs(p)))
        .unwrap_or_default();
    let _ = writeln!(
        out,
        "Planned {:.1} °C ± {:.1} °C; timing window {} to {}; handling {} per trial{period}.",
        s.temperature_c,
        s.band_c,
        secs(s.window_s[0]),
        secs(s.window_s[1]),
        secs(s.handling_per_run_s)
    );
    let _ = writeln!(
        out,
        "This is a prior: calibrate it with a pilot run before relying on the times.\n"
    );
}

fn cautions(out: &mut String, lines: &[String]) {
    heading(out, "Cautions");
    for c in lines {
        let _ = writeln!(out, "- {c}");
    }
}

impl Exporter for Text {
    fn plan(&self, report: &PlanReport) -> Vec<u8> {
        let mut out = String::new();
        let dec = ml_decimals(report);
        heading(&mut out, &format!("Mixing sheet: {}", report.title));
        let _ = writeln!(out, "Spec: {}", report.spec);
        let mut line = format!(
            "Each run: {:.*} mL in two vessels | {} station(s) x {} replicate(s) | overage {} % | tolerance {} %",
            dec, report.total_volume_ml, report.stations, report.replicates, sig(report.overage_pct, 3), sig(report.tolerance_pct, 2)
        );
        if let Some(t) = report.temperature_c {
            let _ = write!(line, " | planned {t:.1} °C");
        }
        let _ = writeln!(out, "{line}");
        let t = &report.timing;
        let _ = writeln!(
            out,
            "Timing reagent: {} {} mM in every run = {:.*} mL of '{}' ({})",
            t.species,
            mm(t.concentration),
            dec,
            t.ml,
            t.stock,
            t.device
        );
        if let Some(i) = &report.ionic_strength {
            let _ = writeln!(
                out,
                "Ionic strength held at {} mM with '{}'",
                mm(i.held),
                i.using
            );
        }
        if report.flagged {
            let n = report.runs_needing_a_look();
            let what = match (n, report.warnings.is_empty()) {
                (0, _) => "the plan needs a look".to_string(),
                (1, true) => "1 run needs a look".to_string(),
                (n, true) => format!("{n} runs need a look"),
                (1, false) => "1 run and the plan need a look".to_string(),
                (n, false) => format!("{n} runs and the plan need a look"),
            };
            let _ = writeln!(out, "FLAGGED: {what}; see FLAG lines below.");
        }
        out.push('\n');

        heading(&mut out, "Volumes per run (mL)");
        let mut headers: Vec<&str> = vec!["run"];
        let stocks = report.volume_columns();
        headers.extend(stocks.iter().copied());
        let rows: Vec<Vec<String>> = report
            .runs
            .iter()
            .map(|r| {
                let mut row = vec![r.name.clone()];
                row.extend(stocks.iter().map(|s| format!("{:.*}", dec, r.volume_of(s))));
                row
            })
            .collect();
        let mut aligns = vec![Align::Left];
        aligns.extend(std::iter::repeat_n(Align::Right, stocks.len()));
        let mut rows = rows;
        if report.reaction.is_some() {
            headers.push("predicted (s)");
            aligns.push(Align::Right);
            for (row, r) in rows.iter_mut().zip(&report.runs) {
                row.push(
                    r.forecast
                        .as_ref()
                        .and_then(|f| f.time_s)
                        .map_or("-".into(), |t| format!("{t:.1}")),
                );
            }
        }
        out.push_str(&table(0, &headers, &aligns, &rows));
        out.push('\n');

        let of = report.runs.len();
        for (i, r) in report.runs.iter().enumerate() {
            run_block(&mut out, r, i + 1, of, dec);
        }

        heading(&mut out, "Stock to prepare");
        let _ = writeln!(
            out,
            "All runs x {} replicate(s) x {} station(s), plus {} % overage, rounded up to a volumetric flask.",
            report.replicates, report.stations, sig(report.overage_pct, 3)
        );
        let mut rows: Vec<Vec<String>> = report
            .stock_totals
            .iter()
            .map(|t| {
                vec![
                    t.stock.clone(),
                    format!("{:.1}", t.one_set_ml),
                    format!("{:.1}", t.per_station_ml),
                    format!("{:.1}", t.used_ml),
                    format!("{:.1}", t.ml),
                    format!("{} x {} mL", t.flask_count, t.flask_ml),
                ]
            })
            .collect();
        rows.push(vec![
            "water (make-up)".into(),
            String::new(),
            String::new(),
            format!("{:.1}", report.water_total_ml),
            String::new(),
            String::new(),
        ]);
        out.push_str(&table(
            0,
            &[
                "stock",
                "one set (mL)",
                "per station (mL)",
                "whole lab (mL)",
                "prepare (mL)",
                "flask",
            ],
            &[
                Align::Left,
                Align::Right,
                Align::Right,
                Align::Right,
                Align::Right,
                Align::Left,
            ],
            &rows,
        ));
        out.push('\n');

        if let (Some(r), Some(s)) = (&report.reaction, &report.forecast_settings) {
            reaction_section(&mut out, r, s);
        }
        cautions(&mut out, &report.cautions);
        out.into_bytes()
    }

    fn forecast(&self, sheet: &ForecastSheet) -> Vec<u8> {
        let mut out = String::new();
        heading(&mut out, &format!("Clock-time forecast: {}", sheet.title));
        let _ = writeln!(out, "Spec: {}", sheet.spec);
        let _ = writeln!(
            out,
            "Timing reagent: {} {} mM in every run. Times are estimates from a prior rate law, not guarantees.",
            sheet.timing.species,
            mm(sheet.timing.concentration)
        );
        if sheet.flagged {
            let _ = writeln!(out, "FLAGGED: see FLAG lines below.");
        }
        flag_lines(&mut out, &sheet.warnings, "");
        out.push('\n');
        let species: Vec<String> = sheet.runs[0]
            .concentrations
            .0
            .iter()
            .map(|(s, _)| format!("{s} (mM)"))
            .collect();
        let mut headers: Vec<&str> = vec!["run"];
        headers.extend(species.iter().map(String::as_str));
        headers.extend([
            "time (s)",
            "band (s)",
            "initial-rate est. (s)",
            "rate (M/s)",
            "max conversion",
        ]);
        let mut aligns = vec![Align::Left];
        aligns.extend(std::iter::repeat_n(Align::Right, headers.len() - 1));
        let rows: Vec<Vec<String>> = sheet
            .runs
            .iter()
            .map(|r| {
                let f = &r.forecast;
                let mut row = vec![r.name.clone()];
                row.extend(r.concentrations.0.iter().map(|(_, c)| mm(*c)));
                row.push(f.time_s.map_or("-".into(), |t| format!("{t:.1}")));
                row.push(
                    f.band_s
                        .map_or("-".into(), |[a, b]| format!("{a:.1}-{b:.1}")),
                );
                row.push(f.initial_rate_s.map_or("-".into(), |t| format!("{t:.1}")));
                row.push(f.rate.map_or("-".into(), |v| format!("{v:.3e}")));
                row.push(match (f.max_conversion, &f.max_conversion_species) {
                    (Some(c), Some(s)) => format!("{:.1} % {s}", c * 100.0),
                    _ => "-".into(),
                });
                row
            })
            .collect();
        out.push_str(&table(0, &headers, &aligns, &rows));
        out.push('\n');
        for r in &sheet.runs {
            if !r.forecast.warnings.is_empty() {
                let _ = writeln!(out, "{}:", r.name);
                flag_lines(&mut out, &r.forecast.warnings, "  ");
            }
        }
        if sheet.runs.iter().any(|r| !r.forecast.warnings.is_empty()) {
            out.push('\n');
        }
        reaction_section(&mut out, &sheet.reaction, &sheet.forecast_settings);
        cautions(&mut out, &sheet.cautions);
        out.into_bytes()
    }

    fn stocks(&self, sheet: &StockSheet) -> Vec<u8> {
        let mut out = String::new();
        heading(&mut out, &format!("Stock preparation: {}", sheet.title));
        let _ = writeln!(out, "Spec: {}", sheet.spec);
        let _ = writeln!(
            out,
            "For {} station(s) x {} replicate(s) of every run, plus {} % overage, in volumetric flasks.\n",
            sheet.stations, sheet.replicates, sig(sheet.overage_pct, 3)
        );
        let rows: Vec<Vec<String>> = sheet
            .stocks
            .iter()
            .map(|s| {
                let amount = match (s.recipe.grams, s.recipe.ml) {
                    (Some(g), _) => format!("{g:.4} g"),
                    (None, Some(v)) => format!("{v:.2} mL"),
                    _ => "-".into(),
                };
                vec![
                    s.name.clone(),
                    format!("{:.1}", s.need_ml),
                    format!("{} x {} mL", s.flask_count, s.flask_ml),
                    s.recipe.kind.to_string(),
                    amount,
                ]
            })
            .collect();
        out.push_str(&table(
            0,
            &["stock", "need (mL)", "flask", "recipe", "per flask"],
            &[
                Align::Left,
                Align::Right,
                Align::Left,
                Align::Left,
                Align::Right,
            ],
            &rows,
        ));
        out.push('\n');
        for s in &sheet.stocks {
            heading(&mut out, &s.name);
            let _ = writeln!(out, "{}", s.recipe.text);
            if s.drawn_ml > 0.0 {
                let _ = writeln!(
                    out,
                    "Includes {:.1} mL drawn to make other stocks.",
                    s.drawn_ml
                );
            }
            if let Some(st) = &s.stability {
                let _ = writeln!(out, "Stability: {st}.");
            }
            if let Some(h) = &s.hazards {
                let codes = if s.hazard_codes.is_empty() {
                    String::new()
                } else {
                    format!(" ({})", s.hazard_codes.join(", "))
                };
                let _ = writeln!(out, "Hazards{codes}: {h}.");
            }
            if let Some(src) = &s.data_source {
                let _ = writeln!(out, "Data: {src}; check the supplier's SDS.");
            }
            out.push('\n');
        }
        cautions(&mut out, &sheet.cautions);
        out.into_bytes()
    }
}
