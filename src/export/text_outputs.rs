//! results.csv, results.json, gradebook.csv, the pseudonymized results and the handouts, written together on
//! a writer thread (`row_thread`): formatting a row's numbers and sentences four ways, and the
//! system calls that write them, cost the grading thread more than grading it.

use super::gradebook::Gradebook;
use super::handouts::Handouts;
use super::results_csv::ResultsCsv;
use super::results_json::ResultsJson;
use super::row_thread::{RowSink, RowThread};
use crate::error::WriteError;
use crate::ingest::Problem;
use crate::model::Graded;

/// The text outputs of a grading run, open while rows stream past.
pub struct TextOutputs {
    pub csv: ResultsCsv,
    pub pseudonymized: Option<ResultsCsv>,
    pub json: ResultsJson,
    pub gradebook: Gradebook,
    /// `None` with `--skip-handouts`.
    pub handouts: Option<Handouts>,
}

impl RowSink for TextOutputs {
    /// The batch's problems, which results.json lists after the records.
    type Finish = Vec<Problem>;
    type Output = ();
    type Error = WriteError;

    fn rows(&mut self, rows: &[Graded]) -> Result<(), WriteError> {
        for g in rows {
            self.csv.row(g)?;
            if let Some(p) = self.pseudonymized.as_mut() {
                p.row(g)?;
            }
            self.json.row(g)?;
            self.gradebook.row(g)?;
            if let Some(h) = self.handouts.as_mut() {
                h.row(g)?;
            }
        }
        Ok(())
    }

    fn finish(self, problems: Vec<Problem>) -> Result<(), WriteError> {
        self.csv.finish()?;
        if let Some(p) = self.pseudonymized {
            p.finish()?;
        }
        self.json.finish(&problems)?;
        self.gradebook.finish()?;
        self.handouts.map_or(Ok(()), Handouts::finish)
    }
}

/// The text outputs' thread.
pub type TextWorker = RowThread<TextOutputs>;
