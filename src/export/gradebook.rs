//! DIR/gradebook.csv: one row per student for a learning-management system's generic CSV
//! import: student_id, student_name, section, score, max_score, percent, letter, feedback.
//! A later submission with an id already seen in its section (`duplicate-student`) is left
//! out: the first one counts, and results.csv lists both. Text from student input is guarded
//! against formula injection.

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
        if a.has(Flag::DuplicateStudent) {
            return Ok(());
        }
        let s = &a.submission;
        let t = |v: Option<&str>| neutralise(v.unwrap_or("")).into_owned();
        let sc = &g.score;
        let record = [
            t(s.student_id.as_deref()),
            t(s.student_name.as_deref()),
            t(Some(&s.section)),
            number(Some(sc.total)),
            number(Some(sc.max)),
            number(Some((sc.percent * 100.0).round() / 100.0)),
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
