//! `benchgrade template --key FILE`: the entry workbooks' unknown code and identification
//! columns offer the answer key's codes and compounds as drop-down lists, read back from the
//! saved file's sheet XML; a sheet filled in from them grades with no mapping file, each
//! identification checked against the key. The roster and the key are invented.

use crate::entry_sheets::{self, rule, Typed};
use crate::harness::Fixture;

const ROSTER: &str = "Student ID,Last name,First name,Section\n5100001,Orrin,Maren,L1\n5100002,Pellow,Tove,L1\n5100003,Quarry,Idris,L1\n5100004,Rudd,Senna,L2\n";

/// Codes and compounds of the library (acetanilide, benzoic acid, naphthalene), listed out of
/// order: the lists are sorted.
const KEY: &str = "Unknown #,Compound\nK-9,naphthalene\nK-7,benzoic acid\nK-8,acetanilide\n";

/// The data-validation rules of the workbook's first section sheet.
fn rules(path: &std::path::Path) -> Vec<String> {
    entry_sheets::rules(&entry_sheets::part(path, "xl/worksheets/sheet2.xml"))
}

/// The roster's entry workbooks made with the key, in `entry/`.
fn templates_with_key() -> Fixture {
    let f = Fixture::new();
    f.write("roster.csv", ROSTER);
    f.write("key.csv", KEY);
    let run = f.run(&[
        "template",
        "--roster",
        "roster.csv",
        "--key",
        "key.csv",
        "--out",
        "entry",
    ]);
    assert_eq!(run.code, 0, "{}", run.stderr);
    f
}

#[test]
fn template_key_offers_the_key_s_codes_and_compounds() {
    let f = templates_with_key();
    let with = rules(&f.path("entry/L1-entry.xlsx"));
    // the codes, sorted; nothing else is taken (a stop, the default error style)
    let code = rule(&with, "Unknown code").expect("a rule for the unknown code");
    assert!(code.contains("type=\"list\""), "{code}");
    assert!(!code.contains("errorStyle"), "{code}");
    assert!(
        code.contains("<formula1>\"K-7,K-8,K-9\"</formula1>"),
        "{code}"
    );
    // the compounds, each once: a warning only, for a student's wrong identification is typed
    // as it was given
    let named = rule(&with, "Identified as").expect("a rule for the identification");
    assert!(
        named.contains("type=\"list\"") && named.contains("errorStyle=\"warning\""),
        "{named}"
    );
    assert!(
        named.contains("<formula1>\"acetanilide,benzoic acid,naphthalene\"</formula1>"),
        "{named}"
    );
    // L1 has three students: rows 7 to 9 (title block, header and units rows above)
    assert!(code.contains("sqref=\"J7:J9\""), "{code}");
    // without a key (and a rubric that does not score the identification) there are no such
    // columns
    let plain = f.run(&["template", "--roster", "roster.csv", "--out", "plain"]);
    assert_eq!(plain.code, 0, "{}", plain.stderr);
    let without = rules(&f.path("plain/L1-entry.xlsx"));
    assert!(rule(&without, "Unknown code").is_none());
    assert!(rule(&without, "Identified as").is_none());
    // a key file that holds no key stops the run, naming it
    f.write("notakey.csv", "Colour,Smell\nred,none\n");
    let bad = f.run(&[
        "template",
        "--roster",
        "roster.csv",
        "--key",
        "notakey.csv",
        "--out",
        "bad",
    ]);
    assert_eq!(bad.code, 2, "{}", bad.stderr);
    assert!(bad.stderr.contains("notakey.csv"), "{}", bad.stderr);
    assert!(!f.path("bad/L1-entry.xlsx").exists());
}

/// Types into the entry sheet as an assistant would, each student identifying the unknown as
/// `named` says.
fn fill(template: &std::path::Path, sheet: &str, out: &std::path::Path, named: &[&'static str]) {
    entry_sheets::fill(template, sheet, out, |h, k| {
        Some(match h {
            "Crude mass" => Typed::Number(2.5),
            "Recovered mass" => Typed::Number(1.8),
            "Solvent volume" => Typed::Number(60.0),
            "Melting onset" => Typed::Number(121.4),
            "Clear point" => Typed::Number(122.2),
            "Reported recovery" => Typed::Number(72.0),
            "Unknown code" => Typed::Text("K-7"),
            "Identified as" => Typed::Text(named[k]),
            _ => return None,
        })
    });
}

#[test]
fn template_key_filled_in_grades_each_identification_against_the_key() {
    let f = templates_with_key();
    std::fs::create_dir_all(f.path("filled")).unwrap();
    // K-7 is benzoic acid by the key: two right, one wrong (hand-made)
    fill(
        &f.path("entry/L1-entry.xlsx"),
        "L1",
        &f.path("filled/L1.xlsx"),
        &["benzoic acid", "acetanilide", "Benzoic Acid"],
    );
    let graded = f.run(&["grade", "filled", "--key", "key.csv", "--out", "out"]);
    assert_eq!(graded.code, 0, "{}", graded.stderr);
    let rows = f.results("out");
    let got: Vec<(&str, &str, &str)> = rows
        .iter()
        .map(|r| {
            (
                r["student_id"].as_str(),
                r["unknown_code"].as_str(),
                r["identification"].as_str(),
            )
        })
        .collect();
    assert_eq!(
        got,
        [
            ("5100001", "K-7", "correct"),
            ("5100002", "K-7", "wrong"),
            ("5100003", "K-7", "correct"),
        ]
    );
    // the same sheet saved by LibreOffice grades the same
    if let Some(office) = crate::harness::soffice() {
        let ods = crate::harness::convert(office, f.dir.path(), &f.path("filled/L1.xlsx"), "ods");
        std::fs::create_dir_all(f.path("lo")).unwrap();
        std::fs::rename(&ods, f.path("lo/L1.ods")).unwrap();
        let again = f.run(&["grade", "lo", "--key", "key.csv", "--out", "out-lo"]);
        assert_eq!(again.code, 0, "{}", again.stderr);
        let lo = f.results("out-lo");
        let words = |rows: &[crate::harness::Record]| {
            rows.iter()
                .map(|r| {
                    (
                        r["student_id"].clone(),
                        r["identification"].clone(),
                        r["score"].clone(),
                    )
                })
                .collect::<Vec<_>>()
        };
        assert_eq!(words(&lo), words(&rows));
    }
}
