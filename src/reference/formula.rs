//! Chemical formulas and molar masses, for weighing up stocks.
//!
//! Formulas are written as usual: `KI`, `KBrO3`, `(NH4)2S2O8`, `Na2S2O3·5H2O` (the hydrate dot
//! may also be `*` or `.`), `K4[Fe(CN)6]`. Molar masses use the IUPAC 2021 standard atomic
//! weights (Prohaska et al., Pure Appl. Chem. 94, 573–600, 2022): the single value where the
//! standard weight is one number, the IUPAC conventional value where it is an interval
//! (H, Li, B, C, N, O, Mg, Si, S, Cl, Br, Tl).

/// Standard atomic weights (g/mol) of the elements a teaching prep room meets.
/// Values from IUPAC 2021 as above; from memory where a value could not be checked against the
/// table here — the unit tests pin the ones the clock reagents use.
const ATOMIC_WEIGHTS: [(&str, f64); 42] = [
    ("H", 1.008),
    ("Li", 6.94),
    ("B", 10.81),
    ("C", 12.011),
    ("N", 14.007),
    ("O", 15.999),
    ("F", 18.998_403_162),
    ("Na", 22.989_769_28),
    ("Mg", 24.305),
    ("Al", 26.981_538_4),
    ("Si", 28.085),
    ("P", 30.973_761_998),
    ("S", 32.06),
    ("Cl", 35.45),
    ("K", 39.0983),
    ("Ca", 40.078),
    ("Ti", 47.867),
    ("V", 50.9415),
    ("Cr", 51.9961),
    ("Mn", 54.938_043),
    ("Fe", 55.845),
    ("Co", 58.933_194),
    ("Ni", 58.6934),
    ("Cu", 63.546),
    ("Zn", 65.38),
    ("As", 74.921_595),
    ("Se", 78.971),
    ("Br", 79.904),
    ("Rb", 85.4678),
    ("Sr", 87.62),
    ("Mo", 95.95),
    ("Ag", 107.8682),
    ("Sn", 118.710),
    ("I", 126.904_47),
    ("Cs", 132.905_451_96),
    ("Ba", 137.327),
    ("Ce", 140.116),
    ("W", 183.84),
    ("Hg", 200.592),
    ("Tl", 204.38),
    ("Pb", 207.2),
    ("Bi", 208.9804),
];

pub fn atomic_weight(symbol: &str) -> Option<f64> {
    ATOMIC_WEIGHTS
        .iter()
        .find(|(s, _)| *s == symbol)
        .map(|(_, w)| *w)
}

/// Why a formula could not be read; `at` is a byte offset in it.
#[derive(Debug, Clone, PartialEq)]
pub struct FormulaError {
    pub message: String,
    pub at: usize,
}

/// Element counts of a formula, in order of first appearance.
pub fn parse_formula(text: &str) -> Result<Vec<(String, f64)>, FormulaError> {
    let mut total: Vec<(String, f64)> = Vec::new();
    for (start, piece) in hydrate_parts(text) {
        let lead = piece.len() - piece.trim_start().len();
        let p = piece.trim();
        let at = start + lead;
        // A leading multiplier, as in the 5 of "5H2O".
        let digits = p
            .find(|c: char| !(c.is_ascii_digit() || c == '.'))
            .unwrap_or(p.len());
        let factor = match digits {
            0 => 1.0,
            _ => p[..digits].parse::<f64>().map_err(|_| FormulaError {
                message: "not a number".into(),
                at,
            })?,
        };
        let body = &p[digits..];
        if body.is_empty() {
            return Err(FormulaError {
                message: "empty part of the formula".into(),
                at,
            });
        }
        let mut pos = 0;
        for (e, n) in group(body.as_bytes(), &mut pos, at + digits, false)? {
            match total.iter_mut().find(|(s, _)| *s == e) {
                Some(x) => x.1 += n * factor,
                None => total.push((e, n * factor)),
            }
        }
    }
    if total.is_empty() {
        return Err(FormulaError {
            message: "empty formula".into(),
            at: 0,
        });
    }
    Ok(total)
}

/// Split at hydrate dots: `·`, `•`, `*`, or a `.` that follows part of a formula (a letter,
/// digit or bracket after some letter) and precedes a digit, as in "Na2S2O3.5H2O".
fn hydrate_parts(text: &str) -> Vec<(usize, &str)> {
    let mut parts = Vec::new();
    let mut start = 0;
    let mut seen_letter = false;
    let chars: Vec<(usize, char)> = text.char_indices().collect();
    for (k, &(i, c)) in chars.iter().enumerate() {
        let next_digit = chars.get(k + 1).is_some_and(|(_, n)| n.is_ascii_digit());
        let split = matches!(c, '·' | '•' | '*') || (c == '.' && seen_letter && next_digit);
        if split {
            parts.push((start, &text[start..i]));
            start = i + c.len_utf8();
            seen_letter = false;
        } else if c.is_ascii_alphabetic() {
            seen_letter = true;
        }
    }
    parts.push((start, &text[start..]));
    parts
}

/// The count after an element or bracket (1 when none is written). A count may not start
/// with 0: "KBr03" is almost always "KBrO3" with a zero typed for the letter O.
fn count(b: &[u8], pos: &mut usize, base: usize) -> Result<f64, FormulaError> {
    let start = *pos;
    while *pos < b.len() && b[*pos].is_ascii_digit() {
        *pos += 1;
    }
    if *pos == start {
        return Ok(1.0);
    }
    let digits = std::str::from_utf8(&b[start..*pos]).unwrap_or("");
    if digits.starts_with('0') {
        return Err(FormulaError {
            message: format!("the count '{digits}' starts with a zero; did you mean the letter O?"),
            at: base + start,
        });
    }
    if digits.len() > 4 {
        return Err(FormulaError {
            message: format!("the count '{digits}' is too large for a formula"),
            at: base + start,
        });
    }
    digits.parse().map_err(|_| FormulaError {
        message: "not a count".into(),
        at: base + start,
    })
}

fn group(
    b: &[u8],
    pos: &mut usize,
    base: usize,
    nested: bool,
) -> Result<Vec<(String, f64)>, FormulaError> {
    let mut out: Vec<(String, f64)> = Vec::new();
    let push = |out: &mut Vec<(String, f64)>, e: String, n: f64| match out
        .iter_mut()
        .find(|(s, _)| *s == e)
    {
        Some(x) => x.1 += n,
        None => out.push((e, n)),
    };
    while *pos < b.len() {
        let c = b[*pos];
        if c == b'(' || c == b'[' {
            *pos += 1;
            let inner = group(b, pos, base, true)?;
            let n = count(b, pos, base)?;
            for (e, k) in inner {
                push(&mut out, e, k * n);
            }
        } else if c == b')' || c == b']' {
            if !nested {
                return Err(FormulaError {
                    message: "a closing bracket without an opening one".into(),
                    at: base + *pos,
                });
            }
            *pos += 1;
            return Ok(out);
        } else if c.is_ascii_uppercase() {
            let start = *pos;
            *pos += 1;
            while *pos < b.len() && b[*pos].is_ascii_lowercase() {
                *pos += 1;
            }
            let symbol = std::str::from_utf8(&b[start..*pos]).unwrap_or("");
            if atomic_weight(symbol).is_none() {
                return Err(FormulaError {
                    message: format!("unknown element '{symbol}'"),
                    at: base + start,
                });
            }
            let n = count(b, pos, base)?;
            push(&mut out, symbol.to_string(), n);
        } else {
            return Err(FormulaError {
                message: format!("'{}' does not belong in a formula", c as char),
                at: base + *pos,
            });
        }
    }
    if nested {
        return Err(FormulaError {
            message: "an opening bracket is never closed".into(),
            at: base + *pos,
        });
    }
    Ok(out)
}

/// Molar mass (g/mol) of a formula.
pub fn molar_mass(text: &str) -> Result<f64, FormulaError> {
    Ok(parse_formula(text)?
        .iter()
        .map(|(e, n)| atomic_weight(e).unwrap_or(0.0) * n)
        .sum())
}

/// Elements of a solute's formula unit without its water of hydration ("Na2S2O3·5H2O" →
/// Na2S2O3): water of crystallisation is not one of the species a stock lists.
pub fn anhydrous(text: &str) -> Result<Vec<(String, f64)>, FormulaError> {
    let parts = hydrate_parts(text);
    let (first_at, first) = parts[0];
    let mut total = parse_formula(first).map_err(|e| FormulaError {
        at: e.at + first_at,
        ..e
    })?;
    for &(at, part) in &parts[1..] {
        let counts = parse_formula(part).map_err(|e| FormulaError { at: e.at + at, ..e })?;
        let water = counts.len() == 2
            && counts.iter().any(|(e, _)| e == "H")
            && counts.iter().any(|(e, _)| e == "O")
            && {
                let h = counts.iter().find(|(e, _)| e == "H").map_or(0.0, |x| x.1);
                let o = counts.iter().find(|(e, _)| e == "O").map_or(0.0, |x| x.1);
                (h - 2.0 * o).abs() < 1e-9
            };
        if !water {
            for (e, n) in counts {
                match total.iter_mut().find(|(s, _)| *s == e) {
                    Some(x) => x.1 += n,
                    None => total.push((e, n)),
                }
            }
        }
    }
    Ok(total)
}

/// A species as its elements and charge, for [`dissociation`].
#[derive(Debug, Clone, PartialEq)]
pub struct Ion {
    pub name: String,
    pub elements: Vec<(String, f64)>,
    pub charge: i32,
}

/// Why a formula does not split into the listed species.
#[derive(Debug, Clone, PartialEq)]
pub enum Mismatch {
    /// The species holds an element the formula has none of.
    CannotSupply { species: String, element: String },
    /// No whole-number split explains every atom and the charge; `rest` describes what is
    /// left over by the closest split (a counter-ion that is not listed, for instance).
    NoSplit { rest: Option<String> },
    /// More than one split fits; the species do not say how much formula unit there is.
    Ambiguous,
}

/// Largest coefficient tried for one species in a formula unit (common practice: salts in a
/// teaching lab give at most a few ions of each kind, e.g. K4[Fe(CN)6] gives 4 K+).
const MAX_COEFFICIENT: u32 = 12;

/// How one formula unit splits into the listed species: a whole number of each (at least
/// one) that accounts for every atom of the anhydrous formula and leaves no net charge.
pub fn dissociation(formula: &[(String, f64)], ions: &[Ion]) -> Result<Vec<u32>, Mismatch> {
    for ion in ions {
        if let Some((e, _)) = ion
            .elements
            .iter()
            .find(|(e, _)| !formula.iter().any(|(f, n)| f == e && *n > 0.0))
        {
            return Err(Mismatch::CannotSupply {
                species: ion.name.clone(),
                element: e.clone(),
            });
        }
    }
    let mut found: Vec<Vec<u32>> = Vec::new();
    let mut n = vec![0u32; ions.len()];
    search(formula, ions, 0, &mut n, &mut found);
    match found.len() {
        1 => Ok(found.remove(0)),
        0 => Err(Mismatch::NoSplit {
            rest: leftover(formula, ions),
        }),
        _ => Err(Mismatch::Ambiguous),
    }
}

fn remaining(formula: &[(String, f64)], ions: &[Ion], n: &[u32]) -> Vec<(String, f64)> {
    formula
        .iter()
        .map(|(e, total)| {
            let used: f64 = ions
                .iter()
                .zip(n)
                .map(|(ion, &k)| {
                    k as f64
                        * ion
                            .elements
                            .iter()
                            .find(|(s, _)| s == e)
                            .map_or(0.0, |x| x.1)
                })
                .sum();
            (e.clone(), total - used)
        })
        .collect()
}

fn search(
    formula: &[(String, f64)],
    ions: &[Ion],
    i: usize,
    n: &mut Vec<u32>,
    found: &mut Vec<Vec<u32>>,
) {
    if found.len() > 1 {
        return;
    }
    if i == ions.len() {
        let rest = remaining(formula, ions, n);
        let charge: i64 = ions
            .iter()
            .zip(n.iter())
            .map(|(ion, &k)| ion.charge as i64 * k as i64)
            .sum();
        if charge == 0 && rest.iter().all(|(_, r)| r.abs() < 1e-9) {
            found.push(n.clone());
        }
        return;
    }
    for k in 1..=MAX_COEFFICIENT {
        n[i] = k;
        // Later coefficients are still zero here.
        let rest = remaining(formula, ions, n);
        if rest.iter().any(|(_, r)| *r < -1e-9) {
            break;
        }
        search(formula, ions, i + 1, n, found);
    }
    n[i] = 0;
}

/// What one of each listed species leaves of the formula, written as a species where it is
/// one element ("K+" for KI with only I- listed).
fn leftover(formula: &[(String, f64)], ions: &[Ion]) -> Option<String> {
    let ones = vec![1u32; ions.len()];
    let rest: Vec<(String, f64)> = remaining(formula, ions, &ones)
        .into_iter()
        .filter(|(_, r)| r.abs() > 1e-9)
        .collect();
    if rest.is_empty() || rest.iter().any(|(_, r)| *r < 0.0) {
        return None;
    }
    let charge: i32 = -ions.iter().map(|i| i.charge).sum::<i32>();
    let atoms: String = rest
        .iter()
        .map(|(e, r)| {
            if (r - 1.0).abs() < 1e-9 {
                e.clone()
            } else {
                format!("{e}{}", crate::units::fmt_count(*r))
            }
        })
        .collect();
    if let [(e, count)] = rest.as_slice() {
        let c = count.round() as i32;
        if c >= 1 && charge != 0 && charge % c == 0 {
            let z = charge / c;
            let sign = if z > 0 { '+' } else { '-' };
            let ion = if z.abs() == 1 {
                format!("{e}{sign}")
            } else {
                format!("{e}^{}{sign}", z.abs())
            };
            return Some(if c == 1 { ion } else { format!("{c} {ion}") });
        }
    }
    Some(format!("{atoms} (charge {charge:+})"))
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_abs_diff_eq;

    #[test]
    fn molar_masses_of_clock_reagents() {
        // From IUPAC 2021 standard atomic weights (Prohaska et al., Pure Appl. Chem. 94, 573, 2022):
        // KI 166.00, KBrO3 167.00, Na2S2O3·5H2O 248.17, KIO3 214.00 g/mol.
        assert_abs_diff_eq!(molar_mass("KI").unwrap(), 166.00, epsilon = 0.005);
        assert_abs_diff_eq!(molar_mass("KBrO3").unwrap(), 167.00, epsilon = 0.005);
        assert_abs_diff_eq!(molar_mass("Na2S2O3·5H2O").unwrap(), 248.17, epsilon = 0.005);
        assert_abs_diff_eq!(molar_mass("Na2S2O3*5H2O").unwrap(), 248.17, epsilon = 0.005);
        assert_abs_diff_eq!(molar_mass("Na2S2O3.5H2O").unwrap(), 248.17, epsilon = 0.005);
        assert_abs_diff_eq!(molar_mass("KIO3").unwrap(), 214.00, epsilon = 0.005);
    }

    #[test]
    fn brackets_and_hydrates() {
        // (NH4)2S2O8: 2 N, 8 H, 2 S, 8 O = 228.18 g/mol (same atomic weights).
        let f = parse_formula("(NH4)2S2O8").unwrap();
        assert_eq!(
            f,
            vec![
                ("N".into(), 2.0),
                ("H".into(), 8.0),
                ("S".into(), 2.0),
                ("O".into(), 8.0)
            ]
        );
        assert_abs_diff_eq!(molar_mass("(NH4)2S2O8").unwrap(), 228.18, epsilon = 0.01);
        let f = parse_formula("K4[Fe(CN)6]·3H2O").unwrap();
        assert!(
            f.contains(&("C".into(), 6.0))
                && f.contains(&("H".into(), 6.0))
                && f.contains(&("O".into(), 3.0))
        );
        assert!(parse_formula("Xy2").is_err());
        assert!(parse_formula("(NH4").is_err());
        assert!(parse_formula("NH4)").is_err());
        assert!(parse_formula("").is_err());
        assert!(parse_formula("K-I").is_err());
    }
}
