//! clockprep: plan clock-reaction kinetics labs from one TOML spec.
//!
//! The data flow is one folder per stage: [`spec`] (TOML → checked model in typed parts) →
//! [`solve`] (the integer LP for deliverable volumes) → [`kinetics`] (forecast, fit, design,
//! tune from the prior rate law) → [`lab`] (portions, stock totals, recipes, uncertainty) →
//! [`report`] (each sheet as data and as a page) → [`export`] (text, Markdown, HTML over the
//! page; CSV, JSON, TOML; cards, chart, PDF). [`reference`] holds the notation and data every
//! stage shares. The functions below compose the stages into the commands.

pub mod cli;
pub mod error;
pub mod export;
pub mod flag;
pub mod kinetics;
pub mod lab;
pub mod output;
pub mod reference;
pub mod report;
pub mod serve;
pub mod solve;
pub mod spec;
pub mod units;

use error::{Result, SpecSource};

/// A spec solved for the bench: the stocks' batches, and the stocks' uncertainties from the
/// masses actually weighed, worked out once for every sheet.
struct Solved {
    spec: spec::Spec,
    /// The spec's lab with the weighed stocks' uncertainties recomputed.
    lab: spec::Lab,
    solution: solve::Solution,
    totals: lab::totals::Totals,
    preps: Vec<lab::recipes::Preparation>,
    uncertainty: Vec<lab::uncertainty::RunUncertainty>,
}

fn solved(source: SpecSource) -> Result<Solved> {
    let spec = spec::load(source)?;
    let bench = spec.need_lab()?;
    let solution = solve::solve(&spec, bench)?;
    let totals = lab::totals::compute(&spec, bench, &solution);
    let preps = lab::recipes::prepare(bench, &totals);
    let lab = lab::weighing::weighed_from(bench, &preps);
    let uncertainty = lab::uncertainty::propagate_distinct(&spec, &lab, &solution);
    Ok(Solved {
        spec,
        lab,
        solution,
        totals,
        preps,
        uncertainty,
    })
}

/// The whole job for one spec: checked plan → deliverable volumes → portions → stock totals →
/// report.
pub fn plan(source: SpecSource) -> Result<report::PlanReport> {
    report_of(&solved(source)?)
}

/// The mixing sheet and the stock sheet of one spec from one solve.
pub fn plan_with_stocks(source: SpecSource) -> Result<(report::PlanReport, report::StockSheet)> {
    let s = solved(source)?;
    Ok((report_of(&s)?, stock_sheet(&s)))
}

fn report_of(s: &Solved) -> Result<report::PlanReport> {
    let (spec, lab, solution) = (&s.spec, &s.lab, &s.solution);
    let mixing = lab::portions::split(spec, lab, solution)?;
    let initial: Vec<_> = solution
        .runs
        .iter()
        .map(|r| r.concentrations.clone())
        .collect();
    let forecast = spec
        .prior
        .as_ref()
        .map(|p| kinetics::forecast::forecast(spec, p, &initial));
    let mut report = report::build(
        spec,
        lab,
        solution,
        &mixing,
        &s.totals,
        forecast.as_ref(),
        &s.uncertainty,
    );
    report.sections = report::section_forecasts(spec, &section_forecasts(spec, &initial));
    Ok(report)
}

/// Each lab section's forecast: the same runs at the section's temperature (else the spec's),
/// with its replicates for the session check. Empty without sections or a prior.
fn section_forecasts(
    spec: &spec::Spec,
    initial: &[Vec<(String, f64)>],
) -> Vec<kinetics::forecast::Forecast> {
    let Some(prior) = &spec.prior else {
        return Vec::new();
    };
    spec.sections
        .iter()
        .map(|s| {
            let mut one = spec.clone();
            one.stations = s.stations;
            one.replicates = s.replicates;
            let mut p = prior.clone();
            if let Some(t) = s.temperature {
                p.settings.temperature = t;
            }
            kinetics::forecast::forecast(&one, &p, initial)
        })
        .collect()
}

fn stock_sheet(s: &Solved) -> report::StockSheet {
    let (spec, lab) = (&s.spec, &s.lab);
    let dominant = lab::uncertainty::dominant_stocks(spec, lab, &s.solution.runs, &s.uncertainty);
    let small = lab::recipes::small_masses(lab, &s.preps);
    let waste = lab::waste::waste(lab, &s.solution, &s.totals, &s.preps);
    report::build_stocks(
        spec,
        lab,
        &s.preps,
        &dominant,
        &small,
        &waste,
        &s.totals.week,
    )
}

/// Forecast clock times: from the delivered concentrations when the spec lists stocks (as
/// `plan`, `fit` and `chart` see them, counter-ions and the ionic-strength salt included), else
/// from the targets alone (no stocks or glassware needed).
pub fn forecast_only(source: SpecSource) -> Result<report::ForecastSheet> {
    let (spec, initial) = initial_concentrations(source)?;
    let prior = spec.need_prior()?;
    let forecast = kinetics::forecast::forecast(&spec, prior, &initial);
    let mut sheet = report::build_forecast(&spec, prior, &forecast);
    sheet.sections = report::section_forecasts(&spec, &section_forecasts(&spec, &initial));
    Ok(sheet)
}

/// The stock preparation sheet: what to make, in which flask, and how to weigh it up.
pub fn stocks(source: SpecSource) -> Result<report::StockSheet> {
    Ok(stock_sheet(&solved(source)?))
}

/// The forecast chart (SVG) of a spec: from the planned recipes when the spec lists stocks,
/// else from the target concentrations; and whether anything is flagged (as `forecast`).
pub fn chart(source: SpecSource) -> Result<(String, bool)> {
    let light = spec::load_for(source.clone(), spec::Purpose::Forecast)?;
    let settings = &light.need_prior()?.settings;
    let (window, band) = (settings.window, settings.band);
    if light.lab.is_some() {
        let report = plan(source)?;
        let svg = export::chart::svg(&report.title, &report.chart_rows(), window, band);
        Ok((svg, report.flagged))
    } else {
        let sheet = forecast_only(source)?;
        let svg = export::chart::svg(&sheet.title, &sheet.chart_rows(), window, band);
        Ok((svg, sheet.flagged))
    }
}

/// One run's initial concentrations: (species, mol/L).
pub type Concentrations = Vec<(String, f64)>;

/// The spec and the initial concentrations of its runs as the forecast sees them: the
/// delivered concentrations when the spec lists stocks, else the targets.
pub fn initial_concentrations(source: SpecSource) -> Result<(spec::Spec, Vec<Concentrations>)> {
    let light = spec::load_for(source.clone(), spec::Purpose::Forecast)?;
    if light.lab.is_none() {
        let initial = light
            .runs
            .iter()
            .map(|r| r.target_concentrations())
            .collect();
        return Ok((light, initial));
    }
    let spec = spec::load(source)?;
    let solution = solve::solve(&spec, spec.need_lab()?)?;
    let initial = solution
        .runs
        .iter()
        .map(|r| r.concentrations.clone())
        .collect();
    Ok((spec, initial))
}

/// Fit the prior to measured times; the report carries the updated prior as a TOML fragment
/// and the fit's warnings (outliers, implausible orders, times far from the prior).
pub fn fit(
    source: SpecSource,
    times: SpecSource,
    orders: Option<&str>,
) -> Result<report::FitReport> {
    let (spec, initial) = initial_concentrations(source)?;
    let prior = spec.need_prior()?;
    let trials = kinetics::fit::read_times(&times, &spec)?;
    if prior.reaction.terms.len() > 1 {
        // Several terms: every k is fitted, the orders held at the prior's.
        if let Some(text) = orders {
            return Err(SpecSource::new("--orders", text).error(
                0..text.len(),
                "--orders fixes the orders of a one-term rate law; a rate law of several terms keeps each term's orders from the prior and fits every k",
                "here",
                "leave --orders out, or change the orders in [[reaction.term]]",
            ));
        }
        let result = kinetics::fit_terms::fit_terms(&spec, prior, &initial, &trials)?;
        return Ok(report::FitReport::Terms(report::TermsFitSheet::build(
            &spec,
            prior,
            &result,
            &times.name,
        )));
    }
    let prior_orders: Vec<(String, f64)> = prior
        .reaction
        .terms
        .first()
        .map(|t| t.orders.clone())
        .unwrap_or_default();
    let species: Vec<String> = prior_orders.iter().map(|(s, _)| s.clone()).collect();
    let fixed = match orders {
        None => Vec::new(),
        // Every order held at the prior's value: fit k (and Ea) alone.
        Some(text) if text.trim() == "prior" => prior_orders,
        Some(text) => kinetics::fit::parse_orders(text, &species).map_err(|e| {
            SpecSource::new("--orders", text).error(
                0..text.len(),
                e,
                "here",
                "e.g. --orders 1,1,2 or --orders I-=1,H+=2",
            )
        })?,
    };
    let result = kinetics::fit::fit(
        &spec,
        prior,
        &initial,
        &trials,
        &kinetics::fit::Options { fixed },
    )?;
    Ok(report::FitReport::OneTerm(report::FitSheet::build(
        &spec,
        prior,
        &result,
        &times.name,
    )))
}

/// Design a run set from the spec's `[design]`: the runs, their expected precision, and the
/// runs as `[[run]]` TOML.
pub fn design(source: SpecSource) -> Result<report::DesignSheet> {
    let spec = spec::load_for(source, spec::Purpose::Design)?;
    let d = spec.need_design()?;
    let runs = kinetics::design::generate(d);
    let designed = kinetics::design::with_runs(&spec, &runs);
    // Each run's error sources: through the stocks and glassware when the spec lists them and
    // the run has a forecast time, else the spec's flat volumetric error in every trial.
    let flat = |_: usize| kinetics::design::RunErrors {
        trial: d.volumetric_error,
        ..Default::default()
    };
    let (errors, warnings): (Vec<_>, Vec<String>) = match &designed.lab {
        None => ((0..runs.len()).map(flat).collect(), Vec::new()),
        Some(lab) => match solve::solve(&designed, lab) {
            Ok(sol) => {
                let lab = &lab::weighing::with_weighed_masses(&designed, lab, &sol);
                (
                    sol.runs
                        .iter()
                        .enumerate()
                        .map(|(i, r)| {
                            lab::uncertainty::design_errors(&designed, lab, r)
                                .unwrap_or_else(|| flat(i))
                        })
                        .collect(),
                    Vec::new(),
                )
            }
            Err(e) => ((0..runs.len()).map(flat).collect(), vec![format!("the designed runs cannot all be made with these stocks and glassware ({}); assumed {} % volumetric error", e.message(), d.volumetric_error * 100.0)]),
        },
    };
    let report = kinetics::design::assess(&spec, d, runs, &errors, warnings);
    Ok(report::DesignSheet::build(&spec, d, &report))
}

/// Tune the timing-reagent concentration.
pub fn tune(source: SpecSource) -> Result<report::TuneSheet> {
    let spec = spec::load_for(source.clone(), spec::Purpose::Forecast)?;
    let prior = spec.need_prior()?;
    let initial: Vec<Concentrations> = spec
        .runs
        .iter()
        .map(|r| r.target_concentrations())
        .collect();
    // With stocks and glassware, only a timing volume the bench can deliver is suggested, so
    // that the suggestion pasted back solves.
    let full = match &spec.lab {
        Some(_) => Some(spec::load(source)?),
        None => None,
    };
    let tuned = match full.as_ref().and_then(|f| f.lab.as_ref().map(|l| (f, l))) {
        Some((f, lab)) => kinetics::tune::tune_deliverable(&spec, prior, &initial, |c| {
            // The deliverable volumes next to the best, and the spec's own value, each kept
            // only if every run still solves with it.
            let mut candidates = solve::deliverable_timing(f, lab, c);
            candidates.push(f.timing.concentration);
            candidates
                .into_iter()
                .filter(|&c| {
                    let mut g = f.clone();
                    g.timing.concentration = c;
                    g.lab.as_ref().is_some_and(|l| solve::solve(&g, l).is_ok())
                })
                .collect()
        }),
        None => kinetics::tune::tune(&spec, prior, &initial),
    };
    let t = tuned.map_err(|e| {
        spec.source.error(
            spec.source.table("[reaction]"),
            e.0,
            "the prior",
            "check [reaction] and the runs",
        )
    })?;
    Ok(report::TuneSheet::build(&spec, prior, &t))
}
