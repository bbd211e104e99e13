//! The whole spec: [plan], [timing], [water], [mixing], [ionic_strength] and [[run]], in
//! the order the later sections need them. [`Checker::check`] reads the sections in turn and
//! assembles the typed [`Spec`].

use super::checker::{inner, Checker};
use super::model::*;
use super::raw::*;
use crate::error::{Error, Result, SpecSource};
use crate::reference::glassware::Device;
use crate::units::Kind;
use std::collections::{BTreeSet, HashMap};
use std::ops::Range;
use toml::{Spanned, Value};

/// The settings of `[plan]` that only the bench side uses.
struct LabSettings {
    overage: f64,
    tolerance: f64,
    flasks: Vec<f64>,
    stock_uncertainty: Option<f64>,
    balance: Option<f64>,
}

/// The devices by name, for resolving `devices = [...]` lists.
struct Shelf {
    devices: Vec<Device>,
    spans: Vec<std::ops::Range<usize>>,
    index: HashMap<String, usize>,
}

/// The species the stocks hold, when the spec lists stocks (else nothing is checked against
/// them: a forecast-only spec names its species freely).
struct Known<'a> {
    species: BTreeSet<&'a str>,
    check: bool,
}

impl Checker<'_> {
    pub(super) fn check(&self, raw: RawSpec, source: SpecSource) -> Result<Spec> {
        self.check_sizes(&raw)?;
        let plan = raw.plan.get_ref();
        let title = self.title(plan)?;
        let total = self.total_volume(&raw.plan)?;
        let stations = self.count(&plan.stations, "stations", 1)?;
        let replicates = self.count(&plan.replicates, "replicates", 1)?;
        let settings = LabSettings {
            overage: self.overage(plan)?,
            tolerance: self.tolerance(plan)?,
            flasks: self.flasks(&raw.plan)?,
            stock_uncertainty: self.stock_uncertainty(plan)?,
            balance: self.balance(plan)?,
        };
        let temperature = self.temperature(&plan.temperature)?;
        let sections = self.sections(&raw, replicates, temperature)?;
        let (stations, replicates) = match sections
            .iter()
            .map(|s| (s.stations, s.replicates))
            .reduce(|a, b| (a.0.max(b.0), a.1.max(b.1)))
        {
            Some(most) => most,
            None => (stations, replicates),
        };
        let shelf = self.shelf(&raw)?;
        let stocks = self.stocks(&raw, &shelf, &settings)?;
        // A forecast needs no stocks; when a forecast-only spec lists none, species are not
        // checked against them.
        if self.purpose == Purpose::Plan && stocks.is_empty() {
            return Err(self.err(
                self.end(),
                "the spec lists no stocks",
                "no [[stock]] in the spec",
                "add a [[stock]] for each bottle on the shelf",
            ));
        }
        let known = Known {
            species: stocks
                .iter()
                .flat_map(|s| s.contains.iter().map(|(sp, _)| sp.as_str()))
                .collect(),
            check: !stocks.is_empty(),
        };
        let t = raw.timing.get_ref();
        let timing = Timing {
            species: self.species(&t.species)?,
            concentration: self.positive(
                &t.concentration,
                Kind::Concentration,
                "timing concentration",
            )?,
            span: inner(t.concentration.span(), &self.src.text),
        };
        let timing_stock = self.timing_stock(t, &timing.species, &stocks, &known)?;
        let (water_devices, water_vessel) = self.water(&raw, &shelf)?;
        let mixing = self.mixing(&raw, &known)?;
        let ionic = self.ionic(&raw, &stocks, timing_stock)?;
        let runs = self.runs(&raw, &known, &timing.species)?;
        let design = match &raw.design {
            Some(d) => Some(self.design(d, &known.species, known.check, &timing.species)?),
            None if self.purpose == Purpose::Design => {
                return Err(self.err(self.end(), "clockprep design needs a [design] table", "no [design] in the spec", "add [design] with base = { \"I-\" = \"2.00 mM\", ... } and scheme = \"one-at-a-time\""))
            }
            None => None,
        };
        self.same_species(&raw, &runs)?;
        let prior = self.prior(
            &raw,
            temperature,
            &known,
            &runs,
            design.as_ref(),
            &timing.species,
        )?;
        // The bench side exists when the spec lists stocks and gives a run volume; planning
        // has checked above that it does.
        let lab = match (total, timing_stock) {
            (Some((total_volume, total_span)), Some(timing_stock)) => Some(Lab {
                total_volume,
                total_span,
                overage: settings.overage,
                tolerance: settings.tolerance,
                flasks: settings.flasks,
                stock_uncertainty: settings.stock_uncertainty,
                balance: settings.balance.unwrap_or(super::model::DEFAULT_BALANCE),
                balance_stated: settings.balance.is_some(),
                stocks,
                devices: shelf.devices,
                device_spans: shelf.spans,
                water_devices,
                water_vessel,
                mixing,
                ionic,
                timing_stock,
            }),
            _ => None,
        };
        Ok(Spec {
            source,
            title,
            stations,
            replicates,
            temperature,
            timing,
            runs,
            lab,
            prior,
            design,
            sections,
        })
    }

    fn title(&self, plan: &RawPlan) -> Result<String> {
        let title = plan.title.get_ref().trim().to_string();
        if title.is_empty() {
            return Err(self.err(
                plan.title.span(),
                "the plan title is empty",
                "empty",
                "e.g. title = \"Section 3 rate law\"",
            ));
        }
        Ok(title)
    }

    /// The volume of every run: required when planning, optional otherwise.
    fn total_volume(&self, plan_span: &Spanned<RawPlan>) -> Result<Option<(f64, Range<usize>)>> {
        let plan = plan_span.get_ref();
        Ok(match &plan.total_volume {
            Some(q) => Some((
                self.positive(q, Kind::Volume, "total_volume")?,
                inner(q.span(), &self.src.text),
            )),
            None if self.purpose != Purpose::Plan => None,
            None => {
                let at = plan_span.span().start;
                return Err(self.err(
                    at..at,
                    "[plan] needs total_volume",
                    "in [plan]",
                    "add the volume of every run, e.g. total_volume = \"50.0 mL\"",
                ));
            }
        })
    }

    fn overage(&self, plan: &RawPlan) -> Result<f64> {
        Ok(match &plan.overage {
            None => 0.10,
            Some(q) => self.fraction_up_to(q, "overage", 2.0, "e.g. overage = \"15 %\"")?,
        })
    }

    fn tolerance(&self, plan: &RawPlan) -> Result<f64> {
        Ok(match &plan.tolerance {
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
        })
    }

    pub(super) fn temperature(&self, temperature: &Option<Q>) -> Result<Option<f64>> {
        Ok(match temperature {
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
        })
    }

    fn flasks(&self, plan_span: &Spanned<RawPlan>) -> Result<Vec<f64>> {
        let plan = plan_span.get_ref();
        Ok(match &plan.flasks {
            None => DEFAULT_FLASKS_ML.iter().map(|v| v * 1e-3).collect(),
            Some(list) => {
                if list.is_empty() {
                    let at = plan_span.span().start;
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
        })
    }

    /// One relative uncertainty for every stock, when the spec gives it (else each stock's
    /// recipe gives its own, [`super::stocks::recipe_uncertainty`]).
    fn stock_uncertainty(&self, plan: &RawPlan) -> Result<Option<f64>> {
        Ok(match &plan.stock_uncertainty {
            None => None,
            Some(q) => Some(self.fraction_up_to(
                q,
                "stock_uncertainty",
                0.2,
                "e.g. stock_uncertainty = \"0.3 %\"",
            )?),
        })
    }

    /// The readability of the balance, when the spec gives it: from 0.1 µg to 1 g.
    fn balance(&self, plan: &RawPlan) -> Result<Option<f64>> {
        let Some(q) = &plan.balance else {
            return Ok(None);
        };
        let g = self.special(
            q,
            "balance",
            Kind::Mass,
            Kind::Mass.example(),
            crate::units::parse_mass,
        )?;
        if !(1e-7..=1.0).contains(&g) {
            return Err(self.err(
                inner(q.span(), &self.src.text),
                "balance is the readability of the balance, from 0.0000001 g to 1 g",
                "out of range",
                "e.g. balance = \"0.01 g\" for a two-decimal top-loader, \"0.0001 g\" for an analytical balance",
            ));
        }
        Ok(Some(g))
    }

    /// The `[[device]]`s, each name once.
    fn shelf(&self, raw: &RawSpec) -> Result<Shelf> {
        let mut devices: Vec<Device> = Vec::new();
        let mut device_index: HashMap<String, usize> = HashMap::new();
        let mut spans = Vec::new();
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
            spans.push(inner(d.get_ref().name.span(), &self.src.text));
        }
        if devices.is_empty() && self.purpose == Purpose::Plan {
            return Err(self.err(self.end(), "the spec lists no glassware", "no [[device]] in the spec", "add at least one [[device]], e.g. a buret: kind = \"buret\", capacity = \"25 mL\", graduation = \"0.05 mL\""));
        }
        Ok(Shelf {
            devices,
            spans,
            index: device_index,
        })
    }

    /// A `devices = [...]` list as indices; absent means every device.
    fn resolve_devices(&self, names: &Option<Vec<Name>>, shelf: &Shelf) -> Result<Vec<usize>> {
        let (devices, device_index) = (&shelf.devices, &shelf.index);
        match names {
            None => Ok((0..devices.len()).collect()),
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
    }

    fn stocks(&self, raw: &RawSpec, shelf: &Shelf, settings: &LabSettings) -> Result<Vec<Stock>> {
        let plan_u = settings.stock_uncertainty;
        let balance = super::stocks::Balance {
            readability: settings.balance.unwrap_or(super::model::DEFAULT_BALANCE),
            flasks: &settings.flasks,
        };
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
            let (uncertainty, uncertainty_basis) = match (&r.uncertainty, plan_u) {
                (Some(q), _) => (
                    self.fraction_up_to(q, "uncertainty", 0.2, "the relative standard uncertainty of its concentration, e.g. uncertainty = \"0.2 %\" for a standardized stock")?,
                    "stated in the spec".to_string(),
                ),
                (None, Some(u)) => (u, "[plan] stock_uncertainty".to_string()),
                (None, None) => super::stocks::recipe_uncertainty(&recipe, &stocks, &balance),
            };
            stocks.push(Stock {
                uncertainty,
                uncertainty_basis,
                uncertainty_by_recipe: r.uncertainty.is_none() && plan_u.is_none(),
                recipe,
                in_runs: r.in_runs.unwrap_or(true),
                name,
                solute: r.solute.as_ref().map(|s| s.get_ref().trim().to_string()),
                contains,
                vessel: r.vessel.as_ref().map(|v| self.vessel(v)).transpose()?,
                vessel_span: r.vessel.as_ref().map(|v| v.span()),
                fixed_volume,
                devices: self.resolve_devices(&r.devices, shelf)?,
                note: r.note.clone(),
                span: s.span(),
                name_span: inner(r.name.span(), &self.src.text),
            });
        }
        Ok(stocks)
    }

    fn unknown_species(&self, name: &Name, sp: &str, known: &Known) -> Error {
        self.err(
            inner(name.span(), &self.src.text),
            format!("no stock contains {sp}"),
            "unknown species",
            format!(
                "species in the stocks: {}",
                known.species.iter().copied().collect::<Vec<_>>().join(", ")
            ),
        )
    }

    /// The one stock that holds the timing species (none when no stocks are listed).
    fn timing_stock(
        &self,
        t: &RawTiming,
        timing_species: &str,
        stocks: &[Stock],
        known: &Known,
    ) -> Result<Option<usize>> {
        let holders: Vec<usize> = (0..stocks.len())
            .filter(|&i| stocks[i].in_runs && stocks[i].concentration_of(timing_species) > 0.0)
            .collect();
        Ok(match holders.as_slice() {
            [] if !known.check => None,
            [] => return Err(self.unknown_species(&t.species, timing_species, known)),
            [one] => Some(*one),
            [_, second, ..] => {
                return Err(self.err(
                    stocks[*second].name_span.clone(),
                    format!("the timing species {timing_species} is in more than one stock"),
                    "a second source",
                    "keep the timing reagent in one stock, so every run gets the same volume of it",
                ))
            }
        })
    }

    fn water(&self, raw: &RawSpec, shelf: &Shelf) -> Result<(Vec<usize>, WaterVessel)> {
        Ok(match &raw.water {
            None => ((0..shelf.devices.len()).collect(), WaterVessel::Split),
            Some(w) => {
                let vessel = match &w.vessel {
                    None => WaterVessel::Split,
                    Some(v) if v.get_ref().trim().eq_ignore_ascii_case("split") => {
                        WaterVessel::Split
                    }
                    Some(v) => WaterVessel::Only(self.vessel(v)?),
                };
                (self.resolve_devices(&w.devices, shelf)?, vessel)
            }
        })
    }

    fn mixing(&self, raw: &RawSpec, known: &Known) -> Result<Mixing> {
        Ok(match &raw.mixing {
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
                        if known.check && !known.species.contains(sp.as_str()) {
                            return Err(self.unknown_species(n, &sp, known));
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
        })
    }

    fn ionic(
        &self,
        raw: &RawSpec,
        stocks: &[Stock],
        timing_stock: Option<usize>,
    ) -> Result<Option<IonicHold>> {
        Ok(match &raw.ionic_strength {
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
        })
    }

    fn runs(&self, raw: &RawSpec, known: &Known, timing_species: &str) -> Result<Vec<Run>> {
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
                if known.check && !known.species.contains(sp.as_str()) {
                    return Err(self.unknown_species(k, &sp, known));
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
        Ok(runs)
    }

    /// Every run sets the same species; a plan needs at least one run.
    fn same_species(&self, raw: &RawSpec, runs: &[Run]) -> Result<()> {
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
        Ok(())
    }

    /// The prior rate law and its forecast settings.
    fn prior(
        &self,
        raw: &RawSpec,
        temperature: Option<f64>,
        known: &Known,
        runs: &[Run],
        design: Option<&Design>,
        timing_species: &str,
    ) -> Result<Option<Prior>> {
        let available = |sp: &str| {
            if known.check {
                known.species.contains(sp)
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
            Some(r) => Some(self.reaction(r, timing_species, &available)?),
        };
        // The salt effect needs each run's ionic strength, which only the stocks give (the
        // targets leave out the counter-ions).
        if let Some(q) = raw
            .reaction
            .as_ref()
            .and_then(|t| t.get_ref().k_at_ionic_strength.as_ref())
        {
            if !known.check {
                return Err(self.err(
                    inner(q.span(), &self.src.text),
                    "k_at_ionic_strength needs the stocks: a run's ionic strength counts every ion it holds, and the targets alone leave out the counter-ions",
                    "no stocks to count the ions",
                    "list the [[stock]]s (and total_volume), or remove k_at_ionic_strength",
                ));
            }
        }
        Ok(match reaction {
            None => None,
            Some(reaction) => Some(Prior {
                reaction,
                settings: self.forecast_settings(
                    &raw.plan,
                    raw.plan.get_ref(),
                    raw.timing.get_ref(),
                    temperature,
                )?,
            }),
        })
    }
}
