//! Tests of `xls_guard`.

use super::*;
use calamine::Reader;

/// One BIFF record: type, length, body (MS-XLS 2.1.4).
fn record(kind: u16, body: &[u8]) -> Vec<u8> {
    let mut out = kind.to_le_bytes().to_vec();
    out.extend((body.len() as u16).to_le_bytes());
    out.extend(body);
    out
}

fn bof(sheet: bool) -> Vec<u8> {
    // BOF (MS-XLS 2.4.21): BIFF8 (0x0600), a workbook globals (5) or worksheet (0x10)
    let dt: u16 = if sheet { 0x10 } else { 5 };
    let mut b = 0x0600u16.to_le_bytes().to_vec();
    b.extend(dt.to_le_bytes());
    b.extend([0; 12]);
    record(rec::BOF, &b)
}

fn boundsheet(offset: u32, name: &str) -> Vec<u8> {
    // BoundSheet8 (MS-XLS 2.4.28): position, visible worksheet, a 1-byte-wide name
    let mut b = offset.to_le_bytes().to_vec();
    b.extend([0, 0, name.len() as u8, 0]);
    b.extend(name.as_bytes());
    record(rec::BOUNDSHEET, &b)
}

pub(super) fn number(row: u16, col: u16, v: f64) -> Vec<u8> {
    let mut b = row.to_le_bytes().to_vec();
    b.extend(col.to_le_bytes());
    b.extend(0u16.to_le_bytes());
    b.extend(v.to_le_bytes());
    record(rec::NUMBER, &b)
}

/// A workbook stream: the globals (with `extra` records), one sheet record per name, all
/// pointing at one sheet holding `cells` (records after its BOF).
fn stream(names: &[&str], extra: &[u8], cells: &[u8]) -> Vec<u8> {
    let sheet_records: usize = names.iter().map(|n| boundsheet(0, n).len()).sum();
    let globals_len = bof(false).len() + extra.len() + sheet_records + 4;
    let mut s = bof(false);
    s.extend(extra);
    for n in names {
        s.extend(boundsheet(globals_len as u32, n));
    }
    s.extend(record(rec::EOF, &[]));
    s.extend(bof(true));
    s.extend(cells);
    s.extend(record(rec::EOF, &[]));
    s
}

fn xls_file(stream: &[u8]) -> (tempfile::TempDir, std::path::PathBuf) {
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("t.xls");
    std::fs::write(&path, container(stream, true).unwrap()).unwrap();
    (dir, path)
}

fn refused(stream: &[u8]) -> String {
    let (_dir, path) = xls_file(stream);
    match check(&path) {
        Err(why) => why,
        Ok(_) => panic!("passed"),
    }
}

fn dimensions(rf: u32, rl: u32, cf: u16, cl: u16) -> Vec<u8> {
    // Dimensions (MS-XLS 2.4.90), BIFF8: rwMic, rwMac (one past the last row), colMic, colMac
    let mut b = rf.to_le_bytes().to_vec();
    b.extend(rl.to_le_bytes());
    b.extend(cf.to_le_bytes());
    b.extend(cl.to_le_bytes());
    b.extend([0, 0]);
    record(rec::DIMENSIONS, &b)
}

#[test]
fn a_plain_sheet_passes_and_is_read() {
    let mut cells = dimensions(0, 2, 0, 2);
    cells.extend(number(0, 0, 1.5));
    cells.extend(number(1, 1, 2.5));
    let (_dir, path) = xls_file(&stream(&["Sec 1"], &[], &cells));
    let checked = check(&path).unwrap();
    let mut wb = calamine::Xls::new(Cursor::new(checked.container)).unwrap();
    let range = wb.worksheet_range("Sec 1").unwrap();
    assert_eq!(range.get_value((1, 1)), Some(&calamine::Data::Float(2.5)));
}

#[test]
fn dimensions_of_two_to_the_32_rows_are_refused() {
    // rwMac 0xFFFFFFFF: calamine would reserve 2^32 x 256 cells
    let cells = dimensions(0, u32::MAX, 0, 256);
    let why = refused(&stream(&["Sec 1"], &[], &cells));
    assert!(why.contains("DIMENSIONS"), "{why}");
    // a last row before the first: calamine's subtraction would overflow
    let why = refused(&stream(&["Sec 1"], &[], &dimensions(10, 2, 0, 1)));
    assert!(why.contains("before its first"), "{why}");
}

#[test]
fn a_sheet_offset_past_the_stream_or_inside_a_record_is_refused() {
    let mut s = bof(false);
    s.extend(boundsheet(1 << 30, "Far"));
    s.extend(record(rec::EOF, &[]));
    let why = refused(&s);
    assert!(why.contains("past the end"), "{why}");
    let mut s = bof(false);
    s.extend(boundsheet(3, "Inside"));
    s.extend(record(rec::EOF, &[]));
    let why = refused(&s);
    assert!(why.contains("not the start of a record"), "{why}");
}

#[test]
fn many_sheet_records_sharing_one_sheet_are_refused_in_linear_time() {
    // 4,000 sheet records (the most allowed) naming one sheet of 3,000 records of one
    // cell: calamine would walk the sheet 4,000 times (12 million records)
    let names: Vec<String> = (0..4000).map(|i| format!("S{i}")).collect();
    let names: Vec<&str> = names.iter().map(String::as_str).collect();
    let cells: Vec<u8> = (0..3000).flat_map(|_| number(0, 0, 1.0)).collect();
    let started = std::time::Instant::now();
    let why = refused(&stream(&names, &[], &cells));
    assert!(why.contains("walk more than"), "{why}");
    assert!(started.elapsed() < std::time::Duration::from_secs(20));
}

#[test]
fn cells_at_opposite_corners_of_the_grid_are_refused() {
    // calamine lays a sheet out densely: 65,536 x 65,536 cells from two records
    let mut cells = number(0, 0, 1.0);
    cells.extend(number(u16::MAX, u16::MAX, 2.0));
    let why = refused(&stream(&["Sec 1"], &[], &cells));
    assert!(why.contains("grid cells"), "{why}");
}

#[test]
fn labels_declaring_long_text_in_short_records_are_refused() {
    // a LABEL (MS-XLS 2.4.148) declaring 65,535 characters and holding none: calamine
    // reserves the declared length for each
    let label = |row: u16| {
        let mut b = row.to_le_bytes().to_vec();
        b.extend([0, 0, 0, 0, 0xFF, 0xFF, 0]);
        record(rec::LABEL, &b)
    };
    let cells: Vec<u8> = (0..5000).flat_map(label).collect();
    let why = refused(&stream(&["Sec 1"], &[], &cells));
    assert!(why.contains("MiB"), "{why}");
}

#[test]
fn a_shared_string_named_by_many_cells_counts_once_for_each() {
    // SST (MS-XLS 2.4.265): one string of 60,000 one-byte characters; 2,000 LABELSST
    // cells (MS-XLS 2.4.149) name it, so calamine would copy it 2,000 times
    let mut sst = vec![0; 8];
    sst.extend(60_000u16.to_le_bytes());
    sst.push(0);
    let text = vec![b'a'; 60_000];
    let mut extra = record(rec::SST, &[&sst[..], &text[..8200]].concat());
    for part in text[8200..].chunks(8000) {
        extra.extend(record(rec::CONTINUE, &[&[0u8][..], part].concat()));
    }
    let cell = |row: u16| {
        let mut b = row.to_le_bytes().to_vec();
        b.extend([0, 0, 0, 0, 0, 0, 0, 0]);
        record(rec::LABELSST, &b)
    };
    let cells: Vec<u8> = (0..2000).flat_map(cell).collect();
    let why = refused(&stream(&["Sec 1"], &extra, &cells));
    assert!(why.contains("text"), "{why}");
    let few: Vec<u8> = (0..20).flat_map(cell).collect();
    let (_dir, path) = xls_file(&stream(&["Sec 1"], &extra, &few));
    assert!(check(&path).is_ok());
}

#[test]
fn a_formula_keeps_its_stored_result_and_loses_its_tokens() {
    // FORMULA (MS-XLS 2.4.127): row, col, xf, the cached value 7.5, flags, chn, then
    // cce = 3 and a PtgInt (0x1E) token
    let mut b = vec![1, 0, 0, 0, 0, 0];
    b.extend(7.5f64.to_le_bytes());
    b.extend([0, 0, 0, 0, 0, 0]);
    b.extend(3u16.to_le_bytes());
    b.extend([0x1E, 7, 0]);
    let cells = record(rec::FORMULA, &b);
    let (_dir, path) = xls_file(&stream(&["Sec 1"], &[], &cells));
    let checked = check(&path).unwrap();
    let mut wb = calamine::Xls::new(Cursor::new(checked.container)).unwrap();
    let range = wb.worksheet_range("Sec 1").unwrap();
    assert_eq!(range.get_value((1, 0)), Some(&calamine::Data::Float(7.5)));
    let formulas = wb.worksheet_formula("Sec 1").unwrap();
    // what calamine makes of no tokens: a short note, whatever the tokens were
    let text = formulas.get_value((1, 0)).unwrap();
    assert!(text.len() < 100 && !text.contains('7'), "{text}");
}

#[test]
fn an_encrypted_workbook_is_named_as_such() {
    // FilePass (MS-XLS 2.4.117) with wEncryptionType 1 (RC4): what follows is encrypted
    let extra = record(rec::FILEPASS, &[1, 0, 1, 0, 1, 0]);
    let why = refused(&stream(&["Sec 1"], &extra, &[]));
    assert!(why.contains("password-protected"), "{why}");
}

#[test]
fn defined_names_that_each_write_out_a_long_sheet_name_are_counted() {
    // a sheet named with 255 characters and 400,000 defined names (Lbl, MS-XLS 2.4.150) of
    // 20 bytes: calamine writes the sheet's name out in front of each name's reference
    let long = "S".repeat(255);
    let lbl = record(rec::LBL, &[0; 20]);
    let extra: Vec<u8> = (0..400_000).flat_map(|_| lbl.clone()).collect();
    let why = refused(&stream(&[long.as_str()], &extra, &[]));
    assert!(why.contains("text"), "{why}");
    // a few names cost little
    let few: Vec<u8> = (0..100).flat_map(|_| lbl.clone()).collect();
    let (_dir, path) = xls_file(&stream(&[long.as_str()], &few, &[]));
    assert!(check(&path).is_ok());
}
