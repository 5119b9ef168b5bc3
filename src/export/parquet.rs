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

use super::atomic::{AtomicFile, Stage};
use super::pseudonym::Pseudonymizer;
use crate::error::WriteError;
use crate::model::columns::{self, Column, Kind, Outputs, Personal, Value};
use crate::model::Graded;

use super::baseline::TermTally;
pub use super::baseline::{compare, rubric_mismatch, BaselineRow, Term};

/// The key under which results.parquet records the SHA-256 of the rubric it was graded under.
pub const RUBRIC_KEY: &str = "benchgrade.rubric_sha256";

/// How a column is stored in results.parquet.
#[derive(Clone, Copy, PartialEq, Eq, PartialOrd, Ord)]
enum Stored {
    Integer,
    Text,
    Number,
}

fn stored(c: &Column) -> Stored {
    match c.kind {
        Kind::Integer => Stored::Integer,
        Kind::Number => Stored::Number,
        _ => Stored::Text,
    }
}

/// The registry's parquet columns, whole numbers first, then text, then numbers (each in
/// registry order).
fn parquet_columns() -> Vec<&'static Column> {
    let mut cols: Vec<&'static Column> = columns::carried_by(Outputs::PARQUET).collect();
    cols.sort_by_key(|c| stored(c));
    cols
}

/// One column's values for the row group being gathered. The buffers keep their room from
/// one row group to the next, and a text column keeps its values in one string (each value a
/// span of it), so a row costs no allocation once the first group is gathered.
enum Buffer {
    Integer(Vec<u32>),
    Text {
        text: String,
        spans: Vec<Option<(usize, usize)>>,
    },
    Number(Vec<Option<f64>>),
}

impl Buffer {
    fn new(c: &Column) -> Buffer {
        match stored(c) {
            Stored::Integer => Buffer::Integer(Vec::with_capacity(ROW_GROUP)),
            Stored::Text => Buffer::Text {
                text: String::new(),
                spans: Vec::with_capacity(ROW_GROUP),
            },
            Stored::Number => Buffer::Number(Vec::with_capacity(ROW_GROUP)),
        }
    }

    fn push(&mut self, v: Value<'_>, sep: &str) {
        match (self, v) {
            (Buffer::Integer(b), Value::Integer(n)) => b.push(u32::try_from(n).unwrap_or(u32::MAX)),
            (Buffer::Number(b), Value::Number(x)) => b.push(x.filter(|x| x.is_finite())),
            (Buffer::Text { text, spans }, Value::Text(t)) => {
                spans.push(t.map(|t| {
                    let start = text.len();
                    text.push_str(t);
                    (start, text.len())
                }));
            }
            (Buffer::Text { text, spans }, Value::Items(items)) => {
                let start = text.len();
                items.push_joined(sep, text);
                spans.push(Some((start, text.len())));
            }
            (Buffer::Integer(b), _) => b.push(0),
            (Buffer::Number(b), _) => b.push(None),
            (Buffer::Text { spans, .. }, _) => spans.push(None),
        }
    }

    /// The gathered values as a column; the buffer is emptied, its room kept.
    fn take(&mut self, name: &str) -> polars::prelude::Column {
        match self {
            Buffer::Integer(b) => {
                let c = polars::prelude::Column::new(name.into(), b.as_slice());
                b.clear();
                c
            }
            Buffer::Text { text, spans } => {
                let values: Vec<Option<&str>> = spans
                    .iter()
                    .map(|s| s.map(|(a, b)| text.get(a..b).unwrap_or_default()))
                    .collect();
                let c = polars::prelude::Column::new(name.into(), values);
                text.clear();
                spans.clear();
                c
            }
            Buffer::Number(b) => {
                let c = polars::prelude::Column::new(name.into(), b.as_slice());
                b.clear();
                c
            }
        }
    }

    fn len(&self) -> usize {
        match self {
            Buffer::Integer(b) => b.len(),
            Buffer::Text { spans, .. } => spans.len(),
            Buffer::Number(b) => b.len(),
        }
    }
}

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
    columns: Vec<(&'static Column, Buffer)>,
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

fn schema(columns: &[(&'static Column, Buffer)]) -> Schema {
    let fields = columns.iter().map(|(c, _)| {
        let dtype = match stored(c) {
            Stored::Integer => DataType::UInt32,
            Stored::Text => DataType::String,
            Stored::Number => DataType::Float64,
        };
        Field::new(c.name.into(), dtype)
    });
    fields.collect()
}

impl ParquetRows {
    /// Opens the temporary file and writes the header.
    pub fn create(
        path: &Path,
        pseudonyms: Option<Pseudonymizer>,
        rubric_sha256: &str,
        stage: &Stage,
    ) -> Result<ParquetRows, WriteError> {
        let file = Rc::new(RefCell::new(Some(AtomicFile::create(path, stage)?)));
        let columns: Vec<(&'static Column, Buffer)> = parquet_columns()
            .into_iter()
            .map(|c| (c, Buffer::new(c)))
            .collect();
        let meta = KeyValueMetadata::from_static(vec![(
            RUBRIC_KEY.to_string(),
            rubric_sha256.to_string(),
        )]);
        let writer = ParquetWriter::new(Shared(file.clone()))
            .with_key_value_metadata(Some(meta))
            .with_row_group_size(Some(ROW_GROUP))
            .set_parallel(false)
            .batched(&schema(&columns))
            .map_err(|e| WriteError::other(path, e))?;
        Ok(ParquetRows {
            writer,
            file,
            path: path.to_path_buf(),
            columns,
            pseudonyms,
            term: TermTally::default(),
        })
    }

    pub fn add(&mut self, g: &Graded) -> Result<(), WriteError> {
        let a = &g.assessed;
        let row = g.row();
        self.term.add(
            a.recovery_pct,
            columns::PERCENT.number(row),
            &a.flag_codes(),
        );
        for (c, buffer) in &mut self.columns {
            let sep = match c.kind {
                Kind::List { sep } => sep,
                _ => ";",
            };
            let value = c.value(row);
            match self
                .pseudonyms
                .as_ref()
                .and_then(|p| p.told(c, value, sep, a))
            {
                // a name is left out: null, as where none was read
                Some(_) if c.personal == Some(Personal::Name) => {
                    buffer.push(Value::Text(None), sep);
                }
                Some(told) => buffer.push(Value::Text(Some(&told)), sep),
                None => buffer.push(value, sep),
            }
        }
        if self
            .columns
            .first()
            .is_some_and(|(_, b)| b.len() >= ROW_GROUP)
        {
            self.flush()?;
        }
        Ok(())
    }

    /// Writes the buffered rows as one row group.
    fn flush(&mut self) -> Result<(), WriteError> {
        if self.columns.first().is_none_or(|(_, b)| b.len() == 0) {
            return Ok(());
        }
        let cols: Vec<polars::prelude::Column> = self
            .columns
            .iter_mut()
            .map(|(c, b)| b.take(c.name))
            .collect();
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

/// Reads an earlier term's results.parquet. The parquet reader trusts the file's own metadata
/// and can panic on a damaged one; that panic is caught and named as a damaged file.
pub fn read_term(path: &Path) -> Result<Term, String> {
    crate::contain::contain(|| read_term_unguarded(path)).unwrap_or_else(|_| {
        Err(format!(
            "{}: not a results.parquet benchgrade wrote: the file is damaged (its parquet metadata cannot be read)",
            path.display()
        ))
    })
}

fn read_term_unguarded(path: &Path) -> Result<Term, String> {
    let file = std::fs::File::open(path)
        .map_err(|e| format!("cannot open the baseline {}: {e}", path.display()))?;
    let not_ours = |e: PolarsError| {
        format!(
            "{}: not a results.parquet benchgrade wrote: {e}",
            path.display()
        )
    };
    let mut reader = ParquetReader::new(file);
    let rubric_sha256 = reader
        .get_metadata()
        .map_err(not_ours)?
        .key_value_metadata()
        .iter()
        .flatten()
        .find(|kv| kv.key == RUBRIC_KEY)
        .and_then(|kv| kv.value.clone());
    let df = reader.finish().map_err(not_ours)?;
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
    Ok(Term {
        rubric_sha256,
        ..tally.term()
    })
}
