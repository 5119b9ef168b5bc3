//! The comparison of this term with an earlier one (`--baseline DIR`): the headline figures
//! of a term and their shifts. Pure arithmetic; reading the earlier results.parquet is the
//! parquet module's job.

use std::collections::BTreeMap;

use crate::model::{Flag, Measure, Severity};

/// Headline figures of one term, for the baseline comparison.
#[derive(Clone, Debug, PartialEq)]
pub struct Term {
    pub rows: usize,
    pub mean_recovery_pct: f64,
    pub mean_score_pct: f64,
    /// Share of rows carrying each flag code.
    pub flag_rates: BTreeMap<String, f64>,
    /// SHA-256 of the rubric the term was graded under, as its results.parquet records it.
    pub rubric_sha256: Option<String>,
}

/// Why the score shifts against a baseline are left out, or `None` when both terms were graded
/// under the same rubric.
pub fn rubric_mismatch(baseline: &Term, rubric_sha256: &str) -> Option<String> {
    let short = |s: &str| s.chars().take(12).collect::<String>();
    match baseline.rubric_sha256.as_deref() {
        Some(b) if b == rubric_sha256 => None,
        Some(b) => Some(format!(
            "the baseline term was graded under a different rubric (SHA-256 {}... against this run's {}...): its scores are not comparable, so score shifts are left out",
            short(b),
            short(rubric_sha256)
        )),
        None => Some(
            "the baseline's results.parquet does not record its rubric: its scores may not be comparable, so score shifts are left out".into(),
        ),
    }
}

/// Running sums for a term's headline figures, fed a row at a time: by results.parquet as it
/// is written, and by the reader of an earlier term's file, so both add up alike.
#[derive(Debug, Default)]
pub struct TermTally {
    rows: usize,
    recovery: (f64, usize),
    percent: (f64, usize),
    flags: BTreeMap<String, usize>,
}

impl TermTally {
    /// One row: its recovery, its score as a percentage, its flag codes separated by ';'.
    /// An excused student (no percent) or a repeat that does not count adds nothing.
    ///
    /// Each mean counts the rows section-stats.csv counts for its measure
    /// (`Assessed::counts_for`): a recovery is left out of the mean recovery when the row holds
    /// an impossible flag that shades the recovery column (more recovered than crude, a mass
    /// of zero, ...), in this term and in the baseline read back from its results.parquet alike.
    pub fn add(&mut self, recovery: Option<f64>, percent: Option<f64>, flags: &str) {
        if percent.is_none() || flags.split(';').any(|c| c == "duplicate-student") {
            return;
        }
        self.rows += 1;
        let recovery = recovery.filter(|_| counts_for(Measure::RECOVERY, flags));
        let percent = percent.filter(|_| counts_for(Measure::SCORE, flags));
        for (slot, v) in [(&mut self.recovery, recovery), (&mut self.percent, percent)] {
            if let Some(v) = v.filter(|v| v.is_finite()) {
                slot.0 += v;
                slot.1 += 1;
            }
        }
        for code in flags.split(';').filter(|c| !c.is_empty()) {
            match self.flags.get_mut(code) {
                Some(n) => *n += 1,
                None => {
                    self.flags.insert(code.to_string(), 1);
                }
            }
        }
    }

    pub fn term(&self) -> Term {
        let mean = |(sum, n): (f64, usize)| if n == 0 { f64::NAN } else { sum / n as f64 };
        let n = self.rows.max(1) as f64;
        Term {
            rows: self.rows,
            mean_recovery_pct: mean(self.recovery),
            mean_score_pct: mean(self.percent),
            flag_rates: self
                .flags
                .iter()
                .map(|(k, c)| (k.clone(), *c as f64 / n))
                .collect(),
            rubric_sha256: None,
        }
    }
}

/// Whether a row with these flag codes counts for a measure's statistics: the rule of
/// `Assessed::counts_for`, read from the codes a results file keeps.
fn counts_for(m: Measure, flags: &str) -> bool {
    let shaded = m.column().shaded_by;
    !flags.split(';').any(|code| {
        Flag::ALL
            .iter()
            .any(|f| f.code() == code && f.severity() == Severity::Impossible && shaded.contains(f))
    })
}

/// One line of baseline-comparison.csv: a headline figure in both terms.
#[derive(Clone, Debug, PartialEq)]
pub struct BaselineRow {
    pub metric: String,
    pub baseline: f64,
    pub current: f64,
    /// current - baseline.
    pub shift: f64,
}

impl BaselineRow {
    fn new(metric: String, baseline: f64, current: f64) -> BaselineRow {
        BaselineRow {
            metric,
            baseline,
            current,
            shift: current - baseline,
        }
    }

    /// A mean (of recovery or score), whose shift the report calls a finding.
    pub fn is_mean(&self) -> bool {
        self.metric.starts_with("mean")
    }
}

/// The headline figures of both terms, for the baseline comparison; the mean score only when
/// both were graded under the same rubric.
pub fn compare(baseline: &Term, current: &Term, same_rubric: bool) -> Vec<BaselineRow> {
    let mut out = vec![
        BaselineRow::new(
            "students".to_string(),
            baseline.rows as f64,
            current.rows as f64,
        ),
        BaselineRow::new(
            "mean recovery (%)".to_string(),
            baseline.mean_recovery_pct,
            current.mean_recovery_pct,
        ),
    ];
    if same_rubric {
        out.push(BaselineRow::new(
            "mean score (% of maximum)".to_string(),
            baseline.mean_score_pct,
            current.mean_score_pct,
        ));
    }
    let codes: std::collections::BTreeSet<&String> = baseline
        .flag_rates
        .keys()
        .chain(current.flag_rates.keys())
        .collect();
    for code in codes {
        let b = baseline.flag_rates.get(code).copied().unwrap_or(0.0) * 100.0;
        let c = current.flag_rates.get(code).copied().unwrap_or(0.0) * 100.0;
        out.push(BaselineRow::new(format!("rows flagged {code} (%)"), b, c));
    }
    out
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn impossible_recoveries_are_left_out_of_the_mean_as_in_section_stats() {
        // hand-worked: recoveries 70 and 80 count (mean 75); 2696.85 % carries
        // recovery-over-100 and 50 % a nonpositive mass (both shade the recovery column), so
        // neither moves the mean; a suspicious flag (low-recovery) does not exclude 40 %:
        // (70 + 80 + 40) / 3 = 63.333...
        let mut t = TermTally::default();
        t.add(Some(70.0), Some(90.0), "");
        t.add(Some(80.0), Some(80.0), "");
        t.add(Some(2696.85), Some(10.0), "recovery-over-100");
        t.add(Some(50.0), Some(20.0), "nonpositive-mass");
        t.add(Some(40.0), Some(60.0), "low-recovery");
        let term = t.term();
        assert!((term.mean_recovery_pct - 190.0 / 3.0).abs() < 1e-12);
        // every graded row counts for the score: (90 + 80 + 10 + 20 + 60) / 5 = 52
        assert!((term.mean_score_pct - 52.0).abs() < 1e-12);
        assert_eq!(term.rows, 5);
        // an excused student and a repeat that does not count add nothing
        t.add(Some(10.0), None, "");
        t.add(Some(10.0), Some(0.0), "duplicate-student");
        assert_eq!(t.term().rows, 5);
    }
}
