//! The checked spec: everything the later stages need, in SI units, names resolved.

use crate::error::{Result, SpecSource};
use crate::reference::glassware::Device;
use crate::reference::species;
use std::fmt;
use std::ops::Range;

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
    /// Relative standard uncertainty (k = 1) of its concentrations, and where it comes from.
    pub uncertainty: f64,
    pub uncertainty_basis: String,
    /// Whether the uncertainty is the recipe's default (neither the stock nor `[plan]` gives
    /// one): a weighed stock's is then recomputed from the mass actually weighed.
    pub uncertainty_by_recipe: bool,
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
    /// Standard uncertainty (K) of a station thermometer's offset: one draw per station.
    pub thermometer_offset: f64,
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

/// A checked spec. What a command needs is present by type: [`Lab`] when the spec lists stocks
/// and a run volume (required by `plan` and `stocks`), [`Prior`] when it has a `[reaction]`,
/// [`Design`] when it has a `[design]`. A stage that needs a part takes it as a parameter.
#[derive(Debug, Clone)]
pub struct Spec {
    pub source: SpecSource,
    pub title: String,
    pub stations: u32,
    pub replicates: u32,
    /// Planned room temperature, K.
    pub temperature: Option<f64>,
    pub timing: Timing,
    pub runs: Vec<Run>,
    /// Stocks, glassware and volumes, when the spec lists stocks and a run volume.
    pub lab: Option<Lab>,
    /// The prior rate law and the forecast settings, when the spec has a `[reaction]`.
    pub prior: Option<Prior>,
    /// The `[design]` table, when given.
    pub design: Option<Design>,
    /// The `[[section]]`s in date order (spec order within a day); empty for a one-section
    /// spec, which `stations` and `replicates` describe. With sections, `stations` and
    /// `replicates` are the largest of them (one station's glassware and cards).
    pub sections: Vec<Section>,
}

/// A lab section: the spec's runs taught to one group on one day.
#[derive(Debug, Clone, PartialEq)]
pub struct Section {
    pub name: String,
    pub date: time::Date,
    pub stations: u32,
    pub replicates: u32,
    /// The room's temperature that day, K (else the spec's).
    pub temperature: Option<f64>,
    pub span: Range<usize>,
}

impl Section {
    /// "2026-12-07".
    pub fn date_text(&self) -> String {
        date_text(self.date)
    }
}

/// A date as year-month-day, "2026-12-07".
pub fn date_text(d: time::Date) -> String {
    format!("{:04}-{:02}-{:02}", d.year(), d.month() as u8, d.day())
}

/// A date with its weekday, "Mon 2026-12-07".
pub fn day_text(d: time::Date) -> String {
    let w = d.weekday().to_string();
    format!("{} {}", &w[..3], date_text(d))
}

/// Readability (g) assumed when `[plan] balance` is not given: the two-decimal top-loading
/// balance of an ordinary prep room (common practice).
pub const DEFAULT_BALANCE: f64 = 0.01;

/// A mass to weigh should be at least this many readabilities of the balance: its rounding
/// then stays within about 1 % (common practice).
pub const MIN_READABILITIES: f64 = 100.0;

/// The bench side of a spec: what `plan` and `stocks` solve and total.
#[derive(Debug, Clone)]
pub struct Lab {
    /// Volume of every run, L.
    pub total_volume: f64,
    pub total_span: Range<usize>,
    /// Fraction added to the stock totals, e.g. 0.15.
    pub overage: f64,
    /// Largest accepted relative deviation of a final concentration.
    pub tolerance: f64,
    /// Volumetric flask sizes (L), ascending.
    pub flasks: Vec<f64>,
    /// `[plan] stock_uncertainty` when the spec gives it: every stock without its own
    /// `uncertainty` then takes it instead of its recipe's default.
    pub stock_uncertainty: Option<f64>,
    /// Readability (g) of the balance the stocks are weighed on, and whether the spec gave it
    /// (else [`DEFAULT_BALANCE`]).
    pub balance: f64,
    pub balance_stated: bool,
    pub stocks: Vec<Stock>,
    pub devices: Vec<Device>,
    /// Where each device's name is written in the spec.
    pub device_spans: Vec<Range<usize>>,
    pub water_devices: Vec<usize>,
    pub water_vessel: WaterVessel,
    pub mixing: Mixing,
    pub ionic: Option<IonicHold>,
    /// Index of the one stock that holds the timing species.
    pub timing_stock: usize,
}

/// The prior rate law with what a forecast needs beyond it.
#[derive(Debug, Clone)]
pub struct Prior {
    pub reaction: crate::spec::Reaction,
    pub settings: ForecastSettings,
}

impl Spec {
    /// The lab part, or a located error saying what the command needs.
    pub fn need_lab(&self) -> Result<&Lab> {
        self.lab.as_ref().ok_or_else(|| {
            self.source.error(
                self.source.table("[plan]"),
                "this command needs stocks, glassware and a run volume",
                "in [plan]",
                "add total_volume to [plan], a [[stock]] for each bottle and a [[device]] for each kind of glassware",
            )
        })
    }

    /// The prior, or a located error saying how to give one.
    pub fn need_prior(&self) -> Result<&Prior> {
        self.prior.as_ref().ok_or_else(|| {
            let n = self.source.text.trim_end().len();
            self.source.error(
                n..n,
                "this command needs a forecast, and the spec has no [reaction]",
                "no [reaction]",
                "add [reaction] with a preset, e.g. preset = \"bromate-iodide\"",
            )
        })
    }

    /// The `[design]` table, or a located error.
    pub fn need_design(&self) -> Result<&Design> {
        self.design.as_ref().ok_or_else(|| {
            let n = self.source.text.trim_end().len();
            self.source.error(
                n..n,
                "clockprep design needs a [design] table",
                "no [design] in the spec",
                "add [design] with base = { \"I-\" = \"2.00 mM\", ... } and scheme = \"one-at-a-time\"",
            )
        })
    }
}

/// Default volumetric flask sizes (mL): the common stock sizes (common practice).
pub const DEFAULT_FLASKS_ML: [f64; 5] = [50.0, 100.0, 250.0, 500.0, 1000.0];
