//! DIR/results.json: the same records as results.csv, typed (numbers as numbers, flags as a
//! list), one record per line so that it streams and diffs well, with the batch's file problems
//! at the end.

use std::io::Write;
use std::path::Path;

use serde::Serialize;

use super::atomic::AtomicFile;
use std::collections::BTreeMap;

use crate::error::WriteError;
use crate::ingest::Problem;
use crate::model::Graded;

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
    purity_mol_pct: Option<f64>,
    purity_note: &'a str,
    max_recovery_pct: Option<f64>,
    min_solvent_ml: Option<f64>,
    mp_onset_observed_c: Option<f64>,
    mp_clear_observed_c: Option<f64>,
    calibration: Option<&'a str>,
    score: f64,
    max_score: f64,
    percent: f64,
    letter: Option<&'a str>,
    points: BTreeMap<&'a str, f64>,
    feedback: &'a str,
    overrides: &'a [String],
}

fn record(g: &Graded) -> Record<'_> {
    let a = &g.assessed;
    let sc = &g.score;
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
        mp_onset_c: a.mp_onset_c,
        mp_clear_c: a.mp_clear_c,
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
        purity_mol_pct: a.purity_mol_pct,
        purity_note: &a.purity_note,
        max_recovery_pct: a.max_recovery_pct,
        min_solvent_ml: a.min_solvent_ml,
        mp_onset_observed_c: s.mp_onset_c,
        mp_clear_observed_c: s.mp_clear_c,
        calibration: a.calibration.as_deref(),
        score: sc.total,
        max_score: sc.max,
        percent: sc.percent,
        letter: sc.letter.as_deref(),
        points: sc
            .criteria
            .iter()
            .map(|c| (c.id.as_str(), c.points))
            .collect(),
        feedback: &sc.feedback,
        overrides: &sc.overrides,
    }
}

/// The JSON results being written.
pub struct ResultsJson {
    file: AtomicFile,
    first: bool,
    /// One record's text, reused.
    buf: Vec<u8>,
}

impl ResultsJson {
    pub fn create(path: &Path) -> Result<ResultsJson, WriteError> {
        let mut file = AtomicFile::create(path)?;
        let head = format!(
            "{{\"tool\":\"benchgrade\",\"version\":\"{}\",\"records\":[",
            env!("CARGO_PKG_VERSION")
        );
        file.write_all(head.as_bytes()).map_err(|e| file.error(e))?;
        Ok(ResultsJson {
            file,
            first: true,
            buf: Vec::new(),
        })
    }

    pub fn row(&mut self, g: &Graded) -> Result<(), WriteError> {
        let sep: &[u8] = if self.first { b"\n" } else { b",\n" };
        self.first = false;
        self.buf.clear();
        self.buf.extend_from_slice(sep);
        let result = serde_json::to_writer(&mut self.buf, &record(g))
            .map_err(Into::into)
            .and_then(|_| self.file.write_all(&self.buf));
        result.map_err(|e| self.file.error(e))
    }

    pub fn finish(mut self, problems: &[Problem]) -> Result<(), WriteError> {
        let result = (|| {
            self.file.write_all(b"\n],\"problems\":")?;
            serde_json::to_writer(&mut self.file, problems)?;
            self.file.write_all(b"}\n")
        })();
        result.map_err(|e| self.file.error(e))?;
        self.file.commit()
    }
}
