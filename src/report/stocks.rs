//! The stock preparation sheet as data ("format": "clockprep-stocks/1").

use super::*;
use crate::lab::recipes::Preparation;

/// Version tag of the `clockprep stocks` JSON layout.
pub const STOCKS_FORMAT: &str = "clockprep-stocks/1";

/// The stock preparation sheet of `clockprep stocks`.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct StockSheet {
    pub format: &'static str,
    pub title: String,
    pub spec: String,
    pub stations: u32,
    pub replicates: u32,
    #[serde(rename = "overage_pct")]
    pub overage_pct: f64,
    pub stocks: Vec<StockPrep>,
    /// Stocks worth standardizing (their own uncertainty is most of a target's in some run),
    /// and masses too small for the balance, in words.
    pub advice: Vec<String>,
    /// Readability of the balance the masses are checked against, g, and whether the spec
    /// gave it (else the two-decimal default).
    #[serde(rename = "balance_g")]
    pub balance: f64,
    pub balance_stated: bool,
    /// Masses under 100 readabilities of the balance, with the alternatives.
    pub small_masses: Vec<SmallMassReport>,
    /// What the lab leaves for the waste bottle: the week's totals and each section's.
    pub waste: WasteReport,
    /// The lab sections (`[[section]]`), in date order; empty for a one-section spec.
    pub sections: Vec<SectionReport>,
    /// The make-up schedule, day by day (empty for a one-section spec): what to make that
    /// day, what is used from an earlier day's batch, and what to fetch for it.
    pub schedule: Vec<ScheduleDay>,
    /// One line per batch to make, to tick off with the date and initials.
    pub checklist: Vec<CheckItem>,
    /// What to fetch from the store for the whole week: each solid or reagent with its total.
    pub fetch: Vec<FetchItem>,
    pub cautions: Vec<String>,
}

/// A lab section as the stocks sheet names it.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct SectionReport {
    pub name: String,
    pub date: String,
    pub weekday: String,
    pub stations: u32,
    pub replicates: u32,
}

/// A day of the make-up schedule.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct ScheduleDay {
    pub date: String,
    /// "Mon".
    pub weekday: String,
    pub sections: Vec<String>,
    /// The batches made up this day.
    pub make: Vec<ScheduleMake>,
    /// Stocks this day's sections use from a batch made on an earlier day.
    pub from_earlier: Vec<ScheduleMake>,
    /// What to fetch from the store for this day's batches.
    pub fetch: Vec<FetchItem>,
}

/// A batch on the schedule.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct ScheduleMake {
    pub stock: String,
    /// The flasks, e.g. "1 x 500 mL + 1 x 50 mL".
    pub flasks: String,
    /// mL made up in them.
    #[serde(rename = "made_mL")]
    pub made_ml: f64,
    pub made_on: String,
    /// The last date it may be used (null when the reagent data has no entry).
    pub use_by: Option<String>,
}

/// A batch of a stock to make, on the checklist.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct CheckItem {
    pub stock: String,
    /// The planned day of making (null for a one-section spec) and the sections it serves.
    pub made_on: Option<String>,
    pub for_sections: Vec<String>,
    /// The last date it may be used, from the planned day (null without sections or data).
    pub use_by_date: Option<String>,
    /// The flasks, e.g. "1 x 1000 mL + 1 x 250 mL".
    pub flasks: String,
    /// What to weigh, measure or dilute with.
    pub with: String,
    /// How long it is used for: 0 on the day it is made; null when the data has no entry.
    pub keeps_days: Option<u32>,
    /// The expiry in words ("on the day made", "7 days after making").
    pub use_by: String,
}

/// A solid or reagent to fetch from the store.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct FetchItem {
    /// Its formula (or the stock's name when it has none, e.g. an indicator).
    pub item: String,
    /// Total to weigh out, g, or to measure, mL (null for an indicator made as usual).
    pub grams: Option<f64>,
    #[serde(rename = "mL")]
    pub ml: Option<f64>,
    pub for_stocks: Vec<String>,
    pub hazard_codes: Vec<String>,
    pub signal_word: Option<&'static str>,
}

/// Flasks of one size for a stock, and the amount (g or mL) each takes.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct FlaskUse {
    #[serde(rename = "mL")]
    pub ml: f64,
    pub count: u32,
    pub amount: Option<f64>,
}

/// The lab's waste: the week's figures (for a one-section spec, the lab's), and each
/// section's when the spec has sections.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct WasteReport {
    #[serde(flatten)]
    pub week: WasteFigures,
    pub by_section: Vec<SectionWaste>,
}

/// One section's waste: its spent mixtures, and the batches discarded after it (a batch is
/// discarded after the last section it serves).
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct SectionWaste {
    pub section: String,
    pub date: String,
    #[serde(flatten)]
    pub figures: WasteFigures,
}

/// Spent mixtures, left-over stock, and the solutes in them.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct WasteFigures {
    /// Every trial's mixture, mL.
    #[serde(rename = "spent_mixture_mL")]
    pub spent_mixture_ml: f64,
    /// Each stock made up and not delivered into a run or a dilution, mL.
    pub leftover: Vec<LeftoverReport>,
    #[serde(rename = "leftover_total_mL")]
    pub leftover_total_ml: f64,
    /// Each weighed or measured solute made up, all of which ends as waste.
    pub solutes: Vec<WasteSolute>,
}

#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct LeftoverReport {
    pub stock: String,
    #[serde(rename = "mL")]
    pub ml: f64,
}

#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct WasteSolute {
    pub stock: String,
    pub solute: String,
    pub grams: f64,
    pub hazard_codes: Vec<String>,
}

/// A mass too small for the balance.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct SmallMassReport {
    pub stock: String,
    pub grams: f64,
    pub readabilities: f64,
    /// The stronger stock to weigh instead, when one fits the shelf's flasks.
    pub concentrate: Option<ConcentrateReport>,
    /// The smallest larger flask whose mass is enough, and that mass.
    #[serde(rename = "larger_flask_mL")]
    pub larger_flask_ml: Option<f64>,
    pub larger_flask_grams: Option<f64>,
}

#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct ConcentrateReport {
    pub name: String,
    pub factor: f64,
    pub grams: f64,
    #[serde(rename = "flask_mL")]
    pub flask_ml: f64,
    /// mL of concentrate made up to the stock's flask.
    #[serde(rename = "aliquot_mL")]
    pub aliquot_ml: f64,
    /// The concentrate's `[[stock]]` to paste into the spec; the stock itself then takes
    /// `dilute_from` (the name) instead of `solute` and `purity`.
    pub toml: String,
}

/// The concentrate's `[[stock]]` table for a weighed stock.
fn concentrate_toml(st: &crate::spec::Stock, name: &str, factor: f64) -> String {
    use crate::spec::Recipe;
    let q = |s: &str| toml::Value::String(s.to_string()).to_string();
    let contains: Vec<String> = st
        .contains
        .iter()
        .map(|(sp, c)| format!("{} = {}", q(sp), q(&format!("{} M", sig10(c * factor)))))
        .collect();
    let mut lines = vec![
        "[[stock]]".to_string(),
        format!("name = {}", q(name)),
        format!("solute = {}", q(st.solute.as_deref().unwrap_or(""))),
    ];
    if let Recipe::Weigh { purity, .. } = st.recipe {
        if purity < 1.0 {
            lines.push(format!(
                "purity = {}",
                q(&format!("{} %", sig10(purity * 100.0)))
            ));
        }
    }
    lines.push(format!("contains = {{ {} }}", contains.join(", ")));
    lines.push("in_runs = false".into());
    let mut out = lines.join("\n");
    out.push('\n');
    out
}

/// One batch of a stock: a one-section spec has one per stock; with sections, a stock made
/// fresh on the day has one per day it is used, a stable one a single batch.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct StockPrep {
    pub name: String,
    /// The planned day of making (null for a one-section spec), and the sections it serves.
    pub made_on: Option<String>,
    pub for_sections: Vec<String>,
    /// Relative standard uncertainty (k = 1) of its concentration, percent, and its basis.
    pub uncertainty_pct: f64,
    pub uncertainty_basis: String,
    pub solute: Option<String>,
    #[serde(rename = "molar_mass_g_per_mol")]
    pub molar_mass: Option<f64>,
    /// Concentration of the solute's formula unit, mol/L.
    #[serde(rename = "solute_concentration_M")]
    pub solute_concentration: Option<f64>,
    /// What to make: runs (with overage) plus what dilutions draw.
    #[serde(rename = "need_mL")]
    pub need_ml: f64,
    #[serde(rename = "drawn_by_dilutions_mL")]
    pub drawn_ml: f64,
    /// The largest flask (mL) and how many flasks in all; `flasks` lists them by size.
    #[serde(rename = "flask_mL")]
    pub flask_ml: f64,
    pub flask_count: u32,
    pub flasks: Vec<FlaskUse>,
    /// The recipe for the largest flask (`flasks` gives each size's amount).
    pub recipe: RecipeReport,
    pub hazard_codes: Vec<String>,
    pub hazards: Option<String>,
    pub stability: Option<String>,
    /// Source of the hazard and stability lines.
    pub data_source: Option<String>,
}

#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct RecipeReport {
    /// "weigh", "measure", "dilute" or "as usual".
    pub kind: &'static str,
    #[serde(rename = "grams_per_flask")]
    pub grams: Option<f64>,
    #[serde(rename = "mL_per_flask")]
    pub ml: Option<f64>,
    pub from: Option<String>,
    #[serde(rename = "purity_pct")]
    pub purity_pct: Option<f64>,
    #[serde(rename = "mass_fraction_pct")]
    pub mass_fraction_pct: Option<f64>,
    #[serde(rename = "density_g_per_mL")]
    pub density: Option<f64>,
    /// The instruction in words, per flask.
    pub text: String,
}

pub fn build_stocks(
    spec: &Spec,
    lab: &Lab,
    preps: &[crate::lab::recipes::Preparation],
    dominant: &[(usize, Vec<String>)],
    small: &[crate::lab::recipes::SmallMass],
    waste: &crate::lab::waste::WeekWaste,
    week: &crate::lab::schedule::Week,
) -> StockSheet {
    let mut advice: Vec<String> = dominant
        .iter()
        .map(|(s, species)| {
            let st = &lab.stocks[*s];
            format!(
                "Standardize '{}' (u {} %: {}): it is most of the uncertainty of {} in the runs; once titrated, give its uncertainty in its [[stock]], e.g. uncertainty = \"0.3 %\".",
                st.name,
                crate::units::sig(st.uncertainty * 100.0, 2),
                st.uncertainty_basis,
                species.join(", ")
            )
        })
        .collect();
    use crate::lab::recipes::Action;
    use crate::spec::Recipe;
    let made_on = |p: &Preparation| week.days[p.days[0]].date;
    let sections_of = |p: &Preparation| -> Vec<String> {
        p.days
            .iter()
            .flat_map(|&d| &week.days[d].groups)
            .filter_map(|&g| week.groups[g].name.clone())
            .collect()
    };
    let use_by_date = |p: &Preparation| -> Option<time::Date> {
        let keeps = crate::lab::schedule::keeps_days(lab, p.stock)?;
        made_on(p)?.checked_add(time::Duration::days(keeps as i64))
    };
    let stocks = preps
        .iter()
        .map(|p| {
            let st = &lab.stocks[p.stock];
            let largest = p.flasks.largest();
            let flask = format!("{} mL volumetric flask", sig10(largest * 1e3));
            let amount = p.action.for_flask(largest);
            let (molar_mass, solute_concentration, purity, w, rho) = match &st.recipe {
                Recipe::Weigh { concentration, molar_mass, purity, .. } => (Some(*molar_mass), Some(*concentration), Some(*purity), None, None),
                Recipe::Measure { concentration, molar_mass, mass_fraction, density, .. } => {
                    (Some(*molar_mass), Some(*concentration), None, Some(*mass_fraction), Some(*density))
                }
                _ => (None, None, None, None, None),
            };
            let solute = st.solute.clone().unwrap_or_default();
            let (kind, grams, volume, from, text) = match &p.action {
                Action::Weigh { .. } => (
                    "weigh",
                    amount,
                    None,
                    None,
                    format!(
                        "Weigh {:.4} g of {solute} ({:.2} g/mol{}) into a {flask}; dissolve in water and make up to the mark.",
                        amount.unwrap_or(0.0),
                        molar_mass.unwrap_or(0.0),
                        purity.filter(|p| *p < 1.0).map(|p| format!(", assay {} %", sig10(p * 100.0))).unwrap_or_default()
                    ),
                ),
                Action::Measure { .. } => (
                    "measure",
                    None,
                    amount,
                    None,
                    format!(
                        "Half fill a {flask} with water, add {:.2} mL of {solute} reagent ({} %, {} g/mL) — always reagent into water — and make up to the mark once cool.",
                        amount.unwrap_or(0.0),
                        sig10(w.unwrap_or(0.0) * 100.0),
                        rho.unwrap_or(0.0)
                    ),
                ),
                Action::Dilute { from, .. } => (
                    "dilute",
                    None,
                    amount,
                    Some(lab.stocks[*from].name.clone()),
                    format!(
                        "Deliver {:.2} mL of '{}' ({}) into a {flask} and make up to the mark with water.",
                        amount.unwrap_or(0.0),
                        lab.stocks[*from].name,
                        aliquot_device(lab, amount.unwrap_or(0.0) * 1e-3)
                    ),
                ),
                Action::AsUsual => ("as usual", None, None, None, format!("Make up in a {flask} as your method describes (no formula to compute from).")),
            };
            // Every flask of the set: the largest as above, the others with their own amount.
            let unit = if matches!(p.action, Action::Weigh { .. }) { "g" } else { "mL" };
            let mut text = text;
            for (i, (f, n)) in p.flasks.0.iter().enumerate() {
                let each = p.action.for_flask(*f);
                match (i, each) {
                    (0, _) if *n > 1 => text.push_str(&format!(" Make {n} such flasks.")),
                    (0, _) => {}
                    (_, Some(a)) => text.push_str(&format!(
                        " Also make {n} x {} mL the same way, {} {unit} {}{}.",
                        sig10(f * 1e3),
                        if unit == "g" { format!("{a:.4}") } else { format!("{a:.2}") },
                        if *n > 1 { "each" } else { "in it" },
                        if matches!(p.action, Action::Dilute { .. }) {
                            format!(" ({})", aliquot_device(lab, a * 1e-3))
                        } else {
                            String::new()
                        }
                    )),
                    (_, None) => text.push_str(&format!(" Also make {n} x {} mL.", sig10(f * 1e3))),
                }
            }
            let flasks: Vec<FlaskUse> = p
                .flasks
                .0
                .iter()
                .map(|(f, n)| FlaskUse {
                    ml: ml(*f),
                    count: *n,
                    amount: p.action.for_flask(*f).map(sig10),
                })
                .collect();
            let species: Vec<&str> = st.contains.iter().map(|(s, _)| s.as_str()).collect();
            let reagent = crate::reference::reagents::reagent_for(st.solute.as_deref(), &species);
            StockPrep {
                name: st.name.clone(),
                made_on: made_on(p).map(crate::spec::date_text),
                for_sections: sections_of(p),
                uncertainty_pct: sig10(st.uncertainty * 100.0),
                uncertainty_basis: st.uncertainty_basis.clone(),
                solute: st.solute.clone(),
                molar_mass: molar_mass.map(sig10),
                solute_concentration: solute_concentration.map(sig10),
                need_ml: ml(p.need),
                drawn_ml: ml(p.drawn),
                flask_ml: ml(largest),
                flask_count: p.flasks.count(),
                flasks,
                recipe: RecipeReport {
                    kind,
                    grams: grams.map(sig10),
                    ml: volume.map(sig10),
                    from,
                    purity_pct: purity.map(|p| sig10(p * 100.0)),
                    mass_fraction_pct: w.map(|x| sig10(x * 100.0)),
                    density: rho.map(sig10),
                    text,
                },
                hazard_codes: reagent.map(|r| r.ghs.clone()).unwrap_or_default(),
                hazards: reagent.map(|r| r.plain.clone()),
                stability: reagent.map(|r| r.stability.clone()),
                data_source: reagent.map(|r| r.source.clone()),
            }
        })
        .collect();
    let used = preps.iter().map(|p| {
        let st = &lab.stocks[p.stock];
        (
            st.solute.as_deref(),
            st.contains
                .iter()
                .map(|(s, _)| s.as_str())
                .collect::<Vec<_>>(),
        )
    });
    let balance = sig10(lab.balance);
    let small_masses: Vec<SmallMassReport> = small
        .iter()
        .map(|m| {
            let st = &lab.stocks[m.stock];
            let concentrate = m.concentrate.as_ref().map(|c| {
                let name = format!("{} concentrate x{}", st.name, sig10(c.factor));
                ConcentrateReport {
                    toml: concentrate_toml(st, &name, c.factor),
                    name,
                    factor: c.factor,
                    grams: sig10(c.grams),
                    flask_ml: ml(c.flasks.smallest()),
                    aliquot_ml: ml(c.aliquot),
                }
            });
            let mut text = format!(
                "'{}': {:.4} g is {:.0} readabilities of the {balance} g balance (one readability is {:.1} % of it); weigh 100 or more (about 1 %).",
                st.name,
                m.grams,
                m.readabilities.floor(),
                100.0 / m.readabilities
            );
            if let Some(c) = &concentrate {
                text.push_str(&format!(
                    " Make '{}' instead ({:.4} g in a {} mL flask) and deliver {} mL of it into each {} mL flask of '{}' (1/{} of the flask's volume, M1V1 = M2V2): paste its [[stock]] (below) above that of '{}' and give it dilute_from = \"{}\" in place of its solute and purity.",
                    c.name, c.grams, sig10(c.flask_ml), sig10(c.aliquot_ml),
                    sig10(ml(preps.iter().find(|p| p.stock == m.stock).map_or(0.0, |p| p.flasks.smallest()))),
                    st.name, sig10(c.factor), st.name, c.name
                ));
            }
            if let Some((f, g)) = m.larger_flask {
                text.push_str(&format!(
                    " Or make it in a {} mL flask ({g:.4} g).",
                    sig10(f * 1e3)
                ));
            }
            if concentrate.is_none() && m.larger_flask.is_none() {
                text.push_str(" No round concentrate or larger flask on the shelf reaches 100: use a balance reading to less, and give it as [plan] balance.");
            }
            advice.push(text);
            SmallMassReport {
                stock: st.name.clone(),
                grams: sig10(m.grams),
                readabilities: sig10(m.readabilities),
                concentrate,
                larger_flask_ml: m.larger_flask.map(|(f, _)| ml(f)),
                larger_flask_grams: m.larger_flask.map(|(_, g)| sig10(g)),
            }
        })
        .collect();
    let waste = WasteReport {
        week: waste_figures(lab, &waste.week),
        by_section: if week.dated() {
            waste
                .sections
                .iter()
                .zip(&week.groups)
                .map(|(w, g)| SectionWaste {
                    section: g.name.clone().unwrap_or_default(),
                    date: week.days[g.day]
                        .date
                        .map(crate::spec::date_text)
                        .unwrap_or_default(),
                    figures: waste_figures(lab, w),
                })
                .collect()
        } else {
            Vec::new()
        },
    };
    let mut checklist = Vec::new();
    for p in preps {
        let st = &lab.stocks[p.stock];
        let keeps_days = crate::lab::schedule::keeps_days(lab, p.stock);
        let use_by = match keeps_days {
            Some(0) => "on the day made".to_string(),
            Some(d) => format!("{d} days after making"),
            None if week.dated() => "as your method says (planned fresh each day)".to_string(),
            None => "as your method says".to_string(),
        };
        let with = match &p.action {
            Action::Weigh { .. } => format!("balance reading to {} g", sig10(lab.balance)),
            Action::Measure { .. } => {
                "graduated cylinder or measuring pipet, in a fume cupboard; reagent into water"
                    .into()
            }
            Action::Dilute { ml_per_l, .. } => {
                let each: Vec<String> = p
                    .flasks
                    .0
                    .iter()
                    .map(|(f, _)| {
                        let v = ml_per_l * f * 1e-3;
                        format!("{} mL: {}", sig10(v * 1e3), aliquot_device(lab, v))
                    })
                    .collect();
                format!("aliquots {}", each.join("; "))
            }
            Action::AsUsual => "as your method describes".into(),
        };
        checklist.push(CheckItem {
            stock: st.name.clone(),
            made_on: made_on(p).map(crate::spec::date_text),
            for_sections: sections_of(p),
            use_by_date: use_by_date(p).map(crate::spec::date_text),
            flasks: p.flasks.label(),
            with,
            keeps_days,
            use_by,
        });
    }
    let fetch = fetch_list(lab, preps.iter());
    let schedule: Vec<ScheduleDay> = week
        .days
        .iter()
        .enumerate()
        .filter_map(|(d, day)| {
            let date = day.date?;
            let item = |p: &Preparation| ScheduleMake {
                stock: lab.stocks[p.stock].name.clone(),
                flasks: p.flasks.label(),
                made_ml: ml(p.flasks.total()),
                made_on: made_on(p).map(crate::spec::date_text).unwrap_or_default(),
                use_by: use_by_date(p).map(crate::spec::date_text),
            };
            Some(ScheduleDay {
                date: crate::spec::date_text(date),
                weekday: crate::spec::day_text(date)[..3].to_string(),
                sections: day
                    .groups
                    .iter()
                    .filter_map(|&g| week.groups[g].name.clone())
                    .collect(),
                make: preps.iter().filter(|p| p.days[0] == d).map(item).collect(),
                from_earlier: preps
                    .iter()
                    .filter(|p| p.days[0] != d && p.days.contains(&d))
                    .map(item)
                    .collect(),
                fetch: fetch_list(lab, preps.iter().filter(|p| p.days[0] == d)),
            })
        })
        .collect();
    let sections = spec
        .sections
        .iter()
        .map(|s| SectionReport {
            name: s.name.clone(),
            date: s.date_text(),
            weekday: crate::spec::day_text(s.date)[..3].to_string(),
            stations: s.stations,
            replicates: s.replicates,
        })
        .collect();
    StockSheet {
        format: STOCKS_FORMAT,
        title: spec.title.clone(),
        spec: spec.source.name.clone(),
        stations: spec.stations,
        replicates: spec.replicates,
        overage_pct: sig10(lab.overage * 100.0),
        stocks,
        advice,
        balance: lab.balance,
        balance_stated: lab.balance_stated,
        small_masses,
        waste,
        sections,
        schedule,
        checklist,
        fetch,
        cautions: reagents::cautions(used),
    }
}

/// The glassware of the spec that delivers a dilution's aliquot (`volume` L) in at most two
/// additions, as the bench would (volumetric pipets first); else the pipet to fetch.
fn aliquot_device(lab: &Lab, volume: f64) -> String {
    let all: Vec<usize> = (0..lab.devices.len()).collect();
    match crate::reference::glassware::find_delivery_in_two(volume, &all, &lab.devices) {
        Some(d) if !d.parts.is_empty() => format!("with the {}", d.describe(&lab.devices)),
        _ => format!(
            "with a {} mL volumetric pipet: no [[device]] of the spec delivers it",
            sig10(volume * 1e3)
        ),
    }
}

/// The waste figures of a section or the week, with the stocks' names and hazard codes.
fn waste_figures(lab: &Lab, w: &crate::lab::waste::Waste) -> WasteFigures {
    let leftover: Vec<LeftoverReport> = w
        .leftover
        .iter()
        .map(|(s, l)| LeftoverReport {
            stock: lab.stocks[*s].name.clone(),
            ml: ml(*l),
        })
        .collect();
    WasteFigures {
        spent_mixture_ml: ml(w.spent),
        leftover_total_ml: ml(w.leftover.iter().map(|x| x.1).sum()),
        leftover,
        solutes: w
            .solutes
            .iter()
            .map(|x| {
                let st = &lab.stocks[x.stock];
                let species: Vec<&str> = st.contains.iter().map(|(y, _)| y.as_str()).collect();
                WasteSolute {
                    stock: st.name.clone(),
                    solute: x.formula.clone(),
                    grams: sig10(x.grams),
                    hazard_codes: crate::reference::reagents::reagent_for(
                        st.solute.as_deref(),
                        &species,
                    )
                    .map(|r| r.ghs.clone())
                    .unwrap_or_default(),
                }
            })
            .collect(),
    }
}

/// The solids and reagents to fetch for some batches: each with its total (assay included).
fn fetch_list<'a>(lab: &Lab, preps: impl Iterator<Item = &'a Preparation>) -> Vec<FetchItem> {
    use crate::lab::recipes::Action;
    let mut fetch: Vec<FetchItem> = Vec::new();
    for p in preps {
        let st = &lab.stocks[p.stock];
        let species: Vec<&str> = st.contains.iter().map(|(x, _)| x.as_str()).collect();
        let reagent = crate::reference::reagents::reagent_for(st.solute.as_deref(), &species);
        let (item, grams, volume) = match &p.action {
            Action::Weigh { grams_per_l } => (
                st.solute.clone().unwrap_or_default(),
                Some(grams_per_l * p.flasks.total()),
                None,
            ),
            Action::Measure { ml_per_l } => (
                format!("{} reagent", st.solute.clone().unwrap_or_default()),
                None,
                Some(ml_per_l * p.flasks.total()),
            ),
            Action::Dilute { .. } => continue,
            Action::AsUsual => (st.name.clone(), None, None),
        };
        let codes = reagent.map(|r| r.ghs.clone()).unwrap_or_default();
        match fetch
            .iter_mut()
            .find(|f| f.item == item && f.ml.is_some() == volume.is_some())
        {
            Some(f) => {
                f.grams = f.grams.zip(grams).map(|(a, b)| a + b).or(f.grams);
                f.ml = f.ml.zip(volume).map(|(a, b)| a + b).or(f.ml);
                if !f.for_stocks.contains(&st.name) {
                    f.for_stocks.push(st.name.clone());
                }
            }
            None => fetch.push(FetchItem {
                item,
                grams,
                ml: volume,
                for_stocks: vec![st.name.clone()],
                signal_word: crate::reference::reagents::signal_word(&codes),
                hazard_codes: codes,
            }),
        }
    }
    for f in &mut fetch {
        f.grams = f.grams.map(sig10);
        f.ml = f.ml.map(sig10);
    }
    fetch
}
