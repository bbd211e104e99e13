//! The prior rate law of a spec: the two equations, the rate-law terms, the visible end
//! point, and the stoichiometry derived from the equations (ν, the net change per extent).
//! The kinetics stage evaluates it; here it is only data and its derivation.

use crate::reference::equation::Equation;
use std::fmt;

/// Terms a rate law may have (a compiled run keeps its rate constants in a fixed array).
pub const MAX_TERMS: usize = 4;

/// One power-law term of the rate law, k(T) Π cᵢ^nᵢ.
#[derive(Debug, Clone, PartialEq)]
pub struct Term {
    /// SI: M^(1−n) s⁻¹ at `t_ref`.
    pub k_ref: f64,
    /// K
    pub t_ref: f64,
    /// J/mol; None means no temperature dependence is known.
    pub activation_energy: Option<f64>,
    pub orders: Vec<(String, f64)>,
    pub source: Option<String>,
}

impl Term {
    pub fn overall_order(&self) -> f64 {
        self.orders.iter().map(|(_, n)| n).sum()
    }
}

/// What the visible threshold measures.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum VisibleAs {
    /// Triiodide, I₃⁻, which starch responds to: the total iodine needed depends on [I⁻]
    /// through I₂ + I⁻ ⇌ I₃⁻ (the default for an iodine clock).
    Triiodide,
    /// The intermediate's total concentration (every other clock).
    Total,
}

impl VisibleAs {
    pub fn word(self) -> &'static str {
        match self {
            VisibleAs::Triiodide => "triiodide",
            VisibleAs::Total => "total",
        }
    }
}

/// The salt effect's Davies equation is used up to this ionic strength (mol/L); the spec
/// refuses a reference ionic strength above it.
pub const DAVIES_LIMIT: f64 = 0.5;

/// Default factor within which a visible threshold is known (k = 1, ×/÷), when the spec gives
/// none: from memory, the starch end point seen by eye varies by about half again with the
/// starch's age, the lighting and the observer.
pub const THRESHOLD_FACTOR: f64 = 1.5;

/// The visible end point: the intermediate (or, for `Triiodide`, I₃⁻) reaches `threshold`
/// (mol/L) after the timing reagent is gone.
#[derive(Debug, Clone, PartialEq)]
pub struct Visible {
    pub threshold: f64,
    pub criterion: VisibleAs,
    /// The threshold is known within ×/÷ this factor (standard uncertainty of its logarithm).
    pub factor: f64,
    pub source: Option<String>,
}

/// A clock reaction with its rate law, and the stoichiometry derived from its two equations.
#[derive(Debug, Clone, PartialEq)]
pub struct Reaction {
    pub name: String,
    pub rate_species: String,
    pub timing_species: String,
    pub main: Equation,
    pub clock: Equation,
    pub terms: Vec<Term>,
    pub visible: Option<Visible>,
    /// The ionic strength (mol/L) at which the terms' k hold, when the salt effect is on: k is
    /// then scaled to each run's ionic strength (the kinetics stage's salt module).
    pub salt_reference: Option<f64>,
    /// The species made by the main reaction and removed by the clock reaction (e.g. I2).
    pub intermediate: String,
    /// mol of timing reagent consumed per mol of rate species.
    pub nu: f64,
    /// Net change of each species per unit extent while the timing reagent lasts.
    pub during: Vec<(String, f64)>,
    /// Net change per unit extent after it is gone (main reaction alone).
    pub after: Vec<(String, f64)>,
}

/// Why a reaction's stoichiometry does not make a clock.
#[derive(Debug, Clone, PartialEq)]
pub struct StoichError(pub String);

impl fmt::Display for StoichError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(&self.0)
    }
}

impl Reaction {
    /// Derive ν and the net changes from the main and clock equations.
    pub fn new(
        name: String,
        rate_species: String,
        timing_species: String,
        main: Equation,
        clock: Equation,
        terms: Vec<Term>,
        visible: Option<Visible>,
    ) -> Result<Reaction, StoichError> {
        let r = -main.net(&rate_species);
        if r <= 0.0 {
            return Err(StoichError(format!(
                "the main reaction does not consume the rate species {rate_species}"
            )));
        }
        let s = -clock.net(&timing_species);
        if s <= 0.0 {
            return Err(StoichError(format!(
                "the clock reaction does not consume the timing species {timing_species}"
            )));
        }
        let intermediate = main
            .products
            .iter()
            .map(|(sp, _)| sp)
            .find(|sp| main.net(sp) > 0.0 && clock.net(sp) < 0.0 && **sp != timing_species)
            .cloned()
            .ok_or_else(|| {
                StoichError(
                    "no species is made by the main reaction and used by the clock reaction".into(),
                )
            })?;
        let p = main.net(&intermediate);
        let q = -clock.net(&intermediate);
        // Per unit ξ (one mol/L of rate species): the main reaction runs 1/r times, the clock
        // reaction removes the intermediate as fast as it forms, p/(r q) times.
        let nu = p / r * s / q;
        let mut names: Vec<String> = Vec::new();
        for sp in main.species().chain(clock.species()) {
            if !names.iter().any(|n| n == sp) {
                names.push(sp.to_string());
            }
        }
        let during = names
            .iter()
            .map(|n| (n.clone(), main.net(n) / r + clock.net(n) * p / (r * q)))
            .collect();
        let after = names.iter().map(|n| (n.clone(), main.net(n) / r)).collect();
        Ok(Reaction {
            name,
            rate_species,
            timing_species,
            main,
            clock,
            terms,
            visible,
            salt_reference: None,
            intermediate,
            nu,
            during,
            after,
        })
    }

    /// Species that appear in the rate law.
    pub fn rate_law_species(&self) -> Vec<&str> {
        let mut out: Vec<&str> = Vec::new();
        for t in &self.terms {
            for (s, _) in &t.orders {
                if !out.contains(&s.as_str()) {
                    out.push(s);
                }
            }
        }
        out
    }

    fn change(list: &[(String, f64)], species: &str) -> f64 {
        list.iter()
            .find(|(s, _)| s == species)
            .map_or(0.0, |(_, d)| *d)
    }

    pub fn during(&self, species: &str) -> f64 {
        Self::change(&self.during, species)
    }

    pub fn after(&self, species: &str) -> f64 {
        Self::change(&self.after, species)
    }
}
