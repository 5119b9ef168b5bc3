//! Writing the output folder as one unit. Every output of a run is written to a temporary file
//! beside its destination (created new, never through a link) and, when complete, flushed to
//! disk and handed to the run's `Stage`. Only when every output is complete does `publish` make
//! them current together: it writes a journal naming each temporary file and its destination
//! (and the files an earlier run wrote that this one did not), renames them all in one tight
//! loop, records what the folder now holds in a manifest and removes the journal. A run killed
//! before the journal is in place leaves the previous outputs as they were (its temporary files
//! are swept by the next run); one killed after is completed by the next run (`recover`) before
//! it does anything else. An output dropped without being completed (an error, a panic) is
//! removed, and so are a failed run's completed ones.

use std::fmt::Write as _;
use std::fs::File;
use std::io::{BufWriter, Write};
use std::path::{Path, PathBuf};
use std::sync::{Arc, Mutex};

use crate::error::WriteError;
use crate::files::{create_new, partial_path};

/// The journal of a publication in progress.
const JOURNAL: &str = ".benchgrade-journal";
/// What the folder holds from the last run: one output file name a line.
pub const MANIFEST: &str = ".benchgrade-manifest";

/// The folder of a temporary file: the destination's.
fn folder(path: &Path) -> &Path {
    path.parent()
        .filter(|p| !p.as_os_str().is_empty())
        .unwrap_or(Path::new("."))
}

fn write_error(path: &Path) -> impl Fn(std::io::Error) -> WriteError + '_ {
    move |source| WriteError {
        path: path.to_path_buf(),
        source,
    }
}

/// Completed outputs waiting to be made current: (temporary file, destination).
#[derive(Debug, Default)]
struct Staged {
    files: Vec<(PathBuf, PathBuf)>,
    /// Subfolders this run made for its outputs.
    folders: Vec<PathBuf>,
    published: bool,
}

impl Drop for Staged {
    fn drop(&mut self) {
        if !self.published {
            for (tmp, _) in &self.files {
                let _ = std::fs::remove_file(tmp);
            }
            // a subfolder made for this run's outputs goes too, if nothing else is in it
            for folder in &self.folders {
                let _ = std::fs::remove_dir(folder);
            }
        }
    }
}

/// The outputs of one run, made current together by `publish`. Cloned into every writer.
#[derive(Clone, Debug, Default)]
pub struct Stage {
    staged: Arc<Mutex<Staged>>,
}

impl Stage {
    pub fn new() -> Stage {
        Stage::default()
    }

    fn add(&self, tmp: PathBuf, path: PathBuf) {
        if let Ok(mut s) = self.staged.lock() {
            s.files.push((tmp, path));
        }
    }

    /// Takes note of a subfolder made for this run's outputs, removed (when empty) if the run
    /// fails.
    pub fn made_folder(&self, folder: &Path) {
        if let Ok(mut s) = self.staged.lock() {
            s.folders.push(folder.to_path_buf());
        }
    }

    /// The destinations staged so far.
    pub fn paths(&self) -> Vec<PathBuf> {
        self.staged
            .lock()
            .map(|s| s.files.iter().map(|(_, p)| p.clone()).collect())
            .unwrap_or_default()
    }

    /// Makes every staged output in `dir` current together, and removes what the previous run
    /// wrote there and this one did not (nothing else is ever touched, and never one of this
    /// run's `inputs`).
    pub fn publish(&self, dir: &Path, inputs: &[PathBuf]) -> Result<Vec<PathBuf>, WriteError> {
        let err = write_error(dir);
        let mut staged = self
            .staged
            .lock()
            .map_err(|_| err(std::io::Error::other("a writer thread failed")))?;
        staged.files.sort_by(|a, b| a.1.cmp(&b.1));
        let names: Vec<(String, String)> = staged
            .files
            .iter()
            .map(|(t, p)| (relative(dir, t), relative(dir, p)))
            .collect();
        let current: Vec<&str> = names.iter().map(|(_, p)| p.as_str()).collect();
        let is_input = |name: &str| {
            let p = dir.join(name).canonicalize().ok();
            inputs.iter().any(|i| i.canonicalize().ok() == p)
        };
        let stale: Vec<String> = read_manifest(dir)
            .into_iter()
            .filter(|n| !current.contains(&n.as_str()) && !is_input(n))
            .collect();
        let mut journal = String::from("benchgrade journal 1\n");
        for (t, p) in &names {
            let _ = writeln!(journal, "put\t{t}\t{p}");
        }
        for n in &stale {
            let _ = writeln!(journal, "drop\t{n}");
        }
        journal.push_str("end\n");
        write_small(dir, JOURNAL, &journal).map_err(&err)?;
        sync_dir(dir);
        staged.published = true;
        apply(dir, &journal).map_err(&err)?;
        Ok(staged.files.iter().map(|(_, p)| p.clone()).collect())
    }
}

fn file_name(p: &Path) -> String {
    p.file_name()
        .map(|n| n.to_string_lossy().into_owned())
        .unwrap_or_default()
}

/// A path under `dir` as the journal and the manifest name it: "results.csv",
/// "handouts/sec-01.html".
fn relative(dir: &Path, p: &Path) -> String {
    match p.strip_prefix(dir) {
        Ok(rel) if rel.components().count() <= 2 => rel
            .iter()
            .map(|c| c.to_string_lossy())
            .collect::<Vec<_>>()
            .join("/"),
        _ => file_name(p),
    }
}

/// A plain file name (no folder, no parent, not hidden), or one inside a plain subfolder
/// ("handouts/sec-01.html").
fn plain(name: &str) -> bool {
    let parts: Vec<&str> = name.split('/').collect();
    let ok = |n: &str| !n.is_empty() && !n.starts_with('.') && !n.contains('\\') && n != "..";
    match parts.as_slice() {
        [file] => ok(file),
        [folder, file] => ok(folder) && ok(file),
        _ => false,
    }
}

/// A temporary file's name as the journal gives it: hidden, in the folder or one subfolder.
fn temporary(name: &str) -> bool {
    let file = name.rsplit('/').next().unwrap_or(name);
    file.starts_with('.')
        && file.ends_with(".partial")
        && name.split('/').count() <= 2
        && !name.split('/').any(|p| p == "..")
}

fn read_manifest(dir: &Path) -> Vec<String> {
    std::fs::read_to_string(dir.join(MANIFEST))
        .map(|t| t.lines().filter(|n| plain(n)).map(str::to_string).collect())
        .unwrap_or_default()
}

/// Writes a small file in `dir` through a temporary file, then renames it into place.
fn write_small(dir: &Path, name: &str, text: &str) -> std::io::Result<()> {
    let tmp = partial_path(dir, Path::new(name));
    let mut f = create_new(&tmp)?;
    f.write_all(text.as_bytes())?;
    f.sync_all()?;
    std::fs::rename(&tmp, dir.join(name))
}

fn sync_dir(dir: &Path) {
    if let Ok(d) = File::open(dir) {
        let _ = d.sync_all();
    }
}

/// Carries out a complete journal: every temporary file still there renamed into place, every
/// stale output removed, the manifest written, the journal removed.
fn apply(dir: &Path, journal: &str) -> std::io::Result<()> {
    let mut manifest = String::new();
    for line in journal.lines() {
        let parts: Vec<&str> = line.split('\t').collect();
        match parts.as_slice() {
            ["put", tmp, name] if plain(name) && temporary(tmp) => {
                let from = dir.join(tmp);
                if std::fs::symlink_metadata(&from).is_ok() {
                    std::fs::rename(&from, dir.join(name))?;
                }
                manifest.push_str(name);
                manifest.push('\n');
            }
            ["drop", name] if plain(name) => {
                let _ = std::fs::remove_file(dir.join(name));
                // a subfolder an earlier run made goes once it is empty
                if let Some((folder, _)) = name.split_once('/') {
                    let _ = std::fs::remove_dir(dir.join(folder));
                }
            }
            _ => {}
        }
    }
    write_small(dir, MANIFEST, &manifest)?;
    std::fs::remove_file(dir.join(JOURNAL))?;
    sync_dir(dir);
    Ok(())
}

/// Completes a publication a killed run left half done: call before anything else touches the
/// folder (and before stale temporary files are swept). A journal without its end line was
/// never in place and is removed.
pub fn recover(dir: &Path) -> std::io::Result<bool> {
    let path = dir.join(JOURNAL);
    let Ok(journal) = std::fs::read_to_string(&path) else {
        return Ok(false);
    };
    if journal.starts_with("benchgrade journal 1\n") && journal.ends_with("end\n") {
        apply(dir, &journal)?;
    } else {
        std::fs::remove_file(&path)?;
    }
    Ok(true)
}

/// An output being written to a temporary file beside its destination.
pub struct AtomicFile {
    path: PathBuf,
    tmp: PathBuf,
    writer: Option<BufWriter<File>>,
    stage: Stage,
}

impl AtomicFile {
    pub fn create(path: &Path, stage: &Stage) -> Result<AtomicFile, WriteError> {
        let tmp = partial_path(folder(path), path);
        let file = create_new(&tmp).map_err(write_error(path))?;
        Ok(AtomicFile {
            path: path.to_path_buf(),
            tmp,
            writer: Some(BufWriter::with_capacity(1 << 16, file)),
            stage: stage.clone(),
        })
    }

    pub fn path(&self) -> &Path {
        &self.path
    }

    fn writer(&mut self) -> std::io::Result<&mut BufWriter<File>> {
        self.writer
            .as_mut()
            .ok_or_else(|| std::io::Error::other("the output was already committed"))
    }

    pub fn error(&self, source: std::io::Error) -> WriteError {
        WriteError {
            path: self.path.clone(),
            source,
        }
    }

    /// Flushes the temporary file to disk and hands it to the stage, complete.
    pub fn commit(mut self) -> Result<(), WriteError> {
        let result = (|| {
            let w = self
                .writer
                .take()
                .ok_or_else(|| std::io::Error::other("already committed"))?;
            let file = w
                .into_inner()
                .map_err(std::io::IntoInnerError::into_error)?;
            file.sync_all()
        })();
        match result {
            Ok(()) => {
                self.stage.add(self.tmp.clone(), self.path.clone());
                Ok(())
            }
            Err(source) => {
                let _ = std::fs::remove_file(&self.tmp);
                Err(self.error(source))
            }
        }
    }
}

impl Write for AtomicFile {
    fn write(&mut self, buf: &[u8]) -> std::io::Result<usize> {
        self.writer()?.write(buf)
    }
    fn write_all(&mut self, buf: &[u8]) -> std::io::Result<()> {
        self.writer()?.write_all(buf)
    }
    fn flush(&mut self) -> std::io::Result<()> {
        self.writer()?.flush()
    }
}

impl Drop for AtomicFile {
    fn drop(&mut self) {
        if self.writer.take().is_some() {
            let _ = std::fs::remove_file(&self.tmp);
        }
    }
}

/// Saves a workbook to a temporary file beside its destination and stages it.
pub fn save_workbook(
    wb: &mut rust_xlsxwriter::Workbook,
    path: &Path,
    stage: &Stage,
) -> Result<(), WriteError> {
    let tmp = partial_path(folder(path), path);
    let result = create_new(&tmp).map_err(write_error(path)).and_then(|f| {
        let mut w = BufWriter::new(f);
        wb.save_to_writer(&mut w)
            .map_err(|e| WriteError::other(path, e))?;
        let f = w
            .into_inner()
            .map_err(|e| write_error(path)(e.into_error()))?;
        f.sync_all().map_err(write_error(path))
    });
    match result {
        Ok(()) => {
            stage.add(tmp, path.to_path_buf());
            Ok(())
        }
        Err(e) => {
            let _ = std::fs::remove_file(&tmp);
            Err(e)
        }
    }
}

/// The first output that is also one of the inputs (compared as canonical paths).
pub fn overwritten_input(outputs: &[PathBuf], inputs: &[PathBuf]) -> Option<PathBuf> {
    outputs.iter().find_map(|o| {
        let target = o.canonicalize().ok()?;
        inputs
            .iter()
            .any(|i| i.canonicalize().is_ok_and(|c| c == target))
            .then(|| o.clone())
    })
}

/// Flushes a CSV writer over an atomic file and stages the file.
pub fn commit_csv(csv: csv::Writer<AtomicFile>, path: &Path) -> Result<(), WriteError> {
    let file = csv.into_inner().map_err(|e| WriteError {
        path: path.to_path_buf(),
        source: e.into_error(),
    })?;
    file.commit()
}

/// Writes `path` through a temporary file with what `fill` puts into it, and stages it.
pub fn write_atomic<F>(path: &Path, stage: &Stage, fill: F) -> Result<(), WriteError>
where
    F: FnOnce(&mut dyn Write) -> std::io::Result<()>,
{
    let mut f = AtomicFile::create(path, stage)?;
    fill(&mut f).map_err(|e| f.error(e))?;
    f.commit()
}

#[cfg(test)]
mod tests {
    use super::*;

    fn names(dir: &Path) -> Vec<String> {
        let mut v: Vec<String> = std::fs::read_dir(dir)
            .unwrap()
            .map(|e| e.unwrap().file_name().to_string_lossy().into_owned())
            .collect();
        v.sort();
        v
    }

    #[test]
    fn a_failed_write_leaves_the_old_file() {
        let dir = tempfile::tempdir().unwrap();
        let p = dir.path().join("out.csv");
        let stage = Stage::new();
        write_atomic(&p, &stage, |w| w.write_all(b"old")).unwrap();
        stage.publish(dir.path(), &[]).unwrap();
        let stage = Stage::new();
        let failed = write_atomic(&p, &stage, |w| {
            w.write_all(b"new, half")?;
            Err(std::io::Error::other("interrupted"))
        });
        assert!(failed.is_err());
        drop(stage);
        assert_eq!(std::fs::read(&p).unwrap(), b"old");
        assert_eq!(
            names(dir.path()),
            [MANIFEST, "out.csv"],
            "no temporary file left"
        );
    }

    #[test]
    fn an_uncommitted_file_is_discarded_and_so_is_an_unpublished_stage() {
        let dir = tempfile::tempdir().unwrap();
        let p = dir.path().join("out.csv");
        let stage = Stage::new();
        {
            let mut f = AtomicFile::create(&p, &stage).unwrap();
            f.write_all(b"partial").unwrap();
        }
        assert!(names(dir.path()).is_empty());
        write_atomic(&p, &stage, |w| w.write_all(b"complete")).unwrap();
        assert_eq!(names(dir.path()).len(), 1, "staged, not yet current");
        assert!(!p.exists());
        drop(stage);
        assert!(names(dir.path()).is_empty());
    }

    #[test]
    fn outputs_become_current_together_and_stale_ones_go() {
        let dir = tempfile::tempdir().unwrap();
        let stage = Stage::new();
        for name in ["a.csv", "b.csv"] {
            write_atomic(&dir.path().join(name), &stage, |w| w.write_all(b"1")).unwrap();
        }
        stage.publish(dir.path(), &[]).unwrap();
        std::fs::write(dir.path().join("mine.txt"), b"a file of the user's").unwrap();
        let stage = Stage::new();
        write_atomic(&dir.path().join("a.csv"), &stage, |w| w.write_all(b"2")).unwrap();
        stage.publish(dir.path(), &[]).unwrap();
        assert_eq!(names(dir.path()), [MANIFEST, "a.csv", "mine.txt"]);
        assert_eq!(std::fs::read(dir.path().join("a.csv")).unwrap(), b"2");
    }

    #[test]
    fn a_journal_left_by_a_killed_run_is_completed() {
        let dir = tempfile::tempdir().unwrap();
        let d = dir.path();
        std::fs::write(d.join("a.csv"), b"old").unwrap();
        std::fs::write(d.join(".a.csv.999999.partial"), b"new").unwrap();
        // killed after the journal and one rename of two: b.csv is already current
        std::fs::write(d.join("b.csv"), b"new").unwrap();
        let journal = "benchgrade journal 1\nput\t.a.csv.999999.partial\ta.csv\nput\t.b.csv.999999.partial\tb.csv\nend\n";
        std::fs::write(d.join(JOURNAL), journal).unwrap();
        assert!(recover(d).unwrap());
        assert_eq!(std::fs::read(d.join("a.csv")).unwrap(), b"new");
        assert_eq!(names(d), [MANIFEST, "a.csv", "b.csv"]);
        // a journal cut short was never in place: removed, nothing else touched
        std::fs::write(d.join(JOURNAL), "benchgrade journal 1\nput\t.x\ta.csv\n").unwrap();
        assert!(recover(d).unwrap());
        assert_eq!(std::fs::read(d.join("a.csv")).unwrap(), b"new");
        assert!(!d.join(JOURNAL).exists());
    }
}
