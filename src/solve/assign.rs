//! The plan-level device assignment: which device (or volumetric pipet combination) delivers
//! each stock, and the water, at every station for the whole lab.
//!
//! A bench sets up one buret per stock and keeps it; a run-by-run choice of glassware cannot be
//! followed. So the devices are chosen once, before any run's volumes:
//!
//! 1. every run's ideal volumes come from the dilution law (closed form when each target has
//!    its own stock, else the continuous relaxation of the run's model); a held ionic strength
//!    gives the salt's ideal volume from the others';
//! 2. each way of delivering a stock (one allowed device, or all its allowed volumetric pipets
//!    combined) is scored at the nearest volume it delivers to each run's ideal: it serves the
//!    run when the target moves by no more than the tolerance, and its relative standard
//!    uncertainty there is u(delivery)/V (water: u/V of the whole run);
//! 3. the assignment minimises the largest of these over all stocks and runs, then their sum,
//!    then the number of distinct devices, inside the station's `per_station` counts (a search
//!    over the small product of choices, pruned by a lower bound). Water is chosen last, among
//!    its devices that deliver every run's remainder exactly.
//!
//! A stock that no single choice serves in every run keeps the best choice for most runs; the
//! other runs are solved with its full device list and say that they forced a second device.

use super::*;
use crate::reference::glassware::DeviceKind;
use crate::reference::tolerance::delivery_u;
use std::collections::BTreeMap;

/// What a device holds at a station: a stock (index into the lab's stocks) or water.
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, Hash)]
pub enum Holder {
    Stock(usize),
    Water,
}

/// The devices chosen for one stock (or the water), and why.
#[derive(Debug, Clone, PartialEq)]
pub struct Choice {
    pub holder: Holder,
    /// The device, or the volumetric pipets combined, used in every run it serves.
    pub devices: Vec<usize>,
    /// Largest relative standard uncertainty of one delivery over the runs (water: relative to
    /// the run volume); `None` when it was not scored (water left to the solve).
    pub worst_u: Option<f64>,
    /// Runs (indices into the spec's runs) that it cannot serve within tolerance.
    pub forced: Vec<usize>,
    pub why: String,
}

/// The plan-level assignment, one choice per stock used in the runs, then water.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct Assignment {
    pub choices: Vec<Choice>,
}

/// A distinct set of targets: the first run that has it, and how many runs share it.
#[derive(Debug, Clone, Copy)]
pub(super) struct Distinct {
    pub(super) run: usize,
    pub(super) count: usize,
}

/// One way of delivering a holder's volumes.
#[derive(Debug, Clone)]
struct Way {
    devices: Vec<usize>,
    /// A volumetric combination's deliverable volumes (L), ascending, with the fewest fills.
    table: Vec<(f64, Delivery)>,
}

impl Way {
    fn new(devices: Vec<usize>, lab: &Lab) -> Way {
        let table = if devices.len() > 1 {
            combinations(&devices, &lab.devices, lab.total_volume)
        } else {
            Vec::new()
        };
        Way { devices, table }
    }

    /// The deliverable volume nearest to `v` (L), with its delivery.
    fn nearest(&self, v: f64, lab: &Lab) -> Option<(f64, Delivery)> {
        if self.devices.len() == 1 {
            let d = self.devices[0];
            let dev = &lab.devices[d];
            let (lo, hi) = dev.count_range();
            if lo > hi {
                return None;
            }
            let n = ((v / dev.step).round().max(0.0) as u64).clamp(lo as u64, hi as u64) as u32;
            return Some((
                n as f64 * dev.step,
                Delivery {
                    parts: vec![(d, n)],
                },
            ));
        }
        let i = self.table.partition_point(|(x, _)| *x < v);
        [i.checked_sub(1), Some(i)]
            .into_iter()
            .flatten()
            .filter_map(|j| self.table.get(j))
            .min_by(|a, b| (a.0 - v).abs().total_cmp(&(b.0 - v).abs()))
            .cloned()
    }

    fn exact(&self, v: f64, lab: &Lab) -> Option<Delivery> {
        let (x, d) = self.nearest(v, lab)?;
        ((x - v).abs() <= 1e-9 * v.max(1e-6)).then_some(d)
    }
}

/// Every volume (L) the volumetric pipets deliver together, with the fewest fills for each.
fn combinations(pipets: &[usize], devices: &[Device], cap: f64) -> Vec<(f64, Delivery)> {
    let mut out: Vec<(f64, Delivery)> = vec![(0.0, Delivery::none())];
    for &p in pipets {
        let dev = &devices[p];
        let mut next = Vec::new();
        for (v, d) in &out {
            for n in 0..=dev.max_fills {
                let x = v + n as f64 * dev.step;
                if x > cap * (1.0 + 1e-9) {
                    break;
                }
                let mut parts = d.parts.clone();
                if n > 0 {
                    parts.push((p, n));
                }
                next.push((x, Delivery { parts }));
            }
        }
        out = next;
        if out.len() > 50_000 {
            break;
        }
    }
    out.retain(|(v, _)| *v > 0.0);
    let fills = |d: &Delivery| d.parts.iter().map(|p| p.1).sum::<u32>();
    out.sort_by(|a, b| a.0.total_cmp(&b.0).then(fills(&a.1).cmp(&fills(&b.1))));
    out.dedup_by(|b, a| (a.0 - b.0).abs() <= 1e-12);
    out
}

/// The ways of delivering with `allowed`: each device alone, and all volumetric pipets together.
fn ways(allowed: &[usize], lab: &Lab) -> Vec<Way> {
    let mut ways: Vec<Way> = allowed.iter().map(|&d| Way::new(vec![d], lab)).collect();
    let pipets: Vec<usize> = allowed
        .iter()
        .copied()
        .filter(|&d| lab.devices[d].is_volumetric())
        .collect();
    if pipets.len() > 1 {
        ways.push(Way::new(pipets, lab));
    }
    ways
}

/// What a holder must deliver in one distinct run.
#[derive(Debug, Clone, Copy)]
struct Need {
    /// Ideal volume, L.
    volume: f64,
    /// Relative change of the holder's goal per litre off the ideal.
    per_litre: f64,
}

/// One scored way for a holder.
#[derive(Debug, Clone)]
struct Option_ {
    way: usize,
    worst: f64,
    sum: f64,
    /// Per distinct run, the volume it delivers (L).
    rounded: Vec<f64>,
    /// Distinct runs it cannot serve within tolerance.
    misses: Vec<usize>,
}

struct HolderData {
    holder: Holder,
    ways: Vec<Way>,
    /// Scored options that serve every run, best first; or the best partial one.
    options: Vec<Option_>,
}

/// The result: the assignment, a lab whose stocks and water list only the assigned devices,
/// the constant additions delivered with them, and per run the holders that fall back.
pub(super) struct Assigned {
    pub(super) assignment: Assignment,
    /// Per run (spec index), the stocks whose chosen way cannot serve it.
    pub(super) forced: BTreeMap<usize, Vec<usize>>,
    pub(super) lab: Lab,
    pub(super) constant: Constant,
}

/// Choose the devices of every stock and the water for the whole plan.
pub(super) fn assign(
    spec: &Spec,
    lab: &Lab,
    constant: &Constant,
    distinct: &[Distinct],
) -> Result<Assigned> {
    let needs = ideal_needs(spec, lab, constant, distinct);
    let mut holders: Vec<HolderData> = Vec::new();
    // Constant additions: the ways that deliver their one volume exactly.
    for a in &constant.additions {
        let s = a.stock.expect("constant additions are stocks");
        let ways = ways(&lab.stocks[s].devices, lab);
        let mut options: Vec<Option_> = ways
            .iter()
            .enumerate()
            .filter_map(|(w, way)| {
                let d = way.exact(a.volume, lab)?;
                let u = delivery_u(&d, &lab.devices) / a.volume;
                Some(Option_ {
                    way: w,
                    worst: u,
                    sum: u * spec.runs.len() as f64,
                    // Counted once, in the constant volume.
                    rounded: vec![0.0; distinct.len()],
                    misses: Vec::new(),
                })
            })
            .collect();
        rank(&mut options);
        holders.push(HolderData {
            holder: Holder::Stock(s),
            ways,
            options,
        });
    }
    for (s, per_run) in &needs {
        let ways = ways(&lab.stocks[*s].devices, lab);
        let mut options: Vec<Option_> = ways
            .iter()
            .enumerate()
            .filter_map(|(w, way)| score(way, w, per_run, distinct, lab))
            .collect();
        rank(&mut options);
        if options.iter().any(|o| o.misses.is_empty()) {
            options.retain(|o| o.misses.is_empty());
        } else {
            // No single way serves every run: the one that serves most, best first.
            options.sort_by_key(|o| o.misses.len());
            options.truncate(1);
        }
        holders.push(HolderData {
            holder: Holder::Stock(*s),
            ways,
            options,
        });
    }
    holders.retain(|h| !h.options.is_empty());

    let water_ways = ways(&lab.water_devices, lab);
    let search = Search {
        lab,
        constant,
        distinct,
        holders: &holders,
        water_ways: &water_ways,
        // Without any `per_station`, every node fits: skip counting at each one.
        limits: lab.devices.iter().any(|d| d.per_station.is_some()),
    };
    let best = match search.run() {
        Some(b) => b,
        None => return Err(shortage(spec, lab, &search)),
    };
    build(spec, lab, constant, distinct, &holders, &water_ways, best)
}

/// Ideal volume of every varied stock (and the salt) in each distinct run, by stock.
fn ideal_needs(
    spec: &Spec,
    lab: &Lab,
    constant: &Constant,
    distinct: &[Distinct],
) -> BTreeMap<usize, Vec<Option<Need>>> {
    let total = lab.total_volume;
    let mut needs: BTreeMap<usize, Vec<Option<Need>>> = BTreeMap::new();
    let mut ionic_rest: Vec<Option<f64>> = Vec::with_capacity(distinct.len());
    for (k, d) in distinct.iter().enumerate() {
        let run = &spec.runs[d.run];
        let m = RunModel::new(spec, lab, run, constant, None);
        let Some(volumes_ml) = ideal_volumes(&m) else {
            ionic_rest.push(None);
            continue;
        };
        let mut ionic = constant
            .additions
            .iter()
            .map(|a| lab.stocks[a.stock.unwrap_or(0)].ionic_strength() * a.volume)
            .sum::<f64>()
            / total;
        for (j, &s) in m.vary.iter().enumerate() {
            let v = volumes_ml[j] * 1e-3;
            ionic += lab.stocks[s].ionic_strength() * v / total;
            let per_litre = m
                .goals
                .iter()
                .map(|g| g.coeffs[j] / (g.target * total))
                .fold(0.0, f64::max);
            needs.entry(s).or_insert_with(|| vec![None; distinct.len()])[k] = Some(Need {
                volume: v.max(0.0),
                per_litre,
            });
        }
        ionic_rest.push(Some(ionic));
    }
    if let Some(hold) = &lab.ionic {
        let salt = &lab.stocks[hold.stock];
        let target = match hold.target {
            IonicTarget::Value(v) => v,
            IonicTarget::Max => ionic_rest.iter().flatten().fold(0.0, |a: f64, &b| a.max(b)),
        };
        let per = salt.ionic_strength();
        if per > 0.0 && target > 0.0 {
            let row = needs
                .entry(hold.stock)
                .or_insert_with(|| vec![None; distinct.len()]);
            for (k, rest) in ionic_rest.iter().enumerate() {
                if let Some(rest) = rest {
                    let v = ((target - rest) * total / per).max(0.0);
                    let per_litre = per / (target * total);
                    row[k] = Some(match row[k] {
                        // The salt is also a reactant's stock here: the stricter goal.
                        Some(n) => Need {
                            volume: n.volume.max(v),
                            per_litre: n.per_litre.max(per_litre),
                        },
                        None => Need {
                            volume: v,
                            per_litre,
                        },
                    });
                }
            }
        }
    }
    needs
}

/// The run's ideal volumes (mL, per varied stock): closed form when every target has its own
/// stock, else the continuous relaxation.
pub(super) fn ideal_volumes(m: &RunModel) -> Option<Vec<f64>> {
    if let Some(v) = separable(m) {
        return Some(v);
    }
    solve_tiers(m, Relax::Continuous).ok().map(|o| o.volumes_ml)
}

/// Volumes (mL) by the dilution law when each goal has exactly one varied stock and each
/// varied stock serves one goal.
pub(super) fn separable(m: &RunModel) -> Option<Vec<f64>> {
    let mut volumes = vec![f64::NAN; m.vary.len()];
    for g in &m.goals {
        let mut nonzero = g.coeffs.iter().enumerate().filter(|(_, a)| **a != 0.0);
        let (j, &a) = nonzero.next()?;
        if nonzero.next().is_some() || !volumes[j].is_nan() {
            return None;
        }
        let v = (g.target * m.total_ml() - g.constant) / a;
        if !(v.is_finite() && v >= 0.0) {
            return None;
        }
        volumes[j] = v;
    }
    volumes.iter().all(|v| !v.is_nan()).then_some(volumes)
}

/// Score one way against a stock's needs.
fn score(
    way: &Way,
    w: usize,
    needs: &[Option<Need>],
    distinct: &[Distinct],
    lab: &Lab,
) -> Option<Option_> {
    let mut o = Option_ {
        way: w,
        worst: 0.0,
        sum: 0.0,
        rounded: vec![0.0; distinct.len()],
        misses: Vec::new(),
    };
    for (k, need) in needs.iter().enumerate() {
        let Some(need) = need else { continue };
        if need.volume < 1e-9 {
            continue; // not delivered in this run
        }
        let (x, d) = way.nearest(need.volume, lab)?;
        if (x - need.volume).abs() * need.per_litre > lab.tolerance * (1.0 + 1e-9) {
            o.misses.push(k);
            continue;
        }
        let u = delivery_u(&d, &lab.devices) / x;
        o.worst = o.worst.max(u);
        o.sum += u * distinct[k].count as f64;
        o.rounded[k] = x;
    }
    Some(o)
}

/// Best first: worst run, then the sum, then fewer devices, then spec order.
fn rank(options: &mut [Option_]) {
    options.sort_by(|a, b| {
        cmp_u(a.worst, b.worst)
            .then(cmp_u(a.sum, b.sum))
            .then(a.way.cmp(&b.way))
    });
}

/// Uncertainties that agree to 1e-9 relative are a tie.
fn cmp_u(a: f64, b: f64) -> std::cmp::Ordering {
    if (a - b).abs() <= 1e-9 * a.abs().max(b.abs()) {
        std::cmp::Ordering::Equal
    } else {
        a.total_cmp(&b)
    }
}

/// A complete choice: per holder the option index, then the water's way.
#[derive(Debug, Clone)]
struct Pick {
    options: Vec<usize>,
    water: Option<usize>,
    worst: f64,
    sum: f64,
    distinct_devices: usize,
}

impl Pick {
    fn better_than(&self, other: &Pick) -> bool {
        cmp_u(self.worst, other.worst)
            .then(cmp_u(self.sum, other.sum))
            .then(self.distinct_devices.cmp(&other.distinct_devices))
            .is_lt()
    }
}

struct Search<'a> {
    lab: &'a Lab,
    constant: &'a Constant,
    distinct: &'a [Distinct],
    holders: &'a [HolderData],
    water_ways: &'a [Way],
    /// Keep to the devices' `per_station` counts.
    limits: bool,
}

/// Nodes visited before the search keeps its best so far (deterministically: same order).
const NODE_LIMIT: usize = 200_000;

impl Search<'_> {
    fn run(&self) -> Option<Pick> {
        let mut best: Option<Pick> = None;
        let mut nodes = 0usize;
        // Lower bounds of what the remaining holders add: their best options.
        let n = self.holders.len();
        let mut rest_worst = vec![0.0; n + 1];
        let mut rest_sum = vec![0.0; n + 1];
        for i in (0..n).rev() {
            let o = &self.holders[i].options[0];
            rest_worst[i] = f64::max(rest_worst[i + 1], o.worst);
            rest_sum[i] = rest_sum[i + 1] + o.sum;
        }
        let mut current = Vec::with_capacity(n);
        self.dfs(
            0,
            0.0,
            0.0,
            &mut current,
            &rest_worst,
            &rest_sum,
            &mut best,
            &mut nodes,
        );
        best
    }

    #[allow(clippy::too_many_arguments)]
    fn dfs(
        &self,
        i: usize,
        worst: f64,
        sum: f64,
        current: &mut Vec<usize>,
        rest_worst: &[f64],
        rest_sum: &[f64],
        best: &mut Option<Pick>,
        nodes: &mut usize,
    ) {
        *nodes += 1;
        if *nodes > NODE_LIMIT && best.is_some() {
            return;
        }
        if let Some(b) = best {
            let lb_worst = worst.max(rest_worst[i]);
            let lb_sum = sum + rest_sum[i];
            if cmp_u(lb_worst, b.worst).then(cmp_u(lb_sum, b.sum)).is_gt() {
                return;
            }
        }
        if self.limits && !self.within_limits(current, None) {
            return;
        }
        if i == self.holders.len() {
            self.finish(current, worst, sum, best);
            return;
        }
        for (k, o) in self.holders[i].options.iter().enumerate() {
            current.push(k);
            self.dfs(
                i + 1,
                worst.max(o.worst),
                sum + o.sum,
                current,
                rest_worst,
                rest_sum,
                best,
                nodes,
            );
            current.pop();
        }
    }

    /// The water's way for a complete choice of stock devices, then the pick.
    fn finish(&self, current: &[usize], worst: f64, sum: f64, best: &mut Option<Pick>) {
        let lab = self.lab;
        let split = lab.water_vessel == WaterVessel::Split;
        let mut waters: Vec<(usize, f64, f64)> = Vec::new();
        for (w, way) in self.water_ways.iter().enumerate() {
            let mut ok = true;
            let (mut w_worst, mut w_sum) = (0.0f64, 0.0f64);
            for (k, d) in self.distinct.iter().enumerate() {
                let used: f64 = self.constant.volume
                    + self
                        .holders
                        .iter()
                        .zip(current)
                        .map(|(h, &o)| h.options[o].rounded[k])
                        .sum::<f64>();
                let water = lab.total_volume - used;
                if water.abs() < 1e-12 {
                    continue;
                }
                let delivery = if split {
                    find_delivery_in_two(water, &way.devices, &lab.devices)
                } else {
                    way.exact(water, lab)
                };
                match delivery {
                    Some(del) if water > 0.0 => {
                        let u = delivery_u(&del, &lab.devices) / lab.total_volume;
                        w_worst = w_worst.max(u);
                        w_sum += u * d.count as f64;
                    }
                    _ => {
                        ok = false;
                        break;
                    }
                }
            }
            if ok {
                waters.push((w, w_worst, w_sum));
            }
        }
        waters.sort_by(|a, b| cmp_u(a.1, b.1).then(cmp_u(a.2, b.2)).then(a.0.cmp(&b.0)));
        // No way delivers every remainder exactly: water is left to each run's solve.
        let candidates: Vec<Option<(usize, f64, f64)>> = if waters.is_empty() {
            vec![None]
        } else {
            waters.into_iter().map(Some).collect()
        };
        for c in candidates {
            let water = c.map(|c| c.0);
            if self.limits && !self.within_limits(current, water) {
                continue;
            }
            let (ww, ws) = c.map_or((0.0, 0.0), |c| (c.1, c.2));
            let pick = Pick {
                options: current.to_vec(),
                water,
                worst: worst.max(ww),
                sum: sum + ws,
                distinct_devices: self.units(current, water).len(),
            };
            if best.as_ref().is_none_or(|b| pick.better_than(b)) {
                *best = Some(pick);
            }
        }
    }

    /// Devices of the holders chosen so far (and the water).
    fn holdings(&self, current: &[usize], water: Option<usize>) -> Vec<(Holder, Vec<usize>)> {
        let mut out: Vec<(Holder, Vec<usize>)> = current
            .iter()
            .enumerate()
            .map(|(i, &o)| {
                let h = &self.holders[i];
                (h.holder, h.ways[h.options[o].way].devices.clone())
            })
            .collect();
        if let Some(w) = water {
            out.push((Holder::Water, self.water_ways[w].devices.clone()));
        }
        out
    }

    fn units(&self, current: &[usize], water: Option<usize>) -> BTreeMap<usize, Vec<Holder>> {
        units_of(&self.holdings(current, water))
    }

    fn within_limits(&self, current: &[usize], water: Option<usize>) -> bool {
        self.units(current, water)
            .iter()
            .all(|(&d, holders)| fits(&self.lab.devices[d], holders.len()))
    }
}

/// Per device, the holders that use it.
pub(super) fn units_of(holdings: &[(Holder, Vec<usize>)]) -> BTreeMap<usize, Vec<Holder>> {
    let mut units: BTreeMap<usize, Vec<Holder>> = BTreeMap::new();
    for (h, devices) in holdings {
        for &d in devices {
            let e = units.entry(d).or_default();
            if !e.contains(h) {
                e.push(*h);
            }
        }
    }
    for holders in units.values_mut() {
        holders.sort();
    }
    units
}

/// How many of a device a station needs for these holders: one per holder, or one in all
/// for a pipet the spec lets the stocks share.
pub fn units_needed(device: &Device, holders: usize) -> usize {
    if device.shared && device.kind != DeviceKind::Buret {
        holders.min(1)
    } else {
        holders
    }
}

fn fits(device: &Device, holders: usize) -> bool {
    device
        .per_station
        .is_none_or(|n| units_needed(device, holders) <= n as usize)
}

fn holder_name(lab: &Lab, h: Holder) -> String {
    match h {
        Holder::Stock(s) => format!("'{}'", lab.stocks[s].name),
        Holder::Water => "water".into(),
    }
}

/// The refusal when no assignment fits the station's counts: which devices are short, by how
/// many, and which stock could move to which device.
fn shortage(spec: &Spec, lab: &Lab, search: &Search) -> Error {
    let free = Search {
        limits: false,
        ..*search
    };
    let Some(best) = free.run() else {
        return Error::Solver {
            run: String::new(),
            reason: "no device assignment found".into(),
        };
    };
    let holdings = free.holdings(&best.options, best.water);
    let units = units_of(&holdings);
    let mut short = Vec::new();
    let mut first_span = None;
    for (&d, holders) in &units {
        let dev = &lab.devices[d];
        let need = units_needed(dev, holders.len());
        if let Some(have) = dev.per_station.filter(|&n| need > n as usize) {
            first_span.get_or_insert_with(|| lab.device_spans[d].clone());
            let names: Vec<String> = holders.iter().map(|&h| holder_name(lab, h)).collect();
            short.push(format!(
                "'{}': {need} needed per station ({}), {have} listed, {} short",
                dev.name,
                names.join(", "),
                need - have as usize
            ));
        }
    }
    // Which stock on a short device could move, and where.
    let mut moves = Vec::new();
    for (i, h) in search.holders.iter().enumerate() {
        let chosen = &h.ways[h.options[best.options[i]].way].devices;
        let on_short = chosen.iter().any(|&d| {
            let dev = &lab.devices[d];
            !fits(dev, units[&d].len())
        });
        if !on_short {
            continue;
        }
        for o in &h.options {
            let devs = &h.ways[o.way].devices;
            if devs == chosen {
                continue;
            }
            let names: Vec<&str> = devs.iter().map(|&d| lab.devices[d].name.as_str()).collect();
            moves.push(format!(
                "{} could use '{}' (worst u {:.2} %)",
                holder_name(lab, h.holder),
                names.join(" + "),
                o.worst * 100.0
            ));
        }
    }
    let help = if moves.is_empty() {
        "raise per_station for the short devices, or list another device the stocks may use"
            .to_string()
    } else {
        format!(
            "{}; or raise per_station for the short devices",
            moves.join("; ")
        )
    };
    spec.source.error(
        first_span.unwrap_or_else(|| lab.total_span.clone()),
        format!(
            "the plan needs more glassware than a station has: {}",
            short.join("; ")
        ),
        "too few per station",
        help,
    )
}

/// Turn the best pick into the assignment and the narrowed lab.
fn build(
    spec: &Spec,
    lab: &Lab,
    constant: &Constant,
    distinct: &[Distinct],
    holders: &[HolderData],
    water_ways: &[Way],
    best: Pick,
) -> Result<Assigned> {
    let mut narrow = lab.clone();
    let mut choices = Vec::new();
    for (h, &o) in holders.iter().zip(&best.options) {
        let opt = &h.options[o];
        let devices = h.ways[opt.way].devices.clone();
        let Holder::Stock(s) = h.holder else {
            continue;
        };
        let forced: Vec<usize> = opt.misses.iter().map(|&k| distinct[k].run).collect();
        let why = why(spec, lab, h, o, &forced);
        // Runs it cannot serve fall back to the full list in their own solve.
        narrow.stocks[s].devices = devices.clone();
        choices.push(Choice {
            holder: h.holder,
            devices,
            worst_u: Some(opt.worst),
            forced,
            why,
        });
    }
    match best.water {
        Some(w) => {
            let devices = water_ways[w].devices.clone();
            narrow.water_devices = devices.clone();
            choices.push(Choice {
                holder: Holder::Water,
                devices,
                worst_u: None,
                forced: Vec::new(),
                why: if lab.water_devices.len() == 1 {
                    "the only device allowed for water".into()
                } else {
                    "the most precise allowed device that makes every run up to its total".into()
                },
            });
        }
        None => choices.push(Choice {
            holder: Holder::Water,
            devices: lab.water_devices.clone(),
            worst_u: None,
            forced: Vec::new(),
            why: "no one device makes up every run exactly; each run uses what fits".into(),
        }),
    }
    // The constant additions, delivered with their chosen devices.
    let mut constant = Constant {
        additions: constant.additions.clone(),
        volume: constant.volume,
        time_limit: constant.time_limit,
        shortcut: constant.shortcut,
    };
    for a in &mut constant.additions {
        let s = a.stock.expect("constant additions are stocks");
        if let Some(d) = find_delivery(a.volume, &narrow.stocks[s].devices, &lab.devices) {
            a.delivery = d;
        }
    }
    choices.sort_by_key(|c| c.holder);
    let mut forced: BTreeMap<usize, Vec<usize>> = BTreeMap::new();
    for c in &choices {
        if let Holder::Stock(s) = c.holder {
            for &r in &c.forced {
                forced.entry(r).or_default().push(s);
            }
        }
    }
    Ok(Assigned {
        forced,
        assignment: Assignment { choices },
        lab: narrow,
        constant,
    })
}

/// Why this holder got this way: the only one, the most precise, or the station's counts.
fn why(spec: &Spec, lab: &Lab, h: &HolderData, o: usize, forced: &[usize]) -> String {
    let names = |w: usize| -> String {
        h.ways[w]
            .devices
            .iter()
            .map(|&d| lab.devices[d].name.as_str())
            .collect::<Vec<_>>()
            .join(" + ")
    };
    if !forced.is_empty() {
        let runs: Vec<String> = forced
            .iter()
            .map(|&r| format!("'{}'", spec.runs[r].name))
            .collect();
        return format!(
            "no single allowed device serves every run within tolerance; run(s) {} use another",
            runs.join(", ")
        );
    }
    if h.ways.len() == 1 {
        return "the only device allowed".into();
    }
    let served: Vec<&Option_> = h.options.iter().filter(|x| x.misses.is_empty()).collect();
    if served.len() == 1 {
        return "the only allowed device that serves every run within tolerance".into();
    }
    if o == 0 {
        let next = &h.options[1];
        return format!(
            "most precise of {} that serve every run (next: {}, worst u {:.2} %)",
            served.len(),
            names(next.way),
            next.worst * 100.0
        );
    }
    let better = &h.options[0];
    format!(
        "{} would be more precise (worst u {:.2} %) but the station's counts (per_station) leave it to another stock",
        names(better.way),
        better.worst * 100.0
    )
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::reference::glassware::tests::pipet;

    #[test]
    fn volumetric_pipets_combine_into_every_sum_with_the_fewest_fills() {
        // 10 mL (up to 2 fills) and 5 mL (up to 2): 5, 10, 15, 20, 25, 30 mL; 10 mL is one
        // fill of the 10 mL pipet rather than two of the 5 mL one.
        let devices = vec![pipet(10.0), pipet(5.0)];
        let table = combinations(&[0, 1], &devices, 0.05);
        let volumes: Vec<f64> = table.iter().map(|(v, _)| (v * 1e3).round()).collect();
        assert_eq!(volumes, vec![5.0, 10.0, 15.0, 20.0, 25.0, 30.0]);
        assert_eq!(table[1].1.parts, vec![(0, 1)]);
    }

    #[test]
    fn a_shared_pipet_is_one_per_station_and_a_buret_never_is() {
        let mut p = pipet(1.0);
        assert_eq!(units_needed(&p, 3), 3);
        p.shared = true;
        assert_eq!(units_needed(&p, 3), 1);
        let mut b = p.clone();
        b.kind = DeviceKind::Buret;
        assert_eq!(units_needed(&b, 3), 3);
    }
}
