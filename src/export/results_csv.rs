//! DIR/results.csv: one row per submission, columns exactly as the results contract orders them;
//! later columns are only ever appended.

use std::io::Write;
use std::path::Path;

use super::{atomic::write_atomic, neutralise, number};
use crate::assess::Assessed;
use crate::error::WriteError;

/// The contract's columns, in order, then the columns added since.
pub const COLUMNS: [&str; 24] = [
    "source",
    "sheet",
    "row",
    "section",
    "student_id",
    "student_name",
    "bench",
    "compound",
    "crude_mass_g",
    "recovered_mass_g",
    "solvent_volume_ml",
    "mp_onset_c",
    "mp_clear_c",
    "reported_recovery_pct",
    "recovery_pct",
    "range_width_c",
    "reference_mp_c",
    "depression_c",
    "flags",
    "flag_notes",
    // added after the contract
    "assistant",
    "apparatus",
    "solvent",
    "notes",
];

fn text(v: &Option<String>) -> String {
    v.as_deref()
        .map(|s| neutralise(s).into_owned())
        .unwrap_or_default()
}

/// The fields of one row, in column order.
pub fn record(a: &Assessed) -> Vec<String> {
    let s = &a.submission;
    vec![
        s.source.clone(),
        s.sheet.clone().unwrap_or_default(),
        s.row.to_string(),
        neutralise(&s.section).into_owned(),
        text(&s.student_id),
        text(&s.student_name),
        text(&s.bench),
        text(&a.compound.clone().or_else(|| s.compound.clone())),
        number(s.crude_mass_g),
        number(s.recovered_mass_g),
        number(s.solvent_volume_ml),
        number(s.mp_onset_c),
        number(s.mp_clear_c),
        number(s.reported_recovery_pct),
        number(a.recovery_pct),
        number(a.range_width_c),
        number(a.reference_mp_c),
        number(a.depression_c),
        a.flag_codes(),
        neutralise(&a.flag_notes()).into_owned(),
        text(&s.assistant),
        text(&s.apparatus),
        text(&s.solvent),
        s.notes.join("; "),
    ]
}

pub fn write_to(w: &mut dyn Write, rows: &[Assessed]) -> std::io::Result<()> {
    let mut out = csv::Writer::from_writer(w);
    out.write_record(COLUMNS)?;
    for a in rows {
        out.write_record(record(a))?;
    }
    out.flush()
}

pub fn write(path: &Path, rows: &[Assessed]) -> Result<(), WriteError> {
    write_atomic(path, |w| write_to(w, rows))
}
