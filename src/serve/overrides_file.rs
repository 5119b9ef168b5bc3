//! `overrides.csv` as the page edits it (`line_file`): an override added at the end or one
//! taken out by its line, the new file checked exactly as `--overrides` checks it before it
//! replaces the old one.

use std::path::Path;

use crate::rubric::overrides::{Change, Invalid, Limits, Overrides, Typed};

use super::line_file::{file_fault, position, Kind};
use super::workspace::{OVERRIDES, OVERRIDES_HEADER};

/// One override as the page lists it.
#[derive(Clone, Debug, serde::Serialize)]
pub struct Entry {
    /// Its line in overrides.csv, which `DELETE /api/overrides/{line}` names.
    pub line: usize,
    pub student_id: String,
    pub section: Option<String>,
    /// A criterion id, or "total".
    pub criterion: String,
    pub points: Option<f64>,
    pub adjust: Option<f64>,
    pub reason: String,
    pub grader: String,
}

/// The overrides in the file, as `--overrides` reads them, or why it cannot be read.
pub fn list(limits: &Limits) -> Result<Vec<Entry>, String> {
    if !Path::new(OVERRIDES).exists() {
        return Ok(Vec::new());
    }
    let loaded = Overrides::load(Path::new(OVERRIDES), limits).map_err(|e| e.to_string())?;
    Ok(loaded
        .list()
        .iter()
        .map(|o| Entry {
            line: o.line,
            student_id: o.student_id.clone(),
            section: o.section.clone(),
            criterion: o.criterion.clone().unwrap_or_else(|| "total".into()),
            points: match o.change {
                Change::Set(v) => Some(v),
                Change::Adjust(_) => None,
            },
            adjust: match o.change {
                Change::Adjust(v) => Some(v),
                Change::Set(_) => None,
            },
            reason: o.reason.clone(),
            grader: o.grader.clone(),
        })
        .collect())
}

/// overrides.csv as the command line reads it: comma-separated, each override numbered by the
/// line it starts on.
const FILE: Kind = Kind {
    name: OVERRIDES,
    header: OVERRIDES_HEADER,
    sniff: false,
    physical_lines: true,
};

/// The names the command line accepts for each column of an override.
const COLUMNS: [(&str, &[&str]); 7] = [
    ("student_id", &["student_id", "id", "student"]),
    ("section", &["section"]),
    ("criterion", &["criterion"]),
    ("points", &["points"]),
    ("adjust", &["adjust", "adjustment"]),
    ("reason", &["reason"]),
    ("grader", &["grader"]),
];

/// Checks `text` as `--overrides` would, then makes it the overrides file; the overrides read.
fn replace_checked(text: &[u8], limits: &Limits) -> Result<Overrides, Invalid> {
    FILE.replace_checked(text, |path| {
        Overrides::load(path, limits).map_err(|e| e.to_string())
    })
}

/// Adds an override (already checked with `Typed::check`) at the end of the file; its line.
pub fn add(typed: &Typed, limits: &Limits) -> Result<usize, Invalid> {
    typed.check(limits, 0)?;
    let mut lines = FILE.read().map_err(file_fault)?;
    let at = lines.columns(COLUMNS);
    let parts = [
        typed.student_id,
        typed.section,
        typed.criterion,
        typed.points,
        typed.adjust,
        typed.reason,
        typed.grader,
    ];
    let line = lines.append(&parts, &at);
    let text = lines.text(OVERRIDES).map_err(file_fault)?;
    let loaded = replace_checked(&text, limits)?;
    Ok(loaded.list().last().map_or(line, |o| o.line))
}

/// Takes out the override that starts on `line`; false if no override starts there.
pub fn remove(line: usize, limits: &Limits) -> Result<bool, Invalid> {
    let mut lines = FILE.read().map_err(file_fault)?;
    let id = position(&lines.header, COLUMNS[0].1);
    if !lines.remove(line, id) {
        return Ok(false);
    }
    let text = lines.text(OVERRIDES).map_err(file_fault)?;
    replace_checked(&text, limits)?;
    Ok(true)
}
