//! Which files a run reads: the files named, and every spreadsheet under the folders named,
//! recursively and in sorted order, leaving out hidden files, office lock files and the
//! run's own output folder.

use std::collections::{HashMap, HashSet};
use std::path::{Path, PathBuf};

/// Extensions read as workbooks or delimited text.
pub const EXTENSIONS: [&str; 7] = ["xlsx", "xlsm", "xlsb", "xls", "ods", "csv", "tsv"];

/// A path that could not be used as an input, or was passed over.
#[derive(Debug, Clone, PartialEq)]
pub struct Missing {
    pub path: PathBuf,
    pub message: String,
    /// True when data could not be read (exit code 1); false for a note.
    pub fatal: bool,
}

fn is_skipped_name(name: &str) -> bool {
    name.starts_with('.') || name.starts_with("~$") || name.starts_with(".~lock.")
}

pub fn has_known_extension(path: &Path) -> bool {
    path.extension()
        .and_then(|e| e.to_str())
        .is_some_and(|e| EXTENSIONS.contains(&e.to_ascii_lowercase().as_str()))
}

/// A file or folder's identity on its disk: the same file under two names is one file.
fn identity(m: &std::fs::Metadata) -> (u64, u64) {
    #[cfg(unix)]
    {
        use std::os::unix::fs::MetadataExt;
        (m.dev(), m.ino())
    }
    #[cfg(not(unix))]
    {
        let _ = m;
        (0, 0)
    }
}

/// The walk over the inputs: what was found, what was passed over, and what was seen.
struct Walk {
    exclude: Vec<PathBuf>,
    files: Vec<PathBuf>,
    missing: Vec<Missing>,
    /// Files taken, by identity, with the name they were first taken under.
    seen_files: HashMap<(u64, u64), PathBuf>,
    /// Folders entered, by identity.
    seen_dirs: HashSet<(u64, u64)>,
    /// Loops already reported, by the folder they lead back to.
    loops: HashSet<(u64, u64)>,
}

impl Walk {
    fn note(&mut self, path: &Path, message: String, fatal: bool) {
        self.missing.push(Missing {
            path: path.to_path_buf(),
            message,
            fatal,
        });
    }

    /// Takes a file once, if it is a regular file.
    fn file(&mut self, path: &Path) {
        let meta = match std::fs::metadata(path) {
            Ok(m) => m,
            Err(e) => return self.note(path, format!("cannot read: {e}"), true),
        };
        if !meta.is_file() {
            let what = "not a regular file (a pipe, device or socket); only files are read";
            return self.note(path, what.into(), true);
        }
        let id = identity(&meta);
        if let Some(first) = self.seen_files.get(&id) {
            let message = format!("read once: the same file as {}", first.display());
            return self.note(path, message, false);
        }
        self.seen_files.insert(id, path.to_path_buf());
        self.files.push(path.to_path_buf());
    }

    /// Searches a folder of the tree rooted at `root` (canonical), in sorted order. A link to a
    /// folder is followed only within the tree and only to a folder not yet entered.
    fn folder(&mut self, dir: &Path, root: &Path) {
        let Ok(meta) = std::fs::metadata(dir) else {
            return;
        };
        let id = identity(&meta);
        if !self.seen_dirs.insert(id) {
            if self.loops.insert(id) {
                let message = "a link back to a folder already searched (a loop); not followed";
                self.note(dir, message.into(), false);
            }
            return;
        }
        let entries = match std::fs::read_dir(dir) {
            Ok(e) => e,
            Err(e) => return self.note(dir, format!("cannot list the folder: {e}"), true),
        };
        let mut paths: Vec<PathBuf> = entries.filter_map(|e| e.ok().map(|e| e.path())).collect();
        paths.sort();
        for path in paths {
            let name = path.file_name().and_then(|n| n.to_str()).unwrap_or("");
            if is_skipped_name(name) || is_excluded(&path, &self.exclude) {
                continue;
            }
            let link = std::fs::symlink_metadata(&path).is_ok_and(|m| m.is_symlink());
            if path.is_dir() {
                let inside = path.canonicalize().is_ok_and(|c| c.starts_with(root));
                if link && !inside {
                    let message = "a link to a folder outside the folder given; not followed";
                    self.note(&path, message.into(), false);
                    continue;
                }
                self.folder(&path, root);
            } else if has_known_extension(&path) {
                self.file(&path);
            }
        }
    }
}

fn is_excluded(path: &Path, exclude: &[PathBuf]) -> bool {
    let Ok(canon) = path.canonicalize() else {
        return false;
    };
    exclude.iter().any(|x| canon.starts_with(x))
}

/// Expands the inputs into files, each read once however often it is named. Folders are
/// searched; named files are taken as they are. `exclude` holds folders never read (the output
/// folder), canonicalized or not.
pub fn discover(inputs: &[PathBuf], exclude: &[PathBuf]) -> (Vec<PathBuf>, Vec<Missing>) {
    let mut walk = Walk {
        exclude: exclude
            .iter()
            .filter_map(|p| p.canonicalize().ok())
            .collect(),
        files: Vec::new(),
        missing: Vec::new(),
        seen_files: HashMap::new(),
        seen_dirs: HashSet::new(),
        loops: HashSet::new(),
    };
    for input in inputs {
        if input.is_dir() {
            let root = input.canonicalize().unwrap_or_else(|_| input.clone());
            walk.folder(input, &root);
        } else if std::fs::symlink_metadata(input).is_ok() {
            walk.file(input);
        } else {
            walk.note(input, "no such file or folder".into(), true);
        }
    }
    (walk.files, walk.missing)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn folders_are_sorted_and_lock_files_skipped() {
        let dir = tempfile::tempdir().unwrap();
        let root = dir.path();
        std::fs::create_dir_all(root.join("b/graded")).unwrap();
        for f in [
            "b/z.csv",
            "a.xlsx",
            "~$a.xlsx",
            ".hidden.csv",
            ".~lock.a.xlsx#",
            "notes.txt",
            "b/graded/results.csv",
        ] {
            std::fs::write(root.join(f), b"x").unwrap();
        }
        let (files, missing) = discover(
            &[root.to_path_buf(), root.join("nope.csv")],
            &[root.join("b/graded")],
        );
        let names: Vec<String> = files
            .iter()
            .map(|p| p.strip_prefix(root).unwrap().display().to_string())
            .collect();
        assert_eq!(names, vec!["a.xlsx", "b/z.csv"]);
        assert_eq!(missing.len(), 1);
    }

    #[test]
    fn a_loop_is_walked_once_and_reported_once_and_a_file_named_twice_read_once() {
        let dir = tempfile::tempdir().unwrap();
        let root = dir.path().join("class");
        std::fs::create_dir_all(root.join("x")).unwrap();
        std::fs::write(root.join("a.csv"), b"x").unwrap();
        std::os::unix::fs::symlink(&root, root.join("x/up")).unwrap();
        std::os::unix::fs::symlink(dir.path(), root.join("out-of-tree")).unwrap();
        let (files, missing) = discover(
            &[root.clone(), root.join("a.csv"), root.join("x/../a.csv")],
            &[],
        );
        assert_eq!(files, vec![root.join("a.csv")]);
        let loops = missing
            .iter()
            .filter(|m| m.message.contains("loop"))
            .count();
        assert_eq!(loops, 1);
        assert!(missing.iter().any(|m| m.message.contains("outside")));
        assert_eq!(
            missing
                .iter()
                .filter(|m| m.message.contains("read once"))
                .count(),
            2
        );
        assert!(missing.iter().all(|m| !m.fatal));
    }

    #[test]
    fn only_regular_files_are_read() {
        let dir = tempfile::tempdir().unwrap();
        let zero = dir.path().join("zero.csv");
        std::os::unix::fs::symlink("/dev/zero", &zero).unwrap();
        let (files, missing) = discover(&[dir.path().to_path_buf()], &[]);
        assert!(files.is_empty());
        assert!(missing[0].fatal && missing[0].message.contains("not a regular file"));
    }
}
