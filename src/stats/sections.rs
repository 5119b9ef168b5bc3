//! Per-section statistics gathered as the batch streams past: the measures of every row that
//! holds no impossible entry, the count of each flag, and which rows were left out and why.

use std::collections::BTreeMap;

use super::{summarize, Summary};
use crate::model::{Graded, Measure, Severity};

/// One section's gathered values.
#[derive(Clone, Debug, Default)]
pub struct Group {
    pub rows: usize,
    /// The values of each summarised measure, in the order of `SectionStats::measures`.
    values: Vec<Vec<f64>>,
    pub flags: BTreeMap<&'static str, usize>,
    /// Rows left out of the statistics: where, and the impossible flags that excluded them.
    pub excluded: Vec<String>,
}

/// Statistics for every section of the batch, in section-name order.
#[derive(Clone, Debug)]
pub struct SectionStats {
    /// The measures summarised: the registry's summarised measures.
    measures: Vec<Measure>,
    pub groups: BTreeMap<String, Group>,
}

impl Default for SectionStats {
    fn default() -> Self {
        SectionStats {
            measures: Measure::summarised(),
            groups: BTreeMap::new(),
        }
    }
}

impl Group {
    /// The values of a summarised measure; `None` for a measure that is not summarised.
    pub fn values(&self, stats: &SectionStats, m: Measure) -> Option<&[f64]> {
        let i = stats.measures.iter().position(|x| *x == m)?;
        Some(self.values.get(i).map_or(&[], Vec::as_slice))
    }
}

impl SectionStats {
    pub fn measures(&self) -> &[Measure] {
        &self.measures
    }

    pub fn add(&mut self, g: &Graded) {
        let a = &g.assessed;
        let s = &a.submission;
        let n = self.measures.len();
        let group = self.groups.entry(s.section.clone()).or_default();
        group.values.resize_with(n, Vec::new);
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
        let row = g.row();
        for (slot, m) in group.values.iter_mut().zip(&self.measures) {
            slot.extend(m.value(row));
        }
    }

    /// (section, measure, summary) for every section and measure; `None` where no value.
    pub fn summaries(&self) -> Vec<(&str, Measure, Option<Summary>)> {
        let mut out = Vec::new();
        for (name, g) in &self.groups {
            for (i, m) in self.measures.iter().enumerate() {
                let values = g.values.get(i).map_or(&[][..], Vec::as_slice);
                out.push((name.as_str(), *m, summarize(values)));
            }
        }
        out
    }
}
