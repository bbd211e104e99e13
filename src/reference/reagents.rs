//! Cautions printed on every sheet and card: general lines always, and a line for each reagent
//! the plan uses, from the reagent data file `src/data/reagents.toml` (GHS hazard codes, plain
//! words, stability, source). These are reminders, not a risk assessment: every sheet defers
//! to the supplier's SDS, local rules and the institution's safety officer.

use serde::Deserialize;
use std::sync::OnceLock;

/// Lines printed on every sheet, whatever the reagents (common practice in teaching labs).
pub const GENERAL: [&str; 4] = [
    "Wear splash-proof safety goggles, a lab coat and nitrile gloves while preparing stocks and mixing runs.",
    "Read the supplier's safety data sheet (SDS) for every reagent before use. Local rules and your institution's safety officer take precedence over this sheet.",
    "Collect spent mixtures and left-over stocks as your local waste rules require; do not assume the drain is allowed.",
    "Volumes and any predicted times are planning aids, not guarantees: check a pilot run before the class.",
];

#[derive(Debug, Clone, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Reagent {
    pub name: String,
    pub solutes: Vec<String>,
    pub species: Vec<String>,
    pub ghs: Vec<String>,
    pub plain: String,
    pub stability: String,
    /// Days a made-up stock is used for: 0 on the day it is made.
    pub keeps_days: u32,
    pub source: String,
}

/// GHS hazard statements whose pictogram comes with the signal word "Danger" (the others here
/// take "Warning"), from memory of the GHS classification tables.
const DANGER: [&str; 22] = [
    "H200", "H201", "H202", "H203", "H220", "H224", "H225", "H240", "H241", "H250", "H260", "H270",
    "H271", "H300", "H301", "H310", "H314", "H318", "H330", "H334", "H340", "H350",
];

/// The GHS signal word for a set of hazard statements: "Danger", "Warning", or none.
pub fn signal_word(codes: &[String]) -> Option<&'static str> {
    if codes.iter().any(|c| DANGER.contains(&c.as_str())) {
        Some("Danger")
    } else if codes.is_empty() {
        None
    } else {
        Some("Warning")
    }
}

#[derive(Debug, Clone, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Incompatible {
    pub species: Vec<String>,
    pub plain: String,
    pub source: String,
}

#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
struct Data {
    reagent: Vec<Reagent>,
    incompatible: Vec<Incompatible>,
}

fn data() -> &'static Data {
    static DATA: OnceLock<Data> = OnceLock::new();
    DATA.get_or_init(|| {
        toml::from_str(include_str!("data/reagents.toml"))
            .expect("the reagent data file is valid (checked by a unit test)")
    })
}

/// A formula with its hydrate dot written one way, for comparison.
fn normal(formula: &str) -> String {
    formula
        .trim()
        .replace(['*', '•'], "·")
        .replace(".5H2O", "·5H2O")
}

/// The reagent entry for a stock: by its solute formula, else by the first species that
/// identifies one.
pub fn reagent_for(solute: Option<&str>, species: &[&str]) -> Option<&'static Reagent> {
    let d = data();
    if let Some(s) = solute {
        let s = normal(s);
        if let Some(r) = d
            .reagent
            .iter()
            .find(|r| r.solutes.iter().any(|x| normal(x) == s))
        {
            return Some(r);
        }
    }
    species
        .iter()
        .find_map(|sp| d.reagent.iter().find(|r| r.species.iter().any(|x| x == sp)))
}

/// The caution line of one reagent.
pub fn line(r: &Reagent) -> String {
    let mut name = r.name.clone();
    if let Some(first) = name.get_mut(0..1) {
        first.make_ascii_uppercase();
    }
    if r.ghs.is_empty() {
        format!("{name}: {}.", r.plain)
    } else {
        format!("{name} ({}): {}.", r.ghs.join(", "), r.plain)
    }
}

/// The reagent entries of stocks given as (solute, species it contains), each once, in order.
pub fn reagents<'a>(
    stocks: impl IntoIterator<Item = (Option<&'a str>, Vec<&'a str>)>,
) -> Vec<&'static Reagent> {
    let mut out: Vec<&'static Reagent> = Vec::new();
    for (solute, species) in stocks {
        if let Some(r) = reagent_for(solute, &species) {
            if !out.iter().any(|o| o.name == r.name) {
                out.push(r);
            }
        }
    }
    out
}

/// All cautions for a plan whose stocks are given as (solute, species it contains).
pub fn cautions<'a>(
    stocks: impl IntoIterator<Item = (Option<&'a str>, Vec<&'a str>)>,
) -> Vec<String> {
    let stocks: Vec<(Option<&'a str>, Vec<&'a str>)> = stocks.into_iter().collect();
    let mut out: Vec<String> = GENERAL.iter().map(|s| s.to_string()).collect();
    out.extend(reagents(stocks.iter().cloned()).into_iter().map(line));
    let all_species: Vec<&str> = stocks
        .iter()
        .flat_map(|(_, sp)| sp.iter().copied())
        .collect();
    for inc in &data().incompatible {
        if inc
            .species
            .iter()
            .all(|s| all_species.contains(&s.as_str()))
        {
            out.push(inc.plain.clone());
        }
    }
    out
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn data_file_is_complete() {
        let d = data();
        assert!(d.reagent.len() >= 10);
        for r in &d.reagent {
            assert!(!r.source.is_empty() && !r.plain.is_empty(), "{}", r.name);
            for code in &r.ghs {
                let digits = code.trim_start_matches("EUH").trim_start_matches('H');
                assert!(
                    digits.len() == 3 && digits.chars().all(|c| c.is_ascii_digit()),
                    "{}: {code}",
                    r.name
                );
            }
        }
    }

    #[test]
    fn general_lines_always_and_bromate_when_used() {
        let none = cautions(Vec::new());
        assert_eq!(none.len(), GENERAL.len());
        for word in ["goggles", "gloves", "SDS", "waste", "safety officer"] {
            assert!(none.iter().any(|l| l.contains(word)), "{word}");
        }
        let with = cautions(vec![(Some("KBrO3"), vec!["BrO3-", "K+"])]);
        assert!(with
            .iter()
            .any(|l| l.contains("may cause cancer") && l.contains("H350")));
        // Found by species when no solute is named; thiosulfate with acid adds the pair line.
        let acid = cautions(vec![
            (None, vec!["H+", "Cl-"]),
            (Some("Na2S2O3*5H2O"), vec!["S2O3^2-"]),
        ]);
        assert!(acid.iter().any(|l| l.starts_with("Hydrochloric acid")));
        assert!(acid.iter().any(|l| l.starts_with("Sodium thiosulfate")));
        assert!(acid.iter().any(|l| l.contains("decomposes in acid")));
    }
}
