//! DIR/gradebook.csv: one row per student for a learning-management system's generic CSV
//! import: student_id, student_name, section, score, max_score, percent, letter, feedback.
//! A repeated submission that does not count (`duplicate-student`; the rubric's
//! `grading.duplicates` says whether the first or the last counts) is left out, and results.csv
//! lists both. An excused student keeps the row with score, percent and letter empty (common
//! practice: a generic LMS import leaves a blank grade blank, where 0 would be a failing grade).
//! With a roster, every enrolled student has a row (one with no submission: status
//! `no-submission`, the rubric's score for it), and a row whose id is not on the roster is left
//! out until a grader confirms the id. Text from student input is guarded against formula
//! injection.

use std::path::{Path, PathBuf};

use super::{neutralise, number};
use crate::error::WriteError;
use crate::export::atomic::{AtomicFile, Stage};
use crate::model::Flag;
use crate::model::Graded;

pub const COLUMNS: [&str; 8] = [
    "student_id",
    "student_name",
    "section",
    "score",
    "max_score",
    "percent",
    "letter",
    "feedback",
];

pub struct Gradebook {
    csv: csv::Writer<AtomicFile>,
    path: PathBuf,
}

impl Gradebook {
    pub fn create(path: &Path, stage: &Stage) -> Result<Gradebook, WriteError> {
        let mut csv = csv::Writer::from_writer(AtomicFile::create(path, stage)?);
        let err = |e: csv::Error| WriteError {
            path: path.to_path_buf(),
            source: e.into(),
        };
        csv.write_record(COLUMNS).map_err(err)?;
        Ok(Gradebook {
            csv,
            path: path.to_path_buf(),
        })
    }

    pub fn row(&mut self, g: &Graded) -> Result<(), WriteError> {
        let a = &g.assessed;
        // an id not on the roster reaches the gradebook only once a grader confirms the id
        // (a correction): an import would otherwise make a stranger of a typing slip
        if a.has(Flag::DuplicateStudent) || a.has(Flag::NotOnRoster) || a.submission.off_roster {
            return Ok(());
        }
        let s = &a.submission;
        let t = |v: Option<&str>| neutralise(v.unwrap_or("")).into_owned();
        let sc = &g.score;
        let record = [
            t(s.student_id.as_deref()),
            t(s.student_name.as_deref()),
            t(Some(&s.section)),
            number((!sc.excused).then_some(sc.total)),
            number(Some(sc.max)),
            number((!sc.excused).then_some((sc.percent * 100.0).round() / 100.0)),
            sc.letter.clone().unwrap_or_default(),
            t(Some(&sc.feedback)),
        ];
        self.csv.write_record(&record).map_err(|e| WriteError {
            path: self.path.clone(),
            source: e.into(),
        })
    }

    pub fn finish(self) -> Result<(), WriteError> {
        super::atomic::commit_csv(self.csv, &self.path)
    }
}
