//! Pseudonyms for anything that leaves the course: a student id becomes a stable keyed hash
//! (HMAC-SHA-256 under the course's secret key, first 12 hex digits), the same every run with
//! the same key, and not reversible or guessable without it. There is no default key.

use hmac::{Hmac, Mac};
use sha2::Sha256;

/// A keyed pseudonymiser.
#[derive(Clone)]
pub struct Pseudonymizer {
    key: Vec<u8>,
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
        Ok(Pseudonymizer { key })
    }

    /// "p-" and the first 12 hex digits of HMAC-SHA-256(key, trimmed id).
    pub fn pseudonym(&self, id: &str) -> String {
        let mut mac =
            Hmac::<Sha256>::new_from_slice(&self.key).expect("HMAC takes keys of any length");
        mac.update(id.trim().as_bytes());
        let tag = mac.finalize().into_bytes();
        format!("p-{}", super::provenance::hex(&tag[..6]))
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
