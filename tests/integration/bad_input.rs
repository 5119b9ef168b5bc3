//! Bad input, faults and attacks: each gets a correct read or one clear message naming the
//! file, the exit code of the contract, and every other file still graded. No panic anywhere.

use std::io::Write;

use rust_xlsxwriter::Workbook;

use crate::harness::{self, project_root, Fixture};

const GOOD: &str = "ID,Crude mass (g),Recovered mass (g),MP\ns1,3.0,2.1,121-122\n";

/// Grades `bad` beside a good file; returns (exit code, stderr, rows graded).
fn grade_with(f: &Fixture, bad: &str) -> (i32, String, usize) {
    f.write("good.csv", GOOD);
    let run = f.run(&["grade", bad, "good.csv", "--out", "out", "--skip-workbooks"]);
    assert!(!run.stderr.contains("panicked"), "{}", run.stderr);
    let rows = if f.path("out/results.csv").exists() {
        f.results("out").len()
    } else {
        0
    };
    (run.code, run.stderr, rows)
}

/// Names of temporary files (`.partial`) left in `dir`.
fn partials(dir: &std::path::Path) -> Vec<String> {
    std::fs::read_dir(dir)
        .unwrap()
        .map(|e| e.unwrap().file_name().to_string_lossy().into_owned())
        .filter(|n| n.ends_with(".partial"))
        .collect()
}

fn zip_of(f: &Fixture, name: &str, entries: &[(&str, &[u8])]) {
    let file = std::fs::File::create(f.path(name)).unwrap();
    let mut zip = zip::ZipWriter::new(file);
    for (path, bytes) in entries {
        zip.start_file(
            *path,
            zip::write::SimpleFileOptions::default()
                .compression_method(zip::CompressionMethod::Deflated),
        )
        .unwrap();
        zip.write_all(bytes).unwrap();
    }
    zip.finish().unwrap();
}

#[test]
fn a_password_protected_workbook_is_named_as_such() {
    let f = Fixture::new();
    // an OOXML workbook encrypted with a password is an OLE2 compound file holding an
    // "EncryptionInfo" stream (MS-OFFCRYPTO); this is a minimal stand-in with that marker
    let mut bytes = vec![0xD0, 0xCF, 0x11, 0xE0, 0xA1, 0xB1, 0x1A, 0xE1];
    bytes.resize(512, 0);
    bytes.extend("EncryptionInfo".encode_utf16().flat_map(u16::to_le_bytes));
    bytes.resize(4096, 0);
    f.write("locked.xlsx", bytes);
    let (code, err, rows) = grade_with(&f, "locked.xlsx");
    assert_eq!((code, rows), (1, 1));
    assert!(
        err.contains("locked.xlsx") && err.contains("password-protected"),
        "{err}"
    );
}

#[test]
fn a_zip_bomb_is_refused_before_it_is_opened() {
    let f = Fixture::new();
    zip_of(
        &f,
        "bomb.xlsx",
        &[
            ("[Content_Types].xml", b"<Types/>"),
            ("xl/worksheets/sheet1.xml", b"<worksheet/>"),
        ],
    );
    // declare about 4 GiB for each entry in the central directory (PKWARE APPNOTE 4.3.12:
    // signature 0x02014b50, uncompressed size at offset 24), as a bomb's directory would
    let mut bytes = std::fs::read(f.path("bomb.xlsx")).unwrap();
    let sig = [0x50, 0x4b, 0x01, 0x02];
    let starts: Vec<usize> = bytes
        .windows(4)
        .enumerate()
        .filter(|(_, w)| *w == sig)
        .map(|(i, _)| i)
        .collect();
    assert_eq!(starts.len(), 2);
    for i in starts {
        bytes[i + 24..i + 28].copy_from_slice(&0xFFFF_FF00u32.to_le_bytes());
    }
    f.write("bomb.xlsx", bytes);
    let (code, err, rows) = grade_with(&f, "bomb.xlsx");
    assert_eq!((code, rows), (1, 1));
    assert!(
        err.contains("bomb.xlsx") && err.contains("zip bomb"),
        "{err}"
    );
}

#[test]
fn cells_at_opposite_corners_cost_what_they_hold() {
    let f = Fixture::new();
    f.xlsx("corners.xlsx", |wb: &mut Workbook| {
        let ws = wb.add_worksheet();
        ws.write_string(0, 0, "ID").unwrap();
        ws.write_string(1_048_575, 16_383, "far corner").unwrap();
    });
    f.write("good.csv", GOOD);
    // a dense grid of these two cells would be 2^34 cells (hundreds of GB); within 1 GiB of
    // address space the run must still finish
    let args = ["grade", "corners.xlsx", "good.csv", "--out", "out"];
    let run = harness::run_capped(f.dir.path(), &args, 1024);
    // no table in it: a clear message, and the good file graded
    assert_eq!(run.code, 1, "{}", run.stderr);
    assert_eq!(f.results("out").len(), 1);
    assert!(run.stderr.contains("corners.xlsx"), "{}", run.stderr);
}

#[test]
fn a_sheet_with_16384_columns_and_a_header_only_sheet() {
    let f = Fixture::new();
    f.xlsx("wide.xlsx", |wb: &mut Workbook| {
        let ws = wb.add_worksheet().set_name("Wide").unwrap();
        ws.write_row(0, 0, ["ID", "Crude mass (g)", "Recovered mass (g)", "MP"])
            .unwrap();
        for c in 4..16_384u16 {
            ws.write_number(0, c, f64::from(c)).unwrap();
        }
        ws.write_string(1, 0, "w1").unwrap();
        ws.write_number(1, 1, 3.0).unwrap();
        ws.write_number(1, 2, 2.0).unwrap();
        ws.write_string(1, 3, "121-122").unwrap();
        let h = wb.add_worksheet().set_name("Header only").unwrap();
        h.write_row(0, 0, ["ID", "Crude mass (g)", "Recovered mass (g)", "MP"])
            .unwrap();
    });
    let (code, err, rows) = grade_with(&f, "wide.xlsx");
    assert_eq!(code, 0, "{err}");
    assert_eq!(rows, 2, "w1 and the good file's row");
}

#[test]
fn illegal_sheet_names_and_formula_text_stay_inside_the_output_folder() {
    let f = Fixture::new();
    f.xlsx("names.xlsx", |wb: &mut Workbook| {
        // legal in a sheet name, not in a file name; and a section that tries to climb out
        let ws = wb.add_worksheet().set_name("A<b>|\"c\"").unwrap();
        ws.write_row(
            0,
            0,
            [
                "ID",
                "Name",
                "Section",
                "Crude mass (g)",
                "Recovered mass (g)",
                "MP",
            ],
        )
        .unwrap();
        ws.write_string(1, 0, "=1+1").unwrap();
        ws.write_string(1, 1, "@SUM(A1:A9)").unwrap();
        ws.write_string(1, 2, "../../x").unwrap();
        ws.write_number(1, 3, 3.0).unwrap();
        ws.write_number(1, 4, 2.0).unwrap();
        ws.write_string(1, 5, "121-122").unwrap();
    });
    let run = f.run(&["grade", "names.xlsx", "--out", "out", "--split-sections"]);
    assert_eq!(run.code, 0, "{}", run.stderr);
    let written: Vec<String> = std::fs::read_dir(f.path("out"))
        .unwrap()
        .map(|e| e.unwrap().file_name().into_string().unwrap())
        .collect();
    assert!(written.iter().all(|n| !n.contains('/')), "{written:?}");
    assert!(
        !f.path("x-graded.xlsx").exists()
            && !f
                .dir
                .path()
                .parent()
                .unwrap()
                .join("x-graded.xlsx")
                .exists()
    );
    let rows = f.results("out");
    assert_eq!(rows[0]["student_id"], "'=1+1", "neutralised in CSV");
    let book = crate::harness::read_results(&f.path("out/gradebook.csv"));
    assert_eq!(book[0]["student_name"], "'@SUM(A1:A9)");
    // in the xlsx the text stays text, never a formula
    use calamine::{open_workbook, Data, Reader, Xlsx};
    let name = written
        .iter()
        .find(|n| n.ends_with("-graded.xlsx"))
        .unwrap();
    let mut wb: Xlsx<_> = open_workbook(f.path("out").join(name)).unwrap();
    let sheet = wb.sheet_names()[0].clone();
    assert_eq!(
        wb.worksheet_range(&sheet).unwrap().get((1, 0)),
        Some(&Data::String("=1+1".into()))
    );
    let formulas = wb.worksheet_formula(&sheet).unwrap();
    assert!(formulas.used_cells().next().is_none(), "no formula written");
}

#[test]
fn inputs_are_unchanged_and_a_failed_run_keeps_the_previous_outputs() {
    use benchgrade::export::provenance::sha256_file;
    let f = Fixture::new();
    let sample = project_root().join("sample-data");
    let before: Vec<(std::path::PathBuf, String)> = std::fs::read_dir(&sample)
        .unwrap()
        .map(|e| e.unwrap().path())
        .map(|p| {
            let h = sha256_file(&p).unwrap();
            (p, h)
        })
        .collect();
    let out = f.path("out");
    let run = crate::harness::run_in(
        &project_root(),
        &[
            "grade",
            sample.to_str().unwrap(),
            "--out",
            out.to_str().unwrap(),
        ],
    );
    assert_eq!(run.code, 0);
    for (p, h) in &before {
        assert_eq!(&sha256_file(p).unwrap(), h, "{} changed", p.display());
    }
    let previous = std::fs::read(out.join("results.csv")).unwrap();
    // a run stopped before it commits (here: an override naming nobody) leaves the old files
    f.write(
        "o.csv",
        "student_id,criterion,points,reason,grader\nnobody,total,1,x,RO\n",
    );
    let o = f.path("o.csv");
    let failed = crate::harness::run_in(
        &project_root(),
        &[
            "grade",
            sample.to_str().unwrap(),
            "--out",
            out.to_str().unwrap(),
            "--overrides",
            o.to_str().unwrap(),
        ],
    );
    assert_eq!(failed.code, 2);
    assert_eq!(std::fs::read(out.join("results.csv")).unwrap(), previous);
    let leftovers = partials(&out);
    assert!(leftovers.is_empty(), "{leftovers:?}");
}

#[test]
fn an_output_that_would_overwrite_an_input_is_refused() {
    let f = Fixture::new();
    f.write("out/results.csv", GOOD);
    let before = std::fs::read(f.path("out/results.csv")).unwrap();
    let run = f.run(&["grade", "out/results.csv", "--out", "out"]);
    assert_eq!(run.code, 2, "{}", run.stderr);
    assert!(
        run.stderr.contains("refusing to write") && run.stderr.contains("results.csv"),
        "{}",
        run.stderr
    );
    assert_eq!(
        std::fs::read(f.path("out/results.csv")).unwrap(),
        before,
        "the input is untouched"
    );
    f.write("class.csv", GOOD);
    let named = f.run(&["grade", "class.csv", "--out", "class.csv"]);
    assert_eq!(named.code, 2, "--out naming a file is refused");
}

#[test]
fn a_graded_workbook_that_would_overwrite_an_input_is_refused() {
    let f = Fixture::new();
    f.write("a.csv", GOOD);
    assert_eq!(f.run(&["grade", "a.csv", "--out", "out"]).code, 0);
    // last run's graded workbook given as an input: this run would save a.csv's workbook over it
    let input = f.path("out/a-graded.xlsx");
    let before = std::fs::read(&input).unwrap();
    let run = f.run(&["grade", "a.csv", "out/a-graded.xlsx", "--out", "out"]);
    assert_eq!(run.code, 2, "{}", run.stderr);
    assert!(
        run.stderr.contains("refusing to write") && run.stderr.contains("a-graded.xlsx"),
        "{}",
        run.stderr
    );
    assert_eq!(
        std::fs::read(&input).unwrap(),
        before,
        "the input is untouched"
    );
    let leftovers = partials(&f.path("out"));
    assert!(leftovers.is_empty(), "{leftovers:?}");
    // without graded workbooks nothing would be overwritten: the batch is graded, and the old
    // workbook is skipped as one benchgrade wrote (exit code 1, not 2)
    let skipping = f.run(&[
        "grade",
        "a.csv",
        "out/a-graded.xlsx",
        "--out",
        "out",
        "--skip-workbooks",
    ]);
    assert_eq!(skipping.code, 1, "{}", skipping.stderr);
    assert!(!skipping.stderr.contains("refusing"), "{}", skipping.stderr);
    assert!(
        skipping
            .stderr
            .contains("a graded workbook benchgrade wrote"),
        "{}",
        skipping.stderr
    );
    assert_eq!(f.results("out").len(), 1, "a.csv is graded");
    assert_eq!(std::fs::read(&input).unwrap(), before);
}

#[test]
fn a_run_killed_mid_write_leaves_the_previous_outputs() {
    use benchgrade::export::provenance::sha256_file;
    let f = Fixture::new();
    f.write("small.csv", GOOD);
    assert_eq!(f.run(&["grade", "small.csv", "--out", "out"]).code, 0);
    let outputs = |dir: &std::path::Path| -> Vec<(String, String)> {
        let mut v: Vec<(String, String)> = std::fs::read_dir(dir)
            .unwrap()
            .map(|e| e.unwrap().path())
            .filter(|p| !p.to_string_lossy().ends_with(".partial") && p.is_file())
            .map(|p| {
                let h = sha256_file(&p).unwrap();
                (p.file_name().unwrap().to_string_lossy().into_owned(), h)
            })
            .collect();
        v.sort();
        v
    };
    let before = outputs(&f.path("out"));
    // a class big enough that the run is still writing when it is killed
    let mut big = String::from("ID,Section,Crude mass (g),Recovered mass (g),MP\n");
    for i in 0..40_000 {
        big.push_str(&format!(
            "s{i},S{},3.0,2.{},120.{}-121.8\n",
            i % 6,
            i % 9,
            i % 7
        ));
    }
    f.write("big.csv", big);
    let mut child = std::process::Command::new(env!("CARGO_BIN_EXE_benchgrade"))
        .args(["grade", "big.csv", "--out", "out", "--quiet"])
        .current_dir(f.dir.path())
        .stdout(std::process::Stdio::null())
        .stderr(std::process::Stdio::null())
        .spawn()
        .unwrap();
    // wait until some temporary output holds rows, then kill the process outright (SIGKILL);
    // the first pass's record of the inputs (`.first-pass.*`) is not an output
    let started = std::time::Instant::now();
    let writing = || {
        std::fs::read_dir(f.path("out")).unwrap().any(|e| {
            let e = e.unwrap();
            let name = e.file_name().to_string_lossy().into_owned();
            name.ends_with(".partial")
                && !name.starts_with(".first-pass.")
                && e.metadata().is_ok_and(|m| m.len() > 100_000)
        })
    };
    while !writing() && started.elapsed() < std::time::Duration::from_secs(120) {
        assert!(
            child.try_wait().unwrap().is_none(),
            "finished before it could be killed"
        );
        std::thread::sleep(std::time::Duration::from_millis(2));
    }
    assert!(writing(), "never saw a temporary output being written");
    child.kill().unwrap();
    child.wait().unwrap();
    assert_eq!(outputs(&f.path("out")), before, "a finished output changed");
    // the next run sweeps the dead run's temporary files and writes its own outputs
    assert_eq!(f.run(&["grade", "small.csv", "--out", "out"]).code, 0);
    let leftovers = partials(&f.path("out"));
    assert!(leftovers.is_empty(), "{leftovers:?}");
}

/// An .ods that repeats a row of data a million times (a few hundred bytes that a reader
/// expands into a million students) or holds a number that is not one is refused with the cell
/// named, before the reader opens it; the other file is graded (an adversarial trial: 1.7 GB
/// and no output, and "Parse float error" naming no cell).
#[test]
fn an_ods_that_would_cost_the_reader_the_file_is_refused_with_its_cell() {
    let f = Fixture::new();
    let ods = |name: &str, rows: &str| {
        let content = format!(
            r#"<?xml version="1.0" encoding="UTF-8"?><office:document-content xmlns:office="urn:oasis:names:tc:opendocument:xmlns:office:1.0" xmlns:table="urn:oasis:names:tc:opendocument:xmlns:table:1.0" xmlns:text="urn:oasis:names:tc:opendocument:xmlns:text:1.0" office:version="1.2"><office:body><office:spreadsheet><table:table table:name="Sec 1"><table:table-row><table:table-cell office:value-type="string"><text:p>ID</text:p></table:table-cell><table:table-cell office:value-type="string"><text:p>Crude (g)</text:p></table:table-cell><table:table-cell office:value-type="string"><text:p>Recovered (g)</text:p></table:table-cell><table:table-cell office:value-type="string"><text:p>MP</text:p></table:table-cell></table:table-row>{rows}</table:table></office:spreadsheet></office:body></office:document-content>"#
        );
        zip_of(
            &f,
            name,
            &[
                (
                    "mimetype",
                    b"application/vnd.oasis.opendocument.spreadsheet",
                ),
                ("content.xml", content.as_bytes()),
            ],
        );
    };
    let row = |value: &str| {
        format!(
            r#"<table:table-cell office:value-type="string"><text:p>s9</text:p></table:table-cell><table:table-cell office:value-type="float" office:value="{value}"><text:p>3</text:p></table:table-cell><table:table-cell office:value-type="float" office:value="2.1"><text:p>2.1</text:p></table:table-cell><table:table-cell office:value-type="string"><text:p>121-122</text:p></table:table-cell>"#
        )
    };
    ods(
        "copies.ods",
        &format!(
            r#"<table:table-row table:number-rows-repeated="1048575">{}</table:table-row>"#,
            row("3")
        ),
    );
    ods(
        "not-a-number.ods",
        &format!("<table:table-row>{}</table:table-row>", row("abc")),
    );
    for (file, says) in [
        (
            "copies.ods",
            "cell A2: a row holding data is repeated 1048575 times",
        ),
        (
            "not-a-number.ods",
            "cell B2: office:value \"abc\" is not a number",
        ),
    ] {
        let (code, stderr, rows) = grade_with(&f, file);
        assert_eq!(code, 1, "{stderr}");
        assert!(stderr.contains(says), "{stderr}");
        assert_eq!(rows, 1, "the good file is graded");
    }
}
