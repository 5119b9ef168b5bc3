//! What a legacy .xls file may ask of the reader, checked before calamine sees it.
//!
//! calamine's .xls reader trusts the file: a DIMENSIONS record's row count is reserved as
//! memory (2^32 rows abort the process, which no `catch_unwind` can stop), a sheet's cells are
//! laid out as one dense grid from the first to the last cell, every sheet record is parsed from
//! its own offset (a thousand records sharing one sheet parse it a thousand times), a shared
//! string is copied into every cell that names it, a label's declared length is reserved even
//! when the record holds no text, and its own compound-file parser follows sector chains
//! without looking for loops. So this module reads the Workbook stream with the `cfb` crate
//! (which checks the container), walks its BIFF records once, and refuses, naming what and
//! where, any file that would cost more than the budgets below. A file that passes is handed
//! to calamine as a fresh compound file holding only that stream (written here, so calamine's
//! container parser sees nothing damaged), with every formula's token list emptied: benchgrade
//! reads a formula's stored result, never its text, and the text is where a few bytes can
//! expand a hundredfold (sheet names, repeated spaces).
//!
//! Panics calamine may still raise on a damaged record are caught by the caller
//! (`crate::contain`) and cost that file only.

use std::collections::HashMap;
use std::io::{Cursor, Read, Write};
use std::path::Path;

use super::workbook::{MOST_DENSE_CELLS, MOST_TEXT_BYTES};

/// Largest Workbook stream read: a class file is a few MB; BIFF8 holds 65,536 rows a sheet.
pub const MOST_STREAM_BYTES: u64 = 64 << 20;
/// Most records the reader may walk, summed over the sheet records (a sheet shared by many
/// sheet records is walked once for each).
pub const MOST_RECORDS_WALKED: u64 = 10_000_000;
/// Most sheet records: a class workbook has a sheet for each section.
pub const MOST_SHEETS: usize = 4_096;
/// Most CONTINUE records after one record (the reader takes them one by one from the front of
/// a list, so their count costs its square in time).
const MOST_CONTINUES: usize = 16_384;
/// UTF-8 bytes one character of a BIFF string can become (a code page character, widened).
const BYTES_PER_CHAR: u64 = 4;
/// Bytes of one empty string.
const STRING_BYTES: u64 = 24;

mod rec {
    pub const BOF: u16 = 0x0809;
    pub const EOF: u16 = 0x000A;
    pub const CONTINUE: u16 = 0x003C;
    pub const BOUNDSHEET: u16 = 0x0085;
    pub const FILEPASS: u16 = 0x002F;
    pub const LBL: u16 = 0x0018;
    pub const SST: u16 = 0x00FC;
    pub const DIMENSIONS: u16 = 0x0200;
    pub const NUMBER: u16 = 0x0203;
    pub const LABEL: u16 = 0x0204;
    pub const RSTRING: u16 = 0x00D6;
    pub const BOOLERR: u16 = 0x0205;
    pub const STRING: u16 = 0x0207;
    pub const RK: u16 = 0x027E;
    pub const LABELSST: u16 = 0x00FD;
    pub const MULRK: u16 = 0x00BD;
    pub const FORMULA: u16 = 0x0006;
}

/// A checked workbook: the stream as read, and the compound file calamine is to read.
pub struct Checked {
    pub stream: Vec<u8>,
    pub biff8: bool,
    pub container: Vec<u8>,
}

fn u16_at(b: &[u8], i: usize) -> Option<u16> {
    b.get(i..i + 2).map(|s| u16::from_le_bytes([s[0], s[1]]))
}

fn u32_at(b: &[u8], i: usize) -> Option<u32> {
    b.get(i..i + 4)
        .map(|s| u32::from_le_bytes([s[0], s[1], s[2], s[3]]))
}

/// One raw record: where it starts, its type and its body.
#[derive(Clone, Copy)]
struct Raw<'a> {
    at: usize,
    kind: u16,
    body: &'a [u8],
}

/// The records from `at` as calamine frames them (a truncated last record ends the walk).
fn raw_records(stream: &[u8], mut at: usize) -> impl Iterator<Item = Raw<'_>> {
    std::iter::from_fn(move || {
        let head = stream.get(at..at + 4)?;
        let kind = u16::from_le_bytes([head[0], head[1]]);
        let len = usize::from(u16::from_le_bytes([head[2], head[3]]));
        let body = stream.get(at + 4..at + 4 + len)?;
        let r = Raw { at, kind, body };
        at += 4 + len;
        Some(r)
    })
}

/// Reads the Workbook (BIFF8) or Book (BIFF5) stream of a compound file, bounded.
fn read_stream(path: &Path) -> Result<(Vec<u8>, bool), String> {
    let damaged = |e: std::io::Error| format!("not a readable workbook: {e}");
    let mut file = cfb::open(path).map_err(damaged)?;
    let (name, biff8) = if file.is_stream("/Workbook") {
        ("/Workbook", true)
    } else if file.is_stream("/Book") {
        ("/Book", false)
    } else {
        return Err("not a readable workbook: the file holds no workbook stream (is it an .xls saved by a spreadsheet program?)".into());
    };
    let len = file.entry(name).map_err(damaged)?.len();
    if len > MOST_STREAM_BYTES {
        return Err(format!(
            "refused: its workbook stream is {} MiB, more than the {} MiB a class file holds",
            len >> 20,
            MOST_STREAM_BYTES >> 20
        ));
    }
    let mut stream = Vec::new();
    file.open_stream(name)
        .map_err(damaged)?
        .take(MOST_STREAM_BYTES + 1)
        .read_to_end(&mut stream)
        .map_err(damaged)?;
    Ok((stream, biff8))
}

/// What the globals hold for the budgets: each sheet record's name and offset, and the text
/// cost of each shared string.
#[derive(Default)]
struct Globals {
    sheets: Vec<(String, usize)>,
    shared: Vec<u64>,
    text: u64,
}

/// Defined names (Lbl, MS-XLS 2.4.150): calamine keeps each name with its reference written
/// out, a sheet's name in front (`'Section 1'!$A$1`), so twenty bytes of record can become
/// hundreds of bytes of text.
#[derive(Default)]
struct Names {
    count: u64,
    bytes: u64,
    longest_sheet: u64,
}

impl Names {
    fn text(&self) -> u64 {
        let each = self.longest_sheet * BYTES_PER_CHAR + 64 + STRING_BYTES * 2;
        self.count
            .saturating_mul(each)
            .saturating_add(self.bytes * BYTES_PER_CHAR)
    }
}

/// The bodies of the CONTINUE records from `at`, which calamine joins to the record before.
fn continues(stream: &[u8], at: usize) -> Result<Vec<&[u8]>, String> {
    let cont: Vec<&[u8]> = raw_records(stream, at)
        .take_while(|r| r.kind == rec::CONTINUE)
        .take(MOST_CONTINUES + 1)
        .map(|r| r.body)
        .collect();
    if cont.len() > MOST_CONTINUES {
        return Err(format!(
            "refused: a record before byte {at} is continued more than {MOST_CONTINUES} times, more than a class file needs (a damaged file)"
        ));
    }
    Ok(cont)
}

/// A sheet record's name, for messages (at most 40 characters).
fn sheet_name(body: &[u8], biff8: bool) -> String {
    let cch = usize::from(body.get(6).copied().unwrap_or(0)).min(40);
    if biff8 {
        // a flags byte, then Latin-1 bytes or UTF-16, as every BIFF8 string
        return super::percent_cells::biff8_chars(body, 7, cch);
    }
    let text = body.get(7..).unwrap_or_default();
    text.iter().take(cch).map(|&c| char::from(c)).collect()
}

fn globals(stream: &[u8], biff8: bool) -> Result<Globals, String> {
    let mut g = Globals::default();
    let mut names = Names::default();
    for r in raw_records(stream, 0) {
        match r.kind {
            rec::LBL => {
                names.count += 1;
                names.bytes += r.body.len() as u64;
            }
            rec::BOUNDSHEET => {
                let Some(offset) = u32_at(r.body, 0) else {
                    continue;
                };
                let cch = u64::from(r.body.get(6).copied().unwrap_or(0));
                names.longest_sheet = names.longest_sheet.max(cch);
                g.sheets.push((sheet_name(r.body, biff8), offset as usize));
                if g.sheets.len() > MOST_SHEETS {
                    return Err(format!(
                        "refused: the workbook lists more than {MOST_SHEETS} sheets, more than a class file holds (a damaged file)"
                    ));
                }
            }
            rec::SST => {
                let next = r.at + 4 + r.body.len();
                g.shared = sst::shared_strings(r.body, continues(stream, next)?);
                g.text = g
                    .shared
                    .iter()
                    .map(|c| c + STRING_BYTES)
                    .fold(0, u64::saturating_add);
            }
            // FilePass (MS-XLS 2.4.117): the records after it are encrypted
            rec::FILEPASS => {
                return Err(
                    "the workbook is password-protected; save an unprotected copy and grade that"
                        .into(),
                );
            }
            rec::EOF => break,
            _ => {}
        }
    }
    g.text = g.text.saturating_add(names.text());
    Ok(g)
}

/// Which of `offsets` start a record of the stream read from its start.
fn record_starts(stream: &[u8], offsets: &[usize]) -> Vec<usize> {
    let mut wanted: Vec<usize> = offsets.to_vec();
    wanted.sort_unstable();
    wanted.dedup();
    let mut found = Vec::new();
    let mut i = 0;
    for r in raw_records(stream, 0) {
        while i < wanted.len() && wanted[i] < r.at {
            i += 1;
        }
        if i == wanted.len() {
            break;
        }
        if wanted[i] == r.at {
            found.push(r.at);
        }
    }
    found
}

/// Rows and columns of the cells a DIMENSIONS record makes calamine reserve, computed as
/// calamine computes them (in 32 bits, wrapping); `None` where its subtraction would overflow.
fn reserved(body: &[u8]) -> Option<u64> {
    let (rf, rl, cf, cl) = match body.len() {
        10 => (
            u32::from(u16_at(body, 0)?),
            u32::from(u16_at(body, 2)?),
            u32::from(u16_at(body, 4)?),
            u32::from(u16_at(body, 6)?),
        ),
        14 | 16 => (
            u32_at(body, 0)?,
            u32_at(body, 4)?,
            u32::from(u16_at(body, 8)?),
            u32::from(u16_at(body, 10)?),
        ),
        _ => return Some(0),
    };
    let cf = if cf > 0xFF || cl < cf { 0 } else { cf };
    let (start, end) = if rl >= 1 && cl >= 1 {
        ((rf, cf), (rl - 1, cl - 1))
    } else {
        ((rf, cf), (rf, cf))
    };
    let rows = u64::from(end.0.checked_sub(start.0)?) + 1;
    let cols = u64::from(end.1.checked_sub(start.1)?) + 1;
    Some(rows * cols)
}

/// The rows and columns a set of cells spans.
#[derive(Default, Clone, Copy)]
struct Span {
    first: Option<(u32, u32)>,
    last: (u32, u32),
}

impl Span {
    fn add(&mut self, row: u32, col: u32) {
        let (r0, c0) = self.first.unwrap_or((row, col));
        self.first = Some((r0.min(row), c0.min(col)));
        self.last = (self.last.0.max(row), self.last.1.max(col));
    }

    fn cells(&self) -> u64 {
        self.first.map_or(0, |(r0, c0)| {
            (u64::from(self.last.0 - r0) + 1) * (u64::from(self.last.1 - c0) + 1)
        })
    }
}

/// What reading one sheet costs calamine.
#[derive(Default, Clone, Copy)]
struct Cost {
    records: u64,
    cells: u64,
    grid: u64,
    text: u64,
    /// The largest DIMENSIONS reservation, or `None` for one calamine cannot compute.
    reserve: Option<u64>,
}

/// The text a LABEL, RSTRING or STRING record makes: its declared length is reserved.
fn label_text(body: &[u8]) -> u64 {
    u64::from(u16_at(body, 0).unwrap_or(0)) + body.len() as u64 * BYTES_PER_CHAR
}

/// A sheet being walked: its cost so far, the spans of its values and formulas, and the cell
/// of the last formula (a STRING record after it holds that cell's text).
struct Walk<'a> {
    c: Cost,
    values: Span,
    formulas: Span,
    formula_at: (u32, u32),
    shared: &'a [u64],
}

impl Walk<'_> {
    /// A record that makes calamine keep a cell (or two: a formula's value and its text).
    fn cell(&mut self, kind: u16, b: &[u8]) {
        let pos = u16_at(b, 0)
            .zip(u16_at(b, 2))
            .map(|(r, c)| (u32::from(r), u32::from(c)));
        let c = &mut self.c;
        match (kind, pos) {
            (rec::STRING, _) => {
                self.values.add(self.formula_at.0, self.formula_at.1);
                c.cells += 1;
                c.text += label_text(b);
            }
            (rec::FORMULA, Some((row, col))) => {
                self.formula_at = (row, col);
                self.values.add(row, col);
                self.formulas.add(row, col);
                c.cells += 2;
            }
            (rec::MULRK, Some((row, first))) if b.len() >= 6 => {
                let n = (b.len() - 6).div_ceil(6) as u32;
                if n > 0 {
                    self.values.add(row, first);
                    self.values.add(row, first + n - 1);
                }
                c.cells += u64::from(n);
            }
            (rec::FORMULA | rec::MULRK, _) => {}
            (_, pos) => {
                if let Some((row, col)) = pos {
                    self.values.add(row, col);
                    c.cells += 1;
                }
                if matches!(kind, rec::LABEL | rec::RSTRING) {
                    c.text += label_text(b.get(6..).unwrap_or_default());
                }
                if kind == rec::LABELSST {
                    let i = u32_at(b, 6).unwrap_or(u32::MAX) as usize;
                    c.text += self.shared.get(i).copied().unwrap_or(0);
                }
            }
        }
    }
}

/// Walks one sheet from `offset` as calamine does (nested substreams skipped, up to the
/// sheet's own EOF), adding up its cost; stops early once `budget` records are walked.
fn sheet_cost(stream: &[u8], offset: usize, shared: &[u64], budget: u64) -> Cost {
    let mut w = Walk {
        c: Cost {
            reserve: Some(0),
            ..Cost::default()
        },
        values: Span::default(),
        formulas: Span::default(),
        formula_at: (0, 0),
        shared,
    };
    let (mut seen_bof, mut depth) = (false, 0usize);
    for r in raw_records(stream, offset) {
        w.c.records += 1;
        if w.c.records > budget {
            break;
        }
        match (r.kind, depth) {
            (rec::CONTINUE, _) => {}
            (rec::BOF, _) if seen_bof => depth += 1,
            (rec::EOF, 1..) => depth -= 1,
            (_, 1..) => {}
            (rec::BOF, _) => seen_bof = true,
            (rec::EOF, _) => break,
            (rec::DIMENSIONS, _) => {
                w.c.reserve = w.c.reserve.zip(reserved(r.body)).map(|(a, b)| a.max(b));
            }
            (
                rec::NUMBER
                | rec::BOOLERR
                | rec::RK
                | rec::LABEL
                | rec::RSTRING
                | rec::LABELSST
                | rec::STRING
                | rec::FORMULA
                | rec::MULRK,
                _,
            ) => w.cell(r.kind, r.body),
            _ => {}
        }
    }
    w.c.grid = w.values.cells() + w.formulas.cells();
    w.c
}

/// The budgets a sheet's cost is held to; `Err` says which is passed.
fn over_budget(name: &str, c: &Cost) -> Option<String> {
    let sheet = format!("sheet \"{name}\"");
    match c.reserve {
        None => Some(format!(
            "refused: {sheet} has a DIMENSIONS record whose last row comes before its first (a damaged file)"
        )),
        Some(n) if n > MOST_DENSE_CELLS => Some(format!(
            "refused: {sheet} declares {n} cells in its DIMENSIONS record, more than the {MOST_DENSE_CELLS} a workbook may hold (a damaged file)"
        )),
        _ if c.cells > MOST_DENSE_CELLS => Some(format!(
            "refused: {sheet} holds more than {MOST_DENSE_CELLS} cell records, more than a workbook may hold"
        )),
        _ => None,
    }
}

/// Walks every sheet record's sheet, holding the workbook to the budgets.
fn check_sheets(stream: &[u8], starts: &[usize], g: &Globals) -> Result<(), String> {
    let mut memo: HashMap<usize, Cost> = HashMap::new();
    if g.text > MOST_TEXT_BYTES {
        return Err(format!(
            "refused: its shared strings and defined names would take more than {} MiB of text, more than a class file holds (a damaged file)",
            MOST_TEXT_BYTES >> 20
        ));
    }
    let (mut walked, mut grid, mut text) = (0u64, 0u64, g.text);
    for (name, offset) in &g.sheets {
        let label = name;
        if *offset > stream.len() {
            return Err(format!(
                "refused: sheet \"{label}\" is said to start at byte {offset}, past the end of the {}-byte workbook stream (a damaged file)",
                stream.len()
            ));
        }
        if starts.binary_search(offset).is_err() && *offset < stream.len() {
            return Err(format!(
                "refused: sheet \"{label}\" is said to start at byte {offset}, which is not the start of a record (a damaged file)"
            ));
        }
        let budget = MOST_RECORDS_WALKED.saturating_sub(walked);
        let cost = *memo
            .entry(*offset)
            .or_insert_with(|| sheet_cost(stream, *offset, &g.shared, budget));
        if let Some(why) = over_budget(name, &cost) {
            return Err(why);
        }
        walked += cost.records;
        grid += cost.grid;
        text += cost.text;
        if walked > MOST_RECORDS_WALKED {
            return Err(format!(
                "refused: reading its {} sheet records would walk more than {MOST_RECORDS_WALKED} records (sheet records that share a sheet; a damaged file)",
                g.sheets.len()
            ));
        }
        if grid > MOST_DENSE_CELLS {
            return Err(format!(
                "refused: its sheets span more than {MOST_DENSE_CELLS} grid cells (rows x columns from each sheet's first cell to its last), more than a workbook may hold; up to sheet \"{label}\""
            ));
        }
        if text > MOST_TEXT_BYTES {
            return Err(format!(
                "refused: its text would take more than {} MiB (up to sheet \"{label}\"), more than a class file holds (a damaged file)",
                MOST_TEXT_BYTES >> 20
            ));
        }
    }
    Ok(())
}

/// A copy of the stream with every formula's token list emptied (its stored result kept).
fn without_formula_text(stream: &[u8]) -> Vec<u8> {
    let mut out = stream.to_vec();
    for r in raw_records(stream, 0).filter(|r| r.kind == rec::FORMULA) {
        // a FORMULA body: row, col, xf, result (8), flags, chn (4), then cce and the tokens
        if r.body.len() >= 22 {
            let cce = r.at + 4 + 20;
            out[cce..cce + 2].copy_from_slice(&[0, 0]);
        }
    }
    out
}

/// A compound file holding `stream` alone, under the name calamine looks for.
fn container(stream: &[u8], biff8: bool) -> Result<Vec<u8>, String> {
    let fail = |e: std::io::Error| format!("cannot prepare the workbook for reading: {e}");
    // version 3 (512-byte sectors), which every reader takes
    let mut cf = cfb::CompoundFile::create_with_version(cfb::Version::V3, Cursor::new(Vec::new()))
        .map_err(fail)?;
    {
        let name = if biff8 { "/Workbook" } else { "/Book" };
        let mut s = cf.create_stream(name).map_err(fail)?;
        s.write_all(stream).map_err(fail)?;
    }
    cf.flush().map_err(fail)?;
    Ok(cf.into_inner().into_inner())
}

/// Reads and checks a legacy workbook; `Err` is the message for the file.
pub fn check(path: &Path) -> Result<Checked, String> {
    let (stream, biff8) = read_stream(path)?;
    let g = globals(&stream, biff8)?;
    let offsets: Vec<usize> = g.sheets.iter().map(|(_, at)| *at).collect();
    let starts = record_starts(&stream, &offsets);
    check_sheets(&stream, &starts, &g)?;
    let container = container(&without_formula_text(&stream), biff8)?;
    Ok(Checked {
        stream,
        biff8,
        container,
    })
}

mod sst;
#[cfg(test)]
mod tests;
