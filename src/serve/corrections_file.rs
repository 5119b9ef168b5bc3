//! `corrections.csv` as the page edits it, as `overrides_file` edits overrides.csv: read as
//! `--corrections` reads it, a correction added at the end or one taken out by its line, every
//! other line kept as it was (a hand-made file keeps its columns; one lacking a column the page
//! needs gets it added). The new file is checked exactly as the command line checks it
//! (`config::corrections`) before it replaces the old one. Every value is written guarded
//! against formula injection and read back without the guard, so a value round-trips.

use std::path::Path;

use crate::ingest::delimited;
use crate::rubric::corrections::{Correction, Corrections, Typed};
use crate::rubric::overrides::{guard, unguard, Invalid};

use super::workspace::{temporary_path, write_atomically, CORRECTIONS, CORRECTIONS_HEADER};

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

fn file_fault(message: String) -> Invalid {
    Invalid {
        field: "file",
        message,
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

/// The file's header and records, each with the line it starts on; a file not there yet is a
/// header alone.
struct Lines {
    header: csv::StringRecord,
    records: Vec<(usize, csv::StringRecord)>,
    delimiter: u8,
}

fn read_lines() -> Result<Lines, String> {
    let bytes = match crate::files::read(Path::new(CORRECTIONS)) {
        Ok(b) => b,
        Err(e) if e.kind() == std::io::ErrorKind::NotFound => {
            CORRECTIONS_HEADER.as_bytes().to_vec()
        }
        Err(e) => return Err(format!("cannot read {CORRECTIONS}: {e}")),
    };
    let (text, _) = delimited::decode(&bytes);
    // as the command line reads it: a spreadsheet in a decimal-comma locale saves semicolons
    let delimiter = delimited::sniff_delimiter(&text, false);
    let mut reader = csv::ReaderBuilder::new()
        .flexible(true)
        .delimiter(delimiter)
        .from_reader(text.as_bytes());
    let header = reader
        .headers()
        .map_err(|e| format!("{CORRECTIONS} line 1: {e}"))?
        .clone();
    let mut records = Vec::new();
    for (i, rec) in reader.records().enumerate() {
        let rec = rec.map_err(|e| format!("{CORRECTIONS} line {}: {e}", i + 2))?;
        // numbered as `--corrections` numbers them: the header is line 1, each record the next
        let line = i + 2;
        let values: csv::StringRecord = rec.iter().map(unguard).collect();
        records.push((line, values));
    }
    Ok(Lines {
        header,
        records,
        delimiter,
    })
}

/// The parts of a correction, in the order the page writes them.
const COLUMNS: [&str; 6] = [
    "student_id",
    "section",
    "field",
    "value",
    "reason",
    "grader",
];

fn position(header: &csv::StringRecord, name: &str) -> Option<usize> {
    header
        .iter()
        .position(|h| h.trim().to_lowercase().replace(' ', "_") == name)
}

impl Lines {
    /// The column for each part of a correction, added to the header where it is missing.
    fn columns(&mut self) -> [usize; 6] {
        COLUMNS.map(|name| {
            position(&self.header, name).unwrap_or_else(|| {
                self.header.push_field(name);
                self.header.len() - 1
            })
        })
    }

    fn text(&self) -> Result<Vec<u8>, String> {
        let mut w = csv::WriterBuilder::new()
            .flexible(true)
            .delimiter(self.delimiter)
            .from_writer(Vec::new());
        let fail = |e: csv::Error| format!("cannot write {CORRECTIONS}: {e}");
        w.write_record(&self.header).map_err(fail)?;
        for (_, r) in &self.records {
            w.write_record(r.iter().map(|v| guard(v).into_owned()))
                .map_err(fail)?;
        }
        w.into_inner()
            .map_err(|e| format!("cannot write {CORRECTIONS}: {e}"))
    }
}

/// Checks `text` as `--corrections` would, then makes it the corrections file.
fn replace_checked(text: &[u8]) -> Result<Corrections, Invalid> {
    let tmp = temporary_path(Path::new("."), CORRECTIONS);
    let checked = write_atomically(&tmp, text)
        .map_err(|e| file_fault(format!("cannot write {CORRECTIONS}: {e}")))
        .and_then(|()| {
            crate::config::corrections(Some(&tmp)).map_err(|e| {
                let shown = tmp.display().to_string();
                file_fault(e.to_string().replace(&shown, CORRECTIONS))
            })
        });
    let result = checked.and_then(|c| {
        std::fs::rename(&tmp, CORRECTIONS)
            .map(|()| c)
            .map_err(|e| file_fault(format!("cannot write {CORRECTIONS}: {e}")))
    });
    if result.is_err() {
        let _ = std::fs::remove_file(&tmp);
    }
    result
}

/// Adds a correction (already checked with `Typed::check`) at the end of the file; its line.
pub fn add(typed: &Typed) -> Result<usize, Invalid> {
    typed.check(0)?;
    let mut lines = read_lines().map_err(file_fault)?;
    let at = lines.columns();
    let parts = [
        typed.student_id,
        typed.section,
        typed.field,
        typed.value,
        typed.reason,
        typed.grader,
    ];
    let mut cells = vec![String::new(); lines.header.len()];
    for (i, part) in parts.iter().enumerate() {
        cells[at[i]] = part.unwrap_or("").to_string();
    }
    let line = lines.records.last().map_or(2, |(l, _)| l + 1);
    lines.records.push((line, csv::StringRecord::from(cells)));
    let text = lines.text().map_err(file_fault)?;
    let loaded = replace_checked(&text)?;
    Ok(loaded.list().last().map_or(line, |c| c.line))
}

/// Takes out the correction that starts on `line`; false if no correction starts there.
pub fn remove(line: usize) -> Result<bool, Invalid> {
    let mut lines = read_lines().map_err(file_fault)?;
    let before = lines.records.len();
    // a line without a student is a blank or a note, never a correction
    let id = position(&lines.header, COLUMNS[0]);
    lines.records.retain(|(l, r)| {
        *l != line
            || id
                .and_then(|c| r.get(c))
                .is_none_or(|s| s.trim().is_empty())
    });
    if lines.records.len() == before {
        return Ok(false);
    }
    let text = lines.text().map_err(file_fault)?;
    replace_checked(&text)?;
    Ok(true)
}
