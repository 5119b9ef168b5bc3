//! The graded workbooks, written on a writer thread (`row_thread`). Laying out cells and
//! compressing a workbook is the largest single cost of a run; on its own thread it overlaps
//! with reading, grading and every other output instead of following them.
//!
//! The statistics sheet's figures come from the grading thread's section statistics, shared
//! once every row has been sent. Whether a workbook would overwrite an input is decided on the
//! grading thread from its own `BookPlan`, before the thread is told to save.

use std::path::PathBuf;
use std::sync::Arc;

use super::provenance::Provenance;
use super::row_thread::{RowSink, RowThread};
use super::workbook::GradedWorkbooks;
use crate::error::WriteError;
use crate::model::Graded;
use crate::stats::sections::SectionStats;

/// What the thread needs once every row has been sent.
pub struct BookFinish {
    pub provenance: Provenance,
    pub stats: Arc<SectionStats>,
}

impl RowSink for GradedWorkbooks {
    type Finish = BookFinish;
    type Output = Vec<PathBuf>;
    type Error = WriteError;

    fn rows(&mut self, rows: &[Graded]) -> Result<(), WriteError> {
        for g in rows {
            self.row(g)?;
        }
        Ok(())
    }

    fn finish(self, f: BookFinish) -> Result<Vec<PathBuf>, WriteError> {
        GradedWorkbooks::finish(self, &f.stats, &f.provenance)
    }
}

/// The workbook thread.
pub type BookWorker = RowThread<GradedWorkbooks>;

/// Tells the thread every row has been sent; it saves while the caller goes on.
pub fn start_saving(worker: &mut BookWorker, provenance: Provenance, stats: Arc<SectionStats>) {
    worker.start_finish(BookFinish { provenance, stats });
}
