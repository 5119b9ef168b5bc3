//! Excused students: a withdrawal or an excuse written in the row's status or notes cell.
//!
//! A class sheet keeps everyone on the roll, and the student who withdrew or was excused is a
//! row like any other, usually with empty measurements and a word in a status column ("W",
//! "withdrew", "excused", "absent"). Such a row is not graded: it gets no score, no letter and
//! no impossible flags, and statistics leave it out (common practice: a gradebook leaves an
//! excused grade blank rather than zero). A status cell decides whatever else the row holds;
//! a notes cell only when the row lacks what grading needs (a recovered mass or a melting
//! entry), and only when the cell is a status (a code such as "W", or a phrase of status words:
//! "dropped course", "abgemeldet"), never a sentence about the work ("dropped filter paper in
//! sink", "absent on Monday, made it up Tuesday"). The words are the vocabulary's.

use crate::ingest::vocabulary::{self, Vocabulary};
use crate::ingest::Submission;

fn words(text: &str) -> Vec<String> {
    vocabulary::fold(text)
        .split(|c: char| !c.is_alphanumeric())
        .filter(|w| !w.is_empty())
        .map(str::to_string)
        .collect()
}

/// A cell's text without parenthetical remarks, dates and numbers: "W (medical)" is "w",
/// "WD - 10/03" is "wd", "W/D" (letters alone) is "wd".
fn code_of(text: &str) -> String {
    let mut plain = String::new();
    let mut depth = 0usize;
    for c in text.chars() {
        match c {
            '(' | '[' => depth += 1,
            ')' | ']' => depth = depth.saturating_sub(1),
            _ if depth == 0 => plain.push(c),
            _ => {}
        }
    }
    let w: Vec<String> = words(&plain)
        .into_iter()
        .filter(|w| !w.chars().all(|c| c.is_ascii_digit()))
        .collect();
    if w.iter().all(|x| x.chars().count() == 1) {
        w.concat()
    } else {
        w.join(" ")
    }
}

/// The meaning of the first excusing word of `text` (the vocabulary's `[status.*]`), or of the
/// whole cell as a registrar code (`[status_code.*]`), unless a word of the cell denies it
/// (`[status_denial]`: "Unexcused absence", "Excused: no", "Excuse pending").
fn excusing_word(v: &Vocabulary, text: &str) -> Option<(String, String)> {
    let w = words(text);
    if w.iter().any(|x| v.has("status_denial.words", x)) {
        return None;
    }
    let code = code_of(text);
    if let Some(meaning) = v.code(&code) {
        return Some((meaning.to_string(), code));
    }
    w.iter()
        .find_map(|word| Some((v.status(word)?.to_string(), word.clone())))
}

/// Most words a notes phrase holds and still reads as a status ("withdrew from the course for
/// medical reasons").
const STATUS_PHRASE_WORDS: usize = 7;

/// A notes cell read as a status: the whole cell a registrar code ("W", "WD (medical)") or a
/// status phrase, or one of its parts (between `;`, `,`, `.` or a line break) a status phrase:
/// a status word with only the vocabulary's `[status_context]` words around it ("excused by
/// instructor", "dropped course", "abgemeldet", "dado de baja"). A status word inside a
/// sentence about the work ("dropped filter paper in sink") is not a status.
fn notes_status(v: &Vocabulary, text: &str) -> Option<(String, String)> {
    if words(text).iter().any(|x| v.has("status_denial.words", x)) {
        return None;
    }
    let code = code_of(text);
    if let Some(meaning) = v.code(&code) {
        return Some((meaning.to_string(), code));
    }
    text.split([';', ',', '.', '\n', '!', '?'])
        .find_map(|part| status_phrase(v, &code_of(part)))
}

/// The status word of a phrase made of status and context words only, with its meaning.
fn status_phrase(v: &Vocabulary, plain: &str) -> Option<(String, String)> {
    let ws: Vec<&str> = plain.split(' ').filter(|w| !w.is_empty()).collect();
    if ws.is_empty() || ws.len() > STATUS_PHRASE_WORDS {
        return None;
    }
    let fits = |w: &&str| v.status(w).is_some() || v.has("status_context.words", w);
    if !ws.iter().all(fits) {
        return None;
    }
    ws.iter()
        .find_map(|w| Some((v.status(w)?.to_string(), (*w).to_string())))
}

/// Why the row is excused, in words for its feedback, or `None`.
pub fn reason(s: &Submission) -> Option<String> {
    let v = vocabulary::current();
    if let Some(status) = s.status.as_deref() {
        if let Some((meaning, word)) = excusing_word(&v, status) {
            let shown: String = status.trim().chars().take(40).collect();
            return Some(if word == meaning {
                format!("status \"{shown}\"")
            } else {
                format!("status \"{shown}\": {meaning}")
            });
        }
    }
    if s.status_corrected {
        return None;
    }
    let lacks = s.recovered_mass_g.is_none() || (s.mp_onset_c.is_none() && s.mp_clear_c.is_none());
    let notes = s.remarks.as_deref().filter(|_| lacks)?;
    let (_, word) = notes_status(&v, notes)?;
    Some(format!(
        "the notes say \"{word}\" and the row has nothing to grade"
    ))
}

#[cfg(test)]
mod tests {
    use super::*;

    fn row(status: Option<&str>, notes: Option<&str>, measured: bool) -> Submission {
        Submission {
            status: status.map(str::to_string),
            remarks: notes.map(str::to_string),
            recovered_mass_g: measured.then_some(1.8),
            mp_onset_c: measured.then_some(120.5),
            mp_clear_c: measured.then_some(122.0),
            ..Submission::default()
        }
    }

    #[test]
    fn a_status_word_excuses_whatever_the_row_holds() {
        for (status, said) in [
            ("W", "status \"W\": withdrawn"),
            ("W (medical)", "status \"W (medical)\": withdrawn"),
            ("WD - 10/03", "status \"WD - 10/03\": withdrawn"),
            ("W/D", "status \"W/D\": withdrawn"),
            ("wd", "status \"wd\": withdrawn"),
            ("Withdrew 10/14", "status \"Withdrew 10/14\": withdrawn"),
            ("EXCUSED (medical)", "status \"EXCUSED (medical)\""),
            ("Absent", "status \"Absent\""),
            ("dropped", "status \"dropped\": dropped the course"),
            ("exempt", "status \"exempt\""),
        ] {
            for measured in [false, true] {
                assert_eq!(
                    reason(&row(Some(status), None, measured)).as_deref(),
                    Some(said)
                );
            }
        }
    }

    #[test]
    fn other_statuses_and_negations_do_not() {
        for status in [
            "graded",
            "present",
            "not excused",
            "late",
            "wet",
            "Wk 3",
            "unexcused",
            "Unexcused absence",
            "Absent - unexcused",
            "absent (no excuse)",
            "Non-excused",
            "Excused: no",
            "excused: false",
            "Excused = N",
            "Excuse pending",
            "Excuse requested",
            "Withdrawal rejected",
            "Exemption denied",
            "Was absent, now present",
        ] {
            let why = reason(&row(Some(status), None, false));
            assert!(why.is_none(), "{status}: {why:?}");
        }
        // a code is a code only as the whole cell: "w" inside a sentence is not a withdrawal
        assert_eq!(reason(&row(Some("w/ partner"), None, false)), None);
    }

    #[test]
    fn a_notes_word_excuses_only_a_row_without_measurements() {
        assert!(reason(&row(None, Some("absent"), false)).is_some());
        assert!(reason(&row(None, Some("excused by instructor"), false)).is_some());
        assert_eq!(
            reason(&row(None, Some("absent Monday, made up Tuesday"), true)),
            None
        );
        assert_eq!(reason(&row(None, Some("excused? no"), false)), None);
    }

    /// A status word in notes is a status only as a status: the whole cell or a phrase of
    /// status words (from a trial: "dropped filter paper in sink" excused a student, and a
    /// notes cell of just "W" did not).
    #[test]
    fn notes_are_read_as_a_status_never_as_a_sentence_about_the_work() {
        for notes in [
            "W",
            "WD",
            "W (medical)",
            "dropped course",
            "Withdrew from the course",
            "absent - medical note",
            "abgemeldet",
            "dado de baja",
            "Désinscrit",
            "see email; excused by instructor",
        ] {
            assert!(reason(&row(None, Some(notes), false)).is_some(), "{notes}");
        }
        for notes in [
            "dropped filter paper in sink",
            "dropped the flask, redid it",
            "absent Monday, made up Tuesday",
            "w/ partner",
            "was absent for the melting point, used partner's value",
        ] {
            let why = reason(&row(None, Some(notes), false));
            assert!(why.is_none(), "{notes}: {why:?}");
        }
    }
}
