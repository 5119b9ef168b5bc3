//! DIR/results.json: the same records as results.csv, typed (numbers as numbers, flags as a
//! list), with the batch's file problems beside them.

use std::path::Path;

use serde::Serialize;

use super::atomic::write_atomic;
use crate::assess::Assessed;
use crate::error::WriteError;
use crate::ingest::Problem;

#[derive(Serialize)]
struct Record<'a> {
    source: &'a str,
    sheet: Option<&'a str>,
    row: u32,
    section: &'a str,
    student_id: Option<&'a str>,
    student_name: Option<&'a str>,
    bench: Option<&'a str>,
    compound: Option<&'a str>,
    crude_mass_g: Option<f64>,
    recovered_mass_g: Option<f64>,
    solvent_volume_ml: Option<f64>,
    mp_onset_c: Option<f64>,
    mp_clear_c: Option<f64>,
    reported_recovery_pct: Option<f64>,
    recovery_pct: Option<f64>,
    range_width_c: Option<f64>,
    reference_mp_c: Option<f64>,
    depression_c: Option<f64>,
    flags: Vec<&'static str>,
    flag_notes: Vec<String>,
    assistant: Option<&'a str>,
    apparatus: Option<&'a str>,
    solvent: Option<&'a str>,
    notes: &'a [String],
}

#[derive(Serialize)]
struct Document<'a> {
    tool: &'static str,
    version: &'static str,
    records: Vec<Record<'a>>,
    problems: &'a [Problem],
}

fn record(a: &Assessed) -> Record<'_> {
    let s = &a.submission;
    Record {
        source: &s.source,
        sheet: s.sheet.as_deref(),
        row: s.row,
        section: &s.section,
        student_id: s.student_id.as_deref(),
        student_name: s.student_name.as_deref(),
        bench: s.bench.as_deref(),
        compound: a.compound.as_deref().or(s.compound.as_deref()),
        crude_mass_g: s.crude_mass_g,
        recovered_mass_g: s.recovered_mass_g,
        solvent_volume_ml: s.solvent_volume_ml,
        mp_onset_c: s.mp_onset_c,
        mp_clear_c: s.mp_clear_c,
        reported_recovery_pct: s.reported_recovery_pct,
        recovery_pct: a.recovery_pct,
        range_width_c: a.range_width_c,
        reference_mp_c: a.reference_mp_c,
        depression_c: a.depression_c,
        flags: a.flags.iter().map(|(f, _)| f.code()).collect(),
        flag_notes: a
            .flags
            .iter()
            .map(|(f, n)| format!("{}: {n}", f.code()))
            .collect(),
        assistant: s.assistant.as_deref(),
        apparatus: s.apparatus.as_deref(),
        solvent: s.solvent.as_deref(),
        notes: &s.notes,
    }
}

pub fn write(path: &Path, rows: &[Assessed], problems: &[Problem]) -> Result<(), WriteError> {
    let doc = Document {
        tool: "benchgrade",
        version: env!("CARGO_PKG_VERSION"),
        records: rows.iter().map(record).collect(),
        problems,
    };
    write_atomic(path, |w| {
        serde_json::to_writer_pretty(&mut *w, &doc)?;
        w.write_all(b"\n")
    })
}
