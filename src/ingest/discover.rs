//! Which files a run reads: the files named, and every spreadsheet under the folders named,
//! recursively and in sorted order, leaving out hidden files, office lock files and the
//! run's own output folder.

use std::path::{Path, PathBuf};

/// Extensions read as workbooks or delimited text.
pub const EXTENSIONS: [&str; 7] = ["xlsx", "xlsm", "xlsb", "xls", "ods", "csv", "tsv"];

/// A path that could not be used as an input.
#[derive(Debug, Clone, PartialEq)]
pub struct Missing {
    pub path: PathBuf,
    pub message: String,
}

fn is_skipped_name(name: &str) -> bool {
    name.starts_with('.') || name.starts_with("~$") || name.starts_with(".~lock.")
}

pub fn has_known_extension(path: &Path) -> bool {
    path.extension()
        .and_then(|e| e.to_str())
        .is_some_and(|e| EXTENSIONS.contains(&e.to_ascii_lowercase().as_str()))
}

fn walk(dir: &Path, exclude: &[PathBuf], out: &mut Vec<PathBuf>, missing: &mut Vec<Missing>) {
    let entries = match std::fs::read_dir(dir) {
        Ok(e) => e,
        Err(e) => {
            missing.push(Missing {
                path: dir.to_path_buf(),
                message: format!("cannot list the folder: {e}"),
            });
            return;
        }
    };
    let mut paths: Vec<PathBuf> = entries.filter_map(|e| e.ok().map(|e| e.path())).collect();
    paths.sort();
    for path in paths {
        let name = path.file_name().and_then(|n| n.to_str()).unwrap_or("");
        if is_skipped_name(name) || is_excluded(&path, exclude) {
            continue;
        }
        if path.is_dir() {
            walk(&path, exclude, out, missing);
        } else if has_known_extension(&path) {
            out.push(path);
        }
    }
}

fn is_excluded(path: &Path, exclude: &[PathBuf]) -> bool {
    let Ok(canon) = path.canonicalize() else {
        return false;
    };
    exclude.iter().any(|x| canon.starts_with(x))
}

/// Expands the inputs into files. Folders are searched; named files are taken as they are.
/// `exclude` holds folders never read (the output folder), canonicalized or not.
pub fn discover(inputs: &[PathBuf], exclude: &[PathBuf]) -> (Vec<PathBuf>, Vec<Missing>) {
    let exclude: Vec<PathBuf> = exclude
        .iter()
        .filter_map(|p| p.canonicalize().ok())
        .collect();
    let mut files = Vec::new();
    let mut missing = Vec::new();
    for input in inputs {
        if input.is_dir() {
            walk(input, &exclude, &mut files, &mut missing);
        } else if input.exists() {
            files.push(input.clone());
        } else {
            missing.push(Missing {
                path: input.clone(),
                message: "no such file or folder".into(),
            });
        }
    }
    (files, missing)
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
}
