//! No student name of the batch in what leaves the course (issue 20, item 8): a class whose
//! file is named after a student, whose bench cells, notes and a sheet name hold students'
//! names, and whose override's reason names two of them (quoted in the feedback), graded with
//! `--pseudonymize`. Every file meant to leave the course (the pseudonymized results, the
//! results.parquet written with pseudonyms, the cohort report in HTML and xlsx with its CSV
//! files, section-stats.csv) is read whole, every part of an xlsx unzipped and every text of
//! the parquet file read, and searched for every name and name part, whatever the case and
//! accents.

use std::io::Read;

use rust_xlsxwriter::Workbook;
use unicode_normalization::UnicodeNormalization;

use crate::harness::{read_results, Fixture};

/// Invented students; parts chosen so that none is part of an ordinary English word.
const NAMES: [&str; 5] = [
    "Odile Marchetti",
    "Tamsin Oyelaran",
    "José Núñez-Brightwater",
    "Velia Quorvath",
    "Ingrid Szabołcz",
];

const CLASS: &str = "Section,Student ID,Student name,Bench,Compound,Crude mass (g),Recovered mass (g),Water (mL),MP start,MP end,Notes\n\
Sec 01,2026101,Odile Marchetti,1,benzoic acid,2.82,1.87,57,119.9,120.7,\n\
Sec 01,2026102,Tamsin Oyelaran,Tamsin's bench,benzoic acid,2.59,2.09,55,119.7,121.1,shared a funnel with ODILE\n\
Sec 01,2026103,José Núñez-Brightwater,JOSE NUNEZ,benzoic acid,2.55,1.53,66,113.2,114.1,jose nunez weighed twice\n\
Sec 01,2026105,Ingrid Szabołcz,5,benzoic acid,2.71,Szabolcz,60,119.0,120.5,\n";

/// Lower case, accents off (NFD, combining marks dropped: Unicode Standard Annex 15, common
/// practice), and the one letter of these names that does not decompose written plainly.
fn fold(text: &str) -> String {
    text.nfd()
        .filter(|c| !unicode_normalization::char::is_combining_mark(*c))
        .flat_map(char::to_lowercase)
        .map(|c| if c == 'ł' { 'l' } else { c })
        .collect()
}

/// Every name and name part of 2 letters or more, folded.
fn needles() -> Vec<String> {
    let mut out = Vec::new();
    for n in NAMES {
        out.push(fold(n));
        out.extend(
            n.split(|c: char| !c.is_alphanumeric())
                .filter(|p| p.chars().count() >= 2)
                .map(fold),
        );
    }
    out
}

/// The texts of a file: an xlsx (a zip) part by part, results.parquet cell by cell, any other
/// file whole.
fn texts(path: &std::path::Path) -> Vec<(String, String)> {
    let shown = path.display().to_string();
    let bytes = std::fs::read(path).unwrap();
    if shown.ends_with(".xlsx") {
        let mut zip = zip::ZipArchive::new(std::io::Cursor::new(bytes)).unwrap();
        let mut out = Vec::new();
        for i in 0..zip.len() {
            let mut part = zip.by_index(i).unwrap();
            let mut text = String::new();
            part.read_to_string(&mut text).unwrap();
            let name = part.name().unwrap_or_default().to_string();
            out.push((format!("{shown}: {name}"), text));
        }
        return out;
    }
    let mut out = vec![(shown.clone(), String::from_utf8_lossy(&bytes).into_owned())];
    if shown.ends_with(".parquet") {
        out.push((format!("{shown} (cells)"), parquet_cells(path)));
    }
    out
}

#[cfg(feature = "parquet")]
fn parquet_cells(path: &std::path::Path) -> String {
    use polars::prelude::*;
    let df = ParquetReader::new(std::fs::File::open(path).unwrap())
        .finish()
        .unwrap();
    let mut out = String::new();
    for c in df.columns() {
        out.push_str(c.name());
        out.push('\n');
        if let Ok(s) = c.str() {
            for v in s.iter().flatten() {
                out.push_str(v);
                out.push('\n');
            }
        }
    }
    assert!(
        out.contains("p-"),
        "the parquet file's texts were read:\n{out}"
    );
    out
}

#[cfg(not(feature = "parquet"))]
fn parquet_cells(_: &std::path::Path) -> String {
    String::new()
}

#[test]
fn no_name_of_the_batch_leaves_with_the_pseudonyms_or_the_cohort_report() {
    let f = Fixture::new();
    f.write("in/Odile Marchetti lab.csv", CLASS);
    // a second section on a sheet named after its only student
    f.xlsx("in/late.xlsx", |wb: &mut Workbook| {
        let ws = wb.add_worksheet().set_name("Velia Quorvath").unwrap();
        ws.write_row(
            0,
            0,
            [
                "Student ID",
                "Student name",
                "Bench",
                "Compound",
                "Crude mass (g)",
                "Recovered mass (g)",
                "MP start",
                "MP end",
            ],
        )
        .unwrap();
        ws.write_row(
            1,
            0,
            [
                "2026104",
                "Velia Quorvath",
                "Marchetti's old bench",
                "benzoic acid",
            ],
        )
        .unwrap();
        ws.write_row(1, 4, [2.85, 1.9, 119.2, 120.9]).unwrap();
    });
    f.write(
        "overrides.csv",
        "student_id,criterion,points,adjust,reason,grader\n2026101,total,,+2,Marchetti redid the weighing with tamsin OYELARAN watching,K. Demir\n",
    );
    f.write("course.key", "an invented course key, long enough\n");
    let run = f.run(&[
        "grade",
        "in",
        "--overrides",
        "overrides.csv",
        "--pseudonymize",
        "--pseudonym-key",
        "course.key",
        "--out",
        "out",
        "--skip-handouts",
    ]);
    assert!(run.code <= 1, "{}", run.stderr);
    // the names did reach the run: results.csv (which stays in the course) holds them
    let inside = std::fs::read_to_string(f.path("out/results.csv")).unwrap();
    for n in NAMES {
        assert!(inside.contains(n), "{n} is in results.csv");
    }
    let leaving = [
        "results-pseudonymized.csv",
        "results.parquet",
        "cohort-report.html",
        "cohort-report.xlsx",
        "bench-bias.csv",
        "section-comparison.csv",
        "section-stats.csv",
    ];
    let needles = needles();
    for file in leaving {
        for (part, text) in texts(&f.path("out").join(file)) {
            let folded = fold(&text);
            for n in &needles {
                assert!(!folded.contains(n.as_str()), "{n:?} in {part}");
            }
        }
    }
    // what is left says what was there: a file pseudonym, names marked
    let rows = read_results(&f.path("out/results-pseudonymized.csv"));
    assert!(
        rows.iter().all(|r| r["source"].starts_with("f-")),
        "{rows:?}"
    );
    let odile = rows
        .iter()
        .find(|r| r["overrides"].contains("K. Demir"))
        .unwrap();
    assert!(
        odile["overrides"].contains("[name] redid the weighing with [name] [name] watching"),
        "{odile:?}"
    );
    assert!(odile["feedback"].contains("[name] redid"), "{odile:?}");
}
