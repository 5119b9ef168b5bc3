//! Nothing a class file, a folder or a failed run can do crashes benchgrade, hangs it or
//! half-replaces its outputs: each case of the adversarial pass, as a test named for what it
//! proves.

use crate::harness::{read_results, Fixture};

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
