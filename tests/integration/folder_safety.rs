//! Nothing benchgrade renames, removes or sweeps lies outside its output folder, and nothing it
//! did not write (or wrote and a grader then changed) is removed: links planted in the folder,
//! planted state files, state files that are pipes, devices or folders, a workbook edited by
//! hand. Each test scripts the folder, runs the real binary, and checks that everything outside
//! `DIR` is exactly as it was.

use std::collections::BTreeMap;
use std::os::unix::fs::symlink;
use std::path::Path;

use crate::harness::{self, Fixture};

const A: &str = "ID,Section,Crude mass (g),Recovered mass (g),MP\na1,S1,3.0,2.1,121-122\n";
const B: &str = "ID,Section,Crude mass (g),Recovered mass (g),MP\nb1,S2,3.0,2.2,121-122\n";

/// Every entry under `dir` but the output folder `out`, not following links: a file's bytes, a
/// link's target, a folder, a pipe.
pub fn outside(dir: &Path, out: &str) -> BTreeMap<String, String> {
    let mut state = BTreeMap::new();
    walk(dir, dir, out, &mut state);
    state
}

fn walk(root: &Path, dir: &Path, out: &str, state: &mut BTreeMap<String, String>) {
    for e in std::fs::read_dir(dir).unwrap().map(Result::unwrap) {
        let path = e.path();
        let rel = path
            .strip_prefix(root)
            .unwrap()
            .to_string_lossy()
            .into_owned();
        if rel == out {
            continue;
        }
        let meta = std::fs::symlink_metadata(&path).unwrap();
        let what = if meta.is_symlink() {
            format!("link to {}", std::fs::read_link(&path).unwrap().display())
        } else if meta.is_dir() {
            walk(root, &path, out, state);
            "folder".into()
        } else if meta.is_file() {
            format!("{:?}", std::fs::read(&path).unwrap())
        } else {
            "special".into()
        };
        state.insert(rel, what);
    }
}

/// The SHA-256 of `bytes` as lowercase hex, as the manifest records it.
fn sha256(bytes: &[u8]) -> String {
    use sha2::Digest;
    sha2::Sha256::digest(bytes)
        .iter()
        .map(|b| format!("{b:02x}"))
        .collect()
}

#[test]
fn a_linked_handouts_folder_is_refused_before_anything_is_removed() {
    let f = Fixture::new();
    f.write("a.csv", A);
    f.write("b.csv", B);
    assert_eq!(f.run(&["grade", "a.csv", "b.csv", "--out", "out"]).code, 0);
    let before = harness::folder_state(&f.path("out"));
    // handouts/ replaced by a link to a shared folder holding a file named like a handout and a
    // dead run's temporary file
    f.write("shared/S1.html", "a colleague's page");
    f.write("shared/.S1.html.999999999.partial", "not ours to sweep");
    std::fs::remove_dir_all(f.path("out/handouts")).unwrap();
    symlink(f.path("shared"), f.path("out/handouts")).unwrap();
    let outside_before = outside(f.dir.path(), "out");
    // b.csv leaves the batch: its workbook and its section's handout are stale
    let run = f.run(&["grade", "a.csv", "--out", "out"]);
    assert_eq!(run.code, 2, "{}", run.stderr);
    assert!(
        run.stderr.contains("out/handouts is a link")
            && run.stderr.contains("nothing in out was changed"),
        "{}",
        run.stderr
    );
    assert_eq!(outside(f.dir.path(), "out"), outside_before);
    let mut after = harness::folder_state(&f.path("out"));
    after.retain(|k, _| !k.starts_with("handouts/"));
    let mut kept = before.clone();
    kept.retain(|k, _| !k.starts_with("handouts/"));
    assert_eq!(after, kept, "nothing in the folder changed either");
}

#[test]
fn a_planted_journal_reaches_neither_outside_nor_an_input_nor_a_user_file() {
    let f = Fixture::new();
    f.write("out/a.csv", A);
    assert_eq!(f.run(&["grade", "out/a.csv", "--out", "out"]).code, 0);
    let dir = f.path("out");
    f.write("elsewhere/victim.txt", "outside the folder");
    symlink(f.path("elsewhere"), dir.join("sub")).unwrap();
    std::fs::write(dir.join("mine.txt"), "a grader's own notes").unwrap();
    std::fs::write(dir.join(".x.999999999.partial"), "planted").unwrap();
    std::fs::write(dir.join(".y.999999999.partial"), "planted").unwrap();
    // the manifest made to list the input, with its real hash, so that a drop line matches
    let manifest = std::fs::read_to_string(dir.join(".benchgrade-manifest")).unwrap();
    let planted_manifest = format!("{manifest}{}\ta.csv\n", sha256(A.as_bytes()));
    std::fs::write(dir.join(".benchgrade-manifest"), planted_manifest).unwrap();
    let journal = format!(
        "benchgrade journal 2\n\
         put\t.x.999999999.partial\tsub/victim.txt\t{h}\n\
         put\t.x.999999999.partial\t../elsewhere/victim.txt\t{h}\n\
         put\t.y.999999999.partial\tmine.txt\t{h}\n\
         drop\tsub/victim.txt\t{v}\n\
         drop\ta.csv\t{a}\n\
         end\n",
        h = sha256(b"planted"),
        v = sha256(b"outside the folder"),
        a = sha256(A.as_bytes()),
    );
    std::fs::write(dir.join(".benchgrade-journal"), journal).unwrap();
    let outside_before = outside(f.dir.path(), "out");
    let run = f.run(&["grade", "out/a.csv", "--out", "out"]);
    assert_eq!(run.code, 0, "{}", run.stderr);
    assert_eq!(outside(f.dir.path(), "out"), outside_before);
    assert_eq!(
        std::fs::read_to_string(dir.join("a.csv")).unwrap(),
        A,
        "the input stays"
    );
    // the grader's file was not overwritten: set aside under a name of its own
    assert_eq!(
        std::fs::read_to_string(dir.join("mine.kept.txt")).unwrap(),
        "a grader's own notes"
    );
    assert!(
        run.stderr
            .contains("mine.txt was not written by benchgrade"),
        "{}",
        run.stderr
    );
    assert!(std::fs::symlink_metadata(dir.join("sub"))
        .unwrap()
        .is_symlink());
}

#[test]
fn state_files_that_are_pipes_devices_links_or_folders_are_named_not_read() {
    let f = Fixture::new();
    f.write("a.csv", A);
    assert_eq!(f.run(&["grade", "a.csv", "--out", "out"]).code, 0);
    let dir = f.path("out");
    let before = harness::folder_state(&dir);
    let outside_before = outside(f.dir.path(), "out");
    let fifo = |p: &Path| {
        let made = std::process::Command::new("mkfifo")
            .arg(p)
            .status()
            .unwrap();
        assert!(made.success());
    };
    for (state, what, expected) in [
        (
            ".benchgrade-journal",
            "pipe",
            "a pipe, a device or a socket",
        ),
        (
            ".benchgrade-manifest",
            "pipe",
            "a pipe, a device or a socket",
        ),
        (".benchgrade-manifest", "zero", "a link"),
        (".benchgrade-journal", "zero", "a link"),
        (".benchgrade-journal", "folder", "a folder"),
        (".benchgrade-manifest", "folder", "a folder"),
    ] {
        let path = dir.join(state);
        let saved = std::fs::read(&path).ok();
        let _ = std::fs::remove_file(&path);
        match what {
            "pipe" => fifo(&path),
            "zero" => symlink("/dev/zero", &path).unwrap(),
            _ => std::fs::create_dir(&path).unwrap(),
        }
        // a hang or a read of /dev/zero until memory runs out fails here
        let run = harness::run_within(f.dir.path(), &["grade", "a.csv", "--out", "out"], 60)
            .unwrap_or_else(|| panic!("{state} as a {what}: the run hung"));
        assert_eq!(run.code, 2, "{state} {what}: {}", run.stderr);
        assert!(
            run.stderr.contains(&format!("out/{state} is {expected}")),
            "{state} {what}: {}",
            run.stderr
        );
        assert!(!run.stderr.contains("panicked"), "{}", run.stderr);
        assert_eq!(harness::folder_state(&dir), before, "{state} {what}");
        assert_eq!(outside(f.dir.path(), "out"), outside_before);
        if what == "folder" {
            std::fs::remove_dir(&path).unwrap();
        } else {
            std::fs::remove_file(&path).unwrap();
        }
        if let Some(bytes) = saved {
            std::fs::write(&path, bytes).unwrap();
        }
    }
    assert_eq!(
        f.run(&["grade", "a.csv", "--out", "out"]).code,
        0,
        "fine once they are gone"
    );
}

#[test]
fn a_workbook_edited_by_hand_is_set_aside_not_deleted() {
    let f = Fixture::new();
    f.write("a.csv", A);
    f.write("b.csv", B);
    assert_eq!(f.run(&["grade", "a.csv", "b.csv", "--out", "out"]).code, 0);
    let dir = f.path("out");
    // a grader adds to b's graded workbook and to results.csv (any change counts: the bytes
    // differ from what benchgrade wrote)
    let mut edited = std::fs::read(dir.join("b-graded.xlsx")).unwrap();
    edited.extend_from_slice(b"grader's change");
    std::fs::write(dir.join("b-graded.xlsx"), &edited).unwrap();
    let mut results = std::fs::read(dir.join("results.csv")).unwrap();
    results.extend_from_slice(b"a note at the end\n");
    std::fs::write(dir.join("results.csv"), &results).unwrap();
    let outside_before = outside(f.dir.path(), "out");
    // b.csv leaves the batch: its workbook and handout are stale
    let run = f.run(&["grade", "a.csv", "--out", "out"]);
    assert_eq!(run.code, 0, "{}", run.stderr);
    assert_eq!(outside(f.dir.path(), "out"), outside_before);
    assert_eq!(
        std::fs::read(dir.join("b-graded.edited.xlsx")).unwrap(),
        edited
    );
    assert_eq!(
        std::fs::read(dir.join("results.edited.csv")).unwrap(),
        results
    );
    assert!(!dir.join("b-graded.xlsx").exists());
    assert!(
        !dir.join("handouts/S2.html").exists(),
        "an unchanged stale output goes"
    );
    for name in ["b-graded.xlsx", "results.csv"] {
        assert!(
            run.stderr
                .contains(&format!("out/{name} was changed after benchgrade wrote it")),
            "{}",
            run.stderr
        );
    }
    // a third run finds both set-aside files untouched, and no new note
    let again = f.run(&["grade", "a.csv", "--out", "out"]);
    assert_eq!(again.code, 0);
    assert!(!again.stderr.contains("was changed"), "{}", again.stderr);
    assert_eq!(
        std::fs::read(dir.join("b-graded.edited.xlsx")).unwrap(),
        edited
    );
}

#[test]
fn a_first_run_killed_or_failed_early_leaves_no_empty_handouts_folder() {
    let f = Fixture::new();
    f.write("big.csv", harness::class_csv(20_000, 6));
    let outside_before = outside(f.dir.path(), "out");
    let failed = harness::run_env(
        f.dir.path(),
        &["grade", "big.csv", "--out", "failed"],
        &[("BENCHGRADE_FAULT", "panic-in-workbooks")],
    );
    assert_eq!(failed.code, 1, "{}", failed.stderr);
    assert!(!f.path("failed/handouts").exists());
    let started = std::time::Instant::now();
    assert_eq!(
        f.run(&["grade", "big.csv", "--out", "timing", "--quiet"])
            .code,
        0
    );
    let full = started.elapsed();
    let mut child = std::process::Command::new(env!("CARGO_BIN_EXE_benchgrade"))
        .args(["grade", "big.csv", "--out", "out", "--quiet"])
        .current_dir(f.dir.path())
        .spawn()
        .unwrap();
    // well into grading (handout pages are being written), well before the end
    std::thread::sleep(full.mul_f64(0.5));
    let _ = child.kill();
    let _ = child.wait();
    assert!(!f.path("out/results.csv").exists(), "killed before the end");
    assert!(!f.path("out/handouts").exists());
    let mut after = outside(f.dir.path(), "out");
    after.retain(|k, _| !k.starts_with("failed") && !k.starts_with("timing"));
    assert_eq!(after, outside_before);
}

#[test]
fn the_workspace_removes_and_serves_nothing_through_a_link() {
    use crate::serve_client::Server;
    let f = Fixture::new();
    let ws = f.path("ws");
    f.write("shared/victim.csv", A);
    f.write("shared/S1.html", "a page from elsewhere");
    f.write("ws/inputs/a.csv", A);
    f.write("ws/graded/results.csv", "id\n");
    symlink(f.path("shared"), ws.join("inputs/linked")).unwrap();
    symlink(f.path("shared"), ws.join("graded/handouts")).unwrap();
    symlink(f.path("shared/S1.html"), ws.join("graded/S1.html")).unwrap();
    let outside_before = outside(f.dir.path(), "ws");
    let server = Server::start(&ws);
    // the page lists a file through the linked folder (a run reads it) but never removes it
    let (status, body) = server.call("DELETE", "/api/files/linked/victim.csv", None);
    assert_eq!(status, 409, "{body}");
    assert_eq!(body["field"], "name");
    assert!(
        body["error"]
            .as_str()
            .unwrap()
            .contains("inputs/linked is a link"),
        "{body}"
    );
    for name in ["handouts/S1.html", "S1.html"] {
        let (status, body) = server.call("GET", &format!("/api/outputs/{name}"), None);
        assert_eq!(status, 404, "{name}: {body}");
    }
    let listed = server.get("/api/outputs");
    let names: Vec<&str> = listed["outputs"]
        .as_array()
        .unwrap()
        .iter()
        .map(|o| o["name"].as_str().unwrap())
        .collect();
    assert!(names.iter().all(|n| !n.contains("S1")), "{names:?}");
    // a link at a file's own name in inputs/ is removed itself, not what it points to
    symlink(f.path("shared/victim.csv"), ws.join("inputs/pointer.csv")).unwrap();
    assert_eq!(server.call("DELETE", "/api/files/pointer.csv", None).0, 200);
    assert!(std::fs::symlink_metadata(ws.join("inputs/pointer.csv")).is_err());
    drop(server);
    assert_eq!(outside(f.dir.path(), "ws"), outside_before);
}

/// The JSON body of a raw response.
fn json_body(text: &str) -> serde_json::Value {
    let body = text.split_once("\r\n\r\n").map_or("", |(_, b)| b);
    serde_json::from_str(body).unwrap_or_else(|e| panic!("not JSON ({e}): {text}"))
}

#[test]
fn long_names_and_the_framework_s_own_errors_come_back_as_the_api_s() {
    use crate::serve_client::{raw, Server};
    let f = Fixture::new();
    let ws = f.path("ws");
    let server = Server::start_with(&ws, &["--upload-limit", "1"]);
    let outside_before = outside(f.dir.path(), "ws");
    // 200 CJK characters: 600 bytes of UTF-8, past the 255 a file system allows a name
    let long = format!("{}.csv", "実験報告".repeat(50));
    let (status, body) = server.upload(&[(long.as_str(), A.as_bytes())]);
    assert_eq!(status, 201, "{body}");
    let stored = body["stored"][0].as_str().unwrap();
    assert!(stored.len() <= 180 && stored.ends_with(".csv") && stored.starts_with("実験報告"));
    assert_eq!(
        std::fs::read_to_string(ws.join("inputs").join(stored)).unwrap(),
        A
    );
    let (p, t) = (server.port, &server.token);
    let head = |line: &str, extra: &str| {
        format!("{line} HTTP/1.1\r\nHost: 127.0.0.1:{p}\r\nAuthorization: Bearer {t}\r\n{extra}Connection: close\r\n\r\n")
    };
    // declared past the limit: refused by the body limit before any handler runs
    let (code, text) = raw(
        p,
        &head(
            "POST /api/files",
            "Content-Type: multipart/form-data; boundary=x\r\nContent-Length: 60000000\r\n",
        ),
        b"",
    );
    assert_eq!(code, 413, "{text}");
    let v = json_body(&text);
    assert_eq!(v["field"], "file");
    assert!(
        v["error"].as_str().unwrap().contains("limit of 1 MB"),
        "{v}"
    );
    // not multipart at all
    let (code, text) = raw(
        p,
        &head(
            "POST /api/files",
            "Content-Type: text/plain\r\nContent-Length: 2\r\n",
        ),
        b"hi",
    );
    assert_eq!(code, 400, "{text}");
    let v = json_body(&text);
    assert_eq!(v["field"], "file");
    assert!(
        v["error"].as_str().unwrap().contains("nothing was stored"),
        "{v}"
    );
    // a path that does not parse, and one that names nothing
    let (code, text) = raw(
        p,
        &head("DELETE /api/overrides/first", "Content-Length: 0\r\n"),
        b"",
    );
    assert_eq!(code, 400, "{text}");
    assert_eq!(json_body(&text)["field"], "path");
    let (code, text) = raw(p, &head("GET /api/nothing-here", ""), b"");
    assert_eq!(code, 404, "{text}");
    assert!(json_body(&text)["error"].is_string());
    drop(server);
    assert_eq!(outside(f.dir.path(), "ws"), outside_before);
}

#[test]
fn a_publication_that_fails_half_way_says_so_and_the_next_run_completes_it() {
    let f = Fixture::new();
    f.write("small.csv", A);
    f.write("big.csv", harness::class_csv(20_000, 6));
    fn grade<'a>(input: &'a str, out: &'a str) -> Vec<&'a str> {
        let ts = ["--timestamp", "1767225600", "--quiet"];
        let mut args = vec!["grade", input, "--out", out];
        args.extend(ts);
        args
    }
    assert_eq!(f.run(&grade("big.csv", "reference")).code, 0);
    assert_eq!(f.run(&grade("small.csv", "out")).code, 0);
    let before = harness::folder_state(&f.path("out"));
    std::fs::remove_dir_all(f.path("out/handouts")).unwrap();
    let outside_before = outside(f.dir.path(), "out");
    let child = std::process::Command::new(env!("CARGO_BIN_EXE_benchgrade"))
        .args(grade("big.csv", "out"))
        .current_dir(f.dir.path())
        .stderr(std::process::Stdio::piped())
        .spawn()
        .unwrap();
    // once the run is grading (its checks passed), a file takes the handouts folder's name: the
    // publication renames the outputs before it (in name order) and then fails
    let grading = || {
        std::fs::read_dir(f.path("out")).unwrap().any(|e| {
            e.unwrap()
                .file_name()
                .to_string_lossy()
                .starts_with(".first-pass")
        })
    };
    assert!(crate::serve_client::eventually(60, grading));
    std::fs::write(f.path("out/handouts"), "in the way").unwrap();
    let out = child.wait_with_output().unwrap();
    let stderr = String::from_utf8_lossy(&out.stderr);
    assert_eq!(out.status.code(), Some(2), "{stderr}");
    assert!(stderr.contains("out/handouts is not a folder"), "{stderr}");
    assert!(
        stderr.contains("the outputs are partly replaced"),
        "{stderr}"
    );
    assert!(!stderr.contains("unchanged"), "{stderr}");
    let mixed = harness::folder_state(&f.path("out"));
    assert!(mixed != before, "partly replaced, as the message says");
    // the next run completes the publication once the way is clear
    std::fs::remove_file(f.path("out/handouts")).unwrap();
    assert!(benchgrade::export::atomic::recover(&f.path("out")).unwrap());
    assert_eq!(
        harness::folder_state(&f.path("out")),
        harness::folder_state(&f.path("reference"))
    );
    assert_eq!(outside(f.dir.path(), "out"), outside_before);
}
