//! A build without the `parquet` feature (the fuzzing build, which leaves polars out): the
//! same interface, writing no results.parquet and refusing `--baseline`.

use std::path::Path;

use super::atomic::Stage;
use super::pseudonym::Pseudonymizer;
use crate::error::WriteError;
use crate::model::Graded;

use super::baseline::TermTally;
pub use super::baseline::{compare, rubric_mismatch, BaselineRow, Term};

/// Keeps the term figures; writes nothing.
pub struct ParquetRows {
    term: TermTally,
}

impl ParquetRows {
    pub fn create(
        _path: &Path,
        _pseudonyms: Option<Pseudonymizer>,
        _rubric_sha256: &str,
        _stage: &Stage,
    ) -> Result<ParquetRows, WriteError> {
        Ok(ParquetRows {
            term: TermTally::default(),
        })
    }

    pub fn add(&mut self, g: &Graded) -> Result<(), WriteError> {
        let a = &g.assessed;
        self.term.add(
            a.recovery_pct,
            crate::model::columns::PERCENT.number(g.row()),
            &a.flag_codes(),
        );
        Ok(())
    }

    pub fn finish(self) -> Result<(), WriteError> {
        Ok(())
    }

    pub fn term(&self) -> Term {
        self.term.term()
    }
}

pub fn read_term(path: &Path) -> Result<Term, String> {
    Err(format!(
        "{}: this build of benchgrade reads no parquet (built without the parquet feature)",
        path.display()
    ))
}
