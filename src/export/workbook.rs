//! DIR/<input stem>-graded.xlsx: what a grader opens, checks and hands back. One sheet per
//! section (the student's original columns, the recomputed ones, the points per criterion, the
//! total and the flags), a statistics sheet with native charts, and a provenance sheet.
//!
//! Section sheets are written in rust_xlsxwriter's constant-memory mode as rows stream past, so a
//! class of any size costs one row at a time; the statistics and provenance are added when the
//! batch ends (`workbook_summary.rs`), and each workbook is saved to a temporary file and renamed
//! into place.

use std::collections::HashMap;
use std::path::{Path, PathBuf};

use super::atomic::Stage;
use super::book_plan::BookPlan;
use rust_xlsxwriter::{
    Color, DocProperties, ExcelDateTime, Format, FormatAlign, Workbook, Worksheet, XlsxError,
};

use super::provenance::Provenance;
use crate::error::WriteError;
use crate::model::columns::Column;
use crate::model::Graded;
use crate::model::Severity;
use crate::stats::sections::SectionStats;

/// Our palette: impossible entries rose, suspicious ones amber; the flags column also carries
/// a marker ("!" impossible, "?" suspicious) so that nothing depends on colour.
const IMPOSSIBLE_FILL: u32 = 0xF6C6C0;
const SUSPICIOUS_FILL: u32 = 0xFBE3A6;
const HEADER_FILL: u32 = 0xD9E4EC;
pub use super::section_sheet::NOTES_PER_SHEET;
use super::section_sheet::{self as sheet, computed, SectionSheet};

/// Formats: for each number of decimals the recomputed columns use, one per fill (none,
/// impossible, suspicious); masses 0.000, temperatures and percentages 0.0.
pub(super) struct Formats {
    cells: Vec<(u8, [Format; 3])>,
    pub(super) text: [Format; 3],
    pub(super) header: Format,
    pub(super) bold: Format,
    /// Top-aligned, for the student's own columns.
    pub(super) top: Format,
    /// The first title row of a section sheet, and the others.
    pub(super) title: Format,
    pub(super) plain: Format,
    /// Wrapped text: the reasons and the feedback.
    pub(super) wrap: Format,
}

impl Formats {
    fn new() -> Formats {
        let fills = [None, Some(IMPOSSIBLE_FILL), Some(SUSPICIOUS_FILL)];
        // every cell top-aligned, so that a row grown for its feedback reads from the top
        let with = |f: Format, fill: Option<u32>| {
            match fill {
                Some(c) => f.set_background_color(Color::RGB(c)),
                None => f,
            }
            .set_align(FormatAlign::Top)
        };
        let mut decimals: Vec<u8> = computed().map(|c| c.decimals).collect();
        decimals.sort_unstable();
        decimals.dedup();
        let number = |d: u8| {
            let pattern = match d {
                0 => "0".to_string(),
                d => format!("0.{}", "0".repeat(usize::from(d))),
            };
            fills.map(|fl| with(Format::new().set_num_format(&pattern), fl))
        };
        Formats {
            cells: decimals.into_iter().map(|d| (d, number(d))).collect(),
            text: fills.map(|fl| with(Format::new().set_text_wrap(), fl)),
            header: Format::new()
                .set_bold()
                .set_text_wrap()
                .set_background_color(Color::RGB(HEADER_FILL)),
            bold: Format::new().set_bold().set_align(FormatAlign::Top),
            top: Format::new().set_align(FormatAlign::Top),
            title: Format::new().set_bold().set_font_size(13),
            plain: Format::new(),
            wrap: sheet::wrap_format(),
        }
    }
}

impl Formats {
    /// The number format of a recomputed column, with the fill for `severity`.
    pub(super) fn number(&self, c: &Column, severity: Option<Severity>) -> &Format {
        let i = self
            .cells
            .iter()
            .position(|(d, _)| *d == c.decimals)
            .unwrap_or(0);
        &self.cells[i].1[fill_index(severity)]
    }
}

pub(super) fn fill_index(s: Option<Severity>) -> usize {
    match s {
        None => 0,
        Some(Severity::Impossible) => 1,
        Some(Severity::Suspicious) => 2,
    }
}

/// Sheet names benchgrade keeps for its own sheets, and the one Excel keeps for itself.
pub const RESERVED_SHEETS: [&str; 3] = ["History", "Statistics", "Provenance"];

/// Excel's most characters in a cell.
pub const MAX_CELL_CHARS: usize = 32_767;

/// Excel's most columns in a sheet.
const MAX_COLUMNS: usize = 16_384;

/// Sheet names compare without regard to case, any alphabet's ("ÉCOLE" is "école").
fn same_sheet_name(a: &str, b: &str) -> bool {
    a.to_lowercase() == b.to_lowercase()
}

/// The longest start of `s` within `max` UTF-16 units (Excel counts sheet names in them).
fn cut_utf16(s: &str, max: usize) -> &str {
    let mut units = 0;
    for (i, c) in s.char_indices() {
        units += c.len_utf16();
        if units > max {
            return &s[..i];
        }
    }
    s
}

/// A sheet name Excel accepts: at most 31 characters, none of []:*?/\, not starting or ending
/// with an apostrophe, not one of `RESERVED_SHEETS`, unique in the workbook in any case.
pub fn sheet_name(wanted: &str, taken: &[String]) -> String {
    let clean: String = wanted
        .chars()
        .map(|c| {
            if "[]:*?/\\".contains(c) || c.is_control() {
                '_'
            } else {
                c
            }
        })
        .collect();
    let tidy = |s: &str| s.trim().trim_matches('\'').trim().to_string();
    let mut base = tidy(cut_utf16(&tidy(&clean), 31));
    if base.is_empty() {
        base = "Section".into();
    }
    let free = |n: &str| {
        !taken.iter().any(|t| same_sheet_name(t, n))
            && !RESERVED_SHEETS.iter().any(|r| same_sheet_name(r, n))
    };
    if free(&base) {
        return base;
    }
    // at most `taken.len()` names are taken, so one of these is free
    (2..=taken.len() + 4)
        .map(|i| {
            let suffix = format!(" ({i})");
            format!("{}{suffix}", tidy(cut_utf16(&base, 31 - suffix.len())))
        })
        .find(|n| free(n))
        .unwrap_or(base)
}

/// Text as a cell can hold it: beyond Excel's 32,767 characters, cut with a mark saying so.
pub fn fit_cell(text: &str) -> std::borrow::Cow<'_, str> {
    const MARK: &str = " [cut: more than a cell holds]";
    if text.len() <= MAX_CELL_CHARS || text.chars().count() <= MAX_CELL_CHARS {
        return text.into();
    }
    let keep: String = text.chars().take(MAX_CELL_CHARS - MARK.len()).collect();
    (keep + MARK).into()
}

/// Most bytes of a graded workbook's file stem: with "-graded.xlsx" and a temporary file's
/// ".NAME.PID.partial" it stays well within the 255 bytes a file name may have.
const MAX_STEM_BYTES: usize = 150;

/// A file name that stays inside the output folder: letters, digits, `-`, `_` and `.` only,
/// cut to `MAX_STEM_BYTES` bytes at a character boundary.
pub fn file_stem(wanted: &str) -> String {
    let s: String = wanted
        .chars()
        .map(|c| {
            if c.is_alphanumeric() || "-_.".contains(c) {
                c
            } else {
                '_'
            }
        })
        .collect();
    let s = s.trim_start_matches('.');
    let mut end = 0;
    for (i, c) in s.char_indices() {
        if i + c.len_utf8() > MAX_STEM_BYTES {
            break;
        }
        end = i + c.len_utf8();
    }
    if end == 0 {
        "graded".into()
    } else {
        s[..end].to_string()
    }
}

pub(super) struct Book {
    pub(super) path: PathBuf,
    pub(super) workbook: Workbook,
    pub(super) sheets: Vec<SectionSheet>,
    by_key: HashMap<(Option<String>, String), usize>,
    pub(super) names: Vec<String>,
    pub(super) sections: Vec<String>,
    /// What the provenance sheet should say of this workbook's sheets.
    pub(super) notes: Vec<String>,
}

/// The zip (deflate) level of graded workbooks. A workbook is compressed as it is saved, after
/// its last row, so compression is the one step of a run that nothing overlaps. Level 1 (zlib's
/// "quick" strategy) halves that step against level 2 on the 100,000-row bench class (about
/// 0.4 s of 0.8 s, counted in profile samples), for a file 27 % larger (26.0 MB against
/// 20.4 MB; level 3 gave 19.4 MB, the writer's default of 6 smaller still but slower again). A
/// class of a few hundred students differs by a few kilobytes.
pub const ZIP_LEVEL: u8 = 1;

/// A workbook as every graded workbook starts. Its constant-memory sheets keep their rows in
/// unnamed temporary files in `tempdir` (the output folder: student data never goes to a shared
/// temporary folder).
pub fn new_workbook(tempdir: &Path) -> Result<Workbook, XlsxError> {
    let mut wb = Workbook::new();
    wb.set_zip_compression_level(ZIP_LEVEL);
    wb.set_tempdir(tempdir)?;
    Ok(wb)
}

/// The graded workbooks of a batch, open while rows stream past.
pub struct GradedWorkbooks {
    /// The rubric's criteria: (label, id), in order.
    criteria: Vec<(String, String)>,
    /// The most points a student can earn, for the score histogram's bins.
    max_score: f64,
    books: Vec<Book>,
    plan: BookPlan,
    formats: Formats,
    /// (source, sheet, section, workbook, sheet) of the previous row.
    last: Option<(String, Option<String>, String, usize, usize)>,
    out_dir: PathBuf,
    /// Where the saved workbooks wait to be made current with every other output.
    stage: Stage,
    /// Set by BENCHGRADE_FAULT=panic-in-workbooks: the tests' way to make a writer panic.
    fault: bool,
}

fn xerr(path: &Path, e: XlsxError) -> WriteError {
    WriteError::other(path, e)
}

impl GradedWorkbooks {
    /// `criteria`: the rubric's criteria as (label, id), in order.
    pub fn new(
        out_dir: &Path,
        split_sections: bool,
        criteria: Vec<(String, String)>,
        max_score: f64,
        stage: Stage,
    ) -> GradedWorkbooks {
        GradedWorkbooks {
            criteria,
            max_score,
            books: Vec::new(),
            plan: BookPlan::new(out_dir, split_sections),
            formats: Formats::new(),
            last: None,
            out_dir: out_dir.to_path_buf(),
            stage,
            fault: std::env::var_os("BENCHGRADE_FAULT").is_some_and(|v| v == "panic-in-workbooks"),
        }
    }

    /// The workbook a row belongs to, opened on first use.
    fn book_for(&mut self, g: &Graded) -> Result<usize, WriteError> {
        let s = &g.assessed.submission;
        let (i, new) = self.plan.book(&s.source, &s.section);
        if new {
            let path = self.plan.paths()[i].clone();
            let workbook = new_workbook(&self.out_dir).map_err(|e| xerr(&path, e))?;
            self.books.push(Book {
                path,
                workbook,
                sheets: Vec::new(),
                by_key: HashMap::new(),
                names: Vec::new(),
                sections: Vec::new(),
                notes: Vec::new(),
            });
        }
        Ok(i)
    }

    /// How many of a sheet's original columns fit beside the ones benchgrade adds.
    fn room(&self, g: &Graded) -> usize {
        g.assessed
            .submission
            .original
            .len()
            .min(MAX_COLUMNS - sheet::added_columns(self.criteria.len()))
    }

    /// The (workbook, sheet) a row goes to; the previous row's answer is reused when the row
    /// comes from the same place, which is nearly always.
    fn place(&mut self, g: &Graded) -> Result<(usize, usize), WriteError> {
        let s = &g.assessed.submission;
        if let Some((src, sheet, section, bi, si)) = &self.last {
            if *src == s.source && *sheet == s.sheet && *section == s.section {
                return Ok((*bi, *si));
            }
        }
        let bi = self.book_for(g)?;
        let sheet_key = (s.sheet.clone(), s.section.clone());
        let si = match self.books[bi].by_key.get(&sheet_key) {
            Some(&i) => i,
            None => self.add_sheet(bi, g, sheet_key)?,
        };
        self.last = Some((s.source.clone(), s.sheet.clone(), s.section.clone(), bi, si));
        Ok((bi, si))
    }

    fn add_sheet(
        &mut self,
        bi: usize,
        g: &Graded,
        key: (Option<String>, String),
    ) -> Result<usize, WriteError> {
        let room = self.room(g);
        let s = &g.assessed.submission;
        let book = &mut self.books[bi];
        let path = book.path.clone();
        let e = |err| xerr(&path, err);
        let name = sheet_name(&s.section, &book.names);
        if name != s.section {
            book.notes.push(format!(
                "Sheet \"{name}\" holds section \"{}\".",
                fit_cell(&s.section)
            ));
        }
        if room < s.original.len() {
            book.notes.push(format!(
                "Sheet \"{name}\": only the first {room} of the section's {} columns fit in a sheet beside benchgrade's own; results.csv holds every value read.",
                s.original.len()
            ));
        }
        let ws = book
            .workbook
            .add_worksheet_with_constant_memory()
            .map_err(e)?;
        ws.set_name(&name).map_err(e)?;
        let index = book.workbook.worksheets().len() - 1;
        let ws = book.workbook.worksheet_from_index(index).map_err(e)?;
        let section = sheet::start(
            ws,
            index,
            name.clone(),
            s,
            &self.criteria,
            room,
            &self.formats,
        )
        .map_err(e)?;
        book.names.push(name);
        if !book.sections.contains(&s.section) {
            book.sections.push(s.section.clone());
        }
        book.sheets.push(section);
        book.by_key.insert(key, book.sheets.len() - 1);
        Ok(book.sheets.len() - 1)
    }

    /// Appends a row to its workbook's section sheet.
    pub fn row(&mut self, g: &Graded) -> Result<(), WriteError> {
        // a deliberate bug, so that the tests can show what a panic does to a run
        assert!(!self.fault, "BENCHGRADE_FAULT=panic-in-workbooks");
        // a rostered student with no submission has no sheet to be written back into
        if g.assessed.submission.no_submission {
            return Ok(());
        }
        let (bi, si) = self.place(g)?;
        let book = &mut self.books[bi];
        let path = book.path.clone();
        let sheet = &mut book.sheets[si];
        let ws = book
            .workbook
            .worksheet_from_index(sheet.index)
            .map_err(|e| xerr(&path, e))?;
        sheet::write_row(ws, sheet, g, &self.formats).map_err(|e| xerr(&path, e))
    }

    /// Adds statistics, charts and provenance to every workbook and saves each atomically.
    /// Workbooks are independent, so a batch of several is saved on two threads (alternate
    /// workbooks each; every workbook's bytes are the same whichever thread saves it); the
    /// paths come back in the plan's order.
    pub fn finish(
        self,
        stats: &SectionStats,
        provenance: &Provenance,
    ) -> Result<Vec<PathBuf>, WriteError> {
        let (max_score, formats, stage) = (self.max_score, &self.formats, &self.stage);
        let out_dir = self.out_dir.as_path();
        let save = |book: Book| finish_book(book, stats, provenance, max_score, formats, stage);
        let books = self.books;
        if books.len() < 2 {
            return books.into_iter().map(save).collect();
        }
        // alternate workbooks to each thread, in the plan's order
        let (even, odd): (Vec<_>, Vec<_>) =
            books.into_iter().enumerate().partition(|(i, _)| i % 2 == 0);
        let (even, odd) = (
            even.into_iter().map(|(_, b)| b),
            odd.into_iter().map(|(_, b)| b),
        );
        let (even, odd) = std::thread::scope(|scope| {
            let helper = std::thread::Builder::new()
                .name("graded workbook".into())
                .spawn_scoped(scope, || odd.map(save).collect::<Vec<_>>());
            let even: Vec<_> = even.map(save).collect();
            let odd = match helper {
                Ok(h) => h.join().unwrap_or_else(|p| std::panic::resume_unwind(p)),
                Err(e) => vec![Err(xerr(out_dir, XlsxError::IoError(e)))],
            };
            (even, odd)
        });
        let mut written = Vec::with_capacity(even.len() + odd.len());
        let mut odd = odd.into_iter();
        for e in even {
            written.push(e?);
            if let Some(o) = odd.next() {
                written.push(o?);
            }
        }
        Ok(written)
    }
}

/// Closes one workbook's section sheets, adds its statistics and provenance, and saves it.
fn finish_book(
    mut book: Book,
    stats: &SectionStats,
    provenance: &Provenance,
    max_score: f64,
    formats: &Formats,
    stage: &Stage,
) -> Result<PathBuf, WriteError> {
    let path = book.path.clone();
    let e = |err| xerr(&path, err);
    for section in &book.sheets {
        let ws = book
            .workbook
            .worksheet_from_index(section.index)
            .map_err(e)?;
        sheet::finish(ws, section).map_err(e)?;
        if section.past_last_row > 0 {
            book.notes.push(format!(
                "Sheet \"{}\": {} more students than a sheet holds are left out of it; results.csv holds them all.",
                section.name, section.past_last_row
            ));
        }
    }
    super::workbook_summary::statistics_sheet(&mut book, stats, max_score, formats).map_err(e)?;
    super::workbook_summary::provenance_sheet(&mut book.workbook, provenance, &book.notes, formats)
        .map_err(e)?;
    let when = ExcelDateTime::from_timestamp(provenance.timestamp).map_err(e)?;
    let props = DocProperties::new()
        .set_creation_datetime(&when)
        .set_title("Graded recrystallization results")
        .set_comment("written by benchgrade");
    book.workbook.set_properties(&props);
    super::atomic::save_workbook(&mut book.workbook, &path, stage)?;
    Ok(path)
}

pub(super) fn write_opt(ws: &mut Worksheet, r: u32, c: u16, v: f64) -> Result<(), XlsxError> {
    if v.is_finite() {
        ws.write_number(r, c, v)?;
    }
    Ok(())
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn sheet_names_are_legal_and_unique() {
        let taken = vec!["Sec 01".to_string()];
        assert_eq!(sheet_name("Sec 01", &taken), "Sec 01 (2)");
        assert_eq!(sheet_name("a/b:c*?", &[]), "a_b_c__");
        assert_eq!(sheet_name(&"x".repeat(40), &[]).chars().count(), 31);
        assert_eq!(sheet_name("", &[]), "Section");
        assert_eq!(sheet_name("History", &[]), "History (2)");
    }

    #[test]
    fn file_stems_stay_in_the_folder() {
        assert_eq!(file_stem("../../etc/passwd"), "_.._etc_passwd");
        assert_eq!(file_stem("Sec 01"), "Sec_01");
        assert_eq!(file_stem("..."), "graded");
    }
}
