//! Files benchgrade creates beside its outputs: the names of temporary files, which carry the
//! writer's process id so that a later run can tell a dead writer's leftovers from a live one's.

use std::path::{Path, PathBuf};

/// The temporary file in `dir` for an output named like `path`: `.NAME.PID.partial`, the
/// process id telling a later run whether its writer is still alive.
pub fn partial_path(dir: &Path, path: &Path) -> PathBuf {
    let name = path
        .file_name()
        .and_then(|n| n.to_str())
        .unwrap_or("output");
    dir.join(format!(".{name}.{}.partial", std::process::id()))
}

/// Removes temporary files that a run killed mid-write left in `dir`: names of the form
/// `.NAME.PID.partial` whose process is gone. Where there is no /proc to ask (not Linux),
/// nothing is removed. The finished outputs are never touched.
pub fn sweep_stale_partials(dir: &Path) {
    let proc = Path::new("/proc");
    if !proc.join("self").exists() {
        return;
    }
    let Ok(entries) = std::fs::read_dir(dir) else {
        return;
    };
    for entry in entries.flatten() {
        let name = entry.file_name();
        let Some(pid) = name.to_str().and_then(partial_pid) else {
            continue;
        };
        if pid != std::process::id() && !proc.join(pid.to_string()).exists() {
            let _ = std::fs::remove_file(entry.path());
        }
    }
}

/// The process id in a temporary file's name `.NAME.PID.partial`.
fn partial_pid(name: &str) -> Option<u32> {
    let rest = name.strip_prefix('.')?.strip_suffix(".partial")?;
    let (_, pid) = rest.rsplit_once('.')?;
    pid.parse().ok()
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn temporary_names_carry_the_writer_process() {
        assert_eq!(partial_pid(".results.csv.4242.partial"), Some(4242));
        assert_eq!(partial_pid(".a.b.c.7.partial"), Some(7));
        assert_eq!(partial_pid("results.csv"), None);
        assert_eq!(partial_pid(".results.csv.partial"), None);
    }
}
