//! The TOML fragments of `fit`, `design` and `tune`: the sheet's summary as comments, then the
//! tables to paste into the spec.

use crate::report::page::{Page, Section};
use crate::report::{DesignSheet, TuneSheet};

/// A section as comment lines.
fn comments(section: Section) -> String {
    let text = super::text::render(&Page {
        title: String::new(),
        sections: vec![section],
    });
    let mut out = String::new();
    for line in String::from_utf8_lossy(&text).lines() {
        out.push_str(if line.is_empty() { "#" } else { "# " });
        out.push_str(line);
        out.push('\n');
    }
    out
}

/// A fit's summary as comments, then its `[reaction]` fragment.
pub fn fit(summary: Section, reaction_toml: &str) -> String {
    format!("{}\n{}", comments(summary), reaction_toml)
}

pub fn design(sheet: &DesignSheet) -> String {
    format!("{}\n{}", comments(sheet.summary()), sheet.runs_toml)
}

pub fn tune(sheet: &TuneSheet) -> String {
    let mut summary = Section::untitled();
    summary.para(format!("clockprep tune: {}", sheet.title));
    summary.para(sheet.next_step());
    for a in &sheet.advice {
        summary.para(a.clone());
    }
    let mut out = comments(summary);
    if sheet.fits {
        out.push_str(&format!(
            "\n[timing]\nconcentration = \"{}\"\n",
            sheet.concentration
        ));
    }
    out
}
