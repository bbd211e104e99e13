//! Chemical formulas set with subscripts and superscripts in the HTML, card and SVG outputs
//! (`S2O3^2-` → S₂O₃²⁻); plain text, CSV, JSON and anything meant to be pasted back (`<pre>`,
//! `<code>`) keep the spec's spelling.
//!
//! A word is set as a formula only when it reads as one: element symbols (each a real element)
//! with counts, parentheses and a hydrate dot, then an optional charge (`^2-`, `+`, `-`), and
//! it has a charge, two or more element symbols, or is a diatomic molecule (I2).
//! So hazard codes (H350), pipette names (P1000), run names (`I- x2`) and paper sizes (A4) are
//! left alone.

use crate::reference::formula::atomic_weight;

/// How the sub- and superscripts are written.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Style {
    /// `<sub>`/`<sup>` elements.
    Html,
    /// Unicode sub- and superscript digits and signs (for SVG text).
    Unicode,
}

/// One piece of a formula.
#[derive(Debug, PartialEq)]
enum Piece<'a> {
    Text(&'a str),
    Sub(&'a str),
    /// A charge: digits (maybe empty) and a sign.
    Charge(&'a str, char),
}

/// The pieces of `word` when it reads as a formula (see the module notes).
fn pieces(word: &str) -> Option<Vec<Piece<'_>>> {
    let b = word.as_bytes();
    let mut out = Vec::new();
    let mut i = 0;
    let mut elements = 0;
    let mut counts: Vec<usize> = Vec::new();
    // Whether a number here is a hydrate's coefficient (after the dot), not a subscript.
    let mut after_dot = false;
    let mut depth = 0i32;
    while i < b.len() {
        let c = b[i];
        if c.is_ascii_uppercase() {
            let start = i;
            i += 1;
            if i < b.len() && b[i].is_ascii_lowercase() {
                i += 1;
            }
            atomic_weight(&word[start..i])?;
            elements += 1;
            out.push(Piece::Text(&word[start..i]));
            after_dot = false;
        } else if c.is_ascii_digit() {
            let start = i;
            while i < b.len() && b[i].is_ascii_digit() {
                i += 1;
            }
            if after_dot || out.is_empty() {
                out.push(Piece::Text(&word[start..i]));
            } else {
                counts.push(i - start);
                out.push(Piece::Sub(&word[start..i]));
            }
            after_dot = false;
        } else if c == b'(' || c == b')' {
            depth += if c == b'(' { 1 } else { -1 };
            if depth < 0 {
                return None;
            }
            out.push(Piece::Text(&word[i..i + 1]));
            i += 1;
        } else if c == b'*' {
            out.push(Piece::Text("·"));
            after_dot = true;
            i += 1;
        } else if word[i..].starts_with('·') {
            out.push(Piece::Text("·"));
            after_dot = true;
            i += '·'.len_utf8();
        } else if c == b'^' {
            // ^2- or ^+ : digits then one sign, to the end.
            let start = i + 1;
            let mut j = start;
            while j < b.len() && b[j].is_ascii_digit() {
                j += 1;
            }
            if j + 1 != b.len() || !(b[j] == b'+' || b[j] == b'-') {
                return None;
            }
            out.push(Piece::Charge(&word[start..j], b[j] as char));
            i = b.len();
        } else if (c == b'+' || c == b'-') && i + 1 == b.len() && elements > 0 {
            out.push(Piece::Charge("", c as char));
            i += 1;
        } else {
            return None;
        }
    }
    let charged = out.iter().any(|p| matches!(p, Piece::Charge(..)));
    // One element is set only as a diatomic molecule (I2, Br2, O2), not S1 or P1.
    let diatomic = elements == 1 && counts.len() == 1 && word.ends_with('2') && counts[0] == 1;
    (depth == 0 && elements > 0 && (charged || elements >= 2 || diatomic)).then_some(out)
}

fn unicode_digit(c: char, sub: bool) -> char {
    const SUB: [char; 10] = ['₀', '₁', '₂', '₃', '₄', '₅', '₆', '₇', '₈', '₉'];
    const SUP: [char; 10] = ['⁰', '¹', '²', '³', '⁴', '⁵', '⁶', '⁷', '⁸', '⁹'];
    let d = c.to_digit(10).unwrap_or(0) as usize;
    if sub {
        SUB[d]
    } else {
        SUP[d]
    }
}

/// `word` set as a formula, or None when it is not one.
pub fn formula(word: &str, style: Style) -> Option<String> {
    let ps = pieces(word)?;
    if !ps
        .iter()
        .any(|p| matches!(p, Piece::Sub(_) | Piece::Charge(..)))
    {
        return None;
    }
    let mut out = String::new();
    for p in ps {
        match (p, style) {
            (Piece::Text(t), _) => out.push_str(t),
            (Piece::Sub(d), Style::Html) => {
                out.push_str("<sub>");
                out.push_str(d);
                out.push_str("</sub>");
            }
            (Piece::Sub(d), Style::Unicode) => {
                out.extend(d.chars().map(|c| unicode_digit(c, true)))
            }
            (Piece::Charge(d, sign), Style::Html) => {
                out.push_str("<sup>");
                out.push_str(d);
                out.push(if sign == '-' { '−' } else { '+' });
                out.push_str("</sup>");
            }
            (Piece::Charge(d, sign), Style::Unicode) => {
                out.extend(d.chars().map(|c| unicode_digit(c, false)));
                out.push(if sign == '-' { '⁻' } else { '⁺' });
            }
        }
    }
    Some(out)
}

/// Characters a formula word is made of.
fn in_word(c: char) -> bool {
    c.is_ascii_alphanumeric() || matches!(c, '(' | ')' | '^' | '+' | '-' | '*' | '·')
}

/// Set every formula in the text of `text` (no markup inside).
fn set_text(text: &str, style: Style, out: &mut String) {
    let mut rest = text;
    while let Some(start) = rest.find(in_word) {
        out.push_str(&rest[..start]);
        let tail = &rest[start..];
        let end = tail.find(|c: char| !in_word(c)).unwrap_or(tail.len());
        let word = &tail[..end];
        match formula(word, style) {
            Some(set) => out.push_str(&set),
            None => out.push_str(word),
        }
        rest = &tail[end..];
    }
    out.push_str(rest);
}

/// Set the formulas in the text of an HTML or SVG document: outside tags, and not inside
/// `<pre>`, `<code>` (what is meant to be copied), `<style>`, `<script>`, `<title>` (plain text
/// only) or, in HTML, an embedded `<svg>` (set already, in Unicode: SVG has no `<sub>`).
pub fn document(doc: &str, style: Style) -> String {
    const KEEP: [&str; 6] = ["pre", "code", "style", "script", "title", "svg"];
    let mut out = String::with_capacity(doc.len() + doc.len() / 8);
    let mut rest = doc;
    let mut keep: Option<&str> = None;
    while let Some(lt) = rest.find('<') {
        let text = &rest[..lt];
        match keep {
            Some(_) => out.push_str(text),
            None => set_text(text, style, &mut out),
        }
        let tail = &rest[lt..];
        let gt = tail.find('>').map_or(tail.len(), |g| g + 1);
        let tag = &tail[..gt];
        let name: String = tag
            .trim_start_matches('<')
            .trim_start_matches('/')
            .chars()
            .take_while(|c| c.is_ascii_alphanumeric())
            .collect::<String>()
            .to_ascii_lowercase();
        if let Some(k) = keep {
            if tag.starts_with("</") && name == k {
                keep = None;
            }
        } else if !tag.starts_with("</") && !tag.ends_with("/>") {
            keep = KEEP
                .iter()
                .copied()
                .filter(|k| !(style == Style::Unicode && *k == "svg"))
                .find(|k| *k == name);
        }
        out.push_str(tag);
        rest = &tail[gt..];
    }
    match keep {
        Some(_) => out.push_str(rest),
        None => set_text(rest, style, &mut out),
    }
    out
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn formulas_and_words_that_are_not() {
        let h = |w: &str| formula(w, Style::Html);
        assert_eq!(
            h("S2O3^2-").as_deref(),
            Some("S<sub>2</sub>O<sub>3</sub><sup>2−</sup>")
        );
        assert_eq!(h("H+").as_deref(), Some("H<sup>+</sup>"));
        assert_eq!(h("I-").as_deref(), Some("I<sup>−</sup>"));
        assert_eq!(h("I2").as_deref(), Some("I<sub>2</sub>"));
        assert_eq!(
            h("(NH4)2S2O8").as_deref(),
            Some("(NH<sub>4</sub>)<sub>2</sub>S<sub>2</sub>O<sub>8</sub>")
        );
        // A hydrate's coefficient is not a subscript.
        assert_eq!(
            h("Na2S2O3·5H2O").as_deref(),
            Some("Na<sub>2</sub>S<sub>2</sub>O<sub>3</sub>·5H<sub>2</sub>O")
        );
        assert_eq!(formula("BrO3-", Style::Unicode).as_deref(), Some("BrO₃⁻"));
        // Hazard codes, pipettes, formulas with nothing to set, run names, paper, prose.
        for w in [
            "H350", "P1000", "P1", "S1", "KI", "x2", "A4", "CHEM", "mM", "E969", "B", "-0.6",
        ] {
            assert_eq!(h(w), None, "{w}");
        }
    }

    #[test]
    fn documents_keep_tags_pre_and_code() {
        let doc = "<p class=\"S2O3\">KBrO3 0.0400 M (H271) and I- x2</p><pre>\"S2O3^2-\" = \"1 mM\"</pre><p>H2O</p>";
        assert_eq!(
            document(doc, Style::Html),
            "<p class=\"S2O3\">KBrO<sub>3</sub> 0.0400 M (H271) and I<sup>−</sup> x2</p><pre>\"S2O3^2-\" = \"1 mM\"</pre><p>H<sub>2</sub>O</p>"
        );
    }
}
