//! Ingest: files in, `Submission`s out, with a report of every sheet's layout and every file
//! or sheet that could not be used. Nothing here stops the batch: a bad file is a `Problem`.

pub mod cells;
pub mod delimited;
pub mod discover;
pub mod headers;
pub mod range;
pub mod row;
pub mod submission;
pub mod table;
pub mod values;
pub mod workbook;

use std::path::{Path, PathBuf};

use serde::Serialize;

use cells::RawSheet;
use headers::ColumnOverrides;
pub use submission::{Submission, Unreadable};
use table::{Layout, LayoutError};
use values::Decimal;
use workbook::Format;

/// A file or sheet that could not be used, or was passed over.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct Problem {
    pub file: String,
    pub sheet: Option<String>,
    pub message: String,
    /// True when data could not be read (exit code 1); false for a sheet skipped with a note.
    pub fatal: bool,
}

impl std::fmt::Display for Problem {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        match &self.sheet {
            Some(s) => write!(f, "{} [sheet \"{}\"]: {}", self.file, s, self.message),
            None => write!(f, "{}: {}", self.file, self.message),
        }
    }
}

/// How one sheet was read, for `check` and for the outputs' notes.
#[derive(Clone, Debug, Serialize)]
pub struct SheetReport {
    pub source: String,
    pub sheet: Option<String>,
    pub layout: Layout,
    pub students: usize,
    pub decimal_comma: bool,
    pub encoding: Option<String>,
}

/// Everything ingest produced.
#[derive(Debug, Default)]
pub struct Ingested {
    pub files: Vec<PathBuf>,
    pub submissions: Vec<Submission>,
    pub sheets: Vec<SheetReport>,
    pub problems: Vec<Problem>,
}

impl Ingested {
    pub fn has_fatal_problems(&self) -> bool {
        self.problems.iter().any(|p| p.fatal)
    }
}

/// Reads every input file (folders expanded), never stopping at a bad one.
pub fn ingest(inputs: &[PathBuf], exclude: &[PathBuf], columns: &ColumnOverrides) -> Ingested {
    let (files, missing) = discover::discover(inputs, exclude);
    let mut out = Ingested::default();
    for m in missing {
        out.problems.push(Problem {
            file: m.path.display().to_string(),
            sheet: None,
            message: m.message,
            fatal: true,
        });
    }
    for file in &files {
        ingest_file(file, columns, &mut out);
    }
    out.files = files;
    out
}

fn file_stem(path: &Path) -> String {
    path.file_stem()
        .and_then(|s| s.to_str())
        .unwrap_or("")
        .to_string()
}

fn ingest_file(path: &Path, columns: &ColumnOverrides, out: &mut Ingested) {
    let source = path.display().to_string();
    let fatal = |message: String| Problem {
        file: source.clone(),
        sheet: None,
        message,
        fatal: true,
    };
    let len = std::fs::metadata(path).map(|m| m.len()).unwrap_or(0);
    if len == 0 {
        out.problems.push(fatal("the file is empty".into()));
        return;
    }
    let ext = path
        .extension()
        .and_then(|e| e.to_str())
        .unwrap_or("")
        .to_ascii_lowercase();
    let before = out.sheets.len();
    if let Some(format) = Format::from_extension(&ext) {
        match workbook::read_workbook(path, format) {
            Ok(sheets) => {
                for s in sheets {
                    match s.result {
                        Ok(sheet) => {
                            ingest_sheet(&source, &sheet, Decimal::Point, None, columns, out)
                        }
                        Err(message) => out.problems.push(Problem {
                            file: source.clone(),
                            sheet: Some(s.name),
                            message,
                            fatal: true,
                        }),
                    }
                }
            }
            Err(message) => {
                out.problems.push(fatal(message));
                return;
            }
        }
    } else if ext == "csv" || ext == "tsv" || ext == "txt" {
        let bytes = match std::fs::read(path) {
            Ok(b) => b,
            Err(e) => return out.problems.push(fatal(format!("cannot read: {e}"))),
        };
        match delimited::read_delimited(&bytes, ext == "tsv") {
            Ok(d) => {
                let stem = file_stem(path);
                let sheet = RawSheet {
                    name: None,
                    rows: d.sheet.rows,
                };
                ingest_sheet_named(
                    &source,
                    &sheet,
                    &stem,
                    d.decimal,
                    Some(d.encoding.to_string()),
                    columns,
                    out,
                )
            }
            Err(message) => return out.problems.push(fatal(message)),
        }
    } else {
        return out.problems.push(fatal(format!(
            "not a spreadsheet benchgrade reads (.{ext}); use one of {}",
            discover::EXTENSIONS.join(", ")
        )));
    }
    let read_any = out.sheets.len() > before;
    let file_failed = out.problems.iter().any(|p| p.file == source && p.fatal);
    if !read_any && !file_failed {
        for p in out.problems.iter_mut().filter(|p| p.file == source) {
            p.fatal = true;
        }
        out.problems.push(fatal(
            "no sheet holds a recognisable table of submissions (a header row naming at least a mass or melting point column and two other fields)".into(),
        ));
    }
}

fn ingest_sheet(
    source: &str,
    sheet: &RawSheet,
    decimal: Decimal,
    encoding: Option<String>,
    columns: &ColumnOverrides,
    out: &mut Ingested,
) {
    let name = sheet.name.clone().unwrap_or_default();
    ingest_sheet_named(source, sheet, &name, decimal, encoding, columns, out)
}

fn ingest_sheet_named(
    source: &str,
    sheet: &RawSheet,
    default_section: &str,
    decimal: Decimal,
    encoding: Option<String>,
    columns: &ColumnOverrides,
    out: &mut Ingested,
) {
    let layout = match table::locate(sheet, columns) {
        Ok(l) => l,
        Err(LayoutError::NoTable) => {
            out.problems.push(Problem {
                file: source.to_string(),
                sheet: sheet.name.clone(),
                message: "skipped: no recognisable table of submissions".into(),
                fatal: false,
            });
            return;
        }
        Err(LayoutError::Ambiguous(message)) => {
            out.problems.push(Problem {
                file: source.to_string(),
                sheet: sheet.name.clone(),
                message,
                fatal: true,
            });
            return;
        }
    };
    let origin = row::Origin {
        source,
        sheet: sheet.name.as_deref(),
        default_section,
        decimal,
    };
    let rows = table::student_rows(sheet, &layout);
    let students = rows.len();
    out.submissions
        .extend(rows.into_iter().map(|r| row::read_row(r, &layout, &origin)));
    out.sheets.push(SheetReport {
        source: source.to_string(),
        sheet: sheet.name.clone(),
        layout,
        students,
        decimal_comma: decimal == Decimal::Comma,
        encoding,
    });
}
