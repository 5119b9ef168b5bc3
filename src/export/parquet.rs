//! DIR/results.parquet for analysis elsewhere, and `--baseline DIR`: this term against an
//! earlier term's results.parquet. The only module that sees polars.
//!
//! The file is meant to leave the course: with `--pseudonymize` it holds pseudonyms and no
//! names.

use std::cell::RefCell;
use std::io::Write;
use std::path::{Path, PathBuf};
use std::rc::Rc;

use polars::prelude::*;

use super::atomic::AtomicFile;
use super::pseudonym::Pseudonymizer;
use crate::error::WriteError;
use crate::model::Graded;

use super::baseline::TermTally;
pub use super::baseline::{compare, Term};

const TEXT: [&str; 8] = [
    "source",
    "sheet",
    "section",
    "student_id",
    "student_name",
    "bench",
    "compound",
    "flags",
];
const NUMBERS: [&str; 15] = [
    "crude_mass_g",
    "recovered_mass_g",
    "solvent_volume_ml",
    "mp_onset_c",
    "mp_clear_c",
    "recovery_pct",
    "range_width_c",
    "reference_mp_c",
    "depression_c",
    "purity_mol_pct",
    "max_recovery_pct",
    "min_solvent_ml",
    "score",
    "max_score",
    "percent",
];

/// Rows held before they are written out as one row group: enough for good compression,
/// few enough that the buffer stays about two megabytes whatever the class size (16,384 rows
/// held 8 MiB at the peak, measured with valgrind's massif).
const ROW_GROUP: usize = 4_096;

/// results.parquet, written a row group at a time as the batch streams past, into a temporary
/// file renamed into place by `finish`. Only the headline figures of the term are kept whole.
pub struct ParquetRows {
    writer: BatchedWriter<Shared>,
    file: Rc<RefCell<Option<AtomicFile>>>,
    path: PathBuf,
    text: [Vec<Option<String>>; TEXT.len()],
    numbers: [Vec<Option<f64>>; NUMBERS.len()],
    rows: Vec<u32>,
    pseudonyms: Option<Pseudonymizer>,
    term: TermTally,
}

/// The temporary file, shared between the parquet writer and `ParquetRows::finish`.
struct Shared(Rc<RefCell<Option<AtomicFile>>>);

impl Write for Shared {
    fn write(&mut self, buf: &[u8]) -> std::io::Result<usize> {
        match self.0.borrow_mut().as_mut() {
            Some(f) => f.write(buf),
            None => Err(std::io::Error::other(
                "results.parquet was already committed",
            )),
        }
    }
    fn flush(&mut self) -> std::io::Result<()> {
        match self.0.borrow_mut().as_mut() {
            Some(f) => f.flush(),
            None => Ok(()),
        }
    }
}

fn schema() -> Schema {
    let mut fields = vec![Field::new("row".into(), DataType::UInt32)];
    fields.extend(
        TEXT.iter()
            .map(|k| Field::new((*k).into(), DataType::String)),
    );
    fields.extend(
        NUMBERS
            .iter()
            .map(|k| Field::new((*k).into(), DataType::Float64)),
    );
    Schema::from_iter(fields)
}

impl ParquetRows {
    /// Opens the temporary file and writes the header.
    pub fn create(
        path: &Path,
        pseudonyms: Option<Pseudonymizer>,
    ) -> Result<ParquetRows, WriteError> {
        let file = Rc::new(RefCell::new(Some(AtomicFile::create(path)?)));
        let writer = ParquetWriter::new(Shared(file.clone()))
            .with_row_group_size(Some(ROW_GROUP))
            .set_parallel(false)
            .batched(&schema())
            .map_err(|e| WriteError::other(path, e))?;
        Ok(ParquetRows {
            writer,
            file,
            path: path.to_path_buf(),
            text: Default::default(),
            numbers: Default::default(),
            rows: Vec::with_capacity(ROW_GROUP),
            pseudonyms,
            term: TermTally::default(),
        })
    }

    pub fn add(&mut self, g: &Graded) -> Result<(), WriteError> {
        let a = &g.assessed;
        let s = &a.submission;
        let id = match (&self.pseudonyms, s.student_id.as_deref()) {
            (Some(p), Some(id)) => Some(p.pseudonym(id)),
            (_, id) => id.map(str::to_string),
        };
        let name = if self.pseudonyms.is_some() {
            None
        } else {
            s.student_name.clone()
        };
        let flags = a.flag_codes();
        let sc = &g.score;
        self.term.add(a.recovery_pct, Some(sc.percent), &flags);
        let text = [
            Some(s.source.clone()),
            s.sheet.clone(),
            Some(s.section.clone()),
            id,
            name,
            s.bench.clone(),
            a.compound.clone().or_else(|| s.compound.clone()),
            Some(flags),
        ];
        for (column, v) in self.text.iter_mut().zip(text) {
            column.push(v);
        }
        let numbers = [
            s.crude_mass_g,
            s.recovered_mass_g,
            s.solvent_volume_ml,
            a.mp_onset_c,
            a.mp_clear_c,
            a.recovery_pct,
            a.range_width_c,
            a.reference_mp_c,
            a.depression_c,
            a.purity_mol_pct,
            a.max_recovery_pct,
            a.min_solvent_ml,
            Some(sc.total),
            Some(sc.max),
            Some(sc.percent),
        ];
        for (column, v) in self.numbers.iter_mut().zip(numbers) {
            column.push(v.filter(|x| x.is_finite()));
        }
        self.rows.push(s.row);
        if self.rows.len() >= ROW_GROUP {
            self.flush()?;
        }
        Ok(())
    }

    /// Writes the buffered rows as one row group.
    fn flush(&mut self) -> Result<(), WriteError> {
        if self.rows.is_empty() {
            return Ok(());
        }
        let mut cols = vec![Column::new("row".into(), std::mem::take(&mut self.rows))];
        for (k, v) in TEXT.iter().zip(self.text.iter_mut()) {
            cols.push(Column::new((*k).into(), std::mem::take(v)));
        }
        for (k, v) in NUMBERS.iter().zip(self.numbers.iter_mut()) {
            cols.push(Column::new((*k).into(), std::mem::take(v)));
        }
        let path = &self.path;
        let df = DataFrame::new_infer_height(cols).map_err(|e| WriteError::other(path, e))?;
        self.writer
            .write_batch(&df)
            .map_err(|e| WriteError::other(path, e))
    }

    /// Writes the last row group and the footer, and renames the file into place.
    pub fn finish(mut self) -> Result<(), WriteError> {
        self.flush()?;
        let path = self.path.clone();
        self.writer
            .finish()
            .map_err(|e| WriteError::other(&path, e))?;
        let file = self.file.borrow_mut().take();
        match file {
            Some(f) => f.commit(),
            None => Err(WriteError::other(&path, "the file was already committed")),
        }
    }

    /// The term's headline figures, as `read_term` reads them back.
    pub fn term(&self) -> Term {
        self.term.term()
    }
}

/// Reads an earlier term's results.parquet.
pub fn read_term(path: &Path) -> Result<Term, String> {
    let file = std::fs::File::open(path)
        .map_err(|e| format!("cannot open the baseline {}: {e}", path.display()))?;
    let df = ParquetReader::new(file).finish().map_err(|e| {
        format!(
            "{}: not a results.parquet benchgrade wrote: {e}",
            path.display()
        )
    })?;
    let column = |k: &str| df.column(k).map_err(|e| format!("{}: {e}", path.display()));
    let numbers = |k: &str| -> Result<Vec<Option<f64>>, String> {
        let c = column(k)?;
        let v = c.f64().map_err(|e| format!("{}: {e}", path.display()))?;
        Ok(v.iter().collect())
    };
    let recovery = numbers("recovery_pct")?;
    let percent = numbers("percent")?;
    let flags = column("flags")?;
    let flags = flags
        .str()
        .map_err(|e| format!("{}: {e}", path.display()))?;
    let mut tally = TermTally::default();
    for ((r, p), f) in recovery.into_iter().zip(percent).zip(flags.iter()) {
        tally.add(r, p, f.unwrap_or(""));
    }
    Ok(tally.term())
}
