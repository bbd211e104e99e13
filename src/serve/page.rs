//! The page itself: the frame around the editor and the sheets (maud), and the form read off
//! the spec. The sheets in the panes are the CLI's own HTML, put in place by the script.

use super::compute::Located;
use super::form::{Field, Form, Grid, Group, Path, Seg, Shown};
use maud::{html, Markup, DOCTYPE};

/// The page's tabs: (pane id, tab label).
pub const TABS: [(&str, &str); 8] = [
    ("mixing", "Mixing sheet"),
    ("stocks", "Stock bottles"),
    ("forecast", "Timing forecast"),
    ("glassware", "Bench glassware"),
    ("fit", "Pilot fit"),
    ("design", "Run design"),
    ("tune", "Timing tune"),
    ("print", "Print & export"),
];

/// The units offered beside a number (any unit the spec reads may be typed).
const UNITS: [&str; 17] = [
    "mL", "L", "µL", "M", "mM", "µM", "mol/L", "°C", "K", "s", "min", "h", "%", "g", "mg", "g/mL",
    "kJ/mol",
];

/// The cautions on the page, as on every printed sheet.
pub const CAUTIONS: &str = "Oxidisers, acids and a suspected carcinogen (potassium bromate) are handled here: wear goggles and gloves, read each reagent's SDS, and collect the waste as your institution's rules say. Local rules and your safety officer have the last word. Forecast times are estimates from a prior rate law, never guarantees: time a pilot run first.";

/// The whole page, with the spec's text in the TOML editor.
pub fn shell(name: &str, text: &str, token: &str, can_save: bool) -> String {
    let m: Markup = html! {
        (DOCTYPE)
        html lang="en" {
            head {
                meta charset="utf-8";
                meta name="viewport" content="width=device-width, initial-scale=1";
                meta name="clockprep-token" content=(token);
                title { "clockprep: " (name) }
                link rel="stylesheet" href="/assets/page.css";
                script src="/assets/page.js" defer {}
            }
            body {
                header.top {
                    span.brand { "clockprep" }
                    span.file title="the spec this page edits" { (name) }
                    span #status .status role="status" aria-live="polite" { "starting" }
                    span.actions {
                        @if can_save {
                            button #save type="button" title="write the spec back to its file (the previous version is kept as a ~ copy)" { "Save" }
                        }
                        button #download-spec type="button" { "Download spec" }
                    }
                    span #save-message .save-message role="status" {}
                }
                main.split {
                    section.editor aria-label="the spec" {
                        nav.tabs role="tablist" {
                            button.tab.on type="button" data-tab="form" { "Form" }
                            button.tab type="button" data-tab="toml" { "TOML text" }
                        }
                        div #form .editpane data-pane="form" {}
                        div.editpane.hidden data-pane="toml" {
                            textarea #toml spellcheck="false" aria-label="the spec as TOML" { (text) }
                        }
                    }
                    section.sheets aria-label="the sheets" {
                        nav.tabs role="tablist" {
                            @for (id, label) in TABS {
                                button.tab.on[id == "mixing"] type="button" data-tab=(id) { (label) }
                            }
                        }
                        div #refusal .refusal.hidden role="alert" {}
                        div #changed .changed.hidden {}
                        div #panes {
                            @for (id, _) in TABS {
                                @if id == "print" {
                                    div.sheetpane.hidden data-pane="print" { (print_pane()) }
                                } @else {
                                    div.sheetpane.hidden[id != "mixing"] data-pane=(id) {
                                        div.suggest data-for=(id) {}
                                        @if id == "fit" {
                                            p.upload {
                                                label { "Pilot times (CSV): " input #times type="file" accept=".csv,text/csv"; }
                                            }
                                        }
                                        div.note {}
                                        div.sheet #{"pane-" (id)} {}
                                    }
                                }
                            }
                        }
                    }
                }
                footer.cautions { strong { "Cautions. " } (CAUTIONS) }
                datalist #units { @for u in UNITS { option value=(u) {} } }
            }
        }
    };
    m.into_string()
}

fn out_form(file: &str, label: &str, extra: Markup) -> Markup {
    html! {
        form.out method="post" action={"/out/" (file)} target="_blank" {
            input type="hidden" name="spec";
            input type="hidden" name="times_name";
            input type="hidden" name="times_csv";
            (extra)
            button type="submit" { (label) }
        }
    }
}

fn paper() -> Markup {
    html! {
        select name="paper" aria-label="paper" { option value="a4" { "A4" } option value="letter" { "Letter" } }
    }
}

/// Print-ready pages and downloads: each a form that posts the page's spec.
fn print_pane() -> Markup {
    html! {
        div.print {
            h2 { "Print" }
            p { "Each opens in a new tab as the same page the command line prints; print it from there. PDF needs Chromium on the machine running clockprep." }
            div.row {
                (out_form("cards.html", "Station cards", html! { (paper()) input type="hidden" name="per" value="station"; }))
                (out_form("cards.pdf", "Station cards PDF", html! { (paper()) input type="hidden" name="per" value="station"; }))
                (out_form("cards.html", "Run cards", html! { (paper()) input type="hidden" name="per" value="run"; }))
                (out_form("cards.pdf", "Run cards PDF", html! { (paper()) input type="hidden" name="per" value="run"; }))
            }
            div.row {
                (out_form("labels.html", "Bottle labels", paper()))
                (out_form("labels.pdf", "Bottle labels PDF", paper()))
            }
            div.row {
                @for (f, l) in [("mixing", "Mixing sheet"), ("stocks", "Stock sheet"), ("forecast", "Forecast sheet")] {
                    (out_form(&format!("{f}.html"), l, html! {}))
                    (out_form(&format!("{f}.pdf"), &format!("{l} PDF"), html! {}))
                }
            }
            h2 { "Download" }
            div.row {
                (out_form("workbook.xlsx", "Workbook (.xlsx)", html! {}))
                (out_form("spec.toml", "Spec (.toml)", html! {}))
            }
            div.row {
                @for f in ["mixing", "stocks", "forecast"] {
                    (out_form(&format!("{f}.csv"), &format!("{f} CSV"), html! {}))
                    (out_form(&format!("{f}.json"), &format!("{f} JSON"), html! {}))
                }
            }
            div.row {
                @for f in ["fit", "design", "tune"] {
                    (out_form(&format!("{f}.json"), &format!("{f} JSON"), html! {}))
                    (out_form(&format!("{f}.toml"), &format!("{f} TOML"), html! {}))
                }
            }
        }
    }
}

fn path_json(p: &Path) -> String {
    serde_json::to_string(p).unwrap_or_default()
}

fn joined(a: &Path, b: &[Seg]) -> Path {
    a.iter().chain(b).cloned().collect()
}

fn is_under(p: &Path, base: &Path) -> bool {
    p.len() >= base.len() && p[..base.len()] == base[..]
}

/// The message beside a field, when the refusal concerns it.
fn message(error: Option<&Located>, path: &Path) -> Markup {
    html! {
        @if let Some(e) = error.filter(|e| e.field.as_ref() == Some(path)) {
            div.msg role="alert" {
                strong { (e.message) }
                @if let Some(h) = &e.help { br; "Fix: " (h) }
                @if let Some(p) = &e.place { br; small { (p) } }
            }
        }
    }
}

fn input(f: &Field, compact: bool) -> Markup {
    let label = if compact {
        f.label.split(" · ").last().unwrap_or(&f.label).to_string()
    } else {
        f.label.clone()
    };
    html! {
        @match &f.shown {
            Shown::Quantity { number, unit } => span.q {
                input.num type="text" inputmode="decimal" value=(number) aria-label={(label) " (number)"};
                input.unit type="text" list="units" value=(unit) aria-label={(label) " (unit)"};
            },
            Shown::Bool(b) => input.value type="checkbox" checked[*b] aria-label=(label);,
            Shown::Number(v) => input.value.short type="text" inputmode="decimal" value=(v) aria-label=(label);,
            Shown::Text(v) | Shown::Literal(v) => input.value.wide[!compact] type="text" value=(v) aria-label=(label) data-literal=[matches!(f.shown, Shown::Literal(_)).then_some("1")];,
        }
    }
}

fn group(g: &Group, error: Option<&Located>) -> Markup {
    let title = if g.path.is_empty() {
        "top-level settings".to_string()
    } else {
        format!("[{}]", g.name)
    };
    html! {
        fieldset.group data-path=(path_json(&g.path)) .bad[error.and_then(|e| e.field.as_ref()).is_some_and(|p| p == &g.path)] {
            legend { (title) }
            (message(error, &g.path))
            @for f in &g.fields {
                div.field.bad[error.and_then(|e| e.field.as_ref()) == Some(&f.path)] data-path=(path_json(&f.path)) {
                    label { (f.label) }
                    (input(f, false))
                    @if let Some(h) = &f.hint { small.hint { (h) } }
                    (message(error, &f.path))
                }
            }
        }
    }
}

fn column_label(c: &Path) -> String {
    c.iter()
        .map(|s| match s {
            Seg::Key(k) => k.clone(),
            Seg::Index(i) => (i + 1).to_string(),
        })
        .collect::<Vec<_>>()
        .join(" · ")
}

fn grid(g: &Grid, error: Option<&Located>) -> Markup {
    let bad = error.and_then(|e| e.field.as_ref());
    let singular = g.name.rsplit('.').next().unwrap_or(&g.name);
    html! {
        fieldset.group.gridbox data-path=(path_json(&g.path)) {
            legend { "[[" (g.name) "]] " small { (g.rows.len()) " row(s)" } }
            div.scroll {
                table.grid {
                    thead { tr { th { "#" } @for c in &g.columns { th { (column_label(c)) } } th {} } }
                    tbody {
                        @for (i, r) in g.rows.iter().enumerate() {
                            @let row_path = joined(&g.path, &[Seg::Index(i)]);
                            tr.bad[bad.is_some_and(|p| is_under(p, &row_path))] data-path=(path_json(&row_path)) {
                                td.n { (i + 1) }
                                @for (c, cell) in g.columns.iter().zip(&r.cells) {
                                    @let p = joined(&row_path, c);
                                    td.field.bad[bad == Some(&p)] data-path=(path_json(&p)) {
                                        @match cell {
                                            Some(f) => (input(f, true)),
                                            None => input.value type="text" value="" aria-label=(column_label(c)) placeholder="—";,
                                        }
                                    }
                                }
                                td { button.remove type="button" data-op="remove_row" data-path=(path_json(&g.path)) data-index=(i) title={"remove " (singular) " " (i + 1)} { "Remove" } }
                            }
                            @if let Some(e) = error.filter(|e| e.field.as_ref().is_some_and(|p| is_under(p, &row_path))) {
                                tr.errrow { td colspan=(g.columns.len() + 2) {
                                    div.msg role="alert" {
                                        strong { (e.message) }
                                        @if let Some(h) = &e.help { br; "Fix: " (h) }
                                        @if let Some(p) = &e.place { br; small { (p) } }
                                    }
                                } }
                            }
                        }
                    }
                }
            }
            button.add type="button" data-op="add_row" data-path=(path_json(&g.path)) { "Add a " (singular) " (copy of the last)" }
        }
    }
}

/// The form of a spec, with the refusal (if any) beside the field it concerns.
pub fn form(f: &Form, error: Option<&Located>) -> String {
    let m = html! {
        p.formhelp { "Change a value and leave the field (or press Enter): the sheets follow. Clear a value to drop the setting. New tables and keys go in the TOML text." }
        @for (is_grid, i) in &f.order {
            @if *is_grid { (grid(&f.grids[*i], error)) } @else { (group(&f.groups[*i], error)) }
        }
    };
    m.into_string()
}

/// A diff of two texts, line by line, for "what changed".
pub fn changed(before: &str, after: &str) -> String {
    let diff = similar::TextDiff::from_lines(before, after);
    let m = html! {
        @for group in diff.grouped_ops(1) {
            pre.diff {
                @for op in group {
                    @for c in diff.iter_changes(&op) {
                        @match c.tag() {
                            similar::ChangeTag::Delete => del { "- " (c.value()) },
                            similar::ChangeTag::Insert => ins { "+ " (c.value()) },
                            similar::ChangeTag::Equal => span { "  " (c.value()) },
                        }
                    }
                }
            }
        }
    };
    m.into_string()
}

/// The page's stylesheet and script, shipped in the binary (no build step, no network).
pub const CSS: &str = include_str!("assets/page.css");
pub const JS: &str = include_str!("assets/page.js");
