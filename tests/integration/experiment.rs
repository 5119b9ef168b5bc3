//! The whole experiment as courses run it: crude against recrystallized melting ranges,
//! weighing by difference, repeat capillaries, unknowns against a key; and which column holds
//! what when a field is mapped by hand. Every expected number is worked by hand beside it.

use crate::harness::{Fixture, Record};

fn num(r: &Record, col: &str) -> f64 {
    r[col]
        .parse()
        .unwrap_or_else(|_| panic!("{col} = {:?}", r[col]))
}

fn close(r: &Record, col: &str, want: f64) {
    let got = num(r, col);
    assert!((got - want).abs() < 1e-9, "{col}: {got} against {want}");
}

fn flags(r: &Record) -> Vec<&str> {
    r["flags"].split(';').filter(|f| !f.is_empty()).collect()
}

fn grade(f: &Fixture, args: &[&str]) -> Vec<Record> {
    let mut all = vec!["grade"];
    all.extend_from_slice(args);
    all.extend_from_slice(&["--out", "out"]);
    let run = f.run(&all);
    assert_eq!(run.code, 0, "{}", run.stderr);
    f.results("out")
}

#[test]
fn crude_and_recrystallized_ranges() {
    let f = Fixture::new();
    f.write(
        "sec.csv",
        "Student ID,Crude (g),Recryst. mass (g),Crude mp (°C),Recryst. mp (°C)\n\
         s1,3.02,2.31,114.0-119.5,120.6-121.9\n\
         s2,3.00,2.10,120.0-122.0,119.5-121.8\n",
    );
    let r = grade(&f, &["sec.csv"]);
    // hand-worked: 100 x 2.31 / 3.02 = 76.490066...; the graded range is the recrystallized one
    close(&r[0], "recovery_pct", 100.0 * 2.31 / 3.02);
    close(&r[0], "mp_clear_c", 121.9);
    close(&r[0], "crude_mp_onset_c", 114.0);
    // hand-worked: crude width 119.5 - 114.0 = 5.5; rise 121.9 - 119.5 = 2.4;
    // narrowing 5.5 - (121.9 - 120.6) = 4.2
    close(&r[0], "crude_range_width_c", 5.5);
    close(&r[0], "mp_rise_c", 2.4);
    close(&r[0], "range_narrowing_c", 4.2);
    assert!(
        !flags(&r[0]).contains(&"missing-value"),
        "{:?}",
        r[0]["flags"]
    );
    // hand-worked: 121.8 - 122.0 = -0.2 and 2.0 - 2.3 = -0.3: no higher, no narrower
    close(&r[1], "mp_rise_c", -0.2);
    close(&r[1], "range_narrowing_c", -0.3);
    assert!(flags(&r[1]).contains(&"no-purification-shown"));
}

#[test]
fn masses_weighed_by_difference() {
    let f = Fixture::new();
    f.write(
        "diff.csv",
        "Student ID,Empty vial (g),Vial + crude (g),Vial + crystals (g),Recovered mass (g),MP range\n\
         s1,12.105,15.432,14.210,2.105,121.0-122.0\n\
         s2,12.105,15.432,14.210,2.150,121.0-122.0\n\
         s3,12.105,11.900,14.000,,121.0-122.0\n",
    );
    let run = f.run(&["check", "diff.csv"]);
    assert!(run.stdout.contains("crude mass = C - B"), "{}", run.stdout);
    assert!(
        run.stdout
            .contains("recovered mass = D - B; the net column E is used"),
        "{}",
        run.stdout
    );
    let r = grade(&f, &["diff.csv"]);
    // hand-worked: crude 15.432 - 12.105 = 3.327 g; the net 2.105 equals 14.210 - 12.105
    close(&r[0], "crude_mass_g", 15.432 - 12.105);
    close(&r[0], "recovered_mass_g", 2.105);
    close(&r[0], "crude_tare_g", 12.105);
    close(&r[0], "recovered_gross_g", 14.210);
    assert!(flags(&r[0]).is_empty(), "{}", r[0]["flag_notes"]);
    // hand-worked: net 2.150 against 2.105, 0.045 g apart, more than the 0.001 g written
    close(&r[1], "recovered_mass_g", 2.150);
    assert!(flags(&r[1]).contains(&"net-mismatch"));
    assert!(r[1]["flag_notes"].contains("2.15 g") && r[1]["flag_notes"].contains("2.105 g"));
    // a gross below its tare is impossible
    assert!(flags(&r[2]).contains(&"gross-below-tare"));
    // hand-worked: recovered 14.000 - 12.105 = 1.895 g, taken with no net column for it
    close(&r[2], "recovered_mass_g", 14.0 - 12.105);
}

#[test]
fn repeat_capillaries_are_one_measurement() {
    let f = Fixture::new();
    f.write(
        "trials.csv",
        "Student ID,Crude (g),Recovered (g),mp Trial 1,mp Trial 2\n\
         s1,3.0,2.0,120.5-121.8,120.9-122.4\n\
         s2,3.0,2.0,119.0-120.0,121.5-122.4\n\
         s3,3.0,2.0,121.0-122.0,\n",
    );
    let r = grade(&f, &["trials.csv"]);
    // hand-worked means (common practice: the mean of the trials): onsets (120.5 + 120.9) / 2
    // = 120.7, clear points (121.8 + 122.4) / 2 = 122.1; spread 122.4 - 121.8 = 0.6
    close(&r[0], "mp_onset_c", 120.7);
    close(&r[0], "mp_clear_c", 122.1);
    close(&r[0], "mp_trials", 2.0);
    close(&r[0], "trial_spread_c", 0.6);
    assert!(!flags(&r[0]).contains(&"trials-disagree"));
    // hand-worked: 122.4 - 120.0 = 2.4, more than 1.0
    close(&r[1], "trial_spread_c", 2.4);
    assert!(flags(&r[1]).contains(&"trials-disagree"));
    // one trial blank: the other is used
    close(&r[2], "mp_clear_c", 122.0);
    close(&r[2], "mp_trials", 1.0);
    assert_eq!(r[2]["trial_spread_c"], "");
    for row in &r {
        assert!(
            !flags(row).contains(&"missing-value"),
            "{}",
            row["flag_notes"]
        );
    }
}

const UNKNOWNS: &str =
    "Student ID,Unknown #,Identified as,Crude (g),Recovered (g),Recryst. mp (°C),Mixed mp (°C)\n\
     s1,U-1,acetanilide,3.0,2.0,113.5-114.6,113.2-114.5\n\
     s2,U-2,acetanilide,3.0,2.0,120.8-122.0,108.0-115.0\n\
     s3,U-2,,3.0,2.0,120.8-122.0,\n";

#[test]
fn unknowns_against_a_key() {
    let f = Fixture::new();
    f.write("unk.csv", UNKNOWNS);
    f.write(
        "k.csv",
        "Unknown #,Compound\nU-1,acetanilide\nU-2,benzoic acid\n",
    );
    let r = grade(&f, &["unk.csv", "--key", "k.csv"]);
    let words: Vec<&str> = r.iter().map(|x| x["identification"].as_str()).collect();
    assert_eq!(words, ["correct", "wrong", "none"]);
    assert_eq!(r[0]["unknown_code"], "U-1");
    assert_eq!(r[1]["identity"], "benzoic acid");
    assert_eq!(r[1]["identified_as"], "acetanilide");
    // the reference is the key's compound: acetanilide melts near 114 °C and benzoic acid near
    // 122 °C (from memory)
    let (a, b) = (num(&r[0], "reference_mp_c"), num(&r[1], "reference_mp_c"));
    assert!(
        (113.0..116.0).contains(&a) && (121.0..123.5).contains(&b),
        "{a} {b}"
    );
    assert!(!flags(&r[0]).contains(&"unknown-compound"));
    // hand-worked: 122.0 - 115.0 = 7.0 °C below the sample, more than 2.0
    close(&r[1], "mixed_depression_c", 7.0);
    assert!(flags(&r[1]).contains(&"mixed-mp-contradicts"));
    assert!(r[1]["flag_notes"].contains("likely not acetanilide"));
    // hand-worked: 114.6 - 114.5 = 0.1, no contradiction
    close(&r[0], "mixed_depression_c", 114.6 - 114.5);
    assert!(!flags(&r[0]).contains(&"mixed-mp-contradicts"));
}

#[test]
fn a_key_among_the_inputs_is_a_key() {
    let f = Fixture::new();
    f.write("in/unk.csv", UNKNOWNS);
    f.write(
        "in/answer-key.csv",
        "Unknown #,Compound\nU-1,acetanilide\nU-2,benzoic acid\n",
    );
    let run = f.run(&["grade", "in", "--out", "out"]);
    assert_eq!(run.code, 0, "{}", run.stderr);
    assert!(run.stderr.contains("answer key"), "{}", run.stderr);
    let r = f.results("out");
    assert_eq!(r.len(), 3);
    assert_eq!(r[1]["identification"], "wrong");
    // a key by its columns alone, under any name
    let g = Fixture::new();
    g.write("in/unk.csv", UNKNOWNS);
    g.write(
        "in/codes.csv",
        "Sample code,Compound\nU-1,acetanilide\nU-2,benzoic acid\n",
    );
    let run = g.run(&["grade", "in", "--out", "out"]);
    assert_eq!(run.code, 0, "{}", run.stderr);
    assert_eq!(g.results("out")[0]["identification"], "correct");
    // without a key: no-key, and graded against the compound named, with a note
    let h = Fixture::new();
    h.write("unk.csv", UNKNOWNS);
    let r = grade(&h, &["unk.csv"]);
    assert!(r.iter().all(|x| x["identification"] == "no-key"));
    assert!(r[0]["notes"].contains("graded against the compound named"));
}

/// A rubric's [key] table, and the fields through a mapping file where headers say nothing.
#[test]
fn fields_by_mapping_and_a_key_in_the_rubric() {
    let f = Fixture::new();
    f.write(
        "plain.csv",
        "ID,A,B,C,D,E,F\ns1,3.0,2.0,114.0-119.5,120.6-121.9,X7,benzoic acid\n",
    );
    f.write(
        "columns.toml",
        "[columns]\n\"column B\" = \"crude_mass\"\n\"column C\" = \"recovered_mass\"\n\
         \"column D\" = \"crude_mp_range\"\n\"column E\" = \"mp_range\"\n\
         \"column F\" = \"unknown_code\"\n\"column G\" = \"identified_as\"\n",
    );
    let rubric = std::fs::read_to_string(
        std::path::Path::new(env!("CARGO_MANIFEST_DIR")).join("rubrics/default.toml"),
    )
    .unwrap();
    f.write(
        "r.toml",
        format!("{rubric}\n[key]\n\"X7\" = \"benzoic acid\"\n"),
    );
    let r = grade(
        &f,
        &[
            "plain.csv",
            "--columns",
            "columns.toml",
            "--rubric",
            "r.toml",
        ],
    );
    close(&r[0], "mp_rise_c", 2.4);
    assert_eq!(r[0]["identification"], "correct");
}

/// "Also seen": a field mapped by hand belongs to that column alone; a container weighed after
/// the transfer is not the recovered mass; a suggestion never names a column whose cells or
/// header contradict the field.
#[test]
fn which_column_holds_what() {
    let f = Fixture::new();
    f.write(
        "m.csv",
        "Student ID,Crude (g),Recovered (g),mp A (°C),mp B (°C)\ns1,3.0,2.0,120.5-121.5,110.0-115.0\n",
    );
    f.write("c.toml", "[columns]\n\"column D\" = \"mp_range\"\n");
    let run = f.run(&["check", "m.csv", "--columns", "c.toml"]);
    assert!(
        run.stdout.contains("mapped explicitly to column D"),
        "{}",
        run.stdout
    );
    let r = grade(&f, &["m.csv", "--columns", "c.toml"]);
    close(&r[0], "mp_clear_c", 121.5);
    // "Vial after transfer" beside a real recovered mass
    let g = Fixture::new();
    g.write(
        "v.csv",
        "Student ID,Crude (g),Recovered mass (g),Vial after transfer (g),MP range\ns1,3.0,2.0,12.3,121-122\n",
    );
    let r = grade(&g, &["v.csv"]);
    // hand-worked: 100 x 2.0 / 3.0
    close(&r[0], "recovery_pct", 200.0 / 3.0);
    // no crude mass: the example names the plain number column, not the text or the volume
    let h = Fixture::new();
    h.write(
        "s.csv",
        "Student ID,Recovered (g),MP range,Appearance,Water (mL),Wt A\n\
         s1,2.0,121-122,white needles,50,3.0\ns2,2.1,121-122,fine powder,48,3.1\n",
    );
    let run = h.run(&["check", "s.csv"]);
    let all = format!("{}{}", run.stdout, run.stderr);
    let line = all
        .lines()
        .find(|l| l.contains("no column for the crude mass"))
        .unwrap_or_else(|| panic!("{all}"));
    assert!(line.contains("\"column F\" = \"crude_mass\""), "{line}");
    assert!(!line.contains("\"column D\" = \"crude_mass\""), "{line}");
    assert!(!line.contains("\"column E\" = \"crude_mass\""), "{line}");
}

/// The shipped unknown-identification rubric scores the new measures, and every student's
/// feedback adds up to the total.
#[test]
fn the_unknown_identification_rubric() {
    let f = Fixture::new();
    f.write(
        "unk.csv",
        "Student ID,Unknown #,Identified as,Crude (g),Recovered (g),Crude mp (°C),mp Trial 1,mp Trial 2\n\
         s1,U-1,acetanilide,3.0,2.25,110.0-113.0,113.4-114.2,113.6-114.4\n\
         s2,U-1,benzoic acid,3.0,2.25,110.0-113.0,113.4-114.2,113.6-114.4\n",
    );
    f.write("key.csv", "Code,Compound\nU-1,acetanilide\n");
    let rubric = std::path::Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("rubrics/unknown-identification.toml");
    let r = grade(
        &f,
        &[
            "unk.csv",
            "--key",
            "key.csv",
            "--rubric",
            rubric.to_str().unwrap(),
        ],
    );
    // hand-worked: identification pass 30 or 0; recovery 100 x 2.25 / 3.0 = 75 %, full 20;
    // clear point mean (114.2 + 114.4) / 2 = 114.3, rise 114.3 - 113.0 = 1.3 of 2.0, so
    // 15 x 1.3 / 2.0 = 9.75, rounded to the rubric's 0.5 steps: 10; mean onset 113.5, width 0.8, 15 points, crude width 3.0, narrowing
    // 3.0 - 0.8 = 2.2, full 10; trials 0.2 apart, 10 points
    assert_eq!(r[0]["points_identification"], "30");
    assert_eq!(r[1]["points_identification"], "0");
    close(&r[0], "points_purification", 10.0);
    close(&r[0], "points_narrowing", 10.0);
    close(&r[0], "points_trials", 10.0);
    close(&r[0], "points_recovery", 20.0);
    close(&r[0], "points_range", 15.0);
    let labels = [
        "Identification of the unknown",
        "Recovery",
        "Melting point rise on recrystallization",
        "Range narrowing on recrystallization",
        "Melting range",
        "Agreement of the two capillaries",
    ];
    for row in &r {
        let total = benchgrade::rubric::score::audit_feedback(&row["feedback"], &labels)
            .unwrap_or_else(|e| panic!("{e}: {}", row["feedback"]));
        close(row, "score", total);
    }
    assert!(r[0]["feedback"].contains("correctly identified as acetanilide"));
    assert!(
        r[1]["feedback"].contains("but it was acetanilide"),
        "{}",
        r[1]["feedback"]
    );
}

/// A key with one wrong code is caught by the cohort report: most students given U-3 name
/// acetanilide and their clear points sit near 114 °C, far from benzoic acid's 122 °C.
#[test]
fn the_report_checks_the_key_against_the_class() {
    let f = Fixture::new();
    let mut class = String::from(
        "Student ID,Section,Unknown #,Identified as,Crude (g),Recovered (g),Recryst. mp (°C)\n",
    );
    for (i, (named, mp)) in [
        ("acetanilide", "113.1-114.0"),
        ("acetanilide", "113.4-114.3"),
        ("acetanilide", "113.0-114.1"),
        ("acetanilide", "113.6-114.5"),
        ("benzoic acid", "113.2-114.2"),
    ]
    .iter()
    .enumerate()
    {
        class.push_str(&format!("s{i},A,U-3,{named},3.0,2.0,{mp}\n"));
    }
    for i in 0..4 {
        class.push_str(&format!("t{i},B,U-1,acetanilide,3.0,2.0,113.3-114.2\n"));
    }
    f.write("class.csv", class);
    f.write(
        "key.csv",
        "Code,Compound\nU-1,acetanilide\nU-3,benzoic acid\n",
    );
    let r = grade(&f, &["class.csv", "--key", "key.csv"]);
    assert_eq!(r.len(), 9);
    let html = std::fs::read_to_string(f.path("out").join("cohort-report.html")).unwrap();
    // hand-worked: 4 of 5 named acetanilide; median clear point of 114.0, 114.3, 114.1, 114.5,
    // 114.2 is 114.2 °C
    assert!(
        html.contains(
            "unknown U-3: the key says benzoic acid, but 4 of 5 students named acetanilide"
        ),
        "{html}"
    );
    assert!(html.contains("median 114.2 °C"));
    assert!(!html.contains("unknown U-1:"), "U-1 agrees with its key");
    assert!(html.contains("<h2>Unknowns</h2>"));
}

/// Handouts show the crude and recrystallized ranges, the weighings, the trials, the
/// identification and the mixed melting point; `check --explain` says what the new flags mean.
#[test]
fn handouts_and_check_show_the_experiment() {
    let f = Fixture::new();
    f.write(
        "sec.csv",
        "Student ID,Unknown #,Identified as,Empty vial (g),Vial + crude (g),Recovered (g),Crude mp (°C),mp Trial 1,mp Trial 2,Mixed mp (°C)\n\
         s1,U-2,acetanilide,12.105,15.432,2.0,114.0-119.5,120.5-121.8,119.0-120.0,108.0-115.0\n",
    );
    f.write("key.csv", "Code,Compound\nU-2,benzoic acid\n");
    let r = grade(&f, &["sec.csv", "--key", "key.csv"]);
    assert_eq!(r.len(), 1);
    let page = std::fs::read_to_string(f.path("out").join("handouts").join("sec.html")).unwrap();
    for want in [
        "Crude melting range (°C)",
        "114.0-119.5",
        "Trial 2 (°C)",
        "119.0-120.0",
        "wrong (it was benzoic acid)",
        "108.0-115.0",
        "15.432 - 12.105",
        // hand-worked: 15.432 - 12.105 = 3.327
        "3.327",
    ] {
        assert!(page.contains(want), "{want}: {page}");
    }
    let run = f.run(&["check", "sec.csv", "--key", "key.csv", "--explain"]);
    for want in [
        "crude mass = E - D",
        "melting range = mean of the trials in H, I",
        "trials-disagree",
        "mixed-mp-contradicts",
        "repeat melting-point determinations differ",
    ] {
        assert!(run.stdout.contains(want), "{want}: {}", run.stdout);
    }
}

/// The sample class's section 04 runs the whole experiment; its answer key has U-3 wrong
/// (phenacetin for a bottle of acetanilide, invented), and the report says so.
#[test]
fn the_sample_class_catches_its_wrong_key() {
    let f = Fixture::new();
    let run = f.run(&["grade", "--out", "out", "--quiet"]);
    assert_eq!(run.code, 0, "{}", run.stderr);
    let r = f.results("out");
    let four: Vec<_> = r.iter().filter(|x| x["section"] == "section-04").collect();
    assert_eq!(four.len(), 12);
    assert!(four.iter().all(|x| !x["identification"].is_empty()));
    let html = std::fs::read_to_string(f.path("out").join("cohort-report.html")).unwrap();
    assert!(
        html.contains("unknown U-3: the key says phenacetin"),
        "the wrong key entry is named"
    );
    assert!(!html.contains("unknown U-1:") && !html.contains("unknown U-2:"));
    // the graded workbook of section 04 carries the whole experiment's columns; section 01's,
    // kept without them, does not
    use calamine::{open_workbook, Data, Reader, Xlsx};
    let headers = |file: &str| -> Vec<String> {
        let mut wb: Xlsx<_> = open_workbook(f.path("out").join(file)).unwrap();
        let name = wb.sheet_names()[0].clone();
        let range = wb.worksheet_range(&name).unwrap();
        range
            .rows()
            .flat_map(|r| r.iter())
            .filter_map(|c| match c {
                Data::String(t) => Some(t.clone()),
                _ => None,
            })
            .collect()
    };
    let four = headers("section-04-graded.xlsx");
    for want in [
        "Melting point rise (°C)",
        "Crude tare (g)",
        "Trial spread (°C)",
        "Mixed depression (°C)",
    ] {
        assert!(four.iter().any(|h| h == want), "{want}");
    }
    assert!(!headers("section-01-graded.xlsx")
        .iter()
        .any(|h| h == "Melting point rise (°C)"));
}

/// The four ways of keeping the experiment, saved by LibreOffice Calc as .xlsx, .ods and .xls
/// (tests/data/experiment-files, made by its make.py), grade with no mapping file exactly as the
/// CSV text does, with the hand-worked numbers of the tests above.
#[test]
fn libreoffice_saved_classes_grade_alike_in_every_format() {
    let data = std::path::Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/data/experiment-files");
    let key = data.join("key.csv");
    let mut by_format = Vec::new();
    for ext in ["csv", "xlsx", "ods", "xls"] {
        let f = Fixture::new();
        let dir = data.join(ext);
        let run = f.run(&[
            "grade",
            dir.to_str().unwrap(),
            "--key",
            key.to_str().unwrap(),
            "--out",
            "out",
        ]);
        assert_eq!(run.code, 0, "{ext}: {}", run.stderr);
        let rows: Vec<Vec<String>> = f
            .results("out")
            .iter()
            .map(|r| {
                [
                    "section",
                    "student_id",
                    "crude_mass_g",
                    "recovered_mass_g",
                    "mp_onset_c",
                    "mp_clear_c",
                    "flags",
                    "score",
                    "mp_rise_c",
                    "range_narrowing_c",
                    "crude_tare_g",
                    "mp_trials",
                    "trial_spread_c",
                    "identification",
                    "identity",
                    "mixed_depression_c",
                ]
                .iter()
                .map(|c| r[*c].clone())
                .collect()
            })
            .collect();
        assert_eq!(rows.len(), 12, "{ext}");
        by_format.push((ext, rows));
    }
    for (ext, rows) in &by_format[1..] {
        assert_eq!(rows, &by_format[0].1, "{ext} against csv");
    }
    // hand-worked, as in the tests above: rise 121.9 - 119.5 = 2.4; crude 15.432 - 12.105;
    // mean clear (121.8 + 122.4) / 2 = 122.1; mixed 122.0 - 115.0 = 7.0
    let rows = &by_format[2].1; // the .ods
    let find = |id: &str| rows.iter().find(|r| r[1] == id).unwrap();
    let n = |s: &str| s.parse::<f64>().unwrap();
    assert!((n(&find("E101")[8]) - 2.4).abs() < 1e-9);
    assert!((n(&find("E201")[2]) - (15.432 - 12.105)).abs() < 1e-9);
    assert!((n(&find("E301")[5]) - 122.1).abs() < 1e-9);
    assert!((n(&find("E402")[15]) - 7.0).abs() < 1e-9);
    assert_eq!(find("E402")[13], "wrong");
    assert!(find("E202")[6].contains("net-mismatch"));
    assert!(find("E302")[6].contains("trials-disagree"));
    assert!(find("E102")[6].contains("no-purification-shown"));
}
