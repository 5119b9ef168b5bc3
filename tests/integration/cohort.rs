//! The cohort outputs: the bench finding on the sample data, the comparison and bias tables, and
//! the HTML report rendered in a real browser.

use std::process::Command;

use crate::harness::{grade_sample, num, project_root, read_results, run_in, Fixture};

fn grade(f: &Fixture) {
    let run = crate::harness::grade_sample(f, "out", &["--timestamp", "1795000000"]);
    assert_eq!(run.code, 0, "{}", run.stderr);
}

#[test]
fn bench_seven_is_found_reading_high() {
    let f = Fixture::new();
    grade(&f);
    let bias = read_results(&f.path("out/bench-bias.csv"));
    let seven = bias
        .iter()
        .find(|b| b["bench"] == "7")
        .expect("bench 7 (written B7, 7) in one row");
    // the shift recomputed from results.csv: the median depression of the rest of the cohort
    // minus bench 7's, over rows with a depression that count (no repeat, no excused student)
    let rows = f.results("out");
    let mut mine = Vec::new();
    let mut rest = Vec::new();
    for r in &rows {
        let counts = !r["flags"].contains("duplicate-student") && r["status"] == "graded";
        let (Some(d), true) = (num(r, "depression_c"), counts) else {
            continue;
        };
        let key: String = r["bench"].chars().filter(char::is_ascii_digit).collect();
        let key = key.trim_start_matches('0').to_string();
        if key == "7" {
            mine.push(d);
        } else {
            rest.push(d);
        }
    }
    let median = |v: &mut Vec<f64>| {
        v.sort_by(f64::total_cmp);
        let n = v.len();
        if n % 2 == 1 {
            v[n / 2]
        } else {
            f64::midpoint(v[n / 2 - 1], v[n / 2])
        }
    };
    let shift = median(&mut rest) - median(&mut mine);
    let stated = num(seven, "median_shift_c").unwrap();
    assert!((stated - shift).abs() < 1e-12, "{stated} vs {shift}");
    assert!(stated > 2.0);
    assert!(
        seven["finding"].starts_with(&format!("bench 7 reads {shift:.1} °C high")),
        "{}",
        seven["finding"]
    );
    assert!(
        bias.iter()
            .filter(|b| b["bench"] != "7")
            .all(|b| b["finding"].is_empty()),
        "only bench 7 is an equipment finding"
    );
    let cmp = read_results(&f.path("out/section-comparison.csv"));
    for test in ["one-way ANOVA", "Welch ANOVA", "Kruskal-Wallis", "Welch t"] {
        assert!(
            cmp.iter()
                .any(|c| c["test"] == test && c["measure"] == "recovery_pct"),
            "{test}"
        );
    }
    for c in cmp.iter().filter(|c| c["test"] == "Welch t") {
        assert!(
            num(c, "p_adjusted").unwrap() >= num(c, "p_value").unwrap(),
            "Holm never lowers a p-value"
        );
    }
    // the cohort workbook holds the same bench table
    use calamine::{open_workbook, Reader, Xlsx};
    let mut wb: Xlsx<_> = open_workbook(f.path("out/cohort-report.xlsx")).unwrap();
    assert_eq!(
        wb.sheet_names(),
        vec![
            "Overview",
            "Sections",
            "Data quality",
            // the sample class's section 04 identifies unknowns against a key
            "Unknowns",
            "Comparisons",
            "Benches",
            "Grades",
            "Outliers"
        ]
    );
    let benches = wb.worksheet_range("Benches").unwrap();
    let finding = benches
        .rows()
        .find(|r| r[0] == calamine::Data::String("7".into()))
        .map(|r| r[6].to_string())
        .unwrap();
    assert_eq!(finding, seven["finding"]);
    let overview = wb.worksheet_range("Overview").unwrap();
    assert!(
        overview
            .rows()
            .any(|r| r[0].to_string().starts_with("bench 7 reads")),
        "the finding is on the overview"
    );
}

fn chromium() -> Option<&'static str> {
    ["chromium", "chromium-browser"].into_iter().find(|c| {
        Command::new(c)
            .arg("--version")
            .output()
            .is_ok_and(|o| o.status.success())
    })
}

#[test]
fn the_report_renders_in_a_browser_without_errors() {
    let Some(browser) =
        crate::harness::outside_program(chromium(), "chromium", "Debian's chromium")
    else {
        return;
    };
    let f = Fixture::new();
    grade(&f);
    let page = f.path("out/cohort-report.html");
    let html = std::fs::read_to_string(&page).unwrap();
    assert!(
        !html.contains("<script") && !html.contains("http://") && !html.contains("https://"),
        "self-contained, no script"
    );
    let flags = [
        "--headless",
        "--no-sandbox",
        "--disable-gpu",
        "--disable-quic",
        "--no-first-run",
        "--disable-background-networking",
        "--disable-component-update",
        "--disable-sync",
        "--enable-logging=stderr",
        "--v=0",
    ];
    let profile = format!("--user-data-dir={}", f.path("chromium-profile").display());
    let url = format!("file://{}", page.display());
    let out = Command::new(browser)
        .args(flags)
        .arg(&profile)
        .arg("--dump-dom")
        .arg(&url)
        .output()
        .unwrap();
    assert!(out.status.success());
    let dom = String::from_utf8_lossy(&out.stdout);
    for section in ["Sec 01", "Section 02", "section-03"] {
        assert!(
            dom.contains(section),
            "{section} missing from the rendered page"
        );
    }
    assert!(
        dom.matches("<svg").count() >= 4,
        "box plots, grade histogram and bench chart"
    );
    let log = String::from_utf8_lossy(&out.stderr);
    for bad in [
        "Uncaught",
        "Failed to load resource",
        "ERR_FILE_NOT_FOUND",
        "Refused to",
    ] {
        assert!(!log.contains(bad), "browser logged {bad}: {log}");
    }
    let shot = f.path("report.png");
    let shot_arg = format!("--screenshot={}", shot.display());
    let out = Command::new(browser)
        .args(&flags[..8])
        .arg(&profile)
        .arg("--window-size=1000,1800")
        .arg(&shot_arg)
        .arg(&url)
        .output()
        .unwrap();
    assert!(
        out.status.success() && std::fs::metadata(&shot).is_ok_and(|m| m.len() > 10_000),
        "a screenshot was taken"
    );
}

#[test]
fn pseudonymized_export_needs_a_key_and_hides_names() {
    let f = Fixture::new();
    let out = f.path("out");
    let refused = grade_sample(&f, "out", &["--pseudonymize"]);
    assert_eq!(refused.code, 2, "no key, no export");
    assert!(refused.stderr.contains("secret key"), "{}", refused.stderr);
    assert!(!out.join("results.csv").exists(), "nothing written");
    f.write("key", "a course secret that is long enough\n");
    let key = f.path("key");
    let args = ["--pseudonymize", "--pseudonym-key", key.to_str().unwrap()];
    let run = grade_sample(&f, "out", &args);
    assert_eq!(run.code, 0, "{}", run.stderr);
    let plain = read_results(&out.join("results.csv"));
    let pseudo = read_results(&out.join("results-pseudonymized.csv"));
    assert_eq!(plain.len(), pseudo.len());
    for (p, q) in plain.iter().zip(&pseudo) {
        assert!(q["student_name"].is_empty());
        if !p["student_id"].is_empty() {
            assert!(q["student_id"].starts_with("p-") && q["student_id"] != p["student_id"]);
        }
        assert_eq!(p["score"], q["score"]);
    }
    // stable: the same key gives the same pseudonyms
    let again = grade_sample(&f, "out", &args);
    assert_eq!(again.code, 0);
    assert_eq!(
        read_results(&out.join("results-pseudonymized.csv"))[0]["student_id"],
        pseudo[0]["student_id"]
    );
    let report = std::fs::read_to_string(out.join("cohort-report.html")).unwrap();
    for p in &plain {
        assert!(
            p["student_name"].is_empty() || !report.contains(&p["student_name"]),
            "no names in the cohort report"
        );
    }
}

#[test]
fn parquet_results_and_a_baseline_term() {
    use benchgrade::export::parquet::read_term;
    let f = Fixture::new();
    grade(&f);
    // the term's figures are over the students that count: graded, not a repeat
    let rows: Vec<_> = read_results(&f.path("out/results.csv"))
        .into_iter()
        .filter(|r| r["status"] == "graded" && !r["flags"].contains("duplicate-student"))
        .collect();
    let term = read_term(&f.path("out/results.parquet")).unwrap();
    assert_eq!(term.rows, rows.len());
    // the mean recovery counts what section-stats.csv counts: no row with an impossible flag
    // that shades the recovery column (the registry's rule)
    let shading: Vec<&str> = benchgrade::model::columns::RECOVERY_PCT
        .shaded_by
        .iter()
        .filter(|f| f.severity() == benchgrade::model::Severity::Impossible)
        .map(|f| f.code())
        .collect();
    let rec: Vec<f64> = rows
        .iter()
        .filter(|r| !r["flags"].split(';').any(|c| shading.contains(&c)))
        .filter_map(|r| num(r, "recovery_pct"))
        .collect();
    assert!(
        rec.len() < rows.len(),
        "the sample has impossible recoveries"
    );
    let mean = rec.iter().sum::<f64>() / rec.len() as f64;
    assert!(
        (term.mean_recovery_pct - mean).abs() < 1e-9,
        "{} vs {mean}",
        term.mean_recovery_pct
    );
    // this term: section 01 alone, against the whole sample as the baseline
    let one = project_root().join("sample-data/section-01.xlsx");
    let out2 = f.path("term2");
    let base = f.path("out");
    let run = run_in(
        &project_root(),
        &[
            "grade",
            one.to_str().unwrap(),
            "--out",
            out2.to_str().unwrap(),
            "--baseline",
            base.to_str().unwrap(),
            "--skip-workbooks",
        ],
    );
    assert_eq!(run.code, 0, "{}", run.stderr);
    let cmp = read_results(&out2.join("baseline-comparison.csv"));
    let students = cmp.iter().find(|r| r["metric"] == "students").unwrap();
    assert_eq!(num(students, "baseline"), Some(rows.len() as f64));
    let now = read_results(&out2.join("results.csv"));
    let counted = now
        .iter()
        .filter(|r| r["status"] == "graded" && !r["flags"].contains("duplicate-student"))
        .count();
    assert_eq!(num(students, "current"), Some(counted as f64));
    assert!(
        cmp.iter()
            .any(|r| r["metric"] == "mean score (% of maximum)"),
        "the same rubric: score shifts are compared"
    );
    // graded under another rubric: said on standard error and in the report, no score shift
    let other = project_root().join("rubrics/upper-level.toml");
    let out3 = f.path("term3");
    let run3 = run_in(
        &project_root(),
        &[
            "grade",
            one.to_str().unwrap(),
            "--rubric",
            other.to_str().unwrap(),
            "--out",
            out3.to_str().unwrap(),
            "--baseline",
            base.to_str().unwrap(),
            "--skip-workbooks",
        ],
    );
    assert!(run3.code <= 1, "{}", run3.stderr);
    assert!(
        run3.stderr.contains("graded under a different rubric"),
        "{}",
        run3.stderr
    );
    let cmp3 = read_results(&out3.join("baseline-comparison.csv"));
    assert!(cmp3.iter().all(|r| !r["metric"].contains("score")));
    let html = std::fs::read_to_string(out3.join("cohort-report.html")).unwrap();
    assert!(html.contains("graded under a different rubric"));
    assert!(
        html.contains("upper-level.toml"),
        "the report names the rubric used"
    );
    let shift = cmp
        .iter()
        .find(|r| r["metric"] == "mean recovery (%)")
        .unwrap();
    assert!(
        (num(shift, "shift").unwrap()
            - (num(shift, "current").unwrap() - num(shift, "baseline").unwrap()))
        .abs()
            < 1e-9
    );
    let missing = run_in(
        &project_root(),
        &[
            "grade",
            one.to_str().unwrap(),
            "--out",
            out2.to_str().unwrap(),
            "--baseline",
            "/nonexistent",
        ],
    );
    assert_eq!(missing.code, 2);
}

/// A difference in score that comes from one sheet whose masses could not be read is said to,
/// beside the finding, with the test over the rows whose data were read (hand-made class: two
/// sections of eight alike but for section B's unreadable recovered masses).
#[test]
fn a_reading_failure_is_not_presented_as_a_section_difference() {
    let mut csv =
        String::from("ID,Name,Section,Crude mass (g),Recovered mass (g),Melting range (°C)\n");
    for k in 0..8 {
        let rec = 2.00 + 0.05 * f64::from(k);
        csv.push_str(&format!("a{k},Student A{k},A,3.00,{rec:.2},121.5-122.3\n"));
        csv.push_str(&format!(
            "b{k},Student B{k},B,3.00,see notebook,121.5-122.3\n"
        ));
    }
    let f = Fixture::new();
    f.write("class.csv", csv);
    let run = f.run(&["grade", "class.csv", "--out", "out"]);
    assert_eq!(run.code, 0, "{}", run.stderr);
    let html = std::fs::read_to_string(f.path("out/cohort-report.html")).unwrap();
    let at = html
        .find("differ in score")
        .expect("the score differs between the sections");
    let finding = &html[at..at + html[at..].find('<').unwrap()];
    assert!(
        finding.contains("caution: B (100 % missing or unreadable"),
        "{finding}"
    );
    assert!(
        finding.contains("without the 8 rows with missing or unreadable data"),
        "{finding}"
    );
}
