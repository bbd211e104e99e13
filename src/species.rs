//! Species names and their charges.
//!
//! A species is written as its formula with the charge at the end: `H+`, `I-`, `BrO3-`,
//! `S2O3^2-`, `Fe^3+`, `SO4--`. Unicode superscripts (`S2O3²⁻`, `BrO3⁻`) and subscripts are
//! accepted and folded to that ASCII form, which is the one used in every output.
//! A charge of more than one needs a caret (`^2-`) or repeated signs (`--`), because in
//! `SO42-` the digits cannot be told apart from the formula.

/// Fold a species name to its canonical ASCII form.
pub fn canonical(name: &str) -> String {
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
            '−' => '-', // minus sign
            _ => c,
        };
        out.push(mapped);
    }
    flush(&mut out, &mut sup);
    out
}

/// Why a species name is not usable.
#[derive(Debug, Clone, PartialEq, Eq)]
pub enum SpeciesError {
    Empty,
    BadCharge,
    BadCharacter(char),
}

impl SpeciesError {
    pub fn describe(&self) -> String {
        match self {
            SpeciesError::Empty => "empty species name".into(),
            SpeciesError::BadCharge => "the charge is not readable".into(),
            SpeciesError::BadCharacter(c) => format!("'{c}' does not belong in a species name"),
        }
    }
}

/// The charge number z of a species in canonical form.
pub fn charge(name: &str) -> Result<i32, SpeciesError> {
    if name.is_empty() {
        return Err(SpeciesError::Empty);
    }
    if let Some(c) = name
        .chars()
        .find(|c| c.is_whitespace() || matches!(c, '"' | '\'' | '=' | ',' | ';'))
    {
        return Err(SpeciesError::BadCharacter(c));
    }
    let sign_char = match name.chars().last() {
        Some(c @ ('+' | '-')) => c,
        _ => return Ok(0),
    };
    let sign = if sign_char == '+' { 1 } else { -1 };
    let trimmed = name.trim_end_matches(sign_char);
    let repeats = (name.len() - trimmed.len()) as i32;
    if let Some(caret) = trimmed.rfind('^') {
        if repeats != 1 {
            return Err(SpeciesError::BadCharge);
        }
        let digits = &trimmed[caret + 1..];
        if digits.is_empty() {
            return Ok(sign);
        }
        let n: i32 = digits.parse().map_err(|_| SpeciesError::BadCharge)?;
        if n == 0 || caret == 0 {
            return Err(SpeciesError::BadCharge);
        }
        return Ok(sign * n);
    }
    if trimmed.is_empty() {
        return Err(SpeciesError::BadCharge);
    }
    Ok(sign * repeats)
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
        assert_eq!(charge("starch"), Ok(0));
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
}
