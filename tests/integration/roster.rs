//! The roster, as a coordinator uses it at the end of a term: 120 invented students in five
//! sections, sheets kept by four assistants with six students missing, two ids mistyped (one
//! transposition, one dropped digit) and one student graded in another section than their own.
//! Every expected count is worked by hand from how the class below is built.

use std::collections::HashMap;
use std::process::Command;

use crate::harness::{project_root, read_results, Fixture, Record};

const FIRST: [&str; 12] = [
    "Amara", "Bastian", "Corinne", "Dmitri", "Elif", "Farid", "Greta", "Hiro", "Ines", "Jonas",
    "Keiko", "Lucan",
];
const LAST: [&str; 10] = [
    "Ashdown", "Brannock", "Cealy", "Dunmore", "Elsworth", "Farrowby", "Gatwood", "Hollin",
    "Iverley", "Jessop",
];

/// The rostered student `k` (0..120): id, "Last, First", section, assistant.
fn student(k: usize) -> (String, String, String, String) {
    let id = format!("27{:05}", 1000 + k * 7);
    let name = format!("{}, {}", LAST[k % 10], FIRST[k / 10]);
    let section = format!("S{}", k % 5 + 1);
    let assistant = ["T. Marlowe", "P. Quist", "R. Vance", "D. Orsay"][(k % 5) % 4].to_string();
    (id, name, section, assistant)
}

/// Missing: never submitted. Mistyped: (student, the id typed). Moved: submitted in S5.
const MISSING: [usize; 6] = [3, 17, 44, 58, 91, 115];
const MOVED: usize = 21;

fn mistyped(k: usize) -> Option<String> {
    let (id, ..) = student(k);
    match k {
        // two adjacent digits swapped: 2701070 -> 2700170
        10 => {
            let mut c: Vec<char> = id.chars().collect();
            c.swap(3, 4);
            Some(c.into_iter().collect())
        }
        // a digit dropped: 2701231 -> 270231
        33 => Some(format!("{}{}", &id[..3], &id[4..])),
        _ => None,
    }
}

fn class(f: &Fixture) {
    let mut roster = String::from("Student ID,Last name,First name,Section,TA\n");
    let mut sheets: HashMap<String, String> = HashMap::new();
    for k in 0..120 {
        let (id, name, section, ta) = student(k);
        let (last, first) = name.split_once(", ").unwrap();
        roster.push_str(&format!("{id},{last},{first},{section},{ta}\n"));
        if MISSING.contains(&k) {
            continue;
        }
        let id = mistyped(k).unwrap_or(id);
        let at = if k == MOVED {
            "S5".to_string()
        } else {
            section
        };
        let sheet = sheets.entry(at.clone()).or_insert_with(|| {
            format!("Section {at} (TA: {ta})\nStudent ID,Name,Section,Crude mass (g),Recovered mass (g),Melting range (°C)\n")
        });
        let crude = 2.5 + (k % 7) as f64 * 0.1;
        sheet.push_str(&format!(
            "{id},{first} {last},{at},{crude:.2},{:.2},121.2-122.1\n",
            crude * 0.7
        ));
    }
    f.write("roster.csv", roster);
    for (section, text) in sheets {
        f.write(&format!("class/{section}.csv"), text);
    }
}

fn status_of<'a>(rows: &'a [Record], id: &str) -> Vec<&'a Record> {
    rows.iter().filter(|r| r["student_id"] == id).collect()
}

#[test]
fn every_enrolled_student_is_accounted_for() {
    let f = Fixture::new();
    class(&f);
    let run = f.run(&["grade", "class", "--roster", "roster.csv", "--out", "out"]);
    assert_eq!(run.code, 0, "{}", run.stderr);
    // no id or name on standard error
    assert!(!run.stderr.contains(&student(3).0), "{}", run.stderr);
    let rows = f.results("out");
    // 114 rows read (120 - 6 missing) and 8 made from the roster (the 6, and the two whose
    // rows carry a mistyped id)
    assert_eq!(rows.len(), 122);
    let none: Vec<&Record> = rows
        .iter()
        .filter(|r| r["status"] == "no-submission")
        .collect();
    assert_eq!(none.len(), 8);
    assert!(none
        .iter()
        .all(|r| r["flags"].is_empty() && r["score"].is_empty()));
    // the gradebook: one row for each of the 120 enrolled, none for an id not on the roster
    let book = read_results(&f.path("out/gradebook.csv"));
    assert_eq!(book.len(), 120);
    for (k, typed) in [(10, mistyped(10).unwrap()), (33, mistyped(33).unwrap())] {
        let r = status_of(&rows, &typed);
        assert_eq!(r.len(), 1, "{typed}");
        assert!(r[0]["flags"].contains("not-on-roster"));
        let want = format!("one typing slip from {}", student(k).0);
        assert!(r[0]["flag_notes"].contains(&want), "{}", r[0]["flag_notes"]);
        assert!(book.iter().all(|b| b["student_id"] != typed));
        let real = status_of(&rows, &student(k).0);
        assert_eq!(real[0]["status"], "no-submission");
        assert!(
            real[0]["feedback"].contains(&typed),
            "{}",
            real[0]["feedback"]
        );
    }
    let moved = status_of(&rows, &student(MOVED).0);
    assert_eq!(moved[0]["section"], "S5");
    assert!(
        moved[0]["flags"].contains("other-section"),
        "{}",
        moved[0]["flags"]
    );
    // names compared without order: "First Last" on the sheets, "Last, First" on the roster
    assert!(rows.iter().all(|r| !r["flags"].contains("name-mismatch")));
    // the report lists the six by section, the two apart
    let html = std::fs::read_to_string(f.path("out/cohort-report.html")).unwrap();
    let at = html.find("Students with no submission").unwrap();
    let until = html[at..].find("Likely submitted").unwrap();
    let listed = &html[at..at + until];
    for k in MISSING {
        assert!(listed.contains(&student(k).0), "{k}");
    }
    for k in [10, 33] {
        assert!(!listed.contains(&student(k).0));
        assert!(html[at + until..].contains(&student(k).0));
    }
    // section statistics count them apart, never as zeros: S4 lost students 3 and 58
    // (k % 5 == 3) and student 33 (mistyped)
    let stats = read_results(&f.path("out/section-stats.csv"));
    let s4 = stats
        .iter()
        .find(|r| r["section"] == "S4" && r["measure"] == "score")
        .unwrap();
    assert_eq!(s4["no_submission"], "3");
    // check shows how the roster was read
    let check = f.run(&["check", "class", "--roster", "roster.csv"]);
    assert!(
        check.stdout.contains("Roster: 120 enrolled students"),
        "{}",
        check.stdout
    );
    assert!(check.stdout.contains("\"TA\"") && check.stdout.contains("-> teaching assistant"));
    let contract = Command::new("python3")
        .arg(project_root().join("tests/data/check-results-contract.py"))
        .arg(f.path("out/results.csv"))
        .output();
    if let Ok(out) = contract {
        assert!(
            out.status.success(),
            "{}",
            String::from_utf8_lossy(&out.stdout)
        );
    }
}

#[test]
fn a_rubric_can_score_a_missing_report() {
    let f = Fixture::new();
    class(&f);
    let rubric = std::fs::read_to_string(project_root().join("rubrics/default.toml")).unwrap();
    f.write(
        "r.toml",
        rubric.replacen("[grading]\n", "[grading]\nno_submission = 0\n", 1),
    );
    let run = f.run(&[
        "grade",
        "class",
        "--roster",
        "roster.csv",
        "--rubric",
        "r.toml",
        "--out",
        "out",
    ]);
    assert_eq!(run.code, 0, "{}", run.stderr);
    let rows = f.results("out");
    let r = status_of(&rows, &student(3).0);
    assert_eq!(
        (r[0]["status"].as_str(), r[0]["score"].as_str()),
        ("no-submission", "0")
    );
    let labels: Vec<String> = Vec::new();
    let labels: Vec<&str> = labels.iter().map(String::as_str).collect();
    assert_eq!(
        benchgrade::rubric::score::audit_feedback(&r[0]["feedback"], &labels),
        Ok(0.0)
    );
    // scored, a missing report counts in the score's statistics
    let stats = read_results(&f.path("out/section-stats.csv"));
    let s4 = stats
        .iter()
        .find(|r| r["section"] == "S4" && r["measure"] == "score")
        .unwrap();
    assert_eq!(s4["no_submission"], "1");
    // 22 rows read in S4 (24 enrolled, 3 and 58 missing) and two scored 0 (3 and 58; 33,
    // whose row carries a mistyped id, is left blank until the id is confirmed)
    assert_eq!(s4["n"], "24");
    let r33 = status_of(&rows, &student(33).0);
    assert_eq!(r33[0]["score"], "", "not scored twice");
}

#[test]
fn corrections_confirm_mistyped_ids_and_fix_values_with_a_trail() {
    let f = Fixture::new();
    class(&f);
    let (ten, thirty_three) = (student(10).0, student(33).0);
    let crude_of_50 = student(50).0;
    f.write(
        "corrections.csv",
        format!(
            "student_id,section,field,value,reason,grader\n\
             {},,student_id,{ten},digits swapped; confirmed with the student,T. Marlowe\n\
             {},S4,student_id,{thirty_three},a digit dropped,D. Orsay\n\
             {crude_of_50},,crude_mass,3.05 g,balance slip read back from the notebook,T. Marlowe\n",
            mistyped(10).unwrap(),
            mistyped(33).unwrap()
        ),
    );
    let run = f.run(&[
        "grade",
        "class",
        "--roster",
        "roster.csv",
        "--corrections",
        "corrections.csv",
        "--out",
        "out",
    ]);
    assert_eq!(run.code, 0, "{}", run.stderr);
    let rows = f.results("out");
    // 114 rows read and 6 made from the roster: the two corrected ids are found
    assert_eq!(rows.len(), 120);
    assert!(rows.iter().all(|r| !r["flags"].contains("not-on-roster")));
    let r = status_of(&rows, &ten);
    assert_eq!(r.len(), 1);
    assert_eq!(r[0]["status"], "graded");
    let want = format!(
        "student id corrected from {} to {ten} by T. Marlowe: digits swapped, confirmed with the student",
        mistyped(10).unwrap()
    );
    assert!(
        r[0]["corrections"].contains(&want),
        "{}",
        r[0]["corrections"]
    );
    assert!(
        r[0]["feedback"].starts_with(&format!("Correction: {want}")),
        "{}",
        r[0]["feedback"]
    );
    // the mass is corrected before anything is computed: 100 x recovered / 3.05 (hand-worked
    // from the class's own recovered mass)
    let m = status_of(&rows, &crude_of_50);
    let recovered: f64 = m[0]["recovered_mass_g"].parse().unwrap();
    let recovery: f64 = m[0]["recovery_pct"].parse().unwrap();
    assert!((recovery - 100.0 * recovered / 3.05).abs() < 1e-9);
    let book = read_results(&f.path("out/gradebook.csv"));
    assert_eq!(book.len(), 120);
    assert!(book
        .iter()
        .any(|b| b["student_id"] == ten && !b["score"].is_empty()));
    // the file is named with its SHA-256 among what changed grades
    let html = std::fs::read_to_string(f.path("out/cohort-report.html")).unwrap();
    assert!(
        html.contains("corrections: corrections.csv"),
        "provenance line"
    );
    // a correction that finds no row stops the run, naming its line
    f.write(
        "bad.csv",
        "student_id,section,field,value,reason,grader\n9999999,,crude_mass,2.0,x,y\n2701000,,crude_mass,two grams,x,y\n",
    );
    let bad = f.run(&[
        "grade",
        "class",
        "--corrections",
        "bad.csv",
        "--out",
        "out2",
    ]);
    assert_eq!(bad.code, 2, "{}", bad.stderr);
    assert!(
        bad.stderr.contains("bad.csv:3") && bad.stderr.contains("\"two grams\" is not a mass"),
        "{}",
        bad.stderr
    );
    f.write(
        "stray.csv",
        "student_id,section,field,value,reason,grader\n9999999,,crude_mass,2.0,x,y\n",
    );
    let stray = f.run(&[
        "grade",
        "class",
        "--corrections",
        "stray.csv",
        "--out",
        "out3",
    ]);
    assert_eq!(stray.code, 2, "{}", stray.stderr);
    assert!(
        stray.stderr.contains("stray.csv:2") && stray.stderr.contains("matches no student row"),
        "{}",
        stray.stderr
    );
}

/// The entry sheet of one section, filled in as an assistant would: every cell of the template
/// copied (calamine reads it, rust_xlsxwriter writes it back, as a spreadsheet program saves
/// what was opened) and each student's entries typed into the entry columns.
fn fill(template: &std::path::Path, sheet: &str, out: &std::path::Path) -> Vec<(String, String)> {
    // each student's masses a little apart (k counted from 1), the recovery as reported
    let typed = |h: &str, k: usize| {
        let k = (k + 1) as f64;
        let v = match h {
            "Crude mass" => 2.5 + 0.01 * k,
            "Recovered mass" => 1.8 + 0.01 * k,
            "Solvent volume" => 60.0,
            "Melting onset" => 121.4,
            "Clear point" => 122.2,
            "Reported recovery" => 100.0 * (1.8 + 0.01 * k) / (2.5 + 0.01 * k),
            _ => return None,
        };
        Some(crate::entry_sheets::Typed::Number(v))
    };
    crate::entry_sheets::fill(template, sheet, out, typed).1
}

#[test]
fn entry_workbooks_from_the_roster_grade_clean_once_filled_in() {
    let f = Fixture::new();
    class(&f);
    let run = f.run(&["template", "--roster", "roster.csv", "--out", "entry"]);
    assert_eq!(run.code, 0, "{}", run.stderr);
    for s in 1..=5 {
        assert!(f.path(&format!("entry/S{s}-entry.xlsx")).is_file(), "S{s}");
    }
    let one = f.run(&[
        "template",
        "--roster",
        "roster.csv",
        "--out",
        "one",
        "--one-workbook",
    ]);
    assert_eq!(one.code, 0, "{}", one.stderr);
    // the roster in the template is the roster: S2's ids and names, in roster order
    std::fs::create_dir_all(f.path("filled")).unwrap();
    let typed = fill(
        &f.path("entry/S2-entry.xlsx"),
        "S2",
        &f.path("filled/S2.xlsx"),
    );
    let want: Vec<(String, String)> = (0..120)
        .map(student)
        .filter(|s| s.2 == "S2")
        .map(|(id, name, ..)| (id, name))
        .collect();
    assert_eq!(typed, want);
    // filled in, it grades with no mapping file: every student graded, no flag, no note
    let graded = f.run(&["grade", "filled", "--out", "out"]);
    assert_eq!(graded.code, 0, "{}", graded.stderr);
    assert!(!graded.stderr.contains("note"), "{}", graded.stderr);
    let rows = f.results("out");
    assert_eq!(rows.len(), want.len());
    for r in &rows {
        assert_eq!(r["status"], "graded");
        assert!(
            r["flags"].is_empty(),
            "{}: {}",
            r["student_id"],
            r["flag_notes"]
        );
        assert_eq!(r["section"], "S2");
    }
    // the same sheet saved by LibreOffice grades the same
    if let Some(office) = crate::harness::soffice() {
        let ods = crate::harness::convert(office, f.dir.path(), &f.path("filled/S2.xlsx"), "ods");
        std::fs::create_dir_all(f.path("lo")).unwrap();
        std::fs::rename(&ods, f.path("lo/S2.ods")).unwrap();
        let again = f.run(&["grade", "lo", "--out", "out-lo"]);
        assert_eq!(again.code, 0, "{}", again.stderr);
        let lo = f.results("out-lo");
        let scores = |rows: &[Record]| rows.iter().map(|r| r["score"].clone()).collect::<Vec<_>>();
        assert_eq!(scores(&lo), scores(&rows));
    }
}

/// The rules the template's cells carry, read back from the saved file (its sheet XML) and
/// checked as a person checks them: a recovered mass above the crude mass and a letter in a
/// mass are refused, with a message in words.
#[test]
fn the_entry_cells_refuse_what_cannot_be_right() {
    let f = Fixture::new();
    class(&f);
    let run = f.run(&["template", "--roster", "roster.csv", "--out", "entry"]);
    assert_eq!(run.code, 0, "{}", run.stderr);
    let xml = crate::entry_sheets::part(&f.path("entry/S1-entry.xlsx"), "xl/worksheets/sheet2.xml");
    let rules = crate::entry_sheets::rules(&xml);
    let rule = |title: &str| {
        crate::entry_sheets::rule(&rules, title)
            .unwrap_or_else(|| panic!("a rule for {title}"))
            .as_str()
    };
    // crude mass in column D: a decimal number (a letter is refused) between 0.0001 and 100 g
    let crude = rule("Crude mass");
    assert!(
        crude.contains("type=\"decimal\"")
            && crude.contains("<formula1>0.0001</formula1><formula2>100</formula2>"),
        "{crude}"
    );
    assert!(crude.contains("sqref=\"D7:D30\""), "{crude}");
    // recovered mass in E: refused (a stop, the default style) unless a number above 0, at most
    // 100 g and at most the crude mass beside it: more recovered than was crude is impossible
    let recovered = rule("Recovered mass");
    assert!(
        recovered.contains("type=\"custom\"")
            && recovered.contains(
                "<formula1>AND(ISNUMBER(E7),E7&gt;0,E7&lt;=100,OR(D7=\"\",E7&lt;=D7))</formula1>"
            )
            && !recovered.contains("errorStyle"),
        "{recovered}"
    );
    // the solvent volume in F: above 0 (as its message says), at most 1000 mL
    let solvent = rule("Solvent volume");
    assert!(
        solvent.contains("F7&gt;0,F7&lt;=1000") && solvent.contains("above 0 and at most 1000"),
        "{solvent}"
    );
    // the reported recovery in I (the default rubric scores it): a number from 0 to 1000, so
    // a student's 104 % is typed as reported, and shaded
    let reported = rule("Reported recovery");
    assert!(
        reported.contains("<formula1>0</formula1><formula2>1000</formula2>"),
        "{reported}"
    );
    assert!(xml.contains("<formula>AND(ISNUMBER(I7),I7&gt;100)</formula>"));
    // onset (G) and clear point (H): within the apparatus's span, onset at most the clear point
    let onset = rule("Melting onset");
    assert!(
        onset.contains("G7&gt;=20") && onset.contains("G7&lt;=H7"),
        "{onset}"
    );
    // the status: a drop-down list
    assert!(rule("Status").contains("type=\"list\""));
    // protected without a password; the entry cells unlocked
    assert!(xml.contains("<sheetProtection sheet=\"1\"") && !xml.contains("password"));
    // rows missing an entry are shaded
    assert!(xml.contains("<conditionalFormatting"));
    // the roster names S1's assistant: the title block's TA line
    let shared = crate::entry_sheets::part(&f.path("entry/S1-entry.xlsx"), "xl/sharedStrings.xml");
    assert!(shared.contains("<t>TA: T. Marlowe</t>"), "{shared}");
}

/// Late work by the rubric's `[late]` rule (5 points a day after a day's grace, at most 15),
/// against the same class handed in on time (hand-worked deductions: 0, 0, 2 days charged for
/// 2.5 days late = 10, 5 days charged for 6 days late = 25 held at 15).
#[test]
fn late_work_costs_what_the_rubric_says_with_a_sentence_of_its_own() {
    let f = Fixture::new();
    let class = |late: [&str; 4]| {
        let mut s = String::from(
            "Student ID,Name,Crude mass (g),Recovered mass (g),Melting range (°C),Days late\n",
        );
        for (k, d) in late.iter().enumerate() {
            s.push_str(&format!("s{k},Student {k},3.00,2.40,121.5-122.3,{d}\n"));
        }
        s
    };
    f.write("late/class.csv", class(["0", "1", "2.5", "6"]));
    f.write("ontime/class.csv", class(["", "", "", ""]));
    let rubric = std::fs::read_to_string(project_root().join("rubrics/default.toml")).unwrap();
    f.write(
        "r.toml",
        format!("{rubric}\n[late]\npoints_per_day = 5\ngrace_days = 1\nmax_points = 15\n"),
    );
    for (dir, out) in [("late", "out-late"), ("ontime", "out-ontime")] {
        let run = f.run(&["grade", dir, "--rubric", "r.toml", "--out", out]);
        assert_eq!(run.code, 0, "{}", run.stderr);
    }
    let late = f.results("out-late");
    let ontime = f.results("out-ontime");
    let labels: Vec<String> = benchgrade::rubric::Rubric::load(&f.path("r.toml"))
        .unwrap()
        .criteria
        .iter()
        .map(|c| c.label.clone())
        .collect();
    let labels: Vec<&str> = labels.iter().map(String::as_str).collect();
    for (k, want) in [0.0, 0.0, 10.0, 15.0].iter().enumerate() {
        let score = |rows: &[Record]| -> f64 { rows[k]["score"].parse().unwrap() };
        assert_eq!(score(&ontime) - score(&late), *want, "student {k}");
        let fb = &late[k]["feedback"];
        assert_eq!(
            benchgrade::rubric::score::audit_feedback(fb, &labels),
            Ok(score(&late))
        );
        assert_eq!(fb.contains("Deduction for lateness"), *want > 0.0, "{fb}");
    }
    assert!(
        late[3]["feedback"].contains(
            "6 days late, 5 charged after a 1-day grace period, 5 points a day, at most 15"
        ),
        "{}",
        late[3]["feedback"]
    );
    assert_eq!(late[2]["late_days"], "2.5");
}

/// Ids a spreadsheet stored as numbers lose their leading zeros (common practice: "0012345"
/// typed into a General cell is kept as 12345); the roster's id is the student's. A row whose
/// id is not on the roster stays out of the gradebook even when a correction excuses it, and
/// the summary line counts only what was read.
#[test]
fn leading_zeros_an_excused_stranger_and_the_summary_line() {
    let f = Fixture::new();
    f.write(
        "roster.csv",
        "Student ID,Name,Section,TA\n0012345,Ines Ashdown,A1,T. Marlowe\n0012346,Jonas Cealy,A1,T. Marlowe\n0012347,Keiko Dunmore,A1,T. Marlowe\n",
    );
    f.write(
        "class/A1.csv",
        "Student ID,Name,Section,Crude mass (g),Recovered mass (g),Melting range (°C)\n\
         12345,Ines Ashdown,A1,3.0,2.1,121.5-122.3\n\
         12346,Jonas Cealy,A1,3.0,2.2,121.4-122.2\n\
         2099999,Lucan Gatwood,A1,3.0,2.0,121.0-122.0\n",
    );
    f.write(
        "c.csv",
        "student_id,section,field,value,reason,grader\n2099999,,status,excused,medical note,T. Marlowe\n",
    );
    let run = f.run(&[
        "grade",
        "class",
        "--roster",
        "roster.csv",
        "--corrections",
        "c.csv",
        "--out",
        "out",
    ]);
    assert_eq!(run.code, 0, "{}", run.stderr);
    // three rows read: the summary line says so (the no-submission row is not a submission)
    assert!(
        run.stderr.contains("3 submissions") || run.stdout.contains("3 submissions"),
        "{}{}",
        run.stdout,
        run.stderr
    );
    let rows = f.results("out");
    let ines = status_of(&rows, "0012345");
    assert_eq!(ines.len(), 1, "12345 is the roster's 0012345");
    assert!(ines[0]["notes"].contains("leading zeros"));
    assert!(ines[0]["flags"].is_empty(), "{}", ines[0]["flags"]);
    assert_eq!(ines[0]["assistant"], "T. Marlowe", "the roster's assistant");
    assert_eq!(status_of(&rows, "0012347")[0]["status"], "no-submission");
    let book = read_results(&f.path("out/gradebook.csv"));
    let ids: Vec<&str> = book.iter().map(|b| b["student_id"].as_str()).collect();
    assert_eq!(ids, vec!["0012345", "0012346", "0012347"]);
}

/// A correction may not give a row another student's id, nor set a status no reader knows
/// (both seen in a coordinator's trial: the first handed one student's grade to another).
#[test]
fn a_correction_cannot_take_another_student_s_id_or_set_a_status_no_one_reads() {
    let f = Fixture::new();
    f.write(
        "class.csv",
        "Student ID,Name,Crude mass (g),Recovered mass (g),Melting range (°C)\n\
         2026001,Amara Hollin,3.0,2.1,121.5-122.3\n\
         2026002,Bastian Jessop,3.0,2.4,121.4-122.2\n",
    );
    f.write(
        "clash.csv",
        "student_id,section,field,value,reason,grader\n2026001,,student_id,2026002,typo?,P. Quist\n",
    );
    let run = f.run(&[
        "grade",
        "class.csv",
        "--corrections",
        "clash.csv",
        "--out",
        "out",
    ]);
    assert_eq!(run.code, 2, "{}", run.stderr);
    assert!(
        run.stderr.contains("share an id with another row"),
        "{}",
        run.stderr
    );
    assert!(!run.stderr.contains("2026002"), "no id on standard error");
    f.write(
        "status.csv",
        "student_id,section,field,value,reason,grader\n2026001,,status,banana,x,P. Quist\n",
    );
    let run = f.run(&[
        "grade",
        "class.csv",
        "--corrections",
        "status.csv",
        "--out",
        "out2",
    ]);
    assert_eq!(run.code, 2, "{}", run.stderr);
    assert!(
        run.stderr.contains("status.csv:2") && run.stderr.contains("neither graded nor"),
        "{}",
        run.stderr
    );
    f.write(
        "ok.csv",
        "student_id,section,field,value,reason,grader\n2026001,,status,W,withdrew in week 3,P. Quist\n",
    );
    let run = f.run(&[
        "grade",
        "class.csv",
        "--corrections",
        "ok.csv",
        "--out",
        "out3",
    ]);
    assert_eq!(run.code, 0, "{}", run.stderr);
    assert_eq!(f.results("out3")[0]["status"], "excused");
}
