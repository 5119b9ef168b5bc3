//! The committed corpus of bad input in tests/data/bad/ (made by its make.py; README.md there
//! says what each file is). Every file is graded beside a good one, with every output: each gets
//! a correct read or one clear message naming it, the contract's exit code, the good file still
//! graded, no panic, nothing written outside --out and the input unchanged.

use benchgrade::export::provenance::sha256_file;

use crate::harness::{flags, num, project_root, Fixture};

const GOOD: &str = "ID,Crude mass (g),Recovered mass (g),MP\ngood-1,3.0,2.1,121-122\n";

/// What grading one corpus file must give.
struct Expect {
    file: &'static str,
    /// The contract: 0 read, 1 some input unreadable.
    code: i32,
    /// Rows graded from this file.
    rows: usize,
    /// Words the message about this file must hold ("" when there is none).
    message: &'static str,
}

const CORPUS: &[Expect] = &[
    Expect {
        file: "truncated.xlsx",
        code: 1,
        rows: 0,
        message: "truncated or damaged",
    },
    Expect {
        file: "text-renamed.xlsx",
        code: 1,
        rows: 0,
        message: "plain text",
    },
    Expect {
        file: "empty.csv",
        code: 1,
        rows: 0,
        message: "empty",
    },
    Expect {
        file: "password-protected.xlsx",
        code: 1,
        rows: 0,
        message: "password-protected",
    },
    Expect {
        file: "wide-16384-columns.xlsx",
        code: 0,
        rows: 2,
        message: "",
    },
    Expect {
        file: "header-only.xlsx",
        code: 0,
        rows: 0,
        message: "no submissions",
    },
    Expect {
        file: "latin1.csv",
        code: 0,
        rows: 2,
        message: "",
    },
    Expect {
        file: "bom.csv",
        code: 0,
        rows: 1,
        message: "",
    },
    Expect {
        file: "semicolon-decimal-comma.csv",
        code: 0,
        rows: 2,
        message: "",
    },
    Expect {
        file: "formula-errors.xlsx",
        code: 0,
        rows: 3,
        message: "",
    },
    Expect {
        file: "sheet-name-illegal-in-files.xlsx",
        code: 0,
        rows: 2,
        message: "",
    },
    Expect {
        file: "opposite-corners.xlsx",
        code: 1,
        rows: 0,
        message: "no recognisable table",
    },
    Expect {
        file: "zip-bomb.xlsx",
        code: 1,
        rows: 0,
        message: "zip bomb",
    },
    Expect {
        file: "shared-strings-bomb.xlsx",
        code: 1,
        rows: 0,
        message: "xl/sharedStrings.xml would expand",
    },
    Expect {
        file: "shared-strings-bomb-understated.xlsx",
        code: 1,
        rows: 0,
        message: "larger than its declared",
    },
    Expect {
        file: "xls-dimensions-4-billion-rows.xls",
        code: 1,
        rows: 0,
        message: "DIMENSIONS record",
    },
    Expect {
        file: "xls-sheet-past-the-end.xls",
        code: 1,
        rows: 0,
        message: "past the end of the",
    },
    Expect {
        file: "xls-one-sheet-named-4000-times.xls",
        code: 1,
        rows: 0,
        message: "would walk more than",
    },
    Expect {
        file: "ods-spaces-1500000000.ods",
        code: 1,
        rows: 0,
        message: "runs of spaces (text:s)",
    },
    Expect {
        file: "ods-repeated-columns-and-rows.ods",
        code: 1,
        rows: 0,
        message: "span more than 4000000 cells",
    },
    Expect {
        file: "ods-sub-table-in-a-cell.ods",
        code: 0,
        rows: 2,
        message: "",
    },
    Expect {
        file: "ods-content-cut-inside-the-table.ods",
        code: 1,
        rows: 0,
        message: "ends before its elements are closed",
    },
    Expect {
        file: "xlsx-3-million-styles.xlsx",
        code: 1,
        rows: 0,
        message: "more than 65536 xf entries",
    },
];

/// Copies a corpus file into the fixture, grades it beside good.csv and checks what every file
/// must give; returns the results rows.
fn grade(e: &Expect) -> (Fixture, Vec<crate::harness::Record>) {
    let f = Fixture::new();
    let bytes = std::fs::read(project_root().join("tests/data/bad").join(e.file)).unwrap();
    let input = f.write(e.file, &bytes);
    f.write("good.csv", GOOD);
    let before = sha256_file(&input).expect("the input reads");
    let run = f.run(&[
        "grade",
        e.file,
        "good.csv",
        "--out",
        "out",
        "--split-sections",
    ]);
    let what = format!("{}: exit {}\n{}", e.file, run.code, run.stderr);
    assert!(!run.stderr.contains("panicked"), "{what}");
    assert_eq!(run.code, e.code, "{what}");
    if !e.message.is_empty() {
        let line = run
            .stderr
            .lines()
            .find(|l| l.contains(e.file) && l.contains(e.message));
        assert!(line.is_some(), "no message naming the file: {what}");
    }
    assert_eq!(
        sha256_file(&input).expect("the input reads"),
        before,
        "{} was modified",
        e.file
    );
    let mut here: Vec<String> = std::fs::read_dir(f.dir.path())
        .unwrap()
        .map(|d| d.unwrap().file_name().into_string().unwrap())
        .collect();
    here.sort();
    let mut expected = vec![e.file.to_string(), "good.csv".into(), "out".into()];
    expected.sort();
    assert_eq!(here, expected, "nothing is written outside --out");
    let rows = f.results("out");
    let good = rows.iter().filter(|r| r["source"] == "good.csv").count();
    assert_eq!(good, 1, "the good file is still graded: {what}");
    let from_file: Vec<_> = rows.into_iter().filter(|r| r["source"] == e.file).collect();
    assert_eq!(from_file.len(), e.rows, "{what}");
    (f, from_file)
}

#[test]
fn every_corpus_file_gets_a_read_or_a_message() {
    for e in CORPUS {
        grade(e);
    }
    // and the corpus holds nothing untested
    let mut files: Vec<String> = std::fs::read_dir(project_root().join("tests/data/bad"))
        .unwrap()
        .map(|d| d.unwrap().file_name().into_string().unwrap())
        .filter(|n| !n.ends_with(".py") && !n.ends_with(".md"))
        .collect();
    files.sort();
    let mut listed: Vec<String> = CORPUS.iter().map(|e| e.file.to_string()).collect();
    listed.sort();
    assert_eq!(files, listed);
}

fn expect(file: &str) -> &'static Expect {
    CORPUS.iter().find(|e| e.file == file).unwrap()
}

#[test]
fn text_encodings_and_decimal_commas_read_correctly() {
    let (_f, rows) = grade(expect("latin1.csv"));
    // Latin-1 bytes 0xE9 0xFA 0xF1 decode as é ú ñ (ISO/IEC 8859-1 code chart)
    assert_eq!(rows[0]["student_name"], "José Núñez");
    assert_eq!(rows[1]["student_name"], "Françoise Müller");
    let (_f, rows) = grade(expect("bom.csv"));
    assert_eq!(
        rows[0]["student_id"], "B-301",
        "the byte-order mark is not part of the id"
    );
    let (_f, rows) = grade(expect("semicolon-decimal-comma.csv"));
    assert_eq!(num(&rows[0], "crude_mass_g"), Some(3.05));
    assert_eq!(num(&rows[0], "mp_onset_c"), Some(120.7));
}

#[test]
fn a_percentage_in_a_sub_table_leaves_the_crude_mass_a_mass() {
    // make.py: B-101's crude-mass cell (3.02) holds a table with a percentage in the crude
    // column; the reader skips the sub-table, so the mass stays 3.02 g
    let (_f, rows) = grade(expect("ods-sub-table-in-a-cell.ods"));
    assert_eq!(num(&rows[0], "crude_mass_g"), Some(3.02));
    assert_eq!(num(&rows[1], "crude_mass_g"), Some(2.87));
}

#[test]
fn formula_errors_are_unreadable_values_and_stay_text() {
    let (f, rows) = grade(expect("formula-errors.xlsx"));
    for r in &rows {
        assert!(flags(r).contains(&"unreadable-value"), "{r:?}");
    }
    use calamine::{open_workbook_auto, Reader};
    let book = std::fs::read_dir(f.path("out"))
        .unwrap()
        .map(|d| d.unwrap().path())
        .find(|p| {
            p.file_name()
                .unwrap()
                .to_string_lossy()
                .starts_with("formula-errors")
        })
        .unwrap();
    let mut wb = open_workbook_auto(&book).unwrap();
    for name in wb.sheet_names() {
        let formulas = wb.worksheet_formula(&name).unwrap();
        assert!(
            formulas.used_cells().next().is_none(),
            "{name}: a student's formula text was written as a formula"
        );
    }
}

#[test]
fn a_sheet_name_illegal_in_file_names_gives_a_safe_file_name() {
    let (f, _) = grade(expect("sheet-name-illegal-in-files.xlsx"));
    for d in std::fs::read_dir(f.path("out")).unwrap() {
        let name = d.unwrap().file_name().into_string().unwrap();
        assert!(
            !name.contains(['/', '\\', '<', '>', '|', '"', ':', '*', '?']),
            "{name}"
        );
    }
}
