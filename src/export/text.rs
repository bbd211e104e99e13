use super::{ml_decimals, sig, Exporter};
use crate::report::{PlanReport, RunReport};
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
            ]
        })
        .collect();
    out.push_str(&table(
        2,
        &["species", "target (mM)", "final (mM)", "deviation (%)"],
        &[Align::Left, Align::Right, Align::Right, Align::Right],
        &rows,
    ));
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
    for f in &r.flags {
        let _ = writeln!(out, "  FLAG [{}] {}", f.code, f.message);
    }
    out.push('\n');
}

impl Exporter for Text {
    fn export(&self, report: &PlanReport) -> Vec<u8> {
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
            let n = report.runs.iter().filter(|r| !r.flags.is_empty()).count();
            let _ = writeln!(
                out,
                "FLAGGED: {n} run(s) need a look; see FLAG lines below."
            );
        }
        out.push('\n');

        heading(&mut out, "Volumes per run (mL)");
        let mut headers: Vec<&str> = vec!["run"];
        let stocks: Vec<&str> = report.runs[0]
            .volumes
            .iter()
            .map(|v| v.stock.as_str())
            .collect();
        headers.extend(stocks.iter().copied());
        let rows: Vec<Vec<String>> = report
            .runs
            .iter()
            .map(|r| {
                let mut row = vec![r.name.clone()];
                row.extend(r.volumes.iter().map(|v| format!("{:.*}", dec, v.ml)));
                row
            })
            .collect();
        let mut aligns = vec![Align::Left];
        aligns.extend(std::iter::repeat_n(Align::Right, stocks.len()));
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
            format!("{:.1}", report.water_total_ml),
            String::new(),
            String::new(),
        ]);
        out.push_str(&table(
            0,
            &[
                "stock",
                "one set (mL)",
                "whole lab (mL)",
                "prepare (mL)",
                "flask",
            ],
            &[
                Align::Left,
                Align::Right,
                Align::Right,
                Align::Right,
                Align::Left,
            ],
            &rows,
        ));
        out.push('\n');

        heading(&mut out, "Cautions");
        for c in &report.cautions {
            let _ = writeln!(out, "- {c}");
        }
        out.into_bytes()
    }
}
