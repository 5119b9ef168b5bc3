//! One-way ANOVA against the NIST StRD certified values (Statistical Reference Datasets,
//! NIST Information Technology Laboratory): F and the residual standard deviation to at least
//! 9 significant digits, the numerically hard SmLs03, SmLs06 and SmLs09 included.

use benchgrade::stats::inference::one_way_anova;

use crate::harness::project_root;

/// Reads a StRD file: the certified F and residual sd, and the data by treatment. Responses
/// are read relative to the first response, in decimal, so that no digit is lost before the
/// computation (a double cannot hold 1000000000000.4 closer than 1e-4; the certified values
/// are exact for the decimal data).
fn load(name: &str) -> (f64, f64, Vec<Vec<f64>>) {
    let text = std::fs::read_to_string(
        project_root()
            .join("tests/data/nist-strd-anova")
            .join(format!("{name}.dat")),
    )
    .unwrap();
    let mut f = f64::NAN;
    let mut sd = f64::NAN;
    let mut groups: Vec<Vec<f64>> = Vec::new();
    let mut first: Option<(i128, u32)> = None;
    let scaled = |s: &str| -> (i128, u32) {
        let (int, frac) = s.split_once('.').unwrap_or((s, ""));
        let digits = format!("{int}{frac}");
        (digits.parse::<i128>().unwrap(), frac.len() as u32)
    };
    for (i, line) in text.lines().enumerate() {
        let words: Vec<&str> = line.split_whitespace().collect();
        if line.trim_start().starts_with("Between") {
            f = words.last().unwrap().parse().unwrap();
        } else if line.contains("Standard Deviation") {
            sd = words.last().unwrap().parse().unwrap();
        } else if i >= 60 && words.len() == 2 {
            let t: usize = words[0].parse().unwrap();
            let (v, scale) = scaled(words[1]);
            let (v0, s0) = *first.get_or_insert((v, scale));
            let common = scale.max(s0);
            let diff = v * 10i128.pow(common - scale) - v0 * 10i128.pow(common - s0);
            if groups.len() < t {
                groups.resize(t, Vec::new());
            }
            groups[t - 1].push(diff as f64 / 10f64.powi(common as i32));
        }
    }
    (f, sd, groups)
}

fn significant_digits(got: f64, want: f64) -> f64 {
    if got == want {
        return 15.0;
    }
    -((got - want).abs() / want.abs()).log10()
}

#[test]
fn nist_strd_one_way_anova() {
    for name in [
        "AtmWtAg", "SiRstv", "SmLs01", "SmLs02", "SmLs03", "SmLs04", "SmLs05", "SmLs06", "SmLs07",
        "SmLs08", "SmLs09",
    ] {
        let (f, sd, groups) = load(name);
        let refs: Vec<&[f64]> = groups.iter().map(Vec::as_slice).collect();
        let a = one_way_anova(&refs).unwrap();
        let (df, dsd) = (
            significant_digits(a.f, f),
            significant_digits(a.residual_sd, sd),
        );
        assert!(
            df >= 9.0,
            "{name}: F {} vs certified {f} ({df:.1} digits)",
            a.f
        );
        assert!(
            dsd >= 9.0,
            "{name}: residual sd {} vs certified {sd} ({dsd:.1} digits)",
            a.residual_sd
        );
    }
}

/// Reads a StRD univariate file: the certified mean and standard deviation, and the data.
fn load_univariate(name: &str) -> (f64, f64, Vec<f64>) {
    let text = std::fs::read_to_string(
        project_root()
            .join("tests/data/nist-strd-univariate")
            .join(format!("{name}.dat")),
    )
    .unwrap();
    let last = |line: &str| {
        line.split_whitespace()
            .last()
            .unwrap()
            .parse::<f64>()
            .unwrap()
    };
    let mean = text
        .lines()
        .find(|l| l.contains("ybar:"))
        .map(last)
        .unwrap();
    let sd = text
        .lines()
        .find(|l| l.starts_with("Sample Standard Deviation"))
        .map(last)
        .unwrap();
    let data_at = text.lines().position(|l| l.starts_with("Data: Y")).unwrap();
    let data = text
        .lines()
        .skip(data_at + 2)
        .filter_map(|l| l.trim().parse().ok())
        .collect();
    (mean, sd, data)
}

#[test]
fn nist_strd_univariate_summary_statistics() {
    // NIST StRD univariate summary statistics, NumAcc1 to NumAcc4 (certified values in each
    // file): numbers with 7 to 9 constant leading digits that differ in the last place. Read
    // as doubles, NumAcc3's and NumAcc4's values are not the decimals NIST certified, so their
    // exact standard deviation as doubles (Python 3.11's fractions.Fraction over the same
    // doubles, computed once: 0.1000000000349246 and 0.10000000055879354) is what a double
    // computation can reach: 9.5 and 8.3 digits of the certified 0.1. The one-pass (Welford)
    // update this replaced kept 7.6 digits on NumAcc4.
    for (name, exact_sd, sd_digits) in [
        ("NumAcc1", 1.0, 15.0),
        ("NumAcc2", 0.1, 13.5),
        ("NumAcc3", 0.1000000000349246, 9.4),
        ("NumAcc4", 0.10000000055879354, 8.2),
    ] {
        let (mean, sd, data) = load_univariate(name);
        let s = benchgrade::stats::summarize(&data).unwrap();
        assert_eq!(s.n, data.len());
        let (dm, ds) = (
            significant_digits(s.mean, mean),
            significant_digits(s.sd, sd),
        );
        let exact = significant_digits(s.sd, exact_sd);
        eprintln!("{name}: mean {dm:.1} digits, sd {ds:.1} (of the doubles' exact sd {exact:.1})");
        assert!(
            dm >= 14.5,
            "{name}: mean {} vs {mean} ({dm:.1} digits)",
            s.mean
        );
        assert!(
            ds >= sd_digits,
            "{name}: sd {} vs {sd} ({ds:.1} digits)",
            s.sd
        );
        assert!(
            exact >= 13.0,
            "{name}: sd {} vs exact {exact_sd} ({exact:.1})",
            s.sd
        );
    }
}

/// A StRD ANOVA file's responses as doubles, by treatment, exactly as a spreadsheet cell would
/// hold them (no shifting).
fn load_raw(name: &str) -> Vec<Vec<f64>> {
    let text = std::fs::read_to_string(
        project_root()
            .join("tests/data/nist-strd-anova")
            .join(format!("{name}.dat")),
    )
    .unwrap();
    let mut groups: Vec<Vec<f64>> = Vec::new();
    for line in text.lines().skip(60) {
        let w: Vec<&str> = line.split_whitespace().collect();
        if let [t, y] = w.as_slice() {
            let (Ok(t), Ok(y)) = (t.parse::<usize>(), y.parse::<f64>()) else {
                continue;
            };
            if groups.len() < t {
                groups.resize(t, Vec::new());
            }
            groups[t - 1].push(y);
        }
    }
    groups
}

#[test]
fn nist_strd_anova_through_the_cohort_comparisons_on_raw_values() {
    // Each StRD set's responses, as doubles, become the recoveries of graded rows, one section
    // per treatment, and go through the cohort comparisons that write section-comparison.csv.
    // The exact F and residual sd of those same doubles (Python 3.11 fractions.Fraction,
    // computed once) are the target: at least 9 digits. (Summing raw values of SmLs07-09,
    // about 1e12 with a spread of 0.1, kept 3.2 digits before the sums were centred.)
    use benchgrade::model::{Graded, Measure};
    use benchgrade::stats::cohort::Cohort;
    for (name, exact_f) in [
        ("AtmWtAg", 15.946733566676926),
        ("SiRstv", 1.1804623744024467),
        ("SmLs01", 21.0),
        ("SmLs02", 201.00000000000003),
        ("SmLs03", 2001.0000000000002),
        ("SmLs04", 21.0000000007761),
        ("SmLs05", 201.00000001241764),
        ("SmLs06", 2001.0000001288329),
        ("SmLs07", 21.00081188781877),
        ("SmLs08", 201.01300409594845),
        ("SmLs09", 2001.1349262209505),
    ] {
        let mut cohort = Cohort::default();
        for (t, values) in load_raw(name).iter().enumerate() {
            for &y in values {
                let mut g = Graded::default();
                g.assessed.submission.section = format!("treatment {:02}", t + 1);
                g.assessed.recovery_pct = Some(y);
                cohort.add(&g);
            }
        }
        let f = cohort
            .comparisons()
            .into_iter()
            .find(|c| {
                c.measure == Measure::RECOVERY
                    && c.grouping == "section"
                    && c.test == "one-way ANOVA"
            })
            .unwrap()
            .statistic;
        let digits = significant_digits(f, exact_f);
        assert!(
            digits >= 9.0,
            "{name}: F {f} vs exact {exact_f} ({digits:.1} digits)"
        );
    }
}
