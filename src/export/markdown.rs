use super::text::secs;
use super::{ml_decimals, sig, Exporter};
use crate::flag::Flag;
use crate::report::{
    ForecastReport, ForecastSettingsReport, ForecastSheet, PlanReport, ReactionReport, StockSheet,
};
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

fn flags(out: &mut String, flags: &[Flag]) {
    for f in flags {
        let _ = writeln!(out, "- **Flag `{}`:** {}", f.code, esc(&f.message));
    }
    if !flags.is_empty() {
        out.push('\n');
    }
}

fn forecast_text(out: &mut String, f: &ForecastReport) {
    if let (Some(t), Some([fast, slow]), Some(approx)) = (f.time_s, f.band_s, f.initial_rate_s) {
        let _ = writeln!(
            out,
            "Predicted time to {}: **{}** at {:.1} °C ({} to {} over {:.1} to {:.1} °C; initial-rate estimate {}). An estimate, not a guarantee.\n",
            f.uses, secs(t), f.temperature_c, secs(slow), secs(fast), f.band_c[0], f.band_c[1], secs(approx)
        );
        if let (Some(rate), Some(c), Some(s)) =
            (f.rate, f.max_conversion, &f.max_conversion_species)
        {
            let _ = writeln!(
                out,
                "Expected rate {rate:.3e} M/s; largest conversion at the clock {} {:.1} %.\n",
                esc(s),
                c * 100.0
            );
        }
    }
    flags(out, &f.warnings);
}

fn reaction_text(out: &mut String, r: &ReactionReport, s: &ForecastSettingsReport) {
    let _ = writeln!(out, "## Rate law prior\n");
    let _ = writeln!(
        out,
        "{}: rate species {}, timing species {} via {}; ν = {}. Planned {:.1} °C ± {:.1} °C; timing window {} to {}.\n",
        esc(&r.name), esc(&r.rate_species), esc(&r.timing_species), esc(&r.intermediate), sig(r.nu, 3), s.temperature_c, s.band_c, secs(s.window_s[0]), secs(s.window_s[1])
    );
    let _ = writeln!(
        out,
        "| k | unit | at (°C) | Ea (kJ/mol) | orders | source |\n|---:|---|---:|---:|---|---|"
    );
    for t in &r.terms {
        let orders: Vec<String> = t
            .orders
            .0
            .iter()
            .map(|(sp, n)| format!("{} {n}", esc(sp)))
            .collect();
        let _ = writeln!(
            out,
            "| {} | {} | {:.1} | {} | {} | {} |",
            t.k,
            esc(&t.k_unit),
            t.at_c,
            t.activation_energy
                .map(|e| e.to_string())
                .unwrap_or_else(|| "-".into()),
            orders.join(", "),
            esc(t.source.as_deref().unwrap_or("-"))
        );
    }
    let _ = writeln!(
        out,
        "\nThis is a prior: calibrate it with a pilot run before relying on the times.\n"
    );
}

fn cautions(out: &mut String, lines: &[String]) {
    let _ = writeln!(out, "## Cautions\n");
    for c in lines {
        let _ = writeln!(out, "- {}", esc(c));
    }
}

impl Exporter for Markdown {
    fn forecast(&self, sheet: &ForecastSheet) -> Vec<u8> {
        let mut out = String::new();
        let _ = writeln!(out, "# Clock-time forecast: {}\n", esc(&sheet.title));
        let _ = writeln!(out, "Timing reagent: {} {} mM in every run. Times are estimates from a prior rate law, not guarantees.\n", esc(&sheet.timing.species), mm(sheet.timing.concentration));
        flags(&mut out, &sheet.warnings);
        for r in &sheet.runs {
            let conc: Vec<String> = r
                .concentrations
                .0
                .iter()
                .map(|(s, c)| format!("{} {} mM", esc(s), mm(*c)))
                .collect();
            let _ = writeln!(out, "## {}\n\n{}\n", esc(&r.name), conc.join(", "));
            forecast_text(&mut out, &r.forecast);
        }
        reaction_text(&mut out, &sheet.reaction, &sheet.forecast_settings);
        cautions(&mut out, &sheet.cautions);
        out.into_bytes()
    }

    fn plan(&self, report: &PlanReport) -> Vec<u8> {
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
        flags(&mut out, &report.warnings);

        let _ = writeln!(out, "## Volumes per run (mL)\n");
        let columns = report.volume_columns();
        let mut stocks: Vec<String> = columns.iter().map(|s| esc(s)).collect();
        let forecast = report.reaction.is_some();
        if forecast {
            stocks.push("predicted (s)".into());
        }
        let _ = writeln!(out, "| run | {} |", stocks.join(" | "));
        let _ = writeln!(out, "|---|{}", "---:|".repeat(stocks.len()));
        for r in &report.runs {
            let mut cells: Vec<String> = columns
                .iter()
                .map(|s| format!("{:.*}", dec, r.volume_of(s)))
                .collect();
            if forecast {
                cells.push(
                    r.forecast
                        .as_ref()
                        .and_then(|f| f.time_s)
                        .map_or("-".into(), |t| format!("{t:.1}")),
                );
            }
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
                "| species | target (mM) | final (mM) | deviation (%) | u (%), k = 1 |\n|---|---:|---:|---:|---:|"
            );
            for (sp, c) in &r.concentrations.0 {
                let target = r.targets.get(sp).map(mm).unwrap_or_else(|| "-".into());
                let dev = r
                    .deviation
                    .get(sp)
                    .map(|d| format!("{:+.2}", d * 100.0))
                    .unwrap_or_else(|| "-".into());
                let u = r
                    .uncertainty
                    .get(sp)
                    .map(|u| format!("{:.2}", u * 100.0))
                    .unwrap_or_else(|| "-".into());
                let _ = writeln!(out, "| {} | {target} | {} | {dev} | {u} |", esc(sp), mm(*c));
            }
            let _ = writeln!(out, "\nIonic strength: {} mM.\n", mm(r.ionic_strength));
            if let Some(f) = &r.forecast {
                forecast_text(&mut out, f);
            }
            flags(&mut out, &r.flags);
        }

        let _ = writeln!(out, "## Stock to prepare\n");
        let _ = writeln!(out, "| stock | one set (mL) | per station (mL) | whole lab (mL) | prepare (mL) | flask |\n|---|---:|---:|---:|---:|---|");
        for t in &report.stock_totals {
            let _ = writeln!(
                out,
                "| {} | {:.1} | {:.1} | {:.1} | {:.1} | {} × {} mL |",
                esc(&t.stock),
                t.one_set_ml,
                t.per_station_ml,
                t.used_ml,
                t.ml,
                t.flask_count,
                t.flask_ml
            );
        }
        let _ = writeln!(
            out,
            "| water (make-up) | | | {:.1} | | |\n",
            report.water_total_ml
        );

        if let (Some(r), Some(st)) = (&report.reaction, &report.forecast_settings) {
            reaction_text(&mut out, r, st);
        }
        cautions(&mut out, &report.cautions);
        out.into_bytes()
    }

    fn stocks(&self, sheet: &StockSheet) -> Vec<u8> {
        let mut out = String::new();
        let _ = writeln!(out, "# Stock preparation: {}\n", esc(&sheet.title));
        let _ = writeln!(
            out,
            "For {} station(s) × {} replicate(s) of every run, plus {} % overage.\n",
            sheet.stations,
            sheet.replicates,
            sig(sheet.overage_pct, 3)
        );
        let _ = writeln!(
            out,
            "| stock | need (mL) | flask | how | hazards |\n|---|---:|---|---|---|"
        );
        for s in &sheet.stocks {
            let _ = writeln!(
                out,
                "| {} | {:.1} | {} × {} mL | {} | {} |",
                esc(&s.name),
                s.need_ml,
                s.flask_count,
                s.flask_ml,
                esc(&s.recipe.text),
                esc(&s.hazard_codes.join(", "))
            );
        }
        out.push('\n');
        for s in &sheet.stocks {
            if let Some(st) = &s.stability {
                let _ = writeln!(out, "- **{}**: {}.", esc(&s.name), esc(st));
            }
        }
        out.push('\n');
        cautions(&mut out, &sheet.cautions);
        out.into_bytes()
    }
}
