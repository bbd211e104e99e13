//! Plain text: aligned tables with a rule under the header, headings underlined, the lines
//! that belong to a table indented under it.

use crate::report::page::{Align, Block, Page, Section, Table};
use std::fmt::Write;

/// An aligned table with a rule under the header; `indent` spaces before every line.
fn table(indent: usize, t: &Table) -> String {
    let width = |s: &str| s.chars().count();
    let mut widths: Vec<usize> = t.headers.iter().map(|h| width(h)).collect();
    for r in &t.rows {
        for (i, c) in r.iter().enumerate() {
            widths[i] = widths[i].max(width(c));
        }
    }
    let line = |cells: Vec<&str>| -> String {
        let mut s = " ".repeat(indent);
        for (i, c) in cells.iter().enumerate() {
            let pad = widths[i] - width(c);
            let last = i + 1 == cells.len();
            match t.align[i] {
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
    let mut out = line(t.headers.iter().map(String::as_str).collect());
    let rule: Vec<String> = widths.iter().map(|w| "-".repeat(*w)).collect();
    out.push_str(&line(rule.iter().map(String::as_str).collect()));
    for r in &t.rows {
        out.push_str(&line(r.iter().map(String::as_str).collect()));
    }
    out
}

fn heading(out: &mut String, text: &str) {
    let _ = writeln!(out, "{text}\n{}", "=".repeat(text.chars().count()));
}

fn block(out: &mut String, b: &Block) {
    let indent = |nested: bool| if nested { "  " } else { "" };
    match b {
        Block::Para(t) => {
            let _ = writeln!(out, "{t}");
        }
        Block::Detail(t) => {
            let _ = writeln!(out, "  {t}");
        }
        Block::Subheading(t) => {
            let _ = writeln!(out, "\n{t}");
        }
        Block::Instruction(t) => {
            let _ = writeln!(out, "\n{t}\n");
        }
        Block::Table(t) => out.push_str(&table(if t.nested { 2 } else { 0 }, t)),
        Block::Flags { flags, nested } => {
            for f in flags {
                let _ = writeln!(out, "{}FLAG [{}] {}", indent(*nested), f.code, f.message);
            }
        }
        Block::Warnings(list) => {
            for w in list {
                let _ = writeln!(out, "WARNING: {w}");
            }
        }
        Block::List(items) => {
            for i in items {
                let _ = writeln!(out, "- {}", i.text);
                for d in &i.details {
                    let _ = writeln!(out, "  {d}");
                }
            }
        }
        Block::Cautions(lines) => {
            heading(out, "Cautions");
            for c in lines {
                let _ = writeln!(out, "- {c}");
            }
        }
        // The chart is drawn in HTML and SVG only.
        Block::Chart(_) => {}
        Block::Verbatim(t) => {
            out.push_str(t);
            if !t.ends_with('\n') {
                out.push('\n');
            }
        }
    }
}

fn section(s: &Section) -> String {
    let mut out = String::new();
    if let Some(h) = &s.heading {
        heading(&mut out, h);
    }
    for b in &s.blocks {
        block(&mut out, b);
    }
    out
}

/// A page as plain text: sections separated by a blank line.
pub fn render(page: &Page) -> Vec<u8> {
    let parts: Vec<String> = page
        .sections
        .iter()
        .map(section)
        .filter(|s| !s.is_empty())
        .collect();
    parts.join("\n").into_bytes()
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::report::page::headers;

    #[test]
    fn nested_tables_indent_and_right_align_numbers() {
        let t = Table::numeric(
            headers(&["stock", "volume (mL)"]),
            vec![
                vec!["KI".into(), "5.00".into()],
                vec!["water".into(), "25.00".into()],
            ],
        )
        .nested();
        let s = table(2, &t);
        assert_eq!(
            s,
            "  stock  volume (mL)\n  -----  -----------\n  KI            5.00\n  water        25.00\n"
        );
    }
}
