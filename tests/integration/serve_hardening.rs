//! `benchgrade serve` against what a hostile file or client can do (issue 20): overrides.csv
//! written guarded against formula injection and read back exactly; connections that send
//! nothing, or half a header, closed after the header timeout while the page keeps answering;
//! a reader that aborts the process costs its run only, and the file is set aside.

use serde_json::{json, Value};

use crate::harness::Fixture;
use crate::serve_client::{record, Server};

/// An invented class whose ids and names begin like formulas (class data can hold them).
const FORMULA_CLASS: &str = "Section,Student ID,Student name,Bench,Compound,Crude mass (g),Recovered mass (g),Water (mL),MP start,MP end\n\
Sec 01,=2026002,Odile Marchetti,1,benzoic acid,2.82,1.87,57,119.9,120.7\n\
Sec 01,2026003,Tamsin Oyelaran,2,benzoic acid,2.59,2.09,55,119.7,121.1\n";

#[test]
fn overrides_csv_is_written_guarded_and_every_value_round_trips() {
    let f = Fixture::new();
    let ws = f.path("ws");
    let server = Server::start(&ws);
    let (status, body) = server.upload(&[("formulas.csv", FORMULA_CLASS.as_bytes())]);
    assert_eq!(status, 201, "{body}");
    let before = server.results_after(body["revision"].as_u64().unwrap());
    let old = record(&before, "=2026002")["score"].as_f64().unwrap();
    // the values issue 20 found written as they were: each a formula to a spreadsheet
    let sent = [
        json!({"student_id": "=2026002", "criterion": "total", "adjust": "-2",
               "reason": "=HYPERLINK(\"http://example.invalid\",\"see\")", "grader": "@SUM(A1:A9)"}),
        json!({"student_id": "2026003", "section": "Sec 01", "criterion": "total", "adjust": "+1",
               "reason": "-2+3", "grader": "'quoted"}),
    ];
    let mut revision = 0;
    for body in &sent {
        let (status, made) = server.call("POST", "/api/overrides", Some(body.clone()));
        assert_eq!(status, 201, "{made}");
        revision = made["revision"].as_u64().unwrap();
    }
    // every cell of the file: none starts as a formula (OWASP's CSV injection rule, common
    // practice: = + - @, a tab or a carriage return)
    let text = std::fs::read_to_string(ws.join("overrides.csv")).unwrap();
    let mut reader = csv::ReaderBuilder::new()
        .has_headers(false)
        .from_reader(text.as_bytes());
    for rec in reader.records() {
        for cell in &rec.unwrap() {
            assert!(
                !cell.starts_with(['=', '+', '-', '@', '\t', '\r']),
                "unguarded cell {cell:?} in\n{text}"
            );
        }
    }
    assert!(
        text.contains("'=2026002") && text.contains("'=HYPERLINK"),
        "{text}"
    );
    // read back as the values sent, by the page and by the run that applied them
    let listed = server.get("/api/overrides");
    let got: Vec<&Value> = listed["overrides"].as_array().unwrap().iter().collect();
    assert_eq!(got.len(), 2, "{listed}");
    for (o, body) in got.iter().zip(&sent) {
        for key in ["student_id", "reason", "grader"] {
            assert_eq!(o[key], body[key], "{key}: {listed}");
        }
    }
    assert_eq!(got[0]["adjust"], -2.0);
    assert_eq!(got[1]["adjust"], 1.0);
    let after = server.results_after(revision);
    assert_eq!(
        record(&after, "=2026002")["score"].as_f64().unwrap(),
        old - 2.0,
        "the guarded adjustment -2 applied as -2"
    );
    // removing one keeps the other exactly
    let line = got[0]["line"].as_u64().unwrap();
    let (status, _) = server.call("DELETE", &format!("/api/overrides/{line}"), None);
    assert_eq!(status, 200);
    let left = server.get("/api/overrides");
    assert_eq!(left["overrides"][0]["grader"], "'quoted", "{left}");
    assert_eq!(left["overrides"][0]["reason"], "-2+3", "{left}");
}

/// Reads from `s` until the server closes it; false if it is still open after `secs`.
fn closed_within(s: &mut std::net::TcpStream, secs: u64) -> bool {
    use std::io::Read;
    let until = std::time::Instant::now() + std::time::Duration::from_secs(secs);
    let mut buf = [0u8; 1024];
    while std::time::Instant::now() < until {
        s.set_read_timeout(Some(std::time::Duration::from_millis(250)))
            .unwrap();
        match s.read(&mut buf) {
            Ok(0) => return true,
            Ok(_) => {}
            Err(e)
                if matches!(
                    e.kind(),
                    std::io::ErrorKind::WouldBlock | std::io::ErrorKind::TimedOut
                ) => {}
            // reset by the server: closed too
            Err(_) => return true,
        }
    }
    false
}

#[test]
fn idle_and_half_sent_connections_are_closed_and_the_page_keeps_answering() {
    use std::io::Write;
    let f = Fixture::new();
    let server = Server::start_env(
        &f.path("ws"),
        &[],
        &[("BENCHGRADE_SERVE_TIMEOUT_MS", "1500")],
    );
    // 300 connections held open: half send nothing, half half a header
    let mut held = Vec::new();
    for i in 0..300 {
        let mut s = std::net::TcpStream::connect(("127.0.0.1", server.port)).unwrap();
        if i % 2 == 1 {
            s.write_all(b"GET /api/status HTTP/1.1\r\nHost: 127.0.0.1\r\nX-Half: ")
                .unwrap();
        }
        held.push(s);
    }
    // the page and the API still answer while they are held
    let (status, _) = server.call("GET", "/api/status", None);
    assert_eq!(status, 200);
    let (code, _) = crate::serve_client::raw(
        server.port,
        &format!(
            "GET / HTTP/1.1\r\nHost: 127.0.0.1:{}\r\nConnection: close\r\n\r\n",
            server.port
        ),
        b"",
    );
    assert_ne!(code, 0, "the page answered");
    // and every held connection is closed by the server (1.5 s here; the bound is generous
    // for a loaded machine, not a speed check)
    for (i, s) in held.iter_mut().enumerate() {
        assert!(closed_within(s, 20), "connection {i} is still open");
    }
    let (status, _) = server.call("GET", "/api/status", None);
    assert_eq!(status, 200);
}

#[test]
fn a_connection_past_the_cap_is_closed_at_once() {
    let f = Fixture::new();
    let server = Server::start_env(&f.path("ws"), &[], &[("BENCHGRADE_MAX_CONNECTIONS", "40")]);
    // the server's start itself used none: 40 held take every place
    let held: Vec<std::net::TcpStream> = (0..40)
        .map(|_| std::net::TcpStream::connect(("127.0.0.1", server.port)).unwrap())
        .collect();
    std::thread::sleep(std::time::Duration::from_millis(300));
    let mut extra = std::net::TcpStream::connect(("127.0.0.1", server.port)).unwrap();
    assert!(
        closed_within(&mut extra, 5),
        "the 41st connection is closed at once, not held until the header timeout (10 s)"
    );
    drop(held);
    // the places free as the server notices the closed connections: until then a request may
    // itself be refused, which is asked again, not a failure
    assert!(crate::serve_client::eventually(20, || server
        .status_now("/api/status")
        == Some(200)));
}

/// An invented class of two students, clean.
const GOOD_CLASS: &str = "Section,Student ID,Student name,Bench,Compound,Crude mass (g),Recovered mass (g),Water (mL),MP start,MP end\n\
Sec 01,2026201,Pilar Ostrander,1,benzoic acid,2.82,1.87,57,119.9,120.7\n\
Sec 01,2026202,Ruaidhri Beckwith,2,benzoic acid,2.59,2.09,55,119.7,121.1\n";

#[test]
fn a_reader_that_aborts_costs_its_run_only_and_the_file_is_set_aside() {
    let f = Fixture::new();
    let ws = f.path("ws");
    // the test hook: reading a file whose name holds "poison" aborts the process, as calamine
    // did on an .xls claiming 2^32 rows (SIGABRT, which no handler catches)
    let env = [("BENCHGRADE_FAULT", "abort-on-read-poison")];
    let server = Server::start_env(&ws, &[], &env);
    let (status, body) = server.upload(&[
        ("good.csv", GOOD_CLASS.as_bytes()),
        ("poison.csv", GOOD_CLASS.as_bytes()),
    ]);
    assert_eq!(status, 201, "{body}");
    let aside = |s: &Value| {
        s["set_aside"]
            .as_array()
            .is_some_and(|a| a.iter().any(|p| p["file"] == "quarantine/poison.csv"))
    };
    assert!(
        crate::serve_client::eventually(60, || aside(&server.get("/api/status"))),
        "the file is set aside: {}",
        server.get("/api/status")
    );
    // the server kept answering, and says what happened and where the file went
    let status = server.get("/api/status");
    let note = status["set_aside"][0]["message"].as_str().unwrap();
    assert!(
        note.contains("inputs/poison.csv")
            && note.contains("SIGABRT")
            && note.contains("quarantine/poison.csv"),
        "{note}"
    );
    let files = server.get("/api/files");
    assert!(
        files["other_problems"]
            .as_array()
            .unwrap()
            .iter()
            .any(|p| p["file"] == "quarantine/poison.csv" && p["message"] == note),
        "the page lists it: {files}"
    );
    assert!(ws.join("quarantine/poison.csv").is_file());
    assert!(!ws.join("inputs/poison.csv").exists());
    // the rest is graded again without it
    let current = status["revision"].as_u64().unwrap();
    let results = server.results_after(current);
    assert_eq!(results["error"], Value::Null, "{results}");
    assert_eq!(results["summary"]["submissions"], 2, "{results}");
    record(&results, "2026201");
    drop(server);
    // a restart does not read it again (nor die): the file stays aside, with a note
    let again = Server::start_env(&ws, &[], &env);
    let results = again.results_after(1);
    assert_eq!(results["error"], Value::Null, "{results}");
    assert_eq!(results["summary"]["submissions"], 2, "{results}");
    assert!(aside(&again.get("/api/status")));
}

#[test]
fn a_run_stuck_in_a_file_is_stopped_and_the_file_set_aside() {
    let f = Fixture::new();
    let ws = f.path("ws");
    // the test hook: reading a file whose name holds "stuck" never ends; a run may take 3 s
    let env = [
        ("BENCHGRADE_FAULT", "hang-on-read-stuck"),
        ("BENCHGRADE_SERVE_RUN_LIMIT_MS", "3000"),
    ];
    let server = Server::start_env(&ws, &[], &env);
    let (status, body) = server.upload(&[
        ("good.csv", GOOD_CLASS.as_bytes()),
        ("stuck.csv", GOOD_CLASS.as_bytes()),
    ]);
    assert_eq!(status, 201, "{body}");
    assert!(crate::serve_client::eventually(60, || {
        server.get("/api/status")["set_aside"][0]["file"] == "quarantine/stuck.csv"
    }));
    let status = server.get("/api/status");
    let note = status["set_aside"][0]["message"].as_str().unwrap();
    assert!(
        note.contains("stopped after 3 s") && note.contains("inputs/stuck.csv"),
        "{note}"
    );
    let results = server.results_after(status["revision"].as_u64().unwrap());
    assert_eq!(results["summary"]["submissions"], 2, "{results}");
}
