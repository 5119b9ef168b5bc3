//! Each grading run of the workspace in a process of its own, so that nothing a file can do
//! to a reader takes the server down: a reader that aborts (an allocation the size of what a
//! damaged header claims, which cannot be caught) ends that run only. The server re-runs its
//! own binary with a hidden subcommand in the workspace; the child tells the server each file
//! before it reads it and once it has (lines `{"reading": "inputs/x.xls"}` and `{"read":
//! "inputs/x.xls"}` on its standard output) and, at the end, what the run found
//! (`{"outcome": {...}}`). A child that ends without an outcome
//! ended abnormally: the file it was reading is set aside in `quarantine/`, named in the
//! state the page shows, and no longer read at every start. So is a child stopped for taking
//! longer than a run may (a reader stuck in a file).

use std::io::{BufRead, BufReader, Write as _};
use std::panic::AssertUnwindSafe;
use std::path::{Path, PathBuf};
use std::process::{Command, Stdio};
use std::sync::mpsc::{self, RecvTimeoutError};
use std::time::{Duration, Instant};

use serde::{Deserialize, Serialize};

use crate::config::Config;
use crate::pipeline::RunError;

use super::grader::{criteria, file_problem, sheet, summary, CriterionInfo, FileProblem, Summary};
use super::workspace::{Workspace, INPUTS};

/// The hidden subcommand the server runs its own binary with.
pub const SUBCOMMAND: &str = "serve-grading-run";

/// Where files that ended a run abnormally are put, beside inputs/ (never read by a run).
pub const QUARANTINE: &str = "quarantine";

/// What a run found, as the child reports it; `None` where the run learnt nothing new (the
/// page keeps what the last run found).
#[derive(Clone, Debug, Default, Serialize, Deserialize)]
pub struct Report {
    pub criteria: Option<Vec<CriterionInfo>>,
    pub summary: Option<Summary>,
    pub problems: Option<Vec<FileProblem>>,
    pub sheets: Option<Vec<serde_json::Value>>,
    /// Why the run wrote nothing: a configuration error, nothing to grade, a full disk.
    pub error: Option<String>,
    /// Whether graded/results.json is worth reading (not after "nothing to grade").
    pub records: bool,
}

/// One line of the child's standard output: a file about to be read, a file read, the end.
#[derive(Debug, Serialize, Deserialize)]
#[serde(rename_all = "lowercase")]
enum Line {
    Reading(String),
    Read(String),
    Outcome(Report),
}

/// One run of `benchgrade grade inputs --columns columns.toml --overrides overrides.csv --out
/// graded` in the working directory, in this process.
pub fn grade_here(ws: &Workspace) -> Report {
    let config = match Config::build(ws.options()) {
        Ok(c) => c,
        Err(e) => {
            return Report {
                error: Some(e.to_string()),
                records: true,
                ..Report::default()
            }
        }
    };
    let mut out = Report {
        criteria: Some(criteria(&config.rubric)),
        records: true,
        ..Report::default()
    };
    match std::panic::catch_unwind(AssertUnwindSafe(|| crate::grade(&config))) {
        Ok(Ok(batch)) => {
            out.summary = Some(summary(&batch));
            out.problems = Some(batch.problems.iter().map(file_problem).collect());
            out.sheets = Some(batch.sheets.iter().map(sheet).collect());
        }
        Ok(Err(RunError::Nothing { message, problems })) => {
            out.error = Some(message);
            out.problems = Some(problems.iter().map(file_problem).collect());
            out.sheets = Some(Vec::new());
            out.records = false;
        }
        Ok(Err(e)) => out.error = Some(e.to_string()),
        Err(_) => {
            out.error =
                Some("internal error while grading (a bug); the previous outputs are kept".into());
        }
    }
    out
}

fn say(line: &Line) {
    let mut out = std::io::stdout().lock();
    if serde_json::to_writer(&mut out, line).is_ok() {
        let _ = out.write_all(b"\n");
        let _ = out.flush();
    }
}

fn announce(path: &Path, done: bool) {
    let shown = path.display().to_string();
    say(&if done {
        Line::Read(shown)
    } else {
        Line::Reading(shown)
    });
}

/// The child: grades the workspace it runs in and reports on standard output.
pub fn child_main() {
    crate::ingest::on_read(announce);
    let ws = Workspace {
        shown: PathBuf::from("."),
    };
    say(&Line::Outcome(grade_here(&ws)));
}

/// How a run in a child process ended.
#[derive(Debug)]
pub enum Ended {
    Report(Report),
    /// Killed by a signal, or gone without its outcome: the file it was reading last, if any,
    /// and how it ended.
    Abnormal {
        reading: Option<String>,
        how: String,
    },
}

/// Grades the workspace (the working directory) in a child process; in this process when no
/// child can be started (the binary gone or replaced since the server started), or when
/// `BENCHGRADE_SERVE_IN_PROCESS` is set (a hook for bench/serve_latency.py, which measures
/// what the child process costs).
pub fn grade(ws: &Workspace) -> Ended {
    if std::env::var_os("BENCHGRADE_SERVE_IN_PROCESS").is_some() {
        return Ended::Report(grade_here(ws));
    }
    let started = std::env::current_exe().and_then(|exe| {
        Command::new(exe)
            .arg(SUBCOMMAND)
            .stdin(Stdio::null())
            .stdout(Stdio::piped())
            // nothing about students goes to the server's standard error
            .stderr(Stdio::null())
            .spawn()
    });
    let Ok(mut child) = started else {
        return Ended::Report(grade_here(ws));
    };
    let (tx, lines) = mpsc::channel();
    if let Some(stdout) = child.stdout.take() {
        std::thread::spawn(move || {
            for line in BufReader::new(stdout).lines().map_while(Result::ok) {
                if let Ok(l) = serde_json::from_str::<Line>(&line) {
                    if tx.send(l).is_err() {
                        break;
                    }
                }
            }
        });
    }
    let limit = run_limit();
    let deadline = Instant::now() + limit;
    let (mut reading, mut report, mut stopped) = (None, None, false);
    loop {
        match lines.recv_timeout(deadline.saturating_duration_since(Instant::now())) {
            Ok(Line::Reading(f)) => reading = Some(f),
            // a run that ends between files or after them is not the fault of the last one
            Ok(Line::Read(f)) if reading.as_ref() == Some(&f) => reading = None,
            Ok(Line::Read(_)) => {}
            Ok(Line::Outcome(r)) => report = Some(r),
            Err(RecvTimeoutError::Disconnected) => break,
            Err(RecvTimeoutError::Timeout) => {
                stopped = child.kill().is_ok();
                break;
            }
        }
    }
    let status = child.wait();
    match (report, status) {
        _ if stopped => Ended::Abnormal {
            reading,
            how: format!(
                "was stopped after {} s, the longest a run may take",
                limit.as_secs_f64()
            ),
        },
        (Some(r), Ok(s)) if s.success() => Ended::Report(r),
        (_, status) => Ended::Abnormal {
            reading,
            how: match status {
                Ok(s) => ended(s),
                Err(e) => format!("could not be waited for ({e})"),
            },
        },
    }
}

/// The longest a run may take before it is stopped (a reader stuck in a file): 15 minutes (a
/// million students grade in under a minute), or `BENCHGRADE_SERVE_RUN_LIMIT_MS` (a test hook).
fn run_limit() -> Duration {
    std::env::var("BENCHGRADE_SERVE_RUN_LIMIT_MS")
        .ok()
        .and_then(|v| v.trim().parse::<u64>().ok())
        .filter(|ms| *ms > 0)
        .map_or(Duration::from_secs(15 * 60), Duration::from_millis)
}

/// How a process ended, in words.
fn ended(status: std::process::ExitStatus) -> String {
    #[cfg(unix)]
    {
        use std::os::unix::process::ExitStatusExt;
        if let Some(sig) = status.signal() {
            let name = match sig {
                libc::SIGABRT => " (SIGABRT: an abort)",
                libc::SIGSEGV => " (SIGSEGV)",
                libc::SIGKILL => " (SIGKILL: often the system out of memory)",
                libc::SIGBUS => " (SIGBUS)",
                _ => "",
            };
            return format!("was ended by signal {sig}{name}");
        }
    }
    match status.code() {
        Some(c) => format!("ended with exit code {c} and no outcome"),
        None => "ended with no outcome".into(),
    }
}

/// Moves an input that ended a run abnormally (`inputs/...`, as the child named it) into
/// `quarantine/`; its new path. `None` for a name that is not a file of inputs/.
pub fn set_aside(reading: &str) -> Option<PathBuf> {
    let rel = Path::new(reading).strip_prefix(INPUTS).ok()?;
    let plain = rel
        .components()
        .all(|c| matches!(c, std::path::Component::Normal(_)));
    let from = Path::new(INPUTS).join(rel);
    if !plain || !std::fs::symlink_metadata(&from).is_ok_and(|m| m.is_file()) {
        return None;
    }
    // one folder: "sec-02/x.xls" becomes "sec-02_x.xls"; a name already taken gets a number
    let flat = rel.to_string_lossy().replace(['/', '\\'], "_");
    std::fs::create_dir_all(QUARANTINE).ok()?;
    let mut to = Path::new(QUARANTINE).join(&flat);
    let mut n = 2;
    while std::fs::symlink_metadata(&to).is_ok() {
        to = Path::new(QUARANTINE).join(format!("{n}-{flat}"));
        n += 1;
    }
    std::fs::rename(&from, &to).ok()?;
    Some(to)
}

/// The files in quarantine/, as "quarantine/NAME", sorted.
pub fn set_aside_files() -> Vec<String> {
    let Ok(entries) = std::fs::read_dir(QUARANTINE) else {
        return Vec::new();
    };
    let mut out: Vec<String> = entries
        .flatten()
        .filter(|e| e.file_type().is_ok_and(|t| t.is_file()))
        .map(|e| format!("{QUARANTINE}/{}", e.file_name().to_string_lossy()))
        .filter(|n| !n.contains("/."))
        .collect();
    out.sort();
    out
}
