//! Species names and their charges.
//!
//! A species is written as its formula with the charge at the end: `H+`, `I-`, `BrO3-`,
//! `S2O3^2-`, `Fe^3+`, `SO4--`. Unicode superscripts (`S2O3²⁻`, `BrO3⁻`), subscripts and the
//! minus sign `−` are accepted. Every name is folded to one canonical ASCII form, used in every
//! output: a single charge as a bare sign (`I-`), a larger one with a caret (`S2O3^2-`), so
//! `SO4--`, `SO4^2-` and `SO₄²⁻` are the same species.
//!
//! A charge of more than one needs a caret (`^2-`) or repeated signs (`--`), because in `SO42-`
//! the digits cannot be told apart from the formula. Anything else is refused with the notation
//! to use: `SO4-2` (digit after the sign), an en dash or another look-alike of `-` or `+`, a
//! name that is not a formula, or a count that reads as a charge (`Cu2+`, `SO42-`).

use crate::reference::formula;

/// Fold Unicode super- and subscripts and the minus sign to ASCII, without checking anything.
fn fold(name: &str) -> String {
    let mut out = String::with_capacity(name.len());
    let mut sup = String::new();
    let flush = |out: &mut String, sup: &mut String| {
        if !sup.is_empty() {
            // "²⁻" → "^2-"; a lone "⁻" → "-"
            if sup.chars().next().is_some_and(|c| c.is_ascii_digit()) {
                out.push('^');
            }
            out.push_str(sup);
            sup.clear();
        }
    };
    for c in name.trim().chars() {
        let mapped_sup = match c {
            '⁰' => Some('0'),
            '¹' => Some('1'),
            '²' => Some('2'),
            '³' => Some('3'),
            '⁴' => Some('4'),
            '⁵' => Some('5'),
            '⁶' => Some('6'),
            '⁷' => Some('7'),
            '⁸' => Some('8'),
            '⁹' => Some('9'),
            '⁺' => Some('+'),
            '⁻' => Some('-'),
            _ => None,
        };
        if let Some(s) = mapped_sup {
            sup.push(s);
            continue;
        }
        flush(&mut out, &mut sup);
        let mapped = match c {
            '₀'..='₉' => char::from_u32(c as u32 - '₀' as u32 + '0' as u32).unwrap_or(c),
            '−' => '-', // U+2212 minus sign
            _ => c,
        };
        out.push(mapped);
    }
    flush(&mut out, &mut sup);
    out
}

/// Fold a species name to its canonical ASCII form. A name that does not read as a species is
/// returned folded but otherwise as written (use [`parse`] to check it).
pub fn canonical(name: &str) -> String {
    match parse(name) {
        Ok(s) => s.name,
        Err(_) => fold(name),
    }
}

/// A checked species: canonical name, formula part and charge number.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Species {
    pub name: String,
    pub formula: String,
    pub charge: i32,
}

/// Why a species name is not usable.
#[derive(Debug, Clone, PartialEq, Eq)]
pub enum SpeciesError {
    Empty,
    BadCharge,
    BadCharacter(char),
    /// A character that looks like `-` or `+` but is not (en dash, full-width plus, ...).
    LookAlike {
        found: char,
        what: &'static str,
        sign: char,
    },
    /// `SO4-2`: the charge's digits after its sign; the suggestion is `SO4^2-`.
    DigitAfterSign {
        suggestion: String,
    },
    /// `Cu2+`, `SO42-`: a count that most likely is the charge.
    CountOrCharge {
        as_charge: String,
        as_count: String,
    },
    /// The part before the charge is not a chemical formula.
    NotFormula(String),
}

impl SpeciesError {
    pub fn describe(&self) -> String {
        match self {
            SpeciesError::Empty => "empty species name".into(),
            SpeciesError::BadCharge => "the charge is not readable".into(),
            SpeciesError::BadCharacter(c) => format!("'{c}' does not belong in a species name"),
            SpeciesError::LookAlike { found, what, sign } => format!(
                "'{found}' ({what}, U+{:04X}) looks like '{sign}' but is not the sign clockprep reads",
                *found as u32
            ),
            SpeciesError::DigitAfterSign { .. } => {
                "the charge's number comes after its sign".into()
            }
            SpeciesError::CountOrCharge { as_count, .. } => format!(
                "the digits before the sign read as a count of atoms ({as_count}), not as the charge"
            ),
            SpeciesError::NotFormula(m) => format!("not a chemical formula: {m}"),
        }
    }

    /// How to write it instead.
    pub fn hint(&self) -> String {
        let notation = "write the formula with its charge at the end: \"H+\", \"BrO3-\", \"S2O3^2-\" (or \"S2O3--\"), \"Fe^3+\"";
        match self {
            SpeciesError::LookAlike { sign, .. } => {
                format!("type the ASCII '{sign}' instead; {notation}")
            }
            SpeciesError::DigitAfterSign { suggestion } => {
                format!("write \"{suggestion}\": the number goes before the sign, after a caret")
            }
            SpeciesError::CountOrCharge {
                as_charge,
                as_count,
            } => format!(
                "write \"{as_charge}\" for the charge, or \"{as_count}\" if the count is meant"
            ),
            _ => notation.into(),
        }
    }
}

fn look_alike(c: char) -> Option<(&'static str, char)> {
    Some(match c {
        '\u{2010}' => ("hyphen", '-'),
        '\u{2011}' => ("non-breaking hyphen", '-'),
        '\u{2012}' => ("figure dash", '-'),
        '\u{2013}' => ("en dash", '-'),
        '\u{2014}' => ("em dash", '-'),
        '\u{02D7}' => ("modifier minus", '-'),
        '\u{FE63}' => ("small hyphen-minus", '-'),
        '\u{FF0D}' => ("full-width hyphen-minus", '-'),
        '\u{FE62}' => ("small plus", '+'),
        '\u{FF0B}' => ("full-width plus", '+'),
        _ => return None,
    })
}

/// Read a species name: fold it, check the formula and the charge notation, and give the
/// canonical name.
pub fn parse(name: &str) -> Result<Species, SpeciesError> {
    let folded = fold(name);
    if folded.is_empty() {
        return Err(SpeciesError::Empty);
    }
    if let Some((c, (what, sign))) = folded.chars().find_map(|c| look_alike(c).map(|l| (c, l))) {
        return Err(SpeciesError::LookAlike {
            found: c,
            what,
            sign,
        });
    }
    if let Some(c) = folded
        .chars()
        .find(|c| c.is_whitespace() || matches!(c, '"' | '\'' | '=' | ',' | ';'))
    {
        return Err(SpeciesError::BadCharacter(c));
    }
    // "SO4-2": a sign followed by digits at the end.
    let tail_digits = folded.len() - folded.trim_end_matches(|c: char| c.is_ascii_digit()).len();
    if tail_digits > 0 {
        let head = &folded[..folded.len() - tail_digits];
        if let Some(sign @ ('+' | '-')) = head.chars().last() {
            let body = head[..head.len() - 1].trim_end_matches('^');
            let digits = folded[folded.len() - tail_digits..].trim_start_matches('0');
            let suggestion = match digits {
                "1" | "" => format!("{body}{sign}"),
                d => format!("{body}^{d}{sign}"),
            };
            return Err(SpeciesError::DigitAfterSign { suggestion });
        }
    }
    let (body, charge, explicit) = split_charge(&folded)?;
    if body.is_empty() || body.contains(['+', '-', '^']) {
        return Err(SpeciesError::BadCharge);
    }
    let elements = formula::parse_formula(body).map_err(|e| SpeciesError::NotFormula(e.message))?;
    // A single sign after a count: "Cu2+" (Cu²⁺ meant) or "SO42-" (SO₄²⁻ meant).
    if charge.abs() == 1 && !explicit {
        let digits = body.len() - body.trim_end_matches(|c: char| c.is_ascii_digit()).len();
        let count = &body[body.len() - digits..];
        let monatomic_cation = charge > 0 && elements.len() == 1 && digits > 0;
        if digits > 0 && (monatomic_cation || digits >= 2) {
            let sign = if charge > 0 { '+' } else { '-' };
            let (lead, charge_digit) = if digits >= 2 {
                (&body[..body.len() - 1], &count[count.len() - 1..])
            } else {
                (&body[..body.len() - digits], count)
            };
            return Err(SpeciesError::CountOrCharge {
                as_charge: format!("{lead}^{charge_digit}{sign}"),
                as_count: format!("{body}^{sign}"),
            });
        }
    }
    let name = match charge {
        0 => body.to_string(),
        1 => format!("{body}+"),
        -1 => format!("{body}-"),
        z if z > 0 => format!("{body}^{z}+"),
        z => format!("{body}^{}-", -z),
    };
    Ok(Species {
        name,
        formula: body.to_string(),
        charge,
    })
}

/// Split a folded name into formula, charge and whether a caret stated it.
fn split_charge(name: &str) -> Result<(&str, i32, bool), SpeciesError> {
    let sign_char = match name.chars().last() {
        Some(c @ ('+' | '-')) => c,
        _ => return Ok((name, 0, false)),
    };
    let sign = if sign_char == '+' { 1 } else { -1 };
    let trimmed = name.trim_end_matches(sign_char);
    let repeats = (name.len() - trimmed.len()) as i32;
    if let Some(caret) = trimmed.rfind('^') {
        if repeats != 1 || caret == 0 {
            return Err(SpeciesError::BadCharge);
        }
        let digits = &trimmed[caret + 1..];
        if digits.is_empty() {
            return Ok((&trimmed[..caret], sign, true));
        }
        if !digits.bytes().all(|b| b.is_ascii_digit()) || digits.len() > 2 {
            return Err(SpeciesError::BadCharge);
        }
        let n: i32 = digits.parse().map_err(|_| SpeciesError::BadCharge)?;
        if n == 0 {
            return Err(SpeciesError::BadCharge);
        }
        return Ok((&trimmed[..caret], sign * n, true));
    }
    if trimmed.is_empty() {
        return Err(SpeciesError::BadCharge);
    }
    Ok((trimmed, sign * repeats, repeats > 1))
}

/// The charge number z of a species name (any accepted notation).
pub fn charge(name: &str) -> Result<i32, SpeciesError> {
    parse(name).map(|s| s.charge)
}

/// Element counts of a species' formula (charge left off).
pub fn elements(name: &str) -> Result<Vec<(String, f64)>, SpeciesError> {
    let s = parse(name)?;
    formula::parse_formula(&s.formula).map_err(|e| SpeciesError::NotFormula(e.message))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn charges_from_names() {
        // Charges of common ions (IUPAC Red Book 2005, IR-5.3 charge notation).
        assert_eq!(charge("H+"), Ok(1));
        assert_eq!(charge("I-"), Ok(-1));
        assert_eq!(charge("BrO3-"), Ok(-1));
        assert_eq!(charge("S2O3^2-"), Ok(-2));
        assert_eq!(charge("Fe^3+"), Ok(3));
        assert_eq!(charge("SO4--"), Ok(-2));
        assert_eq!(charge("K+"), Ok(1));
        assert_eq!(charge("H2O2"), Ok(0));
        assert_eq!(charge("I3-"), Ok(-1));
        assert_eq!(charge("^2-"), Err(SpeciesError::BadCharge));
        assert_eq!(charge("S2O3^x-"), Err(SpeciesError::BadCharge));
        assert_eq!(charge("I -"), Err(SpeciesError::BadCharacter(' ')));
    }

    #[test]
    fn unicode_is_folded() {
        assert_eq!(canonical("S₂O₃²⁻"), "S2O3^2-");
        assert_eq!(canonical("BrO₃⁻"), "BrO3-");
        assert_eq!(canonical(" H⁺ "), "H+");
        assert_eq!(canonical("I−"), "I-");
        assert_eq!(charge(&canonical("S₂O₈²⁻")), Ok(-2));
    }

    #[test]
    fn repeated_signs_are_the_caret_species() {
        // Regression: the documented "S2O3--" was a different species from "S2O3^2-".
        assert_eq!(canonical("S2O3--"), "S2O3^2-");
        assert_eq!(canonical("Fe+++"), "Fe^3+");
        assert_eq!(canonical("I^-"), "I-");
        assert_eq!(canonical("I^1-"), "I-");
    }

    #[test]
    fn sign_before_digit_is_refused_with_the_caret_form() {
        // Regression: "SO4-2" was read as a neutral species.
        let e = parse("SO4-2").unwrap_err();
        assert_eq!(
            e,
            SpeciesError::DigitAfterSign {
                suggestion: "SO4^2-".into()
            }
        );
        assert!(e.hint().contains("\"SO4^2-\""));
        assert_eq!(parse("SO4^2-").unwrap().charge, -2);
    }

    #[test]
    fn look_alike_signs_are_named() {
        let e = parse("S2O3^2\u{2013}").unwrap_err();
        assert!(e.describe().contains("en dash"), "{}", e.describe());
        assert!(e.describe().contains("U+2013"));
        assert!(parse("H\u{FF0B}")
            .unwrap_err()
            .describe()
            .contains("full-width plus"));
    }

    #[test]
    fn a_count_that_reads_as_a_charge_is_refused() {
        let e = parse("Cu2+").unwrap_err();
        assert!(e.hint().contains("\"Cu^2+\""), "{}", e.hint());
        let e = parse("SO42-").unwrap_err();
        assert!(e.hint().contains("\"SO4^2-\""), "{}", e.hint());
        // Written unambiguously, both are fine.
        assert_eq!(charge("Cu^2+"), Ok(2));
        assert_eq!(charge("Cu2^+"), Ok(1));
    }

    #[test]
    fn names_that_are_not_formulas_are_refused() {
        assert!(matches!(parse("starch"), Err(SpeciesError::NotFormula(_))));
        assert!(matches!(parse("Xy+"), Err(SpeciesError::NotFormula(_))));
    }

    #[test]
    fn elements_of_an_ion() {
        assert_eq!(
            elements("S2O3^2-").unwrap(),
            vec![("S".to_string(), 2.0), ("O".to_string(), 3.0)]
        );
    }
}
