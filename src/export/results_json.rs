//! DIR/results.json: the same records as results.csv, typed (numbers as numbers, flags as a
//! list, the points as one object), the registry's columns in its order (`model::columns`),
//! one record per line so that it streams and diffs well, with the batch's file problems at
//! the end.

use std::io::Write;
use std::path::Path;

use serde::ser::{SerializeMap, SerializeSeq};
use serde::{Serialize, Serializer};

use super::atomic::{AtomicFile, Stage};
use std::collections::BTreeMap;

use crate::error::WriteError;
use crate::ingest::Problem;
use crate::model::columns::{self, Outputs, Value};
use crate::model::{Graded, Row};

/// One record: the registry's columns in order, typed.
struct Record<'a>(Row<'a>);

/// A column's value as JSON: text or null, a number or null, a list, the points by criterion.
struct Json<'a>(Value<'a>);

impl Serialize for Json<'_> {
    fn serialize<S: Serializer>(&self, s: S) -> Result<S::Ok, S::Error> {
        match self.0 {
            Value::Text(t) => t.serialize(s),
            Value::Number(v) => v.serialize(s),
            Value::Integer(n) => s.serialize_u64(n),
            Value::Items(items) => {
                let mut seq = s.serialize_seq(Some(items.len()))?;
                let mut item = String::new();
                for i in 0..items.len() {
                    item.clear();
                    items.push_item(i, &mut item);
                    seq.serialize_element(&item)?;
                }
                seq.end()
            }
            Value::Points(criteria) => {
                // by criterion id, as a map orders its keys
                let by_id: BTreeMap<&str, f64> =
                    criteria.iter().map(|c| (c.id.as_str(), c.points)).collect();
                by_id.serialize(s)
            }
        }
    }
}

impl Serialize for Record<'_> {
    fn serialize<S: Serializer>(&self, s: S) -> Result<S::Ok, S::Error> {
        let mut map = s.serialize_map(None)?;
        for c in columns::carried_by(Outputs::JSON) {
            map.serialize_entry(c.name, &Json(c.value(self.0)))?;
        }
        map.end()
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
    pub fn create(path: &Path, stage: &Stage) -> Result<ResultsJson, WriteError> {
        let mut file = AtomicFile::create(path, stage)?;
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
        let result = serde_json::to_writer(&mut self.buf, &Record(g.row()))
            .map_err(Into::into)
            .and_then(|()| self.file.write_all(&self.buf));
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
