//! The primary kinetic salt effect: a rate constant known at one ionic strength, scaled to a
//! run's by the Brønsted–Bjerrum relation with Davies activity coefficients.
//!
//! For a rate term k Π cᵢ^nᵢ the activated complex carries the charge Σ nᵢ zᵢ, so
//!
//!   log₁₀ k(I) = log₁₀ k⁰ + A · [(Σ nᵢ zᵢ)² − Σ nᵢ zᵢ²] · f(I),   f(I) = √I/(1 + √I) − 0.3 I,
//!
//! from log₁₀ γ = −A z² f(I) (the Davies equation) for each reactant and the complex. Between
//! the reference ionic strength I₀ and the run's I, k changes by 10^(A Δ f(I) − A Δ f(I₀)),
//! with Δ = (Σ nᵢ zᵢ)² − Σ nᵢ zᵢ² (−4 for k [BrO₃⁻][I⁻][H⁺]²: the rate falls as I rises).

pub use crate::spec::DAVIES_LIMIT;

/// f(I) = √I/(1 + √I) − 0.3 I of the Davies equation.
pub fn davies(i: f64) -> f64 {
    let s = i.max(0.0).sqrt();
    s / (1.0 + s) - 0.3 * i
}

/// Debye–Hückel A of water (L^½ mol^-½, for log₁₀) at `t` (K):
/// A = 1.8248e6 · √ρ / (ε T)^{3/2}, with the relative permittivity of water from Malmberg and
/// Maryott, J. Res. Natl. Bur. Stand. 56 (1956) 1: ε = 87.740 − 0.40008 t + 9.398e-4 t² −
/// 1.410e-6 t³ (t in °C), and ρ = 0.997 kg/L (from memory; its change over 15–35 °C moves A by
/// under 0.2 %). Gives 0.5108 at 25 °C (tables give 0.509–0.511).
pub fn debye_huckel_a(t: f64) -> f64 {
    let c = t - 273.15;
    let eps = 87.740 - 0.40008 * c + 9.398e-4 * c * c - 1.410e-6 * c * c * c;
    1.8248e6 * 0.997f64.sqrt() / (eps * t).powf(1.5)
}

/// Δ = (Σ nᵢ zᵢ)² − Σ nᵢ zᵢ² of one rate term, from its orders and the species' charges.
pub fn charge_product(orders: &[(i32, f64)]) -> f64 {
    let sum: f64 = orders.iter().map(|(z, n)| *z as f64 * n).sum();
    let squares: f64 = orders.iter().map(|(z, n)| (*z as f64).powi(2) * n).sum();
    sum * sum - squares
}

/// The factor k(I)/k(I₀) at `t` (K) for a term with charge product `delta`.
pub fn factor(delta: f64, i: f64, i_ref: f64, t: f64) -> f64 {
    10f64.powf(debye_huckel_a(t) * delta * (davies(i) - davies(i_ref)))
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;

    #[test]
    fn the_bromate_rate_constant_halves_between_zero_and_fifty_millimolar() {
        // By hand (the Davies equation and the Brønsted–Bjerrum relation as in Atkins and
        // de Paula, Physical Chemistry, the chapters on activities and on reactions in
        // solution): f(0.05) = 0.223607/1.223607 − 0.015 = 0.167743; Δ = (−1 −1 +1 +1)² −
        // (1 + 1 + 1 + 1) = −4; with A = 0.5108 at 25 °C, log₁₀ ratio = −4 · 0.5108 · 0.167743
        // = −0.34273, ratio 0.4544.
        assert_relative_eq!(davies(0.05), 0.167743, max_relative = 1e-5);
        let delta = charge_product(&[(-1, 1.0), (-1, 1.0), (1, 2.0)]);
        assert_eq!(delta, -4.0);
        assert_relative_eq!(debye_huckel_a(298.15), 0.5108, max_relative = 2e-3);
        assert_relative_eq!(
            factor(delta, 0.05, 0.0, 298.15),
            0.4544,
            max_relative = 3e-3
        );
        // Like charges speed up (persulfate and iodide: Δ = (−2 −1)² − (4 + 1) = +4).
        assert!(factor(charge_product(&[(-2, 1.0), (-1, 1.0)]), 0.05, 0.0, 298.15) > 2.0);
        // A neutral reactant: no effect (peroxide with iodide, Δ = 1 − 1 = 0).
        assert_eq!(charge_product(&[(0, 1.0), (-1, 1.0)]), 0.0);
    }
}
