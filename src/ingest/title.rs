//! The section and the teaching assistant named in a sheet's title rows ("Section 102,
//! Tuesday. TA: R. Okafor"), for a table that has no column for them.
//!
//! A section is a section word of the vocabulary (`[field.section]`: "Section", "Sec.",
//! "Sektion", "Sección", "Turma") followed by a label with a digit ("102", "07", "3B"), taken
//! as "Section 102" whatever stood between the two.
//! An assistant is an assistant word (`[field.assistant]`: "TA", "Instructor", "Betreuer")
//! followed by a colon and the name, up to a bracket, a semicolon, a bar or the end.

use super::vocabulary::{fold, Vocabulary};

/// What the title rows say.
#[derive(Clone, Debug, Default, PartialEq)]
pub struct Named {
    pub section: Option<String>,
    pub assistant: Option<String>,
}

/// Longest name taken for an assistant.
const LONGEST_NAME: usize = 60;

/// The section and assistant the title rows name, the first of each.
pub fn named(rows: &[String], v: &Vocabulary) -> Named {
    let mut out = Named::default();
    for text in rows {
        out.section = out.section.or_else(|| section(text, v));
        out.assistant = out.assistant.or_else(|| assistant(text, v));
    }
    out
}

/// Splits text into (word, start, end) for runs of letters and digits.
fn tokens(text: &str) -> Vec<(&str, usize, usize)> {
    let mut out = Vec::new();
    let mut start = None;
    for (i, c) in text.char_indices() {
        match (c.is_alphanumeric(), start) {
            (true, None) => start = Some(i),
            (false, Some(s)) => {
                out.push((&text[s..i], s, i));
                start = None;
            }
            _ => {}
        }
    }
    if let Some(s) = start {
        out.push((&text[s..], s, text.len()));
    }
    out
}

fn section(text: &str, v: &Vocabulary) -> Option<String> {
    let toks = tokens(text);
    for (i, (word, _, end)) in toks.iter().enumerate() {
        if !v.has("field.section", &fold(word)) {
            continue;
        }
        // "Section 102", "Sec. 3", "Section: 07", "Section no. 4"
        let mut rest = toks[i + 1..].iter();
        let mut next = rest.next();
        let mut from = *end;
        if let Some((_, _, e)) =
            next.filter(|(w, _, _)| matches!(fold(w).as_str(), "no" | "nr" | "number" | "n"))
        {
            from = *e;
            next = rest.next();
        }
        let Some((label, start, _)) = next else {
            continue;
        };
        let between = &text[from..*start];
        let close = between
            .chars()
            .all(|c| matches!(c, ' ' | '.' | ':' | '#' | '-' | 'º' | '°'));
        if close && label.chars().any(|c| c.is_ascii_digit()) && label.len() <= 8 {
            return Some(format!("{word} {label}"));
        }
    }
    None
}

fn assistant(text: &str, v: &Vocabulary) -> Option<String> {
    for (word, _, end) in tokens(text) {
        if !v.has("field.assistant", &fold(word)) {
            continue;
        }
        let Some(after) = text[end..].trim_start().strip_prefix(':') else {
            continue;
        };
        let name: String = after
            .split([')', ']', ';', '|', '\n'])
            .next()
            .unwrap_or("")
            .trim()
            .trim_end_matches([',', '.'])
            .chars()
            .take(LONGEST_NAME)
            .collect();
        if name.chars().any(char::is_alphabetic) {
            return Some(name);
        }
    }
    None
}

#[cfg(test)]
mod tests {
    use super::*;
    use proptest::prelude::*;

    fn read(text: &str) -> Named {
        named(&[text.to_string()], &Vocabulary::builtin())
    }

    #[test]
    fn title_rows_name_the_section_and_the_assistant() {
        let n = read("CHEM 2150 Recrystallization — Section 102 (TA: M. Ferreira)");
        assert_eq!(n.section.as_deref(), Some("Section 102"));
        assert_eq!(n.assistant.as_deref(), Some("M. Ferreira"));
        let n = read("Section 01, Tuesday afternoon. TA: R. Okafor");
        assert_eq!(n.section.as_deref(), Some("Section 01"));
        assert_eq!(n.assistant.as_deref(), Some("R. Okafor"));
        let n = read("Praktikum OC, Sektion 3B; Betreuer: Dr. K. Hahn");
        assert_eq!(n.section.as_deref(), Some("Sektion 3B"));
        assert_eq!(n.assistant.as_deref(), Some("Dr. K. Hahn"));
        assert_eq!(read("Sec. no. 4").section.as_deref(), Some("Sec 4"));
    }

    #[test]
    fn words_that_name_neither() {
        for t in [
            "Recrystallization of benzoic acid",
            "TA notes are in column K",
            "Section A",
            "see section on safety 2026",
        ] {
            let n = read(t);
            assert_eq!(n, Named::default(), "{t}");
        }
    }

    proptest! {
        #[test]
        fn no_title_panics(s in "\\PC{0,60}") {
            let _ = read(&s);
        }
    }
}
