//! Data quality by section and by teaching assistant, for the coordinator: how many students
//! were graded and excused, their mean and median score, and how often their rows carry an
//! impossible entry, a suspicious one, or missing data. Gathered as the batch streams past.

use std::collections::BTreeMap;

use super::{mean, quantile_sorted};
use crate::model::{Flag, Graded, Measure, Severity};

/// One group's counts and scores.
#[derive(Clone, Debug, Default)]
pub struct GroupQuality {
    /// Students graded (repeats that do not count left out).
    pub students: usize,
    pub excused: usize,
    /// Graded students with an impossible entry, with only suspicious ones, and with a value
    /// missing or unreadable.
    pub impossible: usize,
    pub suspicious: usize,
    pub missing: usize,
    /// With a roster: rostered students graded or missing here (a student who submitted in
    /// another section than their own counts where they submitted, flagged other-section).
    pub enrolled: usize,
    /// With a roster: rostered students of whom no row was read.
    pub no_submission: usize,
    /// With a roster: graded rows whose id is not on it.
    pub not_on_roster: usize,
    /// With a roster: rows read for rostered students (graded or excused).
    pub submitted: usize,
    scores: Vec<f64>,
}

impl GroupQuality {
    fn add(&mut self, g: &Graded) {
        let a = &g.assessed;
        if a.submission.no_submission {
            self.no_submission += 1;
            self.enrolled += 1;
            return;
        }
        if a.has(Flag::NotOnRoster) || a.submission.off_roster {
            self.not_on_roster += 1;
        } else {
            self.enrolled += 1;
            self.submitted += 1;
        }
        if a.excused.is_some() {
            self.excused += 1;
            return;
        }
        self.students += 1;
        if a.is_impossible() {
            self.impossible += 1;
        } else if a
            .flags
            .iter()
            .any(|(f, _)| f.severity() == Severity::Suspicious)
        {
            self.suspicious += 1;
        }
        if a.has(Flag::MissingValue) || a.has(Flag::UnreadableValue) {
            self.missing += 1;
        }
        self.scores.extend(Measure::SCORE.value(g.row()));
    }

    pub fn mean_score(&self) -> f64 {
        if self.scores.is_empty() {
            f64::NAN
        } else {
            mean(&self.scores)
        }
    }

    pub fn median_score(&self) -> f64 {
        let mut v = self.scores.clone();
        v.sort_by(f64::total_cmp);
        quantile_sorted(&v, 0.5)
    }

    /// A count as a percentage of the students graded.
    pub fn share(&self, n: usize) -> f64 {
        if self.students == 0 {
            f64::NAN
        } else {
            100.0 * n as f64 / self.students as f64
        }
    }
}

/// A rostered student of whom no row was read.
#[derive(Clone, Debug, PartialEq)]
pub struct Missing {
    pub section: String,
    pub id: String,
    pub name: String,
    /// The id of a row not on the roster that is likely this student's.
    pub likely_typed_as: Option<String>,
}

/// Data quality by section and by assistant, in name order.
#[derive(Clone, Debug, Default)]
pub struct Quality {
    pub sections: BTreeMap<String, GroupQuality>,
    pub assistants: BTreeMap<String, GroupQuality>,
    /// A roster was given: the tables show enrolment.
    pub with_roster: bool,
    /// The rostered students of whom no row was read, in roster order.
    pub no_submission: Vec<Missing>,
}

impl Quality {
    pub fn add(&mut self, g: &Graded) {
        let a = &g.assessed;
        if a.has(Flag::DuplicateStudent) {
            return;
        }
        let s = &a.submission;
        if s.no_submission {
            self.no_submission.push(Missing {
                section: s.section.clone(),
                id: s.student_id.clone().unwrap_or_default(),
                name: s.student_name.clone().unwrap_or_default(),
                likely_typed_as: s.likely_typed_as.clone(),
            });
        }
        self.sections.entry(s.section.clone()).or_default().add(g);
        if let Some(ta) = s
            .assistant
            .as_deref()
            .map(str::trim)
            .filter(|t| !t.is_empty())
        {
            self.assistants.entry(ta.to_string()).or_default().add(g);
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::model::{Assessed, Score};

    fn graded(total: f64, flags: &[Flag], excused: bool) -> Graded {
        Graded {
            assessed: Assessed {
                flags: flags.iter().map(|f| (*f, String::new())).collect(),
                excused: excused.then(|| "status \"W\"".to_string()),
                ..Assessed::default()
            },
            score: Score {
                total,
                excused,
                ..Score::default()
            },
        }
    }

    #[test]
    fn rates_are_over_the_graded_students() {
        let mut q = Quality::default();
        for g in [
            graded(90.0, &[], false),
            graded(40.0, &[Flag::MissingValue], false),
            graded(70.0, &[Flag::LowRecovery], false),
            graded(80.0, &[Flag::SolventBelowMinimum], false),
            graded(0.0, &[], true),
            graded(10.0, &[Flag::DuplicateStudent], false),
        ] {
            q.add(&g);
        }
        let s = &q.sections[""];
        assert_eq!((s.students, s.excused), (4, 1));
        assert_eq!((s.impossible, s.suspicious, s.missing), (1, 2, 1));
        // (90 + 40 + 70 + 80) / 4 = 70; median of 40, 70, 80, 90 = 75 (hand-worked)
        assert_eq!((s.mean_score(), s.median_score()), (70.0, 75.0));
        assert_eq!(s.share(s.suspicious), 50.0);
    }
}
