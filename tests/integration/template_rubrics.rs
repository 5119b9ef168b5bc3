//! `benchgrade template --rubric R`: the entry workbook asks for what each shipped rubric
//! scores (the crude range and two trials where it compares them, tare and gross weighings
//! where a flag rule scores a weighing by difference), each new cell with a rule of its own;
//! filled in with valid entries, it grades with no mapping file, no reading notes, and no
//! criterion short of points for a missing entry. The roster, key and entries are invented.

use std::path::Path;

use crate::entry_sheets::{self, Typed};
use crate::harness::{project_root, Fixture, Record};

const ROSTER: &str = "Student ID,Last name,First name,Section\n6200001,Wyndham,Ottilie,K2\n6200002,Yarrow,Bede,K2\n6200003,Zennor,Ilse,K2\n";
const KEY: &str = "Unknown #,Compound\nU-2,benzoic acid\nU-5,acetanilide\n";

/// What is typed under each of the template's headers for every student: a crude product of
/// 2.25 g (12.25 - 10.00) and 1.80 g recovered (9.80 - 8.00), 80 % recovery; the crude range
/// 119.2-121.2 °C, the recrystallized one 121.4-122.2 °C (trials 121.4-122.2 and 121.6-122.2);
/// benzoic acid (about 122 °C, common practice) as unknown U-2. `None` for a header not typed.
fn entry(header: &str) -> Option<Result<f64, &'static str>> {
    Some(match header {
        "Crude tare" => Ok(10.0),
        "Crude gross" => Ok(12.25),
        "Crude mass" => Ok(2.25),
        "Recovered tare" => Ok(8.0),
        "Recovered gross" => Ok(9.8),
        "Recovered mass" => Ok(1.8),
        "Solvent volume" => Ok(60.0),
        "Crude mp onset" => Ok(119.2),
        "Crude mp clear point" => Ok(121.2),
        "Melting onset" | "Trial 1 mp onset" => Ok(121.4),
        "Trial 2 mp onset" => Ok(121.6),
        "Clear point" | "Trial 1 mp clear point" | "Trial 2 mp clear point" => Ok(122.2),
        "Reported recovery" => Ok(80.0),
        "Unknown code" => Err("U-2"),
        "Identified as" => Err("benzoic acid"),
        _ => return None,
    })
}

/// Types into the template's one entry sheet as an assistant would (`entry_sheets::fill`), each
/// student's entries as `entry` gives them. The headers of the sheet.
fn fill(template: &Path, sheet: &str, out: &Path) -> Vec<String> {
    let typed = |h: &str, _| {
        entry(h).map(|v| match v {
            Ok(n) => Typed::Number(n),
            Err(t) => Typed::Text(t),
        })
    };
    entry_sheets::fill(template, sheet, out, typed).0
}

/// The feedback's words for a criterion scored without its measure (the registry's reasons
/// for a missing value, and the sentences for a blank or unreadable entry).
const MISSING: [&str; 12] = [
    "no repeat determinations",
    "no crude and recrystallized",
    "no unknown was identified",
    "no reported recovery",
    "no usable melting range",
    "no recovery could be computed",
    "no recovery ceiling",
    "no purity estimate",
    "no clear point and reference",
    "was given",
    "could not be read",
    "not graded",
];

/// Whether standard error holds a note about the sheets read (the answer key named with
/// `--key` is said to be read as a key, which is no note about the entries).
fn reading_notes(stderr: &str) -> bool {
    stderr
        .lines()
        .any(|l| l.contains("note") && !l.contains("read as an answer key"))
}

/// Makes the template for `rubric`, fills it in and grades it; the headers and the rows.
fn template_graded(f: &Fixture, rubric: &str) -> (Vec<String>, Vec<Record>) {
    let path = project_root().join("rubrics").join(rubric);
    let path = path.to_str().unwrap();
    let out = format!("entry-{rubric}");
    let run = f.run(&[
        "template",
        "--roster",
        "roster.csv",
        "--rubric",
        path,
        "--key",
        "key.csv",
        "--out",
        &out,
    ]);
    assert_eq!(run.code, 0, "{rubric}: {}", run.stderr);
    let filled = format!("filled-{rubric}");
    std::fs::create_dir_all(f.path(&filled)).unwrap();
    let heads = fill(
        &f.path(&format!("{out}/K2-entry.xlsx")),
        "K2",
        &f.path(&format!("{filled}/K2.xlsx")),
    );
    let graded_dir = format!("graded-{rubric}");
    let graded = f.run(&[
        "grade",
        &filled,
        "--rubric",
        path,
        "--key",
        "key.csv",
        "--out",
        &graded_dir,
    ]);
    assert_eq!(graded.code, 0, "{rubric}: {}", graded.stderr);
    assert!(
        !reading_notes(&graded.stderr),
        "{rubric}: {}",
        graded.stderr
    );
    (heads, f.results(&graded_dir))
}

#[test]
fn every_shipped_rubric_s_template_grades_with_nothing_missing() {
    let f = Fixture::new();
    f.write("roster.csv", ROSTER);
    f.write("key.csv", KEY);
    let mut rubrics: Vec<String> = std::fs::read_dir(project_root().join("rubrics"))
        .unwrap()
        .map(|e| e.unwrap().file_name().to_string_lossy().into_owned())
        .filter(|n| n.ends_with(".toml"))
        .collect();
    rubrics.sort();
    assert!(rubrics.len() >= 3, "{rubrics:?}");
    for rubric in &rubrics {
        let (heads, rows) = template_graded(&f, rubric);
        assert_eq!(rows.len(), 3, "{rubric}");
        for r in &rows {
            assert_eq!(r["status"], "graded", "{rubric}");
            assert!(r["flags"].is_empty(), "{rubric}: {}", r["flag_notes"]);
            for m in MISSING {
                assert!(
                    !r["feedback"].contains(m),
                    "{rubric} {m:?}: {}",
                    r["feedback"]
                );
            }
            // every criterion scored
            for (col, v) in r.iter().filter(|(k, _)| k.starts_with("points_")) {
                assert!(!v.is_empty(), "{rubric}: {col} empty");
            }
        }
        if rubric == "unknown-identification.toml" {
            // the crude range, two trials and weighings by difference, no net masses
            for h in [
                "Crude tare",
                "Crude gross",
                "Recovered tare",
                "Recovered gross",
                "Crude mp onset",
                "Crude mp clear point",
                "Trial 1 mp onset",
                "Trial 2 mp clear point",
                "Unknown code",
                "Identified as",
            ] {
                assert!(heads.iter().any(|x| x == h), "{h}: {heads:?}");
            }
            for h in [
                "Crude mass",
                "Recovered mass",
                "Melting onset",
                "Clear point",
            ] {
                assert!(!heads.iter().any(|x| x == h), "{h}: {heads:?}");
            }
        }
    }
}

/// The unknown-identification rubric's points, worked by hand from its rules (rubrics/
/// unknown-identification.toml, rounded to 0.5): identification 30 (U-2 is benzoic acid);
/// recovery 80 % is past full_at 75: 20; the mean clear point 122.2 rises 1.0 over the crude
/// 121.2: 15 x 1.0 / 2.0 = 7.5; the width narrows from 2.0 to 0.7, by 1.3: 10 x 1.3 / 2.0 = 6.5;
/// width 0.7 through 1.0: 15; the trials' clear points agree (spread 0 <= 1): 10. Total 89.
/// The same sheet saved by LibreOffice grades the same.
#[test]
fn unknown_identification_template_scores_every_criterion_as_worked_by_hand() {
    let f = Fixture::new();
    f.write("roster.csv", ROSTER);
    f.write("key.csv", KEY);
    let (_, rows) = template_graded(&f, "unknown-identification.toml");
    let want = [
        ("identification", 30.0),
        ("recovery", 20.0),
        ("purification", 7.5),
        ("narrowing", 6.5),
        ("range", 15.0),
        ("trials", 10.0),
    ];
    for r in &rows {
        for (id, points) in want {
            let got: f64 = r[&format!("points_{id}")].parse().unwrap();
            assert!((got - points).abs() < 1e-9, "{id}: {got}");
        }
        assert_eq!(r["score"].parse::<f64>().unwrap(), 89.0);
        assert_eq!(r["identification"], "correct");
    }
    if let Some(office) = crate::harness::soffice() {
        let filled = f.path("filled-unknown-identification.toml/K2.xlsx");
        let ods = crate::harness::convert(office, f.dir.path(), &filled, "ods");
        std::fs::create_dir_all(f.path("lo")).unwrap();
        std::fs::rename(&ods, f.path("lo/K2.ods")).unwrap();
        let rubric = project_root().join("rubrics/unknown-identification.toml");
        let again = f.run(&[
            "grade",
            "lo",
            "--rubric",
            rubric.to_str().unwrap(),
            "--key",
            "key.csv",
            "--out",
            "out-lo",
        ]);
        assert_eq!(again.code, 0, "{}", again.stderr);
        assert!(!reading_notes(&again.stderr), "{}", again.stderr);
        let lo = f.results("out-lo");
        let scores = |rows: &[Record]| {
            rows.iter()
                .map(|r| {
                    (
                        r["student_id"].clone(),
                        r["score"].clone(),
                        r["feedback"].clone(),
                    )
                })
                .collect::<Vec<_>>()
        };
        assert_eq!(scores(&lo), scores(&rows));
    }
}

/// The rules of the new cells, read back from the saved sheet XML: a weighing is a number
/// above 0 and at most the ceiling, the full container no lighter than the empty one; each
/// trial's and the crude range's temperatures within the apparatus's span, onset at most the
/// clear point of the same range.
#[test]
fn the_weighing_and_trial_cells_carry_their_own_rules() {
    let f = Fixture::new();
    f.write("roster.csv", ROSTER);
    let rubric = project_root().join("rubrics/unknown-identification.toml");
    let run = f.run(&[
        "template",
        "--roster",
        "roster.csv",
        "--rubric",
        rubric.to_str().unwrap(),
        "--out",
        "entry",
    ]);
    assert_eq!(run.code, 0, "{}", run.stderr);
    let book = f.path("entry/K2-entry.xlsx");
    let xml = entry_sheets::part(&book, "xl/worksheets/sheet2.xml");
    let rules = entry_sheets::rules(&xml);
    let rule = |title: &str| {
        entry_sheets::rule(&rules, title)
            .unwrap_or_else(|| panic!("a rule for {title}"))
            .as_str()
    };
    // D crude tare, E crude gross, F recovered tare, G recovered gross, H solvent, I-J crude
    // range, K-L trial 1, M-N trial 2; three students in rows 7 to 9
    let tare = rule("Crude tare");
    assert!(
        tare.contains("ISNUMBER(D7)")
            && tare.contains("D7&gt;0")
            && tare.contains("D7&lt;=100")
            && tare.contains("D7&lt;=E7"),
        "{tare}"
    );
    assert!(
        tare.contains("sqref=\"D7:D9\"") && !tare.contains("errorStyle"),
        "{tare}"
    );
    let gross = rule("Recovered gross");
    assert!(
        gross.contains("G7&gt;=F7") && gross.contains("G7&gt;0"),
        "{gross}"
    );
    let crude = rule("Crude mp clear point");
    assert!(
        crude.contains("J7&gt;=20") && crude.contains("J7&lt;=400") && crude.contains("I7&lt;=J7"),
        "{crude}"
    );
    let second = rule("Trial 2 mp onset");
    assert!(
        second.contains("M7&gt;=20") && second.contains("M7&lt;=N7"),
        "{second}"
    );
    // a recovered product heavier than the crude, by difference, is kept and shaded
    assert!(
        xml.contains("<formula>AND(COUNT(D7,E7,F7,G7)=4,G7-F7&gt;E7-D7)</formula>"),
        "{xml}"
    );
    // printed legibly: beside the id, name and section (12 + 22 + 8 characters), 13 entries of
    // 9 characters, the identification's 16 and the notes' 24 make 157 (hand-counted), too
    // wide for one landscape page of about 130, so the sheet prints across
    // ceil(157 / (130 - 42)) = 2 pages, the id, name and section repeated on each
    assert!(xml.contains("fitToWidth=\"2\""), "{xml}");
    let workbook = entry_sheets::part(&book, "xl/workbook.xml");
    assert!(workbook.contains("!$A:$C,"), "{workbook}");
    // the units row
    let shared = entry_sheets::part(&book, "xl/sharedStrings.xml");
    assert!(
        shared.contains("<t>g</t>") && shared.contains("<t>°C</t>"),
        "{shared}"
    );
}

/// Roster sections written "CON", "con" and "Con" are one section to `grade`
/// (`model::section_key`), and so one entry sheet, named as the roster first writes it.
#[test]
fn sections_grade_treats_as_one_are_one_entry_sheet() {
    let f = Fixture::new();
    f.write(
        "roster.csv",
        "Student ID,Name,Section\n6300001,Aldous Fenwick,CON\n6300002,Briony Galt,con\n6300003,Cato Hurst,Con\n6300004,Dara Ives,T1\n",
    );
    let run = f.run(&["template", "--roster", "roster.csv", "--out", "entry"]);
    assert_eq!(run.code, 0, "{}", run.stderr);
    let mut files: Vec<String> = std::fs::read_dir(f.path("entry"))
        .unwrap()
        .map(|e| e.unwrap().file_name().to_string_lossy().into_owned())
        .filter(|n| n.ends_with(".xlsx"))
        .collect();
    files.sort();
    assert_eq!(files, ["CON-entry.xlsx", "T1-entry.xlsx"]);
    use calamine::{open_workbook, Reader, Xlsx};
    let mut wb: Xlsx<_> = open_workbook(f.path("entry/CON-entry.xlsx")).unwrap();
    let range = wb.worksheet_range("CON").unwrap();
    let ids: Vec<String> = range
        .rows()
        .skip(6)
        .map(|r| r[0].to_string())
        .filter(|s| !s.is_empty())
        .collect();
    assert_eq!(ids, ["6300001", "6300002", "6300003"]);
}
