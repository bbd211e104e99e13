use super::Exporter;
use crate::report::{ForecastReport, ForecastSheet, PlanReport, StockSheet};

/// Long-format CSV for spreadsheets: one row per value.
///
/// Columns: `run, row, name, vessel, mL, device, target_M, achieved_M, deviation, value`.
/// For `species` rows `value` is the relative standard uncertainty (k = 1) of the final
/// concentration. `row` is `volume`, `species`, `ionic_strength`, `forecast` (name = quantity with its unit,
/// number in `value`), `warning` (name = code, text in `value`), `station_device` (name = the
/// device, `device` = what it holds, `value` = how many one station needs, `mL` = its dead
/// volume), `tray` (name = the bottle, `mL` = one station's fill) or `stock_total`. Cells that
/// do not apply are empty.
pub struct Csv;

const HEADER: [&str; 10] = [
    "run",
    "row",
    "name",
    "vessel",
    "mL",
    "device",
    "target_M",
    "achieved_M",
    "deviation",
    "value",
];

struct Rows(csv::Writer<Vec<u8>>);

impl Rows {
    fn new() -> Self {
        let mut w = Rows(csv::Writer::from_writer(Vec::new()));
        w.put(HEADER.map(String::from));
        w
    }

    fn put(&mut self, cells: [String; 10]) {
        self.0
            .write_record(&cells)
            .expect("writing to memory cannot fail");
    }

    /// A row with only run, row kind, name and value.
    fn value(&mut self, run: &str, row: &str, name: &str, value: String) {
        let e = String::new;
        self.put([
            run.into(),
            row.into(),
            name.into(),
            e(),
            e(),
            e(),
            e(),
            e(),
            e(),
            value,
        ]);
    }

    fn forecast(&mut self, run: &str, f: &ForecastReport) {
        let opt = |v: Option<f64>| v.map(|x| x.to_string()).unwrap_or_default();
        self.value(
            run,
            "forecast",
            "temperature_C",
            f.temperature_c.to_string(),
        );
        self.value(run, "forecast", "time_s", opt(f.time_s));
        self.value(run, "forecast", "clock_s", opt(f.clock_s));
        if f.visible_extra_s.is_some() {
            self.value(run, "forecast", "visible_extra_s", opt(f.visible_extra_s));
        }
        if let Some([lo, hi]) = f.visible_extra_range_s {
            self.value(run, "forecast", "visible_extra_low_s", lo.to_string());
            self.value(run, "forecast", "visible_extra_high_s", hi.to_string());
            self.value(
                run,
                "forecast",
                "threshold_uncertainty_pct",
                opt(f.threshold_uncertainty_pct),
            );
        }
        self.value(run, "forecast", "band_fast_s", opt(f.band_s.map(|b| b[0])));
        self.value(run, "forecast", "band_slow_s", opt(f.band_s.map(|b| b[1])));
        self.value(run, "forecast", "initial_rate_s", opt(f.initial_rate_s));
        self.value(run, "forecast", "rate_M_per_s", opt(f.rate));
        self.value(run, "forecast", "max_conversion", opt(f.max_conversion));
        self.value(
            run,
            "forecast",
            "volumetric_uncertainty_pct",
            opt(f.volumetric_uncertainty_pct),
        );
        if f.visible_extra_s.is_some() {
            self.value(
                run,
                "forecast",
                "clock_volumetric_uncertainty_pct",
                opt(f.clock_volumetric_uncertainty_pct),
            );
        }
        for w in &f.warnings {
            self.value(run, "warning", w.code, w.message.clone());
        }
    }

    /// A row of the whole plan (no run, vessel or concentrations): name, mL, device, value.
    fn plan_row(&mut self, row: &str, name: &str, ml: String, device: String, value: String) {
        let e = String::new;
        self.put([
            e(),
            row.into(),
            name.into(),
            e(),
            ml,
            device,
            e(),
            e(),
            e(),
            value,
        ]);
    }

    /// Each lab section's rows (see the README's CSV section).
    fn sections(&mut self, sections: &[crate::report::SectionForecast]) {
        let e = String::new;
        // Each lab section: its stations x replicates, then each run's predicted time there
        // (`section_time_s`, the section in `name`), its band's ends and its flags.
        for s in sections {
            let name = format!("{} {}", s.name, s.date);
            self.plan_row(
                "section",
                &name,
                e(),
                e(),
                format!(
                    "{} stations x {} replicates{}",
                    s.stations,
                    s.replicates,
                    s.temperature_c
                        .map(|t| format!(" at {t} °C"))
                        .unwrap_or_default()
                ),
            );
            for r in &s.runs {
                let opt = |v: Option<f64>| v.map(|x| x.to_string()).unwrap_or_default();
                self.value(&r.run, "section_time_s", &name, opt(r.time_s));
                if let Some([fast, slow]) = r.band_s {
                    self.value(&r.run, "section_warm_s", &name, fast.to_string());
                    self.value(&r.run, "section_cool_s", &name, slow.to_string());
                }
                for f in &r.flags {
                    self.value(
                        &r.run,
                        "section_warning",
                        f.code,
                        format!("{name}: {}", f.message),
                    );
                }
            }
            for f in &s.warnings {
                self.value(
                    "",
                    "section_warning",
                    f.code,
                    format!("{name}: {}", f.message),
                );
            }
        }
    }

    fn finish(self) -> Vec<u8> {
        self.0.into_inner().expect("writing to memory cannot fail")
    }
}

impl Exporter for Csv {
    fn plan(&self, report: &PlanReport) -> Vec<u8> {
        let mut w = Rows::new();
        let e = String::new;
        for r in &report.runs {
            for v in &r.volumes {
                w.put([
                    r.name.clone(),
                    "volume".into(),
                    v.stock.clone(),
                    v.vessel.clone(),
                    v.ml.to_string(),
                    v.device.clone(),
                    e(),
                    e(),
                    e(),
                    e(),
                ]);
            }
            for (sp, c) in &r.concentrations.0 {
                let target = r.targets.get(sp).map(|t| t.to_string()).unwrap_or_default();
                let dev = r
                    .deviation
                    .get(sp)
                    .map(|d| d.to_string())
                    .unwrap_or_default();
                w.put([
                    r.name.clone(),
                    "species".into(),
                    sp.clone(),
                    e(),
                    e(),
                    e(),
                    target,
                    c.to_string(),
                    dev,
                    e(),
                ]);
            }
            let held = r
                .targets
                .get("ionic strength")
                .map(|t| t.to_string())
                .unwrap_or_default();
            let dev = r
                .deviation
                .get("ionic strength")
                .map(|d| d.to_string())
                .unwrap_or_default();
            w.put([
                r.name.clone(),
                "ionic_strength".into(),
                "I".into(),
                e(),
                e(),
                e(),
                held,
                r.ionic_strength.to_string(),
                dev,
                e(),
            ]);
            for f in &r.flags {
                w.value(&r.name, "warning", f.code, f.message.clone());
            }
            if let Some(f) = &r.forecast {
                w.forecast(&r.name, f);
            }
        }
        for f in &report.warnings {
            w.value("", "warning", f.code, f.message.clone());
        }
        for g in &report.glassware {
            w.plan_row(
                "station_device",
                &g.device,
                g.dead_volume_ml.to_string(),
                g.holds.join("; "),
                g.per_station.to_string(),
            );
        }
        for t in &report.tray {
            w.plan_row("tray", &t.stock, t.fill_ml.to_string(), e(), e());
        }
        for t in &report.stock_totals {
            let stock = match &t.made_on {
                Some(d) => format!("{} made {d}", t.stock),
                None => t.stock.clone(),
            };
            w.plan_row(
                "stock_total",
                &stock,
                t.ml.to_string(),
                t.flasks.clone(),
                e(),
            );
        }
        w.sections(&report.sections);
        w.finish()
    }

    fn forecast(&self, sheet: &ForecastSheet) -> Vec<u8> {
        let mut w = Rows::new();
        let e = String::new;
        for r in &sheet.runs {
            for (sp, c) in &r.concentrations.0 {
                w.put([
                    r.name.clone(),
                    "species".into(),
                    sp.clone(),
                    e(),
                    e(),
                    e(),
                    c.to_string(),
                    e(),
                    e(),
                    e(),
                ]);
            }
            w.forecast(&r.name, &r.forecast);
        }
        for f in &sheet.warnings {
            w.value("", "warning", f.code, f.message.clone());
        }
        w.sections(&sheet.sections);
        w.finish()
    }

    /// One row per batch of a stock: what to make, how, and its use-by (so each row is a line
    /// of the make-up checklist).
    fn stocks(&self, sheet: &StockSheet) -> Vec<u8> {
        let mut w = csv::Writer::from_writer(Vec::new());
        let opt = |v: Option<f64>| v.map(|x| x.to_string()).unwrap_or_default();
        w.write_record([
            "stock",
            "made_on",
            "for_sections",
            "use_by",
            "solute",
            "molar_mass_g_per_mol",
            "need_mL",
            "flask_mL",
            "flask_count",
            "recipe",
            "grams_per_flask",
            "mL_per_flask",
            "from",
            "hazard_codes",
            "instruction",
        ])
        .expect("writing to memory cannot fail");
        for (s, c) in sheet.stocks.iter().zip(&sheet.checklist) {
            w.write_record([
                s.name.clone(),
                s.made_on.clone().unwrap_or_default(),
                s.for_sections.join(" "),
                match &c.use_by_date {
                    Some(d) => format!("{d} ({})", c.use_by),
                    None => c.use_by.clone(),
                },
                s.solute.clone().unwrap_or_default(),
                opt(s.molar_mass),
                s.need_ml.to_string(),
                s.flask_ml.to_string(),
                s.flask_count.to_string(),
                s.recipe.kind.to_string(),
                opt(s.recipe.grams),
                opt(s.recipe.ml),
                s.recipe.from.clone().unwrap_or_default(),
                s.hazard_codes.join(" "),
                s.recipe.text.clone(),
            ])
            .expect("writing to memory cannot fail");
        }
        // Further rows, `recipe` naming what each is: `fetch` (the week's fetch list: the item
        // in `stock`, its total in grams or mL), `fetch_day` (the same for one day's batches,
        // the day in `made_on`), `waste` (the week's, or a section's with its name in
        // `for_sections` and its date in `made_on`: spent mixture in `need_mL`, left-over stock
        // in `mL_per_flask`, each solute's grams in `grams_per_flask` with the solute in
        // `solute`), and `advice` (the sentence in `instruction`).
        const N: usize = 15;
        let fetch_row = |f: &crate::report::FetchItem, kind: &str, day: &str| {
            let mut row = vec![String::new(); N];
            row[0] = f.item.clone();
            row[1] = day.to_string();
            row[9] = kind.into();
            row[10] = opt(f.grams);
            row[11] = opt(f.ml);
            row[13] = f.hazard_codes.join(" ");
            row[14] = format!("for {}", f.for_stocks.join(", "));
            row
        };
        for f in &sheet.fetch {
            w.write_record(fetch_row(f, "fetch", ""))
                .expect("writing to memory cannot fail");
        }
        for d in &sheet.schedule {
            for f in &d.fetch {
                w.write_record(fetch_row(f, "fetch_day", &d.date))
                    .expect("writing to memory cannot fail");
            }
        }
        let mut waste_rows = |fig: &crate::report::WasteFigures, section: &str, date: &str| {
            let mut row = vec![String::new(); N];
            row[0] = "spent mixture and left-over stock".into();
            row[1] = date.to_string();
            row[2] = section.to_string();
            row[6] = fig.spent_mixture_ml.to_string();
            row[9] = "waste".into();
            row[11] = fig.leftover_total_ml.to_string();
            row[14] =
                "waste: spent mixture (mL) in need_mL, left-over stock (mL) in mL_per_flask".into();
            w.write_record(row).expect("writing to memory cannot fail");
            for x in &fig.solutes {
                let mut row = vec![String::new(); N];
                row[0] = x.stock.clone();
                row[1] = date.to_string();
                row[2] = section.to_string();
                row[4] = x.solute.clone();
                row[9] = "waste".into();
                row[10] = x.grams.to_string();
                row[13] = x.hazard_codes.join(" ");
                row[14] = "waste: g of the solute in spent mixture and left-over stock, in grams_per_flask".into();
                w.write_record(row).expect("writing to memory cannot fail");
            }
        };
        waste_rows(&sheet.waste.week, "", "");
        for s in &sheet.waste.by_section {
            waste_rows(&s.figures, &s.section, &s.date);
        }
        for a in &sheet.advice {
            let mut row = vec![String::new(); N];
            row[9] = "advice".into();
            row[14] = a.clone();
            w.write_record(row).expect("writing to memory cannot fail");
        }
        w.into_inner().expect("writing to memory cannot fail")
    }
}
