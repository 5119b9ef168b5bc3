//! Writing an output so that it is never half-written: a temporary file in the same folder,
//! then renamed over the destination in one step. An output that is dropped without being
//! committed (an error, a panic) leaves the previous file untouched, and so does a process
//! killed at any point: the rename is the only step that changes what the destination holds.

use std::fs::File;
use std::io::{BufWriter, Write};
use std::path::{Path, PathBuf};

use crate::error::WriteError;
use crate::files::partial_path;

/// An output being written to a temporary file beside its destination.
pub struct AtomicFile {
    path: PathBuf,
    tmp: PathBuf,
    writer: Option<BufWriter<File>>,
}

impl AtomicFile {
    pub fn create(path: &Path) -> Result<AtomicFile, WriteError> {
        let dir = path
            .parent()
            .filter(|p| !p.as_os_str().is_empty())
            .unwrap_or(Path::new("."));
        let tmp = partial_path(dir, path);
        let file = File::create(&tmp).map_err(|source| WriteError {
            path: path.to_path_buf(),
            source,
        })?;
        Ok(AtomicFile {
            path: path.to_path_buf(),
            tmp,
            writer: Some(BufWriter::with_capacity(1 << 16, file)),
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

    /// Flushes and renames the temporary file into place.
    pub fn commit(mut self) -> Result<(), WriteError> {
        let result = (|| {
            let w = self
                .writer
                .take()
                .ok_or_else(|| std::io::Error::other("already committed"))?;
            w.into_inner()
                .map_err(std::io::IntoInnerError::into_error)?;
            std::fs::rename(&self.tmp, &self.path)
        })();
        result.map_err(|source| WriteError {
            path: self.path.clone(),
            source,
        })
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

/// Saves a workbook atomically: rust_xlsxwriter writes a temporary file beside the destination,
/// which is then renamed into place.
pub fn save_workbook(wb: &mut rust_xlsxwriter::Workbook, path: &Path) -> Result<(), WriteError> {
    let dir = path
        .parent()
        .filter(|p| !p.as_os_str().is_empty())
        .unwrap_or(Path::new("."));
    let tmp = partial_path(dir, path);
    if let Err(e) = wb.save(&tmp) {
        let _ = std::fs::remove_file(&tmp);
        return Err(WriteError::other(path, e));
    }
    std::fs::rename(&tmp, path).map_err(|source| WriteError {
        path: path.to_path_buf(),
        source,
    })
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

/// Flushes a CSV writer over an atomic file and renames the file into place.
pub fn commit_csv(csv: csv::Writer<AtomicFile>, path: &Path) -> Result<(), WriteError> {
    let file = csv.into_inner().map_err(|e| WriteError {
        path: path.to_path_buf(),
        source: e.into_error(),
    })?;
    file.commit()
}

/// Writes `path` atomically with what `fill` puts into the writer.
pub fn write_atomic<F>(path: &Path, fill: F) -> Result<(), WriteError>
where
    F: FnOnce(&mut dyn Write) -> std::io::Result<()>,
{
    let mut f = AtomicFile::create(path)?;
    fill(&mut f).map_err(|e| f.error(e))?;
    f.commit()
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn a_failed_write_leaves_the_old_file() {
        let dir = tempfile::tempdir().unwrap();
        let p = dir.path().join("out.csv");
        write_atomic(&p, |w| w.write_all(b"old")).unwrap();
        let failed = write_atomic(&p, |w| {
            w.write_all(b"new, half")?;
            Err(std::io::Error::other("interrupted"))
        });
        assert!(failed.is_err());
        assert_eq!(std::fs::read(&p).unwrap(), b"old");
        assert_eq!(
            std::fs::read_dir(dir.path()).unwrap().count(),
            1,
            "no temporary file left"
        );
    }

    #[test]
    fn an_uncommitted_file_is_discarded() {
        let dir = tempfile::tempdir().unwrap();
        let p = dir.path().join("out.csv");
        {
            let mut f = AtomicFile::create(&p).unwrap();
            f.write_all(b"partial").unwrap();
        }
        assert_eq!(std::fs::read_dir(dir.path()).unwrap().count(), 0);
    }
}
