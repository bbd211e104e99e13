//! Cautions printed on every sheet. General lines always; reagent lines for the species the plan
//! actually uses. These are reminders, not a risk assessment: every sheet defers to the
//! supplier's SDS, local rules and the institution's safety officer.

/// Lines printed on every sheet, whatever the reagents (common practice in teaching labs).
pub const GENERAL: [&str; 4] = [
    "Wear splash-proof safety goggles, a lab coat and nitrile gloves while preparing stocks and mixing runs.",
    "Read the supplier's safety data sheet (SDS) for every reagent before use. Local rules and your institution's safety officer take precedence over this sheet.",
    "Collect spent mixtures and left-over stocks as your local waste rules require; do not assume the drain is allowed.",
    "Volumes and any predicted times are planning aids, not guarantees: check a pilot run before the class.",
];

/// Reagent cautions, printed when the plan uses all of the listed species. Plain-language summaries of the usual hazard statements
/// for the common salts; `from memory`, to be replaced by the sourced reagent data file.
const BY_SPECIES: [(&[&str], &str); 8] = [
    (&["BrO3-"], "Bromate (e.g. potassium bromate): strong oxidiser, toxic if swallowed, may cause cancer. Weigh it without raising dust, keep it away from organic material, and wash hands after handling."),
    (&["S2O8^2-"], "Persulfate (peroxodisulfate): oxidiser; may cause skin sensitisation and asthma-like symptoms if its dust is inhaled."),
    (&["H2O2"], "Hydrogen peroxide: oxidiser; can cause serious eye damage. Store stocks cool and vented."),
    (&["IO3-"], "Iodate: oxidiser; keep away from combustible material."),
    (&["H+"], "Acid stocks irritate or burn skin and eyes; when diluting, add acid to water."),
    (&["HSO3-"], "Bisulfite releases sulfur dioxide with acid; prepare and use it in a well-ventilated area."),
    (&["S2O3^2-", "H+"], "Thiosulfate decomposes in acid (sulfur and sulfur dioxide): keep the thiosulfate stock out of the acid portion."),
    (&["I-"], "Iodide and iodine solutions stain skin and clothes; iodine vapour irritates eyes."),
];

/// All cautions for a plan whose used stocks contain `species`.
pub fn cautions<'a>(species: impl IntoIterator<Item = &'a str> + Clone) -> Vec<String> {
    let mut out: Vec<String> = GENERAL.iter().map(|s| s.to_string()).collect();
    for (needs, line) in BY_SPECIES {
        if needs
            .iter()
            .all(|sp| species.clone().into_iter().any(|s| s == *sp))
        {
            out.push(line.to_string());
        }
    }
    out
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn general_lines_always_and_bromate_when_used() {
        let none = cautions(Vec::<&str>::new());
        assert_eq!(none.len(), GENERAL.len());
        assert!(none.iter().any(|l| l.contains("goggles")));
        assert!(none.iter().any(|l| l.contains("SDS")));
        assert!(none.iter().any(|l| l.contains("waste")));
        assert!(none.iter().any(|l| l.contains("safety officer")));
        let with = cautions(vec!["BrO3-", "K+"]);
        assert!(with.iter().any(|l| l.contains("may cause cancer")));
    }
}
