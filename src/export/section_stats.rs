//! DIR/section-stats.csv: one row per section and measure, the same numbers as the graded
//! workbooks' statistics sheets. Empty fields where a statistic is undefined (sd of one value).

use std::path::Path;

use super::atomic::{write_atomic, Stage};
use super::number;
use crate::error::WriteError;
use crate::stats::sections::SectionStats;

pub use crate::stats::SUMMARY_COLUMNS as COLUMNS;

pub fn write(path: &Path, stats: &SectionStats, stage: &Stage) -> Result<(), WriteError> {
    write_atomic(path, stage, |w| {
        let mut csv = csv::Writer::from_writer(w);
        csv.write_record(COLUMNS)?;
        for (section, measure, s) in stats.summaries() {
            let mut rec = vec![
                super::neutralise(section).into_owned(),
                measure.key().to_string(),
            ];
            if let Some(s) = s {
                rec.push(s.n.to_string());
                for v in s.values() {
                    rec.push(number(Some(v)));
                }
            } else {
                rec.push("0".into());
                rec.extend(std::iter::repeat_n(String::new(), 10));
            }
            csv.write_record(&rec)?;
        }
        csv.flush()
    })
}
