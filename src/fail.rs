//! How the binary fails: never with a panic's message and exit code 101, never with a broken
//! pipe's. A panic anywhere (a bug) is caught and becomes one line and exit code 1; the outputs
//! are then as they were, because nothing is made current until every output is complete. A
//! reader that closed the pipe (`benchgrade check | head`) ends the run quietly with exit 0, as
//! ripgrep and xsv do.

use std::io::Write;
use std::process::ExitCode;
use std::sync::Mutex;

/// Where the last panic happened and what it said, kept by the hook for the one message.
static PANIC: Mutex<Option<String>> = Mutex::new(None);
/// What the run was doing, for that message: "grading into graded".
static DOING: Mutex<String> = Mutex::new(String::new());

/// Replaces the default panic message (which would show a backtrace hint and internals) with a
/// note kept for `internal_error`. A panic inside `benchgrade::contain` (a reader on a damaged
/// file) is caught there and is neither printed nor kept.
pub fn install_hook() {
    std::panic::set_hook(Box::new(|info| {
        if benchgrade::contain::active() {
            // a damaged input inside a reader: caught, and reported as that file's problem
            return;
        }
        let what = info
            .payload()
            .downcast_ref::<&str>()
            .map(|s| (*s).to_string())
            .or_else(|| info.payload().downcast_ref::<String>().cloned())
            .unwrap_or_else(|| "a panic".into());
        let at = info
            .location()
            .map(|l| format!(" at {}:{}", l.file(), l.line()))
            .unwrap_or_default();
        if let Ok(mut p) = PANIC.lock() {
            p.get_or_insert(format!("{what}{at}"));
        }
    }));
}

/// Says what the run is doing, for the message a panic would give.
pub fn doing(what: String) {
    if let Ok(mut d) = DOING.lock() {
        *d = what;
    }
}

/// Writes a line to standard error; a closed standard error is ignored.
pub fn say(line: &str) {
    let _ = writeln!(std::io::stderr().lock(), "{line}");
}

/// The one message for an internal error, and its exit code.
pub fn internal_error() -> ExitCode {
    let doing = DOING.lock().map(|d| d.clone()).unwrap_or_default();
    let doing = if doing.is_empty() {
        "running".into()
    } else {
        doing
    };
    let detail = PANIC
        .lock()
        .ok()
        .and_then(|p| p.clone())
        .unwrap_or_else(|| "a writer thread stopped".into());
    say(&format!(
        "benchgrade: internal error while {doing}; previous outputs kept; please report it, with this line: {detail}"
    ));
    ExitCode::from(1)
}

/// Whether an error is a closed pipe on standard output.
pub fn is_broken_pipe(e: &anyhow::Error) -> bool {
    e.chain().any(|c| {
        c.downcast_ref::<std::io::Error>()
            .is_some_and(|io| io.kind() == std::io::ErrorKind::BrokenPipe)
    })
}
