//! Ingest: files in, `Submission`s out, with a report of every sheet's layout and every file
//! or sheet that could not be used. Nothing here stops the batch: a bad file is a `Problem`.

pub mod calibration;
pub mod cells;
pub mod delimited;
pub mod discover;
pub mod headers;
pub mod ods_scan;
pub mod percent_cells;
pub mod range;
pub mod row;
pub mod spill;
pub mod submission;
pub mod table;
pub mod values;
pub mod workbook;
pub mod xls_guard;
pub mod zip_guard;

use std::fmt::Write as _;
use std::path::Path;

use serde::Serialize;

use cells::RawSheet;
use headers::ColumnOverrides;
pub use submission::{SheetHead, Submission, Unreadable};
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
    /// 1-based rows passed over because they name no student (template or summary rows).
    pub unnamed: Vec<u32>,
    pub decimal_comma: bool,
    pub encoding: Option<String>,
}

/// A sheet as read from a file, ready to be tabulated.
#[derive(Debug)]
pub struct SheetData {
    pub source: String,
    pub sheet: RawSheet,
    /// The section for rows without a section column: the sheet name, or the file stem.
    pub default_section: String,
    pub decimal: Decimal,
    pub encoding: Option<String>,
}

/// What reading a file produces, in order: its sheets and problems, then `FileDone`.
#[derive(Debug)]
pub enum Event {
    Sheet(SheetData),
    Problem(Problem),
    FileDone(String),
}

fn file_stem(path: &Path) -> String {
    path.file_stem()
        .and_then(|s| s.to_str())
        .unwrap_or("")
        .to_string()
}

/// Reads one file, handing over each sheet (or problem) as soon as it is read.
/// Safe to run on a reader thread: it only reads.
pub fn read_file(path: &Path, emit: &mut dyn FnMut(Event)) {
    let source = path.display().to_string();
    let fatal = |message: String| {
        Event::Problem(Problem {
            file: source.clone(),
            sheet: None,
            message,
            fatal: true,
        })
    };
    let ext = path
        .extension()
        .and_then(|e| e.to_str())
        .unwrap_or("")
        .to_ascii_lowercase();
    let meta = std::fs::metadata(path);
    let len = meta.as_ref().map_or(0, std::fs::Metadata::len);
    if meta.as_ref().is_ok_and(|m| !m.is_file()) {
        emit(fatal(
            "not a regular file (a pipe, device or socket); only files are read".into(),
        ));
    } else if len == 0 {
        emit(fatal("the file is empty".into()));
    } else if let Some(format) = Format::from_extension(&ext) {
        read_workbook_file(path, format, &source, emit);
    } else if ext == "csv" || ext == "tsv" {
        match crate::files::read(path)
            .map_err(|e| format!("cannot read: {e}"))
            .and_then(|b| delimited::read_delimited(&b, ext == "tsv"))
        {
            Ok(d) => {
                if let Some((bytes, line)) = d.damaged {
                    emit(Event::Problem(Problem {
                        file: source.clone(),
                        sheet: None,
                        message: format!("{bytes} bytes are not valid {} (the first on line {line}); they show as \u{fffd} and the cells holding them are marked", d.encoding.split(',').next().unwrap_or("text")),
                        fatal: false,
                    }));
                }
                emit(Event::Sheet(SheetData {
                    source: source.clone(),
                    sheet: d.sheet,
                    default_section: file_stem(path),
                    decimal: d.decimal,
                    encoding: Some(d.encoding.to_string()),
                }));
            }
            Err(message) => emit(fatal(message)),
        }
    } else {
        emit(fatal(format!(
            "not a spreadsheet benchgrade reads (.{ext}); use one of {}",
            discover::EXTENSIONS.join(", ")
        )));
    }
    emit(Event::FileDone(source));
}

/// Each sheet of a workbook, or its problem, as an event.
fn read_workbook_file(path: &Path, format: Format, source: &str, emit: &mut dyn FnMut(Event)) {
    let mut on_sheet = |s: workbook::SheetRead| match s.result {
        Ok(sheet) => emit(Event::Sheet(SheetData {
            source: source.to_string(),
            default_section: s.name.clone(),
            sheet,
            decimal: Decimal::Point,
            encoding: None,
        })),
        Err(message) => emit(Event::Problem(Problem {
            file: source.to_string(),
            sheet: Some(s.name),
            message,
            fatal: s.fatal,
        })),
    };
    if let Err(message) = workbook::read_workbook(path, format, &mut on_sheet) {
        emit(Event::Problem(Problem {
            file: source.to_string(),
            sheet: None,
            message,
            fatal: true,
        }));
    }
}

/// Receives what readers produce, in order: tabulates sheets into submissions, keeps the sheet
/// reports and problems, and marks a file none of whose sheets held a table.
#[derive(Debug, Default)]
pub struct Collector {
    pub sheets: Vec<SheetReport>,
    pub problems: Vec<Problem>,
    tables_in_file: usize,
}

impl Collector {
    pub fn handle(
        &mut self,
        event: Event,
        columns: &ColumnOverrides,
        on_row: &mut dyn FnMut(Submission),
    ) {
        match event {
            Event::Sheet(data) => match tabulate(&data, columns, on_row) {
                Ok(report) => {
                    self.tables_in_file += 1;
                    if let Some(message) = report.layout.missing_message() {
                        // one message for the sheet; its rows still carry missing-value
                        self.problems.push(Problem {
                            file: report.source.clone(),
                            sheet: report.sheet.clone(),
                            message,
                            fatal: true,
                        });
                    }
                    if let Some(message) = unnamed_message(&report.unnamed) {
                        self.problems.push(Problem {
                            file: report.source.clone(),
                            sheet: report.sheet.clone(),
                            message,
                            fatal: false,
                        });
                    }
                    if report.students == 0 {
                        // read correctly, but worth a word: often the wrong tab or an unsaved file
                        self.problems.push(Problem {
                            file: report.source.clone(),
                            sheet: report.sheet.clone(),
                            message: "a header row and no submissions under it".into(),
                            fatal: false,
                        });
                    }
                    self.sheets.push(report);
                }
                Err(problem) => self.problems.push(problem),
            },
            Event::Problem(p) => self.problems.push(p),
            Event::FileDone(source) => {
                let failed = self.problems.iter().any(|p| p.file == source && p.fatal);
                if self.tables_in_file == 0 && !failed {
                    let (mut hidden, mut other) = (0, 0);
                    for p in self.problems.iter_mut().filter(|p| p.file == source) {
                        p.fatal = true;
                        if p.message == workbook::HIDDEN {
                            hidden += 1;
                        } else {
                            other += 1;
                        }
                    }
                    let message = if hidden > 0 && other == 0 {
                        "every sheet that could hold submissions is hidden in the workbook; unhide the section's sheet to grade it"
                    } else {
                        "no sheet holds a recognisable table of submissions (a header row naming a mass or melting-point column and at least two other fields)"
                    };
                    self.problems.push(Problem {
                        file: source,
                        sheet: None,
                        message: message.into(),
                        fatal: true,
                    });
                }
                self.tables_in_file = 0;
            }
        }
    }
}

/// The note for rows passed over because they name no student.
pub fn unnamed_message(rows: &[u32]) -> Option<String> {
    let (first, rest) = rows.split_first()?;
    let mut list = first.to_string();
    for r in rest.iter().take(9) {
        list.push_str(", ");
        list.push_str(&r.to_string());
    }
    if rest.len() > 9 {
        let _ = write!(list, " and {} more", rest.len() - 9);
    }
    let noun = if rows.len() == 1 { "row" } else { "rows" };
    Some(format!(
        "{noun} {list} name no student (no id or name): not graded, taken for template or summary rows"
    ))
}

/// Most title rows above a header a graded workbook copies.
const MAX_TITLE_ROWS: usize = 4;

/// The header texts, the id and name columns, and the title rows of a sheet's table.
fn sheet_head(sheet: &RawSheet, layout: &table::Layout) -> submission::SheetHead {
    let identity = layout
        .columns
        .iter()
        .enumerate()
        .filter(|(_, c)| {
            matches!(
                c.field,
                Some(
                    crate::fields::Field::StudentId
                        | crate::fields::Field::StudentName
                        | crate::fields::Field::LastName
                        | crate::fields::Field::FirstName
                )
            )
        })
        .map(|(i, _)| i)
        .collect();
    let title = sheet.rows[..layout.header_pos]
        .iter()
        .map(|r| {
            r.non_empty()
                .filter_map(|(_, c)| c.as_text())
                .collect::<Vec<_>>()
                .join("  ")
        })
        .filter(|t| !t.is_empty())
        .take(MAX_TITLE_ROWS)
        .collect();
    submission::SheetHead {
        headers: layout.columns.iter().map(|c| c.header.clone()).collect(),
        identity,
        title,
    }
}

/// Finds the table in a sheet and hands over each student row as a `Submission`.
pub fn tabulate(
    data: &SheetData,
    columns: &ColumnOverrides,
    on_row: &mut dyn FnMut(Submission),
) -> Result<SheetReport, Problem> {
    let sheet = &data.sheet;
    if sheet
        .name
        .as_deref()
        .is_some_and(|n| n.to_lowercase().contains("calibration"))
    {
        let message =
            "not graded: a calibration sheet; apply it with --calibration FILE".to_string();
        return Err(Problem {
            file: data.source.clone(),
            sheet: sheet.name.clone(),
            message,
            fatal: false,
        });
    }
    let problem = |message: String, fatal: bool| Problem {
        file: data.source.clone(),
        sheet: sheet.name.clone(),
        message,
        fatal,
    };
    let columns = columns.for_sheet(&data.source, sheet.name.as_deref());
    let layout = match table::locate(sheet, &columns) {
        Ok(l) => l,
        Err(LayoutError::NoTable) => {
            return Err(problem(
                "skipped: no recognisable table of submissions".into(),
                false,
            ))
        }
    };
    let origin = row::Origin {
        source: &data.source,
        sheet: sheet.name.as_deref(),
        default_section: &data.default_section,
        decimal: data.decimal,
        headers: std::sync::Arc::new(sheet_head(sheet, &layout)),
    };
    let (rows, unnamed) = table::rows_and_unnamed(sheet, &layout);
    let students = rows.len();
    for r in rows {
        on_row(row::read_row(r, &layout, &origin));
    }
    Ok(SheetReport {
        source: data.source.clone(),
        sheet: sheet.name.clone(),
        layout,
        students,
        unnamed,
        decimal_comma: data.decimal == Decimal::Comma,
        encoding: data.encoding.clone(),
    })
}
