//! Rubric grading end to end: both shipped rubrics on the sample data, `rubric check`,
//! overrides, the gradebook and its guard against formula injection.

use crate::harness::{num, project_root, read_results, Fixture};

fn grade_sample(f: &Fixture, rubric: &str, extra: &[&str]) -> crate::harness::Run {
    let rubric = project_root().join("rubrics").join(rubric);
    let mut args = vec!["--rubric", rubric.to_str().unwrap()];
    args.extend_from_slice(extra);
    crate::harness::grade_sample(f, "out", &args)
}

#[test]
fn both_shipped_rubrics_grade_the_sample_data() {
    for (rubric, criteria) in [
        (
            "default.toml",
            ["recovery", "range", "depression", "reporting"],
        ),
        (
            "upper-level.toml",
            ["recovery", "range", "purity", "reporting"],
        ),
    ] {
        let f = Fixture::new();
        let run = grade_sample(&f, rubric, &[]);
        assert_eq!(run.code, 0, "{rubric}: {}", run.stderr);
        let rows = f.results("out");
        for r in &rows {
            let sum: f64 = criteria
                .iter()
                .map(|c| num(r, &format!("points_{c}")).unwrap())
                .sum();
            let total = num(r, "score").unwrap();
            assert!(
                total <= sum + 1e-9,
                "{rubric}: the total never exceeds the criteria ({total} > {sum})"
            );
            assert_eq!(num(r, "max_score"), Some(100.0));
            assert!(!r["feedback"].is_empty());
            if !r["flags"].is_empty() {
                for code in r["flags"].split(';') {
                    assert!(
                        r["feedback"].contains(&format!("Flag {code}:")),
                        "{rubric}: flag {code} not explained"
                    );
                }
            }
        }
        let book = read_results(&f.path("out/gradebook.csv"));
        let duplicates = rows
            .iter()
            .filter(|r| r["flags"].contains("duplicate-student"))
            .count();
        assert_eq!(
            book.len(),
            rows.len() - duplicates,
            "one gradebook row per student"
        );
    }
}

#[test]
fn the_default_rubric_grades_the_demo_rows_as_documented() {
    let f = Fixture::new();
    assert_eq!(grade_sample(&f, "default.toml", &[]).code, 0);
    let rows = f.results("out");
    // recovery-over-100 zeroes the recovery criterion
    for r in rows
        .iter()
        .filter(|r| r["flags"].contains("recovery-over-100"))
    {
        assert_eq!(num(r, "points_recovery"), Some(0.0));
    }
    // a duplicate submission earns nothing
    for r in rows
        .iter()
        .filter(|r| r["flags"].contains("duplicate-student"))
    {
        assert_eq!(num(r, "score"), Some(0.0));
    }
    // letters follow the cut-offs
    for r in &rows {
        let p = num(r, "percent").unwrap();
        let want = if p >= 90.0 {
            "A"
        } else if p >= 80.0 {
            "B"
        } else if p >= 70.0 {
            "C"
        } else if p >= 60.0 {
            "D"
        } else {
            "F"
        };
        assert_eq!(r["letter"], want);
    }
}

#[test]
fn rubric_check_locates_every_kind_of_error() {
    let f = Fixture::new();
    let ok = f.run(&[
        "rubric",
        "check",
        project_root()
            .join("rubrics/default.toml")
            .to_str()
            .unwrap(),
    ]);
    assert_eq!(ok.code, 0, "{}", ok.stderr);
    assert!(ok.stdout.contains("4 criteria worth 100 points"));
    f.write(
        "bad.toml",
        "[experiment]\nname = \"x\"\n[grading]\ntotal = 100\n\
         [[criterion]]\nid = \"recovery\"\nlabel = \"R\"\nmax = 60\nmeasure = \"recovery_percent\"\n\
         bands = [{ from = 50, points = 60 }, { from = 40, to = 55, points = 30 }]\n\
         [[flag_rule]]\nflag = \"recovery-over-101\"\ncap = 0\n",
    );
    let run = f.run(&["rubric", "check", "bad.toml"]);
    assert_eq!(run.code, 2);
    for needle in [
        "bad.toml:9:11: unknown measure \"recovery_percent\"",
        "bands are unsorted",
        "bands overlap",
        "bad.toml:12:8: unknown flag code \"recovery-over-101\"",
        "bad.toml:4:9: the criteria's maximum points add up to 60, not 100",
    ] {
        assert!(run.stderr.contains(needle), "{needle}\n{}", run.stderr);
    }
    f.write("typo.toml", "[experiment]\nname = \"x\"\n[[criterion]]\nid = \"r\"\nlabel = \"R\"\nmax = 10\nmesure = \"recovery_pct\"\n");
    let typo = f.run(&["rubric", "check", "typo.toml"]);
    assert_eq!(typo.code, 2);
    assert!(
        typo.stderr.contains("typo.toml:7:1") && typo.stderr.contains("mesure"),
        "{}",
        typo.stderr
    );
}

#[test]
fn overrides_are_applied_shown_and_checked() {
    let f = Fixture::new();
    f.write("class.csv", "ID,Name,Crude mass (g),Recovered mass (g),MP\ns1,Ana,3.0,2.4,121.5-122.3\ns2,=HYPERLINK(\"x\"),3.0,2.4,121.5-122.3\n");
    f.write("o.csv", "student_id,criterion,points,adjust,reason,grader\ns1,range,10,,range recorded on a faulty block,R. Okafor\ns1,total,,+2,neat notebook,R. Okafor\n");
    let run = f.run(&["grade", "class.csv", "--overrides", "o.csv", "--out", "out"]);
    assert_eq!(run.code, 0, "{}", run.stderr);
    let rows = f.results("out");
    assert_eq!(num(&rows[0], "points_range"), Some(10.0));
    assert!(
        rows[0]["overrides"]
            .contains("Melting range 25 -> 10 by R. Okafor: range recorded on a faulty block"),
        "{}",
        rows[0]["overrides"]
    );
    assert!(rows[0]["overrides"].contains("total"));
    let book = read_results(&f.path("out/gradebook.csv"));
    assert_eq!(
        book[1]["student_name"], "'=HYPERLINK(\"x\")",
        "formula injection neutralised"
    );
    // the criterion's sentence states the points it finally earns, and why; the total
    // override is a sentence of its own
    assert!(
        book[0]["feedback"].contains(
            ", 10 of 25 points: override by R. Okafor, was 25: range recorded on a faulty block"
        ),
        "{}",
        book[0]["feedback"]
    );
    assert!(
        book[0]["feedback"].contains("Override: total "),
        "{}",
        book[0]["feedback"]
    );
    // twice gives byte-identical outputs
    let first = std::fs::read(f.path("out/gradebook.csv")).unwrap();
    assert_eq!(
        f.run(&["grade", "class.csv", "--overrides", "o.csv", "--out", "out"])
            .code,
        0
    );
    assert_eq!(first, std::fs::read(f.path("out/gradebook.csv")).unwrap());
    // an unknown student or criterion is an error naming it, and nothing is written
    f.write(
        "bad.csv",
        "student_id,criterion,points,reason,grader\ns9,range,10,x,RO\n",
    );
    let bad = f.run(&[
        "grade",
        "class.csv",
        "--overrides",
        "bad.csv",
        "--out",
        "out2",
    ]);
    assert_eq!(bad.code, 2);
    // the line is named, the student's id (personal data) is not printed
    assert!(bad.stderr.contains("bad.csv line 2"), "{}", bad.stderr);
    assert!(!bad.stderr.contains("s9"), "{}", bad.stderr);
    assert!(!f.path("out2/results.csv").exists());
    f.write(
        "bad2.csv",
        "student_id,criterion,points,reason,grader\ns1,neatness,10,x,RO\n",
    );
    let bad2 = f.run(&[
        "grade",
        "class.csv",
        "--overrides",
        "bad2.csv",
        "--out",
        "out3",
    ]);
    assert_eq!(bad2.code, 2);
    assert!(bad2.stderr.contains("\"neatness\""), "{}", bad2.stderr);
}
