//! clockprep: plan clock-reaction kinetics labs from one TOML spec.
//!
//! The data flow is one module per stage:
//! [`spec`] (parse, units, validate) → [`solve`] (the integer LP for deliverable volumes) →
//! [`mixing`] (the two portions mixed at t = 0) → [`totals`] (stock to prepare) →
//! [`forecast`] (clock times from the prior rate law, via [`kinetics`]) → [`report`] (the plan as data) → [`export`] (text, CSV, JSON, Markdown).

pub mod chem;
pub mod cli;
pub mod device;
pub mod error;
pub mod export;
pub mod forecast;
pub mod kinetics;
pub mod mixing;
pub mod output;
pub mod presets;
pub mod recipes;
pub mod report;
pub mod safety;
pub mod solve;
pub mod spec;
pub mod species;
pub mod totals;
pub mod units;

use error::{Result, SpecSource};

/// The whole job for one spec: checked plan → deliverable volumes → portions → stock totals →
/// report.
pub fn plan(source: SpecSource) -> Result<report::PlanReport> {
    let spec = spec::load(source)?;
    let solution = solve::solve(&spec)?;
    let mixing = mixing::split(&spec, &solution)?;
    let totals = totals::compute(&spec, &solution);
    let initial: Vec<_> = solution
        .runs
        .iter()
        .map(|r| r.concentrations.clone())
        .collect();
    let forecast = forecast::forecast(&spec, &initial);
    Ok(report::build(
        &spec,
        &solution,
        &mixing,
        &totals,
        forecast.as_ref(),
    ))
}

/// Forecast clock times from the target concentrations alone (no stocks or glassware needed).
pub fn forecast_only(source: SpecSource) -> Result<report::ForecastSheet> {
    let spec = spec::load_for(source, spec::Purpose::Forecast)?;
    let initial: Vec<_> = spec
        .runs
        .iter()
        .map(|r| r.target_concentrations())
        .collect();
    let forecast =
        forecast::forecast(&spec, &initial).expect("a spec read for a forecast has a reaction");
    Ok(report::build_forecast(&spec, &forecast))
}

/// The stock preparation sheet: what to make, in which flask, and how to weigh it up.
pub fn stocks(source: SpecSource) -> Result<report::StockSheet> {
    let spec = spec::load(source)?;
    let solution = solve::solve(&spec)?;
    let totals = totals::compute(&spec, &solution);
    let preps = recipes::prepare(&spec, &totals);
    Ok(report::build_stocks(&spec, &preps))
}
