//! Unknowns: the answer key (which compound each sample code is) and a student's
//! identification checked against it. The key's compound gives the reference values a student
//! with an unknown is graded against: what they really had.

use std::collections::BTreeMap;

use crate::reference::Library;

/// Codes to compounds, from `--key FILE`, a key file among the inputs, or the rubric's `[key]`.
#[derive(Clone, Debug, Default, PartialEq)]
pub struct Key {
    /// By `code_key`: the code as written and the compound as written.
    entries: BTreeMap<String, (String, String)>,
    /// Where the key came from, for messages.
    pub source: String,
}

pub use crate::model::code_key;

impl Key {
    /// A key from (code, compound) pairs; a code given twice keeps its last compound.
    pub fn from_pairs<'a>(
        pairs: impl IntoIterator<Item = (&'a str, &'a str)>,
        source: &str,
    ) -> Key {
        let mut entries = BTreeMap::new();
        for (code, compound) in pairs {
            let (code, compound) = (code.trim(), compound.trim());
            if !code.is_empty() && !compound.is_empty() {
                entries.insert(code_key(code), (code.to_string(), compound.to_string()));
            }
        }
        Key {
            entries,
            source: source.to_string(),
        }
    }

    /// This key with `other`'s entries over its own.
    pub fn merged(mut self, other: Key) -> Key {
        self.entries.extend(other.entries);
        if self.source.is_empty() {
            self.source = other.source;
        } else if !other.source.is_empty() {
            self.source = format!("{} and {}", self.source, other.source);
        }
        self
    }

    pub fn is_empty(&self) -> bool {
        self.entries.is_empty()
    }

    /// The compound for a code, as the key writes it.
    pub fn compound(&self, code: &str) -> Option<&str> {
        self.entries.get(&code_key(code)).map(|(_, c)| c.as_str())
    }

    /// Every code, as written, with its compound.
    pub fn entries(&self) -> impl Iterator<Item = (&str, &str)> {
        self.entries.values().map(|(a, b)| (a.as_str(), b.as_str()))
    }
}

/// A student's identification against the key: the word for `identification`, and the
/// library's name for what the student named (else the name as written).
pub fn identify(
    code: Option<&str>,
    named: Option<&str>,
    key: Option<&Key>,
    library: &Library,
) -> (Option<&'static str>, Option<String>, Option<String>) {
    let named = named.map(str::trim).filter(|n| !n.is_empty());
    let code = code.map(str::trim).filter(|c| !c.is_empty());
    let shown = named.map(|n| library.lookup(n).map_or(n.to_string(), |c| c.name.clone()));
    if code.is_none() && named.is_none() {
        return (None, None, None);
    }
    let identity = code.and_then(|c| key?.compound(c));
    let Some(identity) = identity else {
        return (Some("no-key"), shown, None);
    };
    let truth = library
        .lookup(identity)
        .map_or(identity.to_string(), |c| c.name.clone());
    let word = match named {
        None => "none",
        Some(n) => {
            let same = match (library.lookup(n), library.lookup(identity)) {
                (Some(a), Some(b)) => a.cas == b.cas,
                _ => {
                    crate::ingest::headers::canonical(n)
                        == crate::ingest::headers::canonical(identity)
                }
            };
            if same {
                "correct"
            } else {
                "wrong"
            }
        }
    };
    (Some(word), shown, Some(truth))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn codes_match_however_written() {
        assert_eq!(code_key("U-07"), "u7");
        assert_eq!(code_key("u7"), "u7");
        assert_eq!(code_key("Unknown 7"), "7");
        assert_eq!(code_key("7"), "7");
        assert_ne!(code_key("U-17"), code_key("U-7"));
    }

    #[test]
    fn identification_against_the_key() {
        let lib = Library::builtin().unwrap();
        let key = Key::from_pairs([("U-1", "acetanilide"), ("U-2", "benzoic acid")], "k");
        // by synonym or CAS, not spelling (CAS 103-84-4 is acetanilide, from memory)
        let r = identify(Some("u1"), Some("103-84-4"), Some(&key), &lib);
        assert_eq!(r.0, Some("correct"));
        assert_eq!(r.2.as_deref(), Some("acetanilide"));
        let r = identify(Some("U-2"), Some("acetanilide"), Some(&key), &lib);
        assert_eq!(r.0, Some("wrong"));
        assert_eq!(r.2.as_deref(), Some("benzoic acid"));
        assert_eq!(
            identify(Some("U-2"), None, Some(&key), &lib).0,
            Some("none")
        );
        assert_eq!(
            identify(Some("U-9"), Some("urea"), Some(&key), &lib).0,
            Some("no-key")
        );
        assert_eq!(
            identify(Some("U-2"), Some("urea"), None, &lib).0,
            Some("no-key")
        );
        assert_eq!(identify(None, None, Some(&key), &lib), (None, None, None));
    }
}
