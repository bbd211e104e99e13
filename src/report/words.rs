//! Number formats and the sentences every format shares. A sentence that appears on more than
//! one sheet or in more than one format is written here once.

use crate::report::{ForecastReport, PlanReport};

/// A number with `n` significant figures, without exponent for lab-sized values.
pub fn sig(v: f64, n: i32) -> String {
    if v == 0.0 {
        return format!("{:.*}", (n - 1).max(0) as usize, 0.0);
    }
    crate::units::sig(v, n)
}

/// A concentration in mM, 4 significant figures (the runs' tables).
pub fn mm(molar: f64) -> String {
    sig(molar * 1e3, 4)
}

/// A time in seconds, or minutes past ten minutes.
pub fn secs(t: f64) -> String {
    if t >= 600.0 {
        format!("{:.1} min", t / 60.0)
    } else {
        format!("{t:.1} s")
    }
}

/// Decimal places that show every volume of the plan exactly (at least 2, at most 3).
pub fn ml_decimals(report: &PlanReport) -> usize {
    let all = report
        .runs
        .iter()
        .flat_map(|r| r.volumes.iter().map(|v| v.ml));
    let mut d = 2;
    for v in all {
        while d < 3 && ((v * 10f64.powi(d as i32)).round() - v * 10f64.powi(d as i32)).abs() > 1e-6
        {
            d += 1;
        }
    }
    d
}

/// The instruction at t = 0, from the report's "B into A" order.
pub fn pour(order: &str) -> String {
    let (first, second) = order.split_once(" into ").unwrap_or(("B", "A"));
    format!("At t = 0 pour vessel {first} into vessel {second}, swirl, and start the timer at the moment of mixing.")
}

/// The standing reminder that times come from a prior.
pub const PRIOR_NOTE: &str =
    "This is a prior: calibrate it with a pilot run before relying on the times.";

/// What every forecast is: an estimate.
pub const NOT_A_GUARANTEE: &str = "Times are estimates from a prior rate law, not guarantees.";

/// The forecast of one run in sentences: the predicted time with its band, the clock and the
/// visible wait, the initial-rate estimate, the rate, the conversion and the glassware share.
pub fn forecast_lines(f: &ForecastReport) -> Vec<String> {
    let (Some(t), Some([fast, slow]), Some(clock), Some(approx)) =
        (f.time_s, f.band_s, f.clock_s, f.initial_rate_s)
    else {
        return vec!["No predicted time: see the flag below.".into()];
    };
    let threshold = if f.visible_extra_range_s.is_some() {
        " and the threshold's uncertainty"
    } else {
        ""
    };
    let mut out = vec![format!(
        "Predicted time to {}: {} at {:.1} °C ({} to {} over {:.1} to {:.1} °C{threshold}); an estimate, not a guarantee.",
        f.uses,
        secs(t),
        f.temperature_c,
        secs(slow),
        secs(fast),
        f.band_c[0],
        f.band_c[1]
    )];
    let visible = f
        .visible_extra_s
        .map(|v| match f.visible_extra_range_s {
            Some([lo, hi]) => format!(
                " + {} to visible colour ({} to {} over the threshold's uncertainty)",
                secs(v),
                secs(lo),
                secs(hi)
            ),
            None => format!(" + {} to visible colour", secs(v)),
        })
        .unwrap_or_default();
    out.push(format!(
        "Clock {}{visible}; initial-rate estimate {} ({:+.1} %).",
        secs(clock),
        secs(approx),
        f.initial_rate_difference_pct.unwrap_or(0.0)
    ));
    if let (Some(rate), Some(r0)) = (f.rate, f.initial_rate) {
        out.push(format!(
            "Expected rate from that time: {rate:.3e} M/s (prior initial rate {r0:.3e} M/s)."
        ));
    }
    if let (Some(c), Some(s)) = (f.max_conversion, &f.max_conversion_species) {
        out.push(format!(
            "Largest conversion at the clock: {s} {:.1} %.",
            c * 100.0
        ));
    }
    match (f.volumetric_uncertainty_pct, f.clock_volumetric_uncertainty_pct) {
        (Some(u), Some(c)) if f.visible_extra_s.is_some() => out.push(format!(
            "Glassware and stocks alone make the time uncertain by {u:.2} % (k = 1); the clock time alone by {c:.2} %."
        )),
        (Some(u), _) => out.push(format!(
            "Glassware and stocks alone make the time uncertain by {u:.2} % (k = 1)."
        )),
        _ => {}
    }
    out
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn significant_figures() {
        assert_eq!(sig(2.5, 3), "2.50");
        assert_eq!(sig(150.0, 3), "150");
        assert_eq!(sig(0.0123, 3), "0.0123");
        assert_eq!(sig(0.0, 3), "0.00");
        // Regression: a huge value printed as a 300-digit number.
        assert_eq!(sig(1.5e300, 3), "1.50e300");
        assert_eq!(sig(-0.0001, 1), "-0.0001");
        assert_eq!(sig(-1e-12, 2), "-1.0e-12");
    }

    #[test]
    fn pour_names_both_vessels() {
        assert!(pour("B into A").starts_with("At t = 0 pour vessel B into vessel A"));
        assert!(pour("A into B").starts_with("At t = 0 pour vessel A into vessel B"));
    }
}
