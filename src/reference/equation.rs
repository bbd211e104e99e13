//! Chemical equations: "BrO3- + 6 I- + 6 H+ -> Br- + 3 I2 + 3 H2O", read and checked for
//! the balance of every element and of charge.

/// A balanced equation: (species, coefficient) on each side.
#[derive(Debug, Clone, PartialEq)]
pub struct Equation {
    pub reactants: Vec<(String, f64)>,
    pub products: Vec<(String, f64)>,
}

impl Equation {
    /// Net change of `species` per unit of the equation (products positive).
    pub fn net(&self, species: &str) -> f64 {
        let side = |v: &Vec<(String, f64)>| {
            v.iter()
                .filter(|(s, _)| s == species)
                .map(|(_, c)| c)
                .sum::<f64>()
        };
        side(&self.products) - side(&self.reactants)
    }

    pub fn species(&self) -> impl Iterator<Item = &str> {
        self.reactants
            .iter()
            .chain(&self.products)
            .map(|(s, _)| s.as_str())
    }
}

/// Why an equation text could not be read; `at` is a byte range inside it.
#[derive(Debug, Clone, PartialEq)]
pub struct EquationError {
    pub message: String,
    pub at: std::ops::Range<usize>,
}

/// Read "BrO3- + 6 I- + 6 H+ -> Br- + 3 I2 + 3 H2O". Terms are separated by a lone `+`,
/// sides by `->` or `→`; a coefficient is a number before its species, separated by a space.
pub fn parse_equation(text: &str) -> Result<Equation, EquationError> {
    // Tokens with their byte offsets.
    let mut tokens: Vec<(usize, &str)> = Vec::new();
    let mut start = None;
    for (i, c) in text.char_indices() {
        if c.is_whitespace() {
            if let Some(s) = start.take() {
                tokens.push((s, &text[s..i]));
            }
        } else if start.is_none() {
            start = Some(i);
        }
    }
    if let Some(s) = start {
        tokens.push((s, &text[s..]));
    }
    let arrows: Vec<usize> = tokens
        .iter()
        .enumerate()
        .filter(|(_, (_, t))| *t == "->" || *t == "→")
        .map(|(i, _)| i)
        .collect();
    if arrows.len() != 1 {
        return Err(EquationError {
            message: "an equation needs exactly one arrow '->' between reactants and products"
                .into(),
            at: 0..text.len(),
        });
    }
    let side = |toks: &[(usize, &str)]| -> Result<Vec<(String, f64)>, EquationError> {
        let mut out: Vec<(String, f64)> = Vec::new();
        let mut coef: Option<f64> = None;
        let mut expect_term = true;
        for &(at, t) in toks {
            if t == "+" && !expect_term {
                expect_term = true;
                continue;
            }
            if !expect_term {
                return Err(EquationError {
                    message: format!("expected '+' or '->' before '{t}'"),
                    at: at..at + t.len(),
                });
            }
            if coef.is_none() {
                if let Ok(v) = t.parse::<f64>() {
                    if !(v.is_finite() && v > 0.0) {
                        return Err(EquationError {
                            message: "a coefficient must be a positive number".into(),
                            at: at..at + t.len(),
                        });
                    }
                    coef = Some(v);
                    continue;
                }
            }
            let sp = match crate::reference::species::parse(t) {
                Ok(s) => s.name,
                Err(e) => {
                    return Err(EquationError {
                        message: format!("'{t}': {}; {}", e.describe(), e.hint()),
                        at: at..at + t.len(),
                    })
                }
            };
            let c = coef.take().unwrap_or(1.0);
            match out.iter_mut().find(|(s, _)| *s == sp) {
                Some(e) => e.1 += c,
                None => out.push((sp, c)),
            }
            expect_term = false;
        }
        if expect_term {
            let at = toks.last().map_or(0, |(a, t)| a + t.len());
            return Err(EquationError {
                message: "a side of the equation is empty or ends with '+'".into(),
                at: at..at,
            });
        }
        Ok(out)
    };
    let eq = Equation {
        reactants: side(&tokens[..arrows[0]])?,
        products: side(&tokens[arrows[0] + 1..])?,
    };
    eq.check_balance().map_err(|message| EquationError {
        message,
        at: 0..text.len(),
    })?;
    Ok(eq)
}

impl Equation {
    /// Atoms of every element and the charge must be the same on both sides; the message names
    /// what differs, with its count on each side.
    pub fn check_balance(&self) -> Result<(), String> {
        let mut atoms: Vec<(String, [f64; 2])> = Vec::new();
        let mut charge = [0.0, 0.0];
        for (side_no, side) in [&self.reactants, &self.products].into_iter().enumerate() {
            for (sp, n) in side {
                let parsed = crate::reference::species::parse(sp).map_err(|e| e.describe())?;
                let elements = crate::reference::species::elements(sp).map_err(|e| e.describe())?;
                for (e, k) in elements {
                    match atoms.iter_mut().find(|(s, _)| *s == e) {
                        Some((_, sides)) => sides[side_no] += n * k,
                        None => {
                            let mut sides = [0.0, 0.0];
                            sides[side_no] = n * k;
                            atoms.push((e, sides));
                        }
                    }
                }
                charge[side_no] += n * parsed.charge as f64;
            }
        }
        let differs = |[a, b]: [f64; 2]| (a - b).abs() > 1e-9 * (1.0 + a.abs().max(b.abs()));
        let num = crate::units::fmt_count;
        let mut problems: Vec<String> = atoms
            .iter()
            .filter(|(_, sides)| differs(*sides))
            .map(|(e, [l, r])| format!("{e} {} on the left, {} on the right", num(*l), num(*r)))
            .collect();
        if differs(charge) {
            problems.push(format!(
                "charge {} on the left, {} on the right",
                signed(charge[0]),
                signed(charge[1])
            ));
        }
        if problems.is_empty() {
            Ok(())
        } else {
            Err(format!(
                "the equation does not balance: {}",
                problems.join("; ")
            ))
        }
    }
}

/// A charge total with its sign: "+1", "−2", "0".
fn signed(v: f64) -> String {
    let s = crate::units::fmt_count(v.abs());
    if v > 0.0 {
        format!("+{s}")
    } else if v < 0.0 {
        format!("\u{2212}{s}")
    } else {
        "0".into()
    }
}
