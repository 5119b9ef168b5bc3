//! The graded workbooks, written on a writer thread (`row_thread`). Laying out cells and
//! compressing a workbook is the largest single cost of a run; on its own thread it overlaps
//! with reading, grading and every other output instead of following them.
//!
//! The statistics sheet's figures come from the grading thread's section statistics, shared
//! once every row has been sent. Before saving, the thread checks that no workbook would
//! overwrite an input and says so, so that a refusal stops the run before anything is committed.

use std::path::{Path, PathBuf};
use std::sync::mpsc::{channel, Sender};
use std::sync::Arc;

use super::atomic::overwritten_input;
use super::provenance::Provenance;
use super::row_thread::{RowSink, RowThread};
use super::workbook::GradedWorkbooks;
use crate::error::WriteError;
use crate::rubric::score::Graded;
use crate::stats::sections::SectionStats;

/// Why the workbooks were not written.
#[derive(Debug)]
pub enum BookError {
    /// A workbook would overwrite this input.
    WouldOverwrite(PathBuf),
    Write(WriteError),
}

impl From<WriteError> for BookError {
    fn from(e: WriteError) -> BookError {
        BookError::Write(e)
    }
}

/// What the thread needs once every row has been sent.
pub struct BookFinish {
    pub provenance: Provenance,
    pub stats: Arc<SectionStats>,
    /// The batch's inputs, which no workbook may overwrite.
    pub inputs: Vec<PathBuf>,
    /// Answered once the check has passed (hung up on a refusal).
    reply: Sender<()>,
}

impl RowSink for GradedWorkbooks {
    type Finish = BookFinish;
    type Output = Vec<PathBuf>;
    type Error = BookError;

    fn rows(&mut self, rows: &[Graded]) -> Result<(), BookError> {
        for g in rows {
            self.row(g)?;
        }
        Ok(())
    }

    fn finish(self, f: BookFinish) -> Result<Vec<PathBuf>, BookError> {
        if let Some(p) = overwritten_input(&self.paths(), &f.inputs) {
            return Err(BookError::WouldOverwrite(p));
        }
        let _ = f.reply.send(());
        Ok(GradedWorkbooks::finish(self, &f.stats, &f.provenance)?)
    }
}

/// The workbook thread.
pub type BookWorker = RowThread<GradedWorkbooks>;

/// The workbooks being saved after the check passed.
pub struct Saving(BookWorker);

/// Tells the thread every row has been sent and waits until it has checked that no workbook
/// would overwrite an input; it is then left saving.
pub fn finish(
    mut worker: BookWorker,
    provenance: Provenance,
    stats: Arc<SectionStats>,
    inputs: Vec<PathBuf>,
) -> Result<Saving, BookError> {
    let (reply, answer) = channel();
    worker.start_finish(BookFinish {
        provenance,
        stats,
        inputs,
        reply,
    });
    if answer.recv().is_ok() {
        return Ok(Saving(worker));
    }
    // the thread stopped early or refused: its own result says why
    Err(match worker.join() {
        Some(Err(e)) => e,
        _ => thread_error("the workbook thread stopped"),
    })
}

impl Saving {
    /// Waits for every workbook to be saved; returns their paths.
    pub fn wait(self) -> Result<Vec<PathBuf>, BookError> {
        self.0
            .join()
            .unwrap_or_else(|| Err(thread_error("the workbook thread panicked")))
    }
}

fn thread_error(what: &str) -> BookError {
    BookError::Write(WriteError::other(Path::new("graded workbooks"), what))
}
