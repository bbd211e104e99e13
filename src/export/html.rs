//! Printable HTML over the page model (maud escapes every piece of user text).

use crate::export::chart;
use crate::report::page::{Align, Block, Page};
use maud::{html, Markup, DOCTYPE};

/// Screen and print styles shared by every HTML sheet.
pub(crate) const STYLE: &str = r#"
body { font-family: "DejaVu Sans", Arial, sans-serif; font-size: 10.5pt; color: #111; margin: 1.5em; }
h1 { font-size: 16pt; margin: 0 0 0.3em 0; }
h2 { font-size: 12.5pt; margin: 1.2em 0 0.4em 0; border-bottom: 1px solid #999; }
h3 { font-size: 11pt; margin: 0.8em 0 0.2em 0; }
table { border-collapse: collapse; margin: 0.3em 0 0.6em 0; }
th, td { border: 1px solid #bbb; padding: 2px 6px; text-align: left; vertical-align: top; }
td.n, th.n { text-align: right; font-variant-numeric: tabular-nums; }
td.w { white-space: nowrap; }
p { margin: 0.25em 0; }
.flag { color: #8b0000; font-weight: bold; }
.instruction { font-weight: bold; margin: 0.5em 0; }
.cautions { border: 2px solid #111; padding: 0.4em 0.8em; margin-top: 1em; }
.cautions li { margin: 0.15em 0; }
pre { background: #f4f4f4; padding: 0.5em; white-space: pre-wrap; }
section { break-inside: avoid; }
@media print { body { margin: 0; } h2 { break-after: avoid; } }
"#;

pub(crate) fn cautions(lines: &[String]) -> Markup {
    html! {
        div.cautions {
            strong { "Cautions" }
            ul { @for c in lines { li { (c) } } }
        }
    }
}

fn block(b: &Block) -> Markup {
    html! {
        @match b {
            Block::Para(t) | Block::Detail(t) => p { (t) },
            Block::Subheading(t) => h3 { (t) },
            Block::Instruction(t) => p.instruction { (t) },
            Block::Table(t) => table {
                tr {
                    @for (h, a) in t.headers.iter().zip(&t.align) {
                        @if *a == Align::Right { th.n { (h) } } @else { th { (h) } }
                    }
                }
                @for r in &t.rows {
                    tr {
                        @for (c, a) in r.iter().zip(&t.align) {
                            td class=[cell_class(c, *a)] { (c) }
                        }
                    }
                }
            },
            Block::Flags { flags, .. } => {
                @for f in flags { p.flag { "Flag " code { (f.code) } ": " (f.message) } }
            },
            Block::Warnings(list) => {
                @for w in list { p.flag { "Warning: " (w) } }
            },
            Block::List(items) => ul {
                @for i in items {
                    li { (i.text) @for d in &i.details { br; (d) } }
                }
            },
            Block::Cautions(lines) => (cautions(lines)),
            Block::Chart(c) => (chart::inline(&c.title, &c.rows, c.window, c.band)),
            Block::Verbatim(t) => pre { (t) },
        }
    }
}

/// A page as one HTML document.
pub fn render(page: &Page) -> Vec<u8> {
    let m = html! {
        (DOCTYPE)
        html lang="en" {
            head {
                meta charset="utf-8";
                title { (page.title) }
                style { (maud::PreEscaped(STYLE)) }
            }
            body {
                @for (i, s) in page.sections.iter().enumerate() {
                    section {
                        @if let Some(h) = &s.heading {
                            @if i == 0 { h1 { (h) } } @else { h2 { (h) } }
                        }
                        @for b in &s.blocks { (block(b)) }
                    }
                }
            }
        }
    };
    let mut out =
        super::typeset::document(&m.into_string(), super::typeset::Style::Html).into_bytes();
    out.push(b'\n');
    out
}

/// A cell's classes: `n` for a right-aligned (numeric) column, `w` for a short single token
/// (a date, a number with no unit) that must not break at its hyphens.
fn cell_class(cell: &str, align: Align) -> Option<&'static str> {
    let whole = !cell.contains(' ') && cell.chars().count() <= 16;
    match (align == Align::Right, whole) {
        (true, true) => Some("n w"),
        (true, false) => Some("n"),
        (false, true) => Some("w"),
        (false, false) => None,
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn a_date_cell_does_not_break_at_its_hyphens() {
        // Was "2026-12-" / "07" in a narrow column of the printed stocks sheet.
        assert_eq!(cell_class("2026-12-07", Align::Left), Some("w"));
        assert_eq!(cell_class("715.0", Align::Right), Some("n w"));
        assert_eq!(cell_class("1 x 1000 mL + 1 x 250 mL", Align::Left), None);
    }
}
