//! Slips met when a coordinator tried the roster, the corrections and the entry workbooks with
//! invented students (each test names what went wrong before): a name typed without its
//! apostrophe, a roster listing an id three times, a correction giving a row another row's id,
//! a corrected mass whose comma could be a decimal comma or thousands.

use crate::harness::{by_id, Fixture};

/// A class of one invented student.
const ONE_STUDENT: &str = "Student ID,Name,Crude mass (g),Recovered mass (g),Melting range (°C)\n\
     2026001,Amara Hollin,3.0,2.1,121.5-122.3\n";

/// `grade class.csv --corrections FILE --out out` in the fixture.
fn grade_corrected(f: &Fixture, corrections: &str) -> crate::harness::Run {
    f.run(&[
        "grade",
        "class.csv",
        "--corrections",
        corrections,
        "--out",
        "out",
    ])
}

/// A name is compared without its punctuation inside the name: "O'Neil" typed "ONeil" (or
/// a hyphenated surname typed as two words) is the rostered student, not a `name-mismatch`.
/// Before, only punctuation read as a space agreed ("O Neil").
#[test]
fn a_name_typed_without_its_apostrophe_or_hyphen_is_the_same_student() {
    let f = Fixture::new();
    f.write(
        "roster.csv",
        "Student ID,Name,Section\n\
         100001,\"O'Neil, Siobhán\",A\n\
         100002,\"Delacroix-Navarro, Renée\",A\n\
         100003,\"Østby, Ugo\",A\n\
         100004,\"Varga, Ilsa\",A\n",
    );
    f.write(
        "class.csv",
        "Student ID,Name,Section,Crude mass (g),Recovered mass (g),Melting range (°C)\n\
         100001,Siobhan ONeil,A,3.0,2.1,121.5-122.3\n\
         100002,Renee DelacroixNavarro,A,3.0,2.1,121.5-122.3\n\
         100003,UGO OSTBY,A,3.0,2.1,121.5-122.3\n\
         100004,Ilsa Vargas,A,3.0,2.1,121.5-122.3\n",
    );
    let run = f.run(&[
        "grade",
        "class.csv",
        "--roster",
        "roster.csv",
        "--out",
        "out",
    ]);
    assert_eq!(run.code, 0, "{}", run.stderr);
    let rows = f.results("out");
    for id in ["100001", "100002", "100003"] {
        assert!(by_id(&rows, id)["flags"].is_empty(), "{id}");
    }
    // another surname is still another name
    assert_eq!(by_id(&rows, "100004")["flags"], "name-mismatch");
}

/// An id the roster lists three times is named with its first listing each time, and
/// `template` says which roster rows it left out of the entry sheets (it said nothing, and the
/// rows were silently missing from the sheets); the note names the row once, not the file twice.
#[test]
fn template_says_which_roster_rows_it_left_out() {
    let f = Fixture::new();
    f.write(
        "roster.csv",
        "Student ID,Name,Section\n\
         100001,Ilsa Varga,A\n\
         100001,Ilsa Varga,A\n\
         100001,Bram Harrow,A\n\
         ,Nobody Listed,A\n\
         100002,Kofi Pellew,A\n",
    );
    let run = f.run(&["template", "--roster", "roster.csv", "--out", "entry"]);
    assert_eq!(run.code, 0, "{}", run.stderr);
    for row in [3, 4] {
        let note =
            format!("roster.csv: row {row}: a student id listed again (first at roster.csv row 2)");
        assert!(run.stderr.contains(&note), "{note}\n{}", run.stderr);
    }
    assert!(
        run.stderr
            .contains("row 5: a roster row without a student id"),
        "{}",
        run.stderr
    );
    assert!(
        !run.stderr.contains("roster.csv: roster.csv"),
        "{}",
        run.stderr
    );
    assert!(!run.stderr.contains("100001"), "no id on standard error");
    assert!(f.path("entry/A-entry.xlsx").is_file());
}

/// A correction that gives a row another row's id stops the run naming the line that did it
/// (the message named only the file, with a count).
#[test]
fn a_clashing_corrected_id_is_named_by_its_line() {
    let f = Fixture::new();
    f.write(
        "class.csv",
        "Student ID,Name,Crude mass (g),Recovered mass (g),Melting range (°C)\n\
         2026001,Amara Hollin,3.0,2.1,121.5-122.3\n\
         2026002,Bastian Jessop,3.0,2.4,121.4-122.2\n\
         2026003,Corinne Cealy,3.0,2.4,121.4-122.2\n",
    );
    f.write(
        "c.csv",
        "student_id,section,field,value,reason,grader\n\
         2026003,,crude_mass,2.9,re-weighed,P. Quist\n\
         2026001,,student_id,2026002,typo?,P. Quist\n",
    );
    let run = grade_corrected(&f, "c.csv");
    assert_eq!(run.code, 2, "{}", run.stderr);
    assert!(
        run.stderr.contains("c.csv:3: the id this line sets"),
        "{}",
        run.stderr
    );
    assert!(!run.stderr.contains("c.csv:2"), "{}", run.stderr);
    assert!(!run.stderr.contains("2026002"), "no id on standard error");
    assert!(!f.path("out/results.csv").exists());
}

/// "2,905" in a correction could be 2.905 g (a decimal comma) or 2905 g (thousands): it is
/// asked for again, naming both readings, where it was read as 2905 g, a mass a thousand
/// times too large. "0,745" can only be a decimal comma and is taken (hand-worked: 0.745 g).
#[test]
fn a_corrected_mass_whose_comma_could_mean_thousands_is_asked_for_again() {
    let f = Fixture::new();
    f.write("class.csv", ONE_STUDENT);
    f.write(
        "c.csv",
        "student_id,section,field,value,reason,grader\n2026001,,crude_mass,\"2,905\",re-weighed,P. Quist\n",
    );
    let run = grade_corrected(&f, "c.csv");
    assert_eq!(run.code, 2, "{}", run.stderr);
    assert!(
        run.stderr.contains("c.csv:2:")
            && run.stderr.contains("2.905")
            && run.stderr.contains("2905"),
        "{}",
        run.stderr
    );
    f.write(
        "ok.csv",
        "student_id,section,field,value,reason,grader\n2026001,,recovered_mass,\"0,745\",typed with a comma,P. Quist\n",
    );
    let run = grade_corrected(&f, "ok.csv");
    assert_eq!(run.code, 0, "{}", run.stderr);
    let rows = f.results("out");
    assert_eq!(rows[0]["recovered_mass_g"], "0.745");
    assert!(
        rows[0]["corrections"].contains("to 0.745 g"),
        "{}",
        rows[0]["corrections"]
    );
}

/// `check` shows the roster's columns under one line that says so; it printed "read from"
/// followed by the inputs' "Columns" heading.
#[test]
fn check_shows_the_roster_s_columns_under_one_heading() {
    let f = Fixture::new();
    f.write(
        "roster.csv",
        "Student ID,Name,Section\n100001,Ilsa Varga,A\n100002,Kofi Pellew,A\n",
    );
    f.write(
        "class.csv",
        "Student ID,Name,Section,Crude mass (g),Recovered mass (g),Melting range (°C)\n\
         100001,Ilsa Varga,A,3.0,2.1,121.5-122.3\n",
    );
    let run = f.run(&["check", "class.csv", "--roster", "roster.csv"]);
    assert_eq!(run.code, 0, "{}", run.stderr);
    let lines: Vec<&str> = run.stdout.lines().collect();
    let at = lines
        .iter()
        .position(|l| l.starts_with("Roster: 2 enrolled students"))
        .unwrap_or_else(|| panic!("{}", run.stdout));
    assert!(
        lines[at + 1]
            .trim_start()
            .starts_with("roster.csv: header row 1"),
        "{}",
        run.stdout
    );
    assert_eq!(lines.iter().filter(|l| **l == "Columns").count(), 1);
}

/// A corrections file saved with semicolons (a spreadsheet in a decimal-comma locale) reads
/// its commas as decimal commas, as a semicolon class sheet is read: "2,905" is 2.905 g there
/// (hand-worked), with a byte-order mark before the header.
#[test]
fn a_semicolon_corrections_file_reads_decimal_commas() {
    let f = Fixture::new();
    f.write("class.csv", ONE_STUDENT);
    f.write(
        "c.csv",
        "\u{feff}student_id;section;field;value;reason;grader\n2026001;;crude_mass;2,905;neu gewogen;K. Hahn\n",
    );
    let run = grade_corrected(&f, "c.csv");
    assert_eq!(run.code, 0, "{}", run.stderr);
    let rows = f.results("out");
    assert_eq!(rows[0]["crude_mass_g"], "2.905");
}

/// The roster and the corrections kept in the class folder that is graded are used as what
/// the command line names them, not read as class sheets: they were an error each ("no
/// recognisable table of submissions") and exit code 1.
#[test]
fn a_roster_and_corrections_kept_among_the_inputs_are_not_graded() {
    let f = Fixture::new();
    f.write(
        "term/roster.csv",
        "Student ID,Name,Section\n2026001,Amara Hollin,A\n2026002,Bastian Jessop,A\n",
    );
    f.write(
        "term/fixes.csv",
        "student_id,section,field,value,reason,grader\n2026001,,crude_mass,3.1,re-weighed,P. Quist\n",
    );
    f.write(
        "term/a.csv",
        "Student ID,Name,Section,Crude mass (g),Recovered mass (g),Melting range (°C)\n\
         2026001,Amara Hollin,A,3.0,2.1,121.5-122.3\n",
    );
    let run = f.run(&[
        "grade",
        "term",
        "--roster",
        "term/roster.csv",
        "--corrections",
        "./term/../term/fixes.csv",
        "--out",
        "out",
    ]);
    assert_eq!(run.code, 0, "{}", run.stderr);
    assert!(
        run.stderr
            .contains("roster.csv: read as the roster (--roster), not graded")
            && run
                .stderr
                .contains("fixes.csv: read as the corrections (--corrections), not graded"),
        "{}",
        run.stderr
    );
    assert!(!run.stderr.contains("error"), "{}", run.stderr);
    let rows = f.results("out");
    let statuses: Vec<&str> = rows.iter().map(|r| r["status"].as_str()).collect();
    assert_eq!(statuses, vec!["graded", "no-submission"]);
    assert_eq!(rows[0]["crude_mass_g"], "3.1");
}

/// A roster export with several id-like columns (an internal id beside the registrar's) is
/// refused saying so, with the mapping line to paste (the message said only that no id column
/// was found); mapped, it is read.
#[test]
fn a_roster_with_several_id_columns_says_which_to_map() {
    let f = Fixture::new();
    f.write(
        "export.csv",
        "Student,ID,SIS User ID,SIS Login ID,Section\n\
         \"Hollin, Amara\",88231,2026001,ahollin,L1\n\
         \"Jessop, Bastian\",88232,2026002,bjessop,L1\n",
    );
    f.write(
        "a.csv",
        "Student ID,Name,Section,Crude mass (g),Recovered mass (g),Melting range (°C)\n\
         2026001,Amara Hollin,L1,3.0,2.1,121.5-122.3\n",
    );
    let run = f.run(&["grade", "a.csv", "--roster", "export.csv", "--out", "out"]);
    assert_eq!(run.code, 2, "{}", run.stderr);
    assert!(
        run.stderr.contains("all look like the student id")
            && run.stderr.contains("= \"student_id\""),
        "{}",
        run.stderr
    );
    f.write(
        "map.toml",
        "[columns.\"export.csv\"]\n\"SIS User ID\" = \"student_id\"\n\"ID\" = \"ignore\"\n\"SIS Login ID\" = \"ignore\"\n",
    );
    let run = f.run(&[
        "grade",
        "a.csv",
        "--roster",
        "export.csv",
        "--columns",
        "map.toml",
        "--out",
        "out",
    ]);
    assert_eq!(run.code, 0, "{}", run.stderr);
    let statuses: Vec<String> = f
        .results("out")
        .iter()
        .map(|r| r["status"].clone())
        .collect();
    assert_eq!(statuses, vec!["graded", "no-submission"]);
}

/// A roster that writes sections in full ("CHEM 2299 Lab 101") against sheets that name them by
/// their number ("101", "Section 102"): each row is in its own section, not `other-section`
/// (every row was flagged before), and a student with no row is counted in the sheet's section;
/// a student really in another section is still flagged. Where two roster sections end in the
/// same number, the short name is not taken for either. Invented course and students.
#[test]
fn a_roster_section_written_in_full_is_the_sheet_s_section_number() {
    let f = Fixture::new();
    f.write(
        "roster.csv",
        "Student ID,Name,Section\n\
         310001,Ada Brisk,CHEM 2299 Lab 101\n\
         310002,Bo Carrow,CHEM 2299 Lab 101\n\
         310003,Cy Dunlin,CHEM 2299 Lab 101\n\
         310004,Di Elmore,CHEM 2299 Lab 102\n\
         310005,Ed Fallow,CHEM 2299 Lab 102\n",
    );
    let class = "Student ID,Name,Section,Crude mass (g),Recovered mass (g),Melting range (°C)\n\
         310001,Ada Brisk,101,3.0,2.1,121.5-122.3\n\
         310002,Bo Carrow,101,3.0,2.1,121.5-122.3\n\
         310004,Di Elmore,Section 102,3.0,2.1,121.5-122.3\n\
         310005,Ed Fallow,101,3.0,2.1,121.5-122.3\n";
    f.write("class.csv", class);
    let run = f.run(&[
        "grade",
        "class.csv",
        "--roster",
        "roster.csv",
        "--out",
        "out",
    ]);
    assert_eq!(run.code, 0, "{}", run.stderr);
    let rows = f.results("out");
    for id in ["310001", "310002", "310004"] {
        assert!(
            by_id(&rows, id)["flags"].is_empty(),
            "{id}: {}",
            by_id(&rows, id)["flag_notes"]
        );
    }
    // enrolled in 102, submitted in 101
    assert_eq!(by_id(&rows, "310005")["flags"], "other-section");
    // the student with no row, in the sheets' section "101"
    let missing = by_id(&rows, "310003");
    assert_eq!(missing["status"], "no-submission");
    assert_eq!(missing["section"], "101");
    let stats = crate::harness::read_results(&f.path("out/section-stats.csv"));
    let sections: Vec<&str> = stats.iter().map(|r| r["section"].as_str()).collect();
    assert!(!sections.iter().any(|s| s.contains("CHEM")), "{sections:?}");
    // two roster sections ending in 101: the sheet's "101" is neither
    f.write(
        "roster2.csv",
        "Student ID,Name,Section\n310001,Ada Brisk,CHEM 2299 Lab 101\n310002,Bo Carrow,CHEM 2300 Lab 101\n",
    );
    f.write("one.csv", "Student ID,Name,Section,Crude mass (g),Recovered mass (g),Melting range (°C)\n310001,Ada Brisk,101,3.0,2.1,121.5-122.3\n");
    let run = f.run(&[
        "grade",
        "one.csv",
        "--roster",
        "roster2.csv",
        "--out",
        "out2",
    ]);
    assert_eq!(run.code, 0, "{}", run.stderr);
    assert_eq!(
        by_id(&f.results("out2"), "310001")["flags"],
        "other-section"
    );
}
