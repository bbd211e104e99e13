//! The plan spec: TOML → checked model. Units are read here, names are resolved here, and
//! every problem is reported against the spec text with a hint. Nothing later re-reads the
//! TOML.
//!
//! [`raw`] is what serde reads; [`model`] is the checked spec; [`checker`] holds the tools of
//! checking, and each section of the file has a file of its own.

mod checker;
mod design;
mod devices;
#[cfg(test)]
pub(crate) mod fixture;
pub mod model;
mod plan;
pub mod presets;
mod prior;
mod raw;
mod reaction;
mod sections;
pub mod starter;
mod stocks;

pub use model::*;
pub use prior::*;
pub use stocks::{recipe_uncertainty, Balance, RATIO_TOLERANCE};

use crate::error::{Result, SpecSource};
use checker::{toml_error, Checker};
use raw::RawSpec;

// ---------------------------------------------------------------------------------------------
// Reading and checking
// ---------------------------------------------------------------------------------------------

/// Parse and check a spec for planning.
pub fn load(source: SpecSource) -> Result<Spec> {
    load_for(source, Purpose::Plan)
}

/// The JSON Schema (draft 2020-12) of a spec file, for editors that validate and complete TOML
/// against one. Generated from the types serde reads, so it names exactly the keys clockprep
/// accepts; the checks past shape (units, ranges, cross-checks) stay clockprep's.
pub fn schema() -> String {
    let mut schema = schemars::schema_for!(raw::RawSpec);
    schema.insert("title".into(), "clockprep spec".into());
    schema.insert(
        "description".into(),
        "A clock-reaction lab plan for clockprep: [plan], [timing], stocks, glassware, runs and the prior rate law".into(),
    );
    let mut text = serde_json::to_string_pretty(&schema).expect("a schema serializes");
    text.push('\n');
    text
}

/// Parse and check a spec for a purpose.
pub fn load_for(source: SpecSource, purpose: Purpose) -> Result<Spec> {
    if source.text.len() > limits::INPUT_BYTES {
        return Err(source.error(
            0..0,
            format!(
                "the spec is {} bytes, over the {} byte limit",
                source.text.len(),
                limits::INPUT_BYTES
            ),
            "too large",
            "a spec of a few thousand runs is well under 1 MiB: check that this is the right file",
        ));
    }
    let raw: RawSpec = toml::from_str(&source.text).map_err(|e| toml_error(&source, e))?;
    Checker {
        src: &source,
        purpose,
    }
    .check(raw, source.clone())
}

/// Size limits, checked before any work. Generous against real use: a department's term is a
/// few thousand runs of a few dozen distinct concentration sets, a shelf a dozen stocks.
pub mod limits {
    /// Bytes of a spec or a times CSV (1 MiB).
    pub const INPUT_BYTES: usize = 1 << 20;
    /// `[[run]]`s in one spec.
    pub const RUNS: usize = 5_000;
    /// Distinct target sets that `plan` solves (runs with identical targets share one solve).
    pub const DISTINCT_RUNS: usize = 1_000;
    /// `[[stock]]`s and `[[device]]`s, each.
    pub const STOCKS: usize = 100;
    pub const DEVICES: usize = 100;
    /// Characters in a name (title, stock, device, run).
    pub const NAME_CHARS: usize = 200;
    /// `[[section]]`s in one spec.
    pub const SECTIONS: usize = 100;
    /// Trials in a times CSV.
    pub const TRIALS: usize = 20_000;
}

#[cfg(test)]
mod tests {
    use super::*;

    /// The smallest spec that plans, as TOML.
    fn small() -> String {
        super::fixture::Fixture::small_bromate().text()
    }

    fn load_str(text: &str) -> Result<Spec> {
        load(SpecSource::new("t.toml", text))
    }

    #[test]
    fn loads_a_small_spec() {
        let s = load_str(&small()).unwrap();
        assert_eq!(s.runs[0].targets[0].species, "I-");
        let lab = s.lab.as_ref().expect("a planning spec has its lab part");
        assert_eq!(lab.stocks.len(), 3);
        assert_eq!(lab.timing_stock, 2);
        approx::assert_relative_eq!(lab.total_volume, 0.020);
        approx::assert_relative_eq!(lab.overage, 0.10);
        // ½ Σ c z² for 0.0400 M KBrO3 = 0.0400 M (1:1 electrolyte).
        approx::assert_relative_eq!(lab.stocks[1].ionic_strength(), 0.040);
        assert!(s.prior.is_none() && s.design.is_none());
    }

    #[test]
    fn bare_number_points_at_it() {
        let text = small().replace("\"20.0 mL\"", "20");
        let e = load_str(&text).unwrap_err();
        assert!(e.message().contains("bare number"), "{}", e.message());
        assert!(e.help_text().unwrap().contains("\"30.0 mL\""));
    }

    #[test]
    fn unknown_keys_are_errors() {
        let text = small().replace("title = \"test\"", "title = \"test\"\ncolour = \"red\"");
        let e = load_str(&text).unwrap_err();
        assert!(e.message().contains("unknown field"), "{}", e.message());
    }
}
