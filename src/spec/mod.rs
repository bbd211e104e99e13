//! The plan spec: TOML → checked plan. Units are read here, names are resolved here, and every
//! problem is reported against the spec text with a hint. Nothing later re-reads the TOML.

pub mod presets;

use crate::reference::glassware::{Class, Device, DeviceKind};
use crate::error::{Error, Result, SpecSource};
use crate::reference::species;
use crate::units::{self, Kind};
use serde::de::{MapAccess, Visitor};
use serde::{Deserialize, Deserializer};
use std::collections::{BTreeSet, HashMap};
use std::fmt;
use std::marker::PhantomData;
use std::ops::Range;
use toml::{Spanned, Value};

// ---------------------------------------------------------------------------------------------
// Raw shape of the TOML file
// ---------------------------------------------------------------------------------------------

type Q = Spanned<Value>;
type Name = Spanned<String>;

/// A TOML table read in the order it was written, keys with their spans.
#[derive(Debug)]
struct Entries<V>(Vec<(Name, V)>);

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
struct RawSpec {
    plan: Spanned<RawPlan>,
    timing: Spanned<RawTiming>,
    water: Option<RawWater>,
    mixing: Option<RawMixing>,
    ionic_strength: Option<Spanned<RawIonic>>,
    #[serde(default)]
    stock: Vec<Spanned<RawStock>>,
    #[serde(default)]
    device: Vec<Spanned<RawDevice>>,
    #[serde(default)]
    run: Vec<Spanned<RawRun>>,
    reaction: Option<Spanned<RawReaction>>,
    design: Option<Spanned<RawDesign>>,
}

#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
struct RawDesign {
    base: Spanned<Entries<Q>>,
    scheme: Option<Name>,
    multipliers: Option<Spanned<Vec<Spanned<f64>>>>,
    levels: Option<Spanned<Entries<Vec<Q>>>>,
    timing_error: Option<Q>,
    temperature_spread: Option<Q>,
    volumetric_error: Option<Q>,
}

#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
struct RawPlan {
    title: Name,
    total_volume: Option<Q>,
    stations: Option<Spanned<i64>>,
    replicates: Option<Spanned<i64>>,
    overage: Option<Q>,
    temperature: Option<Q>,
    tolerance: Option<Q>,
    flasks: Option<Vec<Q>>,
    temperature_band: Option<Q>,
    stock_uncertainty: Option<Q>,
}

#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
struct RawTiming {
    species: Name,
    concentration: Q,
    window: Option<Spanned<Vec<Q>>>,
    lab_period: Option<Q>,
    handling_per_run: Option<Q>,
}

/// A `[reaction]` table, or a preset file (same keys, without `preset`).
#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
struct RawReaction {
    preset: Option<Name>,
    description: Option<String>,
    rate_species: Option<Name>,
    main: Option<Name>,
    clock: Option<Name>,
    visible: Option<Spanned<RawVisible>>,
    term: Option<Vec<Spanned<RawTerm>>>,
}

#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
struct RawVisible {
    threshold: Q,
    source: Option<String>,
}

#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
struct RawTerm {
    k: Q,
    at: Q,
    activation_energy: Option<Q>,
    orders: Spanned<Entries<Spanned<Value>>>,
    source: Option<String>,
}

#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
struct RawWater {
    devices: Option<Vec<Name>>,
    vessel: Option<Name>,
}

#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
struct RawMixing {
    #[serde(default)]
    keep_apart: Vec<Spanned<Vec<Name>>>,
    pour: Option<Name>,
}

#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
struct RawIonic {
    hold: Q,
    using: Name,
}

#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
struct RawStock {
    name: Name,
    solute: Option<Name>,
    contains: Option<Spanned<Entries<Q>>>,
    vessel: Option<Name>,
    fixed_volume: Option<Q>,
    devices: Option<Vec<Name>>,
    note: Option<String>,
    solute_concentration: Option<Q>,
    purity: Option<Q>,
    dilute_from: Option<Name>,
    concentrate: Option<Spanned<RawConcentrate>>,
    in_runs: Option<bool>,
}

/// A liquid reagent measured by volume: concentrated acid, 30 % peroxide.
#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
struct RawConcentrate {
    density: Q,
    mass_fraction: Q,
}

#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
struct RawDevice {
    name: Name,
    kind: Name,
    capacity: Option<Q>,
    graduation: Option<Q>,
    volume: Option<Q>,
    range: Option<Spanned<Vec<Q>>>,
    step: Option<Q>,
    min: Option<Q>,
    class: Option<Name>,
    fills: Option<Spanned<i64>>,
}

#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
struct RawRun {
    name: Name,
    targets: Spanned<Entries<Q>>,
    note: Option<String>,
}

// ---------------------------------------------------------------------------------------------
// The checked plan
// ---------------------------------------------------------------------------------------------

/// One of the two vessels mixed at t = 0.
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, Hash, serde::Serialize)]
pub enum Vessel {
    A,
    B,
}

impl Vessel {
    pub fn other(self) -> Vessel {
        match self {
            Vessel::A => Vessel::B,
            Vessel::B => Vessel::A,
        }
    }
}

impl fmt::Display for Vessel {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(match self {
            Vessel::A => "A",
            Vessel::B => "B",
        })
    }
}

/// Where the make-up water goes.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum WaterVessel {
    /// Split between the vessels so that their volumes are as close as the glassware allows.
    Split,
    Only(Vessel),
}

#[derive(Debug, Clone)]
pub struct Stock {
    pub name: String,
    pub solute: Option<String>,
    /// Species and their concentrations (mol/L), in the order written.
    pub contains: Vec<(String, f64)>,
    pub vessel: Option<Vessel>,
    pub vessel_span: Option<Range<usize>>,
    /// A volume (L) added to every run regardless of targets, such as an indicator.
    pub fixed_volume: Option<f64>,
    /// Indices of the devices allowed for this stock.
    pub devices: Vec<usize>,
    pub note: Option<String>,
    pub span: Range<usize>,
    pub name_span: Range<usize>,
    /// How the stock is made up.
    pub recipe: Recipe,
    /// False for a bench concentrate that is only diluted to make other stocks.
    pub in_runs: bool,
}

/// How a stock is made up in its volumetric flask.
#[derive(Debug, Clone, PartialEq)]
pub enum Recipe {
    /// Weigh a solid: solute formula-unit concentration (mol/L), molar mass (g/mol), purity.
    Weigh {
        formula: String,
        concentration: f64,
        molar_mass: f64,
        purity: f64,
    },
    /// Measure a liquid reagent by volume (mass fraction w, density g/mL).
    Measure {
        formula: String,
        concentration: f64,
        molar_mass: f64,
        mass_fraction: f64,
        density: f64,
    },
    /// Dilute another stock of the spec: factor = this concentration / that one (M1V1 = M2V2).
    Dilute { from: usize, factor: f64 },
    /// No recipe can be computed (no solute formula); follow the method in use.
    None,
}

impl Stock {
    pub fn concentration_of(&self, species: &str) -> f64 {
        self.contains
            .iter()
            .find(|(s, _)| s == species)
            .map_or(0.0, |(_, c)| *c)
    }

    /// Contribution of one litre of this stock to ionic strength, ½ Σ cᵢ zᵢ² (mol/L).
    pub fn ionic_strength(&self) -> f64 {
        0.5 * self
            .contains
            .iter()
            .map(|(s, c)| {
                let z = species::charge(s).unwrap_or(0) as f64;
                c * z * z
            })
            .sum::<f64>()
    }
}

#[derive(Debug, Clone)]
pub struct Target {
    pub species: String,
    /// mol/L
    pub concentration: f64,
    pub span: Range<usize>,
}

#[derive(Debug, Clone)]
pub struct Run {
    pub name: String,
    pub targets: Vec<Target>,
    pub note: Option<String>,
    pub span: Range<usize>,
}

impl Run {
    /// The targets as (species, mol/L), the initial concentrations of a forecast-only run.
    pub fn target_concentrations(&self) -> Vec<(String, f64)> {
        self.targets
            .iter()
            .map(|t| (t.species.clone(), t.concentration))
            .collect()
    }
}

#[derive(Debug, Clone)]
pub struct Timing {
    pub species: String,
    /// mol/L, identical in every run.
    pub concentration: f64,
    /// Index of the one stock that holds the timing species (always set when planning; a
    /// forecast-only spec may have no stocks).
    pub stock: Option<usize>,
    pub span: Range<usize>,
}

/// What a forecast needs beyond the rate law: temperatures, the timing window, the lab period.
#[derive(Debug, Clone, PartialEq)]
pub struct ForecastSettings {
    /// Planned room temperature, K.
    pub temperature: f64,
    /// Half-width of the temperature band, K.
    pub band: f64,
    /// Shortest and longest time (s) that can be timed well in class.
    pub window: (f64, f64),
    /// Length of the lab period (s), if the station's session should be checked against it.
    pub lab_period: Option<f64>,
    /// Handling time per trial (s): mixing, reading, rinsing.
    pub handling: f64,
}

/// Default timing window: 15 s to 10 min. The lower end keeps a human reaction time of about
/// 0.3 s under a 2 % timing error (0.3/0.02 = 15 s); both ends are common practice.
pub const DEFAULT_WINDOW_S: (f64, f64) = (15.0, 600.0);
/// Default temperature band half-width, K (common practice: a lab room drifts a few degrees).
pub const DEFAULT_BAND_K: f64 = 3.0;
/// Default handling time per trial, s (common practice: mixing, reading and rinsing).
pub const DEFAULT_HANDLING_S: f64 = 180.0;

/// What the spec is read for: planning needs stocks and glassware, a forecast only targets.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Purpose {
    Plan,
    Forecast,
    /// Generating runs: `[design]` is needed and `[[run]]` may be absent.
    Design,
}

/// How `clockprep design` builds a run set around the base point.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Scheme {
    /// The base run, then each species alone at base × each multiplier.
    OneAtATime,
    /// Every combination of each species at base and base × the first multiplier.
    Factorial,
    /// The base run, then each species alone at each of its listed levels.
    Levels,
}

/// The `[design]` table.
#[derive(Debug, Clone, PartialEq)]
pub struct Design {
    /// Species and their base concentrations (mol/L), in the order written.
    pub base: Vec<(String, f64)>,
    pub scheme: Scheme,
    pub multipliers: Vec<f64>,
    /// Explicit levels (mol/L) per species, for `Scheme::Levels`.
    pub levels: Vec<(String, Vec<f64>)>,
    /// Relative timing error of one trial (human reaction).
    pub timing_error: f64,
    /// Unrecorded trial-to-trial temperature scatter, K.
    pub temperature_spread: f64,
    /// Relative volumetric error of a trial when the spec has no glassware to propagate.
    pub volumetric_error: f64,
}

#[derive(Debug, Clone, Copy, PartialEq)]
pub enum IonicTarget {
    /// Hold ionic strength at this value (mol/L) in every run.
    Value(f64),
    /// Hold it at the largest value any run reaches without the inert salt.
    Max,
}

#[derive(Debug, Clone)]
pub struct IonicHold {
    pub target: IonicTarget,
    pub stock: usize,
    pub span: Range<usize>,
}

#[derive(Debug, Clone)]
pub struct Mixing {
    /// Groups of species that must not all be in one vessel before t = 0.
    pub keep_apart: Vec<Vec<String>>,
    pub span: Option<Range<usize>>,
    /// The vessel that is poured into the other at t = 0.
    pub poured: Vessel,
}

/// A checked plan: everything the later stages need, in internal units.
#[derive(Debug, Clone)]
pub struct Spec {
    pub source: SpecSource,
    pub title: String,
    /// L (0 in a spec read only for a forecast, which needs no volumes)
    pub total_volume: f64,
    pub total_span: Range<usize>,
    pub stations: u32,
    pub replicates: u32,
    /// fraction, e.g. 0.15
    pub overage: f64,
    /// K
    pub temperature: Option<f64>,
    /// largest accepted relative deviation of a final concentration
    pub tolerance: f64,
    /// volumetric flask sizes (L), ascending
    pub flasks: Vec<f64>,
    /// relative standard uncertainty of every stock's concentration
    pub stock_uncertainty: f64,
    pub timing: Timing,
    pub stocks: Vec<Stock>,
    pub devices: Vec<Device>,
    pub water_devices: Vec<usize>,
    pub water_vessel: WaterVessel,
    pub mixing: Mixing,
    pub ionic: Option<IonicHold>,
    pub runs: Vec<Run>,
    /// The prior rate law, when the spec gives one.
    pub reaction: Option<crate::kinetics::Reaction>,
    /// Present exactly when `reaction` is.
    pub forecast: Option<ForecastSettings>,
    /// The `[design]` table, when given.
    pub design: Option<Design>,
}

impl Spec {
    /// The timing stock of a spec read for planning (checked there to exist).
    pub fn timing_stock(&self) -> usize {
        self.timing
            .stock
            .expect("a spec read for planning has a timing stock")
    }
}

/// Default volumetric flask sizes (mL): the common stock sizes (common practice).
pub const DEFAULT_FLASKS_ML: [f64; 5] = [50.0, 100.0, 250.0, 500.0, 1000.0];

// ---------------------------------------------------------------------------------------------
// Reading and checking
// ---------------------------------------------------------------------------------------------

/// Parse and check a spec for planning.
pub fn load(source: SpecSource) -> Result<Spec> {
    load_for(source, Purpose::Plan)
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
    pub const DISTINCT_RUNS: usize = 100;
    /// `[[stock]]`s and `[[device]]`s, each.
    pub const STOCKS: usize = 100;
    pub const DEVICES: usize = 100;
    /// Characters in a name (title, stock, device, run).
    pub const NAME_CHARS: usize = 200;
    /// Trials in a times CSV.
    pub const TRIALS: usize = 20_000;
}

/// The range a positive quantity of a kind may take (internal units), and the words for it.
/// Far wider than any clock lab needs (common practice), narrow enough that a denormal or an
/// overflow never reaches the solver: 1 pM to 100 M, 1 nL to 1000 L, 1 ms to a week.
fn lab_range(kind: Kind) -> Option<(f64, f64, &'static str)> {
    match kind {
        Kind::Concentration => Some((1e-12, 100.0, "1 pM to 100 M")),
        Kind::Volume => Some((1e-9, 1000.0, "1 nL to 1000 L")),
        Kind::Time => Some((1e-3, 604_800.0, "1 ms to a week")),
        _ => None,
    }
}

/// Map a TOML error to a located spec error.
fn toml_error(source: &SpecSource, e: toml::de::Error) -> Error {
    let span = e.span().unwrap_or(0..0);
    let msg = e.message().trim().to_string();
    // "[run]" where "[[run]]" is meant: a single table of a kind the spec lists.
    if msg.contains("duplicate key") || msg.contains("sequence") {
        let mut offset = 0;
        for line in source.text.split_inclusive('\n') {
            let header = line.split('#').next().unwrap_or("").trim();
            for table in ["run", "stock", "device", "reaction.term"] {
                if header == format!("[{table}]") {
                    let start = offset + line.find('[').unwrap_or(0);
                    return source.error(
                        start..start + header.len(),
                        format!("[{table}] is a single table, but a spec lists each {table} as [[{table}]]"),
                        "needs double brackets",
                        format!("write [[{table}]] (double brackets) for every {table}"),
                    );
                }
            }
            offset += line.len();
        }
    }
    let key = key_at(&source.text, span.start);
    if let Some((message, help)) = type_error_in_words(&msg, key.as_deref()) {
        return source.error(span, message, "here", help);
    }
    let help = if msg.contains("unknown field") {
        "remove the key or fix its spelling; the README lists every key a spec accepts"
    } else if msg.contains("missing field") {
        "add the missing key; the README shows a complete spec"
    } else {
        "fix the TOML syntax here; strings need double quotes, e.g. total_volume = \"30.0 mL\""
    };
    source.error(span, format!("the spec is not valid: {msg}"), "here", help)
}

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

/// The key whose value starts at `at`: the text before `=` on that line, or the table header.
fn key_at(text: &str, at: usize) -> Option<String> {
    let line_start = text[..at.min(text.len())].rfind('\n').map_or(0, |p| p + 1);
    let line = &text[line_start..at.min(text.len())];
    if let Some((k, _)) = line.rsplit_once('=') {
        let k = k
            .rsplit(['{', ','])
            .next()
            .unwrap_or(k)
            .trim()
            .trim_matches('"');
        return (!k.is_empty()).then(|| k.to_string());
    }
    let rest = &text[line_start..];
    let header = rest.lines().next()?.trim();
    header
        .starts_with('[')
        .then(|| header.trim_matches(['[', ']']).trim().to_string())
}

/// TOML type errors in the words of a spec's author.
fn type_error_in_words(msg: &str, key: Option<&str>) -> Option<(String, String)> {
    let k = key.unwrap_or("this value");
    let whole = |what: &str, example: &str| {
        Some((
            format!("{k} is {what}"),
            format!("write a whole number without quotes, e.g. {example}"),
        ))
    };
    if msg.contains("expected i64") || msg.contains("expected an integer") {
        if msg.contains("string") {
            return Some((
                format!("{k} is a whole number, written without quotes"),
                format!("write it without quotes, e.g. {k} = 2"),
            ));
        }
        return match k {
            "stations" => whole("a whole number of bench groups", "stations = 4"),
            "replicates" => whole("a whole number of trials of each run", "replicates = 2"),
            "fills" => whole("a whole number of fills", "fills = 2"),
            _ => whole("a whole number", &format!("{k} = 2")),
        };
    }
    if msg.contains("expected a boolean") || msg.contains("expected bool") {
        return Some((
            format!("{k} is true or false"),
            format!("write {k} = true or {k} = false, without quotes"),
        ));
    }
    if msg.contains("expected a sequence") {
        // ("[run]" written for "[[run]]" is caught before this, from the text.)
        return Some((
            format!("{k} needs a list"),
            format!("write it in square brackets, e.g. {k} = [\"...\"]"),
        ));
    }
    None
}

struct Checker<'a> {
    src: &'a SpecSource,
    purpose: Purpose,
}

fn inner(span: Range<usize>, text: &str) -> Range<usize> {
    // Spans of TOML strings include their quotes; point inside them.
    let quote = text
        .get(span.start..span.start + 1)
        .is_some_and(|c| c == "\"" || c == "'");
    if quote && span.end > span.start + 1 {
        span.start + 1..span.end - 1
    } else {
        span
    }
}

impl Checker<'_> {
    /// The end of the spec: where a missing table is to be added.
    fn end(&self) -> Range<usize> {
        let n = self.src.text.trim_end().len();
        n..n
    }

    fn err(
        &self,
        span: Range<usize>,
        msg: impl Into<String>,
        label: &str,
        help: impl Into<String>,
    ) -> Error {
        self.src.error(span, msg, label, help)
    }

    /// A quantity of a given kind; `field` names it in messages.
    fn qty(&self, q: &Q, kind: Kind, field: &str) -> Result<f64> {
        let span = q.span();
        match q.get_ref() {
            Value::String(s) => units::parse(s, kind).map_err(|e| {
                let inner = inner(span.clone(), &self.src.text);
                let r = e.range(s.len());
                let at = if r.is_empty() {
                    inner.clone()
                } else {
                    inner.start + r.start..inner.start + r.end
                };
                self.err(
                    at,
                    format!("{field}: {}", e.describe(kind)),
                    "here",
                    format!(
                        "write {} with its unit, e.g. {field} = {}",
                        kind.noun(),
                        kind.example()
                    ),
                )
            }),
            Value::Integer(_) | Value::Float(_) => Err(self.err(
                span,
                format!("{field}: a bare number has no unit"),
                "no unit",
                format!(
                    "write {} as a string with its unit, e.g. {field} = {}",
                    kind.noun(),
                    kind.example()
                ),
            )),
            _ => Err(self.err(
                span,
                format!("{field}: expected {}", kind.noun()),
                "not a quantity",
                format!(
                    "write it as a string with its unit, e.g. {field} = {}",
                    kind.example()
                ),
            )),
        }
    }

    fn positive(&self, q: &Q, kind: Kind, field: &str) -> Result<f64> {
        let v = self.qty(q, kind, field)?;
        if v <= 0.0 {
            return Err(self.err(
                inner(q.span(), &self.src.text),
                format!("{field} must be greater than zero"),
                "not positive",
                format!("give a positive value, e.g. {field} = {}", kind.example()),
            ));
        }
        if let Some((lo, hi, words)) = lab_range(kind) {
            if !(lo..=hi).contains(&v) {
                return Err(self.err(
                    inner(q.span(), &self.src.text),
                    format!(
                        "{field}: {} is outside what a teaching lab uses ({words})",
                        match kind {
                            Kind::Concentration => units::concentration(v),
                            Kind::Volume => format!("{} mL", units::sig3(v * 1e3)),
                            _ => format!("{} s", units::sig3(v)),
                        }
                    ),
                    "out of range",
                    format!(
                        "check the number and its unit, e.g. {field} = {}",
                        kind.example()
                    ),
                ));
            }
        }
        Ok(v)
    }

    fn count(&self, v: &Option<Spanned<i64>>, field: &str, default: u32) -> Result<u32> {
        match v {
            None => Ok(default),
            Some(s) if (1..=10_000).contains(s.get_ref()) => Ok(*s.get_ref() as u32),
            Some(s) => Err(self.err(
                s.span(),
                format!("{field} must be a whole number from 1 to 10000"),
                "out of range",
                format!("e.g. {field} = 2"),
            )),
        }
    }

    fn species(&self, name: &Name) -> Result<String> {
        species::parse(name.get_ref()).map(|s| s.name).map_err(|e| {
            self.err(
                inner(name.span(), &self.src.text),
                format!("species '{}': {}", name.get_ref(), e.describe()),
                "not a species",
                e.hint(),
            )
        })
    }

    fn vessel(&self, name: &Name) -> Result<Vessel> {
        match name.get_ref().trim() {
            "A" | "a" => Ok(Vessel::A),
            "B" | "b" => Ok(Vessel::B),
            other => Err(self.err(
                inner(name.span(), &self.src.text),
                format!("unknown vessel '{other}'"),
                "not a vessel",
                "each run is mixed from two vessels: write vessel = \"A\" or vessel = \"B\"",
            )),
        }
    }

    /// Counts and name lengths against [`limits`], before anything is checked in detail.
    fn check_sizes(&self, raw: &RawSpec) -> Result<()> {
        let over = |what: &str, n: usize, limit: usize, at: Range<usize>| {
            self.err(
                at,
                format!("the spec has {n} {what}, over the limit of {limit}"),
                "too many",
                format!("split the plan into specs of at most {limit} {what}"),
            )
        };
        if raw.run.len() > limits::RUNS {
            return Err(over(
                "runs",
                raw.run.len(),
                limits::RUNS,
                raw.run[limits::RUNS].span(),
            ));
        }
        if raw.stock.len() > limits::STOCKS {
            return Err(over(
                "stocks",
                raw.stock.len(),
                limits::STOCKS,
                raw.stock[limits::STOCKS].span(),
            ));
        }
        if raw.device.len() > limits::DEVICES {
            return Err(over(
                "devices",
                raw.device.len(),
                limits::DEVICES,
                raw.device[limits::DEVICES].span(),
            ));
        }
        let names = std::iter::once(&raw.plan.get_ref().title)
            .chain(raw.stock.iter().map(|s| &s.get_ref().name))
            .chain(raw.device.iter().map(|d| &d.get_ref().name))
            .chain(raw.run.iter().map(|r| &r.get_ref().name));
        for n in names {
            let chars = n.get_ref().chars().count();
            if chars > limits::NAME_CHARS {
                return Err(self.err(
                    inner(n.span(), &self.src.text),
                    format!(
                        "a name of {chars} characters, over the limit of {}",
                        limits::NAME_CHARS
                    ),
                    "too long",
                    "shorten it; put details in a note = \"...\"",
                ));
            }
        }
        Ok(())
    }

    fn check(&self, raw: RawSpec, source: SpecSource) -> Result<Spec> {
        self.check_sizes(&raw)?;
        let plan = raw.plan.get_ref();
        let title = plan.title.get_ref().trim().to_string();
        if title.is_empty() {
            return Err(self.err(
                plan.title.span(),
                "the plan title is empty",
                "empty",
                "e.g. title = \"Section 3 rate law\"",
            ));
        }
        // A forecast needs no volumes; planning does.
        let (total_volume, total_span) = match &plan.total_volume {
            Some(q) => (
                self.positive(q, Kind::Volume, "total_volume")?,
                inner(q.span(), &self.src.text),
            ),
            None if self.purpose == Purpose::Forecast => (0.0, raw.plan.span()),
            None => {
                let at = raw.plan.span().start;
                return Err(self.err(
                    at..at,
                    "[plan] needs total_volume",
                    "in [plan]",
                    "add the volume of every run, e.g. total_volume = \"50.0 mL\"",
                ));
            }
        };
        let stations = self.count(&plan.stations, "stations", 1)?;
        let replicates = self.count(&plan.replicates, "replicates", 1)?;
        let overage = match &plan.overage {
            None => 0.10,
            Some(q) => {
                let v = self.qty(q, Kind::Fraction, "overage")?;
                if !(0.0..=2.0).contains(&v) {
                    return Err(self.err(
                        inner(q.span(), &self.src.text),
                        "overage must be from 0 % to 200 %",
                        "out of range",
                        "e.g. overage = \"15 %\"",
                    ));
                }
                v
            }
        };
        let tolerance = match &plan.tolerance {
            None => 0.01,
            Some(q) => {
                let v = self.positive(q, Kind::Fraction, "tolerance")?;
                if v > 0.5 {
                    return Err(self.err(
                        inner(q.span(), &self.src.text),
                        "tolerance must be at most 50 %",
                        "too large",
                        "e.g. tolerance = \"1 %\"",
                    ));
                }
                v
            }
        };
        let temperature = match &plan.temperature {
            None => None,
            Some(q) => {
                let t = self.qty(q, Kind::Temperature, "temperature")?;
                if !(273.15..=333.15).contains(&t) {
                    return Err(self.err(
                        inner(q.span(), &self.src.text),
                        format!("temperature {:.1} °C is outside 0–60 °C", t - 273.15),
                        "out of range",
                        "clock runs are planned for a teaching lab between 0 and 60 °C, e.g. temperature = \"21 °C\"",
                    ));
                }
                Some(t)
            }
        };
        let flasks = match &plan.flasks {
            None => DEFAULT_FLASKS_ML.iter().map(|v| v * 1e-3).collect(),
            Some(list) => {
                if list.is_empty() {
                    let at = raw.plan.span().start;
                    return Err(self.err(
                        at..at + "[plan]".len(),
                        "[plan] flasks is an empty list",
                        "no flask sizes",
                        "list the volumetric flasks on the shelf, e.g. flasks = [\"100 mL\", \"250 mL\", \"1 L\"], or leave the key out for 50, 100, 250, 500 and 1000 mL",
                    ));
                }
                let mut out = Vec::new();
                for q in list {
                    out.push(self.positive(q, Kind::Volume, "flasks")?);
                }
                out.sort_by(f64::total_cmp);
                out.dedup();
                out
            }
        };

        // Weighing and making up to the mark: about 0.3 % (common practice for class A flasks
        // and an analytical balance).
        let stock_uncertainty = match &plan.stock_uncertainty {
            None => 0.003,
            Some(q) => {
                let v = self.qty(q, Kind::Fraction, "stock_uncertainty")?;
                if !(0.0..=0.2).contains(&v) {
                    return Err(self.err(
                        inner(q.span(), &self.src.text),
                        "stock_uncertainty must be from 0 % to 20 %",
                        "out of range",
                        "e.g. stock_uncertainty = \"0.3 %\"",
                    ));
                }
                v
            }
        };

        // Devices
        let mut devices: Vec<Device> = Vec::new();
        let mut device_index: HashMap<String, usize> = HashMap::new();
        for d in &raw.device {
            let dev = self.device(d.get_ref(), d.span())?;
            if device_index
                .insert(dev.name.clone(), devices.len())
                .is_some()
            {
                return Err(self.err(
                    inner(d.get_ref().name.span(), &self.src.text),
                    format!("two devices are named '{}'", dev.name),
                    "duplicate",
                    "give each device its own name",
                ));
            }
            devices.push(dev);
        }
        if devices.is_empty() && self.purpose == Purpose::Plan {
            return Err(self.err(self.end(), "the spec lists no glassware", "no [[device]] in the spec", "add at least one [[device]], e.g. a buret: kind = \"buret\", capacity = \"25 mL\", graduation = \"0.05 mL\""));
        }
        let all_devices: Vec<usize> = (0..devices.len()).collect();
        let resolve_devices = |names: &Option<Vec<Name>>| -> Result<Vec<usize>> {
            match names {
                None => Ok(all_devices.clone()),
                Some(list) => {
                    let mut out = Vec::new();
                    for n in list {
                        let i = device_index
                            .get(n.get_ref().trim())
                            .copied()
                            .ok_or_else(|| {
                                self.err(
                                    inner(n.span(), &self.src.text),
                                    format!("unknown device '{}'", n.get_ref()),
                                    "not a [[device]] name",
                                    format!(
                                        "use one of: {}",
                                        devices
                                            .iter()
                                            .map(|d| format!("\"{}\"", d.name))
                                            .collect::<Vec<_>>()
                                            .join(", ")
                                    ),
                                )
                            })?;
                        if !out.contains(&i) {
                            out.push(i);
                        }
                    }
                    if out.is_empty() {
                        return Err(self.err(
                            self.end(),
                            "devices = [] allows no device",
                            "an empty devices list",
                            "list at least one device, or leave the key out to allow all",
                        ));
                    }
                    Ok(out)
                }
            }
        };

        // Stocks
        let mut stocks: Vec<Stock> = Vec::new();
        for s in &raw.stock {
            let r = s.get_ref();
            let name = r.name.get_ref().trim().to_string();
            if name.is_empty() {
                return Err(self.err(
                    r.name.span(),
                    "a stock has an empty name",
                    "empty",
                    "name it after what is in the bottle, e.g. \"KI 0.0150 M\"",
                ));
            }
            if name.eq_ignore_ascii_case("water") {
                return Err(self.err(
                    inner(r.name.span(), &self.src.text),
                    "'water' is the make-up and is not a stock",
                    "reserved",
                    "leave water out of [[stock]]; use [water] to restrict its devices",
                ));
            }
            if stocks.iter().any(|o| o.name == name) {
                return Err(self.err(
                    inner(r.name.span(), &self.src.text),
                    format!("two stocks are named '{name}'"),
                    "duplicate",
                    "give each stock its own name",
                ));
            }
            let mut contains = Vec::new();
            if let Some(c) = &r.contains {
                for (k, q) in &c.get_ref().0 {
                    let sp = self.species(k)?;
                    if contains.iter().any(|(o, _): &(String, f64)| *o == sp) {
                        return Err(self.err(
                            inner(k.span(), &self.src.text),
                            format!("stock '{name}' names {sp} twice"),
                            "duplicate",
                            "list each species once",
                        ));
                    }
                    let c =
                        self.positive(q, Kind::Concentration, &format!("stock '{name}', {sp}"))?;
                    contains.push((sp, c));
                }
            }
            let fixed_volume = match &r.fixed_volume {
                None => None,
                Some(q) => Some(self.positive(q, Kind::Volume, "fixed_volume")?),
            };
            if contains.is_empty() && fixed_volume.is_none() {
                return Err(self.err(
                    inner(r.name.span(), &self.src.text),
                    format!("stock '{name}' contains no species"),
                    "nothing in it",
                    "give its contents, e.g. contains = { \"I-\" = \"0.0150 M\", \"K+\" = \"0.0150 M\" }, or a fixed_volume for an indicator",
                ));
            }
            let recipe = self.recipe(r, &name, &contains, &stocks)?;
            stocks.push(Stock {
                recipe,
                in_runs: r.in_runs.unwrap_or(true),
                name,
                solute: r.solute.as_ref().map(|s| s.get_ref().trim().to_string()),
                contains,
                vessel: r.vessel.as_ref().map(|v| self.vessel(v)).transpose()?,
                vessel_span: r.vessel.as_ref().map(|v| v.span()),
                fixed_volume,
                devices: resolve_devices(&r.devices)?,
                note: r.note.clone(),
                span: s.span(),
                name_span: inner(r.name.span(), &self.src.text),
            });
        }
        // A forecast needs no stocks; when a forecast-only spec lists none, species are not
        // checked against them.
        let check_species = self.purpose == Purpose::Plan || !stocks.is_empty();
        if !check_species {
            // fall through: nothing to check against
        } else if stocks.is_empty() {
            return Err(self.err(
                self.end(),
                "the spec lists no stocks",
                "no [[stock]] in the spec",
                "add a [[stock]] for each bottle on the shelf",
            ));
        }
        let known: BTreeSet<&str> = stocks
            .iter()
            .flat_map(|s| s.contains.iter().map(|(sp, _)| sp.as_str()))
            .collect();
        let unknown_species = |name: &Name, sp: &str| {
            self.err(
                inner(name.span(), &self.src.text),
                format!("no stock contains {sp}"),
                "unknown species",
                format!(
                    "species in the stocks: {}",
                    known.iter().copied().collect::<Vec<_>>().join(", ")
                ),
            )
        };

        // Timing reagent
        let t = raw.timing.get_ref();
        let timing_species = self.species(&t.species)?;
        let timing_conc = self.positive(
            &t.concentration,
            Kind::Concentration,
            "timing concentration",
        )?;
        let holders: Vec<usize> = (0..stocks.len())
            .filter(|&i| stocks[i].in_runs && stocks[i].concentration_of(&timing_species) > 0.0)
            .collect();
        let timing_stock =
            match holders.as_slice() {
                [] if !check_species => None,
                [] => return Err(unknown_species(&t.species, &timing_species)),
                [one] => Some(*one),
                [_, second, ..] => return Err(self.err(
                    stocks[*second].name_span.clone(),
                    format!("the timing species {timing_species} is in more than one stock"),
                    "a second source",
                    "keep the timing reagent in one stock, so every run gets the same volume of it",
                )),
            };

        // Water
        let (water_devices, water_vessel) = match &raw.water {
            None => (all_devices.clone(), WaterVessel::Split),
            Some(w) => {
                let vessel = match &w.vessel {
                    None => WaterVessel::Split,
                    Some(v) if v.get_ref().trim().eq_ignore_ascii_case("split") => {
                        WaterVessel::Split
                    }
                    Some(v) => WaterVessel::Only(self.vessel(v)?),
                };
                (resolve_devices(&w.devices)?, vessel)
            }
        };

        // Mixing
        let mixing = match &raw.mixing {
            None => Mixing {
                keep_apart: Vec::new(),
                span: None,
                poured: Vessel::B,
            },
            Some(m) => {
                let mut groups = Vec::new();
                for g in &m.keep_apart {
                    let mut group = Vec::new();
                    for n in g.get_ref() {
                        let sp = self.species(n)?;
                        if check_species && !known.contains(sp.as_str()) {
                            return Err(unknown_species(n, &sp));
                        }
                        group.push(sp);
                    }
                    if group.len() < 2 {
                        return Err(self.err(
                            g.span(),
                            "a keep_apart group needs at least two species",
                            "too short",
                            "e.g. keep_apart = [[\"BrO3-\", \"I-\", \"H+\"]]",
                        ));
                    }
                    groups.push(group);
                }
                let poured = match &m.pour {
                    None => Vessel::B,
                    Some(p) => match p.get_ref().trim() {
                        "B into A" => Vessel::B,
                        "A into B" => Vessel::A,
                        other => {
                            return Err(self.err(
                                inner(p.span(), &self.src.text),
                                format!("unknown pour order '{other}'"),
                                "here",
                                "write pour = \"B into A\" or pour = \"A into B\"",
                            ))
                        }
                    },
                };
                Mixing {
                    keep_apart: groups,
                    span: m.keep_apart.first().map(|g| g.span()),
                    poured,
                }
            }
        };

        // Ionic strength
        let ionic = match &raw.ionic_strength {
            None => None,
            Some(i) => {
                let r = i.get_ref();
                let target = match r.hold.get_ref() {
                    Value::String(s) if s.trim() == "max" => IonicTarget::Max,
                    _ => IonicTarget::Value(self.positive(&r.hold, Kind::Concentration, "hold")?),
                };
                let stock = stocks
                    .iter()
                    .position(|s| s.name == r.using.get_ref().trim())
                    .ok_or_else(|| {
                        self.err(
                            inner(r.using.span(), &self.src.text),
                            format!("unknown stock '{}'", r.using.get_ref()),
                            "not a [[stock]] name",
                            "name the inert salt stock, e.g. using = \"KNO3 1.00 M\"",
                        )
                    })?;
                if stocks[stock].ionic_strength() <= 0.0 {
                    return Err(self.err(
                        inner(r.using.span(), &self.src.text),
                        format!("stock '{}' holds no ions", stocks[stock].name),
                        "no ions",
                        "use a salt stock whose species carry charges, e.g. \"K+\" and \"NO3-\"",
                    ));
                }
                if Some(stock) == timing_stock || stocks[stock].fixed_volume.is_some() {
                    return Err(self.err(
                        inner(r.using.span(), &self.src.text),
                        "the inert salt must be a stock whose volume may vary",
                        "fixed volume",
                        "use a separate salt stock such as KNO3 or NaNO3",
                    ));
                }
                Some(IonicHold {
                    target,
                    stock,
                    span: i.span(),
                })
            }
        };

        // Runs
        let mut runs: Vec<Run> = Vec::new();
        let mut run_names: std::collections::HashSet<String> = std::collections::HashSet::new();
        for r in &raw.run {
            let rr = r.get_ref();
            let name = rr.name.get_ref().trim().to_string();
            if name.is_empty() {
                return Err(self.err(
                    rr.name.span(),
                    "a run has an empty name",
                    "empty",
                    "e.g. name = \"iodide doubled\"",
                ));
            }
            if !run_names.insert(name.clone()) {
                return Err(self.err(
                    inner(rr.name.span(), &self.src.text),
                    format!("two runs are named '{name}'"),
                    "duplicate",
                    "give each run its own name",
                ));
            }
            let entries = &rr.targets.get_ref().0;
            if entries.is_empty() {
                return Err(self.err(rr.targets.span(), format!("run '{name}' has no targets"), "empty", "give the final concentration of each varied species, e.g. targets = { \"I-\" = \"2.50 mM\" }"));
            }
            let mut targets = Vec::new();
            for (k, q) in entries {
                let sp = self.species(k)?;
                if check_species && !known.contains(sp.as_str()) {
                    return Err(unknown_species(k, &sp));
                }
                if sp == timing_species {
                    return Err(self.err(
                        inner(k.span(), &self.src.text),
                        format!(
                            "{sp} is the timing species; its concentration is set once in [timing]"
                        ),
                        "fixed in every run",
                        "remove it from the run's targets",
                    ));
                }
                if targets.iter().any(|t: &Target| t.species == sp) {
                    return Err(self.err(
                        inner(k.span(), &self.src.text),
                        format!("run '{name}' names {sp} twice"),
                        "duplicate",
                        "list each species once",
                    ));
                }
                let c = self.positive(q, Kind::Concentration, &format!("run '{name}', {sp}"))?;
                targets.push(Target {
                    species: sp,
                    concentration: c,
                    span: inner(q.span(), &self.src.text),
                });
            }
            runs.push(Run {
                name,
                targets,
                note: rr.note.clone(),
                span: r.span(),
            });
        }
        let design = match &raw.design {
            Some(d) => Some(self.design(d, &known, check_species, &timing_species)?),
            None if self.purpose == Purpose::Design => {
                return Err(self.err(self.end(), "clockprep design needs a [design] table", "no [design] in the spec", "add [design] with base = { \"I-\" = \"2.00 mM\", ... } and scheme = \"one-at-a-time\""))
            }
            None => None,
        };
        if runs.is_empty() && self.purpose != Purpose::Design {
            return Err(self.err(
                self.end(),
                "the spec lists no runs",
                "no [[run]] in the spec",
                "add a [[run]] with a name and targets for each concentration set",
            ));
        }
        let first: BTreeSet<&str> = runs
            .first()
            .map(|r| r.targets.iter().map(|t| t.species.as_str()).collect())
            .unwrap_or_default();
        for (r, raw_run) in runs.iter().zip(&raw.run).skip(1) {
            let these: BTreeSet<&str> = r.targets.iter().map(|t| t.species.as_str()).collect();
            if these != first {
                let missing: Vec<&str> = first.symmetric_difference(&these).copied().collect();
                return Err(self.err(
                    raw_run.get_ref().targets.span(),
                    format!("run '{}' targets different species from run '{}' ({})", r.name, runs[0].name, missing.join(", ")),
                    "different species",
                    "every run sets the same species, so runs can be compared; give each run a target for each of them",
                ));
            }
        }

        // Reaction and forecast settings
        let available = |sp: &str| {
            if check_species {
                known.contains(sp)
            } else {
                runs.first()
                    .is_some_and(|r| r.targets.iter().any(|t| t.species == sp))
                    || design
                        .as_ref()
                        .is_some_and(|d| d.base.iter().any(|(s, _)| s == sp))
            }
        };
        let reaction = match &raw.reaction {
            None if self.purpose == Purpose::Forecast => {
                return Err(self.err(
                    self.end(),
                    "a forecast needs a [reaction]",
                    "no [reaction] in the spec",
                    format!(
                    "add [reaction] with preset = \"{}\" (presets: {}), or spell out its rate law",
                    crate::spec::presets::NAMES[0],
                    crate::spec::presets::NAMES.join(", ")
                ),
                ))
            }
            None => None,
            Some(r) => Some(self.reaction(r, &timing_species, &available)?),
        };
        let forecast = match &reaction {
            None => None,
            Some(_) => Some(self.forecast_settings(&raw.plan, plan, t, temperature)?),
        };

        Ok(Spec {
            source,
            title,
            total_volume,
            total_span,
            stations,
            replicates,
            overage,
            temperature,
            tolerance,
            flasks,
            stock_uncertainty,
            timing: Timing {
                species: timing_species,
                concentration: timing_conc,
                stock: timing_stock,
                span: inner(t.concentration.span(), &self.src.text),
            },
            stocks,
            devices,
            water_devices,
            water_vessel,
            mixing,
            ionic,
            runs,
            reaction,
            forecast,
            design,
        })
    }

    fn design(
        &self,
        d: &Spanned<RawDesign>,
        known: &BTreeSet<&str>,
        check_species: bool,
        timing: &str,
    ) -> Result<Design> {
        let r = d.get_ref();
        let mut base = Vec::new();
        for (k, q) in &r.base.get_ref().0 {
            let sp = self.species(k)?;
            if check_species && !known.contains(sp.as_str()) {
                return Err(self.err(
                    inner(k.span(), &self.src.text),
                    format!("no stock contains {sp}"),
                    "unknown species",
                    "design with species the stocks hold",
                ));
            }
            if sp == timing {
                return Err(self.err(
                    inner(k.span(), &self.src.text),
                    format!("{sp} is the timing species; it stays fixed in every run"),
                    "fixed",
                    "leave it out of the base",
                ));
            }
            base.push((
                sp.clone(),
                self.positive(q, Kind::Concentration, &format!("base {sp}"))?,
            ));
        }
        if base.is_empty() {
            return Err(self.err(
                r.base.span(),
                "the design's base is empty",
                "empty",
                "e.g. base = { \"I-\" = \"2.00 mM\", \"BrO3-\" = \"8.00 mM\" }",
            ));
        }
        let scheme = match r
            .scheme
            .as_ref()
            .map(|s| s.get_ref().trim().to_ascii_lowercase())
        {
            None => Scheme::OneAtATime,
            Some(s) if s == "one-at-a-time" || s == "ofat" => Scheme::OneAtATime,
            Some(s) if s == "factorial" => Scheme::Factorial,
            Some(s) if s == "levels" => Scheme::Levels,
            Some(other) => {
                let n = r.scheme.as_ref().expect("scheme");
                return Err(self.err(
                    inner(n.span(), &self.src.text),
                    format!("unknown scheme '{other}'"),
                    "here",
                    "use \"one-at-a-time\", \"factorial\" or \"levels\"",
                ));
            }
        };
        let multipliers = match &r.multipliers {
            None => vec![2.0],
            Some(m) => {
                let v: Vec<f64> = m.get_ref().iter().map(|x| *x.get_ref()).collect();
                if v.is_empty()
                    || v.iter()
                        .any(|x| !(x.is_finite() && *x > 0.0 && (*x - 1.0).abs() > 1e-9))
                {
                    return Err(self.err(
                        m.span(),
                        "multipliers must be positive numbers other than 1",
                        "here",
                        "e.g. multipliers = [2.0] or [0.5, 2.0]",
                    ));
                }
                v
            }
        };
        let mut levels = Vec::new();
        if let Some(l) = &r.levels {
            for (k, qs) in &l.get_ref().0 {
                let sp = self.species(k)?;
                if !base.iter().any(|(b, _)| *b == sp) {
                    return Err(self.err(
                        inner(k.span(), &self.src.text),
                        format!("{sp} has levels but no base value"),
                        "not in the base",
                        "add it to base",
                    ));
                }
                let mut vals = Vec::new();
                for q in qs {
                    vals.push(self.positive(q, Kind::Concentration, &format!("levels {sp}"))?);
                }
                levels.push((sp, vals));
            }
        }
        if scheme == Scheme::Levels && levels.is_empty() {
            return Err(self.err(
                d.span(),
                "scheme \"levels\" needs levels",
                "here",
                "e.g. levels = { \"H+\" = [\"15 mM\", \"30 mM\"] }",
            ));
        }
        let frac = |q: &Option<Q>, field: &str, default: f64| -> Result<f64> {
            match q {
                None => Ok(default),
                Some(q) => {
                    let v = self.qty(q, Kind::Fraction, field)?;
                    if !(0.0..=0.5).contains(&v) {
                        return Err(self.err(
                            inner(q.span(), &self.src.text),
                            format!("{field} must be from 0 % to 50 %"),
                            "out of range",
                            format!("e.g. {field} = \"2 %\""),
                        ));
                    }
                    Ok(v)
                }
            }
        };
        // A human timing error of about 2 % (0.3 s on a 15 s run; common practice) and about
        // 0.5 % from glassware when none is listed to propagate.
        let timing_error = frac(&r.timing_error, "timing_error", 0.02)?;
        let volumetric_error = frac(&r.volumetric_error, "volumetric_error", 0.005)?;
        let temperature_spread = match &r.temperature_spread {
            None => 0.5,
            Some(q) => self.special(
                q,
                "temperature_spread",
                Kind::Temperature,
                "\"0.5 °C\"",
                units::parse_temperature_difference,
            )?,
        };
        Ok(Design {
            base,
            scheme,
            multipliers,
            levels,
            timing_error,
            temperature_spread,
            volumetric_error,
        })
    }

    /// The text of a string quantity and the span inside its quotes; a bare number is an error.
    fn text<'q>(&self, q: &'q Q, field: &str, example: &str) -> Result<(&'q str, Range<usize>)> {
        match q.get_ref() {
            Value::String(s) => Ok((s.as_str(), inner(q.span(), &self.src.text))),
            Value::Integer(_) | Value::Float(_) => Err(self.err(
                q.span(),
                format!("{field}: a bare number has no unit"),
                "no unit",
                format!("write it as a string with its unit, e.g. {field} = {example}"),
            )),
            _ => Err(self.err(
                q.span(),
                format!("{field}: expected a quantity"),
                "not a quantity",
                format!("e.g. {field} = {example}"),
            )),
        }
    }

    /// A quantity read by a special parser (rate constants, energies, differences).
    fn special<T>(
        &self,
        q: &Q,
        field: &str,
        noun: Kind,
        example: &str,
        parse: impl Fn(&str) -> std::result::Result<T, units::UnitError>,
    ) -> Result<T> {
        let (text, at) = self.text(q, field, example)?;
        parse(text).map_err(|e| {
            let r = e.range(text.len());
            let span = if r.is_empty() {
                at.clone()
            } else {
                at.start + r.start..at.start + r.end
            };
            self.err(
                span,
                format!("{field}: {}", e.describe(noun)),
                "here",
                format!("e.g. {field} = {example}"),
            )
        })
    }

    fn forecast_settings(
        &self,
        plan_span: &Spanned<RawPlan>,
        plan: &RawPlan,
        t: &RawTiming,
        temperature: Option<f64>,
    ) -> Result<ForecastSettings> {
        let temperature = temperature.ok_or_else(|| {
            self.err(
                plan_span.span().start..plan_span.span().start,
                "a forecast needs the planned room temperature",
                "in [plan]",
                "add temperature = \"21 °C\" to [plan]",
            )
        })?;
        let band = match &plan.temperature_band {
            None => DEFAULT_BAND_K,
            Some(q) => {
                let b = self.special(
                    q,
                    "temperature_band",
                    Kind::Temperature,
                    "\"3 °C\"",
                    units::parse_temperature_difference,
                )?;
                if !(0.0..=15.0).contains(&b) {
                    return Err(self.err(
                        inner(q.span(), &self.src.text),
                        "temperature_band must be from 0 to 15 °C",
                        "out of range",
                        "e.g. temperature_band = \"3 °C\"",
                    ));
                }
                if temperature - b < 273.15 || temperature + b > 333.15 {
                    return Err(self.err(
                        inner(q.span(), &self.src.text),
                        "the temperature band reaches outside 0–60 °C",
                        "out of range",
                        "narrow the band or plan for a temperature nearer the room's",
                    ));
                }
                b
            }
        };
        let window = match &t.window {
            None => DEFAULT_WINDOW_S,
            Some(w) => {
                let [lo, hi] = w.get_ref().as_slice() else {
                    return Err(self.err(
                        w.span(),
                        "window needs two times: shortest and longest",
                        "here",
                        "e.g. window = [\"15 s\", \"10 min\"]",
                    ));
                };
                let lo = self.positive(lo, Kind::Time, "window")?;
                let hi = self.positive(hi, Kind::Time, "window")?;
                if lo >= hi {
                    return Err(self.err(
                        w.span(),
                        "window runs from longer to shorter",
                        "reversed",
                        "write the shortest time first, e.g. window = [\"15 s\", \"10 min\"]",
                    ));
                }
                (lo, hi)
            }
        };
        let lab_period = t
            .lab_period
            .as_ref()
            .map(|q| self.positive(q, Kind::Time, "lab_period"))
            .transpose()?;
        let handling = match &t.handling_per_run {
            None => DEFAULT_HANDLING_S,
            Some(q) => {
                let v = self.qty(q, Kind::Time, "handling_per_run")?;
                if v < 0.0 {
                    return Err(self.err(
                        inner(q.span(), &self.src.text),
                        "handling_per_run cannot be negative",
                        "negative",
                        "e.g. handling_per_run = \"3 min\"",
                    ));
                }
                v
            }
        };
        Ok(ForecastSettings {
            temperature,
            band,
            window,
            lab_period,
            handling,
        })
    }

    /// The `[reaction]` table, with any preset filled in under the keys the spec leaves out.
    fn reaction(
        &self,
        r: &Spanned<RawReaction>,
        timing: &str,
        available: &dyn Fn(&str) -> bool,
    ) -> Result<crate::kinetics::Reaction> {
        use crate::kinetics::{parse_equation, Reaction, Term, Visible, MAX_TERMS};
        let raw = r.get_ref();
        let table = r.span().start..r.span().start;
        let preset = match &raw.preset {
            None => None,
            Some(name) => {
                let key = name.get_ref().trim();
                let text = crate::spec::presets::get(key).ok_or_else(|| {
                    self.err(
                        inner(name.span(), &self.src.text),
                        format!("unknown reaction preset '{key}'"),
                        "no such preset",
                        format!("presets: {}", crate::spec::presets::NAMES.join(", ")),
                    )
                })?;
                let src = SpecSource::new(format!("preset {key}"), text);
                let parsed: RawReaction = toml::from_str(text).map_err(|e| toml_error(&src, e))?;
                Some((key.to_string(), src, parsed))
            }
        };
        let preset_checker = preset.as_ref().map(|(_, src, _)| Checker {
            src,
            purpose: self.purpose,
        });
        let missing = |what: &str, example: &str| {
            self.err(
                table.clone(),
                format!("[reaction] needs {what}"),
                "incomplete reaction",
                format!(
                    "add {example}, or use a preset ({})",
                    crate::spec::presets::NAMES.join(", ")
                ),
            )
        };
        // Each key: the spec's own value, else the preset's (checked against the preset text).
        let pick_name = |own: &Option<Name>,
                         theirs: &dyn Fn(&RawReaction) -> Option<Name>|
         -> Option<(&Checker, Name)> {
            if let Some(v) = own {
                return Some((self, v.clone()));
            }
            let (_, _, p) = preset.as_ref()?;
            theirs(p).map(|v| (preset_checker.as_ref().expect("preset checker"), v))
        };
        let (c, rate_name) = pick_name(&raw.rate_species, &|p| p.rate_species.clone())
            .ok_or_else(|| missing("rate_species", "rate_species = \"BrO3-\""))?;
        let rate_species = c.species(&rate_name)?;
        let equation = |c: &Checker, n: &Name| {
            parse_equation(n.get_ref()).map_err(|e| {
                let at = inner(n.span(), &c.src.text);
                c.err(
                    at.start + e.at.start..at.start + e.at.end,
                    format!("equation: {}", e.message),
                    "here",
                    "e.g. main = \"BrO3- + 6 I- + 6 H+ -> Br- + 3 I2 + 3 H2O\"",
                )
            })
        };
        let (mc, main_name) = pick_name(&raw.main, &|p| p.main.clone()).ok_or_else(|| {
            missing(
                "main (the main reaction)",
                "main = \"BrO3- + 6 I- + 6 H+ -> Br- + 3 I2 + 3 H2O\"",
            )
        })?;
        let main = equation(mc, &main_name)?;
        let (cc, clock_name) = pick_name(&raw.clock, &|p| p.clock.clone()).ok_or_else(|| {
            missing(
                "clock (the clock reaction)",
                "clock = \"I2 + 2 S2O3^2- -> 2 I- + S4O6^2-\"",
            )
        })?;
        let clock = equation(cc, &clock_name)?;

        let (tc, raw_terms): (&Checker, &Vec<Spanned<RawTerm>>) = match (
            &raw.term,
            preset.as_ref().and_then(|(_, _, p)| p.term.as_ref()),
        ) {
            (Some(t), _) => (self, t),
            (None, Some(t)) => (preset_checker.as_ref().expect("preset checker"), t),
            (None, None) => {
                return Err(missing(
                    "at least one [[reaction.term]]",
                    "[[reaction.term]] with k, at, orders",
                ))
            }
        };
        if raw_terms.is_empty() || raw_terms.len() > MAX_TERMS {
            return Err(self.err(
                table.clone(),
                format!("a rate law needs 1 to {MAX_TERMS} terms"),
                "here",
                "one term is the common case; two cover an acid-assisted path",
            ));
        }
        let mut terms = Vec::new();
        for rt in raw_terms {
            let t = rt.get_ref();
            let mut orders = Vec::new();
            for (k, v) in &t.orders.get_ref().0 {
                let sp = tc.species(k)?;
                let n = match v.get_ref() {
                    Value::Integer(i) => *i as f64,
                    Value::Float(f) => *f,
                    _ => f64::NAN,
                };
                if !n.is_finite() || !(-2.0..=5.0).contains(&n) {
                    return Err(tc.err(v.span(), format!("the order in {sp} must be a number from -2 to 5"), "not an order", "e.g. orders = { \"BrO3-\" = 1, \"H+\" = 2 } (fractions such as 0.5 are fine)"));
                }
                if !available(&sp) {
                    return Err(tc.err(
                        inner(k.span(), &tc.src.text),
                        format!(
                            "the rate law needs {sp}, but {}",
                            if self.purpose == Purpose::Plan {
                                "no stock contains it"
                            } else {
                                "the runs give no concentration for it"
                            }
                        ),
                        "missing from the runs",
                        "add it to the stocks and run targets, or change the rate law",
                    ));
                }
                orders.push((sp, n));
            }
            if orders.is_empty() {
                return Err(tc.err(
                    t.orders.span(),
                    "a rate-law term needs orders",
                    "empty",
                    "e.g. orders = { \"BrO3-\" = 1, \"I-\" = 1, \"H+\" = 2 }",
                ));
            }
            let k = tc.special(
                &t.k,
                "k",
                Kind::Time,
                "\"40 M^-3 s^-1\"",
                units::parse_rate_constant,
            )?;
            let overall: f64 = orders.iter().map(|(_, n)| n).sum();
            if (k.conc_exponent - (1.0 - overall)).abs() > 1e-9 {
                return Err(tc.err(
                    inner(t.k.span(), &tc.src.text),
                    format!("k has units of M^{} s^-1, but a term of overall order {overall} needs M^{} s^-1", k.conc_exponent, 1.0 - overall),
                    "units do not match the orders",
                    format!("write k in M^{} s^-1 (or the same in L, mol and min)", 1.0 - overall),
                ));
            }
            if k.value <= 0.0 {
                return Err(tc.err(
                    inner(t.k.span(), &tc.src.text),
                    "k must be greater than zero",
                    "not positive",
                    "e.g. k = \"40 M^-3 s^-1\"",
                ));
            }
            let t_ref = tc.qty(&t.at, Kind::Temperature, "at")?;
            if !(273.15..=333.15).contains(&t_ref) {
                return Err(tc.err(
                    inner(t.at.span(), &tc.src.text),
                    format!("at = {} °C is outside 0–60 °C", units::sig3(t_ref - 273.15)),
                    "out of range",
                    "give k at a temperature of the teaching lab, e.g. at = \"25 °C\"",
                ));
            }
            let activation_energy = match &t.activation_energy {
                None => None,
                Some(q) => {
                    let ea = tc.special(
                        q,
                        "activation_energy",
                        Kind::Fraction,
                        "\"54 kJ/mol\"",
                        units::parse_energy,
                    )?;
                    if !(0.0..=300_000.0).contains(&ea) {
                        return Err(tc.err(
                            inner(q.span(), &tc.src.text),
                            "activation_energy must be from 0 to 300 kJ/mol",
                            "out of range",
                            "e.g. activation_energy = \"54 kJ/mol\"",
                        ));
                    }
                    Some(ea)
                }
            };
            terms.push(Term {
                k_ref: k.value,
                t_ref,
                activation_energy,
                orders,
                source: t.source.clone(),
            });
        }

        let visible = match (
            &raw.visible,
            preset.as_ref().and_then(|(_, _, p)| p.visible.as_ref()),
        ) {
            (Some(v), _) => Some((self, v)),
            (None, Some(v)) => Some((preset_checker.as_ref().expect("preset checker"), v)),
            (None, None) => None,
        };
        let visible = match visible {
            None => None,
            Some((c, v)) => Some(Visible {
                threshold: c.positive(&v.get_ref().threshold, Kind::Concentration, "threshold")?,
                source: v.get_ref().source.clone(),
            }),
        };
        let name = match &preset {
            Some((key, ..)) if raw.main.is_none() && raw.clock.is_none() && raw.term.is_none() => {
                key.clone()
            }
            Some((key, ..)) => format!("{key} (adjusted)"),
            None => raw.description.clone().unwrap_or_else(|| "custom".into()),
        };
        Reaction::new(name, rate_species, timing.to_string(), main, clock, terms, visible)
            .map_err(|e| mc.err(inner(main_name.span(), &mc.src.text), format!("the reaction does not make a clock: {e}"), "here", "the main reaction must consume the rate species and make what the clock reaction removes with the timing species"))
    }

    /// The recipe of a stock: dilution of an earlier stock, a liquid measured by volume, or a
    /// solid weighed out. The solute's formula is cross-checked against `contains`: it must
    /// split into whole numbers of the listed species (water of hydration aside) with no net
    /// charge, the listed concentrations must stand in those ratios (within
    /// [`RATIO_TOLERANCE`]), and the formula-unit concentration follows from them, whatever
    /// the order of the keys.
    fn recipe(
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
                    Err(_) if crate::reference::reagents::reagent_for(Some(&formula), &[]).is_some() => {
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
    fn solute_concentration(
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
    fn dilution(
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

    fn device(&self, r: &RawDevice, span: Range<usize>) -> Result<Device> {
        let name = r.name.get_ref().trim().to_string();
        if name.is_empty() {
            return Err(self.err(
                r.name.span(),
                "a device has an empty name",
                "empty",
                "e.g. name = \"25 mL buret\"",
            ));
        }
        let kind = DeviceKind::parse(r.kind.get_ref()).ok_or_else(|| {
            self.err(
                inner(r.kind.span(), &self.src.text),
                format!("unknown kind of device '{}'", r.kind.get_ref()),
                "unknown kind",
                format!("use {}", DeviceKind::ACCEPTED),
            )
        })?;
        let need = |q: &Option<Q>, field: &str, example: &str| -> Result<f64> {
            match q {
                Some(q) => self.positive(q, Kind::Volume, field),
                None => Err(self.err(
                    span.clone(),
                    format!("device '{name}' ({kind}) needs {field}"),
                    "incomplete device",
                    format!("add e.g. {field} = {example}"),
                )),
            }
        };
        let forbid = |q: &Option<Q>, field: &str| -> Result<()> {
            match q {
                Some(q) => Err(self.err(
                    q.span(),
                    format!("{field} does not apply to a {kind}"),
                    "not for this kind",
                    "remove it; the README lists the keys of each kind of device",
                )),
                None => Ok(()),
            }
        };
        let class = match &r.class {
            None => None,
            Some(c) => Some(match c.get_ref().trim() {
                "A" => Class::A,
                "B" => Class::B,
                other => {
                    return Err(self.err(
                        inner(c.span(), &self.src.text),
                        format!("unknown tolerance class '{other}'"),
                        "not A or B",
                        "write class = \"A\" or class = \"B\"",
                    ))
                }
            }),
        };
        let (step, min, max, max_fills) = match kind {
            DeviceKind::VolumetricPipet => {
                forbid(&r.capacity, "capacity")?;
                forbid(&r.graduation, "graduation")?;
                forbid(&r.step, "step")?;
                forbid(&r.min, "min")?;
                if let Some(rg) = &r.range {
                    return Err(self.err(
                        rg.span(),
                        format!("range does not apply to a {kind}"),
                        "not for this kind",
                        "a volumetric pipet has one volume",
                    ));
                }
                let v = need(&r.volume, "volume", "\"10 mL\"")?;
                let fills = match &r.fills {
                    None => 1,
                    Some(f) if (1..=20).contains(f.get_ref()) => *f.get_ref() as u32,
                    Some(f) => {
                        return Err(self.err(
                            f.span(),
                            "fills must be a whole number from 1 to 20",
                            "out of range",
                            "fills = 2 lets one addition take two fills of this pipet",
                        ))
                    }
                };
                (v, v, v * fills as f64, fills)
            }
            DeviceKind::PistonPipette => {
                forbid(&r.capacity, "capacity")?;
                forbid(&r.graduation, "graduation")?;
                forbid(&r.volume, "volume")?;
                forbid(&r.min, "min")?;
                let rg = r.range.as_ref().ok_or_else(|| {
                    self.err(
                        span.clone(),
                        format!("device '{name}' (piston pipette) needs range"),
                        "incomplete device",
                        "add e.g. range = [\"100 uL\", \"1000 uL\"]",
                    )
                })?;
                let [lo, hi] = rg.get_ref().as_slice() else {
                    return Err(self.err(
                        rg.span(),
                        "range needs two volumes: smallest and largest",
                        "here",
                        "e.g. range = [\"100 uL\", \"1000 uL\"]",
                    ));
                };
                let lo = self.positive(lo, Kind::Volume, "range")?;
                let hi = self.positive(hi, Kind::Volume, "range")?;
                if lo > hi {
                    return Err(self.err(
                        rg.span(),
                        "range runs from larger to smaller",
                        "reversed",
                        "write the smallest volume first",
                    ));
                }
                let step = need(&r.step, "step", "\"1 uL\"")?;
                (step, lo, hi, 1)
            }
            _ => {
                forbid(&r.volume, "volume")?;
                forbid(&r.step, "step")?;
                if let Some(rg) = &r.range {
                    return Err(self.err(
                        rg.span(),
                        format!("range does not apply to a {kind}"),
                        "not for this kind",
                        "give capacity and graduation instead",
                    ));
                }
                if let Some(f) = &r.fills {
                    return Err(self.err(
                        f.span(),
                        format!("fills does not apply to a {kind}"),
                        "not for this kind",
                        "only volumetric pipets are refilled for one addition",
                    ));
                }
                let cap = need(&r.capacity, "capacity", "\"25 mL\"")?;
                let grad = need(&r.graduation, "graduation", "\"0.05 mL\"")?;
                // A graduated cylinder is not read below about a tenth of its capacity
                // (common practice); other graduated glassware down to one graduation.
                let default_min = if kind == DeviceKind::GraduatedCylinder {
                    cap / 10.0
                } else {
                    grad
                };
                let min = match &r.min {
                    None => default_min,
                    Some(q) => self.positive(q, Kind::Volume, "min")?,
                };
                (grad, min, cap, 1)
            }
        };
        if step > max * (1.0 + 1e-12) {
            return Err(self.err(
                span,
                format!("device '{name}': its step is larger than its capacity"),
                "inconsistent device",
                "check the graduation or step against the capacity or range",
            ));
        }
        if max / step > 200_000.0 {
            return Err(self.err(
                span,
                format!("device '{name}': more than 200000 steps between zero and its capacity"),
                "step too fine",
                "give the graduation you can actually read, e.g. graduation = \"0.05 mL\"",
            ));
        }
        if min > max {
            return Err(self.err(
                span,
                format!("device '{name}': min is larger than its capacity"),
                "inconsistent device",
                "lower min",
            ));
        }
        Ok(Device {
            name,
            kind,
            class,
            step,
            min,
            max,
            max_fills,
        })
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    pub const SMALL: &str = r#"
[plan]
title = "test"
total_volume = "20.0 mL"

[timing]
species = "S2O3^2-"
concentration = "0.100 mM"

[mixing]
keep_apart = [["I-", "BrO3-"]]

[[stock]]
name = "KI"
contains = { "I-" = "0.0200 M", "K+" = "0.0200 M" }

[[stock]]
name = "KBrO3"
contains = { "BrO3-" = "0.0400 M", "K+" = "0.0400 M" }

[[stock]]
name = "thio"
contains = { "S2O3^2-" = "1.00 mM", "Na+" = "2.00 mM" }

[[device]]
name = "buret"
kind = "buret"
capacity = "25 mL"
graduation = "0.05 mL"

[[run]]
name = "r1"
targets = { "I-" = "5.00 mM", "BrO3-" = "8.00 mM" }
"#;

    fn load_str(text: &str) -> Result<Spec> {
        load(SpecSource::new("t.toml", text))
    }

    #[test]
    fn loads_a_small_spec() {
        let s = load_str(SMALL).unwrap();
        assert_eq!(s.stocks.len(), 3);
        assert_eq!(s.timing.stock, Some(2));
        assert_eq!(s.runs[0].targets[0].species, "I-");
        approx::assert_relative_eq!(s.total_volume, 0.020);
        approx::assert_relative_eq!(s.overage, 0.10);
        // ½ Σ c z² for 0.0400 M KBrO3 = 0.0400 M (1:1 electrolyte).
        approx::assert_relative_eq!(s.stocks[1].ionic_strength(), 0.040);
    }

    #[test]
    fn bare_number_points_at_it() {
        let text = SMALL.replace("\"20.0 mL\"", "20");
        let e = load_str(&text).unwrap_err();
        assert!(e.message().contains("bare number"), "{}", e.message());
        assert!(e.help_text().unwrap().contains("\"30.0 mL\""));
    }

    #[test]
    fn unknown_keys_are_errors() {
        let text = SMALL.replace("title = \"test\"", "title = \"test\"\ncolour = \"red\"");
        let e = load_str(&text).unwrap_err();
        assert!(e.message().contains("unknown field"), "{}", e.message());
    }
}
