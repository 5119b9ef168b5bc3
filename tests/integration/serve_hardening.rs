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
        for cell in rec.unwrap().iter() {
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
