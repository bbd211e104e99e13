//! A stock's recipe and its cross-checks: the solute formula against the species it supplies,
//! `solute_concentration` against `contains`, a dilution against its source.

use super::checker::{inner, Checker};
use super::model::*;
use super::raw::*;
use crate::error::Result;
use crate::reference::species;
use crate::units::{self, Kind};
use std::ops::Range;

/// How far the listed concentrations of a stock may stray from its formula's ratios, and the
/// species of a dilution from one dilution factor: 0.5 %, half the default tolerance, so
/// concentrations rounded to three figures pass and a wrong ratio never does.
pub const RATIO_TOLERANCE: f64 = 0.005;

fn describe_elements(elements: &[(String, f64)]) -> String {
    elements
        .iter()
        .map(|(e, n)| format!("{} {e}", units::fmt_count(*n)))
        .collect::<Vec<_>>()
        .join(", ")
}

/// The formula of a liquid reagent from its species, when they determine it: one neutral
/// species, or ions whose concentrations stand in small whole-number ratios with no net
/// charge (H+ and Cl- at 1:1 → HCl). Returns the formula and its formula-unit concentration.
fn formula_from_species(contains: &[(String, f64)]) -> Option<(String, f64)> {
    let parsed: Vec<(species::Species, f64)> = contains
        .iter()
        .map(|(s, c)| species::parse(s).ok().map(|p| (p, *c)))
        .collect::<Option<_>>()?;
    if let [(only, c)] = parsed.as_slice() {
        return (only.charge == 0).then(|| (only.formula.clone(), *c));
    }
    let c_min = parsed.iter().map(|(_, c)| *c).fold(f64::INFINITY, f64::min);
    for m in 1..=6u32 {
        let n: Vec<u32> = parsed
            .iter()
            .map(|(_, c)| (m as f64 * c / c_min).round() as u32)
            .collect();
        let whole = parsed.iter().zip(&n).all(|((_, c), &k)| {
            k >= 1 && ((m as f64 * c / c_min) - k as f64).abs() <= RATIO_TOLERANCE * k as f64
        });
        let neutral = parsed
            .iter()
            .zip(&n)
            .map(|((p, _), &k)| p.charge as i64 * k as i64)
            .sum::<i64>()
            == 0;
        if !(whole && neutral) {
            continue;
        }
        // Cations first, then neutral species, then anions; by name within each.
        let mut order: Vec<usize> = (0..parsed.len()).collect();
        order.sort_by(|&a, &b| {
            (-parsed[a].0.charge.signum(), &parsed[a].0.formula)
                .cmp(&(-parsed[b].0.charge.signum(), &parsed[b].0.formula))
        });
        let mut formula = String::new();
        for &i in &order {
            let body = &parsed[i].0.formula;
            let k = n[i];
            let simple = crate::reference::formula::parse_formula(body)
                .map(|e| e.len() == 1 && e[0].1 == 1.0)
                .unwrap_or(false);
            match (k, simple) {
                (1, _) => formula.push_str(body),
                (_, true) => formula.push_str(&format!("{body}{k}")),
                _ => formula.push_str(&format!("({body}){k}")),
            }
        }
        let mut per_unit: Vec<f64> = parsed
            .iter()
            .zip(&n)
            .map(|((_, c), &k)| c / k as f64)
            .collect();
        per_unit.sort_by(f64::total_cmp);
        let unit_c = per_unit.iter().sum::<f64>() / per_unit.len() as f64;
        return Some((formula, unit_c));
    }
    None
}

impl Checker<'_> {
    /// The recipe of a stock: dilution of an earlier stock, a liquid measured by volume, or a
    /// solid weighed out. The solute's formula is cross-checked against `contains`: it must
    /// split into whole numbers of the listed species (water of hydration aside) with no net
    /// charge, the listed concentrations must stand in those ratios (within
    /// [`RATIO_TOLERANCE`]), and the formula-unit concentration follows from them, whatever
    /// the order of the keys.
    pub(super) fn recipe(
        &self,
        r: &RawStock,
        name: &str,
        contains: &[(String, f64)],
        earlier: &[Stock],
    ) -> Result<Recipe> {
        let stated = r
            .solute_concentration
            .as_ref()
            .map(|q| self.positive(q, Kind::Concentration, "solute_concentration"))
            .transpose()?;
        let contains_at = r
            .contains
            .as_ref()
            .map_or_else(|| inner(r.name.span(), &self.src.text), |c| c.span());
        if let Some(from) = &r.dilute_from {
            return self.dilution(from, name, contains, earlier, contains_at);
        }
        let (formula, concentration) = match (&r.solute, &r.concentrate) {
            (None, None) => return Ok(Recipe::None),
            (None, Some(c)) => {
                let Some((formula, unit_c)) = formula_from_species(contains) else {
                    return Err(self.err(
                        c.span(),
                        format!("stock '{name}': the liquid reagent's formula does not follow from its species"),
                        "which reagent?",
                        "add solute = \"...\" with the reagent's formula, e.g. solute = \"HCl\" for concentrated hydrochloric acid",
                    ));
                };
                (formula, Some(stated.unwrap_or(unit_c)))
            }
            (Some(solute), _) => {
                let formula = solute.get_ref().trim().to_string();
                let at = inner(solute.span(), &self.src.text);
                let elements = match crate::reference::formula::anhydrous(&formula) {
                    Ok(e) => e,
                    // A named preparation such as "starch" is fine without a formula.
                    Err(_)
                        if crate::reference::reagents::reagent_for(Some(&formula), &[])
                            .is_some() =>
                    {
                        return Ok(Recipe::None)
                    }
                    Err(e) => {
                        let start = (at.start + e.at).min(at.end);
                        return Err(self.err(
                            start..(start + 1).min(at.end.max(start + 1)),
                            format!("solute '{formula}': {}", e.message),
                            "not a formula",
                            "write the solid's formula, e.g. solute = \"Na2S2O3·5H2O\" (or Na2S2O3*5H2O)",
                        ));
                    }
                };
                let c = self.solute_concentration(
                    name,
                    &formula,
                    &elements,
                    contains,
                    stated,
                    at.clone(),
                    contains_at.clone(),
                )?;
                (formula, c)
            }
        };
        let molar_mass = crate::reference::formula::molar_mass(&formula).map_err(|e| {
            self.err(
                contains_at.clone(),
                format!("stock '{name}': formula '{formula}': {}", e.message),
                "here",
                "add solute = \"...\" with the formula",
            )
        })?;
        let concentration = concentration.ok_or_else(|| {
            self.err(
                contains_at.clone(),
                format!("stock '{name}' needs its solute concentration"),
                "here",
                "add solute_concentration = \"0.100 M\"",
            )
        })?;
        let purity = match &r.purity {
            None => 1.0,
            Some(q) => {
                let p = self.positive(q, Kind::Fraction, "purity")?;
                if p > 1.0 {
                    return Err(self.err(
                        inner(q.span(), &self.src.text),
                        "purity cannot exceed 100 %",
                        "too high",
                        "e.g. purity = \"99.5 %\"",
                    ));
                }
                p
            }
        };
        match &r.concentrate {
            None => Ok(Recipe::Weigh {
                formula,
                concentration,
                molar_mass,
                purity,
            }),
            Some(c) => {
                let c = c.get_ref();
                let density = self.special(
                    &c.density,
                    "density",
                    Kind::Concentration,
                    "\"1.18 g/mL\"",
                    units::parse_density,
                )?;
                let mass_fraction =
                    self.positive(&c.mass_fraction, Kind::Fraction, "mass_fraction")?;
                if mass_fraction > 1.0 {
                    return Err(self.err(
                        inner(c.mass_fraction.span(), &self.src.text),
                        "mass_fraction cannot exceed 100 %",
                        "too high",
                        "e.g. mass_fraction = \"37 %\"",
                    ));
                }
                Ok(Recipe::Measure {
                    formula,
                    concentration,
                    molar_mass,
                    mass_fraction,
                    density,
                })
            }
        }
    }

    /// The formula-unit concentration of a solute from the species it supplies.
    #[allow(clippy::too_many_arguments)]
    pub(super) fn solute_concentration(
        &self,
        name: &str,
        formula: &str,
        elements: &[(String, f64)],
        contains: &[(String, f64)],
        stated: Option<f64>,
        at: Range<usize>,
        contains_at: Range<usize>,
    ) -> Result<Option<f64>> {
        use crate::reference::formula::{dissociation, Ion, Mismatch};
        if contains.is_empty() {
            return Ok(stated);
        }
        let ions: Vec<Ion> = contains
            .iter()
            .map(|(sp, _)| {
                let s = species::parse(sp)
                    .map_err(|e| self.err(contains_at.clone(), e.describe(), "here", e.hint()))?;
                let elements = species::elements(sp)
                    .map_err(|e| self.err(contains_at.clone(), e.describe(), "here", e.hint()))?;
                Ok(Ion {
                    name: s.name,
                    elements,
                    charge: s.charge,
                })
            })
            .collect::<Result<_>>()?;
        let listed = contains
            .iter()
            .map(|(s, _)| s.as_str())
            .collect::<Vec<_>>()
            .join(", ");
        let n = match dissociation(elements, &ions) {
            Ok(n) => n,
            Err(Mismatch::Ambiguous) if stated.is_some() => return Ok(stated),
            Err(Mismatch::Ambiguous) => {
                return Err(self.err(
                    at,
                    format!("stock '{name}': {formula} splits into {listed} in more than one way"),
                    "ambiguous",
                    "give the formula unit's concentration, e.g. solute_concentration = \"0.100 M\"",
                ))
            }
            Err(Mismatch::CannotSupply { species, element }) => {
                return Err(self.err(
                    at,
                    format!("stock '{name}': solute '{formula}' has no {element}, so it cannot supply {species}, which contains lists"),
                    "does not match contains",
                    format!("check the formula against the species (a zero typed for the letter O?) and the contains table; {formula} is read as {}", describe_elements(elements)),
                ))
            }
            Err(Mismatch::NoSplit { rest }) => {
                let (msg, help) = match rest {
                    Some(rest) => (
                        format!("stock '{name}': solute '{formula}' gives {listed} and also {rest}, which contains does not list"),
                        format!("list every ion the solute gives (spectator ions count in the ionic strength), e.g. add {rest} to contains, or fix the formula"),
                    ),
                    None => (
                        format!("stock '{name}': solute '{formula}' does not split into whole numbers of {listed} with no net charge"),
                        "check the formula and the charges in contains, e.g. solute = \"Na2S2O3·5H2O\" with contains = { \"S2O3^2-\" = \"1.00 mM\", \"Na+\" = \"2.00 mM\" }".to_string(),
                    ),
                };
                return Err(self.err(at, msg, "does not match contains", help));
            }
        };
        let mut per_unit: Vec<(f64, usize)> = contains
            .iter()
            .zip(&n)
            .enumerate()
            .map(|(i, ((_, c), &k))| (c / k as f64, i))
            .collect();
        per_unit.sort_by(|a, b| a.0.total_cmp(&b.0));
        let (lo, lo_i) = per_unit[0];
        let (hi, hi_i) = per_unit[per_unit.len() - 1];
        if (hi - lo) / hi > RATIO_TOLERANCE {
            let show =
                |i: usize| format!("{} {}", units::concentration(contains[i].1), contains[i].0);
            let keep_lo = units::concentration(lo * n[hi_i] as f64);
            let keep_hi = units::concentration(hi * n[lo_i] as f64);
            return Err(self.err(
                contains_at,
                format!(
                    "stock '{name}': {formula} gives {} {} per {} {}, but contains has {} and {}",
                    n[lo_i], contains[lo_i].0, n[hi_i], contains[hi_i].0, show(lo_i), show(hi_i)
                ),
                "ratio does not match the formula",
                format!(
                    "make the concentrations follow the formula: \"{}\" = \"{keep_hi}\" beside \"{}\" = \"{}\", or \"{}\" = \"{keep_lo}\" beside \"{}\" = \"{}\"; or fix the solute",
                    contains[lo_i].0, contains[hi_i].0, units::concentration(contains[hi_i].1),
                    contains[hi_i].0, contains[lo_i].0, units::concentration(contains[lo_i].1),
                ),
            ));
        }
        let derived = per_unit.iter().map(|(c, _)| c).sum::<f64>() / per_unit.len() as f64;
        if let Some(s) = stated {
            if ((s - derived) / derived).abs() > RATIO_TOLERANCE {
                return Err(self.err(
                    contains_at,
                    format!(
                        "stock '{name}': solute_concentration {} disagrees with contains, which gives {} of {formula}",
                        units::concentration(s),
                        units::concentration(derived)
                    ),
                    "disagrees with solute_concentration",
                    "leave solute_concentration out (it follows from contains), or correct one of them",
                ));
            }
            return Ok(Some(s));
        }
        Ok(Some(derived))
    }

    /// A stock made by diluting an earlier one: every species of the source must be in it,
    /// each diluted by the same factor.
    pub(super) fn dilution(
        &self,
        from: &Name,
        name: &str,
        contains: &[(String, f64)],
        earlier: &[Stock],
        contains_at: Range<usize>,
    ) -> Result<Recipe> {
        let key = from.get_ref().trim();
        let at = inner(from.span(), &self.src.text);
        let i = earlier.iter().position(|s| s.name == key).ok_or_else(|| {
            self.err(
                at.clone(),
                format!("unknown stock '{key}'"),
                "not an earlier [[stock]]",
                "dilute from a stock listed above this one",
            )
        })?;
        let src = &earlier[i];
        if matches!(src.recipe, Recipe::Dilute { .. }) {
            return Err(self.err(
                at,
                format!("'{key}' is itself a dilution"),
                "dilution of a dilution",
                "dilute from a stock that is made up directly",
            ));
        }
        if contains.is_empty() {
            return Err(self.err(
                at,
                format!("stock '{name}': a dilution needs the contents of the stock"),
                "here",
                "give contains = { ... } with every species of the stock it is diluted from",
            ));
        }
        let mut factors = Vec::new();
        for (sp, c) in contains {
            let c_src = src.concentration_of(sp);
            if c_src <= 0.0 {
                return Err(self.err(
                    contains_at,
                    format!("stock '{name}' lists {sp}, but '{key}', which it is diluted from, has none"),
                    "not in the source",
                    format!("a dilution holds what '{key}' holds: {}", src.contains.iter().map(|(s, _)| s.as_str()).collect::<Vec<_>>().join(", ")),
                ));
            }
            if c_src <= *c {
                return Err(self.err(
                    at,
                    format!("'{key}' is not more concentrated in {sp} than '{name}'"),
                    "cannot dilute up",
                    "dilute from a more concentrated stock",
                ));
            }
            factors.push((c / c_src, sp));
        }
        factors.sort_by(|a, b| a.0.total_cmp(&b.0));
        let (lo, lo_sp) = factors[0];
        let (hi, hi_sp) = factors[factors.len() - 1];
        if (hi - lo) / hi > RATIO_TOLERANCE {
            return Err(self.err(
                contains_at,
                format!(
                    "stock '{name}': diluting '{key}' scales every species alike, but {lo_sp} is diluted {} times and {hi_sp} {} times",
                    units::sig3(1.0 / lo),
                    units::sig3(1.0 / hi)
                ),
                "not one dilution",
                "give each species its concentration after the same dilution",
            ));
        }
        let factor = factors.iter().map(|(f, _)| f).sum::<f64>() / factors.len() as f64;
        if let Some((sp, c)) = src
            .contains
            .iter()
            .find(|(sp, _)| !contains.iter().any(|(s, _)| s == sp))
        {
            return Err(self.err(
                contains_at,
                format!("stock '{name}' leaves out {sp}, which '{key}' holds"),
                "incomplete",
                format!(
                    "add \"{sp}\" = \"{}\" to contains (it counts in the ionic strength)",
                    units::concentration(c * factor)
                ),
            ));
        }
        Ok(Recipe::Dilute { from: i, factor })
    }
}

/// Standard uncertainties (relative, k = 1) behind a stock's default uncertainty.
pub mod defaults {
    /// Making up to the mark in a class A volumetric flask: ASTM E288 (from memory) allows
    /// ±0.08 mL in 100 mL to ±0.30 mL in 1000 mL; the worst, read as rectangular, 0.046 %.
    pub const FLASK: f64 = 0.000_46;
    /// Weighing a solid, the least allowed: buoyancy, drift and transfer losses when the
    /// balance's readings are fine (common practice).
    pub const WEIGHING: f64 = 0.001;
    /// Measuring out a liquid concentrate or an aliquot of a stock with a class A transfer
    /// pipet or buret of 10 mL or more (from memory).
    pub const ALIQUOT: f64 = 0.002;
    /// A concentrate of nominal strength, e.g. hydrochloric acid sold as 36.5–38.0 % (the
    /// ACS reagent range, from memory): ±2 % of 37.25 %, rectangular, 1.2 %.
    pub const CONCENTRATE: f64 = 0.012;
    /// A stock made up by a method clockprep does not know (no solute formula).
    pub const BY_METHOD: f64 = 0.01;
}

/// The balance a stock is weighed on and the flasks it may be made up in.
pub struct Balance<'a> {
    /// Readability, g.
    pub readability: f64,
    /// The shelf's flask sizes, L.
    pub flasks: &'a [f64],
}

impl Balance<'_> {
    /// Relative standard uncertainty of weighing `grams_per_l` g/L into the smallest of
    /// `flasks` it may be made up in (flasks whose mass is under 100 readabilities are not used
    /// while a larger one holds enough; the solved plan passes the flasks actually chosen). A weighing is two readings, tare and gross,
    /// each rounded to one readability d: u = √2 · d/√12 / m (rectangular rounding, JCGM
    /// 100:2008 (GUM) 4.3.7 and F.2.2.1); never less than [`defaults::WEIGHING`].
    pub fn weighing(&self, grams_per_l: f64) -> f64 {
        let least = super::model::MIN_READABILITIES * self.readability;
        let smallest = self
            .flasks
            .iter()
            .copied()
            .filter(|f| grams_per_l * f >= least)
            .reduce(f64::min)
            .or_else(|| self.flasks.iter().copied().reduce(f64::min))
            .unwrap_or(1.0);
        let mass = grams_per_l * smallest;
        let rounding = 2f64.sqrt() * self.readability / 12f64.sqrt() / mass;
        rounding.max(defaults::WEIGHING)
    }
}

/// A stock's default relative uncertainty from how it is made, and a note of where it comes
/// from. A dilution carries its source's uncertainty with the aliquot's and the flask's.
pub fn recipe_uncertainty(recipe: &Recipe, earlier: &[Stock], balance: &Balance) -> (f64, String) {
    use defaults::*;
    let rss = |parts: &[f64]| parts.iter().map(|u| u * u).sum::<f64>().sqrt();
    match recipe {
        Recipe::Weigh {
            purity,
            concentration,
            molar_mass,
            ..
        } => {
            // A label's assay is a minimum: the true purity lies between it and 100 %.
            let assay = (1.0 - purity).max(0.0) / 12f64.sqrt();
            let weighing = balance.weighing(concentration * molar_mass / purity);
            (
                rss(&[assay, weighing, FLASK]),
                format!(
                    "weighed solid: assay range, weighing on the {} g balance ({} %) and flask",
                    (balance.readability * 1e9).round() / 1e9,
                    crate::units::sig(weighing * 100.0, 2)
                ),
            )
        }
        Recipe::Measure { .. } => (
            rss(&[CONCENTRATE, ALIQUOT, FLASK]),
            "diluted from a concentrate of nominal strength; standardize it for better".into(),
        ),
        Recipe::Dilute { from, .. } => {
            let parent = &earlier[*from];
            (
                rss(&[parent.uncertainty, ALIQUOT, FLASK]),
                format!(
                    "diluted from '{}': its uncertainty, the aliquot and the flask",
                    parent.name
                ),
            )
        }
        _ => (BY_METHOD, "made by its own method: 1 % assumed".into()),
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn weighing_uncertainty_is_the_rounding_of_two_readings() {
        // Two readings each rectangular over one readability d (JCGM 100:2008 (GUM) 4.3.7):
        // u = √2 · d/√12 / m. 0.248 g/L in a 0.5 L flask on a 0.01 g balance: m = 0.124 g,
        // under 100 readabilities in every flask of this shelf, so the smallest is taken.
        let flasks = [0.05, 0.1, 0.5];
        let b = Balance {
            readability: 0.01,
            flasks: &flasks,
        };
        let u = 2f64.sqrt() * 0.01 / 12f64.sqrt() / (0.248 * 0.05);
        approx::assert_relative_eq!(b.weighing(0.248), u, max_relative = 1e-12);
        // 20 g/L: 1 g in 50 mL is exactly 100 readabilities, the smallest flask allowed:
        // 0.41 %.
        let u = 2f64.sqrt() * 0.01 / 12f64.sqrt() / 1.0;
        approx::assert_relative_eq!(b.weighing(20.0), u, max_relative = 1e-12);
        // On an analytical balance the rounding is under the 0.1 % floor.
        let fine = Balance {
            readability: 0.0001,
            flasks: &flasks,
        };
        assert_eq!(fine.weighing(20.0), defaults::WEIGHING);
    }
}
