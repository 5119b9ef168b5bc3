//! Nothing a class file, a folder or a failed run can do crashes benchgrade, hangs it or
//! half-replaces its outputs: each case of the adversarial pass, as a test named for what it
//! proves.

use crate::harness::{self, project_root, read_results, Fixture};

/// A section of `n` students who all did exactly the same (and so earn the same score).
fn identical_section(section: &str, n: usize) -> String {
    (0..n)
        .map(|i| format!("{section}-{i},{section},3.00,2.40,121.6-122.3\n"))
        .collect()
}

#[test]
fn zero_variance_comparisons_are_rows_with_a_reason_not_a_crash() {
    let f = Fixture::new();
    let mut csv = String::from("ID,Section,Crude mass (g),Recovered mass (g),MP range\n");
    csv += &identical_section("A", 4);
    csv += &identical_section("B", 5);
    f.write("same.csv", csv);
    let run = f.run(&["grade", "same.csv", "--out", "out", "--quiet"]);
    assert_eq!(run.code, 0, "{}", run.stderr);
    assert!(!run.stderr.contains("panicked"), "{}", run.stderr);
    let rows = read_results(&f.path("out/section-comparison.csv"));
    let anova: Vec<_> = rows
        .iter()
        .filter(|r| r["test"] == "one-way ANOVA" && r["grouping"] == "section")
        .collect();
    assert!(!anova.is_empty());
    for r in anova {
        assert_eq!((r["statistic"].as_str(), r["p_value"].as_str()), ("", ""));
        assert!(r["note"].contains("no variation"), "{r:?}");
    }
    let welch = rows.iter().find(|r| r["test"] == "Welch ANOVA").unwrap();
    assert!(
        welch["note"].contains("left out A") && welch["note"].contains('B'),
        "{welch:?}"
    );
    let html = std::fs::read_to_string(f.path("out/cohort-report.html")).unwrap();
    assert!(
        html.contains("could not be made from these data"),
        "the report says it in words"
    );
    assert!(f.path("out/cohort-report.xlsx").exists());
}

#[test]
fn a_shared_strings_bomb_is_refused_within_a_gigabyte() {
    // tests/data/bad: 1.5 MB whose shared strings inflate to 1.5 GiB (it took 15 GB of memory
    // before parts read whole were bounded); under a 1 GiB address-space cap the run must end
    // with the file named and the good file graded
    let f = Fixture::new();
    f.write(
        "good.csv",
        "ID,Crude mass (g),Recovered mass (g),MP\ng1,3.0,2.1,121-122\n",
    );
    for bomb in [
        "shared-strings-bomb.xlsx",
        "shared-strings-bomb-understated.xlsx",
    ] {
        let path = project_root().join("tests/data/bad").join(bomb);
        let args = ["grade", path.to_str().unwrap(), "good.csv", "--out", "out"];
        let run = harness::run_capped(f.dir.path(), &args, 1024);
        assert_eq!(run.code, 1, "{bomb}: {}", run.stderr);
        assert!(run.stderr.contains(bomb), "{}", run.stderr);
        assert_eq!(f.results("out").len(), 1);
    }
}

const GOOD: &str = "ID,Crude mass (g),Recovered mass (g),MP\ng1,3.0,2.1,121-122\n";

#[test]
fn a_folder_linking_to_its_parent_is_walked_once() {
    let f = Fixture::new();
    f.write("class/a.csv", GOOD);
    std::os::unix::fs::symlink(f.path("class"), f.path("class/back")).unwrap();
    std::os::unix::fs::symlink(f.dir.path(), f.path("class/up")).unwrap();
    let run = harness::run_within(f.dir.path(), &["grade", "class", "--out", "out"], 60)
        .expect("a link loop must not make the walk endless");
    assert_eq!(run.code, 0, "{}", run.stderr);
    assert_eq!(f.results("out").len(), 1, "each file once");
    assert_eq!(
        run.stderr.matches("loop").count(),
        1,
        "reported once: {}",
        run.stderr
    );
    assert!(
        run.stderr.contains("outside the folder given"),
        "{}",
        run.stderr
    );
}

#[test]
fn the_same_file_named_twice_is_read_once() {
    let f = Fixture::new();
    f.write(
        "a.csv",
        "ID,Crude mass (g),Recovered mass (g),MP\ng1,3.0,2.1,121-122\ng2,3.0,2.2,121-122\n",
    );
    std::fs::create_dir(f.path("x")).unwrap();
    let run = f.run(&["grade", "a.csv", "./x/../a.csv", "--out", "out"]);
    assert_eq!(run.code, 0, "{}", run.stderr);
    let rows = f.results("out");
    assert_eq!(rows.len(), 2);
    assert!(rows
        .iter()
        .all(|r| !r["flags"].contains("duplicate-student")));
    assert!(run.stderr.contains("read once"), "{}", run.stderr);
}

#[test]
fn a_pipe_or_a_device_named_like_a_spreadsheet_is_named_not_read() {
    let f = Fixture::new();
    f.write("good.csv", GOOD);
    let fifo = f.path("pipe.csv");
    let made = std::process::Command::new("mkfifo").arg(&fifo).status();
    assert!(made.is_ok_and(|s| s.success()), "mkfifo");
    std::os::unix::fs::symlink("/dev/zero", f.path("zero.xlsx")).unwrap();
    for args in [
        vec!["grade", ".", "--out", "out"],
        vec!["grade", "pipe.csv", "zero.xlsx", "good.csv", "--out", "out"],
        vec![
            "grade",
            "good.csv",
            "--calibration",
            "pipe.csv",
            "--out",
            "out",
        ],
        vec![
            "grade",
            "good.csv",
            "--overrides",
            "pipe.csv",
            "--out",
            "out",
        ],
    ] {
        let run = harness::run_within(f.dir.path(), &args, 60).expect("no hang on a pipe");
        assert!(run.code == 1 || run.code == 2, "{args:?}: {}", run.stderr);
        assert!(
            run.stderr.contains("not a regular file"),
            "{args:?}: {}",
            run.stderr
        );
    }
}

#[test]
fn awkward_sections_long_cells_wide_sheets_and_long_names_still_get_their_workbooks() {
    use calamine::Reader;
    let f = Fixture::new();
    let long_cell = "x".repeat(40_000);
    let sections = [
        "Provenance",
        "Statistics",
        "A very long section name that is cut here 1",
        "A very long section name that is cut here 2",
        "ÉCOLE",
        "école",
        "Cut just after an apostrophe '-tail",
        "=1+1",
        "History",
    ];
    let mut csv = String::from("ID,Section,Notes,Crude mass (g),Recovered mass (g),MP range\n");
    for (i, s) in sections.iter().enumerate() {
        let note = if i == 0 { long_cell.as_str() } else { "fine" };
        csv += &format!("s{i},\"{s}\",{note},3.0,2.1,121-122\nt{i},\"{s}\",ok,3.0,2.2,121-122\n");
    }
    f.write("tricky.csv", &csv);
    let stem = "学".repeat(80); // 240 bytes: a legal name, but not with "-graded.xlsx" after it
    f.write(&format!("{stem}.csv"), GOOD);
    let mut wide = String::from("ID,Crude mass (g),Recovered mass (g),MP range");
    (0..17_000).for_each(|i| wide += &format!(",c{i}"));
    wide += "\nw1,3,2,121-122";
    (0..17_000).for_each(|_| wide += ",v");
    f.write("wide.csv", wide + "\n");
    let run = f.run(&["grade", ".", "--out", "out"]);
    assert_eq!(run.code, 0, "{}", run.stderr);
    let books: Vec<_> = std::fs::read_dir(f.path("out"))
        .unwrap()
        .map(|e| e.unwrap().path())
        .filter(|p| {
            p.extension().is_some_and(|e| e == "xlsx") && !p.ends_with("cohort-report.xlsx")
        })
        .collect();
    assert_eq!(books.len(), 3, "{books:?}");
    let mut tricky: calamine::Xlsx<_> =
        calamine::open_workbook(f.path("out/tricky-graded.xlsx")).unwrap();
    let names = tricky.sheet_names();
    // "ÉCOLE" and "école" are one section (labels match as benches do), so one sheet for both
    assert_eq!(names.len(), sections.len() + 1, "{names:?}");
    let lower: std::collections::BTreeSet<String> =
        names.iter().map(|n| n.to_lowercase()).collect();
    assert_eq!(lower.len(), names.len(), "distinct in any case: {names:?}");
    assert!(names
        .iter()
        .all(|n| n.encode_utf16().count() <= 31 && !n.ends_with('\'')));
    let provenance = tricky.worksheet_range("Provenance").unwrap();
    let said: String = provenance
        .cells()
        .map(|(_, _, c)| c.to_string())
        .collect::<Vec<_>>()
        .join("\n");
    assert!(said.contains("holds section \"Statistics\""), "{said}");
    let first = tricky.worksheet_range(&names[0]).unwrap();
    assert!(first
        .cells()
        .any(|(_, _, c)| c.to_string().ends_with("[cut: more than a cell holds]")));
    if let Some(soffice) = harness::soffice() {
        let pdf = harness::convert(
            soffice,
            f.dir.path(),
            &f.path("out/tricky-graded.xlsx"),
            "pdf",
        );
        assert!(std::fs::read(pdf).unwrap().starts_with(b"%PDF"));
    }
}

#[test]
fn the_pseudonymized_export_never_quotes_a_cell() {
    let f = Fixture::new();
    f.write(
        "names.csv",
        "ID,Crude mass (g),Recovered mass (g),MP range,Compound\ns1,Ana Lima,2.1,121-122,benzoic acid\ns2,3.0,2.0,121-122,Bruno Costa\n",
    );
    f.write("course.key", "a course secret of some length");
    let run = f.run(&[
        "grade",
        "names.csv",
        "--out",
        "out",
        "--pseudonymize",
        "--pseudonym-key",
        "course.key",
    ]);
    assert_eq!(run.code, 0, "{}", run.stderr);
    let plain = std::fs::read_to_string(f.path("out/results.csv")).unwrap();
    assert!(
        plain.contains("Ana Lima"),
        "the course's own results keep the cell text"
    );
    let out = std::fs::read_to_string(f.path("out/results-pseudonymized.csv")).unwrap();
    for name in ["Ana Lima", "Bruno Costa"] {
        assert!(
            !out.contains(name),
            "{name} in the pseudonymized export:\n{out}"
        );
    }
    assert!(out.contains("text in a number cell"), "{out}");
}

#[test]
fn a_stray_byte_does_not_garble_a_utf8_file() {
    let f = Fixture::new();
    let mut bytes = b"ID,Name,Crude mass (g),Recovered mass (g),MP\n".to_vec();
    bytes.extend_from_slice(
        "s1,Zoë Brandt,3.0,2.1,121-122\ns2,Ana Zoë,3.0,2.2,121-122\n".as_bytes(),
    );
    bytes.extend_from_slice(b"s3,Ren\xE9 Marsh,3.0,2.0,121-122\n");
    f.write("class.csv", bytes);
    let run = f.run(&["grade", "class.csv", "--out", "out"]);
    assert_eq!(run.code, 0, "{}", run.stderr);
    let rows = f.results("out");
    assert_eq!(
        rows[0]["student_name"], "Zoë Brandt",
        "not read as windows-1252"
    );
    assert!(
        rows[2]["notes"].contains("C4") || rows[2]["notes"].contains("B4"),
        "{:?}",
        rows[2]["notes"]
    );
    assert_eq!(
        run.stderr.matches("not valid UTF-8").count(),
        1,
        "said once: {}",
        run.stderr
    );
}

#[test]
fn a_second_run_into_the_same_folder_waits_then_gives_up() {
    let f = Fixture::new();
    f.write("a.csv", GOOD);
    assert_eq!(f.run(&["grade", "a.csv", "--out", "out"]).code, 0);
    let before = harness::folder_state(&f.path("out"));
    // another run holds the folder's lock
    let held = std::fs::File::open(f.path("out/.benchgrade.lock")).unwrap();
    held.lock().unwrap();
    let args = ["grade", "a.csv", "--out", "out"];
    let run = harness::run_env(f.dir.path(), &args, &[("BENCHGRADE_LOCK_WAIT", "0.5")]);
    assert_eq!(run.code, 2, "{}", run.stderr);
    assert!(
        run.stderr
            .contains("another benchgrade run is writing into out"),
        "{}",
        run.stderr
    );
    assert_eq!(harness::folder_state(&f.path("out")), before);
    drop(held);
    assert_eq!(f.run(&args).code, 0, "free again once the other run ends");
}

#[test]
fn nothing_to_grade_is_an_error_and_keeps_the_outputs() {
    let f = Fixture::new();
    f.write("class/a.csv", GOOD);
    assert_eq!(f.run(&["grade", "class", "--out", "out"]).code, 0);
    let before = harness::folder_state(&f.path("out"));
    std::fs::create_dir(f.path("empty")).unwrap();
    for args in [
        vec!["grade", "empty", "--out", "out"],
        vec!["grade", "out", "--out", "out"],
    ] {
        let run = f.run(&args);
        assert_eq!(run.code, 1, "{args:?}: {}", run.stderr);
        assert!(run.stderr.contains("nothing to grade"), "{}", run.stderr);
        assert_eq!(harness::folder_state(&f.path("out")), before, "{args:?}");
    }
}

#[test]
fn a_bad_baseline_or_timestamp_is_refused_before_anything_is_written() {
    let f = Fixture::new();
    f.write("a.csv", GOOD);
    assert_eq!(f.run(&["grade", "a.csv", "--out", "out"]).code, 0);
    let before = harness::folder_state(&f.path("out"));
    std::fs::create_dir_all(f.path("old")).unwrap();
    f.write("old/results.parquet", b"PAR1 not really");
    f.write("empty/results.parquet", b"");
    for args in [
        vec!["grade", "a.csv", "--out", "out", "--baseline", "old"],
        vec!["grade", "a.csv", "--out", "out", "--baseline", "empty"],
        vec![
            "grade",
            "a.csv",
            "--out",
            "out",
            "--timestamp",
            "-99999999999",
        ],
        vec![
            "grade",
            "a.csv",
            "--out",
            "out",
            "--timestamp",
            "999999999999",
        ],
    ] {
        let run = f.run(&args);
        assert_eq!(run.code, 2, "{args:?}: {}", run.stderr);
        assert_eq!(harness::folder_state(&f.path("out")), before, "{args:?}");
        assert!(!run.stderr.contains("panicked"), "{}", run.stderr);
    }
}

#[test]
fn a_panic_is_one_message_and_the_outputs_stay() {
    let f = Fixture::new();
    f.write("a.csv", GOOD);
    assert_eq!(f.run(&["grade", "a.csv", "--out", "out"]).code, 0);
    let before = harness::folder_state(&f.path("out"));
    let args = ["grade", "a.csv", "--out", "out"];
    let run = harness::run_env(
        f.dir.path(),
        &args,
        &[("BENCHGRADE_FAULT", "panic-in-workbooks")],
    );
    assert_eq!(run.code, 1, "{}", run.stderr);
    assert_eq!(run.stderr.lines().count(), 1, "one message: {}", run.stderr);
    assert!(
        run.stderr.contains(
            "internal error while grading into out; previous outputs kept; please report"
        ),
        "{}",
        run.stderr
    );
    assert_eq!(harness::folder_state(&f.path("out")), before);
    let left: Vec<_> = std::fs::read_dir(f.path("out"))
        .unwrap()
        .map(|e| e.unwrap().file_name().to_string_lossy().into_owned())
        .filter(|n| n.ends_with(".partial"))
        .collect();
    assert!(left.is_empty(), "{left:?}");
}

#[test]
fn a_reader_that_closes_the_pipe_ends_the_run_quietly() {
    use std::io::{BufRead, BufReader};
    let f = Fixture::new();
    // every row flagged, so that `check` prints far more than a pipe holds (64 KiB)
    let rows: String = (0..4000)
        .map(|i| format!("s{i},3.0,3.5,121-122\n"))
        .collect();
    f.write(
        "class.csv",
        format!("ID,Crude mass (g),Recovered mass (g),MP\n{rows}"),
    );
    let mut child = std::process::Command::new(env!("CARGO_BIN_EXE_benchgrade"))
        .args(["check", "class.csv"])
        .current_dir(f.dir.path())
        .stdout(std::process::Stdio::piped())
        .stderr(std::process::Stdio::piped())
        .spawn()
        .unwrap();
    let mut first = String::new();
    BufReader::new(child.stdout.take().unwrap())
        .read_line(&mut first)
        .unwrap();
    // the reader is gone, as `| head -1` leaves it
    let out = child.wait_with_output().unwrap();
    let stderr = String::from_utf8_lossy(&out.stderr);
    assert_eq!(out.status.code(), Some(0), "{stderr}");
    assert!(
        !stderr.contains("panicked") && !stderr.contains("Broken pipe"),
        "{stderr}"
    );
}

#[test]
fn a_killed_run_leaves_the_old_outputs_or_the_new_ones() {
    let f = Fixture::new();
    f.write("small.csv", GOOD);
    f.write("big.csv", harness::class_csv(20_000, 6));
    let ts = ["--timestamp", "1767225600"];
    let grade = |input: &str, out: &str| {
        let mut args = vec!["grade", input, "--out", out, "--quiet"];
        args.extend(ts);
        assert_eq!(f.run(&args).code, 0);
    };
    grade("small.csv", "old");
    grade("big.csv", "new");
    let (old, new) = (
        harness::folder_state(&f.path("old")),
        harness::folder_state(&f.path("new")),
    );
    // timed as the killed runs run: over a copy of the old outputs (which a publication
    // checks and replaces), not into an empty folder
    let copy = std::process::Command::new("cp")
        .arg("-a")
        .arg(f.path("old"))
        .arg(f.path("timing"))
        .status();
    assert!(copy.unwrap().success());
    let started = std::time::Instant::now();
    grade("big.csv", "timing");
    let full = started.elapsed();
    let mut saw = (0, 0);
    // kills from the start to past the end of a whole run
    for k in 0..17u32 {
        let out = f.path(&format!("kill{k}"));
        let copy = std::process::Command::new("cp")
            .arg("-a")
            .arg(f.path("old"))
            .arg(&out)
            .status();
        assert!(copy.unwrap().success());
        let mut child = std::process::Command::new(env!("CARGO_BIN_EXE_benchgrade"))
            .args([
                "grade",
                "big.csv",
                "--out",
                out.to_str().unwrap(),
                "--quiet",
            ])
            .args(ts)
            .current_dir(f.dir.path())
            .spawn()
            .unwrap();
        // fourteen kills through the run, then three well past the end of a timed run (a
        // killed run may take longer than the timed one on a busy machine)
        let at = if k < 14 {
            f64::from(k) / 11.0
        } else {
            f64::from(k - 12)
        };
        std::thread::sleep(full.mul_f64(at));
        let _ = child.kill(); // SIGKILL
        let _ = child.wait();
        // what a later run does first: complete a publication the killed one left half done
        benchgrade::export::atomic::recover(&out).unwrap();
        let state = harness::folder_state(&out);
        assert!(
            state == old || state == new,
            "killed at {k}/11: a mixed folder {state:?}"
        );
        if state == old {
            saw.0 += 1;
        } else {
            saw.1 += 1;
        }
    }
    eprintln!(
        "kills that left the old set: {}, the new one: {}",
        saw.0, saw.1
    );
    assert!(
        saw.0 > 0 && saw.1 > 0,
        "the kills landed before and after the end: {saw:?}"
    );
}

#[test]
fn a_full_disk_fails_the_run_and_keeps_the_outputs() {
    let f = Fixture::new();
    let disk = f.path("disk");
    std::fs::create_dir(&disk).unwrap();
    let mounted = std::process::Command::new("mount")
        .args(["-t", "tmpfs", "-o", "size=1m", "tmpfs"])
        .arg(&disk)
        .output();
    if !mounted.as_ref().is_ok_and(|o| o.status.success()) {
        // CI runs as root and mounts it; elsewhere say why the check did not run
        assert!(
            std::env::var_os("BENCHGRADE_CI").is_none(),
            "CI must be able to mount a tmpfs: {mounted:?}"
        );
        eprintln!("skipped: mounting a small tmpfs needs root");
        return;
    }
    struct Unmount<'a>(&'a std::path::Path);
    impl Drop for Unmount<'_> {
        fn drop(&mut self) {
            let _ = std::process::Command::new("umount").arg(self.0).status();
        }
    }
    let _unmount = Unmount(&disk);
    f.write("small.csv", GOOD);
    f.write("big.csv", harness::class_csv(20_000, 6));
    let out = disk.join("out");
    let out_arg = out.to_str().unwrap();
    assert_eq!(f.run(&["grade", "small.csv", "--out", out_arg]).code, 0);
    let before = harness::folder_state(&out);
    let run = f.run(&["grade", "big.csv", "--out", out_arg]);
    assert_eq!(run.code, 2, "{}", run.stderr);
    assert!(
        run.stderr.contains("No space left on device"),
        "{}",
        run.stderr
    );
    assert!(!run.stderr.contains("panicked"), "{}", run.stderr);
    assert_eq!(
        harness::folder_state(&out),
        before,
        "the previous outputs stay"
    );
    let left: Vec<_> = std::fs::read_dir(&out)
        .unwrap()
        .map(|e| e.unwrap().file_name().to_string_lossy().into_owned())
        .filter(|n| n.ends_with(".partial"))
        .collect();
    assert!(left.is_empty(), "{left:?}");
}

#[test]
fn formula_text_in_file_and_sheet_names_is_guarded_and_escapes_are_shown_not_sent() {
    let f = Fixture::new();
    f.xlsx("=2+2.xlsx", |wb| {
        let ws = wb.add_worksheet().set_name("=1+1").unwrap();
        ws.write_row(
            0,
            0,
            [
                "ID",
                "Section",
                "Crude mass (g)",
                "Recovered mass (g)",
                "MP",
            ],
        )
        .unwrap();
        ws.write_string(1, 0, "s\u{1b}[2J1").unwrap();
        ws.write_string(1, 1, "A\u{1b}]0;owned\u{7}").unwrap();
        ws.write_number(1, 2, 3.0).unwrap();
        ws.write_number(1, 3, 4.0).unwrap();
        ws.write_string(1, 4, "121-122").unwrap();
    });
    let run = f.run(&["grade", "=2+2.xlsx", "--out", "out"]);
    assert_eq!(run.code, 0, "{}", run.stderr);
    let text = std::fs::read_to_string(f.path("out/results.csv")).unwrap();
    let row = text.lines().nth(1).unwrap();
    assert!(row.starts_with("'=2+2.xlsx,'=1+1,"), "{row}");
    let check = f.run(&["check", "=2+2.xlsx"]);
    for output in [&check.stdout, &check.stderr] {
        assert!(
            !output.contains('\u{1b}') && !output.contains('\u{7}'),
            "{output:?}"
        );
    }
    assert!(check.stdout.contains("\\x1b[2J"), "{}", check.stdout);
}
