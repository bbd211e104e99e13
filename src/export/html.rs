use super::text::secs;
use super::{ml_decimals, sig, Exporter};
use crate::export::chart;
use crate::flag::Flag;
use crate::report::{
    ForecastReport, ForecastSettingsReport, ForecastSheet, PlanReport, ReactionReport, StockSheet,
};
use maud::{html, Markup, DOCTYPE};

/// Printable HTML sheets (maud escapes every piece of user text).
pub struct Html;

/// Screen and print styles shared by every HTML sheet.
pub(crate) const STYLE: &str = r#"
body { font-family: "DejaVu Sans", Arial, sans-serif; font-size: 10.5pt; color: #111; margin: 1.5em; }
h1 { font-size: 16pt; margin: 0 0 0.3em 0; }
h2 { font-size: 12.5pt; margin: 1.2em 0 0.4em 0; border-bottom: 1px solid #999; }
table { border-collapse: collapse; margin: 0.3em 0 0.6em 0; }
th, td { border: 1px solid #bbb; padding: 2px 6px; text-align: left; vertical-align: top; }
td.n, th.n { text-align: right; font-variant-numeric: tabular-nums; }
.flag { color: #8b0000; font-weight: bold; }
.note { color: #333; font-style: italic; }
.cautions { border: 2px solid #111; padding: 0.4em 0.8em; margin-top: 1em; }
.cautions li { margin: 0.15em 0; }
section.run { break-inside: avoid; }
@media print { body { margin: 0; } h2 { break-after: avoid; } }
"#;

fn page(title: &str, body: Markup) -> Vec<u8> {
    let m = html! {
        (DOCTYPE)
        html lang="en" {
            head {
                meta charset="utf-8";
                title { (title) }
                style { (maud::PreEscaped(STYLE)) }
            }
            body { (body) }
        }
    };
    let mut out = m.into_string().into_bytes();
    out.push(b'\n');
    out
}

fn mm(molar: f64) -> String {
    sig(molar * 1e3, 4)
}

fn flags(list: &[Flag]) -> Markup {
    html! {
        @for f in list {
            p.flag { "Flag " code { (f.code) } ": " (f.message) }
        }
    }
}

pub(crate) fn cautions(lines: &[String]) -> Markup {
    html! {
        div.cautions {
            strong { "Cautions" }
            ul { @for c in lines { li { (c) } } }
        }
    }
}

fn forecast_p(f: &ForecastReport) -> Markup {
    html! {
        @if let (Some(t), Some([fast, slow]), Some(approx)) = (f.time_s, f.band_s, f.initial_rate_s) {
            p {
                "Predicted time to " (f.uses) ": " strong { (secs(t)) } " at " (format!("{:.1}", f.temperature_c)) " °C ("
                (secs(slow)) " to " (secs(fast)) " over " (format!("{:.1} to {:.1}", f.band_c[0], f.band_c[1])) " °C); initial-rate estimate "
                (secs(approx)) ". An estimate, not a guarantee."
            }
        }
        (flags(&f.warnings))
    }
}

fn prior(r: &ReactionReport, s: &ForecastSettingsReport) -> Markup {
    html! {
        h2 { "Rate law prior" }
        p {
            (r.name) ": rate species " (r.rate_species) ", timing species " (r.timing_species) " via " (r.intermediate)
            "; ν = " (sig(r.nu, 3)) ". Planned " (format!("{:.1}", s.temperature_c)) " °C ± " (format!("{:.1}", s.band_c))
            " °C; timing window " (secs(s.window_s[0])) " to " (secs(s.window_s[1])) "."
        }
        table {
            tr { th.n { "k" } th { "unit" } th.n { "at (°C)" } th.n { "Ea (kJ/mol)" } th { "orders" } th { "source" } }
            @for t in &r.terms {
                tr {
                    td.n { (t.k) } td { (t.k_unit) } td.n { (format!("{:.1}", t.at_c)) }
                    td.n { (t.activation_energy.map(|e| e.to_string()).unwrap_or_else(|| "-".into())) }
                    td { (t.orders.0.iter().map(|(sp, n)| format!("{sp} {n}")).collect::<Vec<_>>().join(", ")) }
                    td { (t.source.as_deref().unwrap_or("-")) }
                }
            }
        }
        p.note { "This is a prior: calibrate it with a pilot run before relying on the times." }
    }
}

impl Exporter for Html {
    fn plan(&self, r: &PlanReport) -> Vec<u8> {
        let dec = ml_decimals(r);
        let v = |x: f64| format!("{x:.dec$}");
        let chart_rows = r.chart_rows();
        let body = html! {
            h1 { "Mixing sheet: " (r.title) }
            p {
                "Each run: " (v(r.total_volume_ml)) " mL in two vessels; " (r.stations) " station(s) × " (r.replicates)
                " replicate(s); overage " (sig(r.overage_pct, 3)) " %; tolerance " (sig(r.tolerance_pct, 2)) " %."
                @if let Some(t) = r.temperature_c { " Planned " (format!("{t:.1}")) " °C." }
            }
            p {
                "Timing reagent: " (r.timing.species) " " (mm(r.timing.concentration)) " mM in every run = "
                (v(r.timing.ml)) " mL of " (r.timing.stock) " (" (r.timing.device) ")."
            }
            @if let Some(i) = &r.ionic_strength { p { "Ionic strength held at " (mm(i.held)) " mM with " (i.using) "." } }
            @if r.flagged { p.flag { "Flagged: some runs need a look; see the flags below." } }
            (flags(&r.warnings))
            @if let Some(s) = &r.forecast_settings {
                (chart::inline(&r.title, &chart_rows, (s.window_s[0], s.window_s[1]), s.band_c))
            }
            h2 { "Volumes per run (mL)" }
            @let columns = r.volume_columns();
            table {
                tr {
                    th { "run" }
                    @for col in &columns { th.n { (col) } }
                    @if r.reaction.is_some() { th.n { "predicted (s)" } }
                }
                @for run in &r.runs {
                    tr {
                        td { (run.name) }
                        @for col in &columns { td.n { (v(run.volume_of(col))) } }
                        @if r.reaction.is_some() {
                            td.n { (run.forecast.as_ref().and_then(|f| f.time_s).map_or("-".into(), |t| format!("{t:.1}"))) }
                        }
                    }
                }
            }
            @for (n, run) in r.runs.iter().enumerate() {
                section.run {
                    h2 { "Run " (n + 1) " of " (r.runs.len()) ": " (run.name) }
                    @if let Some(first) = &run.same_as { p.note { "Same targets and recipe as run " (first) "." } }
                    table {
                        tr { th { "vessel" } th { "add" } th.n { "volume (mL)" } th { "deliver with" } }
                        @for (label, items) in [("A", &run.portions.a), ("B", &run.portions.b)] {
                            @for i in items {
                                tr { td { (label) } td { (i.stock) } td.n { (v(i.ml)) } td { (i.device) } }
                            }
                        }
                    }
                    p { "At t = 0 pour vessel " (run.portions.pour.replace(" into ", " into vessel ")) " and start the timer at the moment of mixing." }
                    table {
                        tr { th { "species" } th.n { "target (mM)" } th.n { "final (mM)" } th.n { "deviation (%)" } th.n { "u (%), k = 1" } }
                        @for (sp, c) in &run.concentrations.0 {
                            tr {
                                td { (sp) }
                                td.n { (run.targets.get(sp).map(mm).unwrap_or_else(|| "-".into())) }
                                td.n { (mm(*c)) }
                                td.n { (run.deviation.get(sp).map(|d| format!("{:+.2}", d * 100.0)).unwrap_or_else(|| "-".into())) }
                                td.n { (run.uncertainty.get(sp).map(|u| format!("{:.2}", u * 100.0)).unwrap_or_else(|| "-".into())) }
                            }
                        }
                    }
                    p { "Ionic strength " (mm(run.ionic_strength)) " mM." }
                    @if let Some(f) = &run.forecast { (forecast_p(f)) }
                    (flags(&run.flags))
                }
            }
            h2 { "Stock to prepare" }
            table {
                tr { th { "stock" } th.n { "one set (mL)" } th.n { "per station (mL)" } th.n { "whole lab (mL)" } th.n { "prepare (mL)" } th { "flask" } }
                @for t in &r.stock_totals {
                    tr { td { (t.stock) } td.n { (format!("{:.1}", t.one_set_ml)) } td.n { (format!("{:.1}", t.per_station_ml)) } td.n { (format!("{:.1}", t.used_ml)) } td.n { (format!("{:.1}", t.ml)) } td { (t.flask_count) " × " (t.flask_ml) " mL" } }
                }
                tr { td { "water (make-up)" } td {} td {} td.n { (format!("{:.1}", r.water_total_ml)) } td {} td {} }
            }
            @if let (Some(re), Some(s)) = (&r.reaction, &r.forecast_settings) { (prior(re, s)) }
            (cautions(&r.cautions))
        };
        page(&format!("Mixing sheet: {}", r.title), body)
    }

    fn forecast(&self, s: &ForecastSheet) -> Vec<u8> {
        let rows = s.chart_rows();
        let set = &s.forecast_settings;
        let body = html! {
            h1 { "Clock-time forecast: " (s.title) }
            p { "Timing reagent: " (s.timing.species) " " (mm(s.timing.concentration)) " mM in every run. Times are estimates from a prior rate law, not guarantees." }
            (flags(&s.warnings))
            (chart::inline(&s.title, &rows, (set.window_s[0], set.window_s[1]), set.band_c))
            @for r in &s.runs {
                section.run {
                    h2 { (r.name) }
                    p { (r.concentrations.0.iter().map(|(sp, c)| format!("{sp} {} mM", mm(*c))).collect::<Vec<_>>().join(", ")) }
                    (forecast_p(&r.forecast))
                }
            }
            (prior(&s.reaction, set))
            (cautions(&s.cautions))
        };
        page(&format!("Clock-time forecast: {}", s.title), body)
    }

    fn stocks(&self, s: &StockSheet) -> Vec<u8> {
        let body = html! {
            h1 { "Stock preparation: " (s.title) }
            p { "For " (s.stations) " station(s) × " (s.replicates) " replicate(s) of every run, plus " (sig(s.overage_pct, 3)) " % overage, in volumetric flasks." }
            table {
                tr { th { "stock" } th.n { "need (mL)" } th { "flask" } th { "how, per flask" } th { "hazards (GHS)" } }
                @for st in &s.stocks {
                    tr {
                        td { (st.name) }
                        td.n { (format!("{:.1}", st.need_ml)) }
                        td { (st.flask_count) " × " (st.flask_ml) " mL" }
                        td { (st.recipe.text) }
                        td { (st.hazard_codes.join(", ")) }
                    }
                }
            }
            @for st in &s.stocks {
                @if let Some(stab) = &st.stability {
                    p { strong { (st.name) } ": " (stab) "." }
                }
            }
            (cautions(&s.cautions))
        };
        page(&format!("Stock preparation: {}", s.title), body)
    }
}
