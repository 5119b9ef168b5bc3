//! Messy sheets as assistants keep them: title rows, merged cells, mg and °F headers, error
//! cells, odd range strings, decimal commas, and files that cannot be read at all.

use approx::assert_relative_eq;
use rust_xlsxwriter::{ExcelDateTime, Format, Formula};

use crate::harness::{by_id, flags, num, Fixture};

fn messy_workbook(f: &Fixture) {
    f.xlsx("sec-7.xlsx", |wb| {
        let ws = wb.add_worksheet().set_name("Section 7").unwrap();
        let bold = Format::new().set_bold();
        ws.merge_range(0, 0, 0, 6, "Recrystallization results, section 7", &bold)
            .unwrap();
        ws.write_string(2, 0, "Student #").unwrap();
        ws.write_string(2, 1, "Crude (mg)").unwrap();
        ws.write_string(2, 2, "Mass recovered / g").unwrap();
        ws.write_string(2, 3, "MP start (°F)").unwrap();
        ws.write_string(2, 4, "MP end (°F)").unwrap();
        ws.write_string(2, 5, "% recovery").unwrap();
        // a: 3020 mg crude, 2.31 g recovered, 248-251.6 °F = 120.0-122.0 °C (hand-worked)
        ws.write_string(3, 0, "a1").unwrap();
        ws.write_number(3, 1, 3020.0).unwrap();
        ws.write_number(3, 2, 2.31).unwrap();
        ws.write_number(3, 3, 248.0).unwrap();
        ws.write_number(3, 4, 251.6).unwrap();
        ws.write_formula(3, 5, Formula::new("=C4/0").set_result("#DIV/0!"))
            .unwrap();
        // b: a date where a mass belongs, text with units in a cell
        ws.write_string(4, 0, "b2").unwrap();
        ws.write_datetime_with_format(
            4,
            1,
            ExcelDateTime::from_ymd(2026, 10, 6).unwrap(),
            &Format::new().set_num_format("yyyy-mm-dd"),
        )
        .unwrap();
        ws.write_string(4, 2, "1,85 g").unwrap();
        ws.write_string(4, 3, "249 °F").unwrap();
        ws.write_string(4, 4, "121 °C").unwrap();
        ws.write_string(7, 0, "Total").unwrap();
        ws.write_number(7, 1, 99.0).unwrap();
    });
}

#[test]
fn title_rows_merged_cells_mg_and_fahrenheit_headers() {
    let f = Fixture::new();
    messy_workbook(&f);
    let run = f.run(&["grade", "sec-7.xlsx", "--out", "out"]);
    assert_eq!(run.code, 0, "{}", run.stderr);
    let rows = f.results("out");
    assert_eq!(rows.len(), 2, "the totals row is not a student");
    let a = by_id(&rows, "a1");
    assert_eq!(a["row"], "4");
    assert_eq!(a["section"], "Section 7");
    assert_relative_eq!(num(a, "crude_mass_g").unwrap(), 3.02, epsilon = 1e-12);
    assert_relative_eq!(num(a, "mp_onset_c").unwrap(), 120.0, epsilon = 1e-9);
    assert_relative_eq!(num(a, "mp_clear_c").unwrap(), 122.0, epsilon = 1e-9);
    // 100 x 2.31 / 3.02 = 76.4900662... (hand-worked)
    assert_relative_eq!(
        num(a, "recovery_pct").unwrap(),
        76.490_066_225_165_56,
        epsilon = 1e-9
    );
    assert_eq!(flags(a), vec!["unreadable-value"]);
    assert!(
        a["flag_notes"].contains("'Section 7'!F4") && a["flag_notes"].contains("#DIV/0!"),
        "{}",
        a["flag_notes"]
    );
    let b = by_id(&rows, "b2");
    assert!(
        b["flag_notes"].contains("'Section 7'!B5 holds a date"),
        "{}",
        b["flag_notes"]
    );
    assert_relative_eq!(num(b, "recovered_mass_g").unwrap(), 1.85, epsilon = 1e-12);
    // a cell's own unit wins over the header's: 121 °C stays 121 °C
    assert_relative_eq!(num(b, "mp_clear_c").unwrap(), 121.0, epsilon = 1e-12);
    // (249 - 32) x 5/9 = 120.555... °C
    assert_relative_eq!(
        num(b, "mp_onset_c").unwrap(),
        120.555_555_555_555_6,
        epsilon = 1e-9
    );
}

#[test]
fn semicolon_csv_with_decimal_commas_latin1_and_odd_ranges() {
    let f = Fixture::new();
    let text = "Kurs CHEM 2150;;;\nMatrikel ID;Name;Crude mass (g);Recovered mass (g);m.p. range (°C)\n\
                s1;Zoë;3,02;2,31;121–122 °C\ns2;José;2,50;2,60;~121-122\ns3;Léa;3,00;2,10;121 to 122,5\n\
                s4;Noé;3,00;2,10;122\ns5;Aimé;3,00;2,10;121,5 - 122\ns6;Inès;3,00;2,10;122-119\n";
    let (latin1, _, _) = encoding_rs::WINDOWS_1252.encode(text);
    f.write("sec-8.csv", latin1);
    let run = f.run(&["grade", "sec-8.csv", "--out", "out"]);
    assert_eq!(run.code, 0, "{}", run.stderr);
    let rows = f.results("out");
    assert_eq!(rows.len(), 6);
    assert_eq!(by_id(&rows, "s1")["student_name"], "Zoë");
    assert_eq!(by_id(&rows, "s1")["row"], "3");
    assert_eq!(by_id(&rows, "s1")["sheet"], "");
    assert_eq!(by_id(&rows, "s1")["section"], "sec-8");
    let ranges: Vec<(f64, f64)> = rows
        .iter()
        .map(|r| (num(r, "mp_onset_c").unwrap(), num(r, "mp_clear_c").unwrap()))
        .collect();
    assert_eq!(
        ranges,
        vec![
            (121.0, 122.0),
            (121.0, 122.0),
            (121.0, 122.5),
            (122.0, 122.0),
            (121.5, 122.0),
            (122.0, 119.0)
        ]
    );
    assert!(by_id(&rows, "s4")["notes"].contains("one melting value"));
    assert_eq!(num(by_id(&rows, "s6"), "range_width_c"), Some(-3.0));
    assert!(flags(by_id(&rows, "s6")).contains(&"range-inverted"));
    assert!(flags(by_id(&rows, "s2")).contains(&"recovery-over-100"));
}

#[test]
fn bom_csv_and_an_explicit_column_mapping() {
    let f = Fixture::new();
    f.write(
        "late.csv",
        "\u{feff}Who,Wt A,Wt B,Melting range\nq1,3.0,2.1,120-121\n",
    );
    let none = f.run(&["grade", "late.csv", "--out", "out"]);
    assert_eq!(none.code, 1, "no recognisable table without a mapping");
    assert!(none.stderr.contains("late.csv"), "{}", none.stderr);
    f.write("cols.toml", "[columns]\n\"Who\" = \"student_id\"\n\"Wt A\" = \"crude_mass\"\n\"Wt B\" = \"recovered_mass\"\n");
    let run = f.run(&[
        "grade",
        "late.csv",
        "--columns",
        "cols.toml",
        "--out",
        "out",
    ]);
    assert_eq!(run.code, 0, "{}", run.stderr);
    let rows = f.results("out");
    assert_eq!(rows[0]["student_id"], "q1");
    assert_relative_eq!(num(&rows[0], "recovery_pct").unwrap(), 70.0, epsilon = 1e-9);
    let check = f.run(&["check", "late.csv", "--columns", "cols.toml"]);
    assert!(
        check.stdout.contains("\"Wt A\"") && check.stdout.contains("crude mass (mapped)"),
        "{}",
        check.stdout
    );
}

#[test]
fn an_ambiguous_header_names_both_candidates() {
    let f = Fixture::new();
    f.write(
        "amb.csv",
        "ID,Crude mass (g),Crude (g),Recovered (g),MP\ns1,3,3,2,121-122\n",
    );
    f.write(
        "ok.csv",
        "ID,Crude mass (g),Recovered (g),MP\ns2,3,2,121-122\n",
    );
    let run = f.run(&["grade", "amb.csv", "ok.csv", "--out", "out"]);
    assert_eq!(run.code, 1);
    assert!(
        run.stderr.contains("\"Crude mass (g)\"") && run.stderr.contains("\"Crude (g)\""),
        "{}",
        run.stderr
    );
    // the ambiguous sheet is still graded, its rows missing the field no column was chosen for
    let rows = f.results("out");
    assert_eq!(rows.len(), 2, "both files are graded");
    let amb = rows.iter().find(|r| r["student_id"] == "s1").unwrap();
    assert!(amb["flags"].contains("missing-value"), "{amb:?}");
    let ok = rows.iter().find(|r| r["student_id"] == "s2").unwrap();
    assert!(!ok["flags"].contains("missing-value"), "{ok:?}");
}

#[test]
fn unreadable_files_get_one_line_each_and_the_rest_is_graded() {
    let f = Fixture::new();
    messy_workbook(&f);
    let good = std::fs::read(f.path("sec-7.xlsx")).unwrap();
    f.write("in/truncated.xlsx", &good[..good.len() / 2]);
    f.write("in/renamed.xlsx", "Student,Crude\nthis is text\n");
    f.write("in/empty.csv", "");
    f.write("in/report.docx", "not a spreadsheet");
    f.write("in/~$sec-7.xlsx", "lock file");
    std::fs::copy(f.path("sec-7.xlsx"), f.path("in/sec-7.xlsx")).unwrap();
    let before: Vec<_> = std::fs::read_dir(f.path("in"))
        .unwrap()
        .map(|e| e.unwrap().file_name())
        .collect();
    let run = f.run(&["grade", "in", "in/report.docx", "--out", "out"]);
    assert_eq!(run.code, 1, "{}", run.stderr);
    for name in ["truncated.xlsx", "renamed.xlsx", "empty.csv", "report.docx"] {
        assert_eq!(
            run.stderr.lines().filter(|l| l.contains(name)).count(),
            1,
            "{name}: {}",
            run.stderr
        );
    }
    assert!(
        !run.stderr.contains("~$"),
        "lock files are skipped silently"
    );
    assert_eq!(f.results("out").len(), 2);
    let after: Vec<_> = std::fs::read_dir(f.path("in"))
        .unwrap()
        .map(|e| e.unwrap().file_name())
        .collect();
    assert_eq!(
        before.len(),
        after.len(),
        "nothing written next to the inputs"
    );
}

#[test]
fn a_bad_rubric_writes_nothing_and_exits_2() {
    let f = Fixture::new();
    f.write(
        "ok.csv",
        "ID,Crude mass (g),Recovered (g),MP\ns2,3,2,121-122\n",
    );
    f.write(
        "bad.toml",
        "[experiment]\nname = \"x\"\n[tolerances]\nabove_refrence_c = 2\n",
    );
    let run = f.run(&["grade", "ok.csv", "--rubric", "bad.toml", "--out", "out"]);
    assert_eq!(run.code, 2);
    assert!(run.stderr.contains("bad.toml:4:1"), "{}", run.stderr);
    assert!(!f.path("out").exists());
}

#[test]
fn reference_mp_option_and_unknown_compounds() {
    let f = Fixture::new();
    f.write("c.csv", "ID,Compound,Crude mass (g),Recovered (g),MP\ns1,benzoic acid,3,2,121.5-122.5\ns2,Aspirin,3,2,134-135\ns3,unobtainium,3,2,100-101\n");
    let run = f.run(&["grade", "c.csv", "--reference-mp", "122.0", "--out", "out"]);
    assert_eq!(run.code, 0, "{}", run.stderr);
    let rows = f.results("out");
    assert_eq!(num(&rows[0], "reference_mp_c"), Some(122.0));
    assert_eq!(rows[1]["compound"], "acetylsalicylic acid");
    assert_eq!(num(&rows[1], "reference_mp_c"), Some(135.0));
    assert_eq!(flags(&rows[2]), vec!["unknown-compound"]);
    assert_eq!(rows[2]["reference_mp_c"], "");
}

/// Section labels that differ only in case or spacing are one section, said once per spelling;
/// labels that differ in a digit or in what stands between two digits ("2.1", "21", "Lab 1/2",
/// "Lab 12") are sections of their own.
#[test]
fn section_labels_merge_only_on_case_spacing_and_punctuation_and_say_so() {
    let f = Fixture::new();
    let mut csv =
        String::from("Section,Student ID,Name,Crude (g),Recovered (g),MP onset,MP clear\n");
    let labels = ["2.1", "21", "Lab 1/2", "Lab 12", "Sec A", "sec  a", "Sec A"];
    for (i, s) in labels.iter().enumerate() {
        csv.push_str(&format!(
            "{s},{},Student {i},2.50,1.80,121.0,122.0\n",
            9100 + i
        ));
    }
    f.write("sections.csv", csv);
    let run = f.run(&["grade", "sections.csv", "--out", "out"]);
    assert_eq!(run.code, 0, "{}", run.stderr);
    let rows = f.results("out");
    let sections: Vec<&str> = rows.iter().map(|r| r["section"].as_str()).collect();
    assert_eq!(
        sections,
        ["2.1", "21", "Lab 1/2", "Lab 12", "Sec A", "Sec A", "Sec A"]
    );
    assert!(rows
        .iter()
        .all(|r| !r["flags"].contains("duplicate-student")));
    let notes: Vec<&str> = run
        .stderr
        .lines()
        .filter(|l| l.contains("is graded as section"))
        .collect();
    assert_eq!(
        notes.len(),
        1,
        "one note for the one other spelling: {notes:?}"
    );
    assert!(
        notes[0].contains("row 7")
            && notes[0].contains("\"sec  a\" is graded as section \"Sec A\"")
    );
    let handouts = std::fs::read_dir(f.path("out/handouts")).unwrap().count();
    assert_eq!(handouts, 5, "a handout file per section");
}

/// A percentage is read as its cell shows it in every format (a trial: .ods read the formula's
/// 73.995 % where .xlsx and .xls read the 74.0 % shown, and only .ods flagged a mismatch).
#[test]
fn a_percentage_reads_as_shown_in_ods_as_in_xlsx_and_xls() {
    let f = Fixture::new();
    let dir = crate::harness::project_root().join("tests/data/real-files");
    let mut graded = Vec::new();
    for ext in ["ods", "xlsx", "xls"] {
        let file = dir.join(format!("shown-percent.{ext}"));
        let out = format!("out-{ext}");
        let run = f.run(&["grade", file.to_str().unwrap(), "--out", &out]);
        assert_eq!(run.code, 0, "{ext}: {}", run.stderr);
        let rows: Vec<(String, String, String)> = f
            .results(&out)
            .iter()
            .map(|r| {
                (
                    r["reported_recovery_pct"].clone(),
                    r["score"].clone(),
                    r["flags"].clone(),
                )
            })
            .collect();
        assert_eq!(rows.len(), 3, "{ext}");
        graded.push(rows);
    }
    assert!(
        graded.iter().flatten().all(|(p, _, _)| p == "74"),
        "{graded:?}"
    );
    assert_eq!(graded[0], graded[1], "ods as xlsx");
    assert_eq!(graded[1], graded[2], "xlsx as xls");
}

/// Weighing by difference (common practice): the vial empty and with the crystals are not the
/// recovered mass; the column that says so is, and an example mapping never names a column set
/// aside for a reason (a trial: "Vial + crystals" took the recovered mass from "Recovered", and
/// the fix offered named the lab partner's column).
#[test]
fn a_tare_and_a_gross_mass_are_not_the_product_s_mass() {
    let f = Fixture::new();
    let head = "Student ID,Lab partner,Vial + crystals (g),Empty vial (g),Crude (g),Recovered (g),MP onset,MP clear\n";
    f.write(
        "by-difference.csv",
        format!("{head}7101,Ana,13.95,12.15,2.40,1.80,121.0,122.0\n"),
    );
    let run = f.run(&["grade", "by-difference.csv", "--out", "out"]);
    assert_eq!(run.code, 0, "{}", run.stderr);
    let r = &f.results("out")[0];
    assert_eq!(r["recovered_mass_g"], "1.8");
    // hand-worked: 100 x 1.80 / 2.40
    assert_eq!(r["recovery_pct"], "75");
    // without the net column, the recovered mass is the difference of the weighings:
    // 13.95 - 12.15 = 1.80 g (hand-worked), and `check` shows the pairing
    let head =
        "Student ID,Lab partner,Vial + crystals (g),Empty vial (g),Crude (g),MP onset,MP clear\n";
    f.write(
        "no-net.csv",
        format!("{head}7101,Ana,13.95,12.15,2.40,121.0,122.0\n"),
    );
    let run = f.run(&["check", "no-net.csv"]);
    assert!(
        run.stdout.contains("recovered mass = C - D"),
        "{}\n{}",
        run.stdout,
        run.stderr
    );
    assert!(!run.stdout.contains("no column for the recovered mass"));
    let run = f.run(&["grade", "no-net.csv", "--out", "out2"]);
    assert_eq!(run.code, 0, "{}", run.stderr);
    let r = &f.results("out2")[0];
    let rec: f64 = r["recovered_mass_g"].parse().unwrap();
    assert!((rec - 1.80).abs() < 1e-9, "{rec}");
    // without any weighing of it, the message offers no partner's or container's column
    let head = "Student ID,Lab partner,Vial after transfer (g),Empty vial (g),Crude (g),MP onset,MP clear\n";
    f.write(
        "no-mass.csv",
        format!("{head}7101,Ana,12.16,12.15,2.40,121.0,122.0\n"),
    );
    let run = f.run(&["check", "no-mass.csv"]);
    let message = run
        .stderr
        .lines()
        .chain(run.stdout.lines())
        .find(|l| l.contains("no column for the recovered mass"))
        .unwrap_or_else(|| panic!("{}\n{}", run.stdout, run.stderr))
        .to_string();
    for letter in ["B", "C", "D"] {
        assert!(
            !message.contains(&format!("\"column {letter}\" = ")),
            "{message}"
        );
    }
}

/// "the sheet has no column for it" only when it has none: blank cells under onset and clear
/// columns are blank cells (a trial: the note said the sheet had no column).
#[test]
fn a_blank_melting_entry_is_not_a_missing_column() {
    let f = Fixture::new();
    for (name, head, cells) in [
        (
            "none.csv",
            "Student ID,Crude (g),Recovered (g)",
            "1,2.0,1.5",
        ),
        (
            "split.csv",
            "Student ID,Crude (g),Recovered (g),MP start,MP end",
            "1,2.0,1.5,,",
        ),
        (
            "range.csv",
            "Student ID,Crude (g),Recovered (g),Melting range",
            "1,2.0,1.5,",
        ),
    ] {
        f.write(name, format!("{head}\n{cells}\n"));
        let run = f.run(&["check", name]);
        let says = run.stdout.contains("(the sheet has no column for it)");
        assert_eq!(says, name == "none.csv", "{name}: {}", run.stdout);
        assert!(
            run.stdout.contains("missing-value: no melting onset"),
            "{name}"
        );
    }
}

/// A sheet the workbook hides (a template with an example student, an old copy) is not graded
/// and is said (a trial: "Example, Student" got an A and a section of its own).
#[test]
fn a_hidden_sheet_is_passed_over_with_a_note() {
    let f = Fixture::new();
    f.xlsx("sec-8.xlsx", |wb| {
        for (name, id, hidden) in [("Sec 08", "8101", false), ("Template", "0000", true)] {
            let ws = wb.add_worksheet().set_name(name).unwrap();
            ws.write_row(
                0,
                0,
                [
                    "Student ID",
                    "Crude (g)",
                    "Recovered (g)",
                    "MP onset",
                    "MP clear",
                ],
            )
            .unwrap();
            ws.write_string(1, 0, id).unwrap();
            ws.write_row(1, 1, [2.4, 1.8, 121.0, 122.0]).unwrap();
            ws.set_hidden(hidden);
        }
    });
    let run = f.run(&["grade", "sec-8.xlsx", "--out", "out"]);
    assert_eq!(run.code, 0, "{}", run.stderr);
    let rows = f.results("out");
    assert_eq!(rows.len(), 1);
    assert_eq!(rows[0]["student_id"], "8101");
    assert!(
        run.stderr
            .contains("[sheet \"Template\"]: skipped: the workbook hides this sheet"),
        "{}",
        run.stderr
    );
}
