//! Ingest: files in, `Submission`s out, with a report of every sheet's layout and every file
//! or sheet that could not be used. Nothing here stops the batch: a bad file is a `Problem`.

pub mod body;
pub mod calibration;
pub mod cells;
mod claims;
pub mod commas;
pub mod delimited;
pub mod discover;
pub mod experiment;
pub mod grouped;
pub mod headers;
pub mod key;
pub mod ods_scan;
pub mod percent_cells;
pub mod range;
pub mod roster;
pub mod row;
pub mod spill;
pub mod submission;
pub mod table;
pub mod title;
pub mod values;
pub mod vocabulary;
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
    /// Values read from text that is not a plain number, with the text beside them, for
    /// `check` (at most `TEXT_VALUES_SHOWN`; `text_values_more` counts the rest).
    #[serde(skip_serializing_if = "Vec::is_empty")]
    pub text_values: Vec<TextValue>,
    #[serde(skip_serializing_if = "is_zero")]
    pub text_values_more: usize,
    /// The 1-based row of the notes or summary block that ends the student rows, when rows
    /// stand below it.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub block: Option<u32>,
    /// 1-based rows below the block read as students (late entries).
    #[serde(skip_serializing_if = "Vec::is_empty")]
    pub late: Vec<u32>,
    /// 1-based rows below the block passed over: not students.
    #[serde(skip_serializing_if = "Vec::is_empty")]
    pub passed: Vec<u32>,
}

/// The rows as a short list: "4, 7-9, 12", the first ten runs and a count of the rest.
pub fn row_list(rows: &[u32]) -> String {
    let mut runs: Vec<(u32, u32)> = Vec::new();
    for &r in rows {
        match runs.last_mut() {
            Some(last) if last.1 + 1 == r => last.1 = r,
            _ => runs.push((r, r)),
        }
    }
    let mut parts: Vec<String> = runs
        .iter()
        .take(10)
        .map(|(a, b)| {
            if a == b {
                a.to_string()
            } else {
                format!("{a}-{b}")
            }
        })
        .collect();
    if runs.len() > 10 {
        parts.push(format!("and {} more", runs.len() - 10));
    }
    parts.join(", ")
}

// serde's skip_serializing_if hands the field by reference
#[allow(clippy::trivially_copy_pass_by_ref)]
fn is_zero(n: &usize) -> bool {
    *n == 0
}

/// A value read from text: the cell, the text as typed and what it was read as.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct TextValue {
    pub cell: String,
    pub text: String,
    pub read: String,
}

/// Most values read from text `check` lists for one sheet.
const TEXT_VALUES_SHOWN: usize = 20;

/// Decides each numeric column's comma reading from its cells in the student rows.
fn decide_commas(layout: &mut Layout, rows: &[&cells::RawRow], file: Decimal) {
    for c in &mut layout.columns {
        if c.field
            .is_some_and(|f| f.is_numeric() || f == crate::fields::Field::MpRange)
        {
            c.decimal = Some(commas::column_decimal(
                rows.iter().map(|r| r.get(c.index)),
                file,
            ));
        }
    }
}

/// The values of numeric columns read from text that is not a plain number, with the text.
fn text_values(
    layout: &Layout,
    rows: &[&cells::RawRow],
    sheet: Option<&str>,
    file: Decimal,
) -> (Vec<TextValue>, usize) {
    let mut out = Vec::new();
    let mut more = 0;
    for r in rows {
        for c in &layout.columns {
            let (Some(field), Some(decimal)) = (c.field, c.decimal) else {
                continue;
            };
            let cells::Cell::Text(t) = r.get(c.index) else {
                continue;
            };
            if values::is_blank_marker(t) || !commas::worth_showing(t, file) {
                continue;
            }
            let read = if field == crate::fields::Field::MpRange {
                range::parse_range(t, decimal).map(|x| {
                    let unit = x.unit.map(|u| values::Unit::Temperature(u).symbol());
                    format!(
                        "{}-{}{}",
                        cells::format_number(x.onset),
                        cells::format_number(x.clear),
                        unit.map(|u| format!(" {u}")).unwrap_or_default()
                    )
                })
            } else {
                values::parse_quantity(t, decimal).map(|q| {
                    let unit = q
                        .unit
                        .map(|u| format!(" {}", u.symbol()))
                        .unwrap_or_default();
                    format!("{}{unit}", cells::format_number(q.value))
                })
            };
            let Some(read) = read else { continue };
            if out.len() < TEXT_VALUES_SHOWN {
                out.push(TextValue {
                    cell: cells::cell_ref(sheet, r.index, c.index),
                    text: t.trim().to_string(),
                    read,
                });
            } else {
                more += 1;
            }
        }
    }
    (out, more)
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

/// Told the name of every file before it is read, by a process that grades for another (the
/// workspace server's grading process, `serve::child`): a reader that aborts the process
/// (an abort cannot be caught) then leaves word of the file it was reading.
static ON_READ: std::sync::OnceLock<fn(&Path, bool)> = std::sync::OnceLock::new();

/// Sets the hook told of every file before it is read (`false`) and once it has been read
/// (`true`), once a process.
pub fn on_read(hook: fn(&Path, bool)) {
    let _ = ON_READ.set(hook);
}

/// The tests' way to make a reader abort the process, or never finish:
/// `BENCHGRADE_FAULT=abort-on-read-NAME` aborts, `hang-on-read-NAME` sleeps for good, when a
/// file whose name contains NAME is about to be read.
fn fault_on_read(path: &Path) {
    let Some(fault) = std::env::var_os("BENCHGRADE_FAULT") else {
        return;
    };
    let Some(fault) = fault.to_str() else { return };
    let named = |prefix: &str| {
        fault.strip_prefix(prefix).is_some_and(|name| {
            path.file_name()
                .is_some_and(|f| f.to_string_lossy().contains(name))
        })
    };
    if named("abort-on-read-") {
        std::process::abort();
    }
    while named("hang-on-read-") {
        std::thread::sleep(std::time::Duration::from_secs(3600));
    }
}

/// Reads one file, handing over each sheet (or problem) as soon as it is read.
/// Safe to run on a reader thread: it only reads.
pub fn read_file(path: &Path, emit: &mut dyn FnMut(Event)) {
    let hook = ON_READ.get();
    if let Some(hook) = hook {
        hook(path, false);
    }
    fault_on_read(path);
    read_one(path, emit);
    if let Some(hook) = hook {
        hook(path, true);
    }
}

fn read_one(path: &Path, emit: &mut dyn FnMut(Event)) {
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
    if let Err(e) = &meta {
        emit(fatal(format!("cannot be read: {e}")));
    } else if meta.as_ref().is_ok_and(std::fs::Metadata::is_dir) {
        emit(fatal("is a folder, not a file".into()));
    } else if meta.as_ref().is_ok_and(|m| !m.is_file()) {
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

/// The section and assistant of rows without a cell for them: a `section = ".."` or
/// `assistant = ".."` in the sheet's or file's mapping; else, where the table has no such
/// column, what the title rows name (a title's section only where it is not the sheet's or
/// file's own: "Section 07" over a sheet "Sec 07" keeps "Sec 07"); else the sheet name or file
/// stem, and no assistant.
fn section_and_assistant(
    columns: &ColumnOverrides,
    layout: &Layout,
    head: &SheetHead,
    default: &str,
) -> (String, Option<String>) {
    use crate::fields::Field;
    let named = title::named(&head.title, &vocabulary::current());
    let section = columns.values.get(&Field::Section).cloned().or_else(|| {
        let s = named
            .section
            .filter(|_| layout.column(Field::Section).is_none())?;
        (!same_label(&s, default)).then_some(s)
    });
    let assistant = columns.values.get(&Field::Assistant).cloned().or_else(|| {
        named
            .assistant
            .filter(|_| layout.column(Field::Assistant).is_none())
    });
    (section.unwrap_or_else(|| default.to_string()), assistant)
}

/// Whether a title's section ("Section 07") is the one a sheet name or file stem names ("Sec
/// 07", "section-7"): the last words of both, leading zeros aside.
fn same_label(title: &str, name: &str) -> bool {
    let last = |t: &str| {
        t.split(|c: char| !c.is_alphanumeric())
            .rfind(|t| !t.is_empty())
            .map(str::to_string)
    };
    let Some(label) = last(title) else {
        return false;
    };
    let key = |t: &str| {
        let t = t.trim_start_matches('0').to_lowercase();
        if t.is_empty() {
            "0".to_string()
        } else {
            t
        }
    };
    name.split(|c: char| !c.is_alphanumeric())
        .rfind(|t| !t.is_empty())
        .is_some_and(|last| key(last) == key(&label))
}

/// The sheet's table, or the note that passes the sheet over (a calibration sheet, no table).
fn layout_of(data: &SheetData, columns: &ColumnOverrides, roster: bool) -> Result<Layout, Problem> {
    let sheet = &data.sheet;
    let problem = |message: &str| Problem {
        file: data.source.clone(),
        sheet: sheet.name.clone(),
        message: message.to_string(),
        fatal: false,
    };
    let calibration = sheet
        .name
        .as_deref()
        .is_some_and(|n| n.to_lowercase().contains("calibration"));
    if calibration {
        return Err(problem(
            "not graded: a calibration sheet; apply it with --calibration FILE",
        ));
    }
    let locate = if roster {
        table::locate_roster
    } else {
        table::locate
    };
    locate(sheet, columns)
        .map_err(|LayoutError::NoTable| problem("skipped: no recognisable table of submissions"))
}

/// Finds the table in a sheet and hands over each student row as a `Submission`.
pub fn tabulate(
    data: &SheetData,
    columns: &ColumnOverrides,
    on_row: &mut dyn FnMut(Submission),
) -> Result<SheetReport, Problem> {
    tabulate_as(data, columns, false, on_row)
}

/// `tabulate`, for a class sheet or (`roster`) a roster, whose table needs only an id column
/// beside two other fields.
pub fn tabulate_as(
    data: &SheetData,
    columns: &ColumnOverrides,
    roster: bool,
    on_row: &mut dyn FnMut(Submission),
) -> Result<SheetReport, Problem> {
    let sheet = &data.sheet;
    let columns = columns.for_sheet(&data.source, sheet.name.as_deref());
    let mut layout = layout_of(data, &columns, roster)?;
    let body::Body {
        rows,
        unnamed,
        block,
        late,
        passed,
    } = body::body(sheet, &layout);
    decide_commas(&mut layout, &rows, data.decimal);
    let (text_values, text_values_more) =
        text_values(&layout, &rows, sheet.name.as_deref(), data.decimal);
    let head = sheet_head(sheet, &layout);
    let (section, assistant) =
        section_and_assistant(&columns, &layout, &head, &data.default_section);
    let origin = row::Origin {
        source: &data.source,
        sheet: sheet.name.as_deref(),
        default_section: &section,
        default_assistant: assistant.as_deref(),
        decimal: data.decimal,
        headers: std::sync::Arc::new(head),
    };
    let students = rows.len();
    for r in rows {
        let mut sub = row::read_row(r, &layout, &origin);
        if let Some(block) = block.filter(|_| late.contains(&sub.row)) {
            sub.notes.push(format!(
                "row {} stands below the notes or summary block that begins at row {block}; read as a student",
                sub.row
            ));
        }
        on_row(sub);
    }
    Ok(SheetReport {
        source: data.source.clone(),
        sheet: sheet.name.clone(),
        layout,
        students,
        unnamed,
        decimal_comma: data.decimal == Decimal::Comma,
        encoding: data.encoding.clone(),
        text_values,
        text_values_more,
        block: block.filter(|_| !late.is_empty() || !passed.is_empty()),
        late,
        passed,
    })
}
