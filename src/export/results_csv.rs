//! DIR/results.csv: one row per submission, columns exactly as the results contract orders them;
//! later columns are only ever appended. Written row by row as the batch streams past.

use std::fmt::Write as _;
use std::path::{Path, PathBuf};

use super::atomic::AtomicFile;
use super::pseudonym::Pseudonymizer;
use super::{neutralise, push_number};
use crate::error::WriteError;
use crate::model::Graded;

/// The contract's columns, in order, then the columns added since.
#[rustfmt::skip]
pub const COLUMNS: [&str; 37] = [
    "source", "sheet", "row", "section", "student_id", "student_name", "bench", "compound",
    "crude_mass_g", "recovered_mass_g", "solvent_volume_ml", "mp_onset_c", "mp_clear_c",
    "reported_recovery_pct", "recovery_pct", "range_width_c", "reference_mp_c", "depression_c",
    "flags", "flag_notes",
    // added after the contract: ingest
    "assistant", "apparatus", "solvent", "notes",
    // physical chemistry and calibration
    "purity_mol_pct", "purity_note", "max_recovery_pct", "min_solvent_ml",
    "mp_onset_observed_c", "mp_clear_observed_c", "calibration",
    // grading; then one points_<criterion id> column per criterion of the rubric
    "score", "max_score", "percent", "letter", "feedback", "overrides",
];

/// The results file being written.
pub struct ResultsCsv {
    csv: csv::Writer<AtomicFile>,
    path: PathBuf,
    buf: String,
    /// When set, ids are replaced by pseudonyms and names left out.
    pseudonyms: Option<Pseudonymizer>,
}

impl ResultsCsv {
    /// Opens the file and writes the header: the fixed columns, then `points_<id>` per criterion.
    pub fn create(path: &Path, criteria: &[String]) -> Result<ResultsCsv, WriteError> {
        let mut out = ResultsCsv {
            csv: csv::Writer::from_writer(AtomicFile::create(path)?),
            path: path.to_path_buf(),
            buf: String::new(),
            pseudonyms: None,
        };
        let header = COLUMNS
            .iter()
            .map(|c| c.to_string())
            .chain(criteria.iter().map(|id| format!("points_{id}")));
        out.csv.write_record(header).map_err(|e| out.error(e))?;
        Ok(out)
    }

    /// The same file with ids pseudonymised and names left out, for anything leaving the course.
    pub fn create_pseudonymized(
        path: &Path,
        criteria: &[String],
        p: Pseudonymizer,
    ) -> Result<ResultsCsv, WriteError> {
        let mut out = ResultsCsv::create(path, criteria)?;
        out.pseudonyms = Some(p);
        Ok(out)
    }

    fn error(&self, e: csv::Error) -> WriteError {
        WriteError {
            path: self.path.clone(),
            source: e.into(),
        }
    }

    fn text(&mut self, v: Option<&str>) -> csv::Result<()> {
        self.csv
            .write_field(v.map(neutralise).as_deref().unwrap_or(""))
    }

    fn number(&mut self, v: Option<f64>) -> csv::Result<()> {
        self.buf.clear();
        push_number(&mut self.buf, v);
        self.csv.write_field(&self.buf)
    }

    fn fields(&mut self, g: &Graded) -> csv::Result<()> {
        let a = &g.assessed;
        let s = &a.submission;
        self.csv.write_field(&s.source)?;
        self.csv.write_field(s.sheet.as_deref().unwrap_or(""))?;
        self.buf.clear();
        let _ = write!(self.buf, "{}", s.row);
        self.csv.write_field(&self.buf)?;
        self.text(Some(&s.section))?;
        match &self.pseudonyms {
            Some(p) => {
                let id = s.student_id.as_deref().map(|id| p.pseudonym(id));
                self.text(id.as_deref())?;
                self.text(None)?;
            }
            None => {
                self.text(s.student_id.as_deref())?;
                self.text(s.student_name.as_deref())?;
            }
        }
        self.text(s.bench.as_deref())?;
        self.text(a.compound.as_deref().or(s.compound.as_deref()))?;
        for v in [
            s.crude_mass_g,
            s.recovered_mass_g,
            s.solvent_volume_ml,
            a.mp_onset_c,
            a.mp_clear_c,
        ] {
            self.number(v)?;
        }
        self.number(s.reported_recovery_pct)?;
        for v in [
            a.recovery_pct,
            a.range_width_c,
            a.reference_mp_c,
            a.depression_c,
        ] {
            self.number(v)?;
        }
        self.csv.write_field(a.flag_codes())?;
        self.text(Some(&a.flag_notes()))?;
        self.text(s.assistant.as_deref())?;
        self.text(s.apparatus.as_deref())?;
        self.text(s.solvent.as_deref())?;
        self.csv.write_field(s.notes.join("; "))?;
        self.number(a.purity_mol_pct)?;
        self.csv.write_field(&a.purity_note)?;
        self.number(a.max_recovery_pct)?;
        self.number(a.min_solvent_ml)?;
        self.number(s.mp_onset_c)?;
        self.number(s.mp_clear_c)?;
        self.csv
            .write_field(a.calibration.as_deref().unwrap_or(""))?;
        let sc = &g.score;
        for v in [sc.total, sc.max, sc.percent] {
            self.number(Some(v))?;
        }
        self.csv.write_field(sc.letter.as_deref().unwrap_or(""))?;
        self.text(Some(&sc.feedback))?;
        self.text(Some(&sc.overrides.join("; ")))?;
        for c in &sc.criteria {
            self.number(Some(c.points))?;
        }
        self.csv.write_record(None::<&[u8]>)
    }

    /// Appends one row.
    pub fn row(&mut self, g: &Graded) -> Result<(), WriteError> {
        self.fields(g).map_err(|e| self.error(e))
    }

    pub fn finish(self) -> Result<(), WriteError> {
        super::atomic::commit_csv(self.csv, &self.path)
    }
}
