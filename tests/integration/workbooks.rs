//! The graded workbooks read back with calamine, their statistics against section-stats.csv,
//! reproducibility, and a real spreadsheet program opening them.

use std::collections::HashMap;
use std::process::Command;

use calamine::{open_workbook, Data, Reader, Xlsx};

use crate::harness::{num, read_results, Fixture, Record};

fn grade(f: &Fixture, extra: &[&str]) {
    let mut args = vec!["--timestamp", "1795000000"];
    args.extend_from_slice(extra);
    let run = crate::harness::grade_sample(f, "out", &args);
    assert_eq!(run.code, 0, "{}", run.stderr);
}

fn cell_text(d: &Data) -> String {
    match d {
        Data::String(s) => s.clone(),
        Data::Float(v) => format!("{v}"),
        Data::Int(v) => format!("{v}"),
        other => format!("{other}"),
    }
}

#[test]
fn every_student_row_is_in_its_workbook_with_the_right_values() {
    let f = Fixture::new();
    grade(&f, &[]);
    let rows = f.results("out");
    let mut wb: Xlsx<_> = open_workbook(f.path("out/section-01-graded.xlsx")).unwrap();
    let names = wb.sheet_names();
    assert_eq!(names, vec!["Sec 01", "Statistics", "Provenance"]);
    let range = wb.worksheet_range("Sec 01").unwrap();
    // the assistant's title rows come first, then the header (the row with "Total")
    let header_at = range
        .rows()
        .position(|r| r.iter().any(|c| cell_text(c) == "Total"))
        .expect("a header row");
    let header: Vec<String> = range
        .rows()
        .nth(header_at)
        .unwrap()
        .iter()
        .map(cell_text)
        .collect();
    let col = |h: &str| {
        header
            .iter()
            .position(|x| x == h)
            .unwrap_or_else(|| panic!("no column {h}"))
    };
    let ours: Vec<&Record> = rows
        .iter()
        .filter(|r| r["source"].ends_with("section-01.xlsx"))
        .collect();
    assert_eq!(
        range.height() - 1 - header_at,
        ours.len(),
        "every student row is there"
    );
    for (r, want) in range.rows().skip(header_at + 1).zip(&ours) {
        assert_eq!(cell_text(&r[col("Student #")]), want["student_id"]);
        assert_eq!(cell_text(&r[col("Name")]), want["student_name"]);
        for (h, c) in [
            ("Recovery (%)", "recovery_pct"),
            ("Depression (°C)", "depression_c"),
            ("Total", "score"),
        ] {
            match (&r[col(h)], num(want, c)) {
                (Data::Float(v), Some(w)) => assert!((v - w).abs() < 1e-9, "{h}: {v} vs {w}"),
                (Data::Empty, None) => {}
                (got, w) => panic!("{h}: {got:?} vs {w:?}"),
            }
        }
        let flags = cell_text(&r[col("Flags")]);
        for code in want["flags"].split(';').filter(|c| !c.is_empty()) {
            assert!(flags.contains(code), "{flags} lacks {code}");
        }
        if !want["flags"].is_empty() {
            assert!(
                flags.starts_with('!') || flags.starts_with('?'),
                "a marker, not only colour: {flags}"
            );
        }
    }
}

#[test]
fn the_statistics_sheet_equals_section_stats_csv() {
    let f = Fixture::new();
    grade(&f, &[]);
    let csv = read_results(&f.path("out/section-stats.csv"));
    let by_key: HashMap<(String, String), &Record> = csv
        .iter()
        .map(|r| ((r["section"].clone(), r["measure"].clone()), r))
        .collect();
    let mut checked = 0;
    for book in [
        "section-01-graded.xlsx",
        "section-02-graded.xlsx",
        "section-03-graded.xlsx",
        "week12-late-entries-graded.xlsx",
    ] {
        let mut wb: Xlsx<_> = open_workbook(f.path("out").join(book)).unwrap();
        let range = wb.worksheet_range("Statistics").unwrap();
        // people's labels: "Recovery (%)" for recovery_pct, "95 % CI, high" for ci95_high
        let at = range
            .rows()
            .position(|r| cell_text(&r[0]) == "Section")
            .expect("the table's header");
        let labels: Vec<String> = range
            .rows()
            .nth(at)
            .unwrap()
            .iter()
            .map(cell_text)
            .collect();
        let shown = benchgrade::export::workbook_summary::STAT_LABELS;
        assert_eq!(labels[..shown.len()], shown);
        let header: Vec<&str> = benchgrade::stats::SUMMARY_COLUMNS
            .iter()
            .chain(&benchgrade::stats::LEFT_OUT_COLUMNS)
            .copied()
            .collect();
        let key = |label: &str| {
            benchgrade::model::Measure::summarised()
                .into_iter()
                .find(|m| m.column().header() == label)
                .map_or_else(
                    || panic!("{label} names no measure"),
                    |m| m.key().to_string(),
                )
        };
        for r in range.rows().skip(at + 1) {
            let (Data::String(section), Data::String(label)) = (&r[0], &r[1]) else {
                break;
            };
            let measure = key(label);
            let want = by_key[&(section.clone(), measure.clone())];
            for (i, h) in header.iter().enumerate().skip(2) {
                match (&r[i], num(want, h)) {
                    (Data::Float(v), Some(w)) => assert!(
                        (v - w).abs() <= 1e-12 * w.abs().max(1.0),
                        "{section} {measure} {h}: {v} vs {w}"
                    ),
                    (Data::Empty, None) => {}
                    (got, w) => panic!("{section} {measure} {h}: {got:?} vs {w:?}"),
                }
            }
            checked += 1;
        }
    }
    assert!(checked >= 20, "checked {checked} rows");
}

#[test]
fn a_fixed_timestamp_gives_byte_identical_workbooks() {
    let a = Fixture::new();
    let b = Fixture::new();
    grade(&a, &[]);
    grade(&b, &[]);
    for name in [
        "section-01-graded.xlsx",
        "section-02-graded.xlsx",
        "results.csv",
        "gradebook.csv",
        "section-stats.csv",
    ] {
        assert!(
            std::fs::read(a.path("out").join(name)).unwrap()
                == std::fs::read(b.path("out").join(name)).unwrap(),
            "{name} differs"
        );
    }
    let mut wb: Xlsx<_> = open_workbook(a.path("out/section-02-graded.xlsx")).unwrap();
    let prov = wb.worksheet_range("Provenance").unwrap();
    let text: Vec<String> = prov
        .rows()
        .flat_map(|r| r.iter().map(cell_text).collect::<Vec<_>>())
        .collect();
    // date -u -d @1795000000 (GNU coreutils): 2026-11-18 11:06:40
    assert!(text.iter().any(|t| t == "2026-11-18 11:06:40"), "{text:?}");
    assert!(
        text.iter()
            .any(|t| t.len() == 64 && t.chars().all(|c| c.is_ascii_hexdigit())),
        "a SHA-256 is listed"
    );
}

#[test]
fn split_sections_writes_one_workbook_per_section() {
    let f = Fixture::new();
    grade(&f, &["--split-sections"]);
    let books: Vec<String> = std::fs::read_dir(f.path("out"))
        .unwrap()
        .map(|e| e.unwrap().file_name().into_string().unwrap())
        .filter(|n| n.ends_with(".xlsx"))
        .collect();
    assert!(
        books
            .iter()
            .any(|b| b == "week12-late-entries-Sec_01-graded.xlsx"),
        "{books:?}"
    );
    assert!(books.len() >= 6, "{books:?}");
}

#[test]
fn a_spreadsheet_program_opens_the_workbook() {
    let soffice = ["soffice", "libreoffice"].into_iter().find(|s| {
        Command::new(s)
            .arg("--version")
            .output()
            .is_ok_and(|o| o.status.success())
    });
    let Some(soffice) =
        crate::harness::outside_program(soffice, "LibreOffice Calc", "libreoffice-calc-nogui")
    else {
        return;
    };
    let f = Fixture::new();
    grade(&f, &[]);
    let profile = f.path("lo-profile");
    let out = Command::new(soffice)
        .args([
            "--headless",
            "--norestore",
            &format!("-env:UserInstallation=file://{}", profile.display()),
            "--convert-to",
            "pdf",
            "--outdir",
        ])
        .arg(f.path("pdf"))
        .arg(f.path("out/section-01-graded.xlsx"))
        .output()
        .unwrap();
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let pdf = std::fs::read(f.path("pdf/section-01-graded.pdf")).expect("a PDF was written");
    assert!(pdf.starts_with(b"%PDF") && pdf.len() > 2000);
}

#[test]
fn no_section_label_can_stop_a_run() {
    // a label of every character class a sheet name or a chart range treats specially: quotes,
    // the range mark !, formula starts, the characters sheet names refuse, brackets, letters of
    // other alphabets, an emoji, a very long label (common practice for injection tests)
    let labels = [
        "=cmd|' /C calc'!A0",
        "a!B2",
        "'quoted'",
        "O'Neil's",
        "[x]:*?/\\",
        "+SUM(A1)",
        "-2+3",
        "@A1",
        "Séction Ω 第三",
        "🧪 lab",
        &"L".repeat(80),
    ];
    let mut csv = String::from(
        "Student ID,Name,Section,Crude mass (g),Recovered mass (g),Melting range (°C)\n",
    );
    for (k, label) in labels.iter().enumerate() {
        let quoted = format!("\"{}\"", label.replace('"', "\"\""));
        for j in 0..2 {
            csv.push_str(&format!(
                "{},Student {k}{j},{quoted},3.0{j},2.1{j},121-122\n",
                1000 + 10 * k + j
            ));
        }
    }
    let f = Fixture::new();
    f.write("odd.csv", csv);
    let run = f.run(&["grade", "odd.csv", "--out", "out", "--split-sections"]);
    assert_eq!(run.code, 0, "{}", run.stderr);
    let rows = f.results("out");
    assert_eq!(rows.len(), 2 * labels.len());
    for label in labels {
        // a label that begins like a formula is written guarded with ' (the README's rule)
        let guarded = format!("'{label}");
        assert!(
            rows.iter()
                .any(|r| r["section"] == label || r["section"] == guarded),
            "{label}"
        );
    }
    // every workbook written opens
    for entry in std::fs::read_dir(f.path("out")).unwrap() {
        let path = entry.unwrap().path();
        if path.extension().is_some_and(|e| e == "xlsx") {
            let wb: Xlsx<_> = open_workbook(&path).unwrap();
            assert!(!wb.sheet_names().is_empty(), "{}", path.display());
        }
    }
}
