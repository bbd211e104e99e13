use super::{ml_decimals, sig, Exporter};
use crate::report::PlanReport;
use std::fmt::Write;

/// The mixing sheet as Markdown (for a course wiki or a printed handout).
pub struct Markdown;

/// Escape the characters that would change a Markdown table or emphasis.
fn esc(s: &str) -> String {
    let mut out = String::with_capacity(s.len());
    for c in s.chars() {
        if matches!(
            c,
            '|' | '*' | '_' | '`' | '[' | ']' | '<' | '>' | '\\' | '#'
        ) {
            out.push('\\');
        }
        out.push(c);
    }
    out
}

fn mm(molar: f64) -> String {
    sig(molar * 1e3, 4)
}

impl Exporter for Markdown {
    fn export(&self, report: &PlanReport) -> Vec<u8> {
        let dec = ml_decimals(report);
        let mut out = String::new();
        let _ = writeln!(out, "# Mixing sheet: {}\n", esc(&report.title));
        let _ = writeln!(
            out,
            "Each run: **{:.*} mL** in two vessels; {} station(s) × {} replicate(s); overage {} %; tolerance {} %.\n",
            dec, report.total_volume_ml, report.stations, report.replicates, sig(report.overage_pct, 3), sig(report.tolerance_pct, 2)
        );
        let t = &report.timing;
        let _ = writeln!(
            out,
            "Timing reagent: {} {} mM in every run = {:.*} mL of {} ({}).\n",
            esc(&t.species),
            mm(t.concentration),
            dec,
            t.ml,
            esc(&t.stock),
            esc(&t.device)
        );
        if let Some(i) = &report.ionic_strength {
            let _ = writeln!(
                out,
                "Ionic strength held at {} mM with {}.\n",
                mm(i.held),
                esc(&i.using)
            );
        }
        if report.flagged {
            let _ = writeln!(
                out,
                "> **Flagged:** some runs need a look; see the flags under each run.\n"
            );
        }

        let _ = writeln!(out, "## Volumes per run (mL)\n");
        let stocks: Vec<String> = report.runs[0]
            .volumes
            .iter()
            .map(|v| esc(&v.stock))
            .collect();
        let _ = writeln!(out, "| run | {} |", stocks.join(" | "));
        let _ = writeln!(out, "|---|{}", "---:|".repeat(stocks.len()));
        for r in &report.runs {
            let cells: Vec<String> = r
                .volumes
                .iter()
                .map(|v| format!("{:.*}", dec, v.ml))
                .collect();
            let _ = writeln!(out, "| {} | {} |", esc(&r.name), cells.join(" | "));
        }
        out.push('\n');

        for (n, r) in report.runs.iter().enumerate() {
            let _ = writeln!(
                out,
                "## Run {} of {}: {}\n",
                n + 1,
                report.runs.len(),
                esc(&r.name)
            );
            if let Some(first) = &r.same_as {
                let _ = writeln!(out, "Same targets and recipe as run {}.\n", esc(first));
            }
            let p = &r.portions;
            let _ = writeln!(
                out,
                "| vessel | add | volume (mL) | deliver with |\n|---|---|---:|---|"
            );
            for (label, items) in [("A", &p.a), ("B", &p.b)] {
                for i in items {
                    let _ = writeln!(
                        out,
                        "| {label} | {} | {:.*} | {} |",
                        esc(&i.stock),
                        dec,
                        i.ml,
                        esc(&i.device)
                    );
                }
            }
            let (first, second) = if p.pour.starts_with('B') {
                ("B", "A")
            } else {
                ("A", "B")
            };
            let _ = writeln!(out, "\nAt t = 0 pour vessel {first} ({:.*} mL) into vessel {second} ({:.*} mL) and start the timer at the moment of mixing.\n",
                dec, if first == "A" { p.a_ml } else { p.b_ml }, dec, if first == "A" { p.b_ml } else { p.a_ml });
            let _ = writeln!(
                out,
                "| species | target (mM) | final (mM) | deviation (%) |\n|---|---:|---:|---:|"
            );
            for (sp, c) in &r.concentrations.0 {
                let target = r.targets.get(sp).map(mm).unwrap_or_else(|| "-".into());
                let dev = r
                    .deviation
                    .get(sp)
                    .map(|d| format!("{:+.2}", d * 100.0))
                    .unwrap_or_else(|| "-".into());
                let _ = writeln!(out, "| {} | {target} | {} | {dev} |", esc(sp), mm(*c));
            }
            let _ = writeln!(out, "\nIonic strength: {} mM.\n", mm(r.ionic_strength));
            for f in &r.flags {
                let _ = writeln!(out, "- **Flag `{}`:** {}", f.code, esc(&f.message));
            }
            if !r.flags.is_empty() {
                out.push('\n');
            }
        }

        let _ = writeln!(out, "## Stock to prepare\n");
        let _ = writeln!(out, "| stock | one set (mL) | whole lab (mL) | prepare (mL) | flask |\n|---|---:|---:|---:|---|");
        for t in &report.stock_totals {
            let _ = writeln!(
                out,
                "| {} | {:.1} | {:.1} | {:.1} | {} × {} mL |",
                esc(&t.stock),
                t.per_station_ml,
                t.used_ml,
                t.ml,
                t.flask_count,
                t.flask_ml
            );
        }
        let _ = writeln!(
            out,
            "| water (make-up) | | {:.1} | | |\n",
            report.water_total_ml
        );

        let _ = writeln!(out, "## Cautions\n");
        for c in &report.cautions {
            let _ = writeln!(out, "- {}", esc(c));
        }
        out.into_bytes()
    }
}
