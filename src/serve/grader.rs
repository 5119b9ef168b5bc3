//! Grading in the background, one run at a time, on a thread of its own. Every change to the
//! workspace (from the page, or a file edited by hand and noticed by its fingerprint) raises
//! the revision; the thread grades whenever the revision is ahead of its last run, so changes
//! that arrive during a run are merged into the next one, and no request waits for a run
//! unless it asks to. The outcome of each run (the records of results.json, the problems, the
//! sheets' layouts) is kept for the page and published through a watch channel.

use std::panic::AssertUnwindSafe;
use std::path::Path;
use std::sync::{mpsc, Arc, Mutex, PoisonError};
use std::time::Instant;

use serde::Serialize;
use tokio::sync::watch;

use crate::config::Config;
use crate::ingest::{Problem, SheetReport};
use crate::pipeline::{Batch, RunError};
use crate::rubric::Rubric;

use super::workspace::{Fingerprint, Workspace, GRADED, INPUTS};

/// A run's totals, as `grade` prints them.
#[derive(Clone, Debug, Serialize)]
pub struct Summary {
    pub submissions: usize,
    pub files: usize,
    pub impossible: usize,
    pub suspicious: usize,
    pub clean: usize,
    pub excused: usize,
}

/// A problem a run reported, with the file named as `GET /api/files` names it.
#[derive(Clone, Debug, Serialize)]
pub struct FileProblem {
    pub file: String,
    pub sheet: Option<String>,
    pub message: String,
    pub fatal: bool,
}

/// A rubric criterion, for the override form.
#[derive(Clone, Debug, Serialize)]
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
    /// Why the run wrote nothing: a configuration error, nothing to grade, a full disk.
    pub error: Option<String>,
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
                let outcome = Arc::new(run(&self.ws, target, &before));
                self.state.send_modify(|s| {
                    s.grading = false;
                    s.version += 1;
                    s.outcome = outcome;
                });
            }
        }
    }
}

/// One run: `benchgrade grade inputs --columns columns.toml --overrides overrides.csv --out
/// graded`, and what the page needs from it.
fn run(ws: &Workspace, covers: u64, before: &Outcome) -> Outcome {
    let started = Instant::now();
    let mut out = Outcome {
        covers,
        criteria: before.criteria.clone(),
        problems: before.problems.clone(),
        sheets: before.sheets.clone(),
        ..Outcome::default()
    };
    match Config::build(ws.options()) {
        Ok(config) => {
            out.criteria = criteria(&config.rubric);
            let result = std::panic::catch_unwind(AssertUnwindSafe(|| crate::grade(&config)));
            settle(&mut out, result);
        }
        Err(e) => {
            out.error = Some(e.to_string());
            out.records = read_records().unwrap_or_default();
        }
    }
    out.millis = started.elapsed().as_millis() as u64;
    out
}

/// The outcome of a run that was attempted.
fn settle(out: &mut Outcome, result: std::thread::Result<Result<Batch, RunError>>) {
    match result {
        Ok(Ok(batch)) => {
            out.summary = Some(summary(&batch));
            out.problems = batch.problems.iter().map(file_problem).collect();
            out.sheets = batch.sheets.iter().map(sheet).collect();
            match read_records() {
                Ok(r) => out.records = r,
                Err(e) => out.error = Some(e),
            }
        }
        Ok(Err(RunError::Nothing { message, problems })) => {
            out.error = Some(message);
            out.problems = problems.iter().map(file_problem).collect();
            out.sheets = Vec::new();
        }
        Ok(Err(e)) => {
            out.error = Some(e.to_string());
            out.records = read_records().unwrap_or_default();
        }
        Err(_) => {
            out.error =
                Some("internal error while grading (a bug); the previous outputs are kept".into());
            out.records = read_records().unwrap_or_default();
        }
    }
}

fn summary(batch: &Batch) -> Summary {
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

fn criteria(rubric: &Rubric) -> Vec<CriterionInfo> {
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

fn file_problem(p: &Problem) -> FileProblem {
    FileProblem {
        file: input_name(&p.file),
        sheet: p.sheet.clone(),
        message: p.message.clone(),
        fatal: p.fatal,
    }
}

fn sheet(report: &SheetReport) -> serde_json::Value {
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
