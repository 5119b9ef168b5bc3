//! The roster and the corrections in `benchgrade serve`, driven over HTTP as the page drives
//! them: a roster uploaded and the students with no submission listed by section; a mistyped
//! id confirmed with one click, after which the flag is gone and the student stands under the
//! right id in gradebook.csv; corrections checked as `--corrections` checks them, added and
//! removed; and the entry workbooks made from the roster, downloaded as .xlsx files whose ids
//! are the roster's. Every expected list is worked by hand from the invented class below.

use serde_json::{json, Value};

use crate::harness::{read_results, run_in, Fixture};
use crate::serve_client::{record, tree, Server};

/// The invented roster: id, last name, first name, section.
const ROSTER: [(&str, &str, &str, &str); 8] = [
    ("4200101", "Ashdown", "Amara", "A"),
    ("4200112", "Brannock", "Bastian", "A"),
    ("4200123", "Cealy", "Corinne", "A"),
    ("4200134", "Dunmore", "Dmitri", "A"),
    ("4200145", "Elsworth", "Elif", "B"),
    ("4200156", "Farrowby", "Farid", "B"),
    ("4200167", "Gatwood", "Greta", "B"),
    ("4200178", "Hollin", "Hiro", "B"),
];

/// Cealy and Gatwood never submitted; Brannock's id was typed with two adjacent digits
/// swapped (4200112 -> 4201012), Dunmore's with a digit dropped (4200134 -> 420134).
fn class() -> (String, String) {
    let mut roster = String::from("Student ID,Last name,First name,Section,TA\n");
    let mut sheet = String::from(
        "Student ID,Name,Section,Crude mass (g),Recovered mass (g),Melting range (°C)\n",
    );
    for (k, (id, last, first, section)) in ROSTER.iter().enumerate() {
        roster.push_str(&format!("{id},{last},{first},{section},R. Vance\n"));
        let typed = match *id {
            "4200123" | "4200167" => continue,
            "4200112" => "4201012",
            "4200134" => "420134",
            other => other,
        };
        let crude = 2.5 + k as f64 * 0.1;
        sheet.push_str(&format!(
            "{typed},{first} {last},{section},{crude:.2},{:.2},121.2-122.1\n",
            crude * 0.7
        ));
    }
    (roster, sheet)
}

/// A server on a workspace holding the class; with the roster uploaded too when `roster`.
fn workspace(f: &Fixture, roster: bool) -> (Server, u64) {
    let server = Server::start(&f.path("ws"));
    let (list, sheet) = class();
    let (status, body) = server.upload(&[("class.csv", sheet.as_bytes())]);
    assert_eq!(status, 201, "{body}");
    let mut revision = body["revision"].as_u64().unwrap();
    if roster {
        let (status, body) = server.upload_to("/api/roster", &[("enrolled.csv", list.as_bytes())]);
        assert_eq!(status, 201, "{body}");
        assert_eq!(body["stored"], "roster.csv");
        revision = body["revision"].as_u64().unwrap();
    }
    (server, revision)
}

fn ids(list: &Value) -> Vec<String> {
    list.as_array()
        .unwrap()
        .iter()
        .map(|s| s["student_id"].as_str().unwrap().to_string())
        .collect()
}

#[test]
fn serve_roster_upload_lists_the_students_with_no_submission() {
    let f = Fixture::new();
    let (server, revision) = workspace(&f, false);
    let ws = f.path("ws");
    server.results_after(revision);
    // only a type the command line reads is taken, and one file at a time
    let before = tree(&ws);
    let (status, body) = server.upload_to("/api/roster", &[("roster.pdf", b"%PDF-1.4")]);
    assert_eq!(status, 415, "{body}");
    let (status, _) = server.upload_to("/api/roster", &[("a.csv", b"x\n"), ("b.csv", b"y\n")]);
    assert_eq!(status, 400);
    assert_eq!(tree(&ws), before, "a refused roster changes nothing");
    assert!(server.get("/api/roster")["roster"].is_null());

    let (list, _) = class();
    let (status, body) = server.upload_to("/api/roster", &[("enrolled.csv", list.as_bytes())]);
    assert_eq!(status, 201, "{body}");
    let results = server.results_after(body["revision"].as_u64().unwrap());
    let view = server.get("/api/roster");
    assert_eq!(view["roster"]["name"], "roster.csv");
    // hand-worked: A lacks Cealy, and the two whose ids were mistyped; B lacks Gatwood
    let missing = view["no_submission"].as_array().unwrap();
    assert_eq!(missing.len(), 2, "{view}");
    assert_eq!(missing[0]["section"], "A");
    assert_eq!(
        ids(&missing[0]["students"]),
        ["4200112", "4200123", "4200134"]
    );
    assert_eq!(missing[0]["students"][1]["student_name"], "Cealy, Corinne");
    assert_eq!(missing[1]["section"], "B");
    assert_eq!(ids(&missing[1]["students"]), ["4200167"]);
    // both mistyped ids are flagged, each with the enrolled id one slip away
    let off = view["not_on_roster"].as_array().unwrap();
    let nearest: Vec<(&str, &str)> = off
        .iter()
        .map(|o| {
            (
                o["student_id"].as_str().unwrap(),
                o["nearest"].as_str().unwrap(),
            )
        })
        .collect();
    assert_eq!(nearest, [("4201012", "4200112"), ("420134", "4200134")]);
    // the gradebook has a row for every enrolled student but the two left out until confirmed
    let gradebook = read_results(&ws.join("graded/gradebook.csv"));
    assert_eq!(gradebook.len(), ROSTER.len(), "{results}");
    // the run is the command line's with --roster
    let cli = run_in(&ws, &["check", "inputs", "--roster", "roster.csv"]);
    assert!(cli.code <= 1, "{}", cli.stderr);

    // removed, the workspace is graded without a roster again
    let (status, gone) = server.call("DELETE", "/api/roster", None);
    assert_eq!(status, 200, "{gone}");
    assert!(!ws.join("roster.csv").exists());
    server.results_after(gone["revision"].as_u64().unwrap());
    let view = server.get("/api/roster");
    assert!(view["roster"].is_null());
    assert_eq!(view["no_submission"], json!([]));
    assert_eq!(server.call("DELETE", "/api/roster", None).0, 404);
}

#[test]
fn serve_one_click_correction_puts_a_mistyped_id_right() {
    let f = Fixture::new();
    let (server, revision) = workspace(&f, true);
    let ws = f.path("ws");
    server.results_after(revision);
    let off = server.get("/api/roster")["not_on_roster"].clone();
    let row = off
        .as_array()
        .unwrap()
        .iter()
        .find(|o| o["student_id"] == "4201012")
        .unwrap()
        .clone();
    // what the page's button sends: the id as typed, its section, the enrolled id offered
    let (status, made) = server.call(
        "POST",
        "/api/corrections",
        Some(json!({
            "student_id": row["student_id"], "section": row["section"], "field": "student_id",
            "value": row["nearest"], "reason": "id confirmed against the roster (one typing slip)",
            "grader": "K. Demir",
        })),
    );
    assert_eq!(status, 201, "{made}");
    assert_eq!(made["line"], 2);
    let results = server.results_after(made["revision"].as_u64().unwrap());
    let fixed = record(&results, "4200112");
    assert_eq!(fixed["status"], "graded");
    assert!(
        !fixed["flags"]
            .as_array()
            .unwrap()
            .iter()
            .any(|c| c == "not-on-roster"),
        "{fixed}"
    );
    let view = server.get("/api/roster");
    let still: Vec<&str> = view["not_on_roster"]
        .as_array()
        .unwrap()
        .iter()
        .map(|o| o["student_id"].as_str().unwrap())
        .collect();
    assert_eq!(still, ["420134"], "only the other mistyped id is left");
    assert_eq!(
        ids(&view["no_submission"][0]["students"]),
        ["4200123", "4200134"]
    );
    // the student stands under the right id in gradebook.csv, scored, and the typed id is gone
    let gradebook = read_results(&ws.join("graded/gradebook.csv"));
    let theirs: Vec<_> = gradebook
        .iter()
        .filter(|r| r["student_id"] == "4200112")
        .collect();
    assert_eq!(theirs.len(), 1);
    assert_eq!(theirs[0]["student_name"], "Bastian Brannock");
    assert!(!theirs[0]["score"].is_empty(), "scored");
    assert!(theirs[0]["feedback"].contains("K. Demir"));
    assert!(gradebook.iter().all(|r| r["student_id"] != "4201012"));
    // the file is one the command line reads
    let cli = run_in(
        &ws,
        &[
            "check",
            "inputs",
            "--roster",
            "roster.csv",
            "--corrections",
            "corrections.csv",
        ],
    );
    assert!(cli.code <= 1, "{}", cli.stderr);
}

#[test]
fn serve_corrections_are_checked_added_and_removed() {
    let f = Fixture::new();
    let (server, revision) = workspace(&f, true);
    let ws = f.path("ws");
    let before = server.results_after(revision);
    let old_score = record(&before, "4200101")["score"].clone();
    let base = json!({"student_id": "4200101", "section": "A", "field": "crude_mass",
        "value": "745 mg", "reason": "=typed in milligrams", "grader": "K. Demir"});
    let with = |k: &str, v: Value| {
        let mut b = base.clone();
        b[k] = v;
        b
    };
    for (body, field, words) in [
        (with("field", json!("colour")), "field", "may set"),
        (with("value", json!("lots")), "value", "not a mass"),
        (with("value", json!("12 mL")), "value", "not a mass"),
        (with("reason", json!(" ")), "reason", "reason"),
        (with("grader", Value::Null), "grader", "grader"),
        (with("student_id", json!("4299999")), "student_id", "id"),
        (with("section", json!("C")), "section", "section C"),
        // a rostered student of whom no row was read has no typed value to correct
        (with("student_id", json!("4200123")), "student_id", "id"),
        (
            with("field", json!("status")),
            "value",
            "neither graded nor",
        ),
    ] {
        let (status, err) = server.call("POST", "/api/corrections", Some(body.clone()));
        assert_eq!(status, 422, "{body}: {err}");
        assert_eq!(err["field"], field, "{body}: {err}");
        let message = err["error"].as_str().unwrap();
        assert!(message.contains(words), "{body}: {message}");
    }
    assert!(
        !ws.join("corrections.csv").exists(),
        "a refused correction writes nothing"
    );
    let (status, made) = server.call("POST", "/api/corrections", Some(base.clone()));
    assert_eq!(status, 201, "{made}");
    let after = server.results_after(made["revision"].as_u64().unwrap());
    let fixed = record(&after, "4200101");
    // hand-worked: 745 mg is 0.745 g, below the recovered 1.75 g (2.50 x 0.7)
    assert_eq!(fixed["crude_mass_g"], 0.745);
    assert!(
        fixed["feedback"]
            .as_str()
            .unwrap()
            .contains("crude mass corrected from 2.5 g to 0.745 g by K. Demir"),
        "{fixed}"
    );
    // a value that looks like a formula is written guarded and read back as itself
    let text = std::fs::read_to_string(ws.join("corrections.csv")).unwrap();
    assert!(text.contains(",'=typed in milligrams,"), "{text}");
    let listed = server.get("/api/corrections");
    assert_eq!(listed["error"], Value::Null);
    assert_eq!(listed["corrections"][0]["reason"], "=typed in milligrams");
    let entry = &listed["corrections"][0];
    assert_eq!(
        (&entry["line"], &entry["field"], &entry["value"]),
        (&json!(2), &json!("crude_mass"), &json!("745 mg"))
    );
    assert!(listed["fields"]
        .as_array()
        .unwrap()
        .iter()
        .any(|f| f["key"] == "student_id"));
    let (status, removed) = server.call("DELETE", "/api/corrections/2", None);
    assert_eq!(status, 200, "{removed}");
    assert_eq!(server.call("DELETE", "/api/corrections/99", None).0, 404);
    let back = server.results_after(removed["revision"].as_u64().unwrap());
    assert_eq!(record(&back, "4200101")["score"], old_score);
    assert_eq!(server.get("/api/corrections")["corrections"], json!([]));
}

/// The ids and names on one entry sheet, below its header and units rows.
fn entry_ids(path: &std::path::Path, sheet: &str) -> Vec<(String, String)> {
    use calamine::{open_workbook, Data, Reader, Xlsx};
    let mut wb: Xlsx<_> = open_workbook(path).unwrap();
    let range = wb.worksheet_range(sheet).unwrap();
    let header = range
        .rows()
        .position(|r| r.first() == Some(&Data::String("Student ID".into())))
        .expect("the header row");
    range
        .rows()
        .skip(header + 2)
        .filter(|r| !r[0].to_string().is_empty())
        .map(|r| (r[0].to_string(), r[1].to_string()))
        .collect()
}

#[test]
fn serve_entry_workbooks_download_with_the_roster_s_ids() {
    let f = Fixture::new();
    let (server, _) = workspace(&f, false);
    let (status, err) = server.call("POST", "/api/templates", None);
    assert_eq!(status, 409, "{err}");
    assert_eq!(err["field"], "roster");
    let (list, _) = class();
    let (status, _) = server.upload_to("/api/roster", &[("enrolled.csv", list.as_bytes())]);
    assert_eq!(status, 201);
    let (status, made) = server.call("POST", "/api/templates", None);
    assert_eq!(status, 200, "{made}");
    let names: Vec<&str> = made["templates"]
        .as_array()
        .unwrap()
        .iter()
        .map(|t| t["name"].as_str().unwrap())
        .collect();
    assert_eq!(names, ["A-entry.xlsx", "B-entry.xlsx"]);
    assert_eq!(server.get("/api/roster")["templates"], made["templates"]);
    for section in ["A", "B"] {
        let (status, kind, bytes) =
            server.download(&format!("/api/templates/{section}-entry.xlsx"));
        assert_eq!(status, 200);
        assert!(kind.contains("spreadsheetml"), "{kind}");
        let saved = f.write(&format!("downloads/{section}.xlsx"), &bytes);
        // the ids and names pre-filled are the roster's for the section, in roster order
        let want: Vec<(String, String)> = ROSTER
            .iter()
            .filter(|s| s.3 == section)
            .map(|(id, last, first, _)| ((*id).to_string(), format!("{last}, {first}")))
            .collect();
        assert_eq!(entry_ids(&saved, section), want);
    }
    let (status, _, _) = server.download("/api/templates/..%2Froster.csv");
    assert_eq!(status, 404, "only the entry workbooks are served");
    // templates/ replaced by a link to a folder elsewhere: nothing is written through it
    let ws = f.path("ws");
    let elsewhere = f.path("elsewhere");
    std::fs::create_dir_all(&elsewhere).unwrap();
    std::fs::remove_dir_all(ws.join("templates")).unwrap();
    std::os::unix::fs::symlink(&elsewhere, ws.join("templates")).unwrap();
    let (status, err) = server.call("POST", "/api/templates", None);
    assert_eq!(status, 409, "{err}");
    assert_eq!(std::fs::read_dir(&elsewhere).unwrap().count(), 0);
    assert_eq!(server.get("/api/roster")["templates"], json!([]));
}

/// The binary replaced while the server runs (a rebuild or an upgrade writes a new file at its
/// path): `POST /api/templates` still makes the entry workbooks, from the running program
/// (it answered 500, "cannot run benchgrade template: No such file or directory", before).
#[test]
fn serve_entry_workbooks_are_made_after_the_binary_is_replaced() {
    let f = Fixture::new();
    let program = f.path("bin/benchgrade");
    std::fs::create_dir_all(f.path("bin")).unwrap();
    std::fs::copy(env!("CARGO_BIN_EXE_benchgrade"), &program).unwrap();
    let server = Server::start_program(&program, &f.path("ws"), &[], &[]);
    let (list, _) = class();
    let (status, body) = server.upload_to("/api/roster", &[("enrolled.csv", list.as_bytes())]);
    assert_eq!(status, 201, "{body}");
    // a new file at the program's path: the running program's file is gone
    std::fs::remove_file(&program).unwrap();
    std::fs::write(&program, "#!/bin/sh\nexit 3\n").unwrap();
    let (status, body) = server.call("POST", "/api/templates", None);
    assert_eq!(status, 200, "{body}");
    let names: Vec<&str> = body["templates"]
        .as_array()
        .unwrap()
        .iter()
        .map(|t| t["name"].as_str().unwrap())
        .collect();
    assert_eq!(names, ["A-entry.xlsx", "B-entry.xlsx"]);
}
