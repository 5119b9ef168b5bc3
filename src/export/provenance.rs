//! What produced an output: the tool's version, the rubric and every input with its SHA-256,
//! and the time of grading, fixed by `SOURCE_DATE_EPOCH` or `--timestamp` for reproducible files.

use std::io::Read;
use std::path::Path;

use sha2::{Digest, Sha256};

use crate::assess::physchem::PURITY_ASSUMPTIONS;
use crate::stats::QUANTILE_DEFINITION;

#[derive(Clone, Debug, PartialEq)]
pub struct Provenance {
    pub version: &'static str,
    /// Seconds since the Unix epoch, UTC.
    pub timestamp: i64,
    pub time_text: String,
    pub rubric: String,
    pub rubric_sha256: String,
    /// The rubric's experiment.name.
    pub experiment: String,
    /// The reports' title (course, term, experiment).
    pub title: String,
    /// (file, SHA-256) of the calibration applied, if any.
    pub calibration: Option<(String, String)>,
    /// (file, SHA-256) of every input and the calibration file.
    pub inputs: Vec<(String, String)>,
    /// (what it is, file, SHA-256) of every other file that changed grades: the compound
    /// library, the column mapping, the overrides.
    pub settings: Vec<(String, String, String)>,
    pub notes: Vec<String>,
}

/// What a run graded with, for its provenance: the rubric and the calibration.
pub struct Used<'a> {
    pub rubric: &'a str,
    pub rubric_text: &'a str,
    pub experiment: &'a str,
    pub title: &'a str,
    pub calibration: Option<&'a Path>,
    /// (what it is, file) of the other files that changed grades.
    pub settings: Vec<(&'a str, &'a Path)>,
}

pub fn sha256_hex(bytes: &[u8]) -> String {
    hex(&Sha256::digest(bytes))
}

/// Bytes as lower-case hexadecimal.
pub fn hex(bytes: &[u8]) -> String {
    use std::fmt::Write as _;
    let mut s = String::with_capacity(bytes.len() * 2);
    for b in bytes {
        let _ = write!(s, "{b:02x}");
    }
    s
}

/// SHA-256 of a file, read in chunks; `None` if it cannot be read.
pub fn sha256_file(path: &Path) -> Option<String> {
    // a pipe or a device would never end
    if !std::fs::metadata(path).ok()?.is_file() {
        return None;
    }
    let mut f = std::fs::File::open(path).ok()?;
    let mut h = Sha256::new();
    let mut buf = vec![0u8; 1 << 16];
    loop {
        let n = f.read(&mut buf).ok()?;
        if n == 0 {
            break;
        }
        h.update(&buf[..n]);
    }
    Some(hex(&h.finalize()))
}

/// "2026-12-01 22:23:57" for seconds since the epoch (UTC), by the days-to-civil algorithm
/// (Howard Hinnant's `civil_from_days`).
pub fn utc_text(secs: i64) -> String {
    let days = secs.div_euclid(86_400);
    let rem = secs.rem_euclid(86_400);
    let z = days + 719_468;
    let era = z.div_euclid(146_097);
    let doe = z - era * 146_097;
    let yoe = (doe - doe / 1460 + doe / 36_524 - doe / 146_096) / 365;
    let doy = doe - (365 * yoe + yoe / 4 - yoe / 100);
    let mp = (5 * doy + 2) / 153;
    let d = doy - (153 * mp + 2) / 5 + 1;
    let m = if mp < 10 { mp + 3 } else { mp - 9 };
    let y = yoe + era * 400 + i64::from(m <= 2);
    format!(
        "{y:04}-{m:02}-{d:02} {:02}:{:02}:{:02}",
        rem / 3600,
        rem % 3600 / 60,
        rem % 60
    )
}

/// Whether a time of grading can be written into a workbook's properties (1970 to 9999).
pub fn check_timestamp(t: i64) -> Result<(), String> {
    rust_xlsxwriter::ExcelDateTime::from_timestamp(t)
        .map(|_| ())
        .map_err(|e| e.to_string())
}

impl Provenance {
    /// "rubric name (file, SHA-256 abcdef012345...)" and the calibration, in one line for
    /// reports.
    pub fn used_line(&self) -> String {
        let short = |sha: &str| sha.chars().take(12).collect::<String>();
        let calibration = match &self.calibration {
            Some((file, sha)) => format!("{file} (SHA-256 {}...)", short(sha)),
            None => "none".into(),
        };
        let mut line = format!(
            "Rubric: {} ({}, SHA-256 {}...); calibration: {calibration}",
            self.experiment,
            self.rubric,
            short(&self.rubric_sha256)
        );
        for (role, file, sha) in &self.settings {
            line = format!("{line}; {role}: {file} (SHA-256 {}...)", short(sha));
        }
        line
    }

    pub fn new(timestamp: i64, used: &Used<'_>, files: &[&Path]) -> Provenance {
        let file = |p: &Path| {
            (
                p.display().to_string(),
                sha256_file(p).unwrap_or_else(|| "(unreadable)".into()),
            )
        };
        Provenance {
            version: env!("CARGO_PKG_VERSION"),
            timestamp,
            time_text: utc_text(timestamp),
            rubric: used.rubric.to_string(),
            rubric_sha256: sha256_hex(used.rubric_text.as_bytes()),
            experiment: used.experiment.to_string(),
            title: used.title.to_string(),
            calibration: used.calibration.map(file),
            inputs: files.iter().map(|p| file(p)).collect(),
            settings: used
                .settings
                .iter()
                .map(|(role, p)| {
                    let (f, sha) = file(p);
                    ((*role).to_string(), f, sha)
                })
                .collect(),
            notes: vec![
                format!("Statistics: {QUANTILE_DEFINITION}."),
                format!("Purity estimates: {PURITY_ASSUMPTIONS}."),
                "Each measure's statistics leave out the rows whose entries for it are impossible, and excused students; the score counts every graded student.".into(),
            ],
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn sha256_of_known_text() {
        // FIPS 180-2 test vector: SHA-256("abc")
        assert_eq!(
            sha256_hex(b"abc"),
            "ba7816bf8f01cfea414140de5dae2223b00361a396177a9cb410ff61f20015ad"
        );
    }

    #[test]
    fn epoch_seconds_to_utc() {
        // date -u -d @0, @951782400 and @1795992237 (GNU coreutils)
        assert_eq!(utc_text(0), "1970-01-01 00:00:00");
        assert_eq!(utc_text(951_782_400), "2000-02-29 00:00:00");
        assert_eq!(utc_text(1_795_992_237), "2026-11-29 22:43:57");
    }
}
