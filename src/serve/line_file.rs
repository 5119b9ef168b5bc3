//! A grader's CSV of lines (overrides.csv, corrections.csv) as the page edits it: read as the
//! command line reads it, a line added at the end or one taken out by its number, every other
//! line kept as it was (a hand-made file keeps its columns and its delimiter; one lacking a
//! column the page needs gets it added). The new text is checked exactly as the command line
//! checks the file before it replaces the old one. Every value is written guarded against
//! formula injection (`rubric::overrides::guard`) and read back without the guard, so a value
//! round-trips. `overrides_file` and `corrections_file` say which file and how it is checked.

use std::path::Path;

use crate::ingest::delimited;
use crate::rubric::overrides::{guard, unguard, Invalid};

use super::workspace::{temporary_path, write_atomically};

/// Which file, and how the command line reads it.
pub struct Kind {
    /// Its name in the workspace.
    pub name: &'static str,
    /// What a file not there yet starts as.
    pub header: &'static str,
    /// Whether the delimiter is sniffed (a spreadsheet in a decimal-comma locale saves
    /// semicolons), or always a comma.
    pub sniff: bool,
    /// Whether a record is numbered by the line it starts on in the file, or as the header's
    /// line 1 and each record the next.
    pub physical_lines: bool,
}

/// An error about the file itself, as the API reports it.
pub fn file_fault(message: String) -> Invalid {
    Invalid {
        field: "file",
        message,
    }
}

/// The file's header and records, each with its line number.
pub struct Lines {
    pub header: csv::StringRecord,
    pub records: Vec<(usize, csv::StringRecord)>,
    delimiter: u8,
}

impl Kind {
    /// Reads the file (a header alone if it is not there yet).
    pub fn read(&self) -> Result<Lines, String> {
        let name = self.name;
        let bytes = match crate::files::read(Path::new(name)) {
            Ok(b) => b,
            Err(e) if e.kind() == std::io::ErrorKind::NotFound => self.header.as_bytes().to_vec(),
            Err(e) => return Err(format!("cannot read {name}: {e}")),
        };
        let (text, _) = delimited::decode(&bytes);
        let delimiter = if self.sniff {
            delimited::sniff_delimiter(&text, false)
        } else {
            b','
        };
        let mut reader = csv::ReaderBuilder::new()
            .flexible(true)
            .delimiter(delimiter)
            .from_reader(text.as_bytes());
        let header = reader
            .headers()
            .map_err(|e| format!("{name} line 1: {e}"))?
            .clone();
        let mut records = Vec::new();
        for (i, rec) in reader.records().enumerate() {
            let rec = rec.map_err(|e| format!("{name} line {}: {e}", i + 2))?;
            let line = match rec.position() {
                Some(p) if self.physical_lines => p.line() as usize,
                _ => i + 2,
            };
            // the values themselves: `text` guards them again as it writes them
            let values: csv::StringRecord = rec.iter().map(unguard).collect();
            records.push((line, values));
        }
        Ok(Lines {
            header,
            records,
            delimiter,
        })
    }

    /// Checks `text` with `check` (the command line's reading of the file), then makes it the
    /// file; what `check` read.
    pub fn replace_checked<T>(
        &self,
        text: &[u8],
        check: impl FnOnce(&Path) -> Result<T, String>,
    ) -> Result<T, Invalid> {
        let name = self.name;
        let tmp = temporary_path(Path::new("."), name);
        let checked = write_atomically(&tmp, text)
            .map_err(|e| file_fault(format!("cannot write {name}: {e}")))
            .and_then(|()| {
                check(&tmp).map_err(|e| {
                    let shown = tmp.display().to_string();
                    file_fault(e.replace(&shown, name))
                })
            });
        let result = checked.and_then(|read| {
            std::fs::rename(&tmp, name)
                .map(|()| read)
                .map_err(|e| file_fault(format!("cannot write {name}: {e}")))
        });
        if result.is_err() {
            let _ = std::fs::remove_file(&tmp);
        }
        result
    }
}

/// The column whose header is one of `names` (compared without case, spaces as underscores).
pub fn position(header: &csv::StringRecord, names: &[&str]) -> Option<usize> {
    header
        .iter()
        .position(|h| names.contains(&h.trim().to_lowercase().replace(' ', "_").as_str()))
}

impl Lines {
    /// The column of each part (its name, and the names the command line accepts for it),
    /// added to the header where it is missing.
    pub fn columns<const N: usize>(&mut self, parts: [(&str, &[&str]); N]) -> [usize; N] {
        parts.map(|(name, aliases)| {
            position(&self.header, aliases).unwrap_or_else(|| {
                self.header.push_field(name);
                self.header.len() - 1
            })
        })
    }

    /// Appends a record of `parts` in the columns `at`; its line number.
    pub fn append(&mut self, parts: &[Option<&str>], at: &[usize]) -> usize {
        let mut cells = vec![String::new(); self.header.len()];
        for (part, &c) in parts.iter().zip(at) {
            cells[c] = part.unwrap_or("").to_string();
        }
        let line = self.records.last().map_or(2, |(l, _)| l + 1);
        self.records.push((line, csv::StringRecord::from(cells)));
        line
    }

    /// Takes out the record numbered `line` if it names a student in column `id` (a line
    /// without one is a blank or a note, never an entry); whether one was taken out.
    pub fn remove(&mut self, line: usize, id: Option<usize>) -> bool {
        let before = self.records.len();
        self.records.retain(|(l, r)| {
            *l != line
                || id
                    .and_then(|c| r.get(c))
                    .is_none_or(|s| s.trim().is_empty())
        });
        self.records.len() != before
    }

    /// The file's text, every value guarded as every CSV benchgrade writes.
    pub fn text(&self, name: &str) -> Result<Vec<u8>, String> {
        let mut w = csv::WriterBuilder::new()
            .flexible(true)
            .delimiter(self.delimiter)
            .from_writer(Vec::new());
        let fail = |e: csv::Error| format!("cannot write {name}: {e}");
        w.write_record(&self.header).map_err(fail)?;
        for (_, r) in &self.records {
            w.write_record(r.iter().map(|v| guard(v).into_owned()))
                .map_err(fail)?;
        }
        w.into_inner()
            .map_err(|e| format!("cannot write {name}: {e}"))
    }
}
