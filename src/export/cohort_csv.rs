//! DIR/section-comparison.csv and DIR/bench-bias.csv: the cohort's tests, machine-readable.
//! The tables are the report's (`report`), written with their codes as the header and every
//! number at full precision.

use std::path::Path;

use super::atomic::{write_atomic, Stage};
use super::report::{self, Cell, Table};
use super::{neutralise, number};
use crate::error::WriteError;
use crate::stats::cohort::{BenchBias, Comparison};

/// Writes a report table as CSV: text guarded against formula injection, numbers exact.
pub fn write_table(path: &Path, t: &Table, stage: &Stage) -> Result<(), WriteError> {
    write_atomic(path, stage, |w| {
        let mut csv = csv::Writer::from_writer(w);
        csv.write_record(t.columns.iter().map(|c| c.code))?;
        for row in &t.rows {
            let fields = row.iter().map(|cell| match cell {
                Cell::Text(s) => neutralise(s).into_owned(),
                Cell::Count(n) => n.to_string(),
                Cell::Number(v) => number(Some(*v)),
            });
            csv.write_record(fields)?;
        }
        csv.flush()
    })
}

pub fn write_comparisons(
    path: &Path,
    rows: &[Comparison],
    stage: &Stage,
) -> Result<(), WriteError> {
    write_table(path, &report::comparisons_table(rows), stage)
}

pub fn write_bias(path: &Path, rows: &[BenchBias], stage: &Stage) -> Result<(), WriteError> {
    write_table(path, &report::bias_table(rows), stage)
}
