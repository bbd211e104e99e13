//! The result of `clockprep fit` for a rate law of several terms
//! ("format": "clockprep-fit-terms/1") and its page. The `[reaction]` fragment with every
//! term's fitted k is part of the report, so every format carries it.

use super::fit::{
    fit_page, k_unit_for, q, reaction_header, residual_rows, residual_table, FitResidual, Interval,
};
use super::page::{Align, Block, Page, Section, Table};
use crate::kinetics::fit_terms::{term_label, TermsFit, PROFILE_RANGE};
use crate::spec::{Prior, Spec};
use crate::units;
use serde::Serialize;

/// One fitted term.
#[derive(Debug, Clone, Serialize)]
pub struct FitTerm {
    /// The term's species and orders, e.g. `H2O2·I-·H+`.
    pub term: String,
    /// Held at the prior's.
    pub orders: super::Ordered,
    /// k at `k_at_C` in `k_unit`, 95 % interval from ln k.
    pub k: Interval,
    pub k_unit: String,
    /// Standard error of ln k (from the Jacobian).
    pub ln_k_se: f64,
    /// The prior's k at the same temperature, in `k_unit`.
    pub prior_k: f64,
    /// Held at the prior's.
    #[serde(rename = "activation_energy_kJ_per_mol")]
    pub activation_energy_kj_mol: Option<f64>,
    /// Profile check at the 95 % interval's low and high ends: the rise of Σ r² over s² t²
    /// (1 for a model linear in ln k).
    pub profile_low: f64,
    pub profile_high: f64,
    /// The term's smallest and largest share of the fitted initial rate over the timed runs.
    pub share_low: f64,
    pub share_high: f64,
}

/// The report of `clockprep fit` for several terms.
#[derive(Debug, Clone, Serialize)]
pub struct TermsFitSheet {
    pub format: &'static str,
    pub title: String,
    pub spec: String,
    pub times: String,
    pub trials: usize,
    pub degrees_of_freedom: usize,
    /// Residual standard deviation of ln t.
    pub residual_sd_ln_t: f64,
    /// The temperature every k is given at: the trials' mean (°C).
    #[serde(rename = "k_at_C")]
    pub k_at_c: f64,
    pub terms: Vec<FitTerm>,
    /// Correlation of the terms' ln k estimates, in term order.
    pub correlation: Vec<Vec<f64>>,
    pub activation_energy_note: String,
    pub residuals: Vec<FitResidual>,
    /// What to look at before using the fit (each also sets the exit code 1).
    pub warnings: Vec<String>,
    /// The updated prior, to paste over `[reaction]`.
    pub reaction_toml: String,
    pub flagged: bool,
}

fn sig4(v: f64) -> String {
    units::sig(v, 4)
}

/// The `[reaction]` fragment with every term's fitted k (at the fit temperature), the prior's
/// orders and activation energies.
fn reaction_toml(prior: &Prior, fit: &TermsFit, times_name: &str) -> String {
    let mut out = reaction_header(prior);
    for (t, term) in fit.terms.iter().zip(&prior.reaction.terms) {
        let unit = k_unit_for(term.overall_order());
        out.push(String::new());
        out.push("[[reaction.term]]".into());
        out.push(format!("k = {}", q(&format!("{} {unit}", sig4(t.k.value)))));
        out.push(format!("at = {}", q(&format!("{:.2} K", fit.t_fit))));
        if let Some(ea) = t.activation_energy {
            out.push(format!(
                "activation_energy = {}",
                q(&format!("{:.1} kJ/mol", ea / 1e3))
            ));
        }
        let orders: Vec<String> = t
            .orders
            .iter()
            .map(|(s, n)| format!("{} = {}", q(s), units::fmt_count(*n)))
            .collect();
        out.push(format!("orders = {{ {} }}", orders.join(", ")));
        out.push(format!(
            "source = {}",
            q(&format!(
                "fit of {} terms to {} trials in {} (95 % CI of k {} to {})",
                fit.terms.len(),
                fit.trials,
                times_name,
                sig4(t.k.low),
                sig4(t.k.high)
            ))
        ));
    }
    let mut s = out.join("\n");
    s.push('\n');
    s
}

impl TermsFitSheet {
    pub fn build(spec: &Spec, prior: &Prior, fit: &TermsFit, times_name: &str) -> TermsFitSheet {
        let terms = fit
            .terms
            .iter()
            .zip(&prior.reaction.terms)
            .map(|(t, term)| FitTerm {
                term: term_label(&t.orders),
                orders: super::Ordered(t.orders.clone()),
                k: Interval {
                    value: t.k.value,
                    se: t.k.se,
                    low: t.k.low,
                    high: t.k.high,
                },
                k_unit: k_unit_for(term.overall_order()),
                ln_k_se: t.ln_k_se,
                prior_k: t.prior_k,
                activation_energy_kj_mol: t.activation_energy.map(|e| e / 1e3),
                profile_low: t.profile.0,
                profile_high: t.profile.1,
                share_low: t.share.0,
                share_high: t.share.1,
            })
            .collect();
        TermsFitSheet {
            format: "clockprep-fit-terms/1",
            title: spec.title.clone(),
            spec: spec.source.name.clone(),
            times: times_name.to_string(),
            trials: fit.trials,
            degrees_of_freedom: fit.dof,
            residual_sd_ln_t: fit.s,
            k_at_c: super::sig10(fit.t_fit - 273.15),
            terms,
            correlation: fit.correlation.clone(),
            activation_energy_note: fit.ea_note.clone(),
            residuals: residual_rows(&fit.residuals),
            warnings: fit.warnings.clone(),
            reaction_toml: reaction_toml(prior, fit, times_name),
            flagged: !fit.warnings.is_empty(),
        }
    }

    /// The fit in sentences, the terms and residual tables, the warnings.
    pub fn summary(&self) -> Section {
        let mut s = Section::new(format!("Fit: {}", self.title));
        s.para(format!(
            "{} trials from {} against {}: every term's k by nonlinear least squares on the forecast's model; residual sd of ln t {:.4} ({} degrees of freedom).",
            self.trials, self.times, self.spec, self.residual_sd_ln_t, self.degrees_of_freedom
        ));
        s.para(format!(
            "k at {:.1} °C; orders held at the prior's; activation energies {}.",
            self.k_at_c, self.activation_energy_note
        ));
        let rows = self
            .terms
            .iter()
            .map(|t| {
                vec![
                    t.term.clone(),
                    format!("{} {}", sig4(t.k.value), t.k_unit),
                    format!("{} to {}", sig4(t.k.low), sig4(t.k.high)),
                    format!("{:.3}", t.ln_k_se),
                    sig4(t.prior_k),
                    format!("{:.2} / {:.2}", t.profile_low, t.profile_high),
                    format!("{:.0} to {:.0}", t.share_low * 100.0, t.share_high * 100.0),
                ]
            })
            .collect();
        let mut align = vec![Align::Right; 7];
        align[0] = Align::Left;
        s.push(Block::Table(
            Table::with_align(
                [
                    "term",
                    "k",
                    "95 % CI",
                    "se(ln k)",
                    "prior k",
                    "profile (low/high)",
                    "share of rate (%)",
                ]
                .map(String::from)
                .to_vec(),
                align,
                rows,
            )
            .nested(),
        ));
        let (lo, hi) = PROFILE_RANGE;
        s.para(format!(
            "Profile: the rise of the sum of squares with one k held at an end of its interval and the others refitted, over what a linear model gives (1); outside {lo} to {hi} the interval is only a rough guide."
        ));
        if self.correlation.len() == 2 {
            s.para(format!(
                "Correlation of the two ln k: {:+.2}.",
                self.correlation[0][1]
            ));
        }
        s.push(residual_table(&self.residuals));
        s.push(Block::Warnings(self.warnings.clone()));
        s.para("A prior from a few trials: check it against the next pilot run.");
        s
    }

    pub fn page(&self) -> Page {
        fit_page(self.summary(), &self.reaction_toml)
    }
}
