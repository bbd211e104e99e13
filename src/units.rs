//! Quantities with units, as written in a plan spec ("30.0 mL", "2.50 mM", "21 °C", "15 %").
//!
//! Internal units form one consistent set: volume in litres (L), amount concentration in
//! mol/L (M), temperature in kelvin (K), time in seconds (s), fractions as plain ratios.
//! Every parse keeps the byte range of the offending text so errors can point at it.

use std::fmt;
use std::ops::Range;

/// What a quantity measures.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Kind {
    Volume,
    Concentration,
    Temperature,
    Fraction,
    Time,
    /// Only through [`parse_mass`] (a balance's readability).
    Mass,
}

impl Kind {
    /// A valid example, shown whenever a quantity of this kind is written wrongly.
    pub fn example(self) -> &'static str {
        match self {
            Kind::Volume => "\"30.0 mL\" (also L, uL or µL)",
            Kind::Concentration => "\"0.0150 M\" (also mM, uM, µM or mol/L)",
            Kind::Temperature => "\"21 °C\" (also degC or K)",
            Kind::Fraction => "\"15 %\"",
            Kind::Time => "\"90 s\" (also min or h)",
            Kind::Mass => "\"0.01 g\" (also mg)",
        }
    }

    pub fn noun(self) -> &'static str {
        match self {
            Kind::Volume => "a volume",
            Kind::Concentration => "a concentration",
            Kind::Temperature => "a temperature",
            Kind::Fraction => "a percentage",
            Kind::Time => "a time",
            Kind::Mass => "a mass",
        }
    }
}

impl fmt::Display for Kind {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(self.noun())
    }
}

/// Why a quantity text could not be read. `at` is a byte range inside the text.
#[derive(Debug, Clone, PartialEq)]
pub enum UnitError {
    Empty,
    BadNumber {
        at: Range<usize>,
    },
    NotFinite {
        at: Range<usize>,
    },
    MissingUnit {
        at: Range<usize>,
    },
    UnknownUnit {
        unit: String,
        at: Range<usize>,
    },
    WrongKind {
        unit: String,
        found: Kind,
        at: Range<usize>,
    },
    /// A character that a spreadsheet or keyboard put in the number: a decimal comma, a
    /// thousands separator, a full-width digit.
    Character {
        message: String,
        at: Range<usize>,
    },
}

impl UnitError {
    pub fn range(&self, text_len: usize) -> Range<usize> {
        match self {
            UnitError::Empty => 0..text_len,
            UnitError::BadNumber { at }
            | UnitError::NotFinite { at }
            | UnitError::MissingUnit { at }
            | UnitError::UnknownUnit { at, .. }
            | UnitError::WrongKind { at, .. }
            | UnitError::Character { at, .. } => at.clone(),
        }
    }

    /// A one-line description, given the kind that was expected.
    pub fn describe(&self, expected: Kind) -> String {
        match self {
            UnitError::Empty => format!("empty text where {expected} is needed"),
            UnitError::BadNumber { .. } => format!("not a number: {expected} must start with one"),
            UnitError::NotFinite { .. } => "the number is not finite (NaN or infinity)".into(),
            UnitError::MissingUnit { .. } => format!("{expected} needs a unit"),
            UnitError::UnknownUnit { unit, .. } => format!("unknown unit '{unit}'"),
            UnitError::WrongKind { unit, found, .. } => {
                format!("'{unit}' is {found}, but {expected} is needed here")
            }
            UnitError::Character { message, .. } => message.clone(),
        }
    }
}

/// A quantity text split into its number and unit, with their byte ranges.
struct Parts<'a> {
    value: f64,
    number_at: Range<usize>,
    unit: &'a str,
    unit_at: Range<usize>,
}

/// Split "2.50 mM" into its number (with range) and unit text (with range).
fn split_number(text: &str) -> Result<Parts<'_>, UnitError> {
    let lead = text.len() - text.trim_start().len();
    let body = text.trim();
    if body.is_empty() {
        return Err(UnitError::Empty);
    }
    if let Some(e) = odd_character(body, lead) {
        return Err(e);
    }
    // The number runs while characters can belong to a decimal in scientific notation.
    let bytes = body.as_bytes();
    let mut end = 0;
    let mut seen_e = false;
    while end < bytes.len() {
        let c = bytes[end];
        let ok = c.is_ascii_digit()
            || c == b'.'
            || ((c == b'+' || c == b'-') && (end == 0 || matches!(bytes[end - 1], b'e' | b'E')))
            || ((c == b'e' || c == b'E')
                && !seen_e
                && end > 0
                && bytes
                    .get(end + 1)
                    .is_some_and(|n| n.is_ascii_digit() || *n == b'-' || *n == b'+'));
        if !ok {
            break;
        }
        if c == b'e' || c == b'E' {
            seen_e = true;
        }
        end += 1;
    }
    let num_text = &body[..end];
    let num_range = lead..lead + end;
    let lower = body.to_ascii_lowercase();
    if lower.starts_with("nan")
        || lower.starts_with("inf")
        || lower.starts_with("+inf")
        || lower.starts_with("-inf")
    {
        let word = body.find(|c: char| c.is_whitespace()).unwrap_or(body.len());
        return Err(UnitError::NotFinite {
            at: lead..lead + word,
        });
    }
    let value: f64 = num_text.parse().map_err(|_| UnitError::BadNumber {
        at: num_range.clone(),
    })?;
    if !value.is_finite() {
        return Err(UnitError::NotFinite { at: num_range });
    }
    let rest = &body[end..];
    let unit_lead = rest.len() - rest.trim_start().len();
    let unit = rest.trim();
    let unit_start = lead + end + unit_lead;
    Ok(Parts {
        value,
        number_at: num_range,
        unit,
        unit_at: unit_start..unit_start + unit.len(),
    })
}

/// Characters that look like part of a number but are not read as one.
fn odd_character(body: &str, lead: usize) -> Option<UnitError> {
    for (i, c) in body.char_indices() {
        let at = lead + i..lead + i + c.len_utf8();
        let message = match c {
            '０'..='９' | '．' | '，' => format!(
                "'{c}' is a full-width character (U+{:04X}); type the number with ASCII digits and a point",
                c as u32
            ),
            ',' => {
                let before = body[..i].chars().last().is_some_and(|d| d.is_ascii_digit());
                let after: String = body[i + 1..].chars().take_while(|d| d.is_ascii_digit()).collect();
                if !before {
                    continue;
                }
                if after.len() == 3 {
                    "',' reads as a thousands separator; write the number without it (1000, not 1,000)".to_string()
                } else {
                    "',' reads as a decimal comma; write a decimal point (0.5, not 0,5)".to_string()
                }
            }
            '\u{00A0}' | '\u{202F}' | '\u{2009}' if body[..i].chars().last().is_some_and(|d| d.is_ascii_digit())
                && body[i + c.len_utf8()..].chars().next().is_some_and(|d| d.is_ascii_digit()) =>
            {
                format!("a thin or no-break space (U+{:04X}) inside the number; write it without separators", c as u32)
            }
            _ => continue,
        };
        return Some(UnitError::Character { message, at });
    }
    None
}

/// Look a unit up: its kind, and the factor and offset to the internal unit.
fn unit_info(unit: &str) -> Option<(Kind, f64, f64)> {
    let u = unit.replace('μ', "µ"); // Greek mu → micro sign
    let info = match u.as_str() {
        "L" | "l" | "dm3" | "dm^3" => (Kind::Volume, 1.0, 0.0),
        "mL" | "ml" | "cm3" | "cm^3" => (Kind::Volume, 1e-3, 0.0),
        "uL" | "µL" | "ul" | "µl" => (Kind::Volume, 1e-6, 0.0),
        "M" | "mol/L" | "mol/l" | "mol/dm3" | "mol/dm^3" | "mol L^-1" | "mol L-1" | "mol dm-3"
        | "mol dm^-3" | "mol·dm⁻³" | "mol dm⁻³" | "mol·L⁻¹" => {
            (Kind::Concentration, 1.0, 0.0)
        }
        "mM" | "mmol/L" | "mmol/l" | "mmol/dm3" | "mmol dm-3" | "mmol dm^-3" => {
            (Kind::Concentration, 1e-3, 0.0)
        }
        "uM" | "µM" | "umol/L" | "µmol/L" => (Kind::Concentration, 1e-6, 0.0),
        "°C" | "degC" | "℃" | "C" => (Kind::Temperature, 1.0, 273.15),
        "K" => (Kind::Temperature, 1.0, 0.0),
        "%" => (Kind::Fraction, 0.01, 0.0),
        "s" | "sec" => (Kind::Time, 1.0, 0.0),
        "min" => (Kind::Time, 60.0, 0.0),
        "h" => (Kind::Time, 3600.0, 0.0),
        _ => return None,
    };
    Some(info)
}

/// A quantity read from text, in internal units.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Quantity {
    pub value: f64,
    pub kind: Kind,
}

/// Parse a quantity of any kind.
pub fn parse_any(text: &str) -> Result<Quantity, UnitError> {
    let p = split_number(text)?;
    if p.unit.is_empty() {
        return Err(UnitError::MissingUnit { at: p.number_at });
    }
    let (kind, factor, offset) = unit_info(p.unit).ok_or_else(|| UnitError::UnknownUnit {
        unit: p.unit.to_string(),
        at: p.unit_at.clone(),
    })?;
    Ok(Quantity {
        value: p.value * factor + offset,
        kind,
    })
}

/// Parse a quantity that must be of `expected` kind; the value comes back in internal units.
pub fn parse(text: &str, expected: Kind) -> Result<f64, UnitError> {
    let p = split_number(text)?;
    let q = parse_any(text)?;
    if q.kind != expected {
        return Err(UnitError::WrongKind {
            unit: p.unit.to_string(),
            found: q.kind,
            at: p.unit_at,
        });
    }
    Ok(q.value)
}

/// A rate constant read from text: its value in M^p s⁻¹ and the concentration exponent p
/// (for a rate law of overall order n, p must be 1 − n).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct RateConstant {
    pub value: f64,
    pub conc_exponent: f64,
}

/// Read a rate constant such as "40 M^-3 s^-1", "0.69 L mol^-1 min^-1", "0.0115 L/mol/s" or
/// "2.1e-3 s^-1". Factors are M (mol/L), L, mol, s, min or h, each with an optional `^power`,
/// separated by spaces, `·` or `*`; a `/` divides by every factor after it.
pub fn parse_rate_constant(text: &str) -> Result<RateConstant, UnitError> {
    let p = split_number(text)?;
    if p.unit.is_empty() {
        return Err(UnitError::MissingUnit { at: p.number_at });
    }
    let (mut molar, mut litre, mut mol, mut time) = (0.0, 0.0, 0.0, 0.0);
    let mut factor = 1.0;
    let mut sign = 1.0;
    let unit_start = p.unit_at.start;
    let mut offset = 0;
    for piece in p.unit.split_inclusive(['/', ' ', '·', '*']) {
        let at = unit_start + offset..unit_start + offset + piece.len();
        offset += piece.len();
        let divides = piece.ends_with('/');
        let word = piece.trim_end_matches(['/', ' ', '·', '*']);
        if !word.is_empty() {
            let (base, power) = match word.split_once('^') {
                Some((b, e)) => (
                    b,
                    e.parse::<f64>().map_err(|_| UnitError::UnknownUnit {
                        unit: word.to_string(),
                        at: at.clone(),
                    })?,
                ),
                None => (word, 1.0),
            };
            let power = power * sign;
            match base {
                "M" => molar += power,
                "L" | "dm3" => litre += power,
                "mol" => mol += power,
                "s" => time += power,
                "min" => {
                    time += power;
                    factor *= 60f64.powf(power);
                }
                "h" => {
                    time += power;
                    factor *= 3600f64.powf(power);
                }
                _ => {
                    return Err(UnitError::UnknownUnit {
                        unit: word.to_string(),
                        at,
                    })
                }
            }
        }
        if divides {
            sign = -1.0;
        }
    }
    let whole = p.unit_at.clone();
    if (litre + mol).abs() > 1e-12 {
        // mol^a L^b is a concentration power only when b = −a.
        return Err(UnitError::UnknownUnit {
            unit: p.unit.to_string(),
            at: whole,
        });
    }
    if (time + 1.0).abs() > 1e-12 {
        return Err(UnitError::WrongKind {
            unit: p.unit.to_string(),
            found: Kind::Time,
            at: whole,
        });
    }
    Ok(RateConstant {
        value: p.value * factor,
        conc_exponent: molar + mol,
    })
}

/// An activation energy in J/mol from "54 kJ/mol", "54000 J/mol" or "12.9 kcal/mol"
/// (thermochemical calorie, 4.184 J).
pub fn parse_energy(text: &str) -> Result<f64, UnitError> {
    let p = split_number(text)?;
    let factor = match p.unit {
        "" => return Err(UnitError::MissingUnit { at: p.number_at }),
        "kJ/mol" | "kJ mol^-1" => 1e3,
        "J/mol" | "J mol^-1" => 1.0,
        "kcal/mol" | "kcal mol^-1" => 4184.0,
        other => {
            return Err(UnitError::UnknownUnit {
                unit: other.to_string(),
                at: p.unit_at,
            })
        }
    };
    Ok(p.value * factor)
}

/// A density in g/mL from "1.18 g/mL", "1.18 g/cm3" or "1180 g/L" / "1.18 kg/L".
pub fn parse_density(text: &str) -> Result<f64, UnitError> {
    let p = split_number(text)?;
    let factor = match p.unit {
        "" => return Err(UnitError::MissingUnit { at: p.number_at }),
        "g/mL" | "g/ml" | "g/cm3" | "g/cm^3" | "kg/L" => 1.0,
        "g/L" => 1e-3,
        other => {
            return Err(UnitError::UnknownUnit {
                unit: other.to_string(),
                at: p.unit_at,
            })
        }
    };
    Ok(p.value * factor)
}

/// A mass in grams from "0.01 g", "1 mg" or "0.1 mg" (a balance's readability).
pub fn parse_mass(text: &str) -> Result<f64, UnitError> {
    let p = split_number(text)?;
    let factor = match p.unit {
        "" => return Err(UnitError::MissingUnit { at: p.number_at }),
        "g" => 1.0,
        "mg" => 1e-3,
        "ug" | "µg" => 1e-6,
        "kg" => 1e3,
        other => {
            return Err(UnitError::UnknownUnit {
                unit: other.to_string(),
                at: p.unit_at,
            })
        }
    };
    Ok(p.value * factor)
}

/// A temperature difference in kelvin from "3 °C", "3 K" or "3 degC" (no offset).
pub fn parse_temperature_difference(text: &str) -> Result<f64, UnitError> {
    let p = split_number(text)?;
    match p.unit {
        "" => Err(UnitError::MissingUnit { at: p.number_at }),
        "°C" | "degC" | "℃" | "C" | "K" => Ok(p.value),
        other => Err(UnitError::UnknownUnit {
            unit: other.to_string(),
            at: p.unit_at,
        }),
    }
}

/// Format a volume in mL with `decimals` places.
pub fn ml(litres: f64, decimals: usize) -> String {
    format!("{:.*}", decimals, litres * 1e3)
}

/// Format a concentration with a unit chosen for readability (M, mM or µM), 3 significant figures.
pub fn concentration(molar: f64) -> String {
    concentration_figures(molar, 3)
}

/// As [`concentration`], with up to `figures` significant figures: three when those are the
/// exact value, else `figures` with trailing zeros dropped.
pub fn concentration_figures(molar: f64, figures: i32) -> String {
    let (v, u) = if molar == 0.0 {
        (0.0, "M")
    } else if molar.abs() >= 0.1 {
        (molar, "M")
    } else if molar.abs() >= 1e-4 {
        (molar * 1e3, "mM")
    } else {
        (molar * 1e6, "µM")
    };
    let three = sig3(v);
    let long = sig(v, figures.max(3));
    let number = if three.parse::<f64>().ok() == long.parse::<f64>().ok() {
        three
    } else if long.contains('.') && !long.contains('e') {
        long.trim_end_matches('0').trim_end_matches('.').to_string()
    } else {
        long
    };
    format!("{number} {u}")
}

/// Three significant figures, without scientific notation for lab-sized numbers (1e-4 up to
/// 1e6); outside that, "1.23e8". Never "-0".
pub fn sig3(v: f64) -> String {
    sig(v, 3)
}

/// `figures` significant figures, as [`sig3`].
pub fn sig(v: f64, figures: i32) -> String {
    if v == 0.0 || !v.is_finite() {
        return if v.is_nan() {
            "NaN".into()
        } else if v == 0.0 {
            "0".into()
        } else {
            format!("{v}")
        };
    }
    let mag = v.abs().log10().floor() as i32;
    let out = if !(-4..6).contains(&mag) {
        format!("{:.*e}", (figures - 1).max(0) as usize, v)
    } else {
        let decimals = (figures - 1 - mag).max(0) as usize;
        format!("{:.*}", decimals, v)
    };
    no_negative_zero(out)
}

/// "-0.00" → "0.00": a rounded zero carries no sign.
pub fn no_negative_zero(s: String) -> String {
    match s.strip_prefix('-') {
        Some(rest) if rest.bytes().all(|b| b == b'0' || b == b'.') => rest.to_string(),
        _ => s,
    }
}

/// A count such as a stoichiometric coefficient: "3", "0.5", "1.333333".
pub fn fmt_count(v: f64) -> String {
    let r = (v * 1e6).round() / 1e6;
    if r == 0.0 {
        "0".into()
    } else {
        format!("{r}")
    }
}

/// Decimal places needed to show a step such as 0.05 mL or 0.001 mL exactly.
pub fn decimals_for_step_ml(step_ml: f64) -> usize {
    for d in 0..6 {
        let scaled = step_ml * 10f64.powi(d as i32);
        if (scaled - scaled.round()).abs() < 1e-6 {
            return d;
        }
    }
    6
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;

    #[test]
    fn spreadsheet_characters_are_named() {
        let said = |t: &str| parse(t, Kind::Volume).unwrap_err().describe(Kind::Volume);
        assert!(said("0,5 mL").contains("decimal comma"));
        assert!(said("1,000 mL").contains("thousands separator"));
        assert!(said("５0 mL").contains("full-width"));
        assert!(said("1\u{202F}000 mL").contains("U+202F"));
    }

    #[test]
    fn volumes_in_litres() {
        assert_relative_eq!(parse("30.0 mL", Kind::Volume).unwrap(), 0.030);
        assert_relative_eq!(parse("250 uL", Kind::Volume).unwrap(), 250e-6);
        assert_relative_eq!(parse("250 µL", Kind::Volume).unwrap(), 250e-6);
        assert_relative_eq!(parse("250 μL", Kind::Volume).unwrap(), 250e-6);
        assert_relative_eq!(parse("1.5L", Kind::Volume).unwrap(), 1.5);
    }

    #[test]
    fn concentrations_in_molar() {
        assert_relative_eq!(parse("0.010 M", Kind::Concentration).unwrap(), 0.010);
        assert_relative_eq!(parse("2.0 mM", Kind::Concentration).unwrap(), 0.002);
        assert_relative_eq!(parse("1.5e-3 mol/L", Kind::Concentration).unwrap(), 0.0015);
        // mol dm⁻³ is the SI spelling of mol/L (BIPM SI Brochure, 9th ed., table 4 and 5.3.7).
        assert_relative_eq!(parse("0.10 mol dm-3", Kind::Concentration).unwrap(), 0.10);
        assert_relative_eq!(parse("0.10 mol/dm3", Kind::Concentration).unwrap(), 0.10);
        assert_relative_eq!(parse("2.0 mmol dm-3", Kind::Concentration).unwrap(), 0.002);
        assert_relative_eq!(parse("40 µM", Kind::Concentration).unwrap(), 40e-6);
    }

    #[test]
    fn temperatures_in_kelvin() {
        // 0 °C = 273.15 K by definition of the Celsius scale (SI Brochure, 9th ed., 2019).
        assert_relative_eq!(parse("22 °C", Kind::Temperature).unwrap(), 295.15);
        assert_relative_eq!(parse("295.15 K", Kind::Temperature).unwrap(), 295.15);
        assert_relative_eq!(parse("-5 degC", Kind::Temperature).unwrap(), 268.15);
    }

    #[test]
    fn fractions_and_times() {
        assert_relative_eq!(parse("15 %", Kind::Fraction).unwrap(), 0.15);
        assert_relative_eq!(parse("10 min", Kind::Time).unwrap(), 600.0);
    }

    #[test]
    fn errors_locate_the_text() {
        assert_eq!(
            parse("30", Kind::Volume),
            Err(UnitError::MissingUnit { at: 0..2 })
        );
        assert_eq!(
            parse("30 mg", Kind::Volume),
            Err(UnitError::UnknownUnit {
                unit: "mg".into(),
                at: 3..5
            })
        );
        assert!(matches!(
            parse("30 mM", Kind::Volume),
            Err(UnitError::WrongKind {
                found: Kind::Concentration,
                ..
            })
        ));
        assert!(matches!(
            parse("NaN M", Kind::Concentration),
            Err(UnitError::NotFinite { .. })
        ));
        assert!(matches!(
            parse("inf mL", Kind::Volume),
            Err(UnitError::NotFinite { .. })
        ));
        assert!(matches!(
            parse("mL", Kind::Volume),
            Err(UnitError::BadNumber { .. })
        ));
        assert_eq!(parse("  ", Kind::Volume), Err(UnitError::Empty));
        assert!(matches!(
            parse("1e999 mL", Kind::Volume),
            Err(UnitError::NotFinite { .. })
        ));
    }

    #[test]
    fn formatting() {
        assert_eq!(concentration(0.0025), "2.50 mM");
        assert_eq!(concentration(0.25), "0.250 M");
        assert_eq!(concentration(4e-5), "40.0 µM");
        assert_eq!(decimals_for_step_ml(0.05), 2);
        assert_eq!(decimals_for_step_ml(0.001), 3);
        assert_eq!(decimals_for_step_ml(5.0), 0);
    }

    #[test]
    fn rate_constants_in_si() {
        // 0.69 L mol⁻¹ min⁻¹ = 0.0115 M⁻¹ s⁻¹ (Liebhafsky & Mohammad, J. Am. Chem. Soc. 55,
        // 3977 (1933), acid-independent path of H2O2 + I⁻ at 25 °C).
        let k = parse_rate_constant("0.69 L mol^-1 min^-1").unwrap();
        assert_relative_eq!(k.value, 0.0115, max_relative = 1e-12);
        assert_relative_eq!(k.conc_exponent, -1.0);
        let k = parse_rate_constant("40 M^-3 s^-1").unwrap();
        assert_relative_eq!(k.value, 40.0);
        assert_relative_eq!(k.conc_exponent, -3.0);
        let k = parse_rate_constant("0.0115 L/mol/s").unwrap();
        assert_relative_eq!(k.conc_exponent, -1.0);
        let k = parse_rate_constant("1.2 L^3 mol^-3 s^-1").unwrap();
        assert_relative_eq!(k.conc_exponent, -3.0);
        assert_relative_eq!(parse_rate_constant("6 h^-1").unwrap().value, 6.0 / 3600.0);
        assert!(parse_rate_constant("40 M^-3").is_err());
        assert!(parse_rate_constant("40 L s^-1").is_err());
        assert!(parse_rate_constant("40 furlong^-1 s^-1").is_err());
        assert!(parse_rate_constant("40").is_err());
    }

    #[test]
    fn energies_and_differences() {
        assert_relative_eq!(parse_energy("54 kJ/mol").unwrap(), 54_000.0);
        // 1 thermochemical calorie = 4.184 J (NIST SP 811, 2008, B.9).
        assert_relative_eq!(parse_energy("10 kcal/mol").unwrap(), 41_840.0);
        assert!(parse_energy("54 kJ").is_err());
        assert_relative_eq!(parse_temperature_difference("3 °C").unwrap(), 3.0);
        assert!(parse_temperature_difference("3 mL").is_err());
    }
}
