//! clockprep: plan clock-reaction kinetics labs from one TOML spec.
//!
//! The data flow of [`plan`] is one module per stage:
//! [`spec`] (parse, units, validate) → [`solve`] (the integer LP for deliverable volumes) →
//! [`mixing`] (the two portions mixed at t = 0) → [`totals`] (stock to prepare) →
//! [`forecast`] (clock times from the prior rate law, via [`kinetics`]) → [`uncertainty`]
//! (glassware and stocks) → [`report`] (the plan as data) → [`export`] (text, CSV, JSON,
//! Markdown, HTML, bench cards). The other commands branch off the same stages: [`recipes`]
//! (stock sheet), [`chart`](mod@chart), [`fit`](mod@fit), [`design`](mod@design) and
//! [`tune`](mod@tune).

pub mod cli;
pub mod error;
pub mod export;
pub mod flag;
pub mod kinetics;
pub mod lab;
pub mod output;
pub mod reference;
pub mod report;
pub mod solve;
pub mod spec;
pub mod units;

use error::{Result, SpecSource};

/// The whole job for one spec: checked plan → deliverable volumes → portions → stock totals →
/// report.
pub fn plan(source: SpecSource) -> Result<report::PlanReport> {
    let spec = spec::load(source)?;
    let lab = spec.need_lab()?;
    let solution = solve::solve(&spec, lab)?;
    report_of(&spec, lab, &solution)
}

/// The mixing sheet and the stock sheet of one spec from one solve.
pub fn plan_with_stocks(source: SpecSource) -> Result<(report::PlanReport, report::StockSheet)> {
    let spec = spec::load(source)?;
    let lab = spec.need_lab()?;
    let solution = solve::solve(&spec, lab)?;
    Ok((
        report_of(&spec, lab, &solution)?,
        stock_sheet(&spec, lab, &solution),
    ))
}

fn report_of(
    spec: &spec::Spec,
    lab: &spec::Lab,
    solution: &solve::Solution,
) -> Result<report::PlanReport> {
    let mixing = lab::portions::split(spec, lab, solution)?;
    let totals = lab::totals::compute(spec, lab, solution);
    let initial: Vec<_> = solution
        .runs
        .iter()
        .map(|r| r.concentrations.clone())
        .collect();
    let forecast = spec
        .prior
        .as_ref()
        .map(|p| kinetics::forecast::forecast(spec, p, &initial));
    let uncertainty: Vec<_> = solution
        .runs
        .iter()
        .map(|r| lab::uncertainty::propagate(spec, lab, r))
        .collect();
    Ok(report::build(
        spec,
        lab,
        solution,
        &mixing,
        &totals,
        forecast.as_ref(),
        &uncertainty,
    ))
}

fn stock_sheet(
    spec: &spec::Spec,
    lab: &spec::Lab,
    solution: &solve::Solution,
) -> report::StockSheet {
    let totals = lab::totals::compute(spec, lab, solution);
    let preps = lab::recipes::prepare(lab, &totals);
    report::build_stocks(spec, lab, &preps)
}

/// Forecast clock times from the target concentrations alone (no stocks or glassware needed).
pub fn forecast_only(source: SpecSource) -> Result<report::ForecastSheet> {
    let spec = spec::load_for(source, spec::Purpose::Forecast)?;
    let prior = spec.need_prior()?;
    let initial: Vec<_> = spec
        .runs
        .iter()
        .map(|r| r.target_concentrations())
        .collect();
    let forecast = kinetics::forecast::forecast(&spec, prior, &initial);
    Ok(report::build_forecast(&spec, prior, &forecast))
}

/// The stock preparation sheet: what to make, in which flask, and how to weigh it up.
pub fn stocks(source: SpecSource) -> Result<report::StockSheet> {
    let spec = spec::load(source)?;
    let lab = spec.need_lab()?;
    let solution = solve::solve(&spec, lab)?;
    Ok(stock_sheet(&spec, lab, &solution))
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

/// Fit the prior to measured times; returns the updated prior as a TOML fragment, and
/// whether the fit carries warnings (outliers, implausible orders, times far from the prior).
pub fn fit(source: SpecSource, times: SpecSource, orders: Option<&str>) -> Result<(String, bool)> {
    let (spec, initial) = initial_concentrations(source)?;
    let the_prior = spec.need_prior()?;
    let prior: Vec<(String, f64)> = the_prior
        .reaction
        .terms
        .first()
        .map(|t| t.orders.clone())
        .unwrap_or_default();
    let species: Vec<String> = prior.iter().map(|(s, _)| s.clone()).collect();
    let fixed = match orders {
        None => Vec::new(),
        // Every order held at the prior's value: fit k (and Ea) alone.
        Some(text) if text.trim() == "prior" => prior,
        Some(text) => kinetics::fit::parse_orders(text, &species).map_err(|e| {
            SpecSource::new("--orders", text).error(
                0..text.len(),
                e,
                "here",
                "e.g. --orders 1,1,2 or --orders I-=1,H+=2",
            )
        })?,
    };
    let trials = kinetics::fit::read_times(&times, &spec)?;
    let result = kinetics::fit::fit(
        &spec,
        the_prior,
        &initial,
        &trials,
        &kinetics::fit::Options { fixed },
    )?;
    Ok((
        kinetics::fit::toml_fragment(&spec, the_prior, &result, &times.name),
        !result.warnings.is_empty(),
    ))
}

/// Design a run set from the spec's `[design]`; returns the runs as TOML with the expected
/// precision as comments, and whether the design carries warnings.
pub fn design(source: SpecSource) -> Result<(String, bool)> {
    let spec = spec::load_for(source, spec::Purpose::Design)?;
    let d = spec.need_design()?;
    let runs = kinetics::design::generate(d);
    let designed = kinetics::design::with_runs(&spec, &runs);
    // Per-run volumetric error: propagated through the glassware when the spec lists it.
    let flat = vec![d.volumetric_error; runs.len()];
    let (volumetric, warnings) = match &designed.lab {
        None => (flat, Vec::new()),
        Some(lab) => match solve::solve(&designed, lab) {
            Ok(sol) => (
                sol.runs
                    .iter()
                    .map(|r| {
                        lab::uncertainty::propagate(&designed, lab, r)
                            .time
                            .unwrap_or(d.volumetric_error)
                    })
                    .collect(),
                Vec::new(),
            ),
            Err(e) => (flat, vec![format!("the designed runs cannot all be made with these stocks and glassware ({}); assumed {} % volumetric error", e.message(), d.volumetric_error * 100.0)]),
        },
    };
    let report = kinetics::design::assess(&spec, d, runs, &volumetric, warnings);
    Ok((
        kinetics::design::toml_runs(&spec, d, &report),
        !report.warnings.is_empty(),
    ))
}

/// Tune the timing-reagent concentration; returns the report as text.
pub fn tune(source: SpecSource) -> Result<(String, bool)> {
    use std::fmt::Write;
    let spec = spec::load_for(source, spec::Purpose::Forecast)?;
    let initial: Vec<Concentrations> = spec
        .runs
        .iter()
        .map(|r| r.target_concentrations())
        .collect();
    let prior = spec.need_prior()?;
    let t = kinetics::tune::tune(&spec, prior, &initial).map_err(|e| {
        spec.source.error(
            spec.source.table("[reaction]"),
            e.0,
            "the prior",
            "check [reaction] and the runs",
        )
    })?;
    let f = &prior.settings;
    let mut out = String::new();
    let _ = writeln!(out, "Clock tuning: {}", spec.title);
    let _ = writeln!(out, "Spec: {}", spec.source.name);
    let _ = writeln!(
        out,
        "Best single timing concentration: {} {} (now {}); the conversion limit allows up to {}.",
        spec.timing.species,
        units::concentration(t.concentration),
        units::concentration(spec.timing.concentration),
        units::concentration(t.limit)
    );
    let _ = writeln!(
        out,
        "Smallest margin to the {:.0} s to {:.0} s window across {:.1} to {:.1} °C: x{:.2} {}.",
        f.window.0,
        f.window.1,
        f.temperature - f.band - 273.15,
        f.temperature + f.band - 273.15,
        t.margin.exp(),
        if t.margin >= 0.0 {
            "(inside)"
        } else {
            "(outside: see below)"
        }
    );
    let _ = writeln!(
        out,
        "\n{:<24} {:>12} {:>12} {:>12}",
        "run", "warm (s)", "planned (s)", "cool (s)"
    );
    for r in &t.runs {
        let _ = writeln!(
            out,
            "{:<24} {:>12.1} {:>12.1} {:>12.1}",
            r.name, r.fast, r.at, r.slow
        );
    }
    for a in &t.advice {
        let _ = writeln!(out, "\n{a}");
    }
    if t.margin >= 0.0 {
        let _ = writeln!(
            out,
            "\nSet [timing] concentration = \"{}\", then run clockprep plan to check that the timing stock volume is deliverable. Predicted times are estimates from a prior, not guarantees.",
            units::concentration(t.concentration)
        );
    } else {
        let _ = writeln!(
            out,
            "\nNo timing concentration fits these runs as they stand: change the runs as advised, then run clockprep tune again. Predicted times are estimates from a prior, not guarantees."
        );
    }
    Ok((out, t.margin >= 0.0))
}
