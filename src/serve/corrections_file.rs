//! `corrections.csv` as the page edits it (`line_file`): a correction added at the end or one
//! taken out by its line, the new file checked exactly as the command line checks it
//! (`config::corrections`) before it replaces the old one.

use std::path::Path;

use crate::rubric::corrections::{Correction, Corrections, Typed};
use crate::rubric::overrides::Invalid;

use super::line_file::{file_fault, position, Kind};
use super::workspace::{CORRECTIONS, CORRECTIONS_HEADER};

/// One correction as the page lists it.
#[derive(Clone, Debug, serde::Serialize)]
pub struct Entry {
    /// Its line in corrections.csv, which `DELETE /api/corrections/{line}` names.
    pub line: usize,
    pub student_id: String,
    pub section: Option<String>,
    /// The field's name in mapping files (`crude_mass`, `student_id`, ...).
    pub field: String,
    /// The value as written.
    pub value: String,
    pub reason: String,
    pub grader: String,
}

impl From<&Correction> for Entry {
    fn from(c: &Correction) -> Entry {
        Entry {
            line: c.line,
            student_id: c.student_id.clone(),
            section: c.section.clone(),
            field: c.field.key().to_string(),
            value: c.written.clone(),
            reason: c.reason.clone(),
            grader: c.grader.clone(),
        }
    }
}

/// The corrections in the file, as `--corrections` reads them, or why it cannot be read.
pub fn list() -> Result<Vec<Entry>, String> {
    if !Path::new(CORRECTIONS).exists() {
        return Ok(Vec::new());
    }
    let loaded =
        crate::config::corrections(Some(Path::new(CORRECTIONS))).map_err(|e| e.to_string())?;
    Ok(loaded.list().iter().map(Entry::from).collect())
}

/// corrections.csv as the command line reads it: its delimiter sniffed (a spreadsheet in a
/// decimal-comma locale saves semicolons), the header line 1 and each correction the next.
const FILE: Kind = Kind {
    name: CORRECTIONS,
    header: CORRECTIONS_HEADER,
    sniff: true,
    physical_lines: false,
};

/// The parts of a correction, in the order the page writes them.
const COLUMNS: [(&str, &[&str]); 6] = [
    ("student_id", &["student_id"]),
    ("section", &["section"]),
    ("field", &["field"]),
    ("value", &["value"]),
    ("reason", &["reason"]),
    ("grader", &["grader"]),
];

/// Checks `text` as `--corrections` would, then makes it the corrections file.
fn replace_checked(text: &[u8]) -> Result<Corrections, Invalid> {
    FILE.replace_checked(text, |path| {
        crate::config::corrections(Some(path)).map_err(|e| e.to_string())
    })
}

/// Adds a correction (already checked with `Typed::check`) at the end of the file; its line.
pub fn add(typed: &Typed) -> Result<usize, Invalid> {
    typed.check(0)?;
    let mut lines = FILE.read().map_err(file_fault)?;
    let at = lines.columns(COLUMNS);
    let parts = [
        typed.student_id,
        typed.section,
        typed.field,
        typed.value,
        typed.reason,
        typed.grader,
    ];
    let line = lines.append(&parts, &at);
    let text = lines.text(CORRECTIONS).map_err(file_fault)?;
    let loaded = replace_checked(&text)?;
    Ok(loaded.list().last().map_or(line, |c| c.line))
}

/// Takes out the correction that starts on `line`; false if no correction starts there.
pub fn remove(line: usize) -> Result<bool, Invalid> {
    let mut lines = FILE.read().map_err(file_fault)?;
    let id = position(&lines.header, COLUMNS[0].1);
    if !lines.remove(line, id) {
        return Ok(false);
    }
    let text = lines.text(CORRECTIONS).map_err(file_fault)?;
    replace_checked(&text)?;
    Ok(true)
}
