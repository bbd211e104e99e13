//! A spec-fixture builder for unit tests: the small specs the tests of every stage need,
//! written as calls instead of retyped TOML. `text()` gives the TOML (tests edit it to make a
//! bad case), `load()` the checked spec.

use super::{load, Spec};
use crate::error::{Result, SpecSource};

#[derive(Debug, Clone)]
pub struct Fixture {
    plan: Vec<String>,
    timing: (String, String),
    keep_apart: Vec<Vec<String>>,
    tables: Vec<String>,
}

fn quoted(list: &[(&str, &str)]) -> String {
    list.iter()
        .map(|(k, v)| format!("\"{k}\" = \"{v}\""))
        .collect::<Vec<_>>()
        .join(", ")
}

impl Fixture {
    /// A plan with its title and run volume, timed with thiosulfate.
    pub fn new(title: &str, total_volume: &str) -> Fixture {
        Fixture {
            plan: vec![
                format!("title = \"{title}\""),
                format!("total_volume = \"{total_volume}\""),
            ],
            timing: ("S2O3^2-".into(), "0.100 mM".into()),
            keep_apart: Vec::new(),
            tables: Vec::new(),
        }
    }

    /// Another `[plan]` key, written as TOML (`tolerance = "0.5 %"`).
    pub fn plan(mut self, line: &str) -> Fixture {
        self.plan.push(line.to_string());
        self
    }

    pub fn timing(mut self, species: &str, concentration: &str) -> Fixture {
        self.timing = (species.into(), concentration.into());
        self
    }

    /// A `[mixing] keep_apart` group.
    pub fn keep_apart(mut self, group: &[&str]) -> Fixture {
        self.keep_apart
            .push(group.iter().map(|s| s.to_string()).collect());
        self
    }

    pub fn stock(mut self, name: &str, contains: &[(&str, &str)]) -> Fixture {
        self.tables.push(format!(
            "[[stock]]\nname = \"{name}\"\ncontains = {{ {} }}\n",
            quoted(contains)
        ));
        self
    }

    pub fn buret(mut self, name: &str, capacity: &str, graduation: &str) -> Fixture {
        self.tables.push(format!(
            "[[device]]\nname = \"{name}\"\nkind = \"buret\"\ncapacity = \"{capacity}\"\ngraduation = \"{graduation}\"\n"
        ));
        self
    }

    pub fn run(mut self, name: &str, targets: &[(&str, &str)]) -> Fixture {
        self.tables.push(format!(
            "[[run]]\nname = \"{name}\"\ntargets = {{ {} }}\n",
            quoted(targets)
        ));
        self
    }

    /// The spec as TOML.
    pub fn text(&self) -> String {
        let mut out = format!("\n[plan]\n{}\n", self.plan.join("\n"));
        out.push_str(&format!(
            "\n[timing]\nspecies = \"{}\"\nconcentration = \"{}\"\n",
            self.timing.0, self.timing.1
        ));
        if !self.keep_apart.is_empty() {
            let groups: Vec<String> = self
                .keep_apart
                .iter()
                .map(|g| {
                    let items: Vec<String> = g.iter().map(|s| format!("\"{s}\"")).collect();
                    format!("[{}]", items.join(", "))
                })
                .collect();
            out.push_str(&format!(
                "\n[mixing]\nkeep_apart = [{}]\n",
                groups.join(", ")
            ));
        }
        for t in &self.tables {
            out.push('\n');
            out.push_str(t);
        }
        out
    }

    pub fn load(&self) -> Result<Spec> {
        load(SpecSource::new("t.toml", self.text()))
    }

    /// Three stocks of the bromate clock (iodide, bromate, thiosulfate), one 25 mL buret and
    /// one run: the smallest spec that plans.
    pub fn small_bromate() -> Fixture {
        Fixture::new("test", "20.0 mL")
            .keep_apart(&["I-", "BrO3-"])
            .stock("KI", &[("I-", "0.0200 M"), ("K+", "0.0200 M")])
            .stock("KBrO3", &[("BrO3-", "0.0400 M"), ("K+", "0.0400 M")])
            .stock("thio", &[("S2O3^2-", "1.00 mM"), ("Na+", "2.00 mM")])
            .buret("buret", "25 mL", "0.05 mL")
            .run("r1", &[("I-", "5.00 mM"), ("BrO3-", "8.00 mM")])
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn the_small_bromate_fixture_plans_and_its_text_is_toml() {
        let f = Fixture::small_bromate();
        assert!(toml::from_str::<toml::Table>(&f.text()).is_ok());
        let spec = f.load().unwrap();
        assert_eq!(spec.lab.as_ref().unwrap().stocks.len(), 3);
    }
}
