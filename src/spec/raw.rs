//! The raw shape of a spec file: what serde reads, every value with its span. Nothing is
//! checked here; [`super::checker`] and the per-section files turn it into the model.

use schemars::JsonSchema;
use serde::de::{MapAccess, Visitor};
use serde::{Deserialize, Deserializer};
use std::collections::BTreeMap;
use std::fmt;
use std::marker::PhantomData;
use toml::{Spanned, Value};

// ---------------------------------------------------------------------------------------------
// Raw shape of the TOML file
// ---------------------------------------------------------------------------------------------

pub(crate) type Q = Spanned<Value>;

/// How a quantity is written in the schema: a number with its unit as text ("2.50 mM",
/// "50.0 mL", "21 °C", "15 %"), or a bare number where the key takes one.
pub(crate) struct Quantity;

impl JsonSchema for Quantity {
    fn schema_name() -> std::borrow::Cow<'static, str> {
        "Quantity".into()
    }

    fn json_schema(_: &mut schemars::SchemaGenerator) -> schemars::Schema {
        schemars::json_schema!({
            "description": "a number with its unit, e.g. \"2.50 mM\", \"50.0 mL\", \"21 °C\", \"15 %\"",
            "type": ["string", "number"]
        })
    }
}
pub(crate) type Name = Spanned<String>;

/// A TOML table read in the order it was written, keys with their spans.
#[derive(Debug)]
pub(crate) struct Entries<V>(pub(crate) Vec<(Name, V)>);

impl<'de, V: Deserialize<'de>> Deserialize<'de> for Entries<V> {
    fn deserialize<D: Deserializer<'de>>(d: D) -> std::result::Result<Self, D::Error> {
        struct V_<V>(PhantomData<V>);
        impl<'de, V: Deserialize<'de>> Visitor<'de> for V_<V> {
            type Value = Entries<V>;
            fn expecting(&self, f: &mut fmt::Formatter) -> fmt::Result {
                f.write_str("a table such as { \"I-\" = \"2.50 mM\" }")
            }
            fn visit_map<A: MapAccess<'de>>(
                self,
                mut map: A,
            ) -> std::result::Result<Self::Value, A::Error> {
                let mut out = Vec::new();
                while let Some((k, v)) = map.next_entry()? {
                    out.push((k, v));
                }
                Ok(Entries(out))
            }
        }
        d.deserialize_map(V_(PhantomData))
    }
}

#[derive(Debug, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub(crate) struct RawSpec {
    #[schemars(with = "RawPlan")]
    pub(crate) plan: Spanned<RawPlan>,
    #[schemars(with = "RawTiming")]
    pub(crate) timing: Spanned<RawTiming>,
    pub(crate) water: Option<RawWater>,
    pub(crate) mixing: Option<RawMixing>,
    #[schemars(with = "Option<RawIonic>")]
    pub(crate) ionic_strength: Option<Spanned<RawIonic>>,
    #[serde(default)]
    #[schemars(with = "Vec<RawStock>")]
    pub(crate) stock: Vec<Spanned<RawStock>>,
    #[serde(default)]
    #[schemars(with = "Vec<RawDevice>")]
    pub(crate) device: Vec<Spanned<RawDevice>>,
    #[serde(default)]
    #[schemars(with = "Vec<RawRun>")]
    pub(crate) run: Vec<Spanned<RawRun>>,
    #[schemars(with = "Option<RawReaction>")]
    pub(crate) reaction: Option<Spanned<RawReaction>>,
    #[schemars(with = "Option<RawDesign>")]
    pub(crate) design: Option<Spanned<RawDesign>>,
    /// Lab sections taught the same runs, each on its day.
    #[serde(default)]
    #[schemars(with = "Vec<RawSection>")]
    pub(crate) section: Vec<Spanned<RawSection>>,
}

/// A `[[section]]`: one group taught the same runs on one day.
#[derive(Debug, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub(crate) struct RawSection {
    #[schemars(with = "String")]
    pub(crate) name: Name,
    /// The day it meets, year-month-day: "2026-12-07" (a bare TOML date works too).
    #[schemars(with = "SectionDate")]
    pub(crate) date: Spanned<Value>,
    #[schemars(with = "i64")]
    pub(crate) stations: Spanned<i64>,
    /// Trials of every run at each station; default [plan] replicates.
    #[schemars(with = "Option<i64>")]
    pub(crate) replicates: Option<Spanned<i64>>,
    /// The room's temperature that day; default [plan] temperature.
    #[schemars(with = "Option<Quantity>")]
    pub(crate) temperature: Option<Q>,
}

/// How a section's date is written: "2026-12-07".
pub(crate) struct SectionDate;

impl JsonSchema for SectionDate {
    fn schema_name() -> std::borrow::Cow<'static, str> {
        "SectionDate".into()
    }

    fn json_schema(_: &mut schemars::SchemaGenerator) -> schemars::Schema {
        schemars::json_schema!({
            "description": "the day the section meets, year-month-day, e.g. \"2026-12-07\"",
            "type": "string",
            "pattern": "^[0-9]{4}-[0-9]{2}-[0-9]{2}$"
        })
    }
}

#[derive(Debug, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub(crate) struct RawDesign {
    #[schemars(with = "BTreeMap<String, Quantity>")]
    pub(crate) base: Spanned<Entries<Q>>,
    #[schemars(with = "Option<String>")]
    pub(crate) scheme: Option<Name>,
    #[schemars(with = "Option<Vec<f64>>")]
    pub(crate) multipliers: Option<Spanned<Vec<Spanned<f64>>>>,
    #[schemars(with = "Option<BTreeMap<String, Vec<Quantity>>>")]
    pub(crate) levels: Option<Spanned<Entries<Vec<Q>>>>,
    #[schemars(with = "Option<Quantity>")]
    pub(crate) timing_error: Option<Q>,
    #[schemars(with = "Option<Quantity>")]
    pub(crate) temperature_spread: Option<Q>,
    #[schemars(with = "Option<Quantity>")]
    pub(crate) thermometer_offset: Option<Q>,
    #[schemars(with = "Option<Quantity>")]
    pub(crate) volumetric_error: Option<Q>,
}

#[derive(Debug, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub(crate) struct RawPlan {
    #[schemars(with = "String")]
    pub(crate) title: Name,
    #[schemars(with = "Option<Quantity>")]
    pub(crate) total_volume: Option<Q>,
    #[schemars(with = "Option<i64>")]
    pub(crate) stations: Option<Spanned<i64>>,
    #[schemars(with = "Option<i64>")]
    pub(crate) replicates: Option<Spanned<i64>>,
    #[schemars(with = "Option<Quantity>")]
    pub(crate) overage: Option<Q>,
    #[schemars(with = "Option<Quantity>")]
    pub(crate) temperature: Option<Q>,
    #[schemars(with = "Option<Quantity>")]
    pub(crate) tolerance: Option<Q>,
    #[schemars(with = "Option<Vec<Quantity>>")]
    pub(crate) flasks: Option<Vec<Q>>,
    #[schemars(with = "Option<Quantity>")]
    pub(crate) temperature_band: Option<Q>,
    #[schemars(with = "Option<Quantity>")]
    pub(crate) stock_uncertainty: Option<Q>,
    #[schemars(with = "Option<Quantity>")]
    pub(crate) balance: Option<Q>,
}

#[derive(Debug, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub(crate) struct RawTiming {
    #[schemars(with = "String")]
    pub(crate) species: Name,
    #[schemars(with = "Quantity")]
    pub(crate) concentration: Q,
    #[schemars(with = "Option<Vec<Quantity>>")]
    pub(crate) window: Option<Spanned<Vec<Q>>>,
    #[schemars(with = "Option<Quantity>")]
    pub(crate) lab_period: Option<Q>,
    #[schemars(with = "Option<Quantity>")]
    pub(crate) handling_per_run: Option<Q>,
}

/// A `[reaction]` table, or a preset file (same keys, without `preset`).
#[derive(Debug, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub(crate) struct RawReaction {
    #[schemars(with = "Option<String>")]
    pub(crate) preset: Option<Name>,
    pub(crate) description: Option<String>,
    #[schemars(with = "Option<String>")]
    pub(crate) rate_species: Option<Name>,
    #[schemars(with = "Option<String>")]
    pub(crate) main: Option<Name>,
    #[schemars(with = "Option<String>")]
    pub(crate) clock: Option<Name>,
    #[schemars(with = "Option<RawVisible>")]
    pub(crate) visible: Option<Spanned<RawVisible>>,
    #[schemars(with = "Option<Vec<RawTerm>>")]
    pub(crate) term: Option<Vec<Spanned<RawTerm>>>,
    /// The ionic strength at which the terms' k hold (turns the salt effect on).
    #[schemars(with = "Option<Quantity>")]
    pub(crate) k_at_ionic_strength: Option<Q>,
}

#[derive(Debug, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub(crate) struct RawVisible {
    #[schemars(with = "Quantity")]
    pub(crate) threshold: Q,
    /// "triiodide" or "total".
    #[serde(rename = "as")]
    #[schemars(with = "Option<String>")]
    pub(crate) measured_as: Option<Name>,
    #[schemars(with = "Option<f64>")]
    pub(crate) factor: Option<Spanned<f64>>,
    pub(crate) source: Option<String>,
}

#[derive(Debug, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub(crate) struct RawTerm {
    #[schemars(with = "Quantity")]
    pub(crate) k: Q,
    #[schemars(with = "Quantity")]
    pub(crate) at: Q,
    #[schemars(with = "Option<Quantity>")]
    pub(crate) activation_energy: Option<Q>,
    #[schemars(with = "BTreeMap<String, f64>")]
    pub(crate) orders: Spanned<Entries<Spanned<Value>>>,
    pub(crate) source: Option<String>,
}

#[derive(Debug, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub(crate) struct RawWater {
    #[schemars(with = "Option<Vec<String>>")]
    pub(crate) devices: Option<Vec<Name>>,
    #[schemars(with = "Option<String>")]
    pub(crate) vessel: Option<Name>,
}

#[derive(Debug, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub(crate) struct RawMixing {
    #[serde(default)]
    #[schemars(with = "Vec<Vec<String>>")]
    pub(crate) keep_apart: Vec<Spanned<Vec<Name>>>,
    #[schemars(with = "Option<String>")]
    pub(crate) pour: Option<Name>,
}

#[derive(Debug, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub(crate) struct RawIonic {
    #[schemars(with = "Quantity")]
    pub(crate) hold: Q,
    #[schemars(with = "String")]
    pub(crate) using: Name,
}

#[derive(Debug, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub(crate) struct RawStock {
    #[schemars(with = "String")]
    pub(crate) name: Name,
    #[schemars(with = "Option<String>")]
    pub(crate) solute: Option<Name>,
    #[schemars(with = "Option<BTreeMap<String, Quantity>>")]
    pub(crate) contains: Option<Spanned<Entries<Q>>>,
    #[schemars(with = "Option<String>")]
    pub(crate) vessel: Option<Name>,
    #[schemars(with = "Option<Quantity>")]
    pub(crate) fixed_volume: Option<Q>,
    #[schemars(with = "Option<Vec<String>>")]
    pub(crate) devices: Option<Vec<Name>>,
    pub(crate) note: Option<String>,
    #[schemars(with = "Option<Quantity>")]
    pub(crate) solute_concentration: Option<Q>,
    #[schemars(with = "Option<Quantity>")]
    pub(crate) purity: Option<Q>,
    #[schemars(with = "Option<String>")]
    pub(crate) dilute_from: Option<Name>,
    #[schemars(with = "Option<RawConcentrate>")]
    pub(crate) concentrate: Option<Spanned<RawConcentrate>>,
    pub(crate) in_runs: Option<bool>,
    /// Relative standard uncertainty of its concentration (overrides the recipe's default).
    #[schemars(with = "Option<Quantity>")]
    pub(crate) uncertainty: Option<Q>,
}

/// A liquid reagent measured by volume: concentrated acid, 30 % peroxide.
#[derive(Debug, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub(crate) struct RawConcentrate {
    #[schemars(with = "Quantity")]
    pub(crate) density: Q,
    #[schemars(with = "Quantity")]
    pub(crate) mass_fraction: Q,
}

#[derive(Debug, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub(crate) struct RawDevice {
    #[schemars(with = "String")]
    pub(crate) name: Name,
    #[schemars(with = "String")]
    pub(crate) kind: Name,
    #[schemars(with = "Option<Quantity>")]
    pub(crate) capacity: Option<Q>,
    #[schemars(with = "Option<Quantity>")]
    pub(crate) graduation: Option<Q>,
    #[schemars(with = "Option<Quantity>")]
    pub(crate) volume: Option<Q>,
    #[schemars(with = "Option<Vec<Quantity>>")]
    pub(crate) range: Option<Spanned<Vec<Q>>>,
    #[schemars(with = "Option<Quantity>")]
    pub(crate) step: Option<Q>,
    #[schemars(with = "Option<Quantity>")]
    pub(crate) min: Option<Q>,
    #[schemars(with = "Option<String>")]
    pub(crate) class: Option<Name>,
    #[schemars(with = "Option<i64>")]
    pub(crate) fills: Option<Spanned<i64>>,
    #[schemars(with = "Option<i64>")]
    pub(crate) per_station: Option<Spanned<i64>>,
    #[schemars(with = "Option<bool>")]
    pub(crate) shared: Option<Spanned<bool>>,
    #[schemars(with = "Option<Quantity>")]
    pub(crate) dead_volume: Option<Q>,
}

#[derive(Debug, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub(crate) struct RawRun {
    #[schemars(with = "String")]
    pub(crate) name: Name,
    #[schemars(with = "BTreeMap<String, Quantity>")]
    pub(crate) targets: Spanned<Entries<Q>>,
    pub(crate) note: Option<String>,
}
