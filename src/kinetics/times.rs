//! Reading the measured times: the times CSV of `clockprep fit` and the `--orders` option.

use super::fit::{Trial, LONGEST_TIME_S};
use crate::error::{Error, Result, SpecSource};
use crate::spec::Spec;
use crate::units::{self, Kind};
use std::ops::Range;

/// Read the times file: columns `run`, `time` and optionally `temperature` (any order, with a
/// header). Times are seconds ("83.2"), with a unit ("83.2 s", "1.4 min") or minutes:seconds
/// ("1:23.2"); temperatures carry a unit ("21.5 °C") or are bare degrees Celsius.
pub fn read_times(source: &SpecSource, spec: &Spec) -> Result<Vec<Trial>> {
    use crate::spec::limits;
    if source.text.len() > limits::INPUT_BYTES {
        return Err(source.error(
            0..0,
            format!(
                "the times CSV is {} bytes, over the {} byte limit",
                source.text.len(),
                limits::INPUT_BYTES
            ),
            "too large",
            "a term's times are well under 1 MiB: check that this is the right file",
        ));
    }
    let run_index: std::collections::HashMap<&str, usize> = spec
        .runs
        .iter()
        .enumerate()
        .map(|(i, r)| (r.name.as_str(), i))
        .collect();
    let mut reader = csv::ReaderBuilder::new()
        .trim(csv::Trim::All)
        .flexible(true)
        .from_reader(source.text.as_bytes());
    let header_err = |msg: &str| {
        let first = source.text.lines().next().map_or(0, str::len);
        source.error(
            0..first,
            format!("times CSV: {msg}"),
            "header line",
            "start the file with a header line such as: run,time,temperature",
        )
    };
    let headers = reader
        .headers()
        .map_err(|e| header_err(&format!("the times file is not readable CSV: {e}")))?
        .clone();
    let col = |want: &str| {
        headers
            .iter()
            .position(|h| h.to_ascii_lowercase().starts_with(want))
    };
    let run_col = col("run").ok_or_else(|| header_err("the times file has no 'run' column"))?;
    let time_col = col("time").ok_or_else(|| header_err("the times file has no 'time' column"))?;
    let temp_col = col("temp");
    let mut trials = Vec::new();
    for record in reader.records() {
        let record = record.map_err(|e| {
            let at = e.position().map_or(0, |p| p.byte() as usize);
            source.error(
                at..at,
                format!("the times file is not readable CSV: {e}"),
                "here",
                "one trial per line: run,time[,temperature]",
            )
        })?;
        let pos = record.position().expect("records have positions");
        let line = pos.line() as usize;
        let start = pos.byte() as usize;
        // Byte range of field i in the file (unquoted fields).
        let span = |i: usize| {
            let r = record.range(i).unwrap_or(0..0);
            start + r.start + i..start + r.end + i
        };
        if record.iter().all(|f| f.is_empty()) {
            continue;
        }
        let name = record.get(run_col).unwrap_or("");
        if trials.len() >= limits::TRIALS {
            return Err(source.error(
                span(run_col),
                format!("more than {} trials in the times CSV", limits::TRIALS),
                "too many",
                format!("fit at most {} trials at a time", limits::TRIALS),
            ));
        }
        let run = run_index
            .get(name)
            .copied()
            .ok_or_else(|| unknown_run(source, spec, name, span(run_col)))?;
        let time = time_field(source, record.get(time_col).unwrap_or(""), span(time_col))?;
        let temperature = match temp_col
            .and_then(|c| record.get(c))
            .filter(|t| !t.is_empty())
        {
            None => None,
            Some(t) => Some(temperature_field(source, t, span(temp_col.unwrap_or(0)))?),
        };
        trials.push(Trial {
            run,
            time,
            temperature,
            line,
        });
    }
    if trials.is_empty() {
        return Err(header_err("the times file has no trials"));
    }
    Ok(trials)
}

/// A run name of the CSV that the spec does not have, with the spec's run names.
fn unknown_run(source: &SpecSource, spec: &Spec, name: &str, at: Range<usize>) -> Error {
    let mut names: Vec<String> = spec
        .runs
        .iter()
        .take(12)
        .map(|r| format!("'{}'", r.name))
        .collect();
    if spec.runs.len() > 12 {
        names.push(format!("and {} more", spec.runs.len() - 12));
    }
    source.error(
        at,
        format!("run '{name}' is not in the spec"),
        "unknown run",
        format!("runs in the spec: {}", names.join(", ")),
    )
}

/// A time field: positive, at most a day.
fn time_field(source: &SpecSource, text: &str, at: Range<usize>) -> Result<f64> {
    let time = parse_time(text).ok_or_else(|| {
        source.error(
            at.clone(),
            format!("'{text}' is not a time"),
            "not a time",
            "write seconds (83.2), a unit (83.2 s, 1.4 min) or minutes:seconds (1:23.2)",
        )
    })?;
    if time.is_nan() || time <= 0.0 {
        return Err(source.error(
            at,
            "a measured time must be positive",
            "not positive",
            "check the stopwatch reading; leave out trials that did not clock",
        ));
    }
    if time > LONGEST_TIME_S {
        return Err(source.error(
            at,
            format!(
                "{} s is longer than a day: not a clock time",
                units::sig3(time)
            ),
            "too long",
            "check the stopwatch reading and the decimal point (65.90, not 6590); times are seconds unless a unit is given",
        ));
    }
    Ok(time)
}

/// A temperature field: with a unit, or bare degrees Celsius; 0 to 60 °C.
fn temperature_field(source: &SpecSource, t: &str, at: Range<usize>) -> Result<f64> {
    let value = units::parse(t, Kind::Temperature)
        .ok()
        .or_else(|| t.parse::<f64>().ok().map(|c| c + 273.15));
    match value {
        Some(v) if (273.15..=333.15).contains(&v) => Ok(v),
        _ => Err(source.error(
            at,
            format!("'{t}' is not a temperature from 0 to 60 °C"),
            "not a temperature",
            "write degrees Celsius (21.5) or with a unit (21.5 °C, 294.65 K)",
        )),
    }
}

/// Seconds from "83.2", "83.2 s", "1.4 min" or "1:23.2".
pub fn parse_time(text: &str) -> Option<f64> {
    let t = text.trim();
    if let Some((m, s)) = t.split_once(':') {
        let m: f64 = m.trim().parse().ok()?;
        let s: f64 = s.trim().parse().ok()?;
        return (m >= 0.0 && (0.0..60.0).contains(&s)).then_some(m * 60.0 + s);
    }
    if let Ok(v) = t.parse::<f64>() {
        return v.is_finite().then_some(v);
    }
    units::parse(t, Kind::Time).ok()
}

/// Read `--orders`: "1,1,2" in the order of the rate law's species, or "I-=1,H+=2" by name
/// (naming only some of them fixes only those).
pub fn parse_orders(
    text: &str,
    species: &[String],
) -> std::result::Result<Vec<(String, f64)>, String> {
    let parts: Vec<&str> = text
        .split(',')
        .map(str::trim)
        .filter(|p| !p.is_empty())
        .collect();
    let number = |v: &str| {
        v.trim()
            .parse::<f64>()
            .ok()
            .filter(|n| n.is_finite() && (-2.0..=5.0).contains(n))
            .ok_or_else(|| format!("'{v}' is not an order from -2 to 5"))
    };
    if parts.iter().all(|p| !p.contains('=')) {
        if parts.len() != species.len() {
            return Err(format!(
                "{} orders given for {} species ({})",
                parts.len(),
                species.len(),
                species.join(", ")
            ));
        }
        return species
            .iter()
            .zip(&parts)
            .map(|(s, v)| Ok((s.clone(), number(v)?)))
            .collect();
    }
    parts
        .iter()
        .map(|p| {
            let (s, v) = p
                .split_once('=')
                .ok_or_else(|| format!("'{p}' is not species=order"))?;
            let s = crate::reference::species::canonical(s);
            if !species.contains(&s) {
                return Err(format!(
                    "{s} is not in the rate law ({})",
                    species.join(", ")
                ));
            }
            Ok((s, number(v)?))
        })
        .collect()
}
