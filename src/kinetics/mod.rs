//! Kinetics: the clock-time forecast from a prior rate law.
//!
//! A clock run has a main reaction (rate species → intermediate, e.g. BrO3⁻ → 3 I₂) and a fast
//! clock reaction that removes the intermediate with the timing reagent (I₂ + 2 S₂O₃²⁻). While
//! the timing reagent lasts, every concentration is linear in the extent ξ (mol/L of rate
//! species consumed): cᵢ(ξ) = cᵢ₀ + δᵢ ξ, with δ the net change of the two reactions together.
//! The rate law gives dξ/dt = r(ξ) = Σⱼ kⱼ(T) Πᵢ cᵢ(ξ)^nᵢⱼ, so the time to the clock is
//!
//!   t_clock = ∫₀^ξc dξ / r(ξ),   ξc = `[timing]`₀ / ν,
//!
//! with ν the mol of timing reagent consumed per mol of rate species. The integral is computed
//! by adaptive Gauss–Kronrod (7/15 points) to a relative tolerance of 1e-10. After the timing
//! reagent is gone the main reaction alone runs, and the intermediate builds up to the visible
//! threshold (when one is given) over a further integral of the same form.

pub mod design;
pub mod fit;
pub mod fit_terms;
pub mod forecast;
pub mod salt;
pub mod times;
pub mod tune;

use crate::spec::{Reaction, Term, VisibleAs, MAX_TERMS};

/// I₂ + I⁻ ⇌ I₃⁻: the formation constant at 25 °C (molal, ≈ molar in dilute solution) and the
/// standard enthalpy of formation, J/mol. Palmer, Ramette and Mesmer, "Triiodide ion formation
/// equilibrium and activity coefficients in aqueous solution", J. Solution Chem. 13 (1984)
/// 673: K = 698 ± 10, ΔH° = −17.0 ± 0.6 kJ/mol.
pub const TRIIODIDE_K25: f64 = 698.0;
pub const TRIIODIDE_DH: f64 = -17.0e3;

/// The triiodide formation constant at `t` (K), by van 't Hoff with ΔH° constant (its ΔCp° of
/// −21 J/(K mol) changes K by under 0.1 % across 15 to 35 °C).
pub fn triiodide_k(t: f64) -> f64 {
    TRIIODIDE_K25 * (-TRIIODIDE_DH / R * (1.0 / t - 1.0 / 298.15)).exp()
}

/// Total iodine (I₂ + I₃⁻, mol/L) that holds `triiodide` mol/L of I₃⁻ when `iodide` mol/L of
/// iodide is present in all (free and in I₃⁻): [I₃⁻] = K [I₂] [I⁻] with [I⁻] = iodide − [I₃⁻].
pub fn iodine_for_triiodide(triiodide: f64, iodide: f64, k: f64) -> f64 {
    let free = iodide - triiodide;
    if free <= 0.0 {
        return f64::INFINITY;
    }
    triiodide + triiodide / (k * free)
}
use std::fmt;

/// Molar gas constant, J mol⁻¹ K⁻¹ (CODATA 2018, exact since the 2019 SI redefinition).
pub const R: f64 = 8.314_462_618;

impl Term {
    /// Arrhenius: k(T) = k_ref · exp(−Ea/R · (1/T − 1/T_ref)).
    pub fn k_at(&self, t: f64) -> f64 {
        match self.activation_energy {
            Some(ea) => self.k_ref * (-ea / R * (1.0 / t - 1.0 / self.t_ref)).exp(),
            None => self.k_ref,
        }
    }
}

// ---------------------------------------------------------------------------------------------
// The compiled rate law of one run: no allocation when evaluated.
// ---------------------------------------------------------------------------------------------

/// The rate law of one run, compiled to indices so a forecast allocates nothing.
#[derive(Debug, Clone)]
pub struct RunKinetics {
    /// Per rate-law species: initial concentration, net change per ξ during and after the clock.
    c0: Vec<f64>,
    during: Vec<f64>,
    after: Vec<f64>,
    /// Per term: (index into the species, order) pairs.
    terms: Vec<Vec<(usize, f64)>>,
    /// Per term: k at the reference temperature, T_ref, Ea.
    k: Vec<(f64, f64, Option<f64>)>,
    /// Extent at the clock, mol/L.
    xi_clock: f64,
    /// The visible end point, when there is one.
    visible: Option<VisibleModel>,
    /// The salt effect, when on: the run's ionic strength, the reference one, and each term's
    /// charge product (mol/L, mol/L, −).
    salt: Option<(f64, f64, Vec<f64>)>,
    /// Reactants (consumed while the timing reagent lasts): initial concentration and change per ξ.
    consumed: Vec<(String, f64, f64)>,
    nu: f64,
    timing: f64,
}

/// The visible end point of one run: the threshold, what it measures, the intermediate made per
/// unit extent after the clock, and the iodide at the clock and its change per unit extent.
#[derive(Debug, Clone)]
struct VisibleModel {
    threshold: f64,
    criterion: VisibleAs,
    per_xi: f64,
    iodide_at_clock: f64,
    iodide_per_xi: f64,
}

impl VisibleModel {
    /// Extent after the clock (mol/L) until the colour shows at `t` (K), with the threshold
    /// scaled by `scale`.
    fn extent(&self, t: f64, scale: f64) -> f64 {
        let theta = self.threshold * scale;
        match self.criterion {
            VisibleAs::Total => theta / self.per_xi,
            VisibleAs::Triiodide => {
                // The iodide left falls slightly as iodine forms: a few fixed-point steps.
                let k = triiodide_k(t);
                let mut xi = theta / self.per_xi;
                for _ in 0..6 {
                    let iodide = self.iodide_at_clock + self.iodide_per_xi * xi;
                    xi = iodine_for_triiodide(theta, iodide, k) / self.per_xi;
                    if !xi.is_finite() {
                        break;
                    }
                }
                xi
            }
        }
    }
}

/// The forecast of one run at one temperature.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Timing {
    /// s, until the timing reagent is used up.
    pub clock: f64,
    /// s, from then until the colour is visible (0 without a threshold).
    pub visible_extra: f64,
    /// s, by the initial-rate approximation `[timing]`₀ / (ν r₀).
    pub initial_rate: f64,
    /// M/s, the initial rate r₀ of rate-species consumption.
    pub rate0: f64,
    /// The quadrature's estimated relative error of the time to colour.
    pub relative_error: f64,
}

/// Relative accuracy asked of each clock-time integral.
pub const QUADRATURE_TOLERANCE: f64 = 1e-10;
/// A forecast whose integral is estimated worse than this is flagged (`inaccurate_time`).
pub const QUADRATURE_ACCEPTED: f64 = 1e-6;

impl Timing {
    /// The time the forecast reports: to visible colour when a threshold is known.
    pub fn to_colour(&self) -> f64 {
        self.clock + self.visible_extra
    }
}

/// Why a run has no finite forecast.
#[derive(Debug, Clone, PartialEq)]
pub enum NoClock {
    /// A rate-law species starts at zero: the reaction does not run.
    Missing(String),
    /// A reactant runs out before the timing reagent does: the colour never appears.
    Exhausted(String),
}

impl fmt::Display for NoClock {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            NoClock::Missing(s) => write!(f, "{s} is absent, so the reaction does not run"),
            NoClock::Exhausted(s) => write!(
                f,
                "{s} runs out before the timing reagent does, so the colour never appears"
            ),
        }
    }
}

impl RunKinetics {
    /// Compile `reaction` for a run with initial concentrations `c0` (species → mol/L) and
    /// `timing` mol/L of timing reagent.
    pub fn new(
        reaction: &Reaction,
        c0: &[(String, f64)],
        timing: f64,
    ) -> Result<RunKinetics, NoClock> {
        let conc = |s: &str| c0.iter().find(|(n, _)| n == s).map_or(0.0, |(_, c)| *c);
        let species = reaction.rate_law_species();
        let xi_clock = timing / reaction.nu;
        for s in &species {
            if conc(s) <= 0.0 {
                return Err(NoClock::Missing(s.to_string()));
            }
        }
        let mut consumed = Vec::new();
        for (s, d) in &reaction.during {
            if *d < 0.0 && *s != reaction.timing_species {
                let c = conc(s);
                if c + d * xi_clock <= 0.0 {
                    return Err(NoClock::Exhausted(s.clone()));
                }
                consumed.push((s.clone(), c, *d));
            }
        }
        let visible = match &reaction.visible {
            Some(v) => {
                let p = reaction.after(&reaction.intermediate);
                (p > 0.0).then(|| VisibleModel {
                    threshold: v.threshold,
                    criterion: v.criterion,
                    per_xi: p,
                    iodide_at_clock: conc("I-") + reaction.during("I-") * xi_clock,
                    iodide_per_xi: reaction.after("I-"),
                })
            }
            None => None,
        };
        // After the clock, a reactant may not run out before the colour shows either (judged
        // at 25 °C and the stated threshold; a hotter or colder run moves it little).
        // Triiodide needs iodide: a run that lists none cannot show it.
        if visible
            .as_ref()
            .is_some_and(|v| v.criterion == VisibleAs::Triiodide)
            && conc("I-") <= 0.0
        {
            return Err(NoClock::Missing("I-".into()));
        }
        let xi_visible = visible.as_ref().map_or(0.0, |v| v.extent(298.15, 1.0));
        if !xi_visible.is_finite() {
            return Err(NoClock::Exhausted("I-".into()));
        }
        for s in &species {
            let at_clock = conc(s) + reaction.during(s) * xi_clock;
            if at_clock + reaction.after(s) * xi_visible <= 0.0 {
                return Err(NoClock::Exhausted(s.to_string()));
            }
        }
        let charge = |s: &str| crate::reference::species::charge(s).unwrap_or(0);
        let salt = reaction.salt_reference.map(|i_ref| {
            // The run's ionic strength from every species it holds, ½ Σ c z².
            let ionic = 0.5
                * c0.iter()
                    .map(|(s, c)| c * (charge(s) as f64).powi(2))
                    .sum::<f64>();
            let deltas = reaction
                .terms
                .iter()
                .map(|t| {
                    let orders: Vec<(i32, f64)> =
                        t.orders.iter().map(|(s, n)| (charge(s), *n)).collect();
                    salt::charge_product(&orders)
                })
                .collect();
            (ionic, i_ref, deltas)
        });
        Ok(RunKinetics {
            salt,
            c0: species.iter().map(|s| conc(s)).collect(),
            during: species.iter().map(|s| reaction.during(s)).collect(),
            after: species.iter().map(|s| reaction.after(s)).collect(),
            terms: reaction
                .terms
                .iter()
                .map(|t| {
                    t.orders
                        .iter()
                        .map(|(s, n)| (species.iter().position(|x| x == s).unwrap_or(0), *n))
                        .collect()
                })
                .collect(),
            k: reaction
                .terms
                .iter()
                .map(|t| (t.k_ref, t.t_ref, t.activation_energy))
                .collect(),
            xi_clock,
            visible,
            consumed,
            nu: reaction.nu,
            timing,
        })
    }

    /// Rate (M/s) at extent `xi`: before the clock when `xi ≤ ξc`, after it beyond.
    fn rate(&self, ks: &[f64; MAX_TERMS], xi: f64) -> f64 {
        let before = xi.min(self.xi_clock);
        let beyond = (xi - self.xi_clock).max(0.0);
        let mut r = 0.0;
        for (term, k) in self.terms.iter().zip(ks) {
            let mut p = *k;
            for &(i, n) in term {
                let c = self.c0[i] + self.during[i] * before + self.after[i] * beyond;
                p *= if n == 1.0 {
                    c
                } else if n == 2.0 {
                    c * c
                } else {
                    c.max(0.0).powf(n)
                };
            }
            r += p;
        }
        r
    }

    /// Forecast at temperature `t` (K).
    pub fn at(&self, t: f64) -> Timing {
        self.at_scaled(t, 1.0)
    }

    /// The band's fast and slow ends around `t` (K): `half` K warmer with the visible
    /// threshold `factor` times lower, and `half` K cooler with it `factor` times higher.
    pub fn band_ends(&self, t: f64, half: f64, factor: f64) -> (Timing, Timing) {
        (
            self.at_scaled(t + half, 1.0 / factor),
            self.at_scaled(t - half, factor),
        )
    }

    /// Forecast at `t` (K) with the visible threshold scaled by `scale` (for its uncertainty).
    pub fn at_scaled(&self, t: f64, scale: f64) -> Timing {
        let ks = self.ks(t);
        let f = |xi: f64| 1.0 / self.rate(&ks, xi);
        let clock = integrate_with_error(&f, 0.0, self.xi_clock, QUADRATURE_TOLERANCE);
        let visible = self.visible_quadrature(&ks, t, scale);
        let rate0 = self.rate(&ks, 0.0);
        let total = Quadrature {
            value: clock.value + visible.value,
            error: clock.error + visible.error,
        };
        Timing {
            clock: clock.value,
            visible_extra: visible.value,
            initial_rate: self.xi_clock / rate0,
            rate0,
            relative_error: total.relative_error(),
        }
    }

    /// The wait from the clock to visible colour at `t` (K) with the threshold scaled by
    /// `scale`, s, without the clock's own integral.
    pub fn visible_wait(&self, t: f64, scale: f64) -> f64 {
        self.visible_quadrature(&self.ks(t), t, scale).value
    }

    /// Each term's k at `t` (K): Arrhenius, then the salt effect when it is on.
    fn ks(&self, t: f64) -> [f64; MAX_TERMS] {
        let mut ks = [0.0; MAX_TERMS];
        for (j, (slot, &(k_ref, t_ref, ea))) in ks.iter_mut().zip(&self.k).enumerate() {
            *slot = match ea {
                Some(ea) => k_ref * (-ea / R * (1.0 / t - 1.0 / t_ref)).exp(),
                None => k_ref,
            };
            if let Some((ionic, i_ref, deltas)) = &self.salt {
                *slot *= salt::factor(deltas[j], *ionic, *i_ref, t);
            }
        }
        ks
    }

    /// The integral from the clock to visible colour.
    fn visible_quadrature(&self, ks: &[f64; MAX_TERMS], t: f64, scale: f64) -> Quadrature {
        let xi_visible = self.visible.as_ref().map_or(0.0, |v| v.extent(t, scale));
        if !xi_visible.is_finite() {
            // The iodide is gone before the triiodide shows.
            return Quadrature {
                value: f64::INFINITY,
                error: f64::INFINITY,
            };
        }
        if xi_visible <= 0.0 {
            return Quadrature {
                value: 0.0,
                error: 0.0,
            };
        }
        let f = |xi: f64| 1.0 / self.rate(ks, xi);
        integrate_with_error(
            &f,
            self.xi_clock,
            self.xi_clock + xi_visible,
            QUADRATURE_TOLERANCE,
        )
    }

    /// Fraction of each reactant used up when the timing reagent runs out.
    pub fn conversions(&self) -> impl Iterator<Item = (&str, f64)> {
        self.consumed
            .iter()
            .map(move |(s, c, d)| (s.as_str(), -d * self.xi_clock / c))
    }

    /// The rate (M/s) implied by a measured time: `[timing]`₀ / (ν t).
    pub fn rate_from_time(&self, seconds: f64) -> f64 {
        self.timing / (self.nu * seconds)
    }
}

// ---------------------------------------------------------------------------------------------
// Adaptive Gauss–Kronrod quadrature
// ---------------------------------------------------------------------------------------------

/// Kronrod 15-point nodes (positive half, descending) and weights, with the embedded Gauss
/// 7-point weights; the standard G7/K15 pair (Piessens et al., QUADPACK, 1983, routine QK15).
const XGK: [f64; 8] = [
    0.991_455_371_120_812_6,
    0.949_107_912_342_758_5,
    0.864_864_423_359_769_1,
    0.741_531_185_599_394_4,
    0.586_087_235_467_691_1,
    0.405_845_151_377_397_2,
    0.207_784_955_007_898_5,
    0.0,
];
const WGK: [f64; 8] = [
    0.022_935_322_010_529_22,
    0.063_092_092_629_978_55,
    0.104_790_010_322_250_2,
    0.140_653_259_715_525_9,
    0.169_004_726_639_267_9,
    0.190_350_578_064_785_4,
    0.204_432_940_075_298_9,
    0.209_482_141_084_728,
];
const WG: [f64; 4] = [
    0.129_484_966_168_869_7,
    0.279_705_391_489_276_7,
    0.381_830_050_505_118_9,
    0.417_959_183_673_469_4,
];

/// One G7/K15 panel: (Kronrod estimate, |Kronrod − Gauss|).
fn gk15(f: &impl Fn(f64) -> f64, a: f64, b: f64) -> (f64, f64) {
    let c = 0.5 * (a + b);
    let h = 0.5 * (b - a);
    let fc = f(c);
    let mut k = fc * WGK[7];
    let mut g = fc * WG[3];
    for j in 0..7 {
        let x = h * XGK[j];
        let s = f(c - x) + f(c + x);
        k += WGK[j] * s;
        if j % 2 == 1 {
            g += WG[j / 2] * s;
        }
    }
    (k * h, ((k - g) * h).abs())
}

/// An integral with its estimated absolute error.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Quadrature {
    pub value: f64,
    /// Sum of the accepted panels' |Kronrod − Gauss| estimates.
    pub error: f64,
}

impl Quadrature {
    /// The error estimate relative to the value (∞ for a non-finite or zero value with error).
    pub fn relative_error(&self) -> f64 {
        if self.error == 0.0 {
            0.0
        } else if self.value.is_finite() && self.value != 0.0 {
            self.error / self.value.abs()
        } else {
            f64::INFINITY
        }
    }
}

/// Most G7/K15 panels one integral may use (15 evaluations each). A smooth clock integrand
/// needs a few dozen; past this budget the remaining panels are accepted as they stand and
/// their error estimates count in [`Quadrature::error`].
pub const MAX_PANELS: usize = 20_000;

/// ∫ₐᵇ f by adaptive bisection of G7/K15 panels until the summed error estimate is below
/// `rel_tol` of the integral, within [`MAX_PANELS`] panels and a bisection depth of 46.
pub fn integrate(f: &impl Fn(f64) -> f64, a: f64, b: f64, rel_tol: f64) -> f64 {
    integrate_with_error(f, a, b, rel_tol).value
}

/// As [`integrate`], with the error estimate, so that a caller can check it.
pub fn integrate_with_error(f: &impl Fn(f64) -> f64, a: f64, b: f64, rel_tol: f64) -> Quadrature {
    const DEPTH: usize = 48;
    if a == b {
        return Quadrature {
            value: 0.0,
            error: 0.0,
        };
    }
    let (whole, err) = gk15(f, a, b);
    if err <= rel_tol * whole.abs() || !whole.is_finite() {
        return Quadrature {
            value: whole,
            error: err,
        };
    }
    // Depth-first refinement; each panel is accepted when its error is within its share, at
    // the depth limit, or once the panel budget is spent.
    let mut stack = [(0.0f64, 0.0f64, 0u32); DEPTH];
    let mut top = 1;
    stack[0] = (a, b, 0);
    let mut total = 0.0;
    let mut error = 0.0;
    let mut panels = 1;
    let budget = rel_tol * whole.abs();
    let width = b - a;
    while top > 0 {
        top -= 1;
        let (lo, hi, level) = stack[top];
        let (v, e) = gk15(f, lo, hi);
        panels += 1;
        let accept = e <= budget * (hi - lo) / width
            || level as usize >= DEPTH - 2
            || top + 2 > DEPTH
            || panels >= MAX_PANELS;
        if accept {
            total += v;
            error += e;
        } else {
            let mid = 0.5 * (lo + hi);
            stack[top] = (mid, hi, level + 1);
            stack[top + 1] = (lo, mid, level + 1);
            top += 2;
        }
    }
    Quadrature {
        value: total,
        error,
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::reference::equation::parse_equation;
    use approx::assert_relative_eq;

    #[test]
    fn triiodide_constant_follows_van_t_hoff_from_the_published_value() {
        // Palmer, Ramette and Mesmer 1984: K = 698 at 25 °C, ΔH° = −17.0 kJ/mol. By hand at
        // 20 °C: 698 · exp(17000/8.314462618 · (1/293.15 − 1/298.15)) = 698 · exp(0.116965)
        // = 784.6.
        assert_relative_eq!(triiodide_k(298.15), 698.0, max_relative = 1e-12);
        assert_relative_eq!(triiodide_k(293.15), 784.6, max_relative = 2e-4);
    }

    #[test]
    fn iodine_needed_for_a_triiodide_threshold_by_hand() {
        // 10 µM I3- with 2.00 mM iodide in all, K = 698: free iodide 1.99 mM, free I2 =
        // 1e-5/(698 · 1.99e-3) = 1e-5/1.38902 = 7.19932e-6 M, total 1.719932e-5 M. Check:
        // K [I2][I-] = [I3-].
        let total = iodine_for_triiodide(1e-5, 2e-3, 698.0);
        assert_relative_eq!(total, 1.719932e-5, max_relative = 1e-6);
        let free_i2 = total - 1e-5;
        assert_relative_eq!(698.0 * free_i2 * (2e-3 - 1e-5), 1e-5, max_relative = 1e-12);
        // No iodide left to hold the threshold: never visible.
        assert!(iodine_for_triiodide(1e-5, 1e-5, 698.0).is_infinite());
    }

    #[test]
    fn quadrature_is_bounded_and_reports_its_error() {
        // sin(1/x) oscillates without end near 0: the panel budget stops the bisection and the
        // error estimate says the integral is not to the tolerance asked.
        let q = integrate_with_error(&|x: f64| (1.0 / x).sin(), 1e-12, 1.0, 1e-14);
        assert!(q.value.is_finite());
        assert!(q.relative_error() > 1e-14, "{q:?}");
        // A smooth integrand meets its tolerance: ∫₀¹ eˣ dx = e − 1 (analytic).
        let q = integrate_with_error(&|x: f64| x.exp(), 0.0, 1.0, 1e-12);
        assert!(q.relative_error() <= 1e-12);
        assert_relative_eq!(q.value, std::f64::consts::E - 1.0, max_relative = 1e-13);
    }

    #[test]
    fn gauss_kronrod_integrates_known_functions() {
        // ∫₀¹ eˣ dx = e − 1; ∫₀^π sin x dx = 2; ∫₀¹ 1/(1+x²) dx = π/4 (analytic).
        assert_relative_eq!(
            integrate(&|x: f64| x.exp(), 0.0, 1.0, 1e-12),
            std::f64::consts::E - 1.0,
            max_relative = 1e-13
        );
        assert_relative_eq!(
            integrate(&|x: f64| x.sin(), 0.0, std::f64::consts::PI, 1e-12),
            2.0,
            max_relative = 1e-13
        );
        assert_relative_eq!(
            integrate(&|x: f64| 1.0 / (1.0 + x * x), 0.0, 1.0, 1e-12),
            std::f64::consts::FRAC_PI_4,
            max_relative = 1e-13
        );
        // A near-singular integrand needs bisection: ∫₀^0.999 dx/(1−x) = ln 1000.
        assert_relative_eq!(
            integrate(&|x: f64| 1.0 / (1.0 - x), 0.0, 0.999, 1e-10),
            1000f64.ln(),
            max_relative = 1e-9
        );
    }

    #[test]
    fn equations_parse_with_charges_and_coefficients() {
        let e = parse_equation("BrO3- + 6 I- + 6 H+ -> Br- + 3 I2 + 3 H2O").unwrap();
        assert_eq!(
            e.reactants,
            vec![
                ("BrO3-".into(), 1.0),
                ("I-".into(), 6.0),
                ("H+".into(), 6.0)
            ]
        );
        assert_eq!(e.net("I2"), 3.0);
        let e = parse_equation("I2 + 2 S2O3^2- → 2 I- + S4O6^2-").unwrap();
        assert_eq!(e.net("S2O3^2-"), -2.0);
        assert!(parse_equation("A + B").is_err());
        assert!(parse_equation("A + -> B").is_err());
        assert!(parse_equation("A B -> C").is_err());
    }

    fn bromate(terms: Vec<Term>) -> Reaction {
        Reaction::new(
            "bromate".into(),
            "BrO3-".into(),
            "S2O3^2-".into(),
            parse_equation("BrO3- + 6 I- + 6 H+ -> Br- + 3 I2 + 3 H2O").unwrap(),
            parse_equation("I2 + 2 S2O3^2- -> 2 I- + S4O6^2-").unwrap(),
            terms,
            None,
        )
        .unwrap()
    }

    fn term(k: f64, orders: &[(&str, f64)]) -> Term {
        Term {
            k_ref: k,
            t_ref: 298.15,
            activation_energy: None,
            orders: orders.iter().map(|(s, n)| (s.to_string(), *n)).collect(),
            source: None,
        }
    }

    #[test]
    fn a_triiodide_end_point_without_iodide_in_the_run_says_iodide_is_absent() {
        // A rate law without iodide (first order in bromate alone) and a run that lists none:
        // the colour cannot show as triiodide, and the reason names the missing iodide.
        let mut r = bromate(vec![term(1.0, &[("BrO3-", 1.0)])]);
        r.visible = Some(crate::spec::Visible {
            threshold: 1e-5,
            criterion: VisibleAs::Triiodide,
            factor: 1.5,
            source: None,
        });
        let c0 = [("BrO3-".to_string(), 0.008), ("H+".to_string(), 0.02)];
        assert_eq!(
            RunKinetics::new(&r, &c0, 1e-4).unwrap_err(),
            NoClock::Missing("I-".into())
        );
    }

    #[test]
    fn bromate_with_thiosulfate_has_nu_six() {
        // 1 BrO3- gives 3 I2, each I2 takes 2 S2O3^2-: ν = 6 (common practice).
        let r = bromate(vec![term(
            40.0,
            &[("BrO3-", 1.0), ("I-", 1.0), ("H+", 2.0)],
        )]);
        assert_eq!(r.intermediate, "I2");
        assert_relative_eq!(r.nu, 6.0);
        // Iodide is regenerated by thiosulfate while it lasts; acid is consumed.
        assert_relative_eq!(r.during("I-"), 0.0);
        assert_relative_eq!(r.during("H+"), -6.0);
        assert_relative_eq!(r.during("I2"), 0.0);
        assert_relative_eq!(r.after("I2"), 3.0);
        assert_relative_eq!(r.after("I-"), -6.0);
    }

    #[test]
    fn first_order_in_oxidant_matches_the_logarithm() {
        // rate = k[BrO3-][I-] with [I-] constant (regenerated): analytic
        // t = ln(c0/(c0 − ξc)) / (k [I-]).
        let k = 0.5;
        let r = bromate(vec![term(k, &[("BrO3-", 1.0), ("I-", 1.0)])]);
        let (b0, i0, thio) = (0.004, 0.01, 0.0012);
        let run = RunKinetics::new(
            &r,
            &[("BrO3-".into(), b0), ("I-".into(), i0), ("H+".into(), 0.1)],
            thio,
        )
        .unwrap();
        let xc = thio / 6.0;
        let exact = (b0 / (b0 - xc)).ln() / (k * i0);
        assert_relative_eq!(run.at(298.15).clock, exact, max_relative = 1e-9);
    }

    #[test]
    fn acid_consumed_matches_partial_fractions() {
        // rate = k[BrO3-][H+], B = B0 − ξ, H = H0 − 6ξ. Partial fractions give
        // t = ln( B0 (H0 − 6x) / (H0 (B0 − x)) ) / (k (H0 − 6 B0)).
        let k = 2.0;
        let r = bromate(vec![term(k, &[("BrO3-", 1.0), ("H+", 1.0)])]);
        let (b0, h0, thio) = (0.01, 0.02, 0.006);
        let run = RunKinetics::new(
            &r,
            &[("BrO3-".into(), b0), ("I-".into(), 0.01), ("H+".into(), h0)],
            thio,
        )
        .unwrap();
        let x = thio / 6.0;
        let exact = (b0 * (h0 - 6.0 * x) / (h0 * (b0 - x))).ln() / (k * (h0 - 6.0 * b0));
        assert_relative_eq!(run.at(298.15).clock, exact, max_relative = 1e-9);
        let (name, conv) = run.conversions().find(|(s, _)| *s == "H+").unwrap();
        assert_eq!(name, "H+");
        assert_relative_eq!(conv, 6.0 * x / h0, max_relative = 1e-12);
    }

    #[test]
    fn arrhenius_by_hand() {
        // k(T2)/k(T1) = exp(−Ea/R (1/T2 − 1/T1)), R from CODATA 2018; Ea = 50 kJ/mol,
        // 25 °C → 35 °C: 1/308.15 − 1/298.15 = −1.08842e-4 K⁻¹; × 50000/8.314462618 = −0.654536;
        // exp(0.654536) = 1.92426.
        let t = Term {
            activation_energy: Some(50_000.0),
            ..term(1.0, &[])
        };
        let ratio = t.k_at(308.15) / t.k_at(298.15);
        let by_hand = (-50_000.0 / 8.314_462_618 * (1.0 / 308.15 - 1.0 / 298.15f64)).exp();
        assert_relative_eq!(ratio, by_hand, max_relative = 1e-14);
        assert_relative_eq!(ratio, 1.92426, max_relative = 1e-5);
    }

    #[test]
    fn exhausted_reactant_means_no_clock() {
        let r = bromate(vec![term(
            40.0,
            &[("BrO3-", 1.0), ("I-", 1.0), ("H+", 2.0)],
        )]);
        // 0.7 mM thiosulfate needs 0.7/6 mM bromate: 0.1 mM is not enough.
        let e = RunKinetics::new(
            &r,
            &[
                ("BrO3-".into(), 1e-4),
                ("I-".into(), 0.01),
                ("H+".into(), 0.1),
            ],
            7e-4,
        )
        .unwrap_err();
        assert_eq!(e, NoClock::Exhausted("BrO3-".into()));
        let e =
            RunKinetics::new(&r, &[("BrO3-".into(), 1e-2), ("H+".into(), 0.1)], 1e-4).unwrap_err();
        assert_eq!(e, NoClock::Missing("I-".into()));
    }
}
