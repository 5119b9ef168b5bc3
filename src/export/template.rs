//! Entry workbooks made from the roster (`benchgrade template`): one workbook per section (or
//! one with a sheet per section) for assistants to type into, so that the entries benchgrade
//! would flag are refused at the moment they are typed. Each sheet has a title block, a header
//! in benchgrade's own words for the fields the rubric grades, a units row, the rostered ids and
//! names filled in and locked, and every entry cell unlocked with a data-validation rule that
//! explains itself; rows still missing an entry are shaded; an instructions sheet carries the
//! usual safety cautions. The sheets read back with no mapping file.

use std::path::{Path, PathBuf};

use rust_xlsxwriter::{
    Color, ConditionalFormatFormula, DataValidation, DataValidationErrorStyle, DocProperties,
    ExcelDateTime, Format, FormatAlign, FormatBorder, Workbook, Worksheet, XlsxError,
};

use super::atomic::{save_workbook, Stage};
use super::template_entries::{entries, Entry};
use super::template_rules::{column_of, rule, soft_checks, validations};
use super::workbook::{file_stem, sheet_name};
use crate::assess::unknowns::Key;
use crate::error::WriteError;
use crate::ingest::roster::Enrolled;
use crate::rubric::Rubric;

/// The heaviest mass a template accepts, in grams: far above any teaching-scale product, so
/// that only a slip (a milligram figure typed as grams) is refused.
pub const MAX_MASS_G: f64 = 100.0;
/// The span of temperatures a melting-point apparatus reads, in °C (common practice: the
/// usual oil-bath and block instruments read from room temperature to about 300-400 °C).
pub const SPAN_C: (f64, f64) = (20.0, 400.0);
/// Status words the drop-down offers (an empty cell: the student is graded).
pub const STATUS_WORDS: [&str; 4] = ["W", "excused", "absent", "exempt"];

/// Options of `benchgrade template`.
pub struct TemplateOptions<'a> {
    pub roster: &'a [Enrolled],
    pub rubric: &'a Rubric,
    /// The title block's first line: course, term, experiment.
    pub title: &'a str,
    pub out_dir: &'a Path,
    pub one_workbook: bool,
    pub timestamp: i64,
    /// The answer key (the rubric's `[key]` with `--key FILE` over it): its codes and compounds
    /// are the drop-down lists of the unknown code and identification columns.
    pub key: Option<&'a Key>,
}

/// A section and its students, in roster order.
type Section<'a> = (String, Vec<&'a Enrolled>);

/// The sections of the roster in natural order, each with its students in roster order.
/// Sections are told apart as `grade` tells them (`model::section_key`: "CON" and "con",
/// "Section 3" and "3" are one), each named as the roster first writes it.
fn sections(roster: &[Enrolled]) -> Vec<Section<'_>> {
    let mut out: Vec<Section<'_>> = Vec::new();
    let mut keys: Vec<String> = Vec::new();
    for e in roster {
        let s = e.section.clone().unwrap_or_else(|| "all".into());
        let key = crate::model::section_key(&s);
        if let Some(i) = keys.iter().position(|k| *k == key) {
            out[i].1.push(e);
        } else {
            keys.push(key);
            out.push((s, vec![e]));
        }
    }
    out.sort_by(|a, b| crate::stats::cohort::natural_cmp(&a.0, &b.0));
    out
}

/// Writes the entry workbooks into `out_dir`; the paths written.
pub fn write(o: &TemplateOptions, stage: &Stage) -> Result<Vec<PathBuf>, WriteError> {
    let entries = entries(o.rubric, o.key);
    let groups = sections(o.roster);
    let mut written = Vec::new();
    let books: Vec<(PathBuf, Vec<&Section>)> = if o.one_workbook {
        vec![(o.out_dir.join("entry-sheets.xlsx"), groups.iter().collect())]
    } else {
        groups
            .iter()
            .scan(Vec::<String>::new(), |taken, g| {
                // one file a section, named apart even where the file system ignores case
                let stem = file_stem(&g.0);
                let mut name = stem.clone();
                let mut k = 2;
                while taken.contains(&name.to_lowercase()) {
                    name = format!("{stem}-{k}");
                    k += 1;
                }
                taken.push(name.to_lowercase());
                Some((o.out_dir.join(format!("{name}-entry.xlsx")), vec![g]))
            })
            .collect()
    };
    for (path, sheets) in books {
        let mut wb = build(o, &entries, &sheets).map_err(|e| WriteError::other(&path, e))?;
        save_workbook(&mut wb, &path, stage)?;
        written.push(path);
    }
    Ok(written)
}

fn build(
    o: &TemplateOptions,
    entries: &[Entry],
    sheets: &[&Section],
) -> Result<Workbook, XlsxError> {
    let mut wb = Workbook::new();
    let mut names: Vec<String> = vec!["Instructions".into()];
    instructions(wb.add_worksheet(), o, entries)?;
    for (section, students) in sheets.iter().map(|g| (&g.0, &g.1)) {
        let name = sheet_name(section, &names);
        names.push(name.clone());
        let ws = wb.add_worksheet();
        ws.set_name(&name)?;
        entry_sheet(ws, o, entries, section, students)?;
    }
    let when = ExcelDateTime::from_timestamp(o.timestamp)?;
    wb.set_properties(
        &DocProperties::new()
            .set_creation_datetime(&when)
            .set_title("Entry sheet"),
    );
    Ok(wb)
}

/// Column letters of a 0-based column (A..Z, AA..).
pub fn letter(col: u16) -> String {
    let mut n = u32::from(col) + 1;
    let mut s = String::new();
    while n > 0 {
        let r = (n - 1) % 26;
        s.insert(0, char::from(b'A' + r as u8));
        n = (n - 1) / 26;
    }
    s
}

/// The first rows: title, section, assistant; the header row follows a blank.
const HEADER_ROW: u32 = 4;
pub const FIRST_ENTRY_COL: u16 = 3;

fn entry_sheet(
    ws: &mut Worksheet,
    o: &TemplateOptions,
    entries: &[Entry],
    section: &str,
    students: &[&Enrolled],
) -> Result<(), XlsxError> {
    let bold = Format::new().set_bold();
    let head = Format::new()
        .set_bold()
        .set_text_wrap()
        .set_align(FormatAlign::Top)
        .set_background_color(Color::RGB(0x00D9_E4EC))
        .set_border(FormatBorder::Thin);
    let locked = Format::new().set_border(FormatBorder::Thin);
    let open = Format::new()
        .set_unlocked()
        .set_border(FormatBorder::Thin)
        .set_background_color(Color::RGB(0x00FF_FFFF));
    ws.write_string_with_format(0, 0, o.title, &Format::new().set_bold().set_font_size(13))?;
    ws.write_string(1, 0, format!("Section: {section}"))?;
    // the assistant's line only where the roster names one
    if let Some(assistant) = students.iter().find_map(|s| s.assistant.as_deref()) {
        ws.write_string(2, 0, format!("TA: {assistant}"))?;
    }
    // three lines of a wrapped header ("Trial 2 mp / clear / point")
    ws.set_row_height(HEADER_ROW, 45.0)?;
    ws.write_string_with_format(HEADER_ROW, 0, "Student ID", &head)?;
    ws.write_string_with_format(HEADER_ROW, 1, "Name", &head)?;
    // the section on every row: read back from the rows, whatever name the sheet could take
    ws.write_string_with_format(HEADER_ROW, 2, "Section", &head)?;
    ws.write_string_with_format(HEADER_ROW + 1, 0, "", &bold)?;
    for (i, e) in entries.iter().enumerate() {
        let (h, unit) = e.header();
        let c = FIRST_ENTRY_COL + i as u16;
        ws.write_string_with_format(HEADER_ROW, c, h, &head)?;
        ws.write_string(HEADER_ROW + 1, c, unit)?;
        ws.set_column_width(c, entry_width(*e))?;
    }
    ws.set_column_width(0, 12)?;
    ws.set_column_width(1, NAME_WIDTH)?;
    ws.set_column_width(2, 8)?;
    let first = HEADER_ROW + 2;
    for (k, s) in students.iter().enumerate() {
        let r = first + k as u32;
        ws.write_string_with_format(r, 0, &s.id, &locked)?;
        ws.write_string_with_format(r, 1, s.name.as_deref().unwrap_or(""), &locked)?;
        ws.write_string_with_format(r, 2, section, &locked)?;
        for i in 0..entries.len() {
            ws.write_blank(r, FIRST_ENTRY_COL + i as u16, &open)?;
        }
    }
    if !students.is_empty() {
        let last = first + students.len() as u32 - 1;
        validations(ws, entries, first, last)?;
        key_lists(ws, entries, o.key, first, last)?;
        soft_checks(ws, entries, first, last)?;
        missing_shade(ws, entries, first, last)?;
    }
    ws.set_freeze_panes(first, FIRST_ENTRY_COL)?;
    ws.protect();
    ws.set_landscape();
    // as many pages across as keep the print legible, the id, name and section on each
    let across = pages_across(entries);
    ws.set_print_fit_to_pages(across, 0);
    ws.set_repeat_rows(HEADER_ROW, HEADER_ROW + 1)?;
    if across > 1 {
        ws.set_repeat_columns(0, FIRST_ENTRY_COL - 1)?;
    }
    Ok(())
}

/// The name column's width, in characters.
const NAME_WIDTH: f64 = 22.0;
/// The most characters a landscape page holds across at a legible size (about 80 % of full
/// size on A4 or US letter).
const PAGE_CHARS: f64 = 130.0;

/// An entry column's width, in characters: a number as typed fits, the header wraps.
fn entry_width(e: Entry) -> f64 {
    match e {
        Entry::Notes => 24.0,
        Entry::Identified => 16.0,
        _ => 9.0,
    }
}

/// Pages across an entry sheet prints on: one for a usual rubric, two or more when the rubric
/// grades many entries (weighings by difference, trials, an unknown), so that no page shrinks
/// its text below legibility.
fn pages_across(entries: &[Entry]) -> u16 {
    let fixed = 12.0 + NAME_WIDTH + 8.0;
    let wide: f64 = entries.iter().map(|e| entry_width(*e)).sum();
    ((wide / (PAGE_CHARS - fixed)).ceil() as u16).max(1)
}

/// The most characters a drop-down list typed into its rule may hold (the file format's limit:
/// the list, its items joined by commas, is kept in the rule's formula).
const MAX_LIST_CHARS: usize = 255;

/// The answer key's lists, each once: the codes (as the key orders them, by code) and the
/// compounds, sorted.
fn key_words(key: &Key) -> (Vec<String>, Vec<String>) {
    let mut codes: Vec<String> = Vec::new();
    let mut compounds: Vec<String> = Vec::new();
    for (code, compound) in key.entries() {
        if !codes.iter().any(|c| c == code) {
            codes.push(code.to_string());
        }
        if !compounds.iter().any(|c| c.eq_ignore_ascii_case(compound)) {
            compounds.push(compound.to_string());
        }
    }
    compounds.sort_by_key(|c| c.to_lowercase());
    (codes, compounds)
}

/// A drop-down list of `words`, if they fit in a rule (with no comma or quote inside a word).
fn list_rule(words: &[String]) -> Option<DataValidation> {
    let plain = words
        .iter()
        .all(|w| !w.contains([',', '"']) && !w.is_empty());
    let chars = words.iter().map(|w| w.chars().count() + 1).sum::<usize>();
    if !plain || words.is_empty() || chars > MAX_LIST_CHARS + 1 {
        return None;
    }
    DataValidation::new().allow_list_strings(words).ok()
}

/// The unknown code and identification columns' rules: the key's codes (nothing else is
/// taken) and the key's compounds (a warning only: a student's wrong identification is typed
/// as it was given, and graded wrong). Without a key, or with lists too long for a rule, the
/// cells carry an input message alone.
fn key_lists(
    ws: &mut Worksheet,
    entries: &[Entry],
    key: Option<&Key>,
    first: u32,
    last: u32,
) -> Result<(), XlsxError> {
    let (codes, compounds) = key.map(key_words).unwrap_or_default();
    for (i, e) in entries.iter().enumerate() {
        let col = FIRST_ENTRY_COL + i as u16;
        let v = match e {
            Entry::UnknownCode => {
                let v =
                    list_rule(&codes).unwrap_or_else(|| DataValidation::new().allow_any_value());
                rule(
                    (
                        "Unknown code",
                        "The code on the student's unknown sample, from the list.",
                    ),
                    (
                        "Not a code of the key",
                        "Choose the unknown's code from the list: it holds the answer key's codes.",
                    ),
                    v,
                )?
            }
            Entry::Identified => {
                let v = list_rule(&compounds)
                    .unwrap_or_else(|| DataValidation::new().allow_any_value());
                rule(
                    ("Identified as", "The compound the student named for the unknown (the list holds the key's compounds; type another name if the student gave one)."),
                    ("Not a compound of the key", "This is not one of the answer key's compounds. Keep it if it is what the student named: it is graded as a wrong identification."),
                    v,
                )?
                .set_error_style(DataValidationErrorStyle::Warning)
            }
            _ => continue,
        };
        ws.add_data_validation(first, col, last, col, &v)?;
    }
    Ok(())
}

/// Shades a row while an entry grading needs is empty (and no status excuses it).
fn missing_shade(
    ws: &mut Worksheet,
    entries: &[Entry],
    first: u32,
    last: u32,
) -> Result<(), XlsxError> {
    let r = first + 1;
    let empty: Vec<String> = entries
        .iter()
        .filter(|e| e.required())
        .filter_map(|e| column_of(entries, *e))
        .map(|c| format!("${c}{r}=\"\""))
        .collect();
    let status =
        column_of(entries, Entry::Status).map_or(String::new(), |c| format!(",${c}{r}=\"\""));
    let shade = ConditionalFormatFormula::new()
        .set_rule(format!("=AND(OR({}){status})", empty.join(",")).as_str())
        .set_format(Format::new().set_background_color(Color::RGB(0x00FF_F2CC)));
    let last_col = FIRST_ENTRY_COL + entries.len() as u16 - 1;
    ws.add_conditional_format(first, 0, last, last_col, &shade)?;
    Ok(())
}

/// How masses and temperatures are typed, for the instructions.
fn weighing_line(entries: &[Entry]) -> &'static str {
    if entries.contains(&Entry::CrudeTare) {
        "Masses in grams as weighed: the tare is the empty container, the gross the container with the dry product in it (the product's mass is their difference). Temperatures in °C as read, the onset where the first drop of liquid appears and the clear point where the last crystal melts; each trial is its own capillary."
    } else {
        "Masses in grams as weighed (weigh by difference and type the net mass); temperatures in °C as read, the onset where the first drop of liquid appears and the clear point where the last crystal melts."
    }
}

/// The instructions sheet: how to fill in the entry sheets, and the safety cautions.
fn instructions(
    ws: &mut Worksheet,
    o: &TemplateOptions,
    entries: &[Entry],
) -> Result<(), XlsxError> {
    ws.set_name("Instructions")?;
    let wrap = Format::new().set_text_wrap().set_align(FormatAlign::Top);
    let bold = Format::new().set_bold().set_font_size(13);
    let head = Format::new().set_bold();
    ws.set_column_width(0, 78)?;
    let asked: Vec<String> = entries
        .iter()
        .map(|e| {
            let (h, u) = e.header();
            if u.is_empty() {
                h.to_lowercase()
            } else {
                format!("{} ({u})", h.to_lowercase())
            }
        })
        .collect();
    let lines: Vec<(&Format, String)> = vec![
        (&bold, o.title.to_string()),
        (&head, "How to fill in the entry sheets".into()),
        (&wrap, "Each section has a sheet of its own. The students' ids, names and section come from the roster and are locked; type only in the cells to the right of them.".into()),
        (&wrap, format!("For each student enter: {}.", asked.join(", "))),
        (&wrap, weighing_line(entries).into()),
        (&wrap, "A cell refuses a value that cannot be right (a letter in a number cell, a mass of zero or less, a recovered mass above the crude mass, a temperature outside the apparatus's span, an onset above the clear point) and says why. A value that may be real but will be flagged (a reported recovery above 100 %) is kept and shaded. A row stays shaded until every entry grading needs is typed, or a status (W, excused, absent, exempt) is chosen.".into()),
        (&wrap, "The sheet protection has no password: it only guards against slips. Keep the header and units rows as they are, so that the sheet is read back without a mapping file.".into()),
        (&head, "Safety".into()),
        (&wrap, "Hot plates and heating blocks stay hot long after they are switched off: never leave one on unattended, and keep paper, solvent bottles and cords away from it.".into()),
        (&wrap, "Organic solvents used for recrystallization are flammable: heat them on a hot plate or steam bath, never over a flame, and in a fume hood.".into()),
        (&wrap, "Inspect vacuum glassware (filter flasks) for cracks and star fractures before use, clamp it, and use a trap.".into()),
        (&wrap, "Wear safety glasses and a lab coat; follow your institution's rules and its chemical hygiene plan, which come before anything written here.".into()),
    ];
    for (r, (f, text)) in lines.iter().enumerate() {
        ws.write_string_with_format(r as u32, 0, text, f)?;
        // a spreadsheet program does not grow a row for text another program wrapped: about
        // 72 characters a line in a column 78 wide
        let lines = text.chars().count().div_ceil(72).max(1);
        ws.set_row_height(r as u32, 15.0 * lines as f64 + 3.0)?;
    }
    ws.set_print_fit_to_pages(1, 1);
    Ok(())
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn column_letters() {
        // hand-worked: the 1st, 26th, 27th and 703rd columns
        assert_eq!(letter(0), "A");
        assert_eq!(letter(25), "Z");
        assert_eq!(letter(26), "AA");
        assert_eq!(letter(702), "AAA");
    }
}
