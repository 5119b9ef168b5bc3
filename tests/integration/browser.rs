//! The workspace page in a real browser: Chromium driven by chromedriver over WebDriver (the
//! W3C protocol's JSON calls, made here with ureq). The sample class is uploaded through the
//! file input, the flagged rows are waited for, an override is added through the form, the
//! gradebook is downloaded through its link and read, and a student named
//! `<img src=x onerror=alert(1)>` must show as text with no element made of it. With
//! BENCHGRADE_SCREENSHOTS=DIR set, each step leaves a screenshot there.

use std::path::{Path, PathBuf};
use std::process::{Child, Command, Stdio};
use std::time::{Duration, Instant};

use base64::Engine as _;
use serde_json::{json, Value};

use crate::harness::{outside_program, project_root, read_results, Fixture};
use crate::serve_client::Server;

const ELEMENT: &str = "element-6066-11e4-a52e-4f735466cecf";

fn found(program: &str) -> bool {
    Command::new(program)
        .arg("--version")
        .output()
        .is_ok_and(|o| o.status.success())
}

/// Chromium and its driver, if both are installed.
fn browser() -> Option<(&'static str, &'static str)> {
    let chromium = ["chromium", "chromium-browser"]
        .into_iter()
        .find(|c| found(c));
    let driver = ["chromedriver"].into_iter().find(|c| found(c));
    outside_program(
        chromium.zip(driver),
        "chromium and chromedriver",
        "Debian's chromium and chromium-driver",
    )
}

/// A chromedriver process and one browser session, both ended when dropped.
struct Driver {
    child: Child,
    base: String,
    session: String,
    agent: ureq::Agent,
    shots: Option<PathBuf>,
}

fn free_port() -> u16 {
    std::net::TcpListener::bind("127.0.0.1:0")
        .unwrap()
        .local_addr()
        .unwrap()
        .port()
}

impl Driver {
    fn start(chromium: &str, driver: &str, downloads: &Path) -> Driver {
        let port = free_port();
        let child = Command::new(driver)
            .arg(format!("--port={port}"))
            .stdout(Stdio::null())
            .stderr(Stdio::null())
            .spawn()
            .expect("chromedriver runs");
        let agent: ureq::Agent = ureq::Agent::config_builder()
            .http_status_as_error(false)
            .timeout_global(Some(Duration::from_secs(120)))
            .build()
            .into();
        let base = format!("http://127.0.0.1:{port}");
        let mut d = Driver {
            child,
            base,
            session: String::new(),
            agent,
            shots: std::env::var_os("BENCHGRADE_SCREENSHOTS").map(PathBuf::from),
        };
        let ready = until(30, || {
            d.raw("GET", "/status", None)
                .is_some_and(|v| v["ready"] == true)
        });
        assert!(ready, "chromedriver did not start");
        let binary = which(chromium);
        let caps = json!({"capabilities": {"alwaysMatch": {
            "browserName": "chrome",
            "goog:chromeOptions": {
                "binary": binary,
                "args": ["--headless=new", "--no-sandbox", "--disable-gpu", "--disable-dev-shm-usage", "--window-size=1280,800", "--no-first-run"],
                "prefs": {"download.default_directory": downloads.to_str().unwrap(), "download.prompt_for_download": false}
            }
        }}});
        let v = d.raw("POST", "/session", Some(caps)).expect("a session");
        d.session = v["sessionId"]
            .as_str()
            .unwrap_or_else(|| panic!("{v}"))
            .to_string();
        let _ = d.raw(
            "POST",
            &format!("/session/{}/goog/cdp/execute", d.session),
            Some(json!({"cmd": "Browser.setDownloadBehavior", "params": {"behavior": "allow", "downloadPath": downloads.to_str().unwrap()}})),
        );
        d
    }

    /// A WebDriver call; its `value`, or `None` if the driver does not answer.
    fn raw(&self, method: &str, path: &str, body: Option<Value>) -> Option<Value> {
        let url = format!("{}{path}", self.base);
        let resp = match (method, body) {
            ("GET", _) => self.agent.get(&url).call(),
            ("DELETE", _) => self.agent.delete(&url).call(),
            (_, Some(b)) => self.agent.post(&url).send_json(b),
            (_, None) => self.agent.post(&url).send_json(json!({})),
        };
        let text = resp.ok()?.body_mut().read_to_string().ok()?;
        let v: Value = serde_json::from_str(&text).ok()?;
        Some(v["value"].clone())
    }

    fn cmd(&self, method: &str, path: &str, body: Value) -> Value {
        let v = self
            .raw(
                method,
                &format!("/session/{}{path}", self.session),
                Some(body),
            )
            .expect("chromedriver answers");
        assert!(v.get("error").is_none(), "{method} {path}: {v}");
        v
    }

    fn go(&self, url: &str) {
        self.cmd("POST", "/url", json!({"url": url}));
    }

    fn find(&self, css: &str) -> String {
        let v = self.cmd(
            "POST",
            "/element",
            json!({"using": "css selector", "value": css}),
        );
        v[ELEMENT]
            .as_str()
            .unwrap_or_else(|| panic!("{css}: {v}"))
            .to_string()
    }

    /// Clicks the element; found again if the page redrew it between finding and clicking.
    fn click(&self, css: &str) {
        for _ in 0..5 {
            let e = self.find(css);
            let path = format!("/session/{}/element/{e}/click", self.session);
            let v = self
                .raw("POST", &path, Some(json!({})))
                .expect("chromedriver answers");
            match v.get("error").and_then(Value::as_str) {
                None => return,
                Some("stale element reference") => {
                    std::thread::sleep(Duration::from_millis(200));
                }
                Some(_) => panic!("click {css}: {v}"),
            }
        }
        panic!("click {css}: the element kept being redrawn");
    }

    fn type_into(&self, css: &str, text: &str) {
        let e = self.find(css);
        self.cmd(
            "POST",
            &format!("/element/{e}/value"),
            json!({"text": text}),
        );
    }

    fn script(&self, js: &str) -> Value {
        self.cmd("POST", "/execute/sync", json!({"script": js, "args": []}))
    }

    /// Waits (at most `secs`) for `js` to return true.
    fn wait(&self, secs: u64, js: &str) -> bool {
        until(secs, || self.script(js) == true)
    }

    fn screenshot(&self, name: &str) {
        let Some(dir) = &self.shots else { return };
        let v = self
            .raw(
                "GET",
                &format!("/session/{}/screenshot", self.session),
                None,
            )
            .unwrap();
        let png = base64::engine::general_purpose::STANDARD
            .decode(v.as_str().unwrap())
            .unwrap();
        std::fs::create_dir_all(dir).unwrap();
        std::fs::write(dir.join(format!("{name}.png")), png).unwrap();
    }
}

impl Drop for Driver {
    fn drop(&mut self) {
        if !self.session.is_empty() {
            let _ = self.raw("DELETE", &format!("/session/{}", self.session), None);
        }
        let _ = self.child.kill();
        let _ = self.child.wait();
    }
}

fn which(program: &str) -> String {
    let out = Command::new("sh")
        .arg("-c")
        .arg(format!("command -v {program}"))
        .output()
        .unwrap();
    String::from_utf8_lossy(&out.stdout).trim().to_string()
}

/// Polls `done` for at most `secs` seconds: a bound on a wait, not a measure of speed.
fn until(secs: u64, mut done: impl FnMut() -> bool) -> bool {
    let start = Instant::now();
    while start.elapsed() < Duration::from_secs(secs) {
        if done() {
            return true;
        }
        std::thread::sleep(Duration::from_millis(250));
    }
    false
}

const HOSTILE: &str = "<img src=x onerror=alert(1)>";

#[test]
fn the_workspace_page_grades_a_class_in_chromium() {
    let Some((chromium, driver)) = browser() else {
        return;
    };
    let f = Fixture::new();
    let ws = f.path("ws");
    let downloads = f.path("downloads");
    std::fs::create_dir_all(&downloads).unwrap();
    let server = Server::start(&ws);
    let d = Driver::start(chromium, driver, &downloads);
    d.go(&server.url);
    assert!(d.wait(30, "return document.getElementById('run-state').textContent.length > 0 && !!document.getElementById('file-input')"));
    assert_eq!(
        d.script("return location.search"),
        "",
        "the token leaves the address bar"
    );
    d.screenshot("1-empty");

    // 1. the sample class, and a student with a hostile name, through the file input
    let hostile = f.write(
        "uploads/late-entry.csv",
        format!("Student ID,Name,Section,Crude mass (g),Recovered mass (g),MP range\nX9001,{HOSTILE},Sec 09,3.00,2.21,120.6-121.7\nX9002,Wren Abernathy,Sec 09,2.90,3.10,119.0-121.5\n"),
    );
    let mut paths: Vec<String> = std::fs::read_dir(project_root().join("sample-data"))
        .unwrap()
        .map(|e| e.unwrap().path().display().to_string())
        .collect();
    paths.sort();
    paths.push(hostile.display().to_string());
    d.type_into("#file-input", &paths.join("\n"));

    // 2. the flagged rows
    assert!(
        d.wait(90, "return document.querySelectorAll('#student-rows tr.impossible').length > 0 && document.querySelectorAll('#student-rows tr.suspicious').length > 0"),
        "flagged rows appear"
    );
    d.screenshot("2-graded");
    let stored = std::fs::read_dir(ws.join("inputs")).unwrap().count();
    assert_eq!(stored, paths.len(), "every file uploaded");
    let names = d.script("return Array.from(document.querySelectorAll('#student-rows td.name')).map(td => td.textContent)");
    assert!(
        names.as_array().unwrap().iter().any(|n| n == HOSTILE),
        "the name shows as text: {names}"
    );
    let made = d.script("return document.querySelectorAll('img, [onerror]').length");
    assert_eq!(made, 0, "no element was made of the name");
    // every flagged row carries a marker, not only a colour
    let unmarked = d.script("return Array.from(document.querySelectorAll('#student-rows tr.impossible, #student-rows tr.suspicious')).filter(tr => !/[!?]/.test(tr.querySelector('.mark') ? tr.querySelector('.mark').textContent : '')).length");
    assert_eq!(unmarked, 0);
    // readable at 1280x800: nothing wider than the window
    assert_eq!(
        d.script("return document.documentElement.scrollWidth <= window.innerWidth"),
        true
    );
    // every control has a name a screen reader can say
    let nameless = d.script("return Array.from(document.querySelectorAll('input, select, textarea, button')).filter(e => !(e.labels && e.labels.length) && !e.getAttribute('aria-label') && !e.textContent.trim()).map(e => e.outerHTML)");
    assert_eq!(nameless, json!([]), "controls without a label");

    // the hostile student opened: still text
    d.click("#student-rows button[aria-label='Open X9001']");
    assert!(d.wait(10, "return !document.getElementById('detail').hidden"));
    let heading = d.script("return document.getElementById('detail-h').textContent");
    assert!(heading.as_str().unwrap().contains(HOSTILE), "{heading}");
    assert_eq!(
        d.script("return document.querySelectorAll('img, [onerror]').length"),
        0
    );
    d.click("#detail-close");

    // the filter by flag shows only rows with that flag; a column button sorts
    d.click("#filter option[value='flag:recovery-over-100']");
    assert!(d.wait(10, "const rows = Array.from(document.querySelectorAll('#student-rows tr')); return rows.length > 0 && rows.every(tr => tr.querySelector('td.why').textContent.includes('recovery-over-100'))"));
    let all_with: usize = server.get("/api/results")["records"]
        .as_array()
        .unwrap()
        .iter()
        .filter(|r| {
            r["flags"]
                .as_array()
                .unwrap()
                .iter()
                .any(|f| f == "recovery-over-100")
        })
        .count();
    assert_eq!(
        d.script("return document.querySelectorAll('#student-rows tr').length"),
        all_with
    );
    d.screenshot("3-filtered");
    d.click("#filter option[value='all']");
    d.click("#student-head th:nth-child(7) button");
    let scores = d.script("return Array.from(document.querySelectorAll('#student-rows tr')).map(tr => parseFloat(tr.children[6].textContent)).filter(v => !isNaN(v))");
    let scores: Vec<f64> = scores
        .as_array()
        .unwrap()
        .iter()
        .map(|v| v.as_f64().unwrap())
        .collect();
    assert!(
        scores.len() > 10 && scores.windows(2).all(|w| w[0] <= w[1]),
        "sorted by score: {scores:?}"
    );
    assert_eq!(d.script("return document.querySelector('#student-head th:nth-child(7)').getAttribute('aria-sort')"), "ascending");

    // 3. an override through the form, on a flagged student
    let id = d.script("const tr = Array.from(document.querySelectorAll('#student-rows tr.impossible')).find(tr => !tr.textContent.includes('duplicate') && !tr.textContent.includes('X90')); return tr.querySelector('th button').textContent");
    let id = id.as_str().unwrap().to_string();
    d.click(&format!("#student-rows button[aria-label='Open {id}']"));
    assert!(
        d.wait(
            10,
            "return document.activeElement && document.activeElement.id === 'detail-h'"
        ),
        "focus moves to the student"
    );
    d.screenshot("4-student");
    // the criteria are offered by their labels
    let offered = d.script("return Array.from(document.querySelectorAll('#o-criterion option')).map(o => o.textContent)");
    for c in server.get("/api/results")["criteria"].as_array().unwrap() {
        let label = c["label"].as_str().unwrap();
        assert!(
            offered
                .as_array()
                .unwrap()
                .iter()
                .any(|o| o.as_str().unwrap().starts_with(label)),
            "{label} in {offered}"
        );
    }
    d.click("#o-criterion option[value='total']");
    d.click("input[name='mode'][value='points']");
    d.type_into("#o-value", "88");
    d.type_into("#o-reason", "mass re-weighed with the assistant present");
    d.click("#override-form button[type='submit']");
    assert!(
        d.wait(
            10,
            "return document.getElementById('o-grader-error').textContent.length > 0"
        ),
        "the grader's name is asked for"
    );
    assert_eq!(
        d.script("return document.activeElement.id"),
        "o-grader",
        "focus goes to the field at fault"
    );
    d.screenshot("5-override-refused");
    d.type_into("#o-grader", "K. Demir");
    d.click("#override-form button[type='submit']");
    assert!(
        d.wait(
            60,
            "return document.getElementById('override-message').textContent.includes('applied')"
        ),
        "the override is saved and graded"
    );
    // with a student open, the table still fits beside the panel
    assert_eq!(d.script("const w = document.querySelector('.table-wrap'); return w.scrollWidth <= w.clientWidth"), true);
    let total = d.script("return document.querySelector('#detail-body tr.total td').textContent");
    assert_eq!(total, "88");
    d.screenshot("6-override-applied");

    // 4. the gradebook, downloaded through its link, holds the override
    d.click("#output-list a[download='gradebook.csv']");
    let file = downloads.join("gradebook.csv");
    assert!(
        until(30, || file.is_file()
            && std::fs::read(&file).is_ok_and(|b| !b.is_empty())),
        "gradebook.csv downloaded"
    );
    let rows = read_results(&file);
    let row = rows.iter().find(|r| r["student_id"] == id).unwrap();
    assert_eq!(row["score"], "88");
    assert!(row["feedback"].contains("K. Demir"), "{}", row["feedback"]);
    let hostile_row = rows.iter().find(|r| r["student_id"] == "X9001").unwrap();
    assert_eq!(hostile_row["student_name"], HOSTILE);
    d.script("document.getElementById('outputs').scrollIntoView()");
    d.screenshot("7-outputs");

    // 5. a roster: the panel lists who has no row, and a mistyped id is put right in one click
    // (X9002 was typed for the enrolled X9020: two adjacent characters swapped)
    assert_eq!(
        d.script("return document.getElementById('make-templates').disabled"),
        true,
        "no entry workbooks without a roster"
    );
    d.script("document.getElementById('roster').scrollIntoView()");
    d.screenshot("7b-no-roster");
    let roster = f.write(
        "uploads/roster.csv",
        format!("Student ID,Name,Section\nX9001,{HOSTILE},Sec 09\nX9020,Wren Abernathy,Sec 09\nX9030,Tamsin Quell,Sec 09\n"),
    );
    d.type_into("#roster-input", &roster.display().to_string());
    assert!(
        d.wait(60, "return document.getElementById('no-submission').textContent.includes('X9030') && !!document.querySelector(\"#off-roster-rows button[aria-label='Correct id X9002 to X9020']\")"),
        "the students with no row and the id one slip away are shown"
    );
    assert_eq!(
        d.script("return document.querySelectorAll('img, [onerror]').length"),
        0
    );
    d.script("document.getElementById('roster').scrollIntoView()");
    d.screenshot("8-roster");
    d.click("#off-roster-rows button[aria-label='Correct id X9002 to X9020']");
    assert!(
        d.wait(60, "return !document.querySelector(\"#off-roster-rows button[aria-label='Correct id X9002 to X9020']\") && document.querySelectorAll('#correction-rows tr').length === 1 && !document.getElementById('no-submission').textContent.includes('X9020')"),
        "the correction is saved and graded"
    );
    assert_eq!(
        d.script(
            "return document.querySelector('#correction-rows tr').textContent.includes('K. Demir')"
        ),
        true,
        "the correction carries the grader's name"
    );
    // the entry workbooks, made from the roster: one link, for the one section
    d.click("#make-templates");
    let offered = d.wait(60, "return Array.from(document.querySelectorAll('#template-list a')).map(a => a.textContent).join() === 'Sec_09-entry.xlsx'");
    assert!(
        offered,
        "the entry workbook is offered: {}",
        d.script("return document.getElementById('templates-message').textContent + ' / ' + document.getElementById('template-list').textContent")
    );
    d.screenshot("9-roster-corrected");
    d.script("document.getElementById('corrections').scrollIntoView()");
    d.screenshot("10-corrections");
}
