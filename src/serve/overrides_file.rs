//! `overrides.csv` as the page edits it: read as the command line reads it, an override added
//! at the end or one taken out by its line, every other line kept as it was (a hand-made file
//! keeps its columns; one lacking a column the page needs gets it added). The new file is
//! checked exactly as `--overrides` checks it before it replaces the old one. Every value is
//! written guarded against formula injection (`rubric::overrides::guard`) and read back
//! without the guard, so a value round-trips.

use std::path::Path;

use crate::ingest::delimited;
use crate::rubric::overrides::{guard, unguard, Change, Invalid, Limits, Overrides, Typed};

use super::workspace::{temporary_path, write_atomically, OVERRIDES, OVERRIDES_HEADER};

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

/// The file's header and records, each with the line it starts on.
struct Lines {
    header: csv::StringRecord,
    records: Vec<(usize, csv::StringRecord)>,
}

fn read_lines() -> Result<Lines, String> {
    let bytes = match crate::files::read(Path::new(OVERRIDES)) {
        Ok(b) => b,
        Err(e) if e.kind() == std::io::ErrorKind::NotFound => OVERRIDES_HEADER.as_bytes().to_vec(),
        Err(e) => return Err(format!("cannot read {OVERRIDES}: {e}")),
    };
    let (text, _) = delimited::decode(&bytes);
    let mut reader = csv::ReaderBuilder::new()
        .flexible(true)
        .from_reader(text.as_bytes());
    let header = reader
        .headers()
        .map_err(|e| format!("{OVERRIDES} line 1: {e}"))?
        .clone();
    let mut records = Vec::new();
    for (i, rec) in reader.records().enumerate() {
        let rec = rec.map_err(|e| format!("{OVERRIDES} line {}: {e}", i + 2))?;
        let line = rec.position().map_or(i + 2, |p| p.line() as usize);
        // the values themselves: `text` guards them again as it writes them
        let values: csv::StringRecord = rec.iter().map(unguard).collect();
        records.push((line, values));
    }
    Ok(Lines { header, records })
}

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

fn position(header: &csv::StringRecord, names: &[&str]) -> Option<usize> {
    header
        .iter()
        .position(|h| names.contains(&h.trim().to_lowercase().replace(' ', "_").as_str()))
}

impl Lines {
    /// The column for each part of an override, added to the header where it is missing.
    fn columns(&mut self) -> [usize; 7] {
        COLUMNS.map(|(name, aliases)| {
            position(&self.header, aliases).unwrap_or_else(|| {
                self.header.push_field(name);
                self.header.len() - 1
            })
        })
    }

    fn text(&self) -> Result<Vec<u8>, String> {
        let mut w = csv::WriterBuilder::new()
            .flexible(true)
            .from_writer(Vec::new());
        let fail = |e: csv::Error| format!("cannot write {OVERRIDES}: {e}");
        w.write_record(&self.header).map_err(fail)?;
        for (_, r) in &self.records {
            // guarded against formula injection like every CSV benchgrade writes
            w.write_record(r.iter().map(|v| guard(v).into_owned()))
                .map_err(fail)?;
        }
        w.into_inner()
            .map_err(|e| format!("cannot write {OVERRIDES}: {e}"))
    }
}

/// Checks `text` as `--overrides` would, then makes it the overrides file; the overrides read.
fn replace_checked(text: &[u8], limits: &Limits) -> Result<Overrides, Invalid> {
    let file_error = |message: String| Invalid {
        field: "file",
        message,
    };
    let tmp = temporary_path(Path::new("."), OVERRIDES);
    let checked = write_atomically(&tmp, text)
        .map_err(|e| file_error(format!("cannot write {OVERRIDES}: {e}")))
        .and_then(|()| {
            Overrides::load(&tmp, limits).map_err(|e| {
                let shown = tmp.display().to_string();
                file_error(e.to_string().replace(&shown, OVERRIDES))
            })
        });
    let result = checked.and_then(|o| {
        std::fs::rename(&tmp, OVERRIDES)
            .map(|()| o)
            .map_err(|e| file_error(format!("cannot write {OVERRIDES}: {e}")))
    });
    if result.is_err() {
        let _ = std::fs::remove_file(&tmp);
    }
    result
}

/// Adds an override (already checked with `Typed::check`) at the end of the file; its line.
pub fn add(typed: &Typed, limits: &Limits) -> Result<usize, Invalid> {
    typed.check(limits, 0)?;
    let mut lines = read_lines().map_err(|message| Invalid {
        field: "file",
        message,
    })?;
    let at = lines.columns();
    let parts = [
        typed.student_id,
        typed.section,
        typed.criterion,
        typed.points,
        typed.adjust,
        typed.reason,
        typed.grader,
    ];
    let mut cells = vec![String::new(); lines.header.len()];
    for (i, part) in parts.iter().enumerate() {
        cells[at[i]] = part.unwrap_or("").to_string();
    }
    let line = lines.records.last().map_or(2, |(l, _)| l + 1);
    lines.records.push((line, csv::StringRecord::from(cells)));
    let text = lines.text().map_err(|message| Invalid {
        field: "file",
        message,
    })?;
    let loaded = replace_checked(&text, limits)?;
    Ok(loaded.list().last().map_or(line, |o| o.line))
}

/// Takes out the override that starts on `line`; false if no override starts there.
pub fn remove(line: usize, limits: &Limits) -> Result<bool, Invalid> {
    let mut lines = read_lines().map_err(|message| Invalid {
        field: "file",
        message,
    })?;
    let before = lines.records.len();
    // a line without a student is a blank or a note, never an override
    let id = position(&lines.header, COLUMNS[0].1);
    lines.records.retain(|(l, r)| {
        *l != line
            || id
                .and_then(|c| r.get(c))
                .is_none_or(|s| s.trim().is_empty())
    });
    if lines.records.len() == before {
        return Ok(false);
    }
    let text = lines.text().map_err(|message| Invalid {
        field: "file",
        message,
    })?;
    replace_checked(&text, limits)?;
    Ok(true)
}
