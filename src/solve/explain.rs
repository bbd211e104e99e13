//! Solver outcomes in the user's terms: which run, which species, which stock or device, and
//! what to change.

use super::*;
use crate::error::Error;
use crate::spec::Lab;
use crate::units;

// ---------------------------------------------------------------------------------------------
// Explanations, in the user's terms
// ---------------------------------------------------------------------------------------------

pub(super) fn water_error(m: &RunModel) -> Error {
    let (spec, lab) = (m.spec, m.lab);
    spec.source.error(
        m.run.span.clone(),
        format!(
            "run '{}': the water devices cannot make the run up to {} mL",
            m.run.name,
            units::ml(lab.total_volume, 2)
        ),
        "no way to make up the volume",
        "allow a larger device for water in [water] devices",
    )
}

/// The continuous model cannot meet the targets: say which one, and why.
pub(super) fn explain_unreachable(m: &RunModel, best: f64) -> Error {
    let (spec, lab) = (m.spec, m.lab);
    let run = &m.run.name;
    let total = m.total_ml();
    // 1. A single goal out of reach on its own.
    for g in &m.goals {
        // Greedy: fill the free volume with the richest stocks first, each up to its device cap.
        let mut order: Vec<usize> = (0..m.vary.len()).filter(|&i| g.coeffs[i] > 0.0).collect();
        order.sort_by(|&a, &b| g.coeffs[b].total_cmp(&g.coeffs[a]));
        let mut left = m.free_ml;
        let mut most = g.constant;
        let mut used_names = Vec::new();
        let mut limited_by_device = false;
        for &i in &order {
            let cap = m.cap_ml(&lab.stocks[m.vary[i]].devices);
            let take = left.min(cap);
            if cap < left {
                limited_by_device = true;
            }
            most += take * g.coeffs[i];
            left -= take;
            used_names.push((m.vary[i], take));
            if left <= 0.0 {
                break;
            }
        }
        let most_c = most / total;
        let least_c = g.constant / total;
        let what = if g.label == "ionic strength" {
            format!("ionic strength {}", units::concentration(g.target))
        } else {
            format!("{} {}", g.label, units::concentration(g.target))
        };
        if g.target > most_c * (1.0 + lab.tolerance) {
            let (message, help) = match used_names.as_slice() {
                [] => (
                    format!("run '{run}': {what} cannot be reached: no stock that varies holds it"),
                    "add a stock that holds this species".to_string(),
                ),
                [(s, take)] => {
                    let name = &lab.stocks[*s].name;
                    let limit = if limited_by_device {
                        format!(
                            "the {} mL its largest allowed device delivers",
                            trim_ml(take * 1e-3)
                        )
                    } else {
                        format!("the whole {} mL left in the run", trim_ml(m.free_ml * 1e-3))
                    };
                    (
                        format!(
                            "run '{run}': {what} is out of reach: {limit}, all of it '{name}', gives at most {}",
                            units::concentration(most_c)
                        ),
                        if limited_by_device {
                            "allow a larger device for this stock, use a stronger stock, or lower the target".to_string()
                        } else {
                            "use a stronger stock, a smaller total volume, or a lower target".to_string()
                        },
                    )
                }
                many => (
                    format!(
                        "run '{run}': {what} is out of reach: all of {} together give at most {}",
                        many.iter()
                            .map(|(s, _)| format!("'{}'", lab.stocks[*s].name))
                            .collect::<Vec<_>>()
                            .join(", "),
                        units::concentration(most_c)
                    ),
                    "use a stronger stock, a smaller total volume, or a lower target".to_string(),
                ),
            };
            return spec
                .source
                .error(g.span.clone(), message, "out of reach", help);
        }
        if g.target < least_c * (1.0 - lab.tolerance) {
            return spec.source.error(
                g.span.clone(),
                format!(
                    "run '{run}': {what} is below the {} that the timing stock and fixed additions already bring",
                    units::concentration(least_c)
                ),
                "below the floor",
                "raise the target, or keep this species out of the timing stock and fixed additions",
            );
        }
    }
    // 2. Each goal alone is reachable, but the volumes needed do not fit together.
    let mut needed = Vec::new();
    let mut sum_needed = 0.0;
    for g in &m.goals {
        if let Some((i, &a)) = g
            .coeffs
            .iter()
            .enumerate()
            .filter(|(_, &a)| a > 0.0)
            .max_by(|x, y| x.1.total_cmp(y.1))
        {
            let v = ((g.target * total - g.constant) / a).max(0.0);
            sum_needed += v;
            needed.push(format!(
                "{} mL of '{}'",
                trim_ml(v * 1e-3),
                lab.stocks[m.vary[i]].name
            ));
        }
    }
    if sum_needed > m.free_ml * (1.0 + lab.tolerance) {
        return spec.source.error(
            m.run.span.clone(),
            format!(
                "run '{run}': the stocks needed add up to more than the {} mL available: {}",
                trim_ml(m.free_ml * 1e-3),
                needed.join(" + ")
            ),
            "does not fit",
            "use stronger stocks, a larger total volume, or lower targets",
        );
    }
    // 3. Stocks that carry several target species in a fixed ratio.
    spec.source.error(
        m.run.span.clone(),
        format!(
            "run '{run}': the targets cannot all be met together (best largest deviation {:.1} %): the stocks bring these species in fixed ratios",
            best * 100.0
        ),
        "conflicting targets",
        "add a stock that holds only one of the conflicting species, or change the targets",
    )
}

/// A stock whose ideal volume is below what any of its allowed devices delivers.
pub(super) struct TooSmall {
    stock: usize,
    ideal: f64,
    min: f64,
    device: usize,
}

impl TooSmall {
    pub(super) fn find(m: &RunModel, ideal: &[f64]) -> Option<TooSmall> {
        let lab = m.lab;
        ideal.iter().enumerate().find_map(|(i, &v_ml)| {
            if v_ml <= 1e-9 {
                return None;
            }
            let stock = m.vary[i];
            let (min, device) = lab.stocks[stock]
                .devices
                .iter()
                .map(|&d| (lab.devices[d].min, d))
                .min_by(|a, b| a.0.total_cmp(&b.0))?;
            (v_ml * 1e-3 < min * (1.0 - lab.tolerance)).then_some(TooSmall {
                stock,
                ideal: v_ml * 1e-3,
                min,
                device,
            })
        })
    }

    pub(super) fn describe(&self, lab: &Lab) -> String {
        format!(
            "no allowed device delivers {} mL of '{}' (the smallest is {} mL with '{}')",
            trim_ml(self.ideal),
            lab.stocks[self.stock].name,
            trim_ml(self.min),
            lab.devices[self.device].name
        )
    }

    pub(super) fn error(&self, m: &RunModel) -> Error {
        let (spec, lab) = (m.spec, m.lab);
        spec.source.error(
            lab.stocks[self.stock].name_span.clone(),
            format!("run '{}': {}", m.run.name, self.describe(lab)),
            "volume too small for its devices",
            "allow a smaller device for this stock (devices = [...]), or use a more dilute stock",
        )
    }
}

/// The integer model has no solution although the continuous one does.
pub(super) fn explain_integer_infeasible(m: &RunModel, ideal: &[f64]) -> Error {
    if let Some(t) = TooSmall::find(m, ideal) {
        return t.error(m);
    }
    let (spec, lab) = (m.spec, m.lab);
    let steps: Vec<String> = lab
        .water_devices
        .iter()
        .map(|&d| {
            let dev = &lab.devices[d];
            format!("'{}' ({} mL steps)", dev.name, trim_ml(dev.step))
        })
        .collect();
    spec.source.error(
        lab.total_span.clone(),
        format!(
            "run '{}': no combination of deliverable volumes adds up to exactly {} mL",
            m.run.name,
            trim_ml(lab.total_volume)
        ),
        "cannot be made up exactly",
        format!(
            "the fixed additions leave {} mL for stocks and water, and water comes from {}; pick a total and fixed volumes on the devices' graduations",
            trim_ml(m.free_ml * 1e-3),
            steps.join(", ")
        ),
    )
}
