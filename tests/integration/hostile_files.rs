//! What a small hostile file can do (issue 20, items 5 to 7): each is made at test time from a
//! real class file or from nothing, graded beside a good file with the address space capped at
//! 1 GiB, and must cost only itself: one message naming it, exit code 1 (2 for a bad
//! baseline), the good file graded, no panic, no abort.

use std::io::{Read, Write};
use std::path::Path;

use benchgrade::ingest::{read_file, Event};

use crate::harness::{self, project_root, Fixture};

const GOOD: &str = "ID,Crude mass (g),Recovered mass (g),MP\ngood-1,3.0,2.1,121-122\n";

/// Grades `name` beside good.csv under a 1 GiB address-space cap and checks what any hostile
/// file must give; returns standard error.
pub fn costs_only_itself(f: &Fixture, name: &str, words: &str) -> String {
    f.write("good.csv", GOOD);
    let args = ["grade", "good.csv", name, "--out", "out"];
    let run = harness::run_capped(f.dir.path(), &args, 1024);
    assert_eq!(run.code, 1, "{name}: {}", run.stderr);
    assert!(
        run.stderr.contains(name) && run.stderr.contains(words),
        "{name}: wanted \"{words}\": {}",
        run.stderr
    );
    assert!(!run.stderr.contains("internal error"), "{}", run.stderr);
    let rows = f.results("out");
    assert!(rows.iter().any(|r| r["student_id"] == "good-1"), "{name}");
    run.stderr
}

/// The Workbook stream of the real class .xls (LibreOffice 7.4, tests/data/real-files).
fn class_stream() -> Vec<u8> {
    let path = project_root().join("tests/data/real-files/class.xls");
    let mut cf = cfb::open(path).unwrap();
    let mut s = Vec::new();
    cf.open_stream("/Workbook")
        .unwrap()
        .read_to_end(&mut s)
        .unwrap();
    s
}

/// A compound file holding `stream` as its Workbook.
fn xls_bytes(stream: &[u8]) -> Vec<u8> {
    let mut cf =
        cfb::CompoundFile::create_with_version(cfb::Version::V3, std::io::Cursor::new(Vec::new()))
            .unwrap();
    cf.create_stream("/Workbook")
        .unwrap()
        .write_all(stream)
        .unwrap();
    cf.flush().unwrap();
    cf.into_inner().into_inner()
}

/// Where each record of a BIFF stream starts, with its type (MS-XLS 2.1.4: type, length).
fn records(s: &[u8]) -> Vec<(usize, u16)> {
    let mut out = Vec::new();
    let mut at = 0;
    while at + 4 <= s.len() {
        out.push((at, u16::from_le_bytes([s[at], s[at + 1]])));
        at += 4 + usize::from(u16::from_le_bytes([s[at + 2], s[at + 3]]));
    }
    out
}

#[test]
fn an_xls_whose_dimensions_claim_two_to_the_32_rows_costs_only_itself() {
    // DIMENSIONS (MS-XLS 2.4.90, BIFF8): rwMic u32, rwMac u32 (one past the last row)
    let mut s = class_stream();
    let (at, _) = *records(&s).iter().find(|(_, k)| *k == 0x0200).unwrap();
    s[at + 8..at + 12].copy_from_slice(&u32::MAX.to_le_bytes());
    let f = Fixture::new();
    f.write("dims.xls", xls_bytes(&s));
    costs_only_itself(&f, "dims.xls", "DIMENSIONS");
}

#[test]
fn an_xls_whose_sheet_starts_past_the_stream_costs_only_itself() {
    // BoundSheet8 (MS-XLS 2.4.28): lbPlyPos, the sheet's BOF position in the stream
    let mut s = class_stream();
    let (at, _) = *records(&s).iter().find(|(_, k)| *k == 0x0085).unwrap();
    let past = (s.len() as u32 + 4096).to_le_bytes();
    s[at + 4..at + 8].copy_from_slice(&past);
    let f = Fixture::new();
    f.write("offset.xls", xls_bytes(&s));
    costs_only_itself(&f, "offset.xls", "past the end");
}

/// A small deterministic generator (xorshift64*, Vigna 2016): the same flips on every run.
struct Flips(u64);

impl Flips {
    fn next(&mut self) -> u64 {
        self.0 ^= self.0 >> 12;
        self.0 ^= self.0 << 25;
        self.0 ^= self.0 >> 27;
        self.0.wrapping_mul(0x2545_F491_4F6C_DD1D)
    }

    /// `bytes` with 1 to 4 bytes overwritten at random places.
    fn mutant(&mut self, bytes: &[u8]) -> Vec<u8> {
        let mut m = bytes.to_vec();
        for _ in 0..=self.next() % 4 {
            let i = (self.next() % m.len() as u64) as usize;
            m[i] = (self.next() & 0xFF) as u8;
        }
        m
    }
}

/// A panic a reader raises inside `benchgrade::contain` is caught there; this keeps the
/// test's own output free of its default message, as the binary's hook does.
fn quiet_contained_panics() {
    static ONCE: std::sync::Once = std::sync::Once::new();
    ONCE.call_once(|| {
        let previous = std::panic::take_hook();
        std::panic::set_hook(Box::new(move |info| {
            if !benchgrade::contain::active() {
                previous(info);
            }
        }));
    });
}

/// Reads `path` through the library's reader; (sheets read, problems), the file's events
/// ending with `FileDone` (a file with neither is named by the collector downstream). A panic
/// that escaped would fail the test; an abort would end it.
fn read(path: &Path) -> (usize, usize) {
    let (mut sheets, mut problems, mut done) = (0, 0, false);
    read_file(path, &mut |e| match e {
        Event::Sheet(_) => sheets += 1,
        Event::Problem(_) => problems += 1,
        Event::FileDone(_) => done = true,
    });
    assert!(done, "{}", path.display());
    (sheets, problems)
}

#[test]
fn four_hundred_bit_flips_of_a_real_xls_each_give_data_or_a_problem() {
    quiet_contained_panics();
    let original = std::fs::read(project_root().join("tests/data/real-files/class.xls")).unwrap();
    let dir = tempfile::tempdir().unwrap();
    let mut flips = Flips(0x5EED_2026_0020_0005);
    let (mut with_data, mut refused) = (0, 0);
    for i in 0..400 {
        let path = dir.path().join(format!("flip-{i}.xls"));
        std::fs::write(&path, flips.mutant(&original)).unwrap();
        let (sheets, problems) = read(&path);
        with_data += usize::from(sheets > 0);
        refused += usize::from(sheets == 0 && problems > 0);
    }
    // most flips land in cell data and still read; some break the file
    assert!(with_data > 100 && refused > 0, "{with_data} {refused}");
}

#[test]
fn a_huge_lock_wait_is_taken_as_a_day_not_a_panic() {
    // Duration::from_secs_f64 panics past u64 seconds; 1e300 must be clamped before it
    let f = Fixture::new();
    f.write("good.csv", GOOD);
    let args = ["grade", "good.csv", "--out", "out"];
    let run = harness::run_env(f.dir.path(), &args, &[("BENCHGRADE_LOCK_WAIT", "1e300")]);
    assert_eq!(run.code, 0, "{}", run.stderr);
    assert!(!run.stderr.contains("internal error"), "{}", run.stderr);
}

#[test]
fn damaged_baseline_parquet_files_are_messages_naming_the_file() {
    quiet_contained_panics();
    let f = Fixture::new();
    f.write("good.csv", GOOD);
    assert_eq!(f.run(&["grade", "good.csv", "--out", "old"]).code, 0);
    let original = std::fs::read(f.path("old/results.parquet")).unwrap();
    // the footer: thrift compact metadata, its length (4 bytes), "PAR1" (Apache Parquet
    // format, "File Format"); a field header byte is the id delta (high nibble) and the type
    // (low nibble, 1 and 2 the booleans: Thrift compact protocol spec). Each boolean field
    // header is made an i32 one, and each byte of the footer is flipped once more at random.
    let n = original.len();
    let meta_len = u32::from_le_bytes(original[n - 8..n - 4].try_into().unwrap()) as usize;
    let footer = n - 8 - meta_len.min(n - 8);
    let mut flips = Flips(0xBA5E_11AE_2026_0007);
    let dir = tempfile::tempdir().unwrap();
    let mut mutants: Vec<Vec<u8>> = (footer..n - 8)
        .filter(|&i| matches!(original[i] & 0x0F, 1 | 2))
        .map(|i| {
            let mut m = original.clone();
            m[i] = (m[i] & 0xF0) | 5;
            m
        })
        .collect();
    mutants.extend((0..200).map(|_| {
        let mut m = original.clone();
        let tail = flips.mutant(&m[footer..]);
        m[footer..].copy_from_slice(&tail);
        m
    }));
    let (mut refused, mut panicked) = (0, None);
    for (i, m) in mutants.iter().enumerate() {
        let path = dir.path().join(format!("flip-{i}.parquet"));
        std::fs::write(&path, m).unwrap();
        if let Err(why) = benchgrade::export::parquet::read_term(&path) {
            assert!(why.contains(&path.display().to_string()), "{why}");
            refused += 1;
            if why.contains("damaged") {
                // the reader panicked on it (a caught panic's message)
                panicked.get_or_insert(i);
            }
        }
    }
    assert!(refused > 0);
    let panicked = panicked.expect("a mutant the parquet reader panics on");
    // through the binary: exit code 2 (a bad baseline), one message naming the file
    f.write("bad/results.parquet", &mutants[panicked]);
    let args = ["grade", "good.csv", "--out", "out", "--baseline", "bad"];
    let run = harness::run_capped(f.dir.path(), &args, 1024);
    assert_eq!(run.code, 2, "{}", run.stderr);
    assert!(run.stderr.contains("results.parquet"), "{}", run.stderr);
    assert!(!run.stderr.contains("internal error"), "{}", run.stderr);
}

/// An .ods of one table "Sec 1": a header row (id, crude, recovered, melting range), then `rows`.
fn ods(f: &Fixture, name: &str, rows: &str) {
    let content = format!(
        r#"<?xml version="1.0" encoding="UTF-8"?><office:document-content xmlns:office="urn:oasis:names:tc:opendocument:xmlns:office:1.0" xmlns:table="urn:oasis:names:tc:opendocument:xmlns:table:1.0" xmlns:text="urn:oasis:names:tc:opendocument:xmlns:text:1.0" office:version="1.2"><office:body><office:spreadsheet><table:table table:name="Sec 1"><table:table-row><table:table-cell office:value-type="string"><text:p>ID</text:p></table:table-cell><table:table-cell office:value-type="string"><text:p>Crude (g)</text:p></table:table-cell><table:table-cell office:value-type="string"><text:p>Recovered (g)</text:p></table:table-cell><table:table-cell office:value-type="string"><text:p>MP</text:p></table:table-cell></table:table-row>{rows}</table:table></office:spreadsheet></office:body></office:document-content>"#
    );
    let file = std::fs::File::create(f.path(name)).unwrap();
    let mut zip = zip::ZipWriter::new(file);
    let deflated = zip::write::SimpleFileOptions::default()
        .compression_method(zip::CompressionMethod::Deflated);
    zip.start_file("mimetype", deflated).unwrap();
    zip.write_all(b"application/vnd.oasis.opendocument.spreadsheet")
        .unwrap();
    zip.start_file("META-INF/manifest.xml", deflated).unwrap();
    zip.write_all(br#"<?xml version="1.0" encoding="UTF-8"?><manifest:manifest xmlns:manifest="urn:oasis:names:tc:opendocument:xmlns:manifest:1.0" manifest:version="1.2"><manifest:file-entry manifest:full-path="/" manifest:media-type="application/vnd.oasis.opendocument.spreadsheet"/><manifest:file-entry manifest:full-path="content.xml" manifest:media-type="text/xml"/></manifest:manifest>"#)
        .unwrap();
    zip.start_file("content.xml", deflated).unwrap();
    zip.write_all(content.as_bytes()).unwrap();
    zip.finish().unwrap();
}

const STUDENT: &str =
    r#"<table:table-cell office:value-type="string"><text:p>s1</text:p></table:table-cell>"#;
const REST: &str = r#"<table:table-cell office:value-type="float" office:value="2.1"/><table:table-cell office:value-type="string"><text:p>121-122</text:p></table:table-cell>"#;

#[test]
fn an_ods_writing_out_a_billion_spaces_costs_only_itself() {
    // OpenDocument 1.2 part 3, 6.1.3: <text:s text:c="n"/> stands for n spaces
    let f = Fixture::new();
    let name = r#"<table:table-cell office:value-type="string"><text:p>s<text:s text:c="1500000000"/>1</text:p></table:table-cell>"#;
    let crude = r#"<table:table-cell office:value-type="float" office:value="3.0"/>"#;
    ods(
        &f,
        "spaces.ods",
        &format!("<table:table-row>{name}{crude}{REST}</table:table-row>"),
    );
    costs_only_itself(&f, "spaces.ods", "text:s");
}

#[test]
fn an_ods_repeating_columns_and_rows_costs_only_itself() {
    // OpenDocument 1.2 part 1, 9.1.3 and 9.1.4: columns and rows repeated; 16,384 columns of a
    // value in 5,000 rows (the most rows of data allowed) is 82 million cells from 300 bytes
    let f = Fixture::new();
    let wide = r#"<table:table-cell office:value-type="float" office:value="1" table:number-columns-repeated="16384"/>"#;
    ods(
        &f,
        "repeats.ods",
        &format!(r#"<table:table-row table:number-rows-repeated="5000">{wide}</table:table-row>"#),
    );
    costs_only_itself(&f, "repeats.ods", "cells");
}

#[test]
fn an_ods_with_a_forty_megabyte_attribute_costs_only_itself() {
    // the reader holds a whole tag in memory: 800 MB took 2.5 GB; any tag past 4 MiB is
    // refused while it streams, so 40 MB shows the same
    let f = Fixture::new();
    let value = "7".repeat(40 << 20);
    let cell =
        format!(r#"<table:table-cell office:value-type="string" office:string-value="{value}"/>"#);
    ods(
        &f,
        "attribute.ods",
        &format!("<table:table-row>{cell}</table:table-row>"),
    );
    costs_only_itself(&f, "attribute.ods", "longer than 4 MiB");
}

#[test]
fn a_percentage_in_a_sub_table_of_a_cell_stays_out_of_the_student_s_row() {
    // a crude mass of 3.10 whose cell holds a table (OpenDocument 1.2 part 1, 9.1.4: a
    // table:table may be cell content) with a percentage in it: the reader skips the
    // sub-table, and the mass must stay 3.10 g, not become "the percentage 310"
    let f = Fixture::new();
    let crude = r#"<table:table-cell office:value-type="float" office:value="3.10"><table:table table:name="note"><table:table-row><table:table-cell/><table:table-cell office:value-type="percentage" office:value="0.5"/></table:table-row></table:table></table:table-cell>"#;
    ods(
        &f,
        "sub.ods",
        &format!("<table:table-row>{STUDENT}{crude}{REST}</table:table-row>"),
    );
    let run = f.run(&["grade", "sub.ods", "--out", "out"]);
    assert_eq!(run.code, 0, "{}", run.stderr);
    let rows = f.results("out");
    assert_eq!(harness::num(&rows[0], "crude_mass_g"), Some(3.1));
    // 2.1 of 3.10 g: 67.742 % (hand-worked)
    let recovery = harness::num(&rows[0], "recovery_pct").unwrap();
    assert!((recovery - 67.742).abs() < 0.001, "{recovery}");
}

#[test]
fn an_xlsx_listing_three_million_styles_costs_only_itself() {
    // a class workbook whose styles.xml lists 3 million empty cell formats (<xf/>: 15 MB that
    // deflate to a few KB); the reader builds a full style for each, on each of two threads
    let f = Fixture::new();
    let class = f.xlsx("class.xlsx", |wb| {
        let ws = wb.add_worksheet();
        for (c, h) in ["ID", "Crude mass (g)", "Recovered mass (g)", "MP"]
            .iter()
            .enumerate()
        {
            ws.write_string(0, c as u16, *h).unwrap();
        }
        ws.write_string(1, 0, "s1").unwrap();
        ws.write_number(1, 1, 3.0).unwrap();
        ws.write_number(1, 2, 2.1).unwrap();
        ws.write_string(1, 3, "121-122").unwrap();
    });
    let mut source = zip::ZipArchive::new(std::fs::File::open(&class).unwrap()).unwrap();
    let out = std::fs::File::create(f.path("styles.xlsx")).unwrap();
    let mut z = zip::ZipWriter::new(out);
    for i in 0..source.len() {
        let entry = source.by_index_raw(i).unwrap();
        if entry.name().unwrap() != "xl/styles.xml" {
            z.raw_copy_file(entry).unwrap();
        }
    }
    let deflated = zip::write::SimpleFileOptions::default()
        .compression_method(zip::CompressionMethod::Deflated);
    z.start_file("xl/styles.xml", deflated).unwrap();
    let xfs = "<xf/>".repeat(3_000_000);
    let styles = format!(
        r#"<?xml version="1.0" encoding="UTF-8"?><styleSheet xmlns="http://schemas.openxmlformats.org/spreadsheetml/2006/main"><cellXfs count="3000000">{xfs}</cellXfs></styleSheet>"#
    );
    z.write_all(styles.as_bytes()).unwrap();
    z.finish().unwrap();
    assert!(std::fs::metadata(f.path("styles.xlsx")).unwrap().len() < 1 << 20);
    costs_only_itself(&f, "styles.xlsx", "xf entries");
}

#[test]
fn a_panic_inside_calamine_is_that_file_s_problem_not_an_internal_error() {
    // the real class .xls with its sheet record (BoundSheet8, MS-XLS 2.4.28) cut to the 4
    // bytes of the sheet's position: the pre-scan finds nothing over budget, and calamine 0.38
    // indexes the missing visibility byte and panics. The panic is caught inside the reader
    // (`benchgrade::contain`), the binary's hook stays quiet, and the good file is graded.
    let s = class_stream();
    let recs = records(&s);
    let (first, _) = *recs.iter().find(|(_, k)| *k == 0x0085).unwrap();
    let cut = usize::from(u16::from_le_bytes([s[first + 2], s[first + 3]])) - 4;
    let mut out = Vec::new();
    for (i, &(at, kind)) in recs.iter().enumerate() {
        let end = recs.get(i + 1).map_or(s.len(), |r| r.0);
        if kind == 0x0085 {
            let pos = u32::from_le_bytes(s[at + 4..at + 8].try_into().unwrap()) - cut as u32;
            if at == first {
                out.extend([0x85, 0x00, 4, 0]);
                out.extend(pos.to_le_bytes());
            } else {
                out.extend(&s[at..at + 4]);
                out.extend(pos.to_le_bytes());
                out.extend(&s[at + 8..end]);
            }
        } else {
            out.extend(&s[at..end]);
        }
    }
    let f = Fixture::new();
    f.write("cut.xls", xls_bytes(&out));
    let stderr = costs_only_itself(&f, "cut.xls", "the reader stopped on damaged data");
    assert!(!stderr.contains("panicked"), "{stderr}");
}
