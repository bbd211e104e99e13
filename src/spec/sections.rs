//! `[[section]]`: the same runs taught to several lab sections, each on its day with its own
//! number of stations (and, if it differs, replicates and room temperature).

use super::checker::{inner, Checker};
use super::limits;
use super::model::Section;
use super::raw::RawSpec;
use crate::error::Result;
use toml::Value;

impl Checker<'_> {
    /// The sections in date order (spec order within a day), or none for a one-section spec.
    /// `replicates` and `temperature` are `[plan]`'s, each section's default.
    pub(super) fn sections(
        &self,
        raw: &RawSpec,
        replicates: u32,
        temperature: Option<f64>,
    ) -> Result<Vec<Section>> {
        if raw.section.is_empty() {
            return Ok(Vec::new());
        }
        if raw.section.len() > limits::SECTIONS {
            return Err(self.err(
                raw.section[limits::SECTIONS].span(),
                format!(
                    "the spec has {} sections, over the limit of {}",
                    raw.section.len(),
                    limits::SECTIONS
                ),
                "too many",
                format!(
                    "split the term into specs of at most {} sections",
                    limits::SECTIONS
                ),
            ));
        }
        if let Some(s) = &raw.plan.get_ref().stations {
            return Err(self.err(
                s.span(),
                "[plan] stations and [[section]] both give the number of stations",
                "one or the other",
                "with [[section]]s each section gives its own stations: remove stations from [plan]",
            ));
        }
        let mut out: Vec<Section> = Vec::new();
        for sec in &raw.section {
            let r = sec.get_ref();
            let name = r.name.get_ref().trim().to_string();
            let name_at = inner(r.name.span(), &self.src.text);
            if name.is_empty() {
                return Err(self.err(
                    name_at,
                    "a section without a name",
                    "empty",
                    "name it as the timetable does, e.g. name = \"Tue 2 pm\"",
                ));
            }
            if name.chars().count() > limits::NAME_CHARS {
                return Err(self.err(
                    name_at,
                    format!("a section name over {} characters", limits::NAME_CHARS),
                    "too long",
                    "shorten it",
                ));
            }
            if let Some(first) = out.iter().find(|s| s.name == name) {
                let line = self.src.text[..first.span.start].lines().count() + 1;
                return Err(self.err(
                    name_at,
                    format!("two sections are named '{name}'"),
                    "named twice",
                    format!("the other is at line {line}; give each section its own name"),
                ));
            }
            let date = self.date(&r.date)?;
            let stations = self.count(&Some(r.stations.clone()), "stations", 1)?;
            let replicates = self.count(&r.replicates, "replicates", replicates)?;
            let temperature = self.temperature(&r.temperature)?.or(temperature);
            out.push(Section {
                name,
                date,
                stations,
                replicates,
                temperature,
                span: sec.span(),
            });
        }
        // Date order; a stable sort keeps the spec's order within a day.
        out.sort_by_key(|s| s.date);
        Ok(out)
    }

    /// A section's date: "2026-12-07" as text, or a bare TOML date.
    fn date(&self, v: &toml::Spanned<Value>) -> Result<time::Date> {
        let at = inner(v.span(), &self.src.text);
        let bad = |what: String| {
            self.err(
                at.clone(),
                what,
                "not a date",
                "write the day the section meets as year-month-day, e.g. date = \"2026-12-07\"",
            )
        };
        let text = match v.get_ref() {
            Value::String(s) => s.trim().to_string(),
            Value::Datetime(d) if d.time.is_none() && d.offset.is_none() => d.to_string(),
            Value::Datetime(d) => {
                return Err(bad(format!(
                    "date {d} has a time of day: a section's date is the day alone"
                )))
            }
            other => return Err(bad(format!("date {other} is not a date"))),
        };
        let format = time::macros::format_description!("[year]-[month]-[day]");
        time::Date::parse(&text, &format).map_err(|_| bad(format!("date '{text}' is not a date")))
    }
}
