//! What the `xls` and `ods` targets share: the bytes written to a file (the readers open
//! paths) and read through `benchgrade::ingest::read_file`, as a batch reads a class file.
//!
//! libfuzzer-sys makes every panic abort, before anything can catch it; benchgrade catches a
//! panic inside a third-party reader (`benchgrade::contain`) and makes it that file's problem,
//! so here such a panic unwinds as it does in the binary, and every other panic still aborts
//! and is reported. An allocation past `-rss_limit_mb` is reported as an out-of-memory crash.

use std::path::PathBuf;
use std::sync::Once;

use benchgrade::ingest::{read_file, Event};

fn let_contained_panics_unwind() {
    static ONCE: Once = Once::new();
    ONCE.call_once(|| {
        let abort = std::panic::take_hook();
        std::panic::set_hook(Box::new(move |info| {
            if !benchgrade::contain::active() {
                abort(info);
            }
        }));
    });
}

/// Reads `bytes` as a file named `fuzz.EXT`; every file must end with `FileDone` (a file with
/// no sheet at all is then named by the collector that receives the events).
pub fn read_as(bytes: &[u8], ext: &str) {
    let_contained_panics_unwind();
    let dir = std::env::temp_dir().join(format!("benchgrade-fuzz-{}", std::process::id()));
    let _ = std::fs::create_dir_all(&dir);
    let path: PathBuf = dir.join(format!("fuzz.{ext}"));
    if std::fs::write(&path, bytes).is_err() {
        return;
    }
    let mut done = false;
    read_file(&path, &mut |e| done |= matches!(e, Event::FileDone(_)));
    assert!(done, "a file's reading did not finish");
}
