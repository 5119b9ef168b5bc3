//! DIR/section-comparison.csv and DIR/bench-bias.csv: the cohort's tests, machine-readable.

use std::path::Path;

use super::{atomic::write_atomic, neutralise, number};
use crate::error::WriteError;
use crate::stats::cohort::{BenchBias, Comparison};

pub const COMPARISON_COLUMNS: [&str; 11] = [
    "measure",
    "grouping",
    "test",
    "group_a",
    "group_b",
    "statistic",
    "df1",
    "df2",
    "p_value",
    "p_adjusted",
    "effect_size",
];
pub const BIAS_COLUMNS: [&str; 7] = [
    "bench",
    "n",
    "median_shift_c",
    "u_statistic",
    "p_value",
    "p_adjusted",
    "finding",
];

pub fn write_comparisons(path: &Path, rows: &[Comparison]) -> Result<(), WriteError> {
    write_atomic(path, |w| {
        let mut csv = csv::Writer::from_writer(w);
        csv.write_record(COMPARISON_COLUMNS)?;
        for c in rows {
            let n = |v: f64| number(Some(v));
            csv.write_record([
                c.measure.key().to_string(),
                c.grouping.to_string(),
                c.test.to_string(),
                neutralise(&c.group_a).into_owned(),
                neutralise(&c.group_b).into_owned(),
                n(c.statistic),
                n(c.df1),
                n(c.df2),
                n(c.p_value),
                n(c.p_adjusted),
                n(c.effect_size),
            ])?;
        }
        csv.flush()
    })
}

pub fn write_bias(path: &Path, rows: &[BenchBias]) -> Result<(), WriteError> {
    write_atomic(path, |w| {
        let mut csv = csv::Writer::from_writer(w);
        csv.write_record(BIAS_COLUMNS)?;
        for b in rows {
            let n = |v: f64| number(Some(v));
            csv.write_record([
                neutralise(&b.bench).into_owned(),
                b.n.to_string(),
                n(b.median_shift_c),
                n(b.u_statistic),
                n(b.p_value),
                n(b.p_adjusted),
                b.finding.clone(),
            ])?;
        }
        csv.flush()
    })
}
