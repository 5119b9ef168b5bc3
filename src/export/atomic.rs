//! Writing an output so that it is never half-written: a temporary file in the same folder,
//! flushed to disk, then renamed over the destination in one step.

use std::fs::File;
use std::io::{BufWriter, Write};
use std::path::Path;

use crate::error::WriteError;

/// Writes `path` atomically with what `fill` puts into the writer.
pub fn write_atomic<F>(path: &Path, fill: F) -> Result<(), WriteError>
where
    F: FnOnce(&mut dyn Write) -> std::io::Result<()>,
{
    let err = |source| WriteError {
        path: path.to_path_buf(),
        source,
    };
    let dir = path
        .parent()
        .filter(|p| !p.as_os_str().is_empty())
        .unwrap_or(Path::new("."));
    let name = path
        .file_name()
        .and_then(|n| n.to_str())
        .unwrap_or("output");
    let tmp = dir.join(format!(".{name}.{}.partial", std::process::id()));
    let result = (|| {
        let mut w = BufWriter::new(File::create(&tmp)?);
        fill(&mut w)?;
        let file = w.into_inner().map_err(|e| e.into_error())?;
        file.sync_all()?;
        std::fs::rename(&tmp, path)
    })();
    if result.is_err() {
        let _ = std::fs::remove_file(&tmp);
    }
    result.map_err(err)
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
}
