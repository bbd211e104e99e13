//! Property tests of the solve on random feasible plans: the volumes add up to the total, each
//! is deliverable by the device named for it, the timing stock is identical in every run, the
//! reported deviations are those of the delivered volumes, and the recipe is as good as
//! rounding each single-species stock to its device's graduation (the analytic optimum when
//! water shares that graduation).

use clockprep::error::SpecSource;
use proptest::prelude::*;

#[derive(Debug, Clone)]
struct Case {
    total_ml: f64,
    grad_ml: f64,
    /// stock concentrations (M) of A and B
    c_stock: [f64; 2],
    timing_steps: u32,
    /// ideal volumes (mL) of A and B per run, off the grid
    runs: Vec<[f64; 2]>,
}

fn case() -> impl Strategy<Value = Case> {
    (
        prop_oneof![Just(20.0), Just(25.0), Just(50.0)],
        prop_oneof![Just(0.01), Just(0.05), Just(0.1)],
        [0.01f64..0.2, 0.01f64..0.2],
        5u32..40,
        prop::collection::vec([0.2f64..1.0, 0.2f64..1.0], 1..5),
    )
        .prop_map(|(total_ml, grad_ml, c_stock, timing_steps, fr)| {
            // Keep the stocks within 70 % of the volume left after the timing stock.
            let free = total_ml - timing_steps as f64 * grad_ml;
            let runs = fr
                .into_iter()
                .map(|[a, b]| [a * 0.35 * free, b * 0.35 * free])
                .collect();
            Case {
                total_ml,
                grad_ml,
                c_stock,
                timing_steps,
                runs,
            }
        })
}

fn spec_text(c: &Case) -> String {
    let timing_ml = c.timing_steps as f64 * c.grad_ml;
    let c_thio = 0.005;
    let timing_c = c_thio * timing_ml / c.total_ml;
    let mut s = format!(
        r#"[plan]
title = "property case"
total_volume = "{} mL"
tolerance = "50 %"

[timing]
species = "S2O3^2-"
concentration = "{timing_c:e} M"

[mixing]
keep_apart = [["I-", "Cs+"]]

[[stock]]
name = "A"
contains = {{ "I-" = "{:e} M", "Na+" = "{:e} M" }}

[[stock]]
name = "B"
contains = {{ "Cs+" = "{:e} M", "Cl-" = "{:e} M" }}

[[stock]]
name = "thio"
contains = {{ "S2O3^2-" = "{c_thio} M", "Na+" = "{} M" }}

[[device]]
name = "buret"
kind = "buret"
capacity = "50 mL"
graduation = "{} mL"
"#,
        c.total_ml,
        c.c_stock[0],
        c.c_stock[0],
        c.c_stock[1],
        c.c_stock[1],
        2.0 * c_thio,
        c.grad_ml
    );
    for (i, [va, vb]) in c.runs.iter().enumerate() {
        let ta = c.c_stock[0] * va / c.total_ml;
        let tb = c.c_stock[1] * vb / c.total_ml;
        s.push_str(&format!(
            "\n[[run]]\nname = \"r{i}\"\ntargets = {{ \"I-\" = \"{ta:e} M\", \"Cs+\" = \"{tb:e} M\" }}\n"
        ));
    }
    s
}

proptest! {
    #![proptest_config(ProptestConfig { cases: 256, ..ProptestConfig::default() })]

    #[test]
    fn recipes_are_deliverable_exact_and_optimal(c in case()) {
        let text = spec_text(&c);
        let spec = clockprep::spec::load(SpecSource::new("prop.toml", text)).unwrap();
        let lab = spec.lab.as_ref().unwrap();
        let sol = clockprep::solve::solve(&spec, lab).unwrap();
        let timing = lab.timing_stock;
        let first_timing = sol.runs[0].volume_of(timing);
        for (r, run) in sol.runs.iter().zip(&c.runs) {
            // Sum to the total within 1e-9 mL.
            let sum: f64 = r.additions.iter().map(|a| a.volume).sum();
            prop_assert!((sum - lab.total_volume).abs() * 1e3 < 1e-9, "sum {sum}");
            // Each volume is what its devices deliver, each part inside the device's range.
            for a in &r.additions {
                prop_assert!((a.delivery.volume(&lab.devices) - a.volume).abs() < 1e-15);
                for &(d, n) in &a.delivery.parts {
                    let dev = &lab.devices[d];
                    let (lo, hi) = dev.count_range();
                    prop_assert!(lo <= n && n <= hi, "{n} steps outside {lo}..={hi}");
                }
            }
            // Timing stock identical in every run.
            prop_assert_eq!(r.volume_of(timing), first_timing);
            // Reported deviations are those of the delivered volumes.
            for g in &r.goals {
                let (stock, conc) = if g.label == "I-" { (0, c.c_stock[0]) } else { (1, c.c_stock[1]) };
                let achieved = conc * r.volume_of(stock) / lab.total_volume;
                approx::assert_relative_eq!(g.achieved, achieved, max_relative = 1e-12);
                approx::assert_relative_eq!(g.deviation, (achieved - g.target) / g.target, epsilon = 1e-12);
            }
            // Optimal: no worse than rounding each stock to the nearest graduation.
            let bound = run
                .iter()
                .map(|v| (c.grad_ml / 2.0) / v)
                .fold(0.0, f64::max);
            let worst = r.goals.iter().map(|g| g.deviation.abs()).fold(0.0, f64::max);
            prop_assert!(worst <= bound + 1e-9, "worst {worst} > bound {bound}");
        }
    }
}

/// A plan whose runs the rounding shortcut solves: two single-species stocks, each on its own
/// device, and (sometimes) an ionic strength held with a salt.
#[derive(Debug, Clone)]
struct ShortcutCase {
    /// Graduation (mL) of the device of A, of B, and of the salt's.
    grads: [f64; 3],
    c_stock: [f64; 2],
    hold: Option<f64>,
    /// Targets (M) of A and B per run.
    runs: Vec<[f64; 2]>,
}

fn shortcut_case() -> impl Strategy<Value = ShortcutCase> {
    (
        [
            prop_oneof![Just(0.01), Just(0.05), Just(0.1)],
            prop_oneof![Just(0.02), Just(0.05), Just(0.1)],
            prop_oneof![Just(0.01), Just(0.05), Just(0.1)],
        ],
        [0.05f64..0.2, 0.05f64..0.2],
        prop::option::of(0.12f64..0.2),
        prop::collection::vec([0.004f64..0.02, 0.004f64..0.02], 1..6),
    )
        .prop_map(|(grads, c_stock, hold, runs)| ShortcutCase {
            grads,
            c_stock,
            hold,
            runs,
        })
}

fn shortcut_text(c: &ShortcutCase) -> String {
    let mut s = format!(
        r#"[plan]
title = "shortcut case"
total_volume = "50 mL"
tolerance = "50 %"

[timing]
species = "S2O3^2-"
concentration = "0.100 mM"

[mixing]
keep_apart = [["I-", "Cs+"]]

[[stock]]
name = "A"
contains = {{ "I-" = "{a:e} M", "Na+" = "{a:e} M" }}
devices = ["dev A"]

[[stock]]
name = "B"
contains = {{ "Cs+" = "{b:e} M", "Cl-" = "{b:e} M" }}
devices = ["dev B"]

[[stock]]
name = "thio"
contains = {{ "S2O3^2-" = "0.005 M", "Na+" = "0.01 M" }}
devices = ["water buret"]

[[stock]]
name = "salt"
contains = {{ "K+" = "1.00 M", "NO3-" = "1.00 M" }}
devices = ["dev salt"]

[[device]]
name = "dev A"
kind = "buret"
capacity = "50 mL"
graduation = "{ga} mL"

[[device]]
name = "dev B"
kind = "graduated pipet"
capacity = "25 mL"
graduation = "{gb} mL"

[[device]]
name = "dev salt"
kind = "graduated pipet"
capacity = "10 mL"
graduation = "{gs} mL"

[[device]]
name = "water buret"
kind = "buret"
capacity = "50 mL"
graduation = "0.01 mL"

[water]
devices = ["water buret"]
"#,
        a = c.c_stock[0],
        b = c.c_stock[1],
        ga = c.grads[0],
        gb = c.grads[1],
        gs = c.grads[2],
    );
    if let Some(h) = c.hold {
        s.push_str(&format!(
            "\n[ionic_strength]\nhold = \"{h:e} M\"\nusing = \"salt\"\n"
        ));
    }
    for (i, [ta, tb]) in c.runs.iter().enumerate() {
        let ta = ta.min(0.35 * c.c_stock[0]);
        let tb = tb.min(0.35 * c.c_stock[1]);
        s.push_str(&format!(
            "\n[[run]]\nname = \"r{i}\"\ntargets = {{ \"I-\" = \"{ta:e} M\", \"Cs+\" = \"{tb:e} M\" }}\n"
        ));
    }
    s
}

/// The model's lexicographic objective of one solved run: the largest target deviation, the
/// held ionic strength's, and the sum of all.
fn objective(r: &clockprep::solve::RunSolution) -> (f64, f64, f64) {
    let species = r
        .goals
        .iter()
        .filter(|g| g.label != "ionic strength")
        .map(|g| g.deviation.abs())
        .fold(0.0, f64::max);
    let ionic = r
        .goals
        .iter()
        .filter(|g| g.label == "ionic strength")
        .map(|g| g.deviation.abs())
        .fold(0.0, f64::max);
    let sum = r.goals.iter().map(|g| g.deviation.abs()).sum();
    (species, ionic, sum)
}

proptest! {
    #![proptest_config(ProptestConfig { cases: 128, ..ProptestConfig::default() })]

    /// The rounding shortcut (and its exact search under a held ionic strength) reaches the
    /// integer model's optimum: the same objective, tier by tier, on every run.
    #[test]
    fn the_rounding_shortcut_matches_the_integer_model(c in shortcut_case()) {
        let text = shortcut_text(&c);
        let spec = clockprep::spec::load(SpecSource::new("prop.toml", text.clone())).unwrap();
        let lab = spec.lab.as_ref().unwrap();
        let fast = clockprep::solve::solve(&spec, lab);
        let model = clockprep::solve::solve_by_model(&spec, lab);
        match (fast, model) {
            (Ok(f), Ok(m)) => {
                for (a, b) in f.runs.iter().zip(&m.runs) {
                    let (fa, fb) = (objective(a), objective(b));
                    // The model's tiers are capped with a slack of 1e-9 (absolute and relative).
                    prop_assert!((fa.0 - fb.0).abs() <= 2e-9, "largest {fa:?} vs {fb:?}\n{text}");
                    prop_assert!((fa.1 - fb.1).abs() <= 2e-9, "ionic {fa:?} vs {fb:?}\n{text}");
                    prop_assert!((fa.2 - fb.2).abs() <= 1e-8, "sum {fa:?} vs {fb:?}\n{text}");
                }
            }
            (Err(_), Err(_)) => {}
            (f, m) => prop_assert!(false, "one solved, one refused: {:?} / {:?}\n{text}", f.map(|_| ()), m.map(|_| ())),
        }
    }
}
