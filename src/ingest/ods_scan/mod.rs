//! One pass over an OpenDocument spreadsheet's content.xml before calamine reads it: which cells
//! are shown as percentages (see `percent_cells`), and what the reader would cost.
//!
//! calamine's .ods reader lays every table out as one dense grid and materialises what the
//! file only states: a cell repeated across columns (`table:number-columns-repeated`) is copied
//! into each column, a row repeated (`table:number-rows-repeated`) into each row, and a run of
//! spaces (`<text:s text:c="1500000000"/>`) is written out space by space; quick-xml holds a
//! whole tag or text in memory, so one 800 MB attribute costs gigabytes. A kilobyte of XML can
//! ask for gigabytes. This scan reads the same XML the way the reader does (the same parser
//! settings), never expands anything, and refuses, naming the table and cell, a file whose
//! grid, cells or text would pass the budgets in `workbook`, or whose tags or texts are longer
//! than any class file's. A table inside a cell (a sub-table) is skipped, as the reader skips
//! it: its rows are not the sheet's rows.

use std::io::{BufReader, Read};
use std::path::Path;

use quick_xml::events::{BytesStart, Event};

use super::percent_cells::{Block, PercentCells};
use super::workbook::{MOST_DENSE_CELLS, MOST_TEXT_BYTES};

/// Most copies of one row holding data that an OpenDocument sheet may ask for: a class file
/// repeats empty rows (formatting down the sheet), never a student's row thousands of times.
const MOST_REPEATED_DATA_ROWS: u32 = 5_000;
/// Longest run of content.xml between two `<`: any one tag with its attributes, or one text.
/// A cell holds at most 32,767 characters; a formula is shorter still.
pub const MOST_TOKEN_BYTES: usize = 4 << 20;
/// The columns calamine's reader keeps of a row (ods.rs of calamine 0.38: MAX_COLUMNS).
const READER_COLUMNS: u32 = 16_384;

fn attr(e: &BytesStart<'_>, name: &str) -> Option<String> {
    e.attributes()
        .flatten()
        .find(|a| a.key.as_ref() == name)
        .map(|a| a.value.into_owned())
}

/// A count attribute as the reader parses it (any size); 1 when absent or not a number.
fn count(e: &BytesStart<'_>, name: &str, absent: u64) -> u64 {
    attr(e, name)
        .and_then(|v| v.trim().parse::<u64>().ok())
        .unwrap_or(absent)
}

fn repeats(e: &BytesStart<'_>, name: &str) -> u32 {
    count(e, name, 1).clamp(1, u64::from(u32::MAX)) as u32
}

/// A reader of content.xml that fails on a run of more than `MOST_TOKEN_BYTES` without a `<`,
/// so that the XML parser never buffers more than that.
struct Tokens<R> {
    inner: R,
    run: usize,
}

impl<R: Read> Read for Tokens<R> {
    fn read(&mut self, buf: &mut [u8]) -> std::io::Result<usize> {
        let n = self.inner.read(buf)?;
        let mut parts = buf[..n].split(|&b| b == b'<');
        let mut longest = 0;
        if let Some(first) = parts.next() {
            self.run += first.len();
            longest = self.run;
        }
        for part in parts {
            self.run = part.len();
            longest = longest.max(self.run);
        }
        if longest > MOST_TOKEN_BYTES {
            return Err(std::io::Error::new(
                std::io::ErrorKind::InvalidData,
                format!(
                    "refused: content.xml holds a tag or text longer than {} MiB, longer than any class file's (a damaged file)",
                    MOST_TOKEN_BYTES >> 20
                ),
            ));
        }
        Ok(n)
    }
}

/// The rows and columns of a table that hold something, as the reader lays them out.
#[derive(Default, Clone, Copy)]
struct Span {
    rows: Option<(u32, u32)>,
    cols: Option<(u32, u32)>,
}

impl Span {
    fn add(&mut self, rows: (u32, u32), cols: (u32, u32)) {
        let (r0, r1) = self.rows.unwrap_or(rows);
        self.rows = Some((r0.min(rows.0), r1.max(rows.1)));
        let (c0, c1) = self.cols.unwrap_or(cols);
        self.cols = Some((c0.min(cols.0), c1.max(cols.1)));
    }

    fn cells(&self) -> u64 {
        match (self.rows, self.cols) {
            (Some((r0, r1)), Some((c0, c1))) => u64::from(r1 - r0) * u64::from(c1 - c0),
            _ => 0,
        }
    }
}

/// The cell being read: where it starts, how often it repeats, what it holds.
#[derive(Default)]
struct OpenCell {
    col: u32,
    cols: u32,
    value: bool,
    formula: bool,
    text: u64,
}

/// Where the scan of one top-level table stands.
#[derive(Default)]
struct Table {
    name: String,
    row: u32,
    row_repeats: u32,
    col: u32,
    blocks: Vec<Block>,
    /// A percentage cell whose shown text is still to come.
    open: Option<Block>,
    cell: Option<OpenCell>,
    /// This row's columns holding a value, and holding a formula (first, one past the last).
    row_values: Option<(u32, u32)>,
    row_formulas: Option<(u32, u32)>,
    values: Span,
    formulas: Span,
    /// Cells the reader keeps before it lays the table out, and the text it builds.
    kept: u64,
    text: u64,
    /// The first thing found that refuses the file.
    refused: Option<String>,
}

/// The decimals a percentage's shown text has: "74.0%" 1, "74 %" 0, "74,25 %" 2.
fn shown_decimals(text: &str) -> Option<u8> {
    let number = text.split('%').next()?.trim_end();
    if !text.contains('%') || !number.ends_with(|c: char| c.is_ascii_digit()) {
        return None;
    }
    let digits = number
        .chars()
        .rev()
        .take_while(char::is_ascii_digit)
        .count();
    let before = number[..number.len() - digits].chars().next_back();
    let decimals = if matches!(before, Some('.' | ',')) {
        digits
    } else {
        0
    };
    u8::try_from(decimals).ok().filter(|d| *d <= 15)
}

fn widen(span: Option<(u32, u32)>, from: u32, to: u32) -> (u32, u32) {
    let (a, b) = span.unwrap_or((from, to));
    (a.min(from), b.max(to))
}

impl Table {
    fn at(&self, col: u32) -> String {
        format!(
            "sheet \"{}\" cell {}{}",
            self.name,
            super::cells::column_letters(col),
            u64::from(self.row) + 1
        )
    }

    /// A cell opens; a percentage cell waits for its shown text.
    fn cell(&mut self, e: &BytesStart<'_>) {
        let cols = repeats(e, "table:number-columns-repeated");
        let kind = attr(e, "office:value-type");
        if kind.is_some() && self.refused.is_none() {
            self.check(e, kind.as_deref());
        }
        if kind.as_deref() == Some("percentage") {
            self.open = Some(Block {
                row: self.row,
                rows: self.row_repeats,
                col: self.col,
                cols,
                decimals: None,
            });
        }
        let text_attrs = ["office:string-value", "table:formula"]
            .iter()
            .filter_map(|k| attr(e, k))
            .map(|v| v.len() as u64)
            .sum();
        self.cell = Some(OpenCell {
            col: self.col,
            cols,
            value: kind.is_some()
                || [
                    "office:value",
                    "office:string-value",
                    "office:boolean-value",
                ]
                .iter()
                .any(|k| attr(e, k).is_some()),
            formula: attr(e, "table:formula").is_some(),
            text: text_attrs,
        });
        self.col = self.col.saturating_add(cols);
    }

    /// A cell holding data in a row repeated past reason, or a number that is not one: either
    /// would cost the reader the whole file (memory, or a parse error that names no cell).
    fn check(&mut self, e: &BytesStart<'_>, kind: Option<&str>) {
        if self.row_repeats > MOST_REPEATED_DATA_ROWS {
            self.refused = Some(format!(
                "{}: a row holding data is repeated {} times (table:number-rows-repeated); a class file does not hold that many copies of one row; re-save it from the spreadsheet program or delete the copies",
                self.at(self.col),
                self.row_repeats
            ));
        } else if matches!(kind, Some("float" | "percentage" | "currency")) {
            let value = attr(e, "office:value");
            if value.is_some_and(|v| !v.trim().parse::<f64>().is_ok_and(f64::is_finite)) {
                self.refused = Some(format!(
                    "{}: office:value \"{}\" is not a number, and the file cannot be read past it; re-save it from the spreadsheet program",
                    self.at(self.col),
                    attr(e, "office:value").unwrap_or_default().chars().take(40).collect::<String>()
                ));
            }
        }
    }

    /// Text inside a cell: the first gives an open percentage its decimals.
    fn text(&mut self, text: &str) {
        if let Some(c) = self.cell.as_mut() {
            c.text = c.text.saturating_add(text.len() as u64);
        }
        if let Some(b) = self.open.as_mut() {
            if b.decimals.is_none() {
                b.decimals = shown_decimals(text);
            }
        }
    }

    /// `<text:s text:c="n"/>`: n spaces, which the reader writes out one by one.
    fn spaces(&mut self, e: &BytesStart<'_>) {
        if let Some(c) = self.cell.as_mut() {
            c.text = c.text.saturating_add(count(e, "text:c", 1));
        }
    }

    fn end_cell(&mut self) {
        if let Some(b) = self.open.take() {
            self.close(b);
        }
        let Some(c) = self.cell.take() else { return };
        let from = c.col.min(READER_COLUMNS);
        let to = c.col.saturating_add(c.cols).min(READER_COLUMNS);
        if c.value && to > from {
            self.row_values = Some(widen(self.row_values, from, to));
            // the text is copied into every column and every row it repeats to
            let copies = u64::from(to - from) * u64::from(self.row_repeats);
            self.text = self.text.saturating_add(c.text.saturating_mul(copies));
        }
        if c.formula && to > from {
            self.row_formulas = Some(widen(self.row_formulas, from, to));
        }
    }

    fn end_row(&mut self) {
        let rows = (self.row, self.row.saturating_add(self.row_repeats));
        if let Some((first, end)) = self.row_values.take() {
            // the reader keeps a row's cells up to its last value, empty ones too
            self.kept += u64::from(end);
            self.values.add(rows, (first, end));
        }
        if let Some(cols) = self.row_formulas.take() {
            self.formulas.add(rows, cols);
        }
        self.row = rows.1;
        self.col = 0;
    }

    fn close(&mut self, b: Block) {
        match self.blocks.last_mut() {
            // the same block continued in the next row
            Some(last)
                if last.col == b.col
                    && last.cols == b.cols
                    && last.decimals == b.decimals
                    && last.row + last.rows == b.row =>
            {
                last.rows += b.rows;
            }
            _ => self.blocks.push(b),
        }
    }
}

/// What the whole file costs the reader so far (it reads every table when it opens the file).
#[derive(Default)]
struct Totals {
    grid: u64,
    kept: u64,
    text: u64,
}

impl Totals {
    /// Adds a finished table; `Err` names the table that passes a budget.
    fn add(&mut self, t: &Table) -> Result<(), String> {
        self.grid += t.values.cells() + t.formulas.cells();
        self.kept += t.kept;
        self.text = self.text.saturating_add(t.text);
        let sheet = &t.name;
        if self.grid > MOST_DENSE_CELLS {
            return Err(format!(
                "refused: its tables span more than {MOST_DENSE_CELLS} cells (rows x columns from each table's first value to its last, repeats counted), more than a workbook may hold; up to sheet \"{sheet}\""
            ));
        }
        if self.kept > MOST_DENSE_CELLS {
            return Err(format!(
                "refused: its rows hold more than {MOST_DENSE_CELLS} cells (repeated columns counted), more than a workbook may hold; up to sheet \"{sheet}\""
            ));
        }
        if self.text > MOST_TEXT_BYTES {
            return Err(format!(
                "refused: its text would take more than {} MiB once repeated cells and runs of spaces (text:s) are written out, more than a class file holds; up to sheet \"{sheet}\"",
                MOST_TEXT_BYTES >> 20
            ));
        }
        Ok(())
    }
}

/// The scan's state: the table being read, how deep in tables, and the totals.
#[derive(Default)]
struct Scan {
    table: Table,
    depth: u32,
    totals: Totals,
    found: PercentCells,
}

impl Scan {
    fn start(&mut self, e: &BytesStart<'_>) {
        let name = e.name();
        if name.as_ref() == "table:table" {
            self.depth += 1;
            if self.depth == 1 {
                self.table = Table {
                    name: attr(e, "table:name").unwrap_or_default(),
                    ..Table::default()
                };
            }
            return;
        }
        if self.depth != 1 {
            return;
        }
        match name.as_ref() {
            "table:table-row" => {
                self.table.col = 0;
                self.table.row_repeats = repeats(e, "table:number-rows-repeated");
            }
            "table:table-cell" | "table:covered-table-cell" => self.table.cell(e),
            "text:s" => self.table.spaces(e),
            _ => {}
        }
    }

    fn end(&mut self, name: &str) -> Result<(), String> {
        match (name, self.depth) {
            ("table:table", 1) => {
                self.depth = 0;
                let done = std::mem::take(&mut self.table);
                if let Some(why) = done.refused {
                    return Err(why);
                }
                self.totals.add(&done)?;
                if !done.blocks.is_empty() {
                    self.found.insert(done.name, done.blocks.into());
                }
            }
            ("table:table", _) => self.depth = self.depth.saturating_sub(1),
            ("table:table-cell" | "table:covered-table-cell", 1) => self.table.end_cell(),
            ("table:table-row", 1) => self.table.end_row(),
            _ => {}
        }
        Ok(())
    }
}

/// The percentage cells of every table in an OpenDocument spreadsheet's content.xml, read
/// before the spreadsheet reader opens the file; `Err` is the message for a file the reader
/// must not see (over a budget, or not readable as the reader would read it).
pub fn ods(path: &Path) -> Result<PercentCells, String> {
    let other = |e: &dyn std::fmt::Display| format!("not a readable workbook: content.xml: {e}");
    let file = std::fs::File::open(path).map_err(|e| other(&e))?;
    let mut archive = zip::ZipArchive::new(BufReader::new(file)).map_err(|e| other(&e))?;
    let content = archive.by_name("content.xml").map_err(|e| other(&e))?;
    let tokens = Tokens {
        inner: content,
        run: 0,
    };
    let mut reader = quick_xml::Reader::from_reader(BufReader::new(tokens));
    // as calamine's reader is set (ods.rs of 0.38), so that both see the same events
    let config = reader.config_mut();
    config.check_end_names = false;
    config.trim_text(false);
    config.expand_empty_elements = true;
    let mut scan = Scan::default();
    let mut open = Nesting::default();
    let mut buf = Vec::new();
    loop {
        let event = reader.read_event_into(&mut buf).map_err(|e| match e {
            quick_xml::Error::Io(io) if io.to_string().starts_with("refused") => io.to_string(),
            e => other(&e),
        })?;
        match &event {
            Event::Start(e) => {
                open.start(e.name().as_ref())?;
                scan.start(e);
            }
            Event::Text(t) if scan.depth == 1 => scan.table.text(&t[..]),
            Event::GeneralRef(r) if scan.depth == 1 => scan.table.text(&r[..]),
            Event::End(e) => {
                open.end(e.name().as_ref())?;
                scan.end(e.name().as_ref())?;
            }
            Event::Eof => break,
            _ => {}
        }
        buf.clear();
    }
    open.finish()?;
    Ok(scan.found)
}

/// Most elements open at once in content.xml (a spreadsheet nests a dozen deep).
const MOST_NESTING: usize = 10_000;

/// The elements open so far, by a hash of each name. The reader (set, as here, not to check
/// end names) waits in a loop for a table's or an annotation's own end tag and spins forever at
/// the end of a file that never gives it: a truncated content.xml, or an end tag that closes
/// another element, would hang the run. So every end tag must close the element last opened,
/// and none may be open at the end.
#[derive(Default)]
struct Nesting(Vec<u64>);

/// FNV-1a (Fowler, Noll and Vo): a name's hash, so that a long name costs nothing to keep.
fn name_hash(name: &str) -> u64 {
    name.bytes().fold(0xcbf2_9ce4_8422_2325, |h, b| {
        (h ^ u64::from(b)).wrapping_mul(0x0100_0000_01b3)
    })
}

impl Nesting {
    fn start(&mut self, name: &str) -> Result<(), String> {
        if self.0.len() >= MOST_NESTING {
            return Err(format!(
                "refused: content.xml nests elements more than {MOST_NESTING} deep (a damaged file)"
            ));
        }
        self.0.push(name_hash(name));
        Ok(())
    }

    fn end(&mut self, name: &str) -> Result<(), String> {
        if self.0.pop() != Some(name_hash(name)) {
            return Err("not a readable workbook: content.xml has an end tag that does not close the element open there (a damaged file); re-save it from the spreadsheet program".into());
        }
        Ok(())
    }

    fn finish(&self) -> Result<(), String> {
        if self.0.is_empty() {
            Ok(())
        } else {
            Err("not a readable workbook: content.xml ends before its elements are closed (a truncated or damaged file); re-save it from the spreadsheet program".into())
        }
    }
}

#[cfg(test)]
mod tests;
