//! The mixing sheet, the forecast sheet and the stock sheet as pages.

use super::page::{headers, Align, Block, Chart, Item, Page, Section, Table};
use super::words::{forecast_lines, ml_decimals, mm, pour, secs, sig, NOT_A_GUARANTEE, PRIOR_NOTE};
use super::{
    FetchItem, ForecastSettingsReport, ForecastSheet, PlanReport, ReactionReport, RunReport,
    ScheduleMake, StockSheet,
};

/// The cautions box, last on every sheet.
fn cautions(lines: &[String]) -> Section {
    let mut s = Section::untitled();
    s.push(Block::Cautions(lines.to_vec()));
    s
}

/// The prior rate law with every value's source.
fn prior_section(r: &ReactionReport, s: &ForecastSettingsReport) -> Section {
    let mut out = Section::new("Rate law prior");
    out.para(format!(
        "{}: rate species {}, timing species {} via {}; nu = {} mol {} per mol {}.",
        r.name,
        r.rate_species,
        r.timing_species,
        r.intermediate,
        sig(r.nu, 3),
        r.timing_species,
        r.rate_species
    ));
    let mut items = Vec::new();
    for t in &r.terms {
        let orders: Vec<String> = t
            .orders
            .0
            .iter()
            .map(|(sp, n)| format!("[{sp}]^{n}"))
            .collect();
        let ea = t
            .activation_energy
            .map(|e| format!(", Ea {e} kJ/mol"))
            .unwrap_or_else(|| ", no activation energy (no temperature scaling)".into());
        items.push(Item {
            text: format!(
                "k = {} {} at {:.1} °C{ea}; rate term k {}",
                t.k,
                t.k_unit,
                t.at_c,
                orders.join(" ")
            ),
            details: t.source.iter().map(|s| format!("source: {s}")).collect(),
        });
    }
    if let Some(i) = r.k_at_ionic_strength {
        items.push(Item {
            text: format!(
                "k holds at ionic strength {} mM and is scaled to each run's by the Brønsted–Bjerrum relation with Davies activity coefficients (the salt effect is on)",
                sig(i * 1e3, 3)
            ),
            details: Vec::new(),
        });
    }
    if let Some(v) = r.visible_threshold {
        let factor = r
            .visible_factor
            .map(|f| format!(", known within ×/÷ {}", sig(f, 2)))
            .unwrap_or_default();
        let what = match (r.triiodide_k, r.triiodide_dh) {
            (Some(k), Some(dh)) => format!(
                "I3- (starch shows triiodide: the iodine needed follows I2 + I- ⇌ I3-, K = {k} at 25 °C, ΔH {dh} kJ/mol, Palmer, Ramette and Mesmer 1984)"
            ),
            _ => format!("{} (its total concentration)", r.intermediate),
        };
        items.push(Item {
            text: format!("visible at {} µM {what}{factor}", sig(v * 1e6, 3)),
            details: r
                .visible_source
                .iter()
                .map(|s| format!("source: {s}"))
                .collect(),
        });
    }
    out.push(Block::List(items));
    let period = s
        .lab_period_s
        .map(|p| format!("; lab period {}", secs(p)))
        .unwrap_or_default();
    out.para(format!(
        "Planned {:.1} °C ± {:.1} °C; timing window {} to {}; handling {} per trial{period}.",
        s.temperature_c,
        s.band_c,
        secs(s.window_s[0]),
        secs(s.window_s[1]),
        secs(s.handling_per_run_s)
    ));
    out.para(PRIOR_NOTE);
    out
}

fn run_section(r: &RunReport, n: usize, of: usize, dec: usize) -> Section {
    let mut s = Section::new(format!("Run {n} of {of}: {}", r.name));
    if let Some(first) = &r.same_as {
        s.para(format!("Same targets and recipe as run '{first}'."));
    }
    if let Some(note) = &r.note {
        s.para(format!("Note: {note}"));
    }
    let p = &r.portions;
    for (label, items, total) in [("A", &p.a, p.a_ml), ("B", &p.b, p.b_ml)] {
        let mut rows: Vec<Vec<String>> = items
            .iter()
            .map(|i| {
                vec![
                    i.stock.clone(),
                    format!("{:.*}", dec, i.ml),
                    i.device.clone(),
                ]
            })
            .collect();
        rows.push(vec![
            format!("total in vessel {label}"),
            format!("{:.*}", dec, total),
            String::new(),
        ]);
        s.push(Block::Subheading(format!("Vessel {label}")));
        s.push(Block::Table(
            Table::with_align(
                headers(&["add", "volume (mL)", "deliver with"]),
                vec![Align::Left, Align::Right, Align::Left],
                rows,
            )
            .nested(),
        ));
    }
    s.push(Block::Instruction(pour(&p.pour)));
    let rows: Vec<Vec<String>> = r
        .concentrations
        .0
        .iter()
        .map(|(sp, c)| {
            vec![
                sp.clone(),
                r.targets.get(sp).map(mm).unwrap_or_else(|| "-".into()),
                mm(*c),
                r.deviation
                    .get(sp)
                    .map(|d| format!("{:+.2}", d * 100.0))
                    .unwrap_or_else(|| "-".into()),
                r.uncertainty
                    .get(sp)
                    .map(|u| format!("{:.2}", u * 100.0))
                    .unwrap_or_else(|| "-".into()),
            ]
        })
        .collect();
    s.push(Block::Table(
        Table::numeric(
            headers(&[
                "species",
                "target (mM)",
                "final (mM)",
                "deviation (%)",
                "u (%)",
            ]),
            rows,
        )
        .nested(),
    ));
    s.detail("u: standard uncertainty (k = 1) from glassware tolerances and stock concentrations.");
    match (
        r.targets.get("ionic strength"),
        r.deviation.get("ionic strength"),
    ) {
        (Some(t), Some(d)) => s.detail(format!(
            "ionic strength: {} mM (held at {} mM, {:+.2} %)",
            mm(r.ionic_strength),
            mm(t),
            d * 100.0
        )),
        _ => s.detail(format!("ionic strength: {} mM", mm(r.ionic_strength))),
    };
    if let Some(f) = &r.forecast {
        for line in forecast_lines(f) {
            s.detail(line);
        }
        s.push(Block::Flags {
            flags: f.warnings.clone(),
            nested: true,
        });
    }
    s.push(Block::Flags {
        flags: r.flags.clone(),
        nested: true,
    });
    s
}

impl PlanReport {
    /// The mixing sheet.
    pub fn page(&self) -> Page {
        let dec = ml_decimals(self);
        let title = format!("Mixing sheet: {}", self.title);
        let mut head = Section::new(title.clone());
        head.para(format!("Spec: {}", self.spec));
        let who = if self.sections.is_empty() {
            format!(
                "{} station(s) x {} replicate(s)",
                self.stations, self.replicates
            )
        } else {
            format!(
                "{} lab sections ({})",
                self.sections.len(),
                self.sections
                    .iter()
                    .map(|x| format!(
                        "{} {} {}: {} x {}",
                        x.name, x.weekday, x.date, x.stations, x.replicates
                    ))
                    .collect::<Vec<_>>()
                    .join("; ")
            )
        };
        let mut line = format!(
            "Each run: {:.*} mL in two vessels | {who} | overage {} % | tolerance {} %",
            dec,
            self.total_volume_ml,
            sig(self.overage_pct, 3),
            sig(self.tolerance_pct, 2)
        );
        if let Some(t) = self.temperature_c {
            line.push_str(&format!(" | planned {t:.1} °C"));
        }
        head.para(line);
        let t = &self.timing;
        head.para(format!(
            "Timing reagent: {} {} mM in every run = {:.*} mL of '{}' ({})",
            t.species,
            mm(t.concentration),
            dec,
            t.ml,
            t.stock,
            t.device
        ));
        if let Some(i) = &self.ionic_strength {
            head.para(format!(
                "Ionic strength held at {} mM with '{}'",
                mm(i.held),
                i.using
            ));
        }
        if self.flagged {
            let n = self.runs_needing_a_look();
            let what = match (n, self.warnings.is_empty()) {
                (0, _) => "the plan needs a look".to_string(),
                (1, true) => "1 run needs a look".to_string(),
                (n, true) => format!("{n} runs need a look"),
                (1, false) => "1 run and the plan need a look".to_string(),
                (n, false) => format!("{n} runs and the plan need a look"),
            };
            head.para(format!("FLAGGED: {what}; see FLAG lines below."));
        }
        let mut sections = vec![head];
        if let Some(s) = &self.forecast_settings {
            let mut chart = Section::untitled();
            chart.push(Block::Chart(Chart {
                title: self.title.clone(),
                rows: self.chart_rows(),
                window: (s.window_s[0], s.window_s[1]),
                band: s.band_c,
            }));
            sections.push(chart);
        }

        let mut volumes = Section::new("Volumes per run (mL)");
        let stocks = self.volume_columns();
        let mut cols = vec!["run".to_string()];
        cols.extend(stocks.iter().map(|s| s.to_string()));
        let mut rows: Vec<Vec<String>> = self
            .runs
            .iter()
            .map(|r| {
                let mut row = vec![r.name.clone()];
                row.extend(stocks.iter().map(|s| format!("{:.*}", dec, r.volume_of(s))));
                row
            })
            .collect();
        if self.reaction.is_some() {
            cols.push("predicted (s)".into());
            for (row, r) in rows.iter_mut().zip(&self.runs) {
                row.push(
                    r.forecast
                        .as_ref()
                        .and_then(|f| f.time_s)
                        .map_or("-".into(), |t| format!("{t:.1}")),
                );
            }
        }
        volumes.push(Block::Table(Table::numeric(cols, rows)));
        sections.push(volumes);
        sections.push(self.station_section());

        let of = self.runs.len();
        for (i, r) in self.runs.iter().enumerate() {
            sections.push(run_section(r, i + 1, of, dec));
        }
        sections.push(self.totals_section());
        if !self.sections.is_empty() {
            sections.push(sections_section(&self.sections, self.reaction.is_some()));
        }
        if let (Some(r), Some(s)) = (&self.reaction, &self.forecast_settings) {
            sections.push(prior_section(r, s));
        }
        sections.push(cautions(&self.cautions));
        Page { title, sections }
    }

    /// What each station sets up, as a page of its own: the glassware list and the tray.
    pub fn glassware_page(&self) -> Page {
        let title = format!("Bench glassware: {}", self.title);
        let mut head = Section::new(title.clone());
        head.para(format!("Spec: {}", self.spec));
        let who = if self.sections.is_empty() {
            format!("{} station(s)", self.stations)
        } else {
            self.sections
                .iter()
                .map(|x| format!("{} {}: {} station(s)", x.name, x.date, x.stations))
                .collect::<Vec<_>>()
                .join("; ")
        };
        head.para(format!(
            "{who}; every station sets up the same glassware and tray."
        ));
        Page {
            title,
            sections: vec![head, self.station_section(), cautions(&self.cautions)],
        }
    }

    /// What one station sets up: the glassware list with the reason for each device, and the
    /// tray of bottles with their fill volumes.
    fn station_section(&self) -> Section {
        let mut s = Section::new("Each station sets up");
        let rows: Vec<Vec<String>> = self
            .glassware
            .iter()
            .map(|g| {
                let mut holds = g.holds.join(", ");
                if g.rinse_between {
                    holds.push_str(" (one pipet: rinse it with the next stock)");
                }
                vec![g.device.clone(), g.per_station.to_string(), holds]
            })
            .collect();
        let align = vec![Align::Left, Align::Right, Align::Left];
        s.push(Block::Subheading("Glassware".into()));
        s.push(Block::Table(Table::with_align(
            headers(&["device", "per station", "holds"]),
            align,
            rows,
        )));
        let items = self
            .device_choices
            .iter()
            .map(|c| {
                let mut details = Vec::new();
                if !c.second_device_runs.is_empty() {
                    details.push(format!(
                        "another device in run(s): {}",
                        c.second_device_runs.join(", ")
                    ));
                }
                Item {
                    text: match c.worst_u_pct {
                        Some(u) => format!(
                            "{}: {} (u up to {} %): {}",
                            c.stock,
                            c.device,
                            sig(u, 2),
                            c.why
                        ),
                        None => format!("{}: {}: {}", c.stock, c.device, c.why),
                    },
                    details,
                }
            })
            .collect();
        s.push(Block::Subheading("Why these devices".into()));
        s.push(Block::List(items));
        s.push(Block::Subheading("Tray".into()));
        let rows: Vec<Vec<String>> = self
            .tray
            .iter()
            .map(|t| {
                vec![
                    t.stock.clone(),
                    format!("{:.1}", t.use_ml),
                    format!("{:.1}", t.overage_ml),
                    format!("{:.1}", t.dead_volume_ml),
                    format!("{:.1}", t.fill_ml),
                ]
            })
            .collect();
        let mut align = vec![Align::Right; 5];
        align[0] = Align::Left;
        s.push(Block::Table(Table::with_align(
            headers(&[
                "bottle",
                "use (mL)",
                "overage (mL)",
                "rinse and fill (mL)",
                "fill (mL)",
            ]),
            align,
            rows,
        )));
        s.push(Block::Detail(format!(
            "use: every run x {} replicate(s); overage {} %; rinse and fill: what the devices holding it take before the first delivery.",
            self.replicates,
            sig(self.overage_pct, 3)
        )));
        s
    }

    fn totals_section(&self) -> Section {
        let mut s = Section::new("Stock to prepare");
        if self.stock_totals.iter().any(|t| t.made_on.is_some()) {
            s.para(format!(
                "Every lab section's runs x its replicates x its stations, plus {} % overage, plus each station's rinse and fill, in the volumetric flasks with the least surplus; one row per batch, by the day it is made (clockprep stocks prints the day-by-day schedule). Per station: at {} replicate(s), the most of any section.",
                sig(self.overage_pct, 3), self.replicates
            ));
        } else {
            s.para(format!(
                "All runs x {} replicate(s) x {} station(s), plus {} % overage, plus each station's rinse and fill, in the volumetric flasks with the least surplus.",
                self.replicates, self.stations, sig(self.overage_pct, 3)
            ));
        }
        let mut rows: Vec<Vec<String>> = self
            .stock_totals
            .iter()
            .map(|t| {
                vec![
                    match &t.made_on {
                        Some(d) => format!("{}, made {d}", t.stock),
                        None => t.stock.clone(),
                    },
                    format!("{:.1}", t.one_set_ml),
                    format!("{:.1}", t.per_station_ml),
                    format!("{:.1}", t.used_ml),
                    format!("{:.1}", t.ml),
                    t.flasks.clone(),
                ]
            })
            .collect();
        rows.push(vec![
            "water (make-up)".into(),
            String::new(),
            String::new(),
            format!("{:.1}", self.water_total_ml),
            String::new(),
            String::new(),
        ]);
        let mut align = vec![Align::Right; 6];
        align[0] = Align::Left;
        align[5] = Align::Left;
        s.push(Block::Table(Table::with_align(
            headers(&[
                "stock",
                "one set (mL)",
                "per station (mL)",
                "whole lab (mL)",
                "prepare (mL)",
                "flask",
            ]),
            align,
            rows,
        )));
        s
    }
}

impl ForecastSheet {
    /// The forecast sheet.
    pub fn page(&self) -> Page {
        let title = format!("Clock-time forecast: {}", self.title);
        let mut head = Section::new(title.clone());
        head.para(format!("Spec: {}", self.spec));
        head.para(format!(
            "Timing reagent: {} {} mM in every run. {NOT_A_GUARANTEE}",
            self.timing.species,
            mm(self.timing.concentration)
        ));
        if self.flagged {
            head.para("FLAGGED: see FLAG lines below.");
        }
        head.push(Block::Flags {
            flags: self.warnings.clone(),
            nested: false,
        });
        let mut chart = Section::untitled();
        chart.push(Block::Chart(Chart {
            title: self.title.clone(),
            rows: self.chart_rows(),
            window: (
                self.forecast_settings.window_s[0],
                self.forecast_settings.window_s[1],
            ),
            band: self.forecast_settings.band_c,
        }));
        let mut cols: Vec<String> = vec!["run".into()];
        cols.extend(
            self.runs[0]
                .concentrations
                .0
                .iter()
                .map(|(s, _)| format!("{s} (mM)")),
        );
        cols.extend(
            [
                "time (s)",
                "band (s)",
                "initial-rate est. (s)",
                "rate (M/s)",
                "max conversion",
            ]
            .map(String::from),
        );
        let rows: Vec<Vec<String>> = self
            .runs
            .iter()
            .map(|r| {
                let f = &r.forecast;
                let mut row = vec![r.name.clone()];
                row.extend(r.concentrations.0.iter().map(|(_, c)| mm(*c)));
                row.push(f.time_s.map_or("-".into(), |t| format!("{t:.1}")));
                row.push(
                    f.band_s
                        .map_or("-".into(), |[a, b]| format!("{a:.1}-{b:.1}")),
                );
                row.push(f.initial_rate_s.map_or("-".into(), |t| format!("{t:.1}")));
                row.push(f.rate.map_or("-".into(), |v| format!("{v:.3e}")));
                row.push(match (f.max_conversion, &f.max_conversion_species) {
                    (Some(c), Some(s)) => format!("{:.1} % {s}", c * 100.0),
                    _ => "-".into(),
                });
                row
            })
            .collect();
        let mut table = Section::untitled();
        table.push(Block::Table(Table::numeric(cols, rows)));
        let mut sections = vec![head, chart, table];
        let mut warned = Section::untitled();
        for r in self.runs.iter().filter(|r| !r.forecast.warnings.is_empty()) {
            warned.para(format!("{}:", r.name));
            warned.push(Block::Flags {
                flags: r.forecast.warnings.clone(),
                nested: true,
            });
        }
        if !warned.blocks.is_empty() {
            sections.push(warned);
        }
        if !self.sections.is_empty() {
            sections.push(sections_section(&self.sections, true));
        }
        sections.push(prior_section(&self.reaction, &self.forecast_settings));
        sections.push(cautions(&self.cautions));
        Page { title, sections }
    }
}

impl StockSheet {
    /// The stock preparation sheet.
    pub fn page(&self) -> Page {
        let title = format!("Stock preparation: {}", self.title);
        let mut head = Section::new(title.clone());
        head.para(format!("Spec: {}", self.spec));
        let dated = !self.schedule.is_empty();
        if dated {
            head.para(format!(
                "For {} lab section(s) on {} day(s) (the schedule below), each section's stations x replicates of every run, plus {} % overage, plus what each station spends rinsing and filling its glassware, in the volumetric flasks with the least surplus (fewest flasks on a tie). A stock that keeps is made once and serves the later days it keeps for; one made fresh on the day (or with no stability data) is made on each day it is used.",
                self.sections.len(), self.schedule.len(), sig(self.overage_pct, 3)
            ));
        } else {
            head.para(format!(
                "For {} station(s) x {} replicate(s) of every run, plus {} % overage, plus what each station spends rinsing and filling its glassware, in the volumetric flasks with the least surplus (fewest flasks on a tie).",
                self.stations, self.replicates, sig(self.overage_pct, 3)
            ));
        }
        let rows: Vec<Vec<String>> = self
            .stocks
            .iter()
            .map(|s| {
                let amount = match (s.recipe.grams, s.recipe.ml) {
                    (Some(g), _) => format!("{g:.4} g"),
                    (None, Some(v)) => format!("{v:.2} mL"),
                    _ => "-".into(),
                };
                let mut row = vec![s.name.clone()];
                if dated {
                    row.push(s.made_on.clone().unwrap_or_default());
                }
                row.extend([
                    format!("{:.1}", s.need_ml),
                    s.flasks
                        .iter()
                        .map(|f| format!("{} x {} mL", f.count, f.ml))
                        .collect::<Vec<_>>()
                        .join(" + "),
                    s.recipe.kind.to_string(),
                    amount,
                ]);
                row
            })
            .collect();
        let mut table = Section::untitled();
        let mut head_cells = vec!["stock", "need (mL)", "flask", "recipe", "per flask"];
        let mut align = vec![
            Align::Left,
            Align::Right,
            Align::Left,
            Align::Left,
            Align::Right,
        ];
        if dated {
            head_cells.insert(1, "made on");
            align.insert(1, Align::Left);
        }
        table.push(Block::Table(Table::with_align(
            headers(&head_cells),
            align,
            rows,
        )));
        if !self.advice.is_empty() {
            table.push(Block::Warnings(self.advice.clone()));
        }
        for c in self
            .small_masses
            .iter()
            .filter_map(|m| m.concentrate.as_ref())
        {
            table.para(format!("The [[stock]] of '{}':", c.name));
            table.push(Block::Verbatim(c.toml.clone()));
        }
        table.para(format!(
            "Masses are checked against a balance reading to {} g{}.",
            self.balance,
            if self.balance_stated {
                " ([plan] balance)"
            } else {
                " (the default: give [plan] balance for yours)"
            }
        ));
        let mut sections = vec![head, table];
        if dated {
            sections.push(self.schedule_section());
        }
        for s in &self.stocks {
            let mut sec = Section::new(match &s.made_on {
                Some(d) => format!("{} (made {d}, for {})", s.name, s.for_sections.join(", ")),
                None => s.name.clone(),
            });
            sec.para(s.recipe.text.clone());
            sec.para(format!(
                "Concentration uncertainty: {} % (k = 1; {}).",
                sig(s.uncertainty_pct, 2),
                s.uncertainty_basis
            ));
            if s.drawn_ml > 0.0 {
                sec.para(format!(
                    "Includes {:.1} mL drawn to make other stocks.",
                    s.drawn_ml
                ));
            }
            if let Some(st) = &s.stability {
                sec.para(format!("Stability: {st}."));
            }
            if let Some(h) = &s.hazards {
                let codes = if s.hazard_codes.is_empty() {
                    String::new()
                } else {
                    format!(" ({})", s.hazard_codes.join(", "))
                };
                sec.para(format!("Hazards{codes}: {h}."));
            }
            if let Some(src) = &s.data_source {
                sec.para(format!("Data: {src}; check the supplier's SDS."));
            }
            sections.push(sec);
        }
        sections.push(self.checklist_section());
        sections.push(self.fetch_section());
        sections.push(self.waste_section());
        sections.push(cautions(&self.cautions));
        Page { title, sections }
    }

    /// A line per stock to tick, with the date made, initials and use-by to fill in.
    fn checklist_section(&self) -> Section {
        let mut sec = Section::new("Make-up checklist");
        let rows = self
            .checklist
            .iter()
            .map(|c| {
                let mut row = vec!["[ ]".to_string(), c.stock.clone()];
                if let Some(d) = &c.made_on {
                    row.push(d.clone());
                }
                row.extend([
                    c.flasks.clone(),
                    c.with.clone(),
                    "__________".into(),
                    "______".into(),
                    match &c.use_by_date {
                        Some(d) => format!("{d} ({})", c.use_by),
                        None => c.use_by.clone(),
                    },
                ]);
                row
            })
            .collect();
        let dated = self.checklist.iter().any(|c| c.made_on.is_some());
        let mut cells = vec![
            "done",
            "stock",
            "flasks",
            "with",
            "date made",
            "initials",
            "use by",
        ];
        if dated {
            cells.insert(2, "planned");
        }
        sec.push(Block::Table(Table::with_align(
            headers(&cells),
            vec![Align::Left; cells.len()],
            rows,
        )));
        sec.para("Label every bottle with its name, concentration, the date made, the use-by date and its hazards (clockprep labels prints them); follow the recipe of each stock above.");
        sec
    }

    /// The solids and reagents to fetch, with their totals.
    fn fetch_section(&self) -> Section {
        let mut sec = Section::new(if self.schedule.is_empty() {
            "Fetch from the store"
        } else {
            "Fetch from the store: the week"
        });
        sec.push(fetch_table(&self.fetch));
        sec.para("Totals are what the recipes take (assay included), before any spill: fetch a little more, and check each container's label and SDS.");
        sec
    }

    /// The make-up schedule: each day's sections, the batches to make and what is used from
    /// an earlier day, and what to fetch that day.
    fn schedule_section(&self) -> Section {
        let mut sec = Section::new("Make-up schedule");
        sec.para("Each day's batches: make up the ones marked 'make', and use the ones made on an earlier day while they keep.");
        let mut rows = Vec::new();
        for d in &self.schedule {
            let mut first = true;
            let day = |first: bool| {
                if first {
                    [format!("{} {}", d.weekday, d.date), d.sections.join(", ")]
                } else {
                    [String::new(), String::new()]
                }
            };
            let mut both: Vec<(&ScheduleMake, bool)> = d
                .make
                .iter()
                .map(|m| (m, true))
                .chain(d.from_earlier.iter().map(|m| (m, false)))
                .collect();
            both.sort_by_key(|(m, _)| {
                self.stocks
                    .iter()
                    .position(|s| s.name == m.stock)
                    .unwrap_or(usize::MAX)
            });
            for (m, make) in both {
                let mut row = day(first).to_vec();
                first = false;
                row.extend([
                    m.stock.clone(),
                    if make {
                        format!("make {}", m.flasks)
                    } else {
                        format!("use the batch made {}", m.made_on)
                    },
                    m.use_by
                        .clone()
                        .unwrap_or_else(|| "as your method says".into()),
                ]);
                rows.push(row);
            }
        }
        sec.push(Block::Table(Table::with_align(
            headers(&["day", "sections", "stock", "make up or use", "use by"]),
            vec![Align::Left; 5],
            rows,
        )));
        for d in &self.schedule {
            if d.fetch.is_empty() {
                continue;
            }
            sec.para(format!("Fetch for {} {}:", d.weekday, d.date));
            sec.push(fetch_table(&d.fetch));
        }
        sec
    }
}

/// A fetch list as a table.
fn fetch_table(fetch: &[FetchItem]) -> Block {
    let rows = fetch
        .iter()
        .map(|f| {
            vec![
                f.item.clone(),
                match (f.grams, f.ml) {
                    (Some(g), _) => format!("{g:.2} g"),
                    (None, Some(v)) => format!("{v:.1} mL"),
                    _ => "as your method".into(),
                },
                f.for_stocks.join(", "),
                match (f.signal_word, f.hazard_codes.is_empty()) {
                    (Some(w), false) => format!("{w}: {}", f.hazard_codes.join(", ")),
                    _ => "-".into(),
                },
            ]
        })
        .collect();
    Block::Table(Table::with_align(
        headers(&["solid or reagent", "total", "for", "hazards"]),
        vec![Align::Left, Align::Right, Align::Left, Align::Left],
        rows,
    ))
}

impl StockSheet {
    /// The waste figures: spent mixtures, left-over stock, the solutes in them.
    fn waste_section(&self) -> Section {
        let w = &self.waste.week;
        let mut sec = Section::new(if self.waste.by_section.is_empty() {
            "Waste"
        } else {
            "Waste: the week"
        });
        sec.para(format!(
            "Spent mixtures: {:.0} mL (every trial of every run at every station); left-over stock: {:.0} mL (made up but not delivered: overage, rinses and the flasks' rounding).",
            w.spent_mixture_ml, w.leftover_total_ml
        ));
        let rows = w
            .solutes
            .iter()
            .map(|x| {
                vec![
                    x.solute.clone(),
                    x.stock.clone(),
                    format!("{:.3}", x.grams),
                    if x.hazard_codes.is_empty() {
                        "-".into()
                    } else {
                        x.hazard_codes.join(", ")
                    },
                ]
            })
            .collect();
        sec.push(Block::Table(Table::with_align(
            headers(&["solute", "made up as", "total (g)", "hazard codes"]),
            vec![Align::Left, Align::Left, Align::Right, Align::Left],
            rows,
        )));
        if !self.waste.by_section.is_empty() {
            let solutes: Vec<&str> = w.solutes.iter().map(|x| x.solute.as_str()).collect();
            let rows = self
                .waste
                .by_section
                .iter()
                .map(|s| {
                    let mut row = vec![
                        s.section.clone(),
                        s.date.clone(),
                        format!("{:.0}", s.figures.spent_mixture_ml),
                        format!("{:.0}", s.figures.leftover_total_ml),
                    ];
                    row.extend(w.solutes.iter().map(|x| {
                        let g: f64 = s
                            .figures
                            .solutes
                            .iter()
                            .filter(|y| y.solute == x.solute && y.stock == x.stock)
                            .map(|y| y.grams)
                            .sum();
                        format!("{g:.3}")
                    }));
                    row
                })
                .collect();
            let mut cells = headers(&["section", "date", "spent (mL)", "left-over (mL)"]);
            cells.extend(solutes.iter().map(|f| format!("{f} (g)")));
            let mut align = vec![Align::Right; cells.len()];
            align[0] = Align::Left;
            align[1] = Align::Left;
            sec.para("By section (each batch's left-over goes with the last section it serves, after which it is discarded):");
            sec.push(Block::Table(Table::with_align(cells, align, rows)));
        }
        sec.para("Everything made up ends as waste, in the spent mixtures or the left-over stock: collect both as your local rules require (a bromate or persulfate mixture is oxidising; bromate is a suspected carcinogen), never assume the drain is allowed, and ask your institution's safety officer.");
        sec
    }
}

/// The lab sections: each one's day, size and temperature, and the runs' forecast there (the
/// mixing sheet's and the forecast sheet's).
fn sections_section(sections: &[super::SectionForecast], forecast: bool) -> Section {
    let mut s = Section::new("Lab sections");
    s.para("The same runs and volumes for every section; the forecast is at each section's temperature (a forecast, not a guarantee: time a pilot run in that room).");
    let mut cols = vec!["run".to_string()];
    cols.extend(sections.iter().map(|x| {
        let t = x
            .temperature_c
            .map(|t| format!(", {t:.1} °C"))
            .unwrap_or_default();
        format!("{} {} {}{t}", x.name, x.weekday, x.date)
    }));
    let mut rows = vec![{
        let mut r = vec!["stations x replicates".to_string()];
        r.extend(
            sections
                .iter()
                .map(|x| format!("{} x {}", x.stations, x.replicates)),
        );
        r
    }];
    let runs: Vec<&str> = sections
        .first()
        .map(|x| x.runs.iter().map(|r| r.run.as_str()).collect())
        .unwrap_or_default();
    if forecast {
        for (i, run) in runs.iter().enumerate() {
            let mut r = vec![format!("{run} predicted")];
            r.extend(sections.iter().map(|x| {
                let t = x.runs[i].time_s.map_or("-".into(), secs);
                let flags: Vec<&str> = x.runs[i].flags.iter().map(|f| f.code).collect();
                if flags.is_empty() {
                    t
                } else {
                    format!("{t} FLAG {}", flags.join(", "))
                }
            }));
            rows.push(r);
        }
    }
    let mut align = vec![Align::Right; cols.len()];
    align[0] = Align::Left;
    s.push(Block::Table(Table::with_align(cols, align, rows)));
    let mut flags = Vec::new();
    for x in sections {
        for run in &x.runs {
            for f in &run.flags {
                flags.push(format!("Section {}, {}: {}", x.name, run.run, f.message));
            }
        }
        for w in &x.warnings {
            flags.push(format!("Section {}: {}", x.name, w.message));
        }
    }
    if !flags.is_empty() {
        s.push(Block::Warnings(flags));
    }
    s
}
