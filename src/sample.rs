//! The sample class built into the binary: a small invented course's sections in every format
//! benchgrade reads, with a calibration file, so that `benchgrade grade` with no inputs shows
//! the whole job from any folder and from an installed binary, not only from a clone.

use std::path::{Path, PathBuf};

/// The files of the sample class, by name, as they are in the repository's `sample-data/`.
pub const FILES: [(&str, &[u8]); 7] = [
    (
        "answer-key.csv",
        include_bytes!("../sample-data/answer-key.csv"),
    ),
    (
        "calibration.csv",
        include_bytes!("../sample-data/calibration.csv"),
    ),
    (
        "section-01.xlsx",
        include_bytes!("../sample-data/section-01.xlsx"),
    ),
    (
        "section-02.ods",
        include_bytes!("../sample-data/section-02.ods"),
    ),
    (
        "section-03.csv",
        include_bytes!("../sample-data/section-03.csv"),
    ),
    (
        "section-04.csv",
        include_bytes!("../sample-data/section-04.csv"),
    ),
    (
        "week12-late-entries.csv",
        include_bytes!("../sample-data/week12-late-entries.csv"),
    ),
];

/// The folder name the sample class is written under.
pub const FOLDER: &str = "sample-data";

/// Writes the sample class into a new folder `parent/sample-data`, every file created new
/// (an existing folder is an error, never overwritten); returns the folder.
pub fn write_into(parent: &Path) -> std::io::Result<PathBuf> {
    let dir = parent.join(FOLDER);
    std::fs::create_dir(&dir)?;
    for (name, bytes) in FILES {
        let mut f = crate::files::create_new(&dir.join(name))?;
        std::io::Write::write_all(&mut f, bytes)?;
    }
    Ok(dir)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn the_embedded_files_are_the_repository_s_sample_data() {
        let here = Path::new(env!("CARGO_MANIFEST_DIR")).join(FOLDER);
        let mut names: Vec<String> = std::fs::read_dir(&here)
            .unwrap()
            .map(|e| e.unwrap().file_name().to_string_lossy().into_owned())
            .collect();
        names.sort();
        let embedded: Vec<&str> = FILES.iter().map(|(n, _)| *n).collect();
        assert_eq!(names, embedded, "every sample file is embedded");
        let dir = tempfile::tempdir().unwrap();
        let out = write_into(dir.path()).unwrap();
        for (name, bytes) in FILES {
            assert_eq!(std::fs::read(out.join(name)).unwrap(), bytes);
            assert_eq!(std::fs::read(here.join(name)).unwrap(), bytes);
        }
        assert!(write_into(dir.path()).is_err(), "never written over");
    }
}
