//! Per-section statistics gathered as the batch streams past: the measures of every row that
//! holds no impossible entry, the count of each flag, and which rows were left out and why.

use std::collections::BTreeMap;

use super::{summarize, Summary};
use crate::assess::Severity;
use crate::rubric::score::Graded;

/// The measures summarised for every section, as named in section-stats.csv.
pub const MEASURES: [&str; 5] = [
    "recovery_pct",
    "range_width_c",
    "depression_c",
    "purity_mol_pct",
    "score",
];

/// One section's gathered values.
#[derive(Clone, Debug, Default)]
pub struct Group {
    pub rows: usize,
    pub values: [Vec<f64>; 5],
    pub flags: BTreeMap<&'static str, usize>,
    /// Rows left out of the statistics: where, and the impossible flags that excluded them.
    pub excluded: Vec<String>,
}

/// Statistics for every section of the batch, in section-name order.
#[derive(Clone, Debug, Default)]
pub struct SectionStats {
    pub groups: BTreeMap<String, Group>,
}

fn measures(g: &Graded) -> [Option<f64>; 5] {
    let a = &g.assessed;
    [
        a.recovery_pct,
        a.range_width_c,
        a.depression_c,
        a.purity_mol_pct,
        Some(g.score.total),
    ]
}

impl SectionStats {
    pub fn add(&mut self, g: &Graded) {
        let a = &g.assessed;
        let s = &a.submission;
        let group = self.groups.entry(s.section.clone()).or_default();
        group.rows += 1;
        for (f, _) in &a.flags {
            *group.flags.entry(f.code()).or_default() += 1;
        }
        let impossible: Vec<&str> = a
            .flags
            .iter()
            .filter(|(f, _)| f.severity() == Severity::Impossible)
            .map(|(f, _)| f.code())
            .collect();
        if !impossible.is_empty() {
            let at = match &s.sheet {
                Some(sheet) => format!("{} [{}] row {}", s.source, sheet, s.row),
                None => format!("{} row {}", s.source, s.row),
            };
            group
                .excluded
                .push(format!("{at}: {}", impossible.join(", ")));
            return;
        }
        for (slot, v) in group.values.iter_mut().zip(measures(g)) {
            if let Some(x) = v.filter(|x| x.is_finite()) {
                slot.push(x);
            }
        }
    }

    /// (section, measure, summary) for every section and measure; `None` where no value.
    pub fn summaries(&self) -> Vec<(&str, &'static str, Option<Summary>)> {
        let mut out = Vec::new();
        for (name, g) in &self.groups {
            for (m, v) in MEASURES.iter().zip(&g.values) {
                out.push((name.as_str(), *m, summarize(v)));
            }
        }
        out
    }
}
