//! DIR/results.csv: one row per submission, the registry's columns in the contract's order
//! (`model::columns`) up to `status`, then one `points_<criterion id>` column per criterion, then
//! the registry's columns appended since (later columns are only ever appended, after the
//! points, so that no column a reader knows moves). Written row by row as the batch streams
//! past.

use std::path::{Path, PathBuf};

use super::atomic::{AtomicFile, Stage};
use super::pseudonym::Pseudonymizer;
use super::{neutralise, push_number};
use crate::error::WriteError;
use crate::model::columns::{self, Column, Kind, Outputs, Value};
use crate::model::Graded;
use crate::numtext::push_u64;

/// The columns results.csv writes before the points (through `status`, the last column of the
/// contract before the points), in order.
fn columns() -> impl Iterator<Item = &'static Column> {
    let mut before = true;
    columns::carried_by(Outputs::CSV)
        .filter(|c| c.kind != Kind::Points)
        .take_while(move |c| std::mem::replace(&mut before, c.name != columns::STATUS.name))
}

/// The columns appended since the points, in order.
fn appended() -> impl Iterator<Item = &'static Column> {
    let before = columns().count();
    columns::carried_by(Outputs::CSV)
        .filter(|c| c.kind != Kind::Points)
        .skip(before)
}

/// results.csv's header: the registry's columns through `status`, `points_<id>` per
/// criterion, then the columns appended since.
pub fn header(criteria: &[String]) -> Vec<String> {
    columns()
        .map(|c| c.name.to_string())
        .chain(criteria.iter().map(|id| format!("points_{id}")))
        .chain(appended().map(|c| c.name.to_string()))
        .collect()
}

/// The results file being written.
pub struct ResultsCsv {
    csv: csv::Writer<AtomicFile>,
    path: PathBuf,
    buf: String,
    /// When set, ids and file names are replaced by pseudonyms, names left out and scrubbed
    /// from every text.
    pseudonyms: Option<Pseudonymizer>,
    /// The rubric's criterion ids, in the order of the `points_` columns.
    criteria: Vec<String>,
}

impl ResultsCsv {
    /// Opens the file and writes the header: the fixed columns, then `points_<id>` per criterion.
    pub fn create(
        path: &Path,
        criteria: &[String],
        stage: &Stage,
    ) -> Result<ResultsCsv, WriteError> {
        let mut out = ResultsCsv {
            csv: csv::Writer::from_writer(AtomicFile::create(path, stage)?),
            path: path.to_path_buf(),
            buf: String::new(),
            pseudonyms: None,
            criteria: criteria.to_vec(),
        };
        out.csv
            .write_record(header(criteria))
            .map_err(|e| out.error(e))?;
        Ok(out)
    }

    /// The same file with ids pseudonymised and names left out, for anything leaving the course.
    pub fn create_pseudonymized(
        path: &Path,
        criteria: &[String],
        p: Pseudonymizer,
        stage: &Stage,
    ) -> Result<ResultsCsv, WriteError> {
        let mut out = ResultsCsv::create(path, criteria, stage)?;
        out.pseudonyms = Some(p);
        Ok(out)
    }

    fn error(&self, e: csv::Error) -> WriteError {
        WriteError {
            path: self.path.clone(),
            source: e.into(),
        }
    }

    /// Writes the buffer as a text field, guarded against formula injection.
    fn text_field(&mut self) -> csv::Result<()> {
        let guarded = neutralise(&self.buf);
        self.csv.write_field(guarded.as_bytes())
    }

    /// Puts one value's text into the buffer.
    fn fill(&mut self, column: &Column, value: Value<'_>) {
        self.buf.clear();
        match value {
            Value::Text(t) => self.buf.push_str(t.unwrap_or("")),
            Value::Number(v) => push_number(&mut self.buf, v),
            Value::Integer(n) => push_u64(&mut self.buf, n),
            Value::Items(items) => {
                let sep = match column.kind {
                    Kind::List { sep } => sep,
                    _ => "; ",
                };
                items.push_joined(sep, &mut self.buf);
            }
            Value::Points(_) => {}
        }
    }

    fn column_field(&mut self, column: &Column, g: &Graded) -> csv::Result<()> {
        let value = column.value(g.row());
        let sep = match column.kind {
            Kind::List { sep } => sep,
            _ => "; ",
        };
        match self
            .pseudonyms
            .as_ref()
            .and_then(|p| p.told(column, value, sep, &g.assessed))
        {
            Some(told) => self.buf = told,
            None => self.fill(column, value),
        }
        match column.kind {
            Kind::Text | Kind::List { .. } => self.text_field(),
            _ => self.csv.write_field(self.buf.as_bytes()),
        }
    }

    fn fields(&mut self, g: &Graded) -> csv::Result<()> {
        for column in columns() {
            self.column_field(column, g)?;
        }
        // one field per criterion of the rubric, empty where the row has no points (excused)
        for (i, id) in self.criteria.iter().enumerate() {
            let points = match g.score.criteria.get(i) {
                Some(c) if c.id == *id => Some(c.points),
                _ => g
                    .score
                    .criteria
                    .iter()
                    .find(|c| c.id == *id)
                    .map(|c| c.points),
            };
            self.buf.clear();
            push_number(&mut self.buf, points);
            self.csv.write_field(self.buf.as_bytes())?;
        }
        for column in appended() {
            self.column_field(column, g)?;
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

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn the_contract_columns_come_first_in_their_order() {
        // the results contract's first twenty columns (README, "results.csv"): a public
        // interface that later versions only append to
        let contract = [
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
        ];
        let h = header(&["recovery".into()]);
        assert_eq!(&h[..contract.len()], contract);
        // the points follow status, and the columns appended since follow the points
        let status = h.iter().position(|c| c == "status").unwrap();
        assert_eq!(h[status + 1], "points_recovery");
        assert_eq!(h.last().map(String::as_str), Some("late_days"));
    }
}
