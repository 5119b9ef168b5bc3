//! Grading in the background, one run at a time, on a thread of its own. Every change to the
//! workspace (from the page, or a file edited by hand and noticed by its fingerprint) raises
//! the revision; the thread grades whenever the revision is ahead of its last run, so changes
//! that arrive during a run are merged into the next one, and no request waits for a run
//! unless it asks to. The outcome of each run (the records of results.json, the problems, the
//! sheets' layouts) is kept for the page and published through a watch channel. Each run is
//! a child process (`child`): a file that makes a reader abort costs its run, is set aside in
//! quarantine/ with a note, and the rest is graded again.

use std::collections::HashMap;
use std::path::Path;
use std::sync::{mpsc, Arc, Mutex, PoisonError};
use std::time::Instant;

use serde::{Deserialize, Serialize};
use tokio::sync::watch;

use crate::ingest::{Problem, SheetReport};
use crate::pipeline::Batch;
use crate::rubric::Rubric;

use super::child::{self, Ended, Report};

use super::workspace::{Fingerprint, Workspace, GRADED, INPUTS};

/// A run's totals, as `grade` prints them.
#[derive(Clone, Debug, Serialize, Deserialize)]
pub struct Summary {
    pub submissions: usize,
    pub files: usize,
    pub impossible: usize,
    pub suspicious: usize,
    pub clean: usize,
    pub excused: usize,
}

/// A problem a run reported, with the file named as `GET /api/files` names it.
#[derive(Clone, Debug, Serialize, Deserialize)]
pub struct FileProblem {
    pub file: String,
    pub sheet: Option<String>,
    pub message: String,
    pub fatal: bool,
}

/// A rubric criterion, for the override form.
#[derive(Clone, Debug, Serialize, Deserialize)]
pub struct CriterionInfo {
    pub id: String,
    pub label: String,
    pub max: f64,
}

/// What the last run found.
#[derive(Clone, Debug, Default)]
pub struct Outcome {
    /// The revision of the workspace the run read (0: none yet).
    pub covers: u64,
    /// results.json's records, as the run wrote them (a failed run: the outputs still there).
    pub records: Vec<serde_json::Value>,
    pub problems: Vec<FileProblem>,
    /// How each sheet was read (`benchgrade check`'s column table), with `file` added.
    pub sheets: Vec<serde_json::Value>,
    pub summary: Option<Summary>,
    pub criteria: Vec<CriterionInfo>,
    /// Why the run wrote nothing: a configuration error, nothing to grade, a full disk, a
    /// run that ended abnormally.
    pub error: Option<String>,
    /// The files in quarantine/: each ended a run abnormally and is no longer read.
    pub set_aside: Vec<FileProblem>,
    pub millis: u64,
}

/// What the page can ask at any time.
#[derive(Clone, Debug)]
pub struct State {
    /// Raised by every change to the workspace.
    pub revision: u64,
    pub grading: bool,
    /// Raised by every change of this state, for long polls.
    pub version: u64,
    pub outcome: Arc<Outcome>,
}

pub struct Grader {
    state: watch::Sender<State>,
    wake: Mutex<mpsc::Sender<()>>,
    seen: Mutex<Fingerprint>,
    ws: Workspace,
    /// Why each file was set aside while this server ran ("quarantine/NAME" -> message).
    notes: Mutex<HashMap<String, String>>,
}

fn lock<T>(m: &Mutex<T>) -> std::sync::MutexGuard<'_, T> {
    m.lock().unwrap_or_else(PoisonError::into_inner)
}

impl Grader {
    /// Starts the grading thread, which grades the workspace at once.
    pub fn start(ws: Workspace) -> std::io::Result<Arc<Grader>> {
        let (wake, woken) = mpsc::channel();
        let (state, _) = watch::channel(State {
            revision: 0,
            grading: false,
            version: 0,
            outcome: Arc::new(Outcome::default()),
        });
        let grader = Arc::new(Grader {
            state,
            wake: Mutex::new(wake),
            seen: Mutex::new(Fingerprint::default()),
            ws,
            notes: Mutex::new(HashMap::new()),
        });
        let worker = Arc::clone(&grader);
        std::thread::Builder::new()
            .name("grader".into())
            .spawn(move || worker.work(&woken))?;
        grader.changed();
        Ok(grader)
    }

    /// Notes a change to the workspace and wakes the grading thread; the new revision.
    pub fn changed(&self) -> u64 {
        *lock(&self.seen) = self.ws.fingerprint();
        let mut revision = 0;
        self.state.send_modify(|s| {
            s.revision += 1;
            s.version += 1;
            revision = s.revision;
        });
        let _ = lock(&self.wake).send(());
        revision
    }

    /// Looks for files changed by hand since the last look, and regrades if there are any.
    pub fn notice_hand_edits(&self) {
        let now = self.ws.fingerprint();
        let changed = {
            let mut seen = lock(&self.seen);
            let changed = *seen != now;
            *seen = now;
            changed
        };
        if changed {
            self.changed();
        }
    }

    pub fn state(&self) -> State {
        self.state.borrow().clone()
    }

    pub fn subscribe(&self) -> watch::Receiver<State> {
        self.state.subscribe()
    }

    /// The outcome of a run that read at least `revision` (at most the current one), once
    /// there is one.
    pub async fn graded(&self, revision: u64) -> Arc<Outcome> {
        let mut rx = self.subscribe();
        let wanted = revision.min(rx.borrow().revision);
        let found = match rx.wait_for(|s| s.outcome.covers >= wanted).await {
            Ok(s) => Arc::clone(&s.outcome),
            Err(_) => Arc::clone(&self.state.borrow().outcome),
        };
        found
    }

    /// The grading thread: whenever the revision is ahead of the last run, grade again.
    fn work(&self, woken: &mpsc::Receiver<()>) {
        while woken.recv().is_ok() {
            while woken.try_recv().is_ok() {}
            loop {
                let (target, before) = {
                    let s = self.state.borrow();
                    (s.revision, Arc::clone(&s.outcome))
                };
                if before.covers >= target {
                    break;
                }
                self.state.send_modify(|s| {
                    s.grading = true;
                    s.version += 1;
                });
                let (outcome, set_aside) = self.run(target, &before);
                self.state.send_modify(|s| {
                    s.grading = false;
                    s.version += 1;
                    s.outcome = Arc::new(outcome);
                });
                // the file that ended the run is out of inputs/: grade the rest again
                if set_aside {
                    self.changed();
                }
            }
        }
    }
}

impl Grader {
    /// One run: `benchgrade grade inputs --columns columns.toml --overrides overrides.csv
    /// --out graded` in a child process, and what the page needs from it; true when a file
    /// that ended the run abnormally was set aside.
    fn run(&self, covers: u64, before: &Outcome) -> (Outcome, bool) {
        let started = Instant::now();
        let mut out = Outcome {
            covers,
            criteria: before.criteria.clone(),
            problems: before.problems.clone(),
            sheets: before.sheets.clone(),
            ..Outcome::default()
        };
        let mut set_aside = false;
        match child::grade(&self.ws) {
            Ended::Report(r) => settle(&mut out, r),
            Ended::Abnormal { reading, how } => {
                let moved = reading.as_deref().and_then(child::set_aside);
                out.error = Some(self.abnormal(reading.as_deref(), moved.as_deref(), &how));
                out.records = read_records().unwrap_or_default();
                set_aside = moved.is_some();
            }
        }
        out.set_aside = self.set_aside_notes();
        out.millis = started.elapsed().as_millis() as u64;
        (out, set_aside)
    }

    /// The message for a run that ended abnormally, kept as the note of the file set aside.
    fn abnormal(&self, reading: Option<&str>, moved: Option<&Path>, how: &str) -> String {
        match (reading, moved) {
            (Some(file), Some(to)) => {
                let to = to.display().to_string();
                let note = format!(
                    "the grading run {how} while reading {file}; the file was moved to {to} and is no longer graded (most likely a damaged spreadsheet: save it again from a spreadsheet program, check it with `benchgrade check`, and upload it again)"
                );
                lock(&self.notes).insert(to, note.clone());
                format!("{note}; the other files are graded again")
            }
            (Some(file), None) => format!(
                "the grading run {how} while reading {file}; the previous outputs are kept (take the file out of inputs/ and grade again)"
            ),
            (None, _) => format!(
                "the grading run {how} after reading the inputs (a bug); the previous outputs are kept"
            ),
        }
    }

    /// The files in quarantine/, each with why it is there.
    fn set_aside_notes(&self) -> Vec<FileProblem> {
        let notes = lock(&self.notes);
        child::set_aside_files()
            .into_iter()
            .map(|file| FileProblem {
                message: notes.get(&file).cloned().unwrap_or_else(|| {
                    "set aside by an earlier run, which it ended abnormally; it is not graded (delete it, or save it again from a spreadsheet program and upload it again)".into()
                }),
                file,
                sheet: None,
                fatal: true,
            })
            .collect()
    }
}

/// What a run reported, over what the last run found.
fn settle(out: &mut Outcome, r: Report) {
    if let Some(c) = r.criteria {
        out.criteria = c;
    }
    if let Some(p) = r.problems {
        out.problems = p;
    }
    if let Some(s) = r.sheets {
        out.sheets = s;
    }
    out.summary = r.summary;
    out.error = r.error;
    if r.records {
        match read_records() {
            Ok(records) => out.records = records,
            Err(e) => {
                out.error.get_or_insert(e);
            }
        }
    }
}

pub(super) fn summary(batch: &Batch) -> Summary {
    let t = &batch.tally;
    Summary {
        submissions: t.rows,
        files: batch.files.len(),
        impossible: t.impossible,
        suspicious: t.suspicious,
        clean: t.rows - t.impossible - t.suspicious - t.excused,
        excused: t.excused,
    }
}

pub(super) fn criteria(rubric: &Rubric) -> Vec<CriterionInfo> {
    rubric
        .criteria
        .iter()
        .map(|c| CriterionInfo {
            id: c.id.get_ref().clone(),
            label: c.label.clone(),
            max: *c.max.get_ref(),
        })
        .collect()
}

/// A file as `GET /api/files` names it: relative to inputs/.
pub fn input_name(source: &str) -> String {
    Path::new(source).strip_prefix(INPUTS).map_or_else(
        |_| source.to_string(),
        |p| p.to_string_lossy().replace('\\', "/"),
    )
}

pub(super) fn file_problem(p: &Problem) -> FileProblem {
    FileProblem {
        file: input_name(&p.file),
        sheet: p.sheet.clone(),
        message: p.message.clone(),
        fatal: p.fatal,
    }
}

pub(super) fn sheet(report: &SheetReport) -> serde_json::Value {
    let mut v = serde_json::to_value(report).unwrap_or_default();
    if let Some(m) = v.as_object_mut() {
        m.insert("file".into(), input_name(&report.source).into());
    }
    v
}

/// graded/results.json's records.
fn read_records() -> Result<Vec<serde_json::Value>, String> {
    let path = Path::new(GRADED).join("results.json");
    let bytes = match crate::files::read(&path) {
        Ok(b) => b,
        Err(e) if e.kind() == std::io::ErrorKind::NotFound => return Ok(Vec::new()),
        Err(e) => return Err(format!("cannot read {}: {e}", path.display())),
    };
    #[derive(serde::Deserialize)]
    struct Results {
        records: Vec<serde_json::Value>,
    }
    serde_json::from_slice::<Results>(&bytes)
        .map(|r| r.records)
        .map_err(|e| format!("cannot read {}: {e}", path.display()))
}
