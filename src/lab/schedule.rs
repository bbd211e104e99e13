//! The week of a lab taught to several sections: the days, the sections on each, and which
//! days one batch of a stock serves. A stock is made on the first day it is needed and serves
//! every later day within the days it keeps (the reagent data's `keeps_days`: 0 on the day it
//! is made, 180 for a stable solution); the next day past that gets a new batch. A stock the
//! reagent data does not know is made fresh on each day (the cautious reading). A one-section
//! spec is one day with one section.

use crate::spec::{Lab, Spec};

/// One section as the totals see it: its stations and replicates, and its day.
#[derive(Debug, Clone, PartialEq)]
pub struct Group {
    /// The section's name; None for a one-section spec.
    pub name: Option<String>,
    pub stations: u32,
    pub replicates: u32,
    pub day: usize,
}

/// A day of the lab and the sections on it (indices into [`Week::groups`]).
#[derive(Debug, Clone, PartialEq)]
pub struct Day {
    /// None for a one-section spec, which has no date.
    pub date: Option<time::Date>,
    pub groups: Vec<usize>,
}

#[derive(Debug, Clone, PartialEq)]
pub struct Week {
    pub days: Vec<Day>,
    pub groups: Vec<Group>,
}

impl Week {
    pub fn of(spec: &Spec) -> Week {
        if spec.sections.is_empty() {
            return Week {
                days: vec![Day {
                    date: None,
                    groups: vec![0],
                }],
                groups: vec![Group {
                    name: None,
                    stations: spec.stations,
                    replicates: spec.replicates,
                    day: 0,
                }],
            };
        }
        let mut days: Vec<Day> = Vec::new();
        let mut groups = Vec::new();
        // Sections come in date order (spec order within a day).
        for (i, s) in spec.sections.iter().enumerate() {
            if days.last().and_then(|d| d.date) != Some(s.date) {
                days.push(Day {
                    date: Some(s.date),
                    groups: Vec::new(),
                });
            }
            let day = days.len() - 1;
            days[day].groups.push(i);
            groups.push(Group {
                name: Some(s.name.clone()),
                stations: s.stations,
                replicates: s.replicates,
                day,
            });
        }
        Week { days, groups }
    }

    /// Whether the spec has sections (and so dates).
    pub fn dated(&self) -> bool {
        self.days.first().is_some_and(|d| d.date.is_some())
    }

    /// The batches of a stock that keeps `keeps` days, needed on `needed` (day indices,
    /// ascending): each batch's days, the first being the day it is made.
    pub fn batches(&self, needed: &[usize], keeps: u32) -> Vec<Vec<usize>> {
        let mut out: Vec<Vec<usize>> = Vec::new();
        for &d in needed {
            let fits = out.last().is_some_and(|b| {
                match (self.days[b[0]].date, self.days[d].date) {
                    (Some(made), Some(day)) => (day - made).whole_days() <= keeps as i64,
                    // Undated: one day only.
                    _ => b[0] == d,
                }
            });
            match out.last_mut() {
                Some(b) if fits => b.push(d),
                _ => out.push(vec![d]),
            }
        }
        out
    }

    /// The last section on a day: the one after which a batch ending that day is discarded.
    pub fn last_group(&self, day: usize) -> usize {
        *self.days[day]
            .groups
            .last()
            .expect("every day has a section")
    }
}

/// Days a made-up stock is used for, from the reagent data; None when the data has no entry.
pub fn keeps_days(lab: &Lab, stock: usize) -> Option<u32> {
    let st = &lab.stocks[stock];
    let species: Vec<&str> = st.contains.iter().map(|(s, _)| s.as_str()).collect();
    crate::reference::reagents::reagent_for(st.solute.as_deref(), &species).map(|r| r.keeps_days)
}

#[cfg(test)]
mod tests {
    use super::*;
    use time::macros::date;

    fn week(dates: &[time::Date]) -> Week {
        Week {
            days: dates
                .iter()
                .enumerate()
                .map(|(i, d)| Day {
                    date: Some(*d),
                    groups: vec![i],
                })
                .collect(),
            groups: (0..dates.len())
                .map(|i| Group {
                    name: Some(format!("s{i}")),
                    stations: 1,
                    replicates: 1,
                    day: i,
                })
                .collect(),
        }
    }

    #[test]
    fn batches_by_keeping_days() {
        // Mon, Tue, Thu, next Mon.
        let w = week(&[
            date!(2026 - 12 - 07),
            date!(2026 - 12 - 08),
            date!(2026 - 12 - 10),
            date!(2026 - 12 - 14),
        ]);
        let all = [0, 1, 2, 3];
        // Fresh on the day: one batch a day.
        assert_eq!(w.batches(&all, 0), vec![vec![0], vec![1], vec![2], vec![3]]);
        // Keeps a week: Mon..Thu, then next Mon is 7 days after Mon, still within.
        assert_eq!(w.batches(&all, 7), vec![vec![0, 1, 2, 3]]);
        // Keeps 2 days: Mon+Tue, Thu (3 days after Mon) starts a new one, next Mon another.
        assert_eq!(w.batches(&all, 2), vec![vec![0, 1], vec![2], vec![3]]);
        // Stable: once.
        assert_eq!(w.batches(&all, 180), vec![vec![0, 1, 2, 3]]);
        // Needed on some days only.
        assert_eq!(w.batches(&[1, 3], 0), vec![vec![1], vec![3]]);
    }
}
