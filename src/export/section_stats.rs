//! DIR/section-stats.csv: one row per section and measure, the same numbers as the graded
//! workbooks' statistics sheets. Empty fields where a statistic is undefined (sd of one value).

use std::path::Path;

use super::atomic::{write_atomic, Stage};
use super::number;
use crate::error::WriteError;
use crate::stats::sections::SectionStats;

use crate::stats::LEFT_OUT_COLUMNS;
pub use crate::stats::SUMMARY_COLUMNS as COLUMNS;

pub fn write(path: &Path, stats: &SectionStats, stage: &Stage) -> Result<(), WriteError> {
    write_atomic(path, stage, |w| {
        let mut csv = csv::Writer::from_writer(w);
        csv.write_record(COLUMNS.iter().chain(&LEFT_OUT_COLUMNS))?;
        for row in stats.summaries() {
            let mut rec = vec![
                super::neutralise(row.section).into_owned(),
                row.measure.key().to_string(),
            ];
            if let Some(s) = &row.summary {
                rec.push(s.n.to_string());
                for v in s.values() {
                    rec.push(number(Some(v)));
                }
            } else {
                rec.push("0".into());
                rec.extend(std::iter::repeat_n(String::new(), 10));
            }
            rec.push(row.excluded.to_string());
            rec.push(row.excused.to_string());
            rec.push(row.missing.to_string());
            rec.push(row.no_submission.to_string());
            csv.write_record(&rec)?;
        }
        csv.flush()
    })
}
