//! Markdown (for a course wiki or a printed handout): the same page as the text sheet.

use crate::report::page::{Align, Block, Page, Table};
use std::fmt::Write;

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

fn table(out: &mut String, t: &Table) {
    let cells = |row: &[String]| row.iter().map(|c| esc(c)).collect::<Vec<_>>().join(" | ");
    let _ = writeln!(out, "| {} |", cells(&t.headers));
    let rule: Vec<&str> = t
        .align
        .iter()
        .map(|a| match a {
            Align::Left => "---",
            Align::Right => "---:",
        })
        .collect();
    let _ = writeln!(out, "|{}|", rule.join("|"));
    for r in &t.rows {
        let _ = writeln!(out, "| {} |", cells(r));
    }
    out.push('\n');
}

fn block(out: &mut String, b: &Block) {
    match b {
        Block::Para(t) | Block::Detail(t) => {
            let _ = writeln!(out, "{}\n", esc(t));
        }
        Block::Subheading(t) => {
            let _ = writeln!(out, "### {}\n", esc(t));
        }
        Block::Instruction(t) => {
            let _ = writeln!(out, "**{}**\n", esc(t));
        }
        Block::Table(t) => table(out, t),
        Block::Flags { flags, .. } => {
            for f in flags {
                let _ = writeln!(out, "- **Flag `{}`:** {}", f.code, esc(&f.message));
            }
            if !flags.is_empty() {
                out.push('\n');
            }
        }
        Block::Warnings(list) => {
            for w in list {
                let _ = writeln!(out, "- **Warning:** {}", esc(w));
            }
            if !list.is_empty() {
                out.push('\n');
            }
        }
        Block::List(items) => {
            for i in items {
                let _ = writeln!(out, "- {}", esc(&i.text));
                for d in &i.details {
                    let _ = writeln!(out, "  - {}", esc(d));
                }
            }
            out.push('\n');
        }
        Block::Cautions(lines) => {
            let _ = writeln!(out, "## Cautions\n");
            for c in lines {
                let _ = writeln!(out, "- {}", esc(c));
            }
            out.push('\n');
        }
        // The chart is drawn in HTML and SVG only.
        Block::Chart(_) => {}
        Block::Verbatim(t) => {
            let _ = writeln!(out, "```\n{}\n```\n", t.trim_end());
        }
    }
}

/// A page as Markdown: the page title as `#`, each section heading as `##`.
pub fn render(page: &Page) -> Vec<u8> {
    let mut out = String::new();
    for (i, s) in page.sections.iter().enumerate() {
        if let Some(h) = &s.heading {
            let level = if i == 0 { "#" } else { "##" };
            let _ = writeln!(out, "{level} {}\n", esc(h));
        }
        for b in &s.blocks {
            block(&mut out, b);
        }
    }
    let trimmed = out.trim_end().len();
    out.truncate(trimmed);
    out.push('\n');
    out.into_bytes()
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn escapes_table_and_emphasis_characters() {
        assert_eq!(esc("a|b*c_d"), "a\\|b\\*c\\_d");
    }
}
