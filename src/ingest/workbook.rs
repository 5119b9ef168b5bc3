//! Spreadsheet workbooks through calamine: xlsx, xlsm, xlsb, xls and ods.
//!
//! xlsx and xlsb sheets are streamed cell by cell into sparse rows, so a file whose few cells sit
//! at opposite corners of the grid costs what its cells cost, not rows x columns. Before calamine
//! opens a file it is held to the budgets calamine does not keep (`zip_guard` for the zipped
//! formats, `xls_guard` and `ods_scan` for the two it reads whole as dense grids), and every
//! calamine call runs inside `crate::contain`, so a reader's panic on a damaged file costs that
//! file (or sheet) only.

use std::fs::File;
use std::io::{BufReader, Cursor, Read, Seek};
use std::path::Path;

use calamine::{open_workbook, Data, DataRef, Ods, Reader, Xls, Xlsb, Xlsx};

use super::cells::{Cell, RawSheet, RowBuilder};
use super::ods_scan;
use super::percent_cells;
use super::values::Decimal;
use super::xls_guard;
use super::zip_guard;

/// Most cells one sheet may hold, so that a sheet whose part lies about its size still costs a
/// bounded amount of memory (ten million cells, about 400 MB).
pub const MAX_CELLS: usize = 10_000_000;
/// Most cells calamine may lay out for a workbook it reads whole as dense grids (.xls, .ods),
/// summed over its sheets: each sheet's rows x columns from its first value to its last (and
/// again for its formulas), and the cells its rows keep before that. A grid of these takes
/// about 128 MiB, and the reader holds two copies at most. Also the most a .xls DIMENSIONS
/// record may declare. Checked by `xls_guard` and `ods_scan` before the reader sees the file.
pub const MOST_DENSE_CELLS: u64 = 4_000_000;
/// Most bytes of cell text those readers may build (a shared string once for every cell that
/// names it, a repeated cell's text once for every copy, a run of spaces written out).
pub const MOST_TEXT_BYTES: u64 = 256 << 20;
/// Grid limits of the OOXML formats: positions beyond them are corrupt.
const MAX_ROWS: u32 = 1 << 20;
const MAX_COLS: u32 = 1 << 14;

/// One sheet read, or why it could not be.
pub struct SheetRead {
    pub name: String,
    pub result: Result<RawSheet, String>,
    /// Whether an `Err` means data could not be read (rather than a sheet passed over on purpose).
    pub fatal: bool,
}

/// Why a hidden sheet is passed over.
pub(crate) const HIDDEN: &str = "skipped: the workbook hides this sheet (most often a template or an old copy); unhide it in the spreadsheet program to grade it";

/// The sheets the workbook hides, each as a note, and the names of the others in order.
fn hidden_first<RS: Read + Seek, R: Reader<RS>>(wb: &R) -> (Vec<SheetRead>, Vec<String>) {
    let (hidden, shown): (Vec<_>, Vec<_>) = wb
        .sheets_metadata()
        .iter()
        .partition(|s| s.visible != calamine::SheetVisible::Visible);
    let notes = hidden
        .into_iter()
        .map(|s| SheetRead {
            name: s.name.clone(),
            result: Err(HIDDEN.into()),
            fatal: false,
        })
        .collect();
    (notes, shown.into_iter().map(|s| s.name.clone()).collect())
}

fn from_data(d: &Data) -> Cell {
    match d {
        Data::Int(i) => Cell::Number(*i as f64),
        Data::Float(f) => Cell::Number(*f),
        Data::String(s) => Cell::Text(s.clone()).normalized(),
        Data::Bool(b) => Cell::Bool(*b),
        Data::DateTime(dt) => Cell::Date(dt.to_string()),
        Data::DateTimeIso(s) | Data::DurationIso(s) => Cell::Date(s.clone()),
        Data::Error(e) => Cell::Error(e.to_string()),
        Data::Empty => Cell::Empty,
    }
}

fn from_data_ref(d: DataRef<'_>) -> Cell {
    match d {
        DataRef::Int(i) => Cell::Number(i as f64),
        DataRef::Float(f) => Cell::Number(f),
        DataRef::String(s) => Cell::Text(s).normalized(),
        DataRef::SharedString(s) => Cell::Text(s.to_string()).normalized(),
        DataRef::Bool(b) => Cell::Bool(b),
        DataRef::DateTime(dt) => Cell::Date(dt.to_string()),
        DataRef::DateTimeIso(s) | DataRef::DurationIso(s) => Cell::Date(s),
        DataRef::Error(e) => Cell::Error(e.to_string()),
        DataRef::Empty => Cell::Empty,
    }
}

fn bounded(pos: (u32, u32)) -> Result<(u32, u32), String> {
    if pos.0 >= MAX_ROWS || pos.1 >= MAX_COLS {
        return Err(format!(
            "a cell lies outside the grid (row {}, column {})",
            pos.0 + 1,
            pos.1 + 1
        ));
    }
    Ok(pos)
}

fn describe<E: std::fmt::Display>(e: E) -> String {
    let text = e.to_string();
    if text.to_lowercase().contains("password") {
        "the workbook is password-protected; save an unprotected copy and grade that".into()
    } else {
        format!("not a readable workbook: {text}")
    }
}

/// Collects streamed cells into sparse rows, refusing a cell outside the grid.
fn collect_cells<E: std::fmt::Display>(
    name: &str,
    mut next: impl FnMut() -> Result<Option<((u32, u32), Cell)>, E>,
) -> Result<RawSheet, String> {
    let mut rows = RowBuilder::default();
    let mut cells = 0usize;
    while let Some((pos, cell)) = next().map_err(describe)? {
        let (r, c) = bounded(pos)?;
        rows.push(r, c, cell);
        cells += 1;
        if cells > MAX_CELLS {
            return Err(format!(
                "refused: the sheet holds more than {MAX_CELLS} cells, more than a class file holds"
            ));
        }
    }
    Ok(RawSheet {
        name: Some(name.to_string()),
        rows: rows.finish(),
        merges: Vec::new(),
    })
}

/// Whether a number format shows a percentage: a `%` in its first section, outside quotes
/// and not escaped ("0.0%" is; `0"%"` and `0\%` show a percent sign beside the number itself).
pub fn is_percent_format(code: &str) -> bool {
    let mut quoted = false;
    let mut escaped = false;
    for c in code.chars() {
        match c {
            _ if escaped => escaped = false,
            '\\' => escaped = true,
            '"' => quoted = !quoted,
            ';' if !quoted => return false,
            '%' if !quoted => return true,
            _ => {}
        }
    }
    false
}

/// The decimals a percent format shows ("0.0%" shows 1, "0%" none); `None` for a format that
/// is not a percentage.
pub fn percent_decimals(code: &str) -> Option<u8> {
    if !is_percent_format(code) {
        return None;
    }
    let first = code.split(';').next().unwrap_or(code);
    let before = &first[..first.find('%').unwrap_or(first.len())];
    let digits = before.rsplit_once('.').map_or(0, |(_, d)| {
        d.chars().filter(|c| matches!(c, '0' | '#' | '?')).count()
    });
    Some(digits.min(10) as u8)
}

/// A percentage as its format shows it: 0.7251 shown "0%" is 0.73, what the student saw.
pub fn as_shown(fraction: f64, decimals: u8) -> f64 {
    let scale = 10f64.powi(i32::from(decimals) + 2);
    let shown = (fraction * scale).round() / scale;
    if shown.is_finite() {
        shown
    } else {
        fraction
    }
}

/// Rows from the top whose merged cells are kept: where a header is looked for.
const MERGE_ROWS: u32 = 60;
/// A sheet with more rows is not parsed a second time for its merged cells (an .xlsx keeps
/// them after the cells: reading them cost a 30,000-row sheet about a fifth more CPU time,
/// measured 2026-12-04 on the debug build); its headers are read by the blank-to-the-right rule
/// alone. A section's sheet holds far fewer rows.
const MERGE_READ_MAX_ROWS: usize = 5_000;

/// The merges across columns near the top of a sheet.
fn header_merges(dims: &[calamine::Dimensions]) -> Vec<super::cells::Merge> {
    dims.iter()
        .filter(|d| d.start.0 < MERGE_ROWS && d.end.1 > d.start.1)
        .map(|d| super::cells::Merge {
            row: d.start.0,
            first: d.start.1,
            last: d.end.1,
        })
        .collect()
}

fn stream_xlsx(wb: &mut Xlsx<BufReader<File>>, name: &str) -> Result<RawSheet, String> {
    let mut sheet = stream_xlsx_cells(wb, name)?;
    if sheet.rows.len() <= MERGE_READ_MAX_ROWS {
        // a hint for two-row headers: a sheet whose merges cannot be read is read without
        if let Ok(dims) = wb.merge_cells_by_sheet_name(name) {
            sheet.merges = header_merges(&dims);
        }
    }
    Ok(sheet)
}

/// An .xls sheet with its merged cells.
fn dense_xls<RS: Read + Seek>(wb: &mut Xls<RS>, name: &str) -> Result<RawSheet, String> {
    let mut sheet = dense(wb, name)?;
    if let Ok(dims) = wb.merge_cells_by_sheet_name(name) {
        sheet.merges = header_merges(&dims);
    }
    Ok(sheet)
}

fn stream_xlsx_cells(wb: &mut Xlsx<BufReader<File>>, name: &str) -> Result<RawSheet, String> {
    let mut reader = wb.worksheet_cells_reader(name).map_err(describe)?;
    // which styles show a percentage, and to how many decimals, by style id
    let percent: Vec<Option<u8>> = reader
        .styles()
        .iter()
        .map(|s| {
            s.number_format
                .as_ref()
                .and_then(|f| percent_decimals(&f.format_code))
        })
        .collect();
    collect_cells(name, || {
        let next = reader.next_cell_with_style_id()?;
        Ok::<_, calamine::XlsxError>(next.map(|(c, style)| {
            let cell = match (from_data_ref(c.get_value().clone()), percent.get(style)) {
                (Cell::Number(v), Some(Some(d))) => Cell::Percent(as_shown(v, *d)),
                (other, _) => other,
            };
            (c.get_position(), cell)
        }))
    })
}

fn stream_xlsb(wb: &mut Xlsb<BufReader<File>>, name: &str) -> Result<RawSheet, String> {
    let mut reader = wb.worksheet_cells_reader(name).map_err(describe)?;
    collect_cells(name, || {
        let next = reader.next_cell()?;
        Ok::<_, calamine::XlsbError>(
            next.map(|c| (c.get_position(), from_data_ref(c.get_value().clone()))),
        )
    })
}

fn dense<RS: Read + Seek, R: Reader<RS>>(wb: &mut R, name: &str) -> Result<RawSheet, String>
where
    R::Error: std::fmt::Display,
{
    let range = wb.worksheet_range(name).map_err(describe)?;
    let (r0, c0) = range.start().unwrap_or((0, 0));
    let mut rows = RowBuilder::default();
    for (r, c, d) in range.used_cells() {
        rows.push(r0 + r as u32, c0 + c as u32, from_data(d));
    }
    Ok(RawSheet {
        name: Some(name.to_string()),
        rows: rows.finish(),
        merges: Vec::new(),
    })
}

/// Which workbook format a file extension names.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Format {
    Xlsx,
    Xlsb,
    Xls,
    Ods,
}

impl Format {
    pub fn from_extension(ext: &str) -> Option<Format> {
        match ext.to_ascii_lowercase().as_str() {
            "xlsx" | "xlsm" => Some(Format::Xlsx),
            "xlsb" => Some(Format::Xlsb),
            "xls" => Some(Format::Xls),
            "ods" => Some(Format::Ods),
            _ => None,
        }
    }
}

/// Whether a workbook is one benchgrade wrote: its "Provenance" sheet opens with the tool's name.
fn is_own_output<RS: Read + Seek, R: Reader<RS>>(wb: &mut R) -> bool {
    if !wb.sheet_names().iter().any(|n| n == "Provenance") {
        return false;
    }
    let Ok(range) = wb.worksheet_range("Provenance") else {
        return false;
    };
    let text = |c: (u32, u32)| match range.get_value(c) {
        Some(Data::String(s)) => s.clone(),
        _ => String::new(),
    };
    text((0, 0)) == "tool" && text((0, 1)).starts_with("benchgrade ")
}

const OWN_OUTPUT: &str =
    "skipped: this is a graded workbook benchgrade wrote; grade the class file it came from";

fn read_all<RS, R, F>(
    mut wb: R,
    mut read: F,
    on_sheet: &mut dyn FnMut(SheetRead),
) -> Result<(), String>
where
    RS: Read + Seek,
    R: Reader<RS>,
    F: FnMut(&mut R, &str) -> Result<RawSheet, String>,
{
    if guarded(|| Ok(is_own_output(&mut wb)))? {
        return Err(OWN_OUTPUT.into());
    }
    let (hidden, names) = guarded(|| Ok(hidden_first(&wb)))?;
    hidden.into_iter().for_each(&mut *on_sheet);
    for name in names {
        let result = guarded(|| read(&mut wb, &name));
        on_sheet(SheetRead {
            name,
            result,
            fatal: true,
        });
    }
    Ok(())
}

/// `read_all` on two threads: a helper opens its own copy of the workbook and reads every
/// second sheet while this thread reads the others; sheets are still handed over in order, and
/// at most one finished sheet waits on each thread. If the helper cannot open the file or
/// stops, this thread reads the sheets it would have read.
fn read_all_two<R, O, F>(
    open: O,
    read: F,
    on_sheet: &mut dyn FnMut(SheetRead),
) -> Result<(), String>
where
    R: Reader<BufReader<File>>,
    O: Fn() -> Result<R, String> + Sync,
    F: Fn(&mut R, &str) -> Result<RawSheet, String> + Sync,
{
    let mut wb = guarded(&open)?;
    let (hidden, names) = guarded(|| Ok(hidden_first(&wb)))?;
    if names.len() < 2 || std::thread::available_parallelism().map_or(1, std::num::NonZero::get) < 2
    {
        return read_all(wb, read, on_sheet);
    }
    if guarded(|| Ok(is_own_output(&mut wb)))? {
        return Err(OWN_OUTPUT.into());
    }
    hidden.into_iter().for_each(&mut *on_sheet);
    std::thread::scope(|scope| {
        let (tx, rx) = std::sync::mpsc::sync_channel::<SheetRead>(0);
        let (names, open, read) = (&names, &open, &read);
        scope.spawn(move || {
            let Ok(mut own) = guarded(open) else { return };
            for name in names.iter().skip(1).step_by(2) {
                let result = guarded(|| read(&mut own, name));
                if tx
                    .send(SheetRead {
                        name: name.clone(),
                        result,
                        fatal: true,
                    })
                    .is_err()
                {
                    return;
                }
            }
        });
        for (i, name) in names.iter().enumerate() {
            let from_helper = if i % 2 == 1 { rx.recv().ok() } else { None };
            let sheet = from_helper.unwrap_or_else(|| SheetRead {
                name: name.clone(),
                result: guarded(|| read(&mut wb, name)),
                fatal: true,
            });
            on_sheet(sheet);
        }
    });
    Ok(())
}

/// What a file gets when its reader panics on it (a damaged file; calamine's bug, caught).
pub const READER_STOPPED: &str = "not a readable workbook: the reader stopped on damaged data in this file; re-save it from the spreadsheet program";

/// Runs a reader call; a panic inside it costs this file (or sheet) only.
fn guarded<T>(f: impl FnOnce() -> Result<T, String>) -> Result<T, String> {
    crate::contain::contain(f).unwrap_or_else(|_| Err(READER_STOPPED.into()))
}

/// A sheet with its percent-formatted cells re-typed.
fn marked(mut sheet: SheetRead, percent: &percent_cells::PercentCells) -> SheetRead {
    if let (Ok(raw), Some(blocks)) = (&mut sheet.result, percent.get(&sheet.name)) {
        percent_cells::mark(raw, blocks);
    }
    sheet
}

/// Opens a workbook and hands over each sheet as soon as it is read, so that only one sheet's
/// cells are held at a time. `Err` when the file itself cannot be opened.
pub fn read_workbook(
    path: &Path,
    format: Format,
    on_sheet: &mut dyn FnMut(SheetRead),
) -> Result<(), String> {
    if format != Format::Xls {
        zip_guard::check_zip(path)?;
    }
    match format {
        // streamed formats hold one sheet at a time, so two sheets can be read at once
        Format::Xlsx => read_all_two(
            || open_workbook::<Xlsx<_>, _>(path).map_err(describe),
            stream_xlsx,
            on_sheet,
        )?,
        Format::Xlsb => read_all_two(
            || open_workbook::<Xlsb<_>, _>(path).map_err(describe),
            stream_xlsb,
            on_sheet,
        )?,
        Format::Xls => {
            // checked first: calamine trusts the sizes an .xls states (see xls_guard)
            let checked = xls_guard::check(path)?;
            let percent = percent_cells::xls(&checked.stream, checked.biff8);
            drop(checked.stream);
            let container = Cursor::new(checked.container);
            let wb = guarded(|| Xls::new(container).map_err(describe))?;
            read_all(wb, dense_xls, &mut |s| on_sheet(marked(s, &percent)))?;
        }
        Format::Ods => {
            // scanned first: the scan refuses what would cost the reader the whole file
            let percent = ods_scan::ods(path)?;
            let wb = guarded(|| open_workbook::<Ods<_>, _>(path).map_err(describe))?;
            read_all(wb, dense, &mut |s| on_sheet(marked(s, &percent)))?;
        }
    }
    Ok(())
}

/// Reads the one sheet a side file (a calibration table, an answer key) holds: a CSV or TSV,
/// or the workbook's sheet whose name contains `hint` (else its first). The decimal mark is
/// the file's (a workbook's numbers are numbers). Errors name the file.
pub fn read_side_sheet(path: &Path, hint: &str) -> Result<(RawSheet, Decimal), String> {
    let source = path.display().to_string();
    let ext = path
        .extension()
        .and_then(|e| e.to_str())
        .unwrap_or("")
        .to_ascii_lowercase();
    if let Some(format) = Format::from_extension(&ext) {
        let mut sheets = Vec::new();
        read_workbook(path, format, &mut |s| sheets.push(s))
            .map_err(|e| format!("{source}: {e}"))?;
        let pick = sheets
            .iter()
            .position(|s| s.name.to_lowercase().contains(hint))
            .unwrap_or(0);
        let chosen = sheets
            .into_iter()
            .nth(pick)
            .ok_or_else(|| format!("{source}: the workbook has no sheets"))?;
        let sheet = chosen.result.map_err(|e| format!("{source}: {e}"))?;
        return Ok((sheet, Decimal::Point));
    }
    let bytes = crate::files::read(path).map_err(|e| format!("{source}: cannot read: {e}"))?;
    let d = super::delimited::read_delimited(&bytes, ext == "tsv")
        .map_err(|e| format!("{source}: {e}"))?;
    Ok((d.sheet, d.decimal))
}

#[cfg(test)]
mod tests {
    use super::*;

    /// A workbook of `n` sheets, sheet i holding i + 1 rows whose cells name their sheet.
    fn workbook(n: usize) -> tempfile::TempDir {
        let dir = tempfile::tempdir().unwrap();
        let mut wb = rust_xlsxwriter::Workbook::new();
        for i in 0..n {
            let ws = wb.add_worksheet();
            ws.set_name(format!("S{i}")).unwrap();
            for r in 0..=i as u32 {
                ws.write_string(r, 0, format!("sheet {i} row {r}")).unwrap();
                ws.write_number(r, 1, f64::from(r)).unwrap();
            }
        }
        wb.save(dir.path().join("b.xlsx")).unwrap();
        dir
    }

    fn read(path: &Path) -> Vec<(String, Vec<String>)> {
        let mut seen = Vec::new();
        read_workbook(path, Format::Xlsx, &mut |s| {
            let rows = s.result.unwrap().rows;
            let texts = rows.iter().map(|r| r.get(0).as_text().unwrap()).collect();
            seen.push((s.name, texts));
        })
        .unwrap();
        seen
    }

    #[test]
    fn sheets_read_on_two_threads_arrive_in_workbook_order() {
        for n in [1, 2, 5] {
            let dir = workbook(n);
            let seen = read(&dir.path().join("b.xlsx"));
            assert_eq!(seen.len(), n);
            for (i, (name, texts)) in seen.iter().enumerate() {
                assert_eq!(name, &format!("S{i}"));
                let want: Vec<String> = (0..=i).map(|r| format!("sheet {i} row {r}")).collect();
                assert_eq!(texts, &want);
            }
        }
    }

    #[test]
    fn percent_formats_and_the_value_they_show() {
        // ECMA-376 part 1, 18.8.31: built-in 9 is "0%", 10 is "0.00%"; digits after the point
        // before the percent sign are the decimals shown
        assert_eq!(percent_decimals("0%"), Some(0));
        assert_eq!(percent_decimals("0.0%"), Some(1));
        assert_eq!(percent_decimals("#,##0.00%;[Red]-0.00%"), Some(2));
        assert_eq!(percent_decimals("0.0\\%"), None);
        assert_eq!(percent_decimals("0.000"), None);
        // 0.7251 shown "0%" is 73 %, as the screen and a CSV saved as shown have it
        assert_eq!(as_shown(0.7251, 0), 0.73);
        assert_eq!(as_shown(0.728, 1), 0.728);
        assert_eq!(as_shown(0.0072, 1), 0.007);
    }
}
