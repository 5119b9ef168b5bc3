//! Class files as spreadsheet programs save them: one invented section typed once in
//! LibreOffice Calc (tests/data/real-files/class.fods, its expected reading in the README
//! beside it) and saved as .xlsx, .ods, .xls and CSV, with percent-formatted cells, a units row,
//! names in two columns, status and notes columns, excused students, a single temperature and
//! an inverted range. The expected values come from that README's hand-worked table, not from
//! benchgrade.

use std::collections::BTreeMap;
use std::path::{Path, PathBuf};

use crate::harness::{by_id, flags, num, project_root, read_results, soffice, Fixture, Record};

fn real(name: &str) -> PathBuf {
    project_root().join("tests/data/real-files").join(name)
}

/// Grades one file into `out` and reads results.csv back.
fn grade(f: &Fixture, file: &Path, out: &str, extra: &[&str]) -> Vec<Record> {
    let o = f.path(out);
    let mut args = vec![
        "grade",
        file.to_str().unwrap(),
        "--out",
        o.to_str().unwrap(),
    ];
    args.extend_from_slice(extra);
    let run = f.run(&args);
    assert!(run.code <= 1, "{}: {}", file.display(), run.stderr);
    read_results(&o.join("results.csv"))
}

/// Every student's score, percent, letter, status and flags, by id.
fn grades(rows: &[Record]) -> BTreeMap<String, [String; 5]> {
    rows.iter()
        .map(|r| {
            let keep = |c: &str| r[c].clone();
            (
                r["student_id"].clone(),
                [
                    keep("score"),
                    keep("percent"),
                    keep("letter"),
                    keep("status"),
                    keep("flags"),
                ],
            )
        })
        .collect()
}

/// The reading every format must give (the fixture README's table).
fn check_reading(rows: &[Record], what: &str) {
    assert_eq!(
        rows.len(),
        14,
        "{what}: 14 students, not the units or average rows"
    );
    let lena = by_id(rows, "S0702141");
    assert_eq!(lena["student_name"], "Abernathy, Lena", "{what}");
    // F is in mg by the units row: 1834 mg = 1.834 g; recovery 100 x 1.834 / 2.514
    assert_eq!(num(lena, "recovered_mass_g"), Some(1.834), "{what}");
    let rec = num(lena, "recovery_pct").unwrap();
    assert!((rec - 100.0 * 1.834 / 2.514).abs() < 1e-9, "{what}: {rec}");
    // "73.0%" typed in a percent cell is 73.0, in every format
    assert_eq!(num(lena, "reported_recovery_pct"), Some(73.0), "{what}");
    assert_eq!(
        num(by_id(rows, "S0702190"), "reported_recovery_pct"),
        Some(80.0),
        "{what}"
    );
    assert!(
        flags(by_id(rows, "S0702247")).contains(&"recovery-mismatch"),
        "{what}"
    );
    for id in ["S0702173", "S0702225", "S0702232"] {
        let r = by_id(rows, id);
        assert_eq!(r["status"], "excused", "{what}: {id}");
        assert_eq!(r["score"], "", "{what}: {id} has no score");
        assert_eq!(r["letter"], "", "{what}: {id} has no letter");
        assert_eq!(r["flags"], "", "{what}: {id} carries no flags");
        assert!(
            r["feedback"].starts_with("Excused ("),
            "{what}: {}",
            r["feedback"]
        );
    }
    let single = by_id(rows, "S0702188");
    assert!(flags(single).contains(&"single-reading"), "{what}");
    assert_eq!(single["range_width_c"], "", "{what}: no width was measured");
    assert_eq!(
        num(single, "mp_clear_c"),
        Some(121.2),
        "{what}: the clear point is used"
    );
    let inverted = by_id(rows, "S0702219");
    assert!(inverted["feedback"].contains("inverted"), "{what}");
    // "TA notes" is a notes column, never the assistant: the assistant is the one the title
    // row names ("(TA: M. Ferreira)"), the notes' text is the sheet's notes
    assert!(
        rows.iter().all(|r| r["assistant"] == "M. Ferreira"),
        "{what}"
    );
    assert!(
        rows.iter().any(|r| !r["sheet_notes"].is_empty()),
        "{what}: the TA notes column's text is in sheet_notes"
    );
    for r in rows.iter().filter(|r| r["status"] == "graded") {
        assert_eq!(
            r["student_name"].matches(", ").count(),
            1,
            "{what}: {}",
            r["student_name"]
        );
    }
}

#[test]
fn one_class_saved_by_a_spreadsheet_program_grades_the_same_in_every_format() {
    let f = Fixture::new();
    let csv = grade(&f, &real("class.csv"), "csv", &[]);
    check_reading(&csv, "class.csv");
    let want = grades(&csv);
    let mut files = vec![real("class.xlsx"), real("class.ods"), real("class.xls")];
    // and the same saved afresh by the LibreOffice installed here (CI installs it)
    if let Some(office) = soffice() {
        let src = f.path("fresh/class.fods");
        std::fs::create_dir_all(src.parent().unwrap()).unwrap();
        std::fs::copy(real("class.fods"), &src).unwrap();
        for format in [
            "xlsx:Calc MS Excel 2007 XML",
            "ods:calc8",
            "xls:MS Excel 97",
        ] {
            files.push(crate::harness::convert(
                office,
                &f.path("fresh"),
                &src,
                format,
            ));
        }
    }
    for (i, file) in files.iter().enumerate() {
        let rows = grade(&f, file, &format!("out{i}"), &[]);
        let what = file.display().to_string();
        check_reading(&rows, &what);
        assert_eq!(
            grades(&rows),
            want,
            "{what}: every score equal to the CSV's"
        );
    }
}

#[test]
fn check_shows_each_column_s_unit_and_where_it_came_from() {
    let f = Fixture::new();
    let run = f.run(&["check", real("class.xlsx").to_str().unwrap()]);
    assert!(run.code <= 1, "{}", run.stderr);
    assert!(
        run.stdout.contains("units row 4 (not a submission)"),
        "{}",
        run.stdout
    );
    assert!(
        run.stdout.contains("-> recovered mass, in mg (units row)"),
        "{}",
        run.stdout
    );
    assert!(
        run.stdout.contains("-> reported recovery, in % (header)"),
        "{}",
        run.stdout
    );
    assert!(run.stdout.contains("\"TA notes\"") && run.stdout.contains("-> notes"));
    assert!(run.stdout.contains("excused, not graded"), "{}", run.stdout);
}

#[test]
fn two_columns_with_one_header_are_told_apart_by_letter() {
    let f = Fixture::new();
    let file = real("two-mass-columns.xlsx");
    // unmapped: neither column is guessed, and the message gives the lines to paste
    let run = f.run(&["check", file.to_str().unwrap()]);
    assert!(
        run.stdout.contains("\"column C\" = \"crude_mass\""),
        "{}",
        run.stdout
    );
    // mapped by letter, for this file's sheet only
    f.write(
        "cols.toml",
        "[columns.\"two-mass-columns.xlsx [Sheet1]\"]\n\"column C\" = \"crude_mass\"\n\"column D\" = \"recovered_mass\"\n",
    );
    let rows = grade(&f, &file, "out", &["--columns", "cols.toml"]);
    // the same file named by another path still matches; a table that matches nothing is said
    let dotted = format!("./{}", file.strip_prefix(project_root()).unwrap().display());
    let run = crate::harness::run_in(
        &project_root(),
        &[
            "check",
            &dotted,
            "--columns",
            f.path("cols.toml").to_str().unwrap(),
        ],
    );
    assert!(
        !run.stdout.contains("not used: columns C and D"),
        "{}",
        run.stdout
    );
    f.write(
        "typo.toml",
        "[columns.\"two-mass-columns.xlsx [Sheet 9]\"]\n\"column C\" = \"crude_mass\"\n",
    );
    let run = f.run(&["check", file.to_str().unwrap(), "--columns", "typo.toml"]);
    assert!(
        run.stdout.contains("matched no file and sheet"),
        "{}",
        run.stdout
    );
    f.write("pos.toml", "[columns]\n\"column 3\" = \"crude_mass\"\n");
    let run = f.run(&["check", file.to_str().unwrap(), "--columns", "pos.toml"]);
    assert_eq!(
        run.code, 2,
        "a position that is not a column letter is refused"
    );
    assert!(run.stderr.contains("\"column C\""), "{}", run.stderr);
    // hand-worked in the fixture README: 1.904 / 2.512 = 75.80 %
    let r = by_id(&rows, "T-01");
    assert!((num(r, "recovery_pct").unwrap() - 100.0 * 1.904 / 2.512).abs() < 1e-9);
    assert!(rows.iter().all(|r| !flags(r).contains(&"missing-value")));
}

#[test]
fn a_field_with_no_column_is_one_message_and_a_note_on_each_row() {
    let f = Fixture::new();
    f.write(
        "sec.csv",
        "ID,Crude mass (g),Product weighed out (g),MP\ns1,3.0,2.1,121-122\ns2,3.1,2.2,120.5-122\n",
    );
    let run = f.run(&["grade", "sec.csv", "--out", "out"]);
    // the README's exit codes: a sheet without a column grading needs exits 1 (every row is
    // graded as missing it, which a script must notice), and its rows are still written
    assert_eq!(run.code, 1, "{}", run.stderr);
    f.write(
        "whole.csv",
        "ID,Crude mass (g),Recovered mass (g),MP\ns1,3.0,2.1,121-122\n",
    );
    assert_eq!(f.run(&["grade", "whole.csv", "--out", "out2"]).code, 0);
    let said = run
        .stderr
        .matches("no column for the recovered mass")
        .count();
    assert_eq!(said, 1, "once for the sheet: {}", run.stderr);
    assert!(
        run.stderr.contains("\"Product weighed out (g)\""),
        "{}",
        run.stderr
    );
    let json = std::fs::read_to_string(f.path("out/results.json")).unwrap();
    assert!(
        json.contains("no column for the recovered mass"),
        "in results.json's problems"
    );
    for r in f.results("out") {
        assert!(
            r["flag_notes"].contains("recovered mass (the sheet has no column for it)"),
            "{}",
            r["flag_notes"]
        );
    }
}

#[test]
fn the_last_submission_counts_when_the_rubric_says_so() {
    let f = Fixture::new();
    f.write(
        "sec.csv",
        "ID,Crude mass (g),Recovered mass (g),MP\ns1,3.0,1.2,118-121\ns2,3.0,2.4,121.5-122.3\ns1,3.0,2.4,121.5-122.3\n",
    );
    let rubric = std::fs::read_to_string(project_root().join("rubrics/default.toml")).unwrap();
    let last = rubric.replacen("[grading]\n", "[grading]\nduplicates = \"last\"\n", 1);
    assert_ne!(last, rubric, "the default rubric has a [grading] table");
    f.write("last.toml", &last);
    f.write(
        "o.csv",
        "student_id,criterion,points,adjust,reason,grader\ns1,total,,+1,careful notebook,T. Amadi\n",
    );
    for (rubric, counted_row) in [(None, "2"), (Some("last.toml"), "4")] {
        let out = format!("out-{counted_row}");
        let mut args = vec!["grade", "sec.csv", "--overrides", "o.csv", "--out", &out];
        if let Some(r) = rubric {
            args.extend(["--rubric", r]);
        }
        let run = f.run(&args);
        assert!(run.code <= 1, "{}", run.stderr);
        let rows = f.results(&out);
        let s1: Vec<&Record> = rows.iter().filter(|r| r["student_id"] == "s1").collect();
        let counted: Vec<&&Record> = s1
            .iter()
            .filter(|r| !r["flags"].contains("duplicate-student"))
            .collect();
        assert_eq!(counted.len(), 1);
        assert_eq!(counted[0]["row"], counted_row);
        assert!(counted[0]["overrides"].contains("careful notebook"));
        let repeat = s1
            .iter()
            .find(|r| r["flags"].contains("duplicate-student"))
            .unwrap();
        assert_eq!(
            repeat["overrides"], "",
            "the override applies to the counted one only"
        );
        let book = read_results(&f.path(&out).join("gradebook.csv"));
        let mine: Vec<&Record> = book.iter().filter(|b| b["student_id"] == "s1").collect();
        assert_eq!(mine.len(), 1);
        assert_eq!(mine[0]["score"], counted[0]["score"]);
    }
}

#[test]
fn a_small_section_flags_no_outliers_a_full_one_does() {
    let f = Fixture::new();
    // the three recoveries of the report: 72.5, 74.6, 74.5 % (MAD 0.1 would make 72.5 extreme)
    let mut small = String::from("ID,Crude mass (g),Recovered mass (g),MP\n");
    for (i, rec) in [72.5, 74.6, 74.5].iter().enumerate() {
        small.push_str(&format!("a{i},2.000,{:.3},121.5-122.2\n", rec * 0.02));
    }
    f.write("small.csv", &small);
    let rows = grade(&f, &f.path("small.csv"), "small", &[]);
    assert!(
        rows.iter().all(|r| !flags(r).contains(&"outlier")),
        "3 rows < outlier_min_n 10"
    );
    let mut full = String::from("ID,Crude mass (g),Recovered mass (g),MP\n");
    for i in 0..11 {
        let rec = if i == 10 {
            40.0
        } else {
            74.0 + f64::from(i) * 0.2
        };
        full.push_str(&format!("b{i},2.000,{:.4},121.5-122.2\n", rec * 0.02));
    }
    f.write("full.csv", &full);
    let rows = grade(&f, &f.path("full.csv"), "full", &[]);
    assert!(
        flags(by_id(&rows, "b10")).contains(&"outlier"),
        "40 % among 74-76 % in 11 rows"
    );
}

#[test]
fn a_run_into_the_same_folder_removes_what_the_last_run_wrote_and_this_one_did_not() {
    let f = Fixture::new();
    let sample = project_root().join("sample-data");
    let sample = sample.to_str().unwrap();
    let split = f.run(&["grade", sample, "--out", "out", "--split-sections"]);
    assert!(split.code <= 1, "{}", split.stderr);
    f.write("out/my-notes.txt", "a grader's own file");
    let names = |dir: &Path| -> Vec<String> {
        let mut v: Vec<String> = std::fs::read_dir(dir)
            .unwrap()
            .map(|e| e.unwrap().file_name().to_string_lossy().into_owned())
            .filter(|n| n.ends_with("-graded.xlsx"))
            .collect();
        v.sort();
        v
    };
    let before = names(&f.path("out"));
    let plain = f.run(&["grade", sample, "--out", "out"]);
    assert!(plain.code <= 1, "{}", plain.stderr);
    let after = names(&f.path("out"));
    assert_ne!(
        before, after,
        "split and plain runs write different workbooks"
    );
    let mut fresh = f.run(&["grade", sample, "--out", "fresh"]);
    assert!(fresh.code <= 1, "{}", fresh.stderr);
    assert_eq!(
        after,
        names(&f.path("fresh")),
        "only this run's workbooks remain"
    );
    assert!(
        f.path("out/my-notes.txt").exists(),
        "other files are never touched"
    );
    fresh = f.run(&["grade", sample, "--out", "out", "--skip-workbooks"]);
    assert!(fresh.code <= 1);
    assert!(
        names(&f.path("out")).is_empty(),
        "a run without workbooks leaves none behind"
    );
}

#[test]
fn with_no_inputs_the_built_in_sample_class_is_graded_from_any_folder() {
    let f = Fixture::new();
    let run = f.run(&["grade", "--out", "graded"]);
    assert_eq!(run.code, 0, "{}", run.stderr);
    let said: Vec<&str> = run
        .stderr
        .lines()
        .filter(|l| l.contains("sample class built into benchgrade"))
        .collect();
    assert_eq!(said.len(), 1, "{}", run.stderr);
    let rows = f.results("graded");
    assert!(rows.iter().all(|r| r["source"].starts_with("sample-data/")));
    // the same grades as the repository's sample-data/ graded by name
    let named = crate::harness::grade_sample(&f, "named", &[]);
    assert_eq!(named.code, 0, "{}", named.stderr);
    let by_name = f.results("named");
    let scores =
        |rows: &[Record]| -> Vec<String> { rows.iter().map(|r| r["score"].clone()).collect() };
    assert_eq!(scores(&rows), scores(&by_name));
    let check = f.run(&["check"]);
    assert!(
        check.stdout.contains("sample-data/section-01.xlsx"),
        "{}",
        check.stdout
    );
}

#[test]
fn the_feedback_of_every_sample_student_adds_up_to_the_score() {
    let f = Fixture::new();
    let run = crate::harness::grade_sample(&f, "out", &[]);
    assert_eq!(run.code, 0, "{}", run.stderr);
    let rubric = std::fs::read_to_string(project_root().join("rubrics/default.toml")).unwrap();
    let parsed = benchgrade::rubric::Rubric::parse(&rubric, "default.toml").unwrap();
    let labels: Vec<&str> = parsed.criteria.iter().map(|c| c.label.as_str()).collect();
    for r in f.results("out") {
        let Some(score) = num(&r, "score") else {
            continue;
        };
        let stated = benchgrade::rubric::score::audit_feedback(&r["feedback"], &labels)
            .unwrap_or_else(|e| panic!("{}: {e}", r["feedback"]));
        assert!(
            (stated - score).abs() < 1e-6,
            "{} vs {score}",
            r["feedback"]
        );
    }
}

#[test]
fn score_statistics_count_every_graded_student() {
    let f = Fixture::new();
    let run = crate::harness::grade_sample(&f, "out", &[]);
    assert_eq!(run.code, 0, "{}", run.stderr);
    let rows = f.results("out");
    let stats = read_results(&f.path("out/section-stats.csv"));
    for s in stats.iter().filter(|s| s["measure"] == "score") {
        let graded = rows
            .iter()
            .filter(|r| r["section"] == s["section"] && r["status"] == "graded")
            .filter(|r| !r["flags"].contains("duplicate-student"))
            .count();
        assert_eq!(s["n"], graded.to_string(), "section {}", s["section"]);
    }
    for s in stats.iter().filter(|s| s["measure"] == "recovery_pct") {
        let impossible = rows
            .iter()
            .filter(|r| r["section"] == s["section"] && r["status"] == "graded")
            .filter(|r| {
                ["recovery-over-100", "nonpositive-mass", "duplicate-student"]
                    .iter()
                    .any(|c| r["flags"].contains(c))
            })
            .count();
        assert_eq!(
            s["excluded"],
            impossible.to_string(),
            "section {}",
            s["section"]
        );
    }
    // every row of a section is accounted for in every measure (a trial: a blank mass was in
    // neither n nor excluded)
    for s in &stats {
        let rows_of = rows.iter().filter(|r| r["section"] == s["section"]).count();
        let parts: usize = ["n", "excluded", "excused", "missing"]
            .iter()
            .map(|c| s[*c].parse::<usize>().unwrap())
            .sum();
        assert_eq!(parts, rows_of, "{} {}", s["section"], s["measure"]);
    }
}

#[test]
fn the_outputs_say_which_rubric_calibration_and_course_were_used() {
    use calamine::{open_workbook, Data, Reader, Xlsx};
    let f = Fixture::new();
    let rubric = std::fs::read_to_string(project_root().join("rubrics/default.toml")).unwrap();
    let titled = rubric.replacen(
        "[experiment]\n",
        "[experiment]\ncourse = \"CHEM 2150\"\nterm = \"Fall 2026\"\n",
        1,
    );
    assert_ne!(titled, rubric);
    f.write("course.toml", &titled);
    let run = crate::harness::grade_sample(
        &f,
        "out",
        &["--rubric", f.path("course.toml").to_str().unwrap()],
    );
    assert_eq!(run.code, 0, "{}", run.stderr);
    let sha = benchgrade::export::provenance::sha256_hex(titled.as_bytes());
    let cal_sha = benchgrade::export::provenance::sha256_file(
        &project_root().join("sample-data/calibration.csv"),
    )
    .unwrap();
    let mut wb: Xlsx<_> = open_workbook(f.path("out/section-01-graded.xlsx")).unwrap();
    let sheet = wb.worksheet_range("Provenance").unwrap();
    let value = |key: &str| -> String {
        sheet
            .rows()
            .find(|r| r.first() == Some(&Data::String(key.into())))
            .and_then(|r| r.get(1).cloned())
            .map(|d| d.to_string())
            .unwrap_or_default()
    };
    assert!(
        value("title").starts_with("CHEM 2150 — Fall 2026 — "),
        "{}",
        value("title")
    );
    assert!(value("rubric").ends_with("course.toml"));
    assert_eq!(value("rubric SHA-256"), sha);
    assert!(value("calibration").ends_with("calibration.csv"));
    assert_eq!(value("calibration SHA-256"), cal_sha);
    assert!(!value("experiment").is_empty());
    let html = std::fs::read_to_string(f.path("out/cohort-report.html")).unwrap();
    assert!(
        html.contains("<h1>CHEM 2150 — Fall 2026 — "),
        "the report's title"
    );
    assert!(html.contains(&sha[..12]) && html.contains(&cal_sha[..12]));
    // the parquet file keeps the rubric's hash
    let term = benchgrade::export::parquet::read_term(&f.path("out/results.parquet")).unwrap();
    assert_eq!(term.rubric_sha256.as_deref(), Some(sha.as_str()));
    // --title wins over the rubric's
    let run = crate::harness::grade_sample(&f, "out2", &["--title", "Organic lab, week 12"]);
    assert_eq!(run.code, 0, "{}", run.stderr);
    let html = std::fs::read_to_string(f.path("out2/cohort-report.html")).unwrap();
    assert!(html.contains("<h1>Organic lab, week 12</h1>"));
}

/// What assistants type, read as a grader reads it (each case one a trial by a grader found
/// misread): a bare "Recovery" column shown as percentages, template and summary rows, denied
/// excuses, partners' columns, shorthand ranges, "Last"/"First", a solvent column in mL, bench
/// "1.0", section labels written three ways, and a blank reported recovery.
#[test]
fn what_assistants_type_is_read_as_a_grader_reads_it() {
    let f = Fixture::new();
    f.write(
        "sec.csv",
        "Student ID,Last,First,Section,Bench,Status,Partner status,Crude mass (g),Recovered mass (g),Solvent,MP range,Recovery\n\
         ,,,,,,,,,mL,,%\n\
         s1,Ames,Bo,01,1.0,Unexcused absence,,2.500,1.800,50,121-2,72.0\n\
         s2,Bell,Cy,Sec 01,1,present,Withdrawn,2.500,1.800,50,120.5-1.5,\n\
         s3,Cole,Di,Section 1,2,W (medical),,,,,,\n\
         s1,Ames,Bo,1,1,,,2.500,1.500,50,121-122,60.0\n\
         ,,,,3,,,,,,,\n\
         Class mean,,,,,,,2.500,1.700,50,,68.0\n",
    );
    let rows = grade(&f, &f.path("sec.csv"), "out", &[]);
    assert_eq!(rows.len(), 4, "template and summary rows are not students");
    assert!(
        rows.iter().all(|r| r["section"] == "01"),
        "one section, as first written"
    );
    let first = &rows[0];
    assert_eq!(first["student_name"], "Ames, Bo");
    assert_eq!(
        first["status"], "graded",
        "an unexcused absence is not an excuse"
    );
    assert_eq!(num(first, "mp_clear_c"), Some(122.0), "121-2 is 121-122");
    assert_eq!(
        num(first, "solvent_volume_ml"),
        Some(50.0),
        "Solvent over mL is a volume"
    );
    assert_eq!(num(first, "reported_recovery_pct"), Some(72.0));
    assert!(first["calibration"].is_empty() && first["bench"] == "1.0");
    let second = &rows[1];
    assert_eq!(
        second["status"], "graded",
        "the partner's status is not the student's"
    );
    assert_eq!(
        num(second, "mp_clear_c"),
        Some(121.5),
        "120.5-1.5 is 120.5-121.5"
    );
    assert!(
        second["feedback"].contains("no reported recovery was given, 0 of"),
        "{}",
        second["feedback"]
    );
    assert_eq!(rows[2]["status"], "excused", "W (medical) is a withdrawal");
    assert!(
        flags(&rows[3]).contains(&"duplicate-student"),
        "s1 again in the same section, written \"1\""
    );
    let run = f.run(&["check", "sec.csv"]);
    assert!(run.stdout.contains("name no student"), "{}", run.stdout);
}

/// Every file that changed grades is named with its SHA-256 in the Provenance sheet and the
/// report (the digests from coreutils' `sha256sum`, an outside implementation of FIPS 180-4);
/// the overrides file is not listed among the inputs.
#[test]
fn provenance_names_the_mapping_library_and_overrides_with_their_digests() {
    use calamine::{open_workbook, Data, Reader, Xlsx};
    let f = Fixture::new();
    let columns = f.write("columns.toml", "[columns]\n\"Signature\" = \"ignore\"\n");
    let compounds = f.write(
        "extra.toml",
        "[[compound]]\nname = \"invented test solid\"\ncas = \"0-00-0\"\nformula = \"C1\"\n\
         molar_mass = { value = 100.0, source = \"invented for a test\" }\naccepted_mp_c = 150.0\n\
         melting_points = [{ value_c = 150.0, source = \"invented for a test\" }]\n",
    );
    let overrides = f.write(
        "overrides.csv",
        "student_id,criterion,points,adjust,reason,grader\n2026143,total,,+1,re-weighed dry,R. Okafor\n",
    );
    let path = |p: &std::path::Path| p.to_str().unwrap().to_string();
    let run = crate::harness::grade_sample(
        &f,
        "out",
        &[
            "--columns",
            &path(&columns),
            "--compounds",
            &path(&compounds),
            "--overrides",
            &path(&overrides),
        ],
    );
    assert!(run.code == 0, "{}", run.stderr);
    let digest = |p: &std::path::Path| -> Option<String> {
        let out = std::process::Command::new("sha256sum")
            .arg(p)
            .output()
            .ok()?;
        String::from_utf8(out.stdout)
            .ok()?
            .split_whitespace()
            .next()
            .map(str::to_string)
    };
    let Some(columns_sha) = digest(&columns) else {
        eprintln!("sha256sum not found; skipped");
        return;
    };
    let mut wb: Xlsx<_> = open_workbook(f.path("out/section-01-graded.xlsx")).unwrap();
    let sheet = wb.worksheet_range("Provenance").unwrap();
    let row = |key: &str| -> Vec<String> {
        sheet
            .rows()
            .find(|r| r.first() == Some(&Data::String(key.into())))
            .map(|r| r.iter().map(ToString::to_string).collect())
            .unwrap_or_default()
    };
    for (role, file) in [
        ("column mapping", &columns),
        ("compound library", &compounds),
        ("overrides", &overrides),
    ] {
        let r = row(role);
        assert!(
            r.get(1)
                .is_some_and(|v| v.ends_with(file.file_name().unwrap().to_str().unwrap())),
            "{role}: {r:?}"
        );
        assert_eq!(r.get(2), digest(file).as_ref(), "{role}");
    }
    let inputs: Vec<String> = sheet
        .rows()
        .filter_map(|r| r.get(1).map(ToString::to_string))
        .collect();
    assert_eq!(
        inputs
            .iter()
            .filter(|v| v.ends_with("overrides.csv"))
            .count(),
        1,
        "the overrides file once, as a setting, not as an input"
    );
    let html = std::fs::read_to_string(f.path("out/cohort-report.html")).unwrap();
    assert!(
        html.contains(&columns_sha[..12]),
        "the report names the mapping"
    );
}

/// A sheet the run calls ungradable (no column for a mass) gets handouts that say it was not
/// graded and why, in a file of their own; the graded sheet's handouts hold no such page.
#[test]
fn an_ungradable_sheet_s_handouts_say_so_apart_from_graded_pages() {
    let f = Fixture::new();
    f.write(
        "a.csv",
        "ID,Name,Section,Crude mass (g),Weighed out (g),MP\ns1,Ana Pérez,S1,3.0,2.1,121-122\n",
    );
    f.write(
        "b.csv",
        "ID,Name,Section,Crude mass (g),Recovered mass (g),MP\ns2,Bo Lindqvist,S1,3.0,2.1,121-122\n",
    );
    let run = f.run(&["grade", "a.csv", "b.csv", "--out", "out"]);
    assert_eq!(run.code, 1, "{}", run.stderr);
    let ungraded = std::fs::read_to_string(f.path("out/handouts/S1-not-graded.html")).unwrap();
    assert!(
        ungraded.contains("Not graded") && ungraded.contains("no column for the recovered mass")
    );
    assert!(ungraded.contains("Ana Pérez") && !ungraded.contains("Bo Lindqvist"));
    assert!(!ungraded.contains(" of 40") && !ungraded.contains("cannot be right"));
    let graded = std::fs::read_to_string(f.path("out/handouts/S1.html")).unwrap();
    assert!(graded.contains("Bo Lindqvist") && !graded.contains("Not graded"));
}
