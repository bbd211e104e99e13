//! The raw shape of a spec file: what serde reads, every value with its span. Nothing is
//! checked here; [`super::checker`] and the per-section files turn it into the model.

use serde::de::{MapAccess, Visitor};
use serde::{Deserialize, Deserializer};
use std::fmt;
use std::marker::PhantomData;
use toml::{Spanned, Value};

// ---------------------------------------------------------------------------------------------
// Raw shape of the TOML file
// ---------------------------------------------------------------------------------------------

pub(crate) type Q = Spanned<Value>;
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

#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
pub(crate) struct RawSpec {
    pub(crate) plan: Spanned<RawPlan>,
    pub(crate) timing: Spanned<RawTiming>,
    pub(crate) water: Option<RawWater>,
    pub(crate) mixing: Option<RawMixing>,
    pub(crate) ionic_strength: Option<Spanned<RawIonic>>,
    #[serde(default)]
    pub(crate) stock: Vec<Spanned<RawStock>>,
    #[serde(default)]
    pub(crate) device: Vec<Spanned<RawDevice>>,
    #[serde(default)]
    pub(crate) run: Vec<Spanned<RawRun>>,
    pub(crate) reaction: Option<Spanned<RawReaction>>,
    pub(crate) design: Option<Spanned<RawDesign>>,
}

#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
pub(crate) struct RawDesign {
    pub(crate) base: Spanned<Entries<Q>>,
    pub(crate) scheme: Option<Name>,
    pub(crate) multipliers: Option<Spanned<Vec<Spanned<f64>>>>,
    pub(crate) levels: Option<Spanned<Entries<Vec<Q>>>>,
    pub(crate) timing_error: Option<Q>,
    pub(crate) temperature_spread: Option<Q>,
    pub(crate) thermometer_offset: Option<Q>,
    pub(crate) volumetric_error: Option<Q>,
}

#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
pub(crate) struct RawPlan {
    pub(crate) title: Name,
    pub(crate) total_volume: Option<Q>,
    pub(crate) stations: Option<Spanned<i64>>,
    pub(crate) replicates: Option<Spanned<i64>>,
    pub(crate) overage: Option<Q>,
    pub(crate) temperature: Option<Q>,
    pub(crate) tolerance: Option<Q>,
    pub(crate) flasks: Option<Vec<Q>>,
    pub(crate) temperature_band: Option<Q>,
    pub(crate) stock_uncertainty: Option<Q>,
    pub(crate) balance: Option<Q>,
}

#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
pub(crate) struct RawTiming {
    pub(crate) species: Name,
    pub(crate) concentration: Q,
    pub(crate) window: Option<Spanned<Vec<Q>>>,
    pub(crate) lab_period: Option<Q>,
    pub(crate) handling_per_run: Option<Q>,
}

/// A `[reaction]` table, or a preset file (same keys, without `preset`).
#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
pub(crate) struct RawReaction {
    pub(crate) preset: Option<Name>,
    pub(crate) description: Option<String>,
    pub(crate) rate_species: Option<Name>,
    pub(crate) main: Option<Name>,
    pub(crate) clock: Option<Name>,
    pub(crate) visible: Option<Spanned<RawVisible>>,
    pub(crate) term: Option<Vec<Spanned<RawTerm>>>,
    /// The ionic strength at which the terms' k hold (turns the salt effect on).
    pub(crate) k_at_ionic_strength: Option<Q>,
}

#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
pub(crate) struct RawVisible {
    pub(crate) threshold: Q,
    /// "triiodide" or "total".
    #[serde(rename = "as")]
    pub(crate) measured_as: Option<Name>,
    pub(crate) factor: Option<Spanned<f64>>,
    pub(crate) source: Option<String>,
}

#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
pub(crate) struct RawTerm {
    pub(crate) k: Q,
    pub(crate) at: Q,
    pub(crate) activation_energy: Option<Q>,
    pub(crate) orders: Spanned<Entries<Spanned<Value>>>,
    pub(crate) source: Option<String>,
}

#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
pub(crate) struct RawWater {
    pub(crate) devices: Option<Vec<Name>>,
    pub(crate) vessel: Option<Name>,
}

#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
pub(crate) struct RawMixing {
    #[serde(default)]
    pub(crate) keep_apart: Vec<Spanned<Vec<Name>>>,
    pub(crate) pour: Option<Name>,
}

#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
pub(crate) struct RawIonic {
    pub(crate) hold: Q,
    pub(crate) using: Name,
}

#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
pub(crate) struct RawStock {
    pub(crate) name: Name,
    pub(crate) solute: Option<Name>,
    pub(crate) contains: Option<Spanned<Entries<Q>>>,
    pub(crate) vessel: Option<Name>,
    pub(crate) fixed_volume: Option<Q>,
    pub(crate) devices: Option<Vec<Name>>,
    pub(crate) note: Option<String>,
    pub(crate) solute_concentration: Option<Q>,
    pub(crate) purity: Option<Q>,
    pub(crate) dilute_from: Option<Name>,
    pub(crate) concentrate: Option<Spanned<RawConcentrate>>,
    pub(crate) in_runs: Option<bool>,
    /// Relative standard uncertainty of its concentration (overrides the recipe's default).
    pub(crate) uncertainty: Option<Q>,
}

/// A liquid reagent measured by volume: concentrated acid, 30 % peroxide.
#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
pub(crate) struct RawConcentrate {
    pub(crate) density: Q,
    pub(crate) mass_fraction: Q,
}

#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
pub(crate) struct RawDevice {
    pub(crate) name: Name,
    pub(crate) kind: Name,
    pub(crate) capacity: Option<Q>,
    pub(crate) graduation: Option<Q>,
    pub(crate) volume: Option<Q>,
    pub(crate) range: Option<Spanned<Vec<Q>>>,
    pub(crate) step: Option<Q>,
    pub(crate) min: Option<Q>,
    pub(crate) class: Option<Name>,
    pub(crate) fills: Option<Spanned<i64>>,
    pub(crate) per_station: Option<Spanned<i64>>,
    pub(crate) shared: Option<Spanned<bool>>,
    pub(crate) dead_volume: Option<Q>,
}

#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
pub(crate) struct RawRun {
    pub(crate) name: Name,
    pub(crate) targets: Spanned<Entries<Q>>,
    pub(crate) note: Option<String>,
}
