//! The result of `clockprep fit` as a report ("format": "clockprep-fit/1") and its page. The
//! TOML fragment to paste over `[reaction]` is part of the report, so every format carries it.

use super::page::{Align, Block, Page, Section, Table};
use crate::kinetics::fit::{Fit, Order, PLAUSIBLE_ORDERS};
use crate::spec::{Prior, Spec};
use crate::units;
use serde::Serialize;

/// A fitted value with its standard error and 95 % interval.
#[derive(Debug, Clone, Serialize)]
pub struct Interval {
    pub value: f64,
    pub se: f64,
    pub low: f64,
    pub high: f64,
}

#[derive(Debug, Clone, Serialize)]
pub struct FitOrder {
    pub species: String,
    pub value: f64,
    /// Absent when the order was held fixed.
    pub se: Option<f64>,
    pub low: Option<f64>,
    pub high: Option<f64>,
    pub fixed: bool,
    /// Nearest whole or half order, and whether the 95 % interval contains it.
    pub nearest: f64,
    pub consistent: bool,
}

#[derive(Debug, Clone, Serialize)]
pub struct FitResidual {
    /// Line of the times CSV.
    pub line: usize,
    pub run: String,
    pub measured_s: f64,
    pub fitted_s: f64,
    /// ln(measured / fitted): positive when the trial ran slower than the fit.
    pub ln_ratio: f64,
    /// Externally studentized residual.
    pub studentized: f64,
    pub outlier: bool,
}

/// The report of `clockprep fit`.
#[derive(Debug, Clone, Serialize)]
pub struct FitSheet {
    pub format: &'static str,
    pub title: String,
    pub spec: String,
    pub times: String,
    pub trials: usize,
    pub degrees_of_freedom: usize,
    /// Residual standard deviation of ln t.
    pub residual_sd_ln_t: f64,
    /// k at `k_at_c`, in `k_unit`.
    pub k: Interval,
    pub k_unit: String,
    #[serde(rename = "k_at_C")]
    pub k_at_c: f64,
    pub orders: Vec<FitOrder>,
    /// kJ/mol; with an interval only when fitted.
    #[serde(rename = "activation_energy_kJ_per_mol")]
    pub activation_energy_kj_mol: Option<f64>,
    pub activation_energy_interval: Option<Interval>,
    pub activation_energy_fitted: bool,
    pub activation_energy_note: String,
    pub residuals: Vec<FitResidual>,
    /// What to look at before using the fit (each also sets the exit code 1).
    pub warnings: Vec<String>,
    /// The command that refits with whole or half orders, when any order was fitted.
    pub refit: Option<String>,
    /// Why the refit holds an order at the prior's value, or looks at the data first.
    pub refit_notes: Vec<String>,
    /// The updated prior, to paste over `[reaction]`.
    pub reaction_toml: String,
    pub flagged: bool,
}

fn interval(e: &crate::kinetics::fit::Estimate, scale: f64) -> Interval {
    Interval {
        value: e.value * scale,
        se: e.se * scale,
        low: e.low * scale,
        high: e.high * scale,
    }
}

/// Four significant figures, as k is written back into the spec.
fn sig4(v: f64) -> String {
    units::sig(v, 4)
}

fn k_unit(fit: &Fit) -> String {
    let overall: f64 = fit
        .orders
        .iter()
        .map(|o| (o.estimate.value * 1e4).round() / 1e4)
        .sum();
    k_unit_for(overall)
}

/// The refit command with only values `--orders` accepts: an implausible fitted order is
/// replaced by the prior's order.
fn refit(prior: &Prior, fit: &Fit) -> (Option<String>, Vec<String>) {
    let free: Vec<&Order> = fit.orders.iter().filter(|o| !o.fixed).collect();
    if free.is_empty() {
        return (None, Vec::new());
    }
    let prior_order = |sp: &str| {
        prior.reaction.terms[0]
            .orders
            .iter()
            .find(|(s, _)| s == sp)
            .map_or(1.0, |(_, n)| *n)
    };
    let (lo, hi) = PLAUSIBLE_ORDERS;
    let mut from_prior = Vec::new();
    let rounded: Vec<String> = fit
        .orders
        .iter()
        .map(|o| {
            let v = if o.fixed {
                o.estimate.value
            } else if (lo..=hi).contains(&o.nearest) {
                o.nearest
            } else {
                from_prior.push(o.species.as_str());
                prior_order(&o.species)
            };
            format!("{}={}", o.species, units::fmt_count(v))
        })
        .collect();
    let mut notes = Vec::new();
    if !from_prior.is_empty() {
        notes.push(format!(
            "the fitted order in {} is implausible; the refit below holds it at the prior's value",
            from_prior.join(", ")
        ));
    }
    let off: Vec<&str> = free
        .iter()
        .filter(|o| !o.consistent)
        .map(|o| o.species.as_str())
        .collect();
    if !off.is_empty() {
        notes.push(format!(
            "the interval of {} excludes its nearest whole or half value: look at the data first",
            off.join(", ")
        ));
    }
    (
        Some(format!(
            "clockprep fit SPEC TIMES --orders {}",
            rounded.join(",")
        )),
        notes,
    )
}

/// A TOML string literal.
pub(super) fn q(s: &str) -> String {
    toml::Value::String(s.to_string()).to_string()
}

/// The `[reaction]` lines a fit writes back before its terms: the equations, the visible end
/// point (criterion and factor included) and the ionic strength the k hold at, so the pasted
/// prior is the model that was fitted.
pub(super) fn reaction_header(prior: &Prior) -> Vec<String> {
    let reaction = &prior.reaction;
    let side = |v: &Vec<(String, f64)>| {
        v.iter()
            .map(|(s, c)| {
                if *c == 1.0 {
                    s.clone()
                } else {
                    format!("{c} {s}")
                }
            })
            .collect::<Vec<_>>()
            .join(" + ")
    };
    let eq = |e: &crate::reference::equation::Equation| {
        format!("{} -> {}", side(&e.reactants), side(&e.products))
    };
    let mut out = vec![
        "[reaction]".to_string(),
        format!("rate_species = {}", q(&reaction.rate_species)),
        format!("main = {}", q(&eq(&reaction.main))),
        format!("clock = {}", q(&eq(&reaction.clock))),
    ];
    if let Some(v) = &reaction.visible {
        out.push(format!(
            "visible = {{ threshold = {}, as = {}, factor = {}, source = {} }}",
            q(&format!("{} M", sig4(v.threshold))),
            q(v.criterion.word()),
            sig4(v.factor),
            q(v.source.as_deref().unwrap_or(""))
        ));
    }
    if let Some(i) = reaction.salt_reference {
        out.push(format!(
            "k_at_ionic_strength = {}",
            q(&format!("{} M", sig4(i)))
        ));
    }
    out
}

/// The unit of k for a term of this overall order, as a spec writes it.
pub(super) fn k_unit_for(overall: f64) -> String {
    let p = 1.0 - (overall * 1e4).round() / 1e4;
    if p.abs() < 1e-12 {
        "s^-1".to_string()
    } else {
        format!("M^{} s^-1", (p * 1e4).round() / 1e4)
    }
}

/// The `[reaction]` fragment with the fitted k, Ea and orders.
fn reaction_toml(prior: &Prior, fit: &Fit, unit: &str, times_name: &str) -> String {
    let mut out = reaction_header(prior);
    out.push(String::new());
    out.push("[[reaction.term]]".into());
    out.push(format!(
        "k = {}",
        q(&format!("{} {unit}", sig4(fit.k.value)))
    ));
    out.push(format!("at = {}", q(&format!("{:.2} K", fit.t_ref))));
    if let Some(ea) = &fit.activation_energy {
        out.push(format!(
            "activation_energy = {}",
            q(&format!("{:.1} kJ/mol", ea.value / 1e3))
        ));
    }
    let orders: Vec<String> = fit
        .orders
        .iter()
        .map(|o| {
            format!(
                "{} = {}",
                q(&o.species),
                (o.estimate.value * 1e4).round() / 1e4
            )
        })
        .collect();
    out.push(format!("orders = {{ {} }}", orders.join(", ")));
    out.push(format!(
        "source = {}",
        q(&format!(
            "fit to {} trials in {} (95 % CI of k {} to {})",
            fit.trials,
            times_name,
            sig4(fit.k.low),
            sig4(fit.k.high)
        ))
    ));
    let mut s = out.join("\n");
    s.push('\n');
    s
}

/// A fit's page: its summary, the updated prior to paste, and the cautions.
pub(super) fn fit_page(summary: Section, reaction_toml: &str) -> Page {
    let mut prior = Section::new("Updated prior (paste over [reaction])");
    prior.push(Block::Verbatim(reaction_toml.to_string()));
    Page {
        title: summary.heading.clone().unwrap_or_default(),
        sections: vec![summary, prior, super::page::general_cautions()],
    }
}

/// The residual table of a fit: times in ms when every trial is under a second, else in s.
pub(super) fn residual_table(residuals: &[FitResidual]) -> Block {
    let (scale, unit) = if residuals.iter().all(|r| r.measured_s < 1.0) {
        (1e3, "ms")
    } else {
        (1.0, "s")
    };
    let rows = residuals
        .iter()
        .map(|r| {
            vec![
                r.line.to_string(),
                r.run.clone(),
                sig4(r.measured_s * scale),
                sig4(r.fitted_s * scale),
                format!("{:+.4}", r.ln_ratio),
                format!("{:+.2}", r.studentized),
                if r.outlier {
                    "<- outlier".into()
                } else {
                    String::new()
                },
            ]
        })
        .collect();
    let mut align = vec![Align::Right; 7];
    align[1] = Align::Left;
    align[6] = Align::Left;
    Block::Table(
        Table::with_align(
            vec![
                "line".into(),
                "run".into(),
                format!("measured ({unit})"),
                format!("fitted ({unit})"),
                "ln(measured/fitted)".into(),
                "studentized".into(),
                String::new(),
            ],
            align,
            rows,
        )
        .nested(),
    )
}

/// The residuals of a fit as the report lists them.
pub(super) fn residual_rows(residuals: &[crate::kinetics::fit::Residual]) -> Vec<FitResidual> {
    residuals
        .iter()
        .map(|r| FitResidual {
            line: r.line,
            run: r.run.clone(),
            measured_s: r.time,
            fitted_s: r.predicted,
            ln_ratio: r.residual,
            studentized: r.studentized,
            outlier: r.outlier,
        })
        .collect()
}

impl FitSheet {
    pub fn build(spec: &Spec, prior: &Prior, fit: &Fit, times_name: &str) -> FitSheet {
        let unit = k_unit(fit);
        let (refit, refit_notes) = refit(prior, fit);
        FitSheet {
            format: "clockprep-fit/1",
            title: spec.title.clone(),
            spec: spec.source.name.clone(),
            times: times_name.to_string(),
            trials: fit.trials,
            degrees_of_freedom: fit.dof,
            residual_sd_ln_t: fit.s,
            k: interval(&fit.k, 1.0),
            k_at_c: super::sig10(fit.t_ref - 273.15),
            orders: fit
                .orders
                .iter()
                .map(|o| FitOrder {
                    species: o.species.clone(),
                    value: o.estimate.value,
                    se: (!o.fixed).then_some(o.estimate.se),
                    low: (!o.fixed).then_some(o.estimate.low),
                    high: (!o.fixed).then_some(o.estimate.high),
                    fixed: o.fixed,
                    nearest: o.nearest,
                    consistent: o.consistent,
                })
                .collect(),
            activation_energy_kj_mol: fit.activation_energy.as_ref().map(|e| e.value / 1e3),
            activation_energy_interval: fit
                .activation_energy
                .as_ref()
                .filter(|_| fit.ea_fitted)
                .map(|e| interval(e, 1e-3)),
            activation_energy_fitted: fit.ea_fitted,
            activation_energy_note: fit.ea_note.clone(),
            residuals: residual_rows(&fit.residuals),
            warnings: fit.warnings.clone(),
            refit,
            refit_notes,
            reaction_toml: reaction_toml(prior, fit, &unit, times_name),
            flagged: !fit.warnings.is_empty(),
            k_unit: unit,
        }
    }

    /// The fit in sentences, the residual table, the warnings and the refit advice.
    pub fn summary(&self) -> Section {
        let mut s = Section::new(format!("Fit: {}", self.title));
        s.para(format!(
            "{} trials from {} against {}.",
            self.trials, self.times, self.spec
        ));
        s.para(format!(
            "k = {} {} at {:.1} °C (95 % CI {} to {}); residual sd of ln t {:.4} ({} degrees of freedom).",
            sig4(self.k.value),
            self.k_unit,
            self.k_at_c,
            sig4(self.k.low),
            sig4(self.k.high),
            self.residual_sd_ln_t,
            self.degrees_of_freedom
        ));
        for o in &self.orders {
            match (o.fixed, o.se, o.low, o.high) {
                (false, Some(se), Some(low), Some(high)) => {
                    let verdict = if o.consistent {
                        "consistent"
                    } else {
                        "not consistent"
                    };
                    s.para(format!(
                        "Order in {}: {:.3} ± {:.3} (95 % CI {low:.3} to {high:.3}), {verdict} with {}.",
                        o.species, o.value, se, o.nearest
                    ))
                }
                _ => s.para(format!("Order in {}: {} (fixed).", o.species, o.value)),
            };
        }
        match (
            &self.activation_energy_interval,
            self.activation_energy_kj_mol,
        ) {
            (Some(i), _) => s.para(format!(
                "Activation energy: {:.1} ± {:.1} kJ/mol (95 % CI {:.1} to {:.1}), {}.",
                i.value, i.se, i.low, i.high, self.activation_energy_note
            )),
            (None, Some(v)) => s.para(format!(
                "Activation energy: {v:.1} kJ/mol {}.",
                self.activation_energy_note
            )),
            (None, None) => s.para(format!(
                "Activation energy: {}.",
                self.activation_energy_note
            )),
        };
        s.push(residual_table(&self.residuals));
        s.push(Block::Warnings(self.warnings.clone()));
        for n in &self.refit_notes {
            s.para(format!("Note: {n}."));
        }
        if let Some(cmd) = &self.refit {
            s.para(format!(
                "To refit k with the nearest whole or half orders: {cmd}"
            ));
        }
        s.para("A prior from a few trials: check it against the next pilot run.");
        s
    }

    pub fn page(&self) -> Page {
        fit_page(self.summary(), &self.reaction_toml)
    }
}
