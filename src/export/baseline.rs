//! The comparison of this term with an earlier one (`--baseline DIR`): the headline figures
//! of a term and their shifts. Pure arithmetic; reading the earlier results.parquet is the
//! parquet module's job.

use std::collections::BTreeMap;

/// Headline figures of one term, for the baseline comparison.
#[derive(Clone, Debug, PartialEq)]
pub struct Term {
    pub rows: usize,
    pub mean_recovery_pct: f64,
    pub mean_score_pct: f64,
    /// Share of rows carrying each flag code.
    pub flag_rates: BTreeMap<String, f64>,
}

impl Term {
    pub fn new(rows: usize, recovery: f64, score: f64, flags: &[Option<String>]) -> Term {
        let mut counts: BTreeMap<String, usize> = BTreeMap::new();
        for f in flags.iter().flatten() {
            for code in f.split(';').filter(|c| !c.is_empty()) {
                *counts.entry(code.to_string()).or_default() += 1;
            }
        }
        Term::from_counts(rows, recovery, score, &counts)
    }

    pub fn from_counts(
        rows: usize,
        recovery: f64,
        score: f64,
        counts: &BTreeMap<String, usize>,
    ) -> Term {
        let n = rows.max(1) as f64;
        Term {
            rows,
            mean_recovery_pct: recovery,
            mean_score_pct: score,
            flag_rates: counts
                .iter()
                .map(|(k, c)| (k.clone(), *c as f64 / n))
                .collect(),
        }
    }
}

/// (metric, baseline, current, shift) for the baseline comparison.
pub fn compare(baseline: &Term, current: &Term) -> Vec<(String, f64, f64, f64)> {
    let mut out = vec![
        (
            "students".to_string(),
            baseline.rows as f64,
            current.rows as f64,
            current.rows as f64 - baseline.rows as f64,
        ),
        (
            "mean recovery (%)".to_string(),
            baseline.mean_recovery_pct,
            current.mean_recovery_pct,
            current.mean_recovery_pct - baseline.mean_recovery_pct,
        ),
        (
            "mean score (% of maximum)".to_string(),
            baseline.mean_score_pct,
            current.mean_score_pct,
            current.mean_score_pct - baseline.mean_score_pct,
        ),
    ];
    let codes: std::collections::BTreeSet<&String> = baseline
        .flag_rates
        .keys()
        .chain(current.flag_rates.keys())
        .collect();
    for code in codes {
        let b = baseline.flag_rates.get(code).copied().unwrap_or(0.0) * 100.0;
        let c = current.flag_rates.get(code).copied().unwrap_or(0.0) * 100.0;
        out.push((format!("rows flagged {code} (%)"), b, c, c - b));
    }
    out
}
