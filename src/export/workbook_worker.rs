//! The graded workbooks, written on a thread of their own. Laying out cells and compressing a
//! workbook is the largest single cost of a run; on its own thread it overlaps with reading,
//! grading and every other output instead of following them.
//!
//! Rows travel in chunks through a bounded channel, so the thread holds only a few chunks
//! however large the class. The statistics sheet's figures come from the main thread's section
//! statistics, shared once every row has been sent.

use std::path::{Path, PathBuf};
use std::sync::mpsc::{channel, sync_channel, Receiver, Sender, SyncSender};
use std::sync::Arc;
use std::thread::JoinHandle;

use super::atomic::overwritten_input;
use super::provenance::Provenance;
use super::workbook::GradedWorkbooks;
use crate::error::WriteError;
use crate::rubric::score::Graded;
use crate::stats::sections::SectionStats;

/// Rows sent to the thread at a time.
const CHUNK: usize = 256;
/// Chunks waiting for the thread before the sender blocks.
const QUEUED: usize = 4;

enum Message {
    Rows(Vec<Graded>),
    /// Every row has been sent: check the paths against `inputs`, answer on `reply` if none
    /// would overwrite one (else hang up), then save.
    Finish {
        provenance: Provenance,
        stats: Arc<SectionStats>,
        inputs: Vec<PathBuf>,
        reply: Sender<()>,
    },
}

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

/// The sending side, held by the grading thread.
pub struct BookWorker {
    tx: SyncSender<Message>,
    handle: JoinHandle<Result<Vec<PathBuf>, BookError>>,
    pending: Vec<Graded>,
}

/// The workbooks being saved after every row was sent.
pub struct Saving {
    handle: JoinHandle<Result<Vec<PathBuf>, BookError>>,
}

impl BookWorker {
    pub fn spawn(books: GradedWorkbooks) -> BookWorker {
        let (tx, rx) = sync_channel(QUEUED);
        let handle = std::thread::spawn(move || run(books, rx));
        BookWorker {
            tx,
            handle,
            pending: Vec::with_capacity(CHUNK),
        }
    }

    /// Queues a row; sends a chunk when one is full.
    pub fn row(&mut self, g: Graded) {
        self.pending.push(g);
        if self.pending.len() >= CHUNK {
            let chunk = std::mem::replace(&mut self.pending, Vec::with_capacity(CHUNK));
            if self.tx.send(Message::Rows(chunk)).is_err() {
                // the thread stopped on an error: it is reported by `finish`
                self.pending.clear();
            }
        }
    }

    /// Sends the last rows, waits until the thread has checked that no workbook would
    /// overwrite an input, and leaves it saving.
    pub fn finish(
        mut self,
        provenance: Provenance,
        stats: Arc<SectionStats>,
        inputs: Vec<PathBuf>,
    ) -> Result<Saving, BookError> {
        let chunk = std::mem::take(&mut self.pending);
        let (reply, answer) = channel();
        let sent = self.tx.send(Message::Rows(chunk)).is_ok()
            && self
                .tx
                .send(Message::Finish {
                    provenance,
                    stats,
                    inputs,
                    reply,
                })
                .is_ok();
        if sent && answer.recv().is_ok() {
            return Ok(Saving {
                handle: self.handle,
            });
        }
        // the thread stopped early or refused: its own result says why
        Err(join(self.handle)
            .err()
            .unwrap_or_else(|| thread_error("the workbook thread stopped")))
    }
}

impl Saving {
    /// Waits for every workbook to be saved; returns their paths.
    pub fn wait(self) -> Result<Vec<PathBuf>, BookError> {
        join(self.handle)
    }
}

fn join(handle: JoinHandle<Result<Vec<PathBuf>, BookError>>) -> Result<Vec<PathBuf>, BookError> {
    handle
        .join()
        .unwrap_or_else(|_| Err(thread_error("the workbook thread panicked")))
}

fn thread_error(what: &str) -> BookError {
    BookError::Write(WriteError::other(Path::new("graded workbooks"), what))
}

/// The thread: lays out rows as they come, then checks and saves.
fn run(mut books: GradedWorkbooks, rx: Receiver<Message>) -> Result<Vec<PathBuf>, BookError> {
    for message in rx {
        match message {
            Message::Rows(rows) => {
                for g in &rows {
                    books.row(g)?;
                }
            }
            Message::Finish {
                provenance,
                stats,
                inputs,
                reply,
            } => {
                if let Some(p) = overwritten_input(&books.paths(), &inputs) {
                    return Err(BookError::WouldOverwrite(p));
                }
                let _ = reply.send(());
                return Ok(books.finish(&stats, &provenance)?);
            }
        }
    }
    Ok(Vec::new())
}
