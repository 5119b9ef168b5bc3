//! Outputs written on threads of their own. Grading a row is cheap next to writing it out five
//! ways, so the grading thread hands finished rows to writer threads and goes on: the graded
//! workbooks on one, the text outputs (results.csv, results.json, gradebook.csv) on another.
//!
//! Rows travel in chunks shared by every thread (`Fanout`), through bounded channels, so a
//! thread holds only a few chunks however large the class, and a row is never copied. A thread
//! that fails stops taking rows; its error comes back when it is finished. Dropping a thread
//! without finishing it waits for it to drop its temporary files.

use std::sync::mpsc::{sync_channel, SyncSender};
use std::sync::Arc;
use std::thread::JoinHandle;

use crate::model::Graded;

/// Rows sent at a time.
const CHUNK: usize = 256;
/// Chunks waiting for a thread before the sender blocks.
const QUEUED: usize = 4;

/// A chunk of rows, shared by the threads that write them.
pub type Chunk = Arc<Vec<Graded>>;

/// What a writer thread does with the rows, and at the end.
pub trait RowSink: Send + 'static {
    /// What the thread is given when every row has been sent.
    type Finish: Send + 'static;
    /// What the thread hands back at the end.
    type Output: Send + 'static;
    type Error: Send + 'static;
    fn rows(&mut self, rows: &[Graded]) -> Result<(), Self::Error>;
    fn finish(self, with: Self::Finish) -> Result<Self::Output, Self::Error>;
}

enum Message<F> {
    Rows(Chunk),
    Finish(F),
}

type Outcome<S> = Result<<S as RowSink>::Output, <S as RowSink>::Error>;

/// The sending side of one writer thread.
pub struct RowThread<S: RowSink> {
    tx: Option<SyncSender<Message<S::Finish>>>,
    handle: Option<JoinHandle<Option<Outcome<S>>>>,
}

impl<S: RowSink> RowThread<S> {
    pub fn spawn(name: &str, mut sink: S) -> std::io::Result<RowThread<S>> {
        let (tx, rx) = sync_channel::<Message<S::Finish>>(QUEUED);
        let handle = std::thread::Builder::new()
            .name(name.to_string())
            .spawn(move || {
                for message in rx {
                    match message {
                        Message::Rows(chunk) => {
                            if let Err(e) = sink.rows(&chunk) {
                                return Some(Err(e));
                            }
                        }
                        Message::Finish(with) => return Some(sink.finish(with)),
                    }
                }
                // dropped unfinished: the sink's temporary files go with it
                None
            })?;
        Ok(RowThread {
            tx: Some(tx),
            handle: Some(handle),
        })
    }

    fn send(&self, chunk: &Chunk) {
        if let Some(tx) = &self.tx {
            // a thread that stopped on an error reports it from `finish`
            let _ = tx.send(Message::Rows(chunk.clone()));
        }
    }

    /// Hands the thread `with` and waits for its outcome; `None` if the thread died.
    pub fn finish(mut self, with: S::Finish) -> Option<Outcome<S>> {
        self.start_finish(with);
        self.join()
    }

    /// Hands the thread `with` without waiting; `join` collects the outcome.
    pub fn start_finish(&mut self, with: S::Finish) {
        if let Some(tx) = self.tx.take() {
            let _ = tx.send(Message::Finish(with));
        }
    }

    /// Waits for the thread; `None` if it died or was never finished.
    pub fn join(mut self) -> Option<Outcome<S>> {
        self.tx = None;
        self.handle.take()?.join().ok().flatten()
    }
}

impl<S: RowSink> Drop for RowThread<S> {
    fn drop(&mut self) {
        self.tx = None;
        if let Some(h) = self.handle.take() {
            let _ = h.join();
        }
    }
}

/// Collects rows into chunks and sends each full chunk to every thread it was given.
pub struct Fanout<'a> {
    pending: Vec<Graded>,
    targets: Vec<&'a dyn Target>,
}

/// A thread a `Fanout` sends to.
pub trait Target {
    fn take(&self, chunk: &Chunk);
}

impl<S: RowSink> Target for RowThread<S> {
    fn take(&self, chunk: &Chunk) {
        self.send(chunk);
    }
}

impl<'a> Fanout<'a> {
    pub fn new(targets: Vec<&'a dyn Target>) -> Fanout<'a> {
        Fanout {
            pending: Vec::with_capacity(CHUNK),
            targets,
        }
    }

    pub fn row(&mut self, g: Graded) {
        self.pending.push(g);
        if self.pending.len() >= CHUNK {
            self.flush();
        }
    }

    /// Sends the rows not yet sent.
    pub fn flush(&mut self) {
        if self.pending.is_empty() {
            return;
        }
        let chunk = Arc::new(std::mem::replace(
            &mut self.pending,
            Vec::with_capacity(CHUNK),
        ));
        for t in &self.targets {
            t.take(&chunk);
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Counts rows; fails on the row whose `row` number is `fail_at`.
    struct Count {
        seen: usize,
        fail_at: Option<u32>,
    }

    impl RowSink for Count {
        type Finish = usize;
        type Output = usize;
        type Error = u32;
        fn rows(&mut self, rows: &[Graded]) -> Result<(), u32> {
            for g in rows {
                if Some(g.assessed.submission.row) == self.fail_at {
                    return Err(g.assessed.submission.row);
                }
                self.seen += 1;
            }
            Ok(())
        }
        fn finish(self, extra: usize) -> Result<usize, u32> {
            Ok(self.seen + extra)
        }
    }

    fn graded(row: u32) -> Graded {
        let mut g = Graded::default();
        g.assessed.submission.row = row;
        g
    }

    #[test]
    fn every_thread_sees_every_row_once() {
        let a = RowThread::spawn(
            "a",
            Count {
                seen: 0,
                fail_at: None,
            },
        )
        .unwrap();
        let b = RowThread::spawn(
            "b",
            Count {
                seen: 0,
                fail_at: None,
            },
        )
        .unwrap();
        let mut fan = Fanout::new(vec![&a, &b]);
        for i in 0..1000 {
            fan.row(graded(i));
        }
        fan.flush();
        drop(fan);
        assert_eq!(a.finish(1).and_then(Result::ok), Some(1001));
        assert_eq!(b.finish(0).and_then(Result::ok), Some(1000));
    }

    #[test]
    fn a_failing_thread_reports_its_first_error_at_the_end() {
        let a = RowThread::spawn(
            "a",
            Count {
                seen: 0,
                fail_at: Some(300),
            },
        )
        .unwrap();
        let mut fan = Fanout::new(vec![&a]);
        for i in 0..2000 {
            fan.row(graded(i));
        }
        fan.flush();
        drop(fan);
        assert_eq!(a.finish(0).and_then(Result::err), Some(300));
    }
}
