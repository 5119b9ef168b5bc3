//! Pseudonyms for anything that leaves the course: a student id becomes a stable keyed hash
//! (HMAC-SHA-256 under the course's secret key, first 12 hex digits), the same every run with
//! the same key, and not reversible or guessable without it. There is no default key.
//!
//! No name of the batch's students leaves with the pseudonyms: a file's name (`source`, often
//! a student's) becomes a keyed hash too, and every other text (bench, notes, flag reasons,
//! feedback quoting an override's reason, ...) has each name part of the batch replaced by
//! `[name]` (`model::names`).

use std::borrow::Cow;
use std::sync::Arc;

use hmac::{Hmac, Mac};
use sha2::Sha256;

use crate::model::columns::{self, Column, Items, Personal, Value};
use crate::model::names::BatchNames;
use crate::model::Assessed;

/// A keyed pseudonymiser, with the names of the batch it scrubs from text.
pub struct Pseudonymizer {
    key: Vec<u8>,
    names: Arc<BatchNames>,
    /// The last file named and its pseudonym: a file's rows come one after another.
    last_file: std::sync::Mutex<Option<(String, String)>>,
}

impl Clone for Pseudonymizer {
    fn clone(&self) -> Pseudonymizer {
        self.with_names(Arc::clone(&self.names))
    }
}

/// The least key length accepted, in bytes.
pub const MIN_KEY_BYTES: usize = 16;

impl Pseudonymizer {
    /// `Err` for a key too short to be secret.
    pub fn new(key: &[u8]) -> Result<Pseudonymizer, String> {
        let key: Vec<u8> = key.trim_ascii().to_vec();
        if key.len() < MIN_KEY_BYTES {
            return Err(format!(
                "the pseudonym key has {} bytes; use at least {MIN_KEY_BYTES} random characters (for example `head -c 32 /dev/urandom | base64`)",
                key.len()
            ));
        }
        Ok(Pseudonymizer {
            key,
            names: Arc::default(),
            last_file: std::sync::Mutex::default(),
        })
    }

    /// The same key, scrubbing the names of the batch (known after the first pass).
    pub fn with_names(&self, names: Arc<BatchNames>) -> Pseudonymizer {
        Pseudonymizer {
            key: self.key.clone(),
            names,
            last_file: std::sync::Mutex::default(),
        }
    }

    fn tag(&self, parts: &[&[u8]]) -> String {
        let mut mac =
            Hmac::<Sha256>::new_from_slice(&self.key).expect("HMAC takes keys of any length");
        for p in parts {
            mac.update(p);
        }
        let tag = mac.finalize().into_bytes();
        super::provenance::hex(&tag[..6])
    }

    /// "p-" and the first 12 hex digits of HMAC-SHA-256(key, trimmed id).
    pub fn pseudonym(&self, id: &str) -> String {
        format!("p-{}", self.tag(&[id.trim().as_bytes()]))
    }

    /// A file's name: "f-" and 12 hex digits of HMAC-SHA-256(key, "file:" + path), then the
    /// extension (which says the format and names nobody). "file:" keeps it from ever being
    /// an id's pseudonym.
    pub fn file(&self, source: &str) -> String {
        let mut last = self
            .last_file
            .lock()
            .unwrap_or_else(std::sync::PoisonError::into_inner);
        if let Some((s, p)) = last.as_ref() {
            if s == source {
                return p.clone();
            }
        }
        let told = self.file_uncached(source);
        *last = Some((source.to_string(), told.clone()));
        told
    }

    fn file_uncached(&self, source: &str) -> String {
        let tag = self.tag(&[b"file:", source.as_bytes()]);
        let ext = std::path::Path::new(source)
            .extension()
            .and_then(|e| e.to_str())
            .filter(|e| e.chars().all(|c| c.is_ascii_alphanumeric()) && e.len() <= 5);
        match ext {
            Some(e) => format!("f-{tag}.{}", e.to_ascii_lowercase()),
            None => format!("f-{tag}"),
        }
    }

    /// `text` with every name of the batch replaced by `[name]`.
    pub fn scrub<'a>(&self, text: &'a str) -> Cow<'a, str> {
        self.names.scrub(text)
    }

    /// How a column's value is written where it leaves the course: `None` for a value written
    /// as it is (a number, flag codes, points, an empty cell), else its text: an id's pseudonym, nothing for
    /// a name, the file's pseudonym for `source`, any other text without the row's own cell
    /// text (for a column that may quote it) and without the batch's names.
    pub fn told(
        &self,
        column: &Column,
        value: Value<'_>,
        sep: &str,
        a: &Assessed,
    ) -> Option<String> {
        let mut text = String::new();
        match value {
            Value::Text(Some(t)) => text.push_str(t),
            Value::Text(None)
            | Value::Items(Items::Codes(_))
            | Value::Number(_)
            | Value::Integer(_)
            | Value::Points(_) => return None,
            Value::Items(items) => items.push_joined(sep, &mut text),
        }
        Some(match column.personal {
            Some(Personal::Id) => self.pseudonym(&text),
            Some(Personal::Name) => String::new(),
            _ if column.name == columns::SOURCE.name => self.file(&text),
            Some(Personal::Quotes) => {
                let told = crate::model::without_cell_text(&text, a);
                self.scrub(&told).into_owned()
            }
            None => self.scrub(&text).into_owned(),
        })
    }
}

impl std::fmt::Debug for Pseudonymizer {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.write_str("Pseudonymizer { key: <secret> }")
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn pseudonyms_match_an_independent_hmac() {
        // Python 3.11's standard library, computed once:
        // "p-" + hmac.new(b"a course secret of some length", id.strip().encode(),
        //                 hashlib.sha256).hexdigest()[:12]
        let p = Pseudonymizer::new(b"a course secret of some length").unwrap();
        assert_eq!(p.pseudonym("2026101"), "p-db28e4e1f7ae");
        assert_eq!(p.pseudonym(" 2026101 "), "p-db28e4e1f7ae");
        assert_eq!(p.pseudonym("x"), "p-a7f57e0f1ef5");
    }

    #[test]
    fn file_names_are_keyed_apart_from_ids_and_keep_their_extension() {
        let p = Pseudonymizer::new(b"a course secret of some length").unwrap();
        let f = p.file("inputs/Odile Marchetti.xlsx");
        assert!(
            f.starts_with("f-") && f.len() == 19 && f[14..] == *".xlsx",
            "{f}"
        );
        assert_eq!(f, p.file("inputs/Odile Marchetti.xlsx"), "stable");
        assert_ne!(f, p.file("inputs/odile marchetti.xlsx"));
        // Python 3.11's standard library, computed once: "f-" + hmac.new(key,
        // b"file:in/a.csv", hashlib.sha256).hexdigest()[:12] + ".csv"
        assert_eq!(p.file("in/a.csv"), "f-b058e89f07be.csv");
        assert_ne!(p.file("x")[2..], p.pseudonym("x")[2..]);
    }

    #[test]
    fn stable_keyed_and_refusing_short_keys() {
        let a = Pseudonymizer::new(b"a course secret of some length").unwrap();
        let b = Pseudonymizer::new(b"another course secret, longer").unwrap();
        assert_eq!(a.pseudonym("2026101"), a.pseudonym(" 2026101 "));
        assert_ne!(a.pseudonym("2026101"), b.pseudonym("2026101"));
        assert_ne!(a.pseudonym("2026101"), a.pseudonym("2026108"));
        assert!(a.pseudonym("x").starts_with("p-") && a.pseudonym("x").len() == 14);
        assert!(Pseudonymizer::new(b"short").is_err());
        assert!(!format!("{a:?}").contains("course"), "the key never prints");
    }
}
