//! Bottle labels for the stocks, as printable HTML on a common label-sheet grid: A4 with 3 × 8
//! labels of 70 × 37 mm (no margins), US Letter with 2 × 5 labels of 4 × 2 in (0.5 in top and
//! 0.16 in side margins) (both common office label sheets, common practice). One label per flask
//! made up, for every batch (lab sections: a stock made fresh each day has a label per flask per
//! day, with the planned day). Each says the stock, what is in it, blanks for the date made, the maker and the
//! use-by date (with the rule from the reagent data), the GHS signal word and hazard codes, and
//! the cautions (goggles, gloves, SDS, waste, local rules).

use super::cards::Paper;
use crate::report::StockSheet;
use maud::{html, PreEscaped, DOCTYPE};

/// The grid: columns, rows, label width and height, top and left margins (mm).
fn grid(paper: Paper) -> (usize, usize, f64, f64, f64, f64) {
    match paper {
        Paper::A4 => (3, 8, 70.0, 37.0, 0.5, 0.0),
        Paper::Letter => (2, 5, 101.6, 50.8, 12.7, 4.0),
    }
}

/// The labels of a stocks sheet as one HTML document.
pub fn labels(sheet: &StockSheet, paper: Paper) -> Vec<u8> {
    let (cols, rows, w, h, top, left) = grid(paper);
    let per_page = cols * rows;
    let mut items = Vec::new();
    for (s, c) in sheet.stocks.iter().zip(&sheet.checklist) {
        for _ in 0..s.flask_count.max(1) {
            items.push((s, c));
        }
    }
    let size = match paper {
        Paper::A4 => "A4",
        Paper::Letter => "letter",
    };
    let style = format!(
        r#"@page {{ size: {size}; margin: 0; }}
* {{ box-sizing: border-box; }}
body {{ margin: 0; font-family: "DejaVu Sans", Arial, sans-serif; color: #000; }}
.sheet {{ padding: {top}mm 0 0 {left}mm; display: grid; grid-template-columns: repeat({cols}, {w}mm); grid-auto-rows: {h}mm; break-after: page; page-break-after: always; }}
.sheet:last-child {{ break-after: auto; page-break-after: auto; }}
.label {{ width: {w}mm; height: {h}mm; padding: 2mm 3mm; overflow: hidden; border: 0.3pt dotted #999; font-size: 8pt; line-height: 1.2; }}
.name {{ font-size: 11pt; font-weight: bold; }}
.signal {{ font-weight: bold; }}
"#
    );
    let doc = html! {
        (DOCTYPE)
        html lang="en" {
            head {
                meta charset="utf-8";
                title { "Bottle labels: " (sheet.title) }
                style { (PreEscaped(style)) }
            }
            body {
                @for page in items.chunks(per_page) {
                    div.sheet {
                        @for (s, c) in page {
                            div.label {
                                div.name { (s.name) }
                                div { (s.solute.clone().unwrap_or_default()) @if let Some(m) = s.molar_mass { " (" (format!("{m:.2}")) " g/mol)" } }
                                @if let Some(d) = &c.made_on {
                                    div { "Made: ________ (plan " (d) ")  by: ______" }
                                    div { "Use by: " (c.use_by_date.clone().unwrap_or_else(|| "________".into())) " (" (c.use_by) ")" }
                                } @else {
                                    div { "Made: ________  by: ______" }
                                    div { "Use by: ________ (" (c.use_by) ")" }
                                }
                                @if s.hazard_codes.is_empty() {
                                    div { "No GHS classification in our data" }
                                } @else {
                                    div {
                                        span.signal { (crate::reference::reagents::signal_word(&s.hazard_codes).unwrap_or("Warning")) }
                                        ": " (s.hazard_codes.join(", "))
                                    }
                                }
                                div { "Goggles and gloves. See the SDS; waste and local rules apply." }
                            }
                        }
                    }
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
    fn grids_fit_their_paper() {
        // A4 210 × 297 mm; Letter 215.9 × 279.4 mm.
        for (paper, pw, ph) in [(Paper::A4, 210.0, 297.0), (Paper::Letter, 215.9, 279.4)] {
            let (c, r, w, h, top, left) = grid(paper);
            assert!(left + c as f64 * w <= pw + 1e-9 && top + r as f64 * h <= ph + 1e-9);
        }
    }
}
