//! Per-section statistics gathered as the batch streams past: each measure over the rows whose
//! entries for it are possible (a recovery over 100 % leaves the recovery out, not the row's
//! melting range; the score counts for every graded student), the count of each flag, and which
//! rows were left out of what and why. Excused students are counted, and left out of all of it.

use std::collections::BTreeMap;

use super::{summarize, Summary};
use crate::model::{Graded, Measure, Severity};

/// One section's gathered values.
#[derive(Clone, Debug, Default)]
pub struct Group {
    /// Every row of the section, excused ones included.
    pub rows: usize,
    /// Students excused (withdrawn, absent, exempt): left out of every statistic.
    pub excused: usize,
    /// Rostered students with no submission: left out of every statistic but the score, and of
    /// that unless the rubric scores them (`grading.no_submission`).
    pub no_submission: usize,
    /// Of those, the ones the rubric gave a score (counted in the score's statistics).
    no_submission_scored: usize,
    /// The values of each summarised measure, in the order of `SectionStats::measures`.
    values: Vec<Vec<f64>>,
    /// For each summarised measure, how many rows were left out of it.
    left_out: Vec<usize>,
    /// For each summarised measure, how many rows that count for it hold no value for it.
    missing: Vec<usize>,
    pub flags: BTreeMap<&'static str, usize>,
    /// Rows left out of some measure's statistics: where, which measures, and why.
    pub excluded: Vec<String>,
    /// (range width, recovery) of every row where both count, for a scatter plot.
    pub width_recovery: Vec<(f64, f64)>,
    /// Rows with an impossible entry about the width or the recovery, left out of the scatter.
    pub scatter_left_out: usize,
}

/// One section's summary of one measure, with the rows it leaves out.
#[derive(Clone, Debug)]
pub struct SectionSummary<'a> {
    pub section: &'a str,
    pub measure: Measure,
    /// `None` where no row has a value.
    pub summary: Option<Summary>,
    /// Rows whose entries for this measure are impossible (or a repeat that does not count).
    pub excluded: usize,
    /// Excused students of the section.
    pub excused: usize,
    /// Rows that count for the measure but hold no value for it (a blank mass, a missing
    /// reading): with `n`, `excluded`, `excused` and `no_submission`, every row of the section.
    pub missing: usize,
    /// Rostered students of the section with no submission.
    pub no_submission: usize,
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
    /// A rostered student with no submission: counted apart; a score the rubric gives a
    /// missing report counts (at `score`, the score's place among the measures), nothing else.
    fn add_no_submission(&mut self, score: Option<usize>, g: &Graded) {
        self.no_submission += 1;
        if let (Some(i), Some(v)) = (score, Measure::SCORE.value(g.row())) {
            self.values[i].push(v);
            self.no_submission_scored += 1;
        }
    }

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
        group.left_out.resize(n, 0);
        group.missing.resize(n, 0);
        group.rows += 1;
        if a.excused.is_some() {
            group.excused += 1;
            return;
        }
        if s.no_submission {
            let score = self.measures.iter().position(|m| *m == Measure::SCORE);
            group.add_no_submission(score, g);
            return;
        }
        for (f, _) in &a.flags {
            *group.flags.entry(f.code()).or_default() += 1;
        }
        let row = g.row();
        let mut left_out = Vec::new();
        for (i, m) in self.measures.iter().enumerate() {
            if a.counts_for(*m) {
                match m.value(row) {
                    Some(v) => group.values[i].push(v),
                    None => group.missing[i] += 1,
                }
            } else {
                group.left_out[i] += 1;
                left_out.push(m.noun());
            }
        }
        let (w, r) = (Measure::RANGE_WIDTH, Measure::RECOVERY);
        if a.counts_for(w) && a.counts_for(r) {
            if let (Some(x), Some(y)) = (w.value(row), r.value(row)) {
                group.width_recovery.push((x, y));
            }
        } else {
            group.scatter_left_out += 1;
        }
        if !left_out.is_empty() {
            let at = match &s.sheet {
                Some(sheet) => format!("{} [{}] row {}", s.source, sheet, s.row),
                None => format!("{} row {}", s.source, s.row),
            };
            let why: Vec<&str> = a
                .flags
                .iter()
                .filter(|(f, _)| f.severity() == Severity::Impossible)
                .map(|(f, _)| f.short())
                .collect();
            group.excluded.push(format!(
                "{at}: {} left out: {}",
                left_out.join(", "),
                why.join(", ")
            ));
        }
    }

    /// How many rows of `section` were left out of measure `m` (impossible entries, repeats).
    pub fn left_out(&self, section: &str, m: Measure) -> usize {
        let Some(i) = self.measures.iter().position(|x| *x == m) else {
            return 0;
        };
        self.groups
            .get(section)
            .and_then(|g| g.left_out.get(i).copied())
            .unwrap_or(0)
    }

    /// Every section's summary of every measure, sections in name order.
    pub fn summaries(&self) -> Vec<SectionSummary<'_>> {
        self.summaries_where(|_| true)
    }

    /// The rows of the sections `keep` accepts, the others never summarised (a workbook of one
    /// section in a term of many would otherwise summarise the whole term once per workbook).
    pub fn summaries_where(&self, keep: impl Fn(&str) -> bool) -> Vec<SectionSummary<'_>> {
        let mut out = Vec::new();
        for (name, g) in self.groups.iter().filter(|(name, _)| keep(name)) {
            for (i, m) in self.measures.iter().enumerate() {
                let values = g.values.get(i).map_or(&[][..], Vec::as_slice);
                out.push(SectionSummary {
                    section: name.as_str(),
                    measure: *m,
                    summary: summarize(values),
                    excluded: g.left_out.get(i).copied().unwrap_or(0),
                    excused: g.excused,
                    missing: g.missing.get(i).copied().unwrap_or(0),
                    no_submission: if *m == Measure::SCORE {
                        g.no_submission - g.no_submission_scored
                    } else {
                        g.no_submission
                    },
                });
            }
        }
        out
    }
}
