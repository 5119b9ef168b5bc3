//! The labels the summaries group by (section, assistant, bench, apparatus, file and sheet),
//! kept free of the students' names: section-stats.csv, the cohort report and its CSV files
//! name no student, yet a sheet, a file or a bench can be named after one. A label holding a
//! name of the batch is told with each name replaced by `[name]` and a number of its own
//! ("[name] [name] (label 2)"), so that two such labels are still two groups.

use std::collections::{HashMap, HashSet};
use std::sync::Arc;

use std::borrow::Cow;

use crate::model::names::BatchNames;
use crate::model::Graded;
use crate::stats::sections::SectionStats;

/// The labels renamed so far, each with its stand-in.
pub(super) struct Labels {
    names: Arc<BatchNames>,
    renamed: HashMap<String, String>,
    /// Labels known to hold no name (a section, a bench, a file repeats on every row of it),
    /// at most `CLEAN_KEPT`, so that most rows cost a look-up, not a scan of their words.
    clean: HashSet<String>,
}

const CLEAN_KEPT: usize = 10_000;

impl Labels {
    pub(super) fn new(names: Arc<BatchNames>) -> Labels {
        Labels {
            names,
            renamed: HashMap::new(),
            clean: HashSet::new(),
        }
    }

    /// The stand-in for a label holding a name; `None` for a label that holds none.
    fn told(&mut self, label: &str) -> Option<String> {
        if let Some(s) = self.renamed.get(label) {
            return Some(s.clone());
        }
        if self.names.is_empty() || self.clean.contains(label) {
            return None;
        }
        let scrubbed = self.names.scrub(label);
        if scrubbed == label {
            if self.clean.len() < CLEAN_KEPT {
                self.clean.insert(label.to_string());
            }
            return None;
        }
        let told = format!("{scrubbed} (label {})", self.renamed.len() + 1);
        self.renamed.insert(label.to_string(), told.clone());
        Some(told)
    }

    /// A copy of the row with its labels told without names; `None` when they hold none
    /// (nearly always: the row is then used as it is).
    pub(super) fn row(&mut self, g: &Graded) -> Option<Graded> {
        let s = &g.assessed.submission;
        let section = self.told(&s.section);
        let source = self.told(&s.source);
        let mut optional = |v: &Option<String>| v.as_deref().and_then(|t| self.told(t));
        let sheet = optional(&s.sheet);
        let bench = optional(&s.bench);
        let apparatus = optional(&s.apparatus);
        let assistant = optional(&s.assistant);
        if section.is_none()
            && source.is_none()
            && sheet.is_none()
            && bench.is_none()
            && apparatus.is_none()
            && assistant.is_none()
        {
            return None;
        }
        let mut copy = g.clone();
        let c = &mut copy.assessed.submission;
        if let Some(v) = section {
            c.section = v;
        }
        if let Some(v) = source {
            c.source = v;
        }
        for (slot, v) in [
            (&mut c.sheet, sheet),
            (&mut c.bench, bench),
            (&mut c.apparatus, apparatus),
            (&mut c.assistant, assistant),
        ] {
            if v.is_some() {
                *slot = v;
            }
        }
        Some(copy)
    }
}

impl Labels {
    /// The section statistics with each section told as `row` told it (a copy only when a
    /// section label held a name).
    pub(super) fn section_stats<'a>(&self, stats: &'a SectionStats) -> Cow<'a, SectionStats> {
        if !stats.groups.keys().any(|k| self.renamed.contains_key(k)) {
            return Cow::Borrowed(stats);
        }
        let mut told = stats.clone();
        told.groups = std::mem::take(&mut told.groups)
            .into_iter()
            .map(|(k, g)| match self.renamed.get(&k) {
                Some(t) => (t.clone(), g),
                None => (k, g),
            })
            .collect();
        Cow::Owned(told)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn a_label_with_a_name_gets_a_stand_in_of_its_own() {
        let mut names = BatchNames::default();
        names.add("Odile Marchetti");
        names.add("Tamsin Oyelaran");
        let mut l = Labels::new(Arc::new(names));
        assert_eq!(l.told("Sec 01"), None);
        let a = l.told("Odile's bench").unwrap();
        let b = l.told("Tamsin's bench").unwrap();
        assert_eq!(a, "[name]'s bench (label 1)");
        assert_ne!(a, b, "two benches stay two");
        assert_eq!(l.told("Odile's bench").unwrap(), a, "the same each time");
        let mut g = Graded::default();
        g.assessed.submission.section = "Sec 01".into();
        assert!(l.row(&g).is_none());
        g.assessed.submission.bench = Some("Tamsin's bench".into());
        let told = l.row(&g).unwrap();
        assert_eq!(told.assessed.submission.bench.as_deref(), Some(b.as_str()));
        assert_eq!(told.assessed.submission.section, "Sec 01");
    }
}
