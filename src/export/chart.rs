//! The forecast chart as SVG: one row per run, the predicted time at the planned temperature as
//! a marker, the temperature band as an error bar, the timing window shaded. Flagged runs are
//! marked by shape (a triangle, not a circle) as well as colour, so the chart reads in grey
//! print. The time axis is logarithmic when the values span more than a decade.
//!
//! Hand-written because it is small: the plotting crates either need system fonts for text
//! layout or bring far more than one chart needs. Text goes through maud, which escapes it.

pub use crate::report::page::ChartRow as Row;
use maud::{html, Markup, PreEscaped};

const WIDTH: f64 = 720.0;
const LEFT: f64 = 170.0;
const RIGHT: f64 = 24.0;
const TOP: f64 = 44.0;
const ROW: f64 = 26.0;
const BOTTOM: f64 = 80.0;

/// Maps a time (s) to an x coordinate.
struct Axis {
    lo: f64,
    hi: f64,
    log: bool,
}

impl Axis {
    fn new(values: &[f64]) -> Axis {
        let min = values
            .iter()
            .copied()
            .fold(f64::INFINITY, f64::min)
            .max(1e-3);
        let max = values.iter().copied().fold(0.0, f64::max).max(min * 1.01);
        if max / min > 10.0 {
            Axis {
                lo: 10f64.powf(min.log10().floor()),
                hi: 10f64.powf(max.log10().ceil()),
                log: true,
            }
        } else {
            let step = nice_step((max - 0.0) / 6.0);
            Axis {
                lo: 0.0,
                hi: (max / step).ceil() * step,
                log: false,
            }
        }
    }

    fn x(&self, t: f64) -> f64 {
        let f = if self.log {
            (t.max(self.lo).log10() - self.lo.log10()) / (self.hi.log10() - self.lo.log10())
        } else {
            (t - self.lo) / (self.hi - self.lo)
        };
        LEFT + f.clamp(0.0, 1.0) * (WIDTH - LEFT - RIGHT)
    }

    fn ticks(&self) -> Vec<f64> {
        if self.log {
            let mut out = Vec::new();
            let mut decade = self.lo;
            while decade <= self.hi * 1.0001 {
                for m in [1.0, 2.0, 5.0] {
                    let t = decade * m;
                    if t <= self.hi * 1.0001 {
                        out.push(t);
                    }
                }
                decade *= 10.0;
            }
            out
        } else {
            let step = nice_step((self.hi - self.lo) / 6.0);
            let n = ((self.hi - self.lo) / step).round() as usize;
            (0..=n).map(|i| self.lo + i as f64 * step).collect()
        }
    }
}

/// 1, 2 or 5 times a power of ten, at least `raw`.
fn nice_step(raw: f64) -> f64 {
    let p = 10f64.powf(raw.max(1e-9).log10().floor());
    [1.0, 2.0, 5.0, 10.0]
        .iter()
        .map(|m| m * p)
        .find(|s| *s >= raw)
        .unwrap_or(10.0 * p)
}

fn tick_label(t: f64) -> String {
    if t >= 1.0 {
        format!("{t:.0}")
    } else {
        format!("{t}")
    }
}

/// A window edge as a person says it: seconds under ten minutes, else minutes.
fn duration(seconds: f64) -> String {
    let (v, unit) = if seconds >= 600.0 {
        (seconds / 60.0, "min")
    } else {
        (seconds, "s")
    };
    if (v - v.round()).abs() < 1e-9 {
        format!("{v:.0} {unit}")
    } else {
        format!("{} {unit}", crate::units::sig(v, 3))
    }
}

fn f(v: f64) -> String {
    format!("{v:.1}")
}

/// The chart as a standalone SVG document.
pub fn svg(title: &str, rows: &[Row], window: (f64, f64), band_c: f64) -> String {
    let mut values = vec![window.0, window.1];
    for r in rows {
        if let Some([a, b]) = r.forecast.band_s {
            values.extend([a, b]);
        }
        values.extend(r.forecast.time_s);
    }
    // Minutes when anything runs past ten minutes, so slow runs do not read in thousands of s.
    let scale = if values.iter().any(|v| *v > 600.0) {
        60.0
    } else {
        1.0
    };
    let unit = if scale > 1.0 { "min" } else { "s" };
    let scaled: Vec<f64> = values.iter().map(|v| v / scale).collect();
    let axis = Axis::new(&scaled);
    let x = |t: f64| axis.x(t / scale);
    let height = TOP + ROW * rows.len().max(1) as f64 + BOTTOM;
    let plot_bottom = TOP + ROW * rows.len().max(1) as f64;
    let (w0, w1) = (x(window.0), x(window.1));
    let shown = |flagged: bool| {
        rows.iter()
            .any(|r| r.forecast.time_s.is_some() && r.forecast.warnings.is_empty() != flagged)
    };
    let (show_ok, show_flagged) = (shown(false), shown(true));
    let markup: Markup = html! {
        svg xmlns="http://www.w3.org/2000/svg" width=(f(WIDTH)) height=(f(height)) viewBox={"0 0 " (f(WIDTH)) " " (f(height))} font-family="sans-serif" font-size="12" role="img" {
            title { "Predicted time to colour: " (title) }
            rect x="0" y="0" width=(f(WIDTH)) height=(f(height)) fill="white" {}
            text x=(f(LEFT)) y="20" font-size="14" font-weight="bold" { "Predicted time to colour" }
            // The timing window, shaded.
            rect class="window" x=(f(w0)) y=(f(TOP - 6.0)) width=(f(w1 - w0)) height=(f(plot_bottom - TOP + 6.0)) fill="#e4e4e4" stroke="#999999" stroke-dasharray="4 3" {}
            // Its edges, labelled.
            text class="window-edge" x=(f(w0)) y=(f(TOP - 10.0)) text-anchor="middle" font-size="11" { (duration(window.0)) }
            text class="window-edge" x=(f(w1)) y=(f(TOP - 10.0)) text-anchor="middle" font-size="11" { (duration(window.1)) }
            // Axis and ticks.
            line x1=(f(LEFT)) y1=(f(plot_bottom)) x2=(f(WIDTH - RIGHT)) y2=(f(plot_bottom)) stroke="black" {}
            @for t in axis.ticks() {
                line x1=(f(axis.x(t))) y1=(f(plot_bottom)) x2=(f(axis.x(t))) y2=(f(plot_bottom + 5.0)) stroke="black" {}
                text x=(f(axis.x(t))) y=(f(plot_bottom + 18.0)) text-anchor="middle" { (tick_label(t)) }
            }
            text x=(f((LEFT + WIDTH - RIGHT) / 2.0)) y=(f(plot_bottom + 38.0)) text-anchor="middle" {
                "time to colour (" (unit) @if axis.log { ", log scale" } "); bar: ±" (format!("{band_c:.1}")) " °C; shaded: timing window"
            }
            @for (i, r) in rows.iter().enumerate() {
                @let y = TOP + ROW * i as f64 + ROW / 2.0;
                @let flagged = !r.forecast.warnings.is_empty();
                @let colour = if flagged { "#b2182b" } else { "#2166ac" };
                text x=(f(LEFT - 8.0)) y=(f(y + 4.0)) text-anchor="end" { (r.name) }
                @if let Some([a, b]) = r.forecast.band_s {
                    g class="band" stroke=(colour) stroke-width="1.5" {
                        line x1=(f(x(a))) y1=(f(y)) x2=(f(x(b))) y2=(f(y)) {}
                        line x1=(f(x(a))) y1=(f(y - 5.0)) x2=(f(x(a))) y2=(f(y + 5.0)) {}
                        line x1=(f(x(b))) y1=(f(y - 5.0)) x2=(f(x(b))) y2=(f(y + 5.0)) {}
                    }
                }
                @if let Some(t) = r.forecast.time_s {
                    @let px = x(t);
                    @if flagged {
                        path class="flagged" d=(format!("M {} {} L {} {} L {} {} Z", f(px), f(y - 7.0), f(px + 7.0), f(y + 6.0), f(px - 7.0), f(y + 6.0))) fill=(colour) {}
                    } @else {
                        circle class="ok" cx=(f(px)) cy=(f(y)) r="5" fill=(colour) {}
                    }
                } @else {
                    text x=(f(LEFT + 6.0)) y=(f(y + 4.0)) fill=(colour) { "no clock" }
                }
            }
            // Legend: an entry only for a marker that is drawn.
            g transform=(format!("translate({} {})", f(LEFT), f(height - 14.0))) {
                @if show_ok {
                    circle cx="0" cy="-4" r="5" fill="#2166ac" {}
                    text x="10" y="0" { "inside the window" }
                }
                @if show_flagged {
                    @let dx = if show_ok { 140.0 } else { 0.0 };
                    path d=(format!("M {} -11 L {} 2 L {} 2 Z", f(dx), f(dx + 7.0), f(dx - 7.0))) fill="#b2182b" {}
                    text x=(f(dx + 12.0)) y="0" { "flagged (see the sheet)" }
                }
            }
        }
    };
    let mut out = String::from("<?xml version=\"1.0\" encoding=\"UTF-8\"?>\n");
    out.push_str(&super::typeset::document(
        &markup.into_string(),
        super::typeset::Style::Unicode,
    ));
    out.push('\n');
    out
}

/// The chart for embedding in HTML (without the XML declaration).
pub fn inline(title: &str, rows: &[Row], window: (f64, f64), band_c: f64) -> PreEscaped<String> {
    let s = svg(title, rows, window, band_c);
    PreEscaped(
        s.split_once('\n')
            .map_or(s.clone(), |(_, body)| body.to_string()),
    )
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::flag::Flag;
    use crate::report::ForecastReport;

    fn forecast(t: f64, flagged: bool) -> ForecastReport {
        ForecastReport {
            temperature_c: 21.0,
            band_c: [18.0, 24.0],
            time_s: Some(t),
            uses: "clock",
            clock_s: Some(t),
            visible_extra_s: None,
            band_s: Some([t * 0.8, t * 1.25]),
            initial_rate_s: Some(t),
            initial_rate_difference_pct: Some(0.0),
            rate: Some(1e-6),
            initial_rate: Some(1e-6),
            volumetric_uncertainty_pct: None,
            clock_volumetric_uncertainty_pct: None,
            visible_extra_range_s: None,
            threshold_uncertainty_pct: None,
            visible_extra_uncertainty_pct: None,
            max_conversion: Some(0.01),
            max_conversion_species: Some("H+".into()),
            warnings: if flagged {
                vec![Flag {
                    code: "too_fast",
                    message: "x".into(),
                }]
            } else {
                vec![]
            },
        }
    }

    #[test]
    fn shapes_scale_and_escaping() {
        let (a, b) = (forecast(40.0, false), forecast(8.0, true));
        let rows = [
            Row {
                name: "<script>alert(1)</script>".into(),
                forecast: a.clone(),
            },
            Row {
                name: "fast".into(),
                forecast: b.clone(),
            },
        ];
        let s = svg("demo & test", &rows, (15.0, 600.0), 3.0);
        // Names are escaped text, never markup.
        assert!(s.contains("&lt;script&gt;alert(1)&lt;/script&gt;"));
        assert!(!s.contains("<script>"));
        assert!(s.contains("demo &amp; test"));
        // One circle for the run inside the window, one triangle for the flagged one.
        assert_eq!(s.matches("class=\"ok\"").count(), 1);
        assert_eq!(s.matches("class=\"flagged\"").count(), 1);
        // 6.4 s to 750 s spans more than a decade: log axis from 1 to 1000 s.
        assert!(s.contains("log scale"));
        assert!(s.contains(">1000<"));
    }

    #[test]
    fn linear_axis_within_a_decade() {
        let a = forecast(40.0, false);
        let s = svg(
            "t",
            &[Row {
                name: "r".into(),
                forecast: a.clone(),
            }],
            (20.0, 120.0),
            3.0,
        );
        assert!(!s.contains("log scale"));
        let axis = Axis::new(&[20.0, 120.0, 32.0, 50.0]);
        assert_eq!(axis.lo, 0.0);
        assert_eq!(axis.hi, 120.0);
        assert!((axis.x(60.0) - (LEFT + 0.5 * (WIDTH - LEFT - RIGHT))).abs() < 1e-9);
    }

    #[test]
    fn window_edges_labelled_minutes_for_slow_runs_and_legend_only_for_what_is_drawn() {
        let row = |name: &str, t: f64, flagged: bool| Row {
            name: name.into(),
            forecast: forecast(t, flagged),
        };
        // Nothing flagged: no "flagged" legend entry; the window edges are written out.
        let s = svg("t", &[row("a", 40.0, false)], (15.0, 600.0), 3.0);
        assert!(!s.contains("flagged (see the sheet)") && s.contains("inside the window"));
        assert!(s.contains(">15 s<") && s.contains(">10 min<"));
        assert!(s.contains("time to colour (s"));
        // A slow run past ten minutes: the axis in minutes; all flagged: no "inside" entry.
        let s = svg("t", &[row("slow", 1800.0, true)], (15.0, 600.0), 3.0);
        assert!(s.contains("time to colour (min"));
        assert!(s.contains("flagged (see the sheet)") && !s.contains("inside the window"));
    }
}
