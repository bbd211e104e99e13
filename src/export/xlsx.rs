//! A spreadsheet workbook over the page model: one worksheet per table of the sheets, numbers
//! as numbers (the headers already name each quantity and its unit), and a first worksheet
//! with the sheets' titles and their cautions. Written by `rust_xlsxwriter`; the document's
//! creation time is fixed so that the same spec gives the same bytes.

use crate::report::page::{Block, Page};
use rust_xlsxwriter::{DocProperties, ExcelDateTime, Format, Workbook, XlsxError};

/// Excel's limit on a worksheet name, in characters.
const NAME_CHARS: usize = 31;

/// A cell as a number where the whole cell is one (a plain decimal); None keeps it as text.
fn number(cell: &str) -> Option<f64> {
    let t = cell.trim();
    let plain = !t.is_empty()
        && t.chars()
            .all(|c| c.is_ascii_digit() || matches!(c, '.' | '-' | '+' | 'e' | 'E'))
        && t.chars().any(|c| c.is_ascii_digit());
    plain
        .then(|| t.parse::<f64>().ok())
        .flatten()
        .filter(|v| v.is_finite())
}

/// A worksheet name from a page's short name and a table's heading: Excel's forbidden
/// characters dropped, at most 31 characters, unique within the workbook.
fn sheet_name(short: &str, heading: &str, taken: &mut Vec<String>) -> String {
    let raw: String = format!("{short} {heading}")
        .chars()
        .filter(|c| !matches!(c, '[' | ']' | ':' | '*' | '?' | '/' | '\\' | '\''))
        .collect();
    let base: String = raw.trim().chars().take(NAME_CHARS).collect();
    let mut name = base.trim().to_string();
    let mut n = 2;
    while taken.iter().any(|t| t.eq_ignore_ascii_case(&name)) {
        let tail = format!(" ({n})");
        let keep: String = base
            .chars()
            .take(NAME_CHARS - tail.chars().count())
            .collect();
        name = format!("{}{tail}", keep.trim_end());
        n += 1;
    }
    taken.push(name.clone());
    name
}

fn build(pages: &[(&str, &Page)]) -> Result<Vec<u8>, XlsxError> {
    let mut book = Workbook::new();
    book.set_properties(
        &DocProperties::new()
            .set_title("clockprep sheets")
            .set_creation_datetime(&ExcelDateTime::from_ymd(2000, 1, 1)?),
    );
    let bold = Format::new().set_bold();
    let wrap = Format::new().set_text_wrap();
    let mut taken = vec!["About".to_string()];
    {
        let about = book.add_worksheet();
        about.set_name("About")?;
        about.set_column_width(0, 110)?;
        let mut r = 0;
        for (_, page) in pages {
            about.write_string_with_format(r, 0, &page.title, &bold)?;
            r += 1;
        }
        r += 1;
        // The cautions of the sheets, once each, as every printed sheet carries them.
        let mut seen: Vec<&String> = Vec::new();
        about.write_string_with_format(r, 0, "Cautions", &bold)?;
        r += 1;
        for (_, page) in pages {
            for s in &page.sections {
                for b in &s.blocks {
                    if let Block::Cautions(lines) = b {
                        for l in lines {
                            if seen.contains(&l) {
                                continue;
                            }
                            about.write_string_with_format(r, 0, l, &wrap)?;
                            seen.push(l);
                            r += 1;
                        }
                    }
                }
            }
        }
    }
    for (short, page) in pages {
        for s in &page.sections {
            let heading = s.heading.clone().unwrap_or_default();
            let mut last_sub = String::new();
            // Tables under a sub-heading (a run's vessels) take the sub-heading's name.
            for b in &s.blocks {
                let t = match b {
                    Block::Subheading(h) => {
                        last_sub = h.clone();
                        continue;
                    }
                    Block::Table(t) => t,
                    _ => continue,
                };
                let title = if last_sub.is_empty() {
                    heading.clone()
                } else {
                    format!("{heading} {last_sub}")
                };
                let name = sheet_name(short, &title, &mut taken);
                let ws = book.add_worksheet();
                ws.set_name(&name)?;
                ws.write_string_with_format(0, 0, format!("{}: {title}", page.title), &bold)?;
                for (c, h) in t.headers.iter().enumerate() {
                    ws.write_string_with_format(1, c as u16, h, &bold)?;
                    let width = t
                        .rows
                        .iter()
                        .filter_map(|r| r.get(c))
                        .chain(std::iter::once(h))
                        .map(|x| x.chars().count())
                        .max()
                        .unwrap_or(8)
                        .clamp(8, 60);
                    ws.set_column_width(c as u16, width as f64 + 1.0)?;
                }
                for (r, row) in t.rows.iter().enumerate() {
                    for (c, cell) in row.iter().enumerate() {
                        let (r, c) = (r as u32 + 2, c as u16);
                        match number(cell) {
                            Some(v) => ws.write_number(r, c, v)?,
                            None => ws.write_string(r, c, cell)?,
                        };
                    }
                }
                ws.set_freeze_panes(2, 0)?;
            }
        }
    }
    book.save_to_buffer()
}

/// The workbook of some sheets, each given with the short name its worksheets start with.
pub fn workbook(pages: &[(&str, &Page)]) -> Vec<u8> {
    // Every name and value is checked above; a failure here is a bug, shown as an empty file
    // rather than a panic in the server.
    build(pages).unwrap_or_default()
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn plain_decimals_are_numbers_and_everything_else_text() {
        assert_eq!(number("12.50"), Some(12.5));
        assert_eq!(number("-0.3"), Some(-0.3));
        assert_eq!(number("1 x 500 mL"), None);
        assert_eq!(number("2026-12-07"), None);
        assert_eq!(number("yes"), None);
    }

    #[test]
    fn sheet_names_fit_excel_and_are_unique() {
        let mut taken = Vec::new();
        let a = sheet_name("Mixing", "Run 1 of 5: reference [A]", &mut taken);
        let b = sheet_name("Mixing", "Run 1 of 5: reference [A]", &mut taken);
        assert!(a.chars().count() <= NAME_CHARS && b.chars().count() <= NAME_CHARS);
        assert_ne!(a, b);
        assert!(!a.contains('[') && !a.contains(':'));
    }
}
