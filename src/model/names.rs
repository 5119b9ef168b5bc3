//! The students' names of a batch, to keep them out of what leaves the course. A name typed
//! where a name does not belong (a file named after a student, a bench cell, a note, an
//! override's reason quoted in the feedback) would otherwise travel with the pseudonyms and
//! the cohort report. Every part of every name (2 letters or more) is matched as a whole word,
//! whatever its case and accents ("JOSE" and "José", "nunez" and "Núñez"), and replaced by
//! `[name]`; a name in a script written without spaces (CJK) is matched inside words too.

use std::borrow::Cow;
use std::collections::HashSet;

use unicode_normalization::char::is_combining_mark;
use unicode_normalization::UnicodeNormalization;

/// What a scrubbed name becomes.
pub const MARK: &str = "[name]";

/// Every name part of a batch, folded.
#[derive(Clone, Debug, Default, PartialEq, Eq)]
pub struct BatchNames {
    words: HashSet<String>,
    /// Parts in a script written without spaces, matched inside words.
    unspaced: Vec<String>,
}

/// A word's matching form: lower case, accents and other combining marks taken off, and the
/// few Latin letters that do not decompose written plainly (ø, ł, đ, æ, œ, ß, ı).
pub fn fold(word: &str) -> String {
    if word.is_ascii() {
        return word.to_ascii_lowercase();
    }
    let mut out = String::with_capacity(word.len());
    for c in word.nfd().filter(|c| !is_combining_mark(*c)) {
        match c {
            'ø' | 'Ø' => out.push('o'),
            'ł' | 'Ł' => out.push('l'),
            'đ' | 'Đ' | 'ð' | 'Ð' => out.push('d'),
            'æ' | 'Æ' => out.push_str("ae"),
            'œ' | 'Œ' => out.push_str("oe"),
            'ß' => out.push_str("ss"),
            'ı' => out.push('i'),
            c => out.extend(c.to_lowercase()),
        }
    }
    out
}

/// A letter of a script written without spaces between words (Han, kana, Hangul).
fn unspaced(c: char) -> bool {
    matches!(c, '\u{2E80}'..='\u{9FFF}' | '\u{AC00}'..='\u{D7AF}' | '\u{F900}'..='\u{FAFF}' | '\u{20000}'..='\u{3FFFF}')
}

/// The words of a text: maximal runs of letters and digits, with their byte ranges.
fn words(text: &str) -> impl Iterator<Item = (usize, usize)> + '_ {
    let mut iter = text.char_indices().peekable();
    std::iter::from_fn(move || {
        let (start, _) = iter.by_ref().find(|(_, c)| c.is_alphanumeric())?;
        let mut end = text.len();
        while let Some(&(i, c)) = iter.peek() {
            if !c.is_alphanumeric() {
                end = i;
                break;
            }
            iter.next();
        }
        Some((start, end))
    })
}

impl BatchNames {
    /// Adds a student's name: each of its parts of 2 letters or more.
    pub fn add(&mut self, name: &str) {
        for (s, e) in words(name) {
            let part = &name[s..e];
            if part.chars().filter(|c| c.is_alphabetic()).count() < 2 {
                continue;
            }
            let folded = fold(part);
            if folded.chars().any(unspaced) && !self.unspaced.contains(&folded) {
                self.unspaced.push(folded.clone());
            }
            self.words.insert(folded);
        }
    }

    pub fn is_empty(&self) -> bool {
        self.words.is_empty()
    }

    /// Whether a word (as written) is a name part of the batch.
    fn is_name(&self, word: &str) -> bool {
        let bytes = word.as_bytes();
        // a number, or a word of one letter, is no name part (the common words of feedback)
        if bytes.len() < 2 || bytes[0].is_ascii_digit() {
            return false;
        }
        if !word.is_ascii() {
            return self.words.contains(&fold(word));
        }
        let mut buf = [0u8; 32];
        match buf.get_mut(..bytes.len()) {
            Some(low) => {
                low.copy_from_slice(bytes);
                low.make_ascii_lowercase();
                std::str::from_utf8(low).is_ok_and(|w| self.words.contains(w))
            }
            None => self.words.contains(&word.to_ascii_lowercase()),
        }
    }

    /// `text` with every name part of the batch replaced by `[name]`.
    pub fn scrub<'a>(&self, text: &'a str) -> Cow<'a, str> {
        if self.is_empty() {
            return Cow::Borrowed(text);
        }
        let mut out: Option<String> = None;
        let mut copied = 0;
        for (s, e) in words(text) {
            let word = &text[s..e];
            let replaced = if self.is_name(word) {
                Some(Cow::Borrowed(MARK))
            } else {
                self.inside(word)
            };
            if let Some(r) = replaced {
                let o = out.get_or_insert_with(|| String::with_capacity(text.len()));
                o.push_str(&text[copied..s]);
                o.push_str(&r);
                copied = e;
            }
        }
        match out {
            None => Cow::Borrowed(text),
            Some(mut o) => {
                o.push_str(&text[copied..]);
                Cow::Owned(o)
            }
        }
    }

    /// A word holding a name of a script written without spaces, with the name replaced.
    fn inside(&self, word: &str) -> Option<Cow<'static, str>> {
        if self.unspaced.is_empty() || !word.chars().any(unspaced) {
            return None;
        }
        let mut w = word.to_string();
        for part in &self.unspaced {
            w = w.replace(part.as_str(), MARK);
        }
        (w != word).then_some(Cow::Owned(w))
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn batch() -> BatchNames {
        let mut n = BatchNames::default();
        for name in [
            "Odile Marchetti",
            "José Núñez-Brightwater",
            "Søren O'Day",
            "王小明",
        ] {
            n.add(name);
        }
        n
    }

    #[test]
    fn folding_takes_off_case_and_accents() {
        // NFD decomposition (Unicode Standard Annex 15) then the combining marks dropped:
        // common practice for accent-insensitive matching
        assert_eq!(fold("Núñez"), "nunez");
        assert_eq!(fold("JOSÉ"), "jose");
        assert_eq!(fold("Søren"), "soren");
        assert_eq!(fold("Straße"), "strasse");
    }

    #[test]
    fn every_part_is_replaced_as_a_word_whatever_its_case_and_accents() {
        let n = batch();
        assert_eq!(
            n.scrub("Marchetti redid it with jose NUNEZ watching"),
            "[name] redid it with [name] [name] watching"
        );
        assert_eq!(n.scrub("Odile's bench"), "[name]'s bench");
        assert_eq!(n.scrub("in/odile-marchetti.csv"), "in/[name]-[name].csv");
        assert_eq!(n.scrub("Soren and Brightwater"), "[name] and [name]");
        // a one-letter part (the O of O'Day) is no name; a longer word holding a name is
        // another word
        assert_eq!(n.scrub("O Marchettis day"), "O Marchettis [name]");
        assert_eq!(n.scrub("与王小明同组"), "与[name]同组");
        assert!(matches!(n.scrub("recovery 66.3 %"), Cow::Borrowed(_)));
    }

    #[test]
    fn no_names_no_change() {
        assert_eq!(BatchNames::default().scrub("Odile"), "Odile");
    }
}
