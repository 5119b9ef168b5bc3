//! Which cells of an .ods or .xls workbook are shown as percentages.
//!
//! A spreadsheet program stores "72.8 %" as the number 0.728 and keeps the percent in the cell's
//! format. calamine hands back the number but not the format for these two formats, so a
//! reported recovery typed with a percent sign would be read as 0.728. This module finds the
//! formatted cells itself: in OpenDocument the cell's `office:value-type="percentage"` (found by
//! `ods_scan`, which reads content.xml once for this and for the reader's budgets), in the
//! legacy binary format the number format of the cell's extended format (XF) record. An
//! OpenDocument cell's decimals are read from the text it shows ("74.0%"), so that it is read as
//! shown, as the .xlsx and .xls formats read it. Only a cell
//! calamine read as a plain number is re-typed, so a position this scan gets wrong changes
//! nothing; the grade still cannot hinge on it, since scoring reads a fraction that fits the
//! masses as a percentage in every format (see `assess`).

use std::collections::HashMap;
use std::sync::Arc;

use super::cells::{Cell, RawSheet};
use super::workbook::percent_decimals;

/// A block of percent-formatted cells: rows `row..row + rows`, columns `col..col + cols`.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub struct Block {
    pub row: u32,
    pub rows: u32,
    pub col: u32,
    pub cols: u32,
    /// The decimals the format shows, where known (the cells are then read as shown).
    pub decimals: Option<u8>,
}

/// Percent blocks by sheet name (shared: sheet records of an .xls may share one sheet).
pub type PercentCells = HashMap<String, Arc<[Block]>>;

/// Re-types the plain numbers of `sheet` that lie in one of `blocks` as percentages.
pub fn mark(sheet: &mut RawSheet, blocks: &[Block]) {
    for b in blocks {
        let end_row = b.row.saturating_add(b.rows);
        let end_col = b.col.saturating_add(b.cols);
        let first = sheet.rows.partition_point(|r| r.index < b.row);
        for row in sheet.rows[first..]
            .iter_mut()
            .take_while(|r| r.index < end_row)
        {
            let from = row.cells.partition_point(|(c, _)| *c < b.col);
            for (c, cell) in &mut row.cells[from..] {
                if *c >= end_col {
                    break;
                }
                if let Cell::Number(v) = *cell {
                    *cell = Cell::Percent(match b.decimals {
                        Some(d) => super::workbook::as_shown(v, d),
                        None => v,
                    });
                }
            }
        }
    }
}

/// Record types of the binary workbook format (BIFF5 and BIFF8) that this scan reads.
mod record {
    pub const EOF: u16 = 0x000A;
    pub const BOF: u16 = 0x0809;
    pub const FORMAT: u16 = 0x041E;
    pub const XF: u16 = 0x00E0;
    pub const BOUNDSHEET: u16 = 0x0085;
    pub const NUMBER: u16 = 0x0203;
    pub const RK: u16 = 0x027E;
    pub const MULRK: u16 = 0x00BD;
    pub const FORMULA: u16 = 0x0006;
}

/// The records of a BIFF stream from `at`: (type, body).
fn records(stream: &[u8], mut at: usize) -> impl Iterator<Item = (u16, &[u8])> {
    std::iter::from_fn(move || {
        let head = stream.get(at..at + 4)?;
        let kind = u16::from_le_bytes([head[0], head[1]]);
        let len = usize::from(u16::from_le_bytes([head[2], head[3]]));
        let body = stream.get(at + 4..at + 4 + len)?;
        at += 4 + len;
        Some((kind, body))
    })
}

fn u16_at(b: &[u8], i: usize) -> Option<u16> {
    b.get(i..i + 2).map(|s| u16::from_le_bytes([s[0], s[1]]))
}

fn u32_at(b: &[u8], i: usize) -> Option<u32> {
    b.get(i..i + 4)
        .map(|s| u32::from_le_bytes([s[0], s[1], s[2], s[3]]))
}

/// A BIFF8 string of `cch` characters at `b[i..]`: a flags byte, then Latin-1 bytes or UTF-16.
pub(super) fn biff8_chars(b: &[u8], i: usize, cch: usize) -> String {
    let Some(&flags) = b.get(i) else {
        return String::new();
    };
    let body = b.get(i + 1..).unwrap_or_default();
    if flags & 1 == 1 {
        let units: Vec<u16> = body
            .chunks_exact(2)
            .take(cch)
            .map(|p| u16::from_le_bytes([p[0], p[1]]))
            .collect();
        String::from_utf16_lossy(&units)
    } else {
        body.iter().take(cch).map(|&c| char::from(c)).collect()
    }
}

/// Number format codes by id, the format id of each XF, and each sheet's name and offset.
#[derive(Default)]
struct Globals {
    formats: HashMap<u16, String>,
    xf_formats: Vec<u16>,
    sheets: Vec<(String, usize)>,
}

fn globals(stream: &[u8], biff8: bool) -> Globals {
    let mut g = Globals::default();
    for (kind, b) in records(stream, 0) {
        match kind {
            record::FORMAT => {
                let Some(id) = u16_at(b, 0) else { continue };
                let code = if biff8 {
                    let cch = usize::from(u16_at(b, 2).unwrap_or(0));
                    biff8_chars(b, 4, cch)
                } else {
                    let cch = usize::from(b.get(2).copied().unwrap_or(0));
                    b.iter().skip(3).take(cch).map(|&c| char::from(c)).collect()
                };
                g.formats.insert(id, code);
            }
            record::XF => g.xf_formats.push(u16_at(b, 2).unwrap_or(0)),
            record::BOUNDSHEET => {
                let Some(offset) = u32_at(b, 0) else { continue };
                let cch = usize::from(b.get(6).copied().unwrap_or(0));
                let name = if biff8 {
                    biff8_chars(b, 7, cch)
                } else {
                    b.iter().skip(7).take(cch).map(|&c| char::from(c)).collect()
                };
                g.sheets.push((name, offset as usize));
            }
            record::EOF => break,
            _ => {}
        }
    }
    g
}

/// The decimals a number format shows if it is a percentage: built-in formats 9 ("0%") and 10
/// ("0.00%"), else the format's own code.
fn format_percent(g: &Globals, id: u16) -> Option<u8> {
    match g.formats.get(&id) {
        Some(code) => percent_decimals(code),
        None => match id {
            9 => Some(0),
            10 => Some(2),
            _ => None,
        },
    }
}

/// The cells of one sheet substream whose XF shows a percentage.
fn sheet_blocks(stream: &[u8], offset: usize, percent_xf: &[Option<u8>]) -> Vec<Block> {
    let decimals =
        |xf: Option<u16>| xf.and_then(|x| percent_xf.get(usize::from(x)).copied().flatten());
    let one = |row: u16, col: u16, d: u8| Block {
        row: u32::from(row),
        rows: 1,
        col: u32::from(col),
        cols: 1,
        decimals: Some(d),
    };
    let mut blocks = Vec::new();
    for (kind, b) in records(stream, offset).skip(1) {
        let (Some(row), Some(col)) = (u16_at(b, 0), u16_at(b, 2)) else {
            if kind == record::EOF {
                break;
            }
            continue;
        };
        match kind {
            record::NUMBER | record::RK | record::FORMULA => {
                if let Some(d) = decimals(u16_at(b, 4)) {
                    blocks.push(one(row, col, d));
                }
            }
            record::MULRK => {
                // (xf, rk) pairs of six bytes from byte 4, then the last column
                let pairs = b.get(4..b.len().saturating_sub(2)).unwrap_or_default();
                for (i, pair) in pairs.chunks_exact(6).enumerate() {
                    if let Some(d) = decimals(u16_at(pair, 0)) {
                        blocks.push(one(row, col.saturating_add(i as u16), d));
                    }
                }
            }
            record::EOF | record::BOF => break,
            _ => {}
        }
    }
    blocks
}

/// The percent-formatted number cells of every sheet of a legacy binary workbook's stream
/// (read and checked by `xls_guard`). Each sheet is walked once however many sheet records
/// share it, and a name given twice keeps its last sheet, as the reader does.
pub fn xls(stream: &[u8], biff8: bool) -> PercentCells {
    let g = globals(stream, biff8);
    let percent_xf: Vec<Option<u8>> = g
        .xf_formats
        .iter()
        .map(|&id| format_percent(&g, id))
        .collect();
    let mut walked: HashMap<usize, Arc<[Block]>> = HashMap::new();
    let mut found = PercentCells::new();
    for (name, offset) in g.sheets {
        let blocks = walked
            .entry(offset)
            .or_insert_with(|| sheet_blocks(stream, offset, &percent_xf).into())
            .clone();
        if blocks.is_empty() {
            found.remove(&name);
        } else {
            found.insert(name, blocks);
        }
    }
    found
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::ingest::cells::rows_from_cells;

    #[test]
    fn only_plain_numbers_inside_a_block_become_percentages() {
        let mut sheet = RawSheet {
            merges: Vec::new(),
            name: None,
            rows: rows_from_cells(vec![
                (0, 0, Cell::Text("Recovery".into())),
                (1, 0, Cell::Number(0.728)),
                (2, 0, Cell::Number(0.8)),
                (2, 1, Cell::Number(0.5)),
                (3, 0, Cell::Text("n/a".into())),
            ]),
        };
        mark(
            &mut sheet,
            &[Block {
                row: 1,
                rows: 3,
                col: 0,
                cols: 1,
                decimals: None,
            }],
        );
        let at = |r: usize, c: u32| sheet.rows[r].get(c).clone();
        assert_eq!(at(1, 0), Cell::Percent(0.728));
        assert_eq!(at(2, 0), Cell::Percent(0.8));
        assert_eq!(at(2, 1), Cell::Number(0.5));
        assert_eq!(at(3, 0), Cell::Text("n/a".into()));
        assert_eq!(at(0, 0), Cell::Text("Recovery".into()));
    }

    #[test]
    fn biff_records_stop_at_a_truncated_one() {
        let mut s = vec![0x03, 0x02, 0x02, 0x00, 7, 7];
        s.extend([0x0A, 0x00, 0x10, 0x00, 1]); // says 16 bytes, holds 1
        let got: Vec<u16> = records(&s, 0).map(|(k, _)| k).collect();
        assert_eq!(got, vec![0x0203]);
    }
}
