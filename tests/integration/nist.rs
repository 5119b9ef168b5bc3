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
