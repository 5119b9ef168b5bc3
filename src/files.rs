//! Files benchgrade creates beside its outputs: temporary files, created new (never opened
//! through a link someone planted), whose names carry the writer's process id so that a later
//! run can tell a dead writer's leftovers from a live one's; and the output folder's lock.
//! `dir`: a folder held as a handle, for everything benchgrade renames or removes.

pub mod dir;

use std::fs::{File, OpenOptions};
use std::io;
use std::path::{Path, PathBuf};
use std::time::{Duration, Instant};

/// Creates `path` as a new file. Whatever already stands at that name (a leftover, or a link
/// planted there) is unlinked first, never followed: the new file is always our own.
pub fn create_new(path: &Path) -> io::Result<File> {
    let open = || {
        OpenOptions::new()
            .read(true)
            .write(true)
            .create_new(true)
            .open(path)
    };
    match open() {
        Err(e) if e.kind() == io::ErrorKind::AlreadyExists => {
            std::fs::remove_file(path)?;
            open()
        }
        other => other,
    }
}

/// Reads a whole file, refusing anything but a regular file: a pipe or a device (a link to
/// /dev/zero named like a spreadsheet) would never end.
pub fn read(path: &Path) -> io::Result<Vec<u8>> {
    let meta = std::fs::metadata(path)?;
    if !meta.is_file() {
        return Err(io::Error::other(
            "not a regular file (a pipe, device or socket); only files are read",
        ));
    }
    std::fs::read(path)
}

/// `read`, as UTF-8 text.
pub fn read_to_string(path: &Path) -> io::Result<String> {
    String::from_utf8(read(path)?).map_err(|_| io::Error::other("not UTF-8 text"))
}

/// The output folder's lock: held while a run writes into the folder, so that two runs never
/// mix their files. An advisory lock (flock) on `DIR/.benchgrade.lock`, opened without
/// following a link; the kernel drops it when the process ends, however it ends.
#[derive(Debug)]
pub struct FolderLock {
    _file: File,
}

/// The lock file's name in the output folder.
pub const LOCK_NAME: &str = ".benchgrade.lock";

impl FolderLock {
    /// Takes the lock on `dir`, waiting up to `wait` for another run to finish; `None` if it is
    /// still held then.
    pub fn take(dir: &Path, wait: Duration) -> io::Result<Option<FolderLock>> {
        let file = open_no_follow(&dir.join(LOCK_NAME))?;
        let start = Instant::now();
        loop {
            match file.try_lock() {
                Ok(()) => return Ok(Some(FolderLock { _file: file })),
                Err(std::fs::TryLockError::WouldBlock) if start.elapsed() < wait => {
                    std::thread::sleep(Duration::from_millis(50));
                }
                Err(std::fs::TryLockError::WouldBlock) => return Ok(None),
                Err(std::fs::TryLockError::Error(e)) => return Err(e),
            }
        }
    }
}

/// Opens (creating if need be) a file without following a link at its name.
fn open_no_follow(path: &Path) -> io::Result<File> {
    let mut o = OpenOptions::new();
    o.read(true).write(true).create(true).truncate(false);
    #[cfg(unix)]
    {
        use std::os::unix::fs::OpenOptionsExt;
        o.custom_flags(libc::O_NOFOLLOW);
    }
    o.open(path)
}

/// The temporary file in `dir` for an output named like `path`: `.NAME.PID.partial`, the
/// process id telling a later run whether its writer is still alive.
pub fn partial_path(dir: &Path, path: &Path) -> PathBuf {
    let name = path
        .file_name()
        .and_then(|n| n.to_str())
        .unwrap_or("output");
    dir.join(format!(".{name}.{}.partial", std::process::id()))
}

/// Removes temporary files that a run killed mid-write left in the folder at `path` (not
/// followed if a link stands there): names of the form `.NAME.PID.partial` whose process is
/// gone. Where there is no /proc to ask (not Linux), nothing is removed. The finished outputs
/// are never touched.
pub fn sweep_stale_partials(path: &Path) {
    if let Ok(d) = dir::Dir::open_no_follow(path) {
        sweep_in(&d);
    }
}

/// `sweep_stale_partials` in a folder already open.
pub fn sweep_in(d: &dir::Dir) {
    let proc = Path::new("/proc");
    if !proc.join("self").exists() {
        return;
    }
    let Ok(names) = d.names() else {
        return;
    };
    for name in names {
        let Some(pid) = name.to_str().and_then(partial_pid) else {
            continue;
        };
        // unlinkat removes what stands at the name (a link too), never what it points to
        if pid != std::process::id() && !proc.join(pid.to_string()).exists() {
            let _ = d.remove_file(&name);
        }
    }
}

/// The process id in a temporary file's name `.NAME.PID.partial`.
pub fn partial_pid(name: &str) -> Option<u32> {
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

    #[test]
    fn a_planted_link_is_replaced_not_followed() {
        let dir = tempfile::tempdir().unwrap();
        let outside = dir.path().join("outside.txt");
        std::fs::write(&outside, b"keep me").unwrap();
        let tmp = dir.path().join(".gradebook.csv.1.partial");
        std::os::unix::fs::symlink(&outside, &tmp).unwrap();
        use std::io::Write;
        create_new(&tmp).unwrap().write_all(b"ours").unwrap();
        assert_eq!(std::fs::read(&outside).unwrap(), b"keep me");
        assert_eq!(std::fs::read(&tmp).unwrap(), b"ours");
        assert!(!std::fs::symlink_metadata(&tmp).unwrap().is_symlink());
    }

    #[test]
    fn a_second_lock_waits_then_gives_up() {
        let dir = tempfile::tempdir().unwrap();
        let first = FolderLock::take(dir.path(), Duration::ZERO).unwrap();
        assert!(first.is_some());
        let second = FolderLock::take(dir.path(), Duration::from_millis(120)).unwrap();
        assert!(second.is_none());
        drop(first);
        assert!(FolderLock::take(dir.path(), Duration::ZERO)
            .unwrap()
            .is_some());
    }
}
