//! The checker's tools: located errors, quantities with units and lab ranges, TOML errors in
//! the words of a spec's author. The per-section files use them.

use super::limits;
use super::model::*;
use super::raw::*;
use crate::error::{Error, Result, SpecSource};
use crate::reference::species;
use crate::units::{self, Kind};
use std::ops::Range;
use toml::{Spanned, Value};

/// The range a positive quantity of a kind may take (internal units), and the words for it.
/// Far wider than any clock lab needs (common practice), narrow enough that a denormal or an
/// overflow never reaches the solver: 1 pM to 100 M, 1 nL to 1000 L, 1 ms to a week.
pub(super) fn lab_range(kind: Kind) -> Option<(f64, f64, &'static str)> {
    match kind {
        Kind::Concentration => Some((1e-12, 100.0, "1 pM to 100 M")),
        Kind::Volume => Some((1e-9, 1000.0, "1 nL to 1000 L")),
        Kind::Time => Some((1e-3, 604_800.0, "1 ms to a week")),
        _ => None,
    }
}

/// Map a TOML error to a located spec error.
pub(super) fn toml_error(source: &SpecSource, e: toml::de::Error) -> Error {
    let span = e.span().unwrap_or(0..0);
    let msg = e.message().trim().to_string();
    // "[run]" where "[[run]]" is meant: a single table of a kind the spec lists.
    if msg.contains("duplicate key") || msg.contains("sequence") {
        let mut offset = 0;
        for line in source.text.split_inclusive('\n') {
            let header = line.split('#').next().unwrap_or("").trim();
            for table in ["run", "stock", "device", "reaction.term"] {
                if header == format!("[{table}]") {
                    let start = offset + line.find('[').unwrap_or(0);
                    return source.error(
                        start..start + header.len(),
                        format!("[{table}] is a single table, but a spec lists each {table} as [[{table}]]"),
                        "needs double brackets",
                        format!("write [[{table}]] (double brackets) for every {table}"),
                    );
                }
            }
            offset += line.len();
        }
    }
    let key = key_at(&source.text, span.start);
    if let Some((message, help)) = type_error_in_words(&msg, key.as_deref()) {
        return source.error(span, message, "here", help);
    }
    let help = if msg.contains("unknown field") {
        "remove the key or fix its spelling; the README lists every key a spec accepts"
    } else if msg.contains("missing field") {
        "add the missing key; the README shows a complete spec"
    } else {
        "fix the TOML syntax here; strings need double quotes, e.g. total_volume = \"30.0 mL\""
    };
    source.error(span, format!("the spec is not valid: {msg}"), "here", help)
}

/// The key whose value starts at `at`: the text before `=` on that line, or the table header.
pub(super) fn key_at(text: &str, at: usize) -> Option<String> {
    let line_start = text[..at.min(text.len())].rfind('\n').map_or(0, |p| p + 1);
    let line = &text[line_start..at.min(text.len())];
    if let Some((k, _)) = line.rsplit_once('=') {
        let k = k
            .rsplit(['{', ','])
            .next()
            .unwrap_or(k)
            .trim()
            .trim_matches('"');
        return (!k.is_empty()).then(|| k.to_string());
    }
    let rest = &text[line_start..];
    let header = rest.lines().next()?.trim();
    header
        .starts_with('[')
        .then(|| header.trim_matches(['[', ']']).trim().to_string())
}

/// TOML type errors in the words of a spec's author.
pub(super) fn type_error_in_words(msg: &str, key: Option<&str>) -> Option<(String, String)> {
    let k = key.unwrap_or("this value");
    let whole = |what: &str, example: &str| {
        Some((
            format!("{k} is {what}"),
            format!("write a whole number without quotes, e.g. {example}"),
        ))
    };
    if msg.contains("expected i64") || msg.contains("expected an integer") {
        if msg.contains("string") {
            return Some((
                format!("{k} is a whole number, written without quotes"),
                format!("write it without quotes, e.g. {k} = 2"),
            ));
        }
        return match k {
            "stations" => whole("a whole number of bench groups", "stations = 4"),
            "replicates" => whole("a whole number of trials of each run", "replicates = 2"),
            "fills" => whole("a whole number of fills", "fills = 2"),
            _ => whole("a whole number", &format!("{k} = 2")),
        };
    }
    if msg.contains("expected a boolean") || msg.contains("expected bool") {
        return Some((
            format!("{k} is true or false"),
            format!("write {k} = true or {k} = false, without quotes"),
        ));
    }
    if msg.contains("expected a sequence") {
        // ("[run]" written for "[[run]]" is caught before this, from the text.)
        return Some((
            format!("{k} needs a list"),
            format!("write it in square brackets, e.g. {k} = [\"...\"]"),
        ));
    }
    None
}

pub(super) struct Checker<'a> {
    pub(super) src: &'a SpecSource,
    pub(super) purpose: Purpose,
}

pub(super) fn inner(span: Range<usize>, text: &str) -> Range<usize> {
    // Spans of TOML strings include their quotes; point inside them.
    let quote = text
        .get(span.start..span.start + 1)
        .is_some_and(|c| c == "\"" || c == "'");
    if quote && span.end > span.start + 1 {
        span.start + 1..span.end - 1
    } else {
        span
    }
}

impl Checker<'_> {
    /// The end of the spec: where a missing table is to be added.
    pub(super) fn end(&self) -> Range<usize> {
        let n = self.src.text.trim_end().len();
        n..n
    }

    pub(super) fn err(
        &self,
        span: Range<usize>,
        msg: impl Into<String>,
        label: &str,
        help: impl Into<String>,
    ) -> Error {
        self.src.error(span, msg, label, help)
    }

    /// A quantity of a given kind; `field` names it in messages.
    pub(super) fn qty(&self, q: &Q, kind: Kind, field: &str) -> Result<f64> {
        let span = q.span();
        match q.get_ref() {
            Value::String(s) => units::parse(s, kind).map_err(|e| {
                let inner = inner(span.clone(), &self.src.text);
                let r = e.range(s.len());
                let at = if r.is_empty() {
                    inner.clone()
                } else {
                    inner.start + r.start..inner.start + r.end
                };
                self.err(
                    at,
                    format!("{field}: {}", e.describe(kind)),
                    "here",
                    format!(
                        "write {} with its unit, e.g. {field} = {}",
                        kind.noun(),
                        kind.example()
                    ),
                )
            }),
            Value::Integer(_) | Value::Float(_) => Err(self.err(
                span,
                format!("{field}: a bare number has no unit"),
                "no unit",
                format!(
                    "write {} as a string with its unit, e.g. {field} = {}",
                    kind.noun(),
                    kind.example()
                ),
            )),
            _ => Err(self.err(
                span,
                format!("{field}: expected {}", kind.noun()),
                "not a quantity",
                format!(
                    "write it as a string with its unit, e.g. {field} = {}",
                    kind.example()
                ),
            )),
        }
    }

    pub(super) fn positive(&self, q: &Q, kind: Kind, field: &str) -> Result<f64> {
        let v = self.qty(q, kind, field)?;
        if v <= 0.0 {
            return Err(self.err(
                inner(q.span(), &self.src.text),
                format!("{field} must be greater than zero"),
                "not positive",
                format!("give a positive value, e.g. {field} = {}", kind.example()),
            ));
        }
        if let Some((lo, hi, words)) = lab_range(kind) {
            if !(lo..=hi).contains(&v) {
                return Err(self.err(
                    inner(q.span(), &self.src.text),
                    format!(
                        "{field}: {} is outside what a teaching lab uses ({words})",
                        match kind {
                            Kind::Concentration => units::concentration(v),
                            Kind::Volume => format!("{} mL", units::sig3(v * 1e3)),
                            _ => format!("{} s", units::sig3(v)),
                        }
                    ),
                    "out of range",
                    format!(
                        "check the number and its unit, e.g. {field} = {}",
                        kind.example()
                    ),
                ));
            }
        }
        Ok(v)
    }

    /// A fraction (written as a percentage) from 0 to `max`, refused outside with `hint`.
    pub(super) fn fraction_up_to(&self, q: &Q, field: &str, max: f64, hint: &str) -> Result<f64> {
        let v = self.qty(q, Kind::Fraction, field)?;
        if !(0.0..=max).contains(&v) {
            return Err(self.err(
                inner(q.span(), &self.src.text),
                format!("{field} must be from 0 % to {} %", max * 100.0),
                "out of range",
                hint,
            ));
        }
        Ok(v)
    }

    /// Zero or a positive value in the lab's range.
    pub(super) fn non_negative(&self, q: &Q, kind: Kind, field: &str) -> Result<f64> {
        let v = self.qty(q, kind, field)?;
        if v == 0.0 {
            return Ok(0.0);
        }
        if v < 0.0 {
            return Err(self.err(
                inner(q.span(), &self.src.text),
                format!("{field} cannot be negative"),
                "negative",
                format!(
                    "give zero or a positive value, e.g. {field} = {}",
                    kind.example()
                ),
            ));
        }
        self.positive(q, kind, field)
    }

    pub(super) fn count(&self, v: &Option<Spanned<i64>>, field: &str, default: u32) -> Result<u32> {
        match v {
            None => Ok(default),
            Some(s) if (1..=10_000).contains(s.get_ref()) => Ok(*s.get_ref() as u32),
            Some(s) => Err(self.err(
                s.span(),
                format!("{field} must be a whole number from 1 to 10000"),
                "out of range",
                format!("e.g. {field} = 2"),
            )),
        }
    }

    pub(super) fn species(&self, name: &Name) -> Result<String> {
        species::parse(name.get_ref()).map(|s| s.name).map_err(|e| {
            self.err(
                inner(name.span(), &self.src.text),
                format!("species '{}': {}", name.get_ref(), e.describe()),
                "not a species",
                e.hint(),
            )
        })
    }

    pub(super) fn vessel(&self, name: &Name) -> Result<Vessel> {
        match name.get_ref().trim() {
            "A" | "a" => Ok(Vessel::A),
            "B" | "b" => Ok(Vessel::B),
            other => Err(self.err(
                inner(name.span(), &self.src.text),
                format!("unknown vessel '{other}'"),
                "not a vessel",
                "each run is mixed from two vessels: write vessel = \"A\" or vessel = \"B\"",
            )),
        }
    }

    /// Counts and name lengths against [`limits`], before anything is checked in detail.
    pub(super) fn check_sizes(&self, raw: &RawSpec) -> Result<()> {
        let over = |what: &str, n: usize, limit: usize, at: Range<usize>| {
            self.err(
                at,
                format!("the spec has {n} {what}, over the limit of {limit}"),
                "too many",
                format!("split the plan into specs of at most {limit} {what}"),
            )
        };
        if raw.run.len() > limits::RUNS {
            return Err(over(
                "runs",
                raw.run.len(),
                limits::RUNS,
                raw.run[limits::RUNS].span(),
            ));
        }
        if raw.stock.len() > limits::STOCKS {
            return Err(over(
                "stocks",
                raw.stock.len(),
                limits::STOCKS,
                raw.stock[limits::STOCKS].span(),
            ));
        }
        if raw.device.len() > limits::DEVICES {
            return Err(over(
                "devices",
                raw.device.len(),
                limits::DEVICES,
                raw.device[limits::DEVICES].span(),
            ));
        }
        let names = std::iter::once(&raw.plan.get_ref().title)
            .chain(raw.stock.iter().map(|s| &s.get_ref().name))
            .chain(raw.device.iter().map(|d| &d.get_ref().name))
            .chain(raw.run.iter().map(|r| &r.get_ref().name));
        for n in names {
            let chars = n.get_ref().chars().count();
            if chars > limits::NAME_CHARS {
                return Err(self.err(
                    inner(n.span(), &self.src.text),
                    format!(
                        "a name of {chars} characters, over the limit of {}",
                        limits::NAME_CHARS
                    ),
                    "too long",
                    "shorten it; put details in a note = \"...\"",
                ));
            }
        }
        Ok(())
    }
}

impl Checker<'_> {
    /// The text of a string quantity and the span inside its quotes; a bare number is an error.
    pub(super) fn text<'q>(
        &self,
        q: &'q Q,
        field: &str,
        example: &str,
    ) -> Result<(&'q str, Range<usize>)> {
        match q.get_ref() {
            Value::String(s) => Ok((s.as_str(), inner(q.span(), &self.src.text))),
            Value::Integer(_) | Value::Float(_) => Err(self.err(
                q.span(),
                format!("{field}: a bare number has no unit"),
                "no unit",
                format!("write it as a string with its unit, e.g. {field} = {example}"),
            )),
            _ => Err(self.err(
                q.span(),
                format!("{field}: expected a quantity"),
                "not a quantity",
                format!("e.g. {field} = {example}"),
            )),
        }
    }

    /// A quantity read by a special parser (rate constants, energies, differences).
    pub(super) fn special<T>(
        &self,
        q: &Q,
        field: &str,
        noun: Kind,
        example: &str,
        parse: impl Fn(&str) -> std::result::Result<T, units::UnitError>,
    ) -> Result<T> {
        let (text, at) = self.text(q, field, example)?;
        parse(text).map_err(|e| {
            let r = e.range(text.len());
            let span = if r.is_empty() {
                at.clone()
            } else {
                at.start + r.start..at.start + r.end
            };
            self.err(
                span,
                format!("{field}: {}", e.describe(noun)),
                "here",
                format!("e.g. {field} = {example}"),
            )
        })
    }
}
