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

use std::fs::File;
use std::io::{BufWriter, Seek, Write};
use std::path::{Path, PathBuf};
use std::sync::{Arc, Mutex};

use sha2::{Digest, Sha256};

use crate::error::WriteError;
use crate::files::dir::Dir;
use crate::files::{create_new, partial_path};

pub use super::journal::MANIFEST;

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
    /// (temporary file, destination, SHA-256 of its content)
    files: Vec<(PathBuf, PathBuf, String)>,
    published: bool,
}

impl Drop for Staged {
    fn drop(&mut self) {
        if !self.published {
            for (tmp, _, _) in &self.files {
                let _ = std::fs::remove_file(tmp);
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

    fn add(&self, tmp: PathBuf, path: PathBuf, hash: String) {
        if let Ok(mut s) = self.staged.lock() {
            s.files.push((tmp, path, hash));
        }
    }

    /// The destinations staged so far.
    pub fn paths(&self) -> Vec<PathBuf> {
        self.staged
            .lock()
            .map(|s| s.files.iter().map(|(_, p, _)| p.clone()).collect())
            .unwrap_or_default()
    }

    /// Makes every staged output in `dir` current together, and removes what the previous run
    /// wrote there and this one did not, if it still holds what benchgrade wrote (nothing else
    /// is ever touched, and never one of this run's `inputs`). Returns notes on outputs changed
    /// by hand and set aside (`export::journal`).
    pub fn publish(&self, dir: &Path, inputs: &[PathBuf]) -> Result<Vec<String>, WriteError> {
        let err = write_error(dir);
        let mut staged = self
            .staged
            .lock()
            .map_err(|_| err(std::io::Error::other("a writer thread failed")))?;
        staged.files.sort_by(|a, b| a.1.cmp(&b.1));
        let names: Vec<super::journal::Put> = staged
            .files
            .iter()
            .map(|(t, p, h)| super::journal::Put {
                tmp: relative(dir, t),
                name: relative(dir, p),
                hash: h.clone(),
            })
            .collect();
        let d = Dir::open(dir).map_err(&err)?;
        let inputs = super::journal::identities(inputs);
        let notes = super::journal::publish(&d, &names, &inputs);
        // once the journal is in place, its temporary files are the next run's to finish
        staged.published =
            notes.is_ok() || d.kind(super::journal::JOURNAL).is_ok_and(|k| k.is_some());
        notes.map_err(err)
    }
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
        _ => p
            .file_name()
            .map(|n| n.to_string_lossy().into_owned())
            .unwrap_or_default(),
    }
}

/// Completes a publication a killed run left half done in `dir` (`journal::recover`, with no
/// inputs to guard); whether there was a journal.
pub fn recover(dir: &Path) -> std::io::Result<bool> {
    let d = Dir::open(dir)?;
    super::journal::recover(&d, &Vec::new()).map(|r| r.is_some())
}

/// An output being written to a temporary file beside its destination.
pub struct AtomicFile {
    path: PathBuf,
    tmp: PathBuf,
    writer: Option<BufWriter<Hashing>>,
    stage: Stage,
}

/// A temporary file being written, with the SHA-256 of what went into it so far (for the
/// manifest, without reading the file again).
struct Hashing {
    file: File,
    hash: Sha256,
}

impl Write for Hashing {
    fn write(&mut self, buf: &[u8]) -> std::io::Result<usize> {
        let n = self.file.write(buf)?;
        self.hash.update(&buf[..n]);
        Ok(n)
    }
    fn flush(&mut self) -> std::io::Result<()> {
        self.file.flush()
    }
}

impl AtomicFile {
    pub fn create(path: &Path, stage: &Stage) -> Result<AtomicFile, WriteError> {
        AtomicFile::create_at(path, partial_path(folder(path), path), stage)
    }

    /// An output whose temporary file is `tmp`, not beside it: the handouts' wait in the
    /// output folder, their own folder being made only when they are published.
    pub fn create_at(path: &Path, tmp: PathBuf, stage: &Stage) -> Result<AtomicFile, WriteError> {
        let file = create_new(&tmp).map_err(write_error(path))?;
        Ok(AtomicFile {
            path: path.to_path_buf(),
            tmp,
            writer: Some(BufWriter::with_capacity(
                1 << 16,
                Hashing {
                    file,
                    hash: Sha256::new(),
                },
            )),
            stage: stage.clone(),
        })
    }

    pub fn path(&self) -> &Path {
        &self.path
    }

    fn writer(&mut self) -> std::io::Result<&mut BufWriter<Hashing>> {
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
            let h = w
                .into_inner()
                .map_err(std::io::IntoInnerError::into_error)?;
            h.file.sync_all()?;
            Ok(super::provenance::hex(&h.hash.finalize()))
        })();
        match result {
            Ok(hash) => {
                self.stage.add(self.tmp.clone(), self.path.clone(), hash);
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
        let mut f = w
            .into_inner()
            .map_err(|e| write_error(path)(e.into_error()))?;
        f.sync_all().map_err(write_error(path))?;
        // the workbook writer seeks back as it writes: hash what the file holds
        f.seek(std::io::SeekFrom::Start(0))
            .and_then(|_| super::journal::hash_reader(&mut f))
            .map_err(write_error(path))
    });
    match result {
        Ok(hash) => {
            stage.add(tmp, path.to_path_buf(), hash);
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
    use crate::export::journal::JOURNAL;

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
        // the last run wrote a.csv: its manifest carries the SHA-256 of "old" (computed with coreutils sha256sum)
        let old = "benchgrade manifest 2\ncba06b5736faf67e54b07b561eae94395e774c517a7d910a54369e1263ccfbd4\ta.csv\n";
        std::fs::write(d.join(MANIFEST), old).unwrap();
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
