//! Independent check of the clock-time forecast against a general-purpose ODE integrator
//! (ode_solvers' Dopri5, a dev-dependency) on the full mass-action system with an explicit fast
//! iodine–thiosulfate step (k = 1e7 M⁻¹ s⁻¹). The forecast's time to visible colour (clock plus
//! the wait for the intermediate to reach the threshold) must agree within 0.5 %. For the
//! triiodide criterion, the integrator's total iodine and iodide are split by the exact root of
//! the I2 + I- ⇌ I3- equilibrium at each output point.

use clockprep::kinetics::RunKinetics;
use clockprep::reference::equation::parse_equation;
use clockprep::spec::{Reaction, Term, Visible, VisibleAs};
use ode_solvers::{Dopri5, System, Vector5};

/// Fast clock step, M⁻¹ s⁻¹: I2 + 2 S2O3^2- → 2 I- + S4O6^2-.
const K_FAST: f64 = 1e7;
const THRESHOLD: f64 = 1e-5;

/// A rate law on the ODE state.
type RateLaw = Box<dyn Fn(&Vector5<f64>) -> f64>;

/// State: [oxidant, I-, H+, I2, S2O3^2-]. `main` gives the main reaction's stoichiometry per
/// mol of oxidant as (I-, H+, I2) changes; `rate` is the rate law.
struct Clock {
    main: (f64, f64, f64),
    rate: RateLaw,
    criterion: VisibleAs,
}

/// I2 + I- ⇌ I3- at 25 °C: K = 698 (Palmer, Ramette and Mesmer, J. Solution Chem. 13 (1984)
/// 673).
const K_TRIIODIDE: f64 = 698.0;

/// What the eye sees in state `y`: total I2, or I3- from total iodine T = y[3] and total iodide
/// L = y[1] by the root of K (T − x)(L − x) = x, i.e. K x² − (K (T + L) + 1) x + K T L = 0.
fn seen(criterion: VisibleAs, y: &Vector5<f64>) -> f64 {
    let (t, l) = (y[3].max(0.0), y[1].max(0.0));
    match criterion {
        VisibleAs::Total => t,
        VisibleAs::Triiodide => {
            let k = K_TRIIODIDE;
            let b = k * (t + l) + 1.0;
            let disc = b * b - 4.0 * k * k * t * l;
            // The smaller root, in the numerically stable form 2c / (b + √disc).
            2.0 * k * t * l / (b + disc.max(0.0).sqrt())
        }
    }
}

impl System<f64, Vector5<f64>> for Clock {
    fn system(&self, _t: f64, y: &Vector5<f64>, dy: &mut Vector5<f64>) {
        let r = (self.rate)(y);
        let rf = K_FAST * y[3].max(0.0) * y[4].max(0.0);
        dy[0] = -r;
        dy[1] = self.main.0 * r + 2.0 * rf;
        dy[2] = self.main.1 * r;
        dy[3] = self.main.2 * r - rf;
        dy[4] = -2.0 * rf;
    }

    fn solout(&mut self, _t: f64, y: &Vector5<f64>, _dy: &Vector5<f64>) -> bool {
        seen(self.criterion, y) >= THRESHOLD
    }
}

/// Time at which I2 first reaches the threshold, interpolated between dense output points.
fn ode_time(system: Clock, y0: Vector5<f64>, t_end: f64) -> f64 {
    let criterion = system.criterion;
    let dt = t_end * 1e-5;
    let mut stepper = Dopri5::from_param(
        system,
        0.0,
        t_end,
        dt,
        y0,
        1e-10,
        1e-14,
        0.9,
        0.04,
        0.2,
        10.0,
        t_end,
        0.0,
        10_000_000,
        u32::MAX,
        ode_solvers::dop_shared::OutputType::Dense,
    );
    stepper.integrate().expect("the integration runs");
    let (ts, ys) = (stepper.x_out(), stepper.y_out());
    let i = ys
        .iter()
        .position(|y| seen(criterion, y) >= THRESHOLD)
        .expect("the colour appears");
    let (t0, t1) = (ts[i - 1], ts[i]);
    let (a, b) = (seen(criterion, &ys[i - 1]), seen(criterion, &ys[i]));
    t0 + (THRESHOLD - a) / (b - a) * (t1 - t0)
}

fn clock_eq() -> clockprep::reference::equation::Equation {
    parse_equation("I2 + 2 S2O3^2- -> 2 I- + S4O6^2-").unwrap()
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

/// Forecast a run of `oxidant` (with I- and H+ at `c0`) and integrate the same run as mass
/// action; the times to visible colour must agree within 0.5 %. Returns the forecast.
fn agrees(
    oxidant: &str,
    main: &str,
    terms: Vec<Term>,
    c0: [f64; 3],
    thio: f64,
    system: Clock,
) -> clockprep::kinetics::Timing {
    let reaction = Reaction::new(
        oxidant.into(),
        oxidant.into(),
        "S2O3^2-".into(),
        parse_equation(main).unwrap(),
        clock_eq(),
        terms,
        Some(Visible {
            threshold: THRESHOLD,
            criterion: system.criterion,
            factor: 1.0,
            source: None,
        }),
    )
    .unwrap();
    let names = [oxidant, "I-", "H+"];
    let initial: Vec<(String, f64)> = names
        .iter()
        .zip(c0)
        .map(|(s, c)| (s.to_string(), c))
        .collect();
    let forecast = RunKinetics::new(&reaction, &initial, thio)
        .unwrap()
        .at(298.15);
    let ode = ode_time(
        system,
        Vector5::new(c0[0], c0[1], c0[2], 0.0, thio),
        10.0 * forecast.to_colour(),
    );
    let rel = (forecast.to_colour() - ode).abs() / ode;
    assert!(
        rel < 0.005,
        "forecast {} s, ODE {} s, {:.3} %",
        forecast.to_colour(),
        ode,
        rel * 100.0
    );
    forecast
}

/// The bromate–iodide–acid run at invented demo-scale concentrations (mol/L: bromate, iodide,
/// acid, thiosulfate), forecast and integrated with the colour read by `criterion`.
fn bromate_run(criterion: VisibleAs) -> clockprep::kinetics::Timing {
    let k = 40.0;
    agrees(
        "BrO3-",
        "BrO3- + 6 I- + 6 H+ -> Br- + 3 I2 + 3 H2O",
        vec![term(k, &[("BrO3-", 1.0), ("I-", 1.0), ("H+", 2.0)])],
        [0.008, 0.002, 0.02],
        1.0e-4,
        Clock {
            main: (-6.0, -6.0, 3.0),
            rate: Box::new(move |y| k * y[0] * y[1] * y[2] * y[2]),
            criterion,
        },
    )
}

#[test]
fn bromate_iodide_acid_agrees_with_mass_action() {
    bromate_run(VisibleAs::Total);
}

#[test]
fn the_triiodide_end_point_agrees_with_mass_action_and_the_exact_equilibrium() {
    // As above, with the colour seen when I3- reaches the threshold. At 2 mM iodide,
    // 1/(K [I-]) = 0.72: the wait after the clock is about 1.7 times the total-iodine one.
    let run = bromate_run;
    let total = run(VisibleAs::Total);
    let tri = run(VisibleAs::Triiodide);
    let ratio = tri.visible_extra / total.visible_extra;
    assert!((1.6..1.8).contains(&ratio), "{ratio}");
}

#[test]
fn peroxide_two_term_law_agrees_with_mass_action() {
    // rate = (ka + kb [H+]) [H2O2][I-], acid consumed by the main reaction.
    let (ka, kb) = (0.0115, 0.175);
    let forecast = agrees(
        "H2O2",
        "H2O2 + 2 I- + 2 H+ -> I2 + 2 H2O",
        vec![
            term(ka, &[("H2O2", 1.0), ("I-", 1.0)]),
            term(kb, &[("H2O2", 1.0), ("I-", 1.0), ("H+", 1.0)]),
        ],
        [0.01, 0.01, 0.005],
        1.0e-3,
        Clock {
            main: (-2.0, -2.0, 1.0),
            rate: Box::new(move |y| (ka + kb * y[2]) * y[0] * y[1]),
            criterion: VisibleAs::Triiodide,
        },
    );
    // Acid is 10 % used up here, so the exact integral and the initial-rate estimate differ.
    assert!((forecast.initial_rate - forecast.clock).abs() / forecast.clock > 0.01);
}
