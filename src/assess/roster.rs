//! Submissions against the roster: a row whose id is not enrolled (with the enrolled id it was
//! most likely meant to be), a name that is not the enrolled student's, a student graded in a
//! section other than their own, and the enrolled students of whom no row was read.
//!
//! Typed ids go wrong in two ways above all (common practice in data entry): one character
//! wrong, left out or added, and two adjacent characters swapped. An id within one such slip
//! of an enrolled id whose name agrees is offered as the likely one; the grader confirms it.

use std::collections::{HashMap, HashSet};

use crate::ingest::roster::Enrolled;
use crate::ingest::Submission;
use crate::model::Flag;

/// The enrolled students, by id.
#[derive(Clone, Debug, Default)]
pub struct Roster {
    students: Vec<Enrolled>,
    by_id: HashMap<String, usize>,
    /// Numeric ids without their leading zeros, where that names one student: a spreadsheet
    /// that stores an id as a number drops them ("0012345" is typed, 12345 is kept).
    by_number: HashMap<String, usize>,
    /// The file it was read from, for the rows it adds.
    pub source: String,
    /// Every id's slip keys (`slip_keys`) with the student's index, sorted: the students one
    /// typing slip from an id share a key with it, so they are found without comparing the
    /// id with every enrolled one (a roster of 10,000 with 190 mistyped rows took seconds).
    slips: Vec<(u64, usize)>,
    /// Students whose id is too long to key (`KEYED_CHARS`), compared with every id.
    unkeyed: Vec<usize>,
    /// A roster section written in full ("CHEM 2299 Lab 101") by the section key of its last
    /// number-word ("101"), as a sheet names it: only where that number is one section's alone
    /// and no roster section is that number itself.
    short: HashMap<String, String>,
}

/// Ids longer than this many characters are not keyed (an id pasted with a paragraph).
const KEYED_CHARS: usize = 64;

impl Roster {
    pub fn new(students: Vec<Enrolled>, source: &str) -> Roster {
        let by_id = students
            .iter()
            .enumerate()
            .map(|(i, s)| (s.id.trim().to_string(), i))
            .collect();
        let mut by_number: HashMap<String, usize> = HashMap::new();
        let mut twice = HashSet::new();
        for (i, s) in students.iter().enumerate() {
            if let Some(n) = without_zeros(&s.id) {
                if by_number.insert(n.clone(), i).is_some() {
                    twice.insert(n);
                }
            }
        }
        by_number.retain(|n, _| !twice.contains(n));
        let (mut slips, mut unkeyed) = (Vec::new(), Vec::new());
        for (i, s) in students.iter().enumerate() {
            match slip_keys(&s.id) {
                Some(keys) => slips.extend(keys.into_iter().map(|k| (k, i))),
                None => unkeyed.push(i),
            }
        }
        slips.sort_unstable();
        slips.dedup();
        let short = short_sections(&students);
        Roster {
            students,
            by_id,
            by_number,
            source: source.to_string(),
            slips,
            unkeyed,
            short,
        }
    }

    /// Whether a row submitted in section `submitted` is in the enrolled section `enrolled`:
    /// the same section key (`model::section_key`), or a sheet's short name ("101", "Section
    /// 101") for a roster section written in full ("CHEM 2299 Lab 101") whose last number-word
    /// it is, where no other roster section ends in that number or is that number.
    pub fn same_section(&self, enrolled: &str, submitted: &str) -> bool {
        let (e, s) = (
            crate::model::section_key(enrolled),
            crate::model::section_key(submitted),
        );
        e == s || self.short.get(&s).is_some_and(|full| *full == e)
    }

    /// The section key a sheet would name a roster section by, where it is written in full
    /// and its last number-word names it alone ("CHEM 2299 Lab 101": the key of "101").
    pub fn short_key(&self, enrolled: &str) -> Option<&str> {
        let e = crate::model::section_key(enrolled);
        self.short
            .iter()
            .find(|(_, full)| **full == e)
            .map(|(short, _)| short.as_str())
    }

    /// The students whose id may be one typing slip from `id` (a superset, in roster order):
    /// those sharing a slip key with it, and those whose id is not keyed.
    fn near(&self, id: &str) -> Vec<usize> {
        let Some(keys) = slip_keys(id) else {
            return (0..self.students.len()).collect();
        };
        let mut near = self.unkeyed.clone();
        for k in keys {
            let from = self.slips.partition_point(|(x, _)| *x < k);
            near.extend(
                self.slips[from..]
                    .iter()
                    .take_while(|(x, _)| *x == k)
                    .map(|(_, i)| *i),
            );
        }
        near.sort_unstable();
        near.dedup();
        near
    }

    pub fn students(&self) -> &[Enrolled] {
        &self.students
    }

    pub fn get(&self, id: &str) -> Option<&Enrolled> {
        self.by_id.get(id.trim()).map(|&i| &self.students[i])
    }

    /// Writes a row's id as the roster does where the sheet lost its leading zeros (12345 for
    /// "0012345"), with a note, and fills in the rostered assistant where the sheet has none.
    pub fn settle(&self, s: &mut Submission) {
        let Some(id) = s.student_id.as_deref().map(str::trim) else {
            return;
        };
        if self.get(id).is_none() {
            if let Some(e) = without_zeros(id).and_then(|n| self.by_number.get(&n)) {
                let e = &self.students[*e];
                s.notes.push(format!(
                    "id {id} read as the roster's {} (a spreadsheet drops a number's leading zeros)",
                    e.id
                ));
                s.student_id = Some(e.id.clone());
            }
        }
        let Some(e) = s.student_id.as_deref().and_then(|id| self.get(id)) else {
            return;
        };
        if s.assistant.is_none() {
            s.assistant.clone_from(&e.assistant);
        }
    }

    /// The roster's flags for a submission: `not-on-roster` (with the likely enrolled id),
    /// `name-mismatch`, `other-section`.
    pub fn flags(&self, s: &Submission) -> Vec<(Flag, String)> {
        let Some(id) = s.student_id.as_deref().map(str::trim) else {
            return Vec::new();
        };
        let Some(enrolled) = self.get(id) else {
            return vec![(Flag::NotOnRoster, self.not_on_roster(id, s))];
        };
        let mut out = Vec::new();
        if let (Some(given), Some(listed)) = (s.student_name.as_deref(), enrolled.name.as_deref()) {
            if !same_person(given, listed) {
                out.push((
                    Flag::NameMismatch,
                    "the roster lists another name for this id".to_string(),
                ));
            }
        }
        if let Some(section) = &enrolled.section {
            if !self.same_section(section, &s.section) {
                out.push((
                    Flag::OtherSection,
                    format!(
                        "enrolled in section {section}, submitted in section {}; graded where it was submitted",
                        s.section
                    ),
                ));
            }
        }
        out
    }

    /// The one enrolled student a row not on the roster is likely to be: an id one typing
    /// slip away whose name agrees; `None` when there is none, or more than one.
    pub fn likely(&self, s: &Submission) -> Option<&Enrolled> {
        let id = s.student_id.as_deref()?.trim();
        if self.get(id).is_some() {
            return None;
        }
        let near: Vec<&Enrolled> = self
            .near(id)
            .into_iter()
            .map(|i| &self.students[i])
            .filter(|e| one_slip(id, &e.id))
            .filter(|e| match (s.student_name.as_deref(), e.name.as_deref()) {
                (Some(a), Some(b)) => same_person(a, b),
                _ => false,
            })
            .collect();
        match near.as_slice() {
            [one] => Some(one),
            _ => None,
        }
    }

    fn not_on_roster(&self, id: &str, s: &Submission) -> String {
        match self.likely(s) {
            Some(one) => format!(
                "id {id} is not on the roster; {SLIP_FROM}{}{NAME_AGREES}: confirm with a correction",
                one.id
            ),
            None => format!("id {id} is not on the roster; no enrolled id within one typing slip has this name"),
        }
    }

    /// The enrolled students none of whose ids is in `seen` (trimmed ids), in roster order.
    pub fn missing<'a>(&'a self, seen: &'a HashSet<String>) -> impl Iterator<Item = &'a Enrolled> {
        self.students.iter().filter(|e| !seen.contains(e.id.trim()))
    }
}

/// The roster's sections written in full, by the section key of their last number-word, where
/// that is unambiguous: no two sections end in the same number, and no section is the number
/// itself (then a sheet's "101" could be either).
fn short_sections(students: &[Enrolled]) -> HashMap<String, String> {
    use crate::model::section_key;
    let mut labels: Vec<&str> = students
        .iter()
        .filter_map(|s| s.section.as_deref())
        .collect();
    labels.sort_unstable();
    labels.dedup();
    let fulls: HashSet<String> = labels.iter().map(|l| section_key(l)).collect();
    let mut short: HashMap<String, Option<String>> = HashMap::new();
    for label in labels {
        let Some(number) = label
            .split(|c: char| !c.is_alphanumeric())
            .rfind(|w| !w.is_empty() && w.bytes().all(|b| b.is_ascii_digit()))
        else {
            continue;
        };
        let (k, full) = (section_key(number), section_key(label));
        if k == full {
            continue;
        }
        short
            .entry(k)
            .and_modify(|f| {
                if f.as_deref() != Some(full.as_str()) {
                    *f = None;
                }
            })
            .or_insert(Some(full));
    }
    short
        .into_iter()
        .filter(|(k, _)| !fulls.contains(k))
        .filter_map(|(k, f)| f.map(|f| (k, f)))
        .collect()
}

/// The words of a `not-on-roster` note around the likely enrolled id.
const SLIP_FROM: &str = "it is one typing slip from ";
const NAME_AGREES: &str = ", whose name agrees";

/// The enrolled id a `not-on-roster` note names as the likely one, if it names one (for the
/// workspace page's one-click correction, which reads the run's results).
pub fn likely_in_note(note: &str) -> Option<&str> {
    let (_, after) = note.split_once(SLIP_FROM)?;
    let (id, _) = after.rsplit_once(NAME_AGREES)?;
    Some(id).filter(|id| !id.is_empty())
}

/// A numeric id without its leading zeros ("0012345" and "12345" are "12345"); `None` for an
/// id that is not all digits.
fn without_zeros(id: &str) -> Option<String> {
    let id = id.trim();
    let digits = !id.is_empty() && id.bytes().all(|b| b.is_ascii_digit());
    digits.then(|| {
        let n = id.trim_start_matches('0');
        if n.is_empty() { "0" } else { n }.to_string()
    })
}

/// Whether two ids differ by one typing slip: one character changed, left out or added, or two
/// adjacent characters swapped (the optimal string alignment distance is 1).
pub fn one_slip(a: &str, b: &str) -> bool {
    let (a, b): (Vec<char>, Vec<char>) = (a.trim().chars().collect(), b.trim().chars().collect());
    if a == b {
        return false;
    }
    match a.len() as i64 - b.len() as i64 {
        0 => {
            let diff: Vec<usize> = (0..a.len()).filter(|&i| a[i] != b[i]).collect();
            match diff.as_slice() {
                [_] => true,
                [i, j] => *j == i + 1 && a[*i] == b[*j] && a[*j] == b[*i],
                _ => false,
            }
        }
        1 => dropped_one(&a, &b),
        -1 => dropped_one(&b, &a),
        _ => false,
    }
}

/// The keys of an id (trimmed) that any id one typing slip away shares: the id's hash and the
/// hash of each one-character deletion of it. A changed or swapped character leaves both ids
/// with a deletion in common; a dropped one makes the shorter id a deletion of the longer.
/// `None` for an id longer than `KEYED_CHARS`.
fn slip_keys(id: &str) -> Option<Vec<u64>> {
    use std::hash::{Hash, Hasher};
    let chars: Vec<char> = id.trim().chars().collect();
    if chars.len() > KEYED_CHARS {
        return None;
    }
    let hash = |skip: Option<usize>| {
        let mut h = rustc_hash::FxHasher::default();
        for (i, c) in chars.iter().enumerate() {
            if Some(i) != skip {
                c.hash(&mut h);
            }
        }
        h.finish()
    };
    let mut keys: Vec<u64> = std::iter::once(hash(None))
        .chain((0..chars.len()).map(|i| hash(Some(i))))
        .collect();
    keys.sort_unstable();
    keys.dedup();
    Some(keys)
}

/// Whether `short` is `long` with one character left out.
fn dropped_one(long: &[char], short: &[char]) -> bool {
    let first = (0..short.len())
        .find(|&i| long[i] != short[i])
        .unwrap_or(short.len());
    long[first + 1..] == short[first..]
}

/// Whether two names are one person's: compared without case, accents or punctuation, and in
/// any order of their parts ("Pérez, Ana" is "ana perez"). Punctuation inside a name may be
/// typed or left out: "O'Neil" is "ONeil" and "O Neil", "Delacroix-Navarro" is
/// "DelacroixNavarro" and "Delacroix Navarro" (common practice: registrars and assistants
/// differ on apostrophes, hyphens and initials' points).
pub fn same_person(a: &str, b: &str) -> bool {
    let (a, b) = (crate::model::names::fold(a), crate::model::names::fold(b));
    // apostrophes and points join (O'Neil, St.John), hyphens too in the last reading
    let joiners: [&dyn Fn(char) -> bool; 3] = [
        &|_| false,
        &|c| matches!(c, '\'' | '\u{2019}' | '\u{02BC}' | '`' | '.'),
        &|c| {
            matches!(
                c,
                '\'' | '\u{2019}' | '\u{02BC}' | '`' | '.' | '-' | '\u{2010}'
            )
        },
    ];
    joiners.iter().any(|joins| {
        let (pa, pb) = (name_parts(&a, joins), name_parts(&b, joins));
        !pa.is_empty() && pa == pb
    })
}

/// A folded name's parts, sorted: split at every character that is not a letter or digit,
/// with the characters `joins` accepts left out instead.
fn name_parts(folded: &str, joins: &dyn Fn(char) -> bool) -> Vec<String> {
    let kept: String = folded.chars().filter(|c| !joins(*c)).collect();
    let mut p: Vec<String> = kept
        .split(|c: char| !c.is_alphanumeric())
        .filter(|w| !w.is_empty())
        .map(str::to_string)
        .collect();
    p.sort();
    p
}

#[cfg(test)]
mod tests {
    use super::*;

    fn enrolled(id: &str, name: &str, section: &str) -> Enrolled {
        Enrolled {
            id: id.into(),
            name: Some(name.into()),
            section: Some(section.into()),
            assistant: None,
            place: String::new(),
        }
    }

    fn roster(sections: &[&str]) -> Roster {
        let students = sections
            .iter()
            .enumerate()
            .map(|(i, s)| enrolled(&format!("90{i}"), "Vela Marsh", s))
            .collect();
        Roster::new(students, "roster.csv")
    }

    /// A roster section written in full is the sheet's short name for it only where its last
    /// number-word names one section alone (invented course numbers).
    #[test]
    fn a_section_written_in_full_is_its_last_number_where_that_is_unambiguous() {
        let r = roster(&["CHEM 2299 Lab 101", "CHEM 2299 Lab 102"]);
        assert!(r.same_section("CHEM 2299 Lab 101", "101"));
        assert!(r.same_section("CHEM 2299 Lab 101", "Section 101"));
        assert!(r.same_section("CHEM 2299 Lab 101", "chem 2299 lab 101"));
        assert!(!r.same_section("CHEM 2299 Lab 101", "102"));
        assert!(!r.same_section("CHEM 2299 Lab 101", "2299"));
        assert_eq!(r.short_key("CHEM 2299 Lab 102"), Some("102"));
        // two courses' sections ending in 101: a sheet's "101" could be either
        let two = roster(&["CHEM 2299 Lab 101", "CHEM 2300 Lab 101"]);
        assert!(!two.same_section("CHEM 2299 Lab 101", "101"));
        assert_eq!(two.short_key("CHEM 2299 Lab 101"), None);
        // a roster section that is "101" itself: the sheet's "101" is that one
        let both = roster(&["101", "CHEM 2299 Lab 101"]);
        assert!(!both.same_section("CHEM 2299 Lab 101", "101"));
        assert!(both.same_section("101", "Sec 101"));
        // the flag follows
        let sub = Submission {
            student_id: Some("900".into()),
            student_name: Some("Vela Marsh".into()),
            section: "101".into(),
            ..Submission::default()
        };
        assert!(r.flags(&sub).is_empty());
        assert_eq!(two.flags(&sub)[0].0, Flag::OtherSection);
    }

    #[test]
    fn typing_slips_are_one_edit_or_one_swap() {
        // common practice (Damerau's single errors): a transposition, a dropped, added or
        // changed character
        assert!(one_slip("2026143", "2026134"));
        assert!(one_slip("202614", "2026143"));
        assert!(one_slip("20261433", "2026143"));
        assert!(one_slip("2026153", "2026143"));
        assert!(!one_slip("2026143", "2026143"));
        assert!(!one_slip("2026143", "2061243"));
        assert!(!one_slip("2026143", "2026314"));
        assert!(!one_slip("20261", "2026143"));
    }

    #[test]
    fn the_keyed_search_finds_every_id_one_slip_away() {
        // every enrolled id within one slip of a typed id shares a key with it: checked against
        // comparing with every id, over ids of 1-3 characters from a small alphabet
        let ids: Vec<String> = ["a", "b", "ab"]
            .iter()
            .flat_map(|p| ["", "a", "b", "c", "ab", "ba"].map(|q| format!("{p}{q}")))
            .collect();
        let mut seen = HashSet::new();
        let students: Vec<Enrolled> = ids
            .iter()
            .filter(|id| seen.insert((*id).clone()))
            .map(|id| enrolled(id, "X Y", "1"))
            .collect();
        let long = "7".repeat(KEYED_CHARS + 1);
        let mut with_long = students.clone();
        with_long.push(enrolled(&long, "X Y", "1"));
        let r = Roster::new(with_long, "roster.csv");
        for typed in ids.iter().chain([&"abc".to_string(), &"cab".to_string()]) {
            let all: Vec<usize> = (0..r.students.len())
                .filter(|&i| one_slip(typed, &r.students[i].id))
                .collect();
            let keyed: Vec<usize> = r
                .near(typed)
                .into_iter()
                .filter(|&i| one_slip(typed, &r.students[i].id))
                .collect();
            assert_eq!(keyed, all, "{typed}");
        }
        // a long id is compared with every id, and is found one slip from its neighbour
        let near_long = "7".repeat(KEYED_CHARS);
        assert!(r.near(&near_long).contains(&(r.students.len() - 1)));
    }

    #[test]
    fn names_agree_without_case_accents_punctuation_or_order() {
        assert!(same_person("Pérez, Ana", "ana perez"));
        assert!(same_person("O'Neil Bo", "bo o neil"));
        // punctuation typed or left out (an apostrophe, a hyphen): the same person
        assert!(same_person("O'Neil, Siobhán", "Siobhan ONeil"));
        assert!(same_person(
            "Delacroix-Navarro, Renée",
            "RENEE DELACROIX NAVARRO"
        ));
        assert!(same_person(
            "Delacroix-Navarro, Renée",
            "Renee DelacroixNavarro"
        ));
        assert!(same_person("D'Angelo-Smith, Al", "Al DAngelo Smith"));
        assert!(!same_person("O'Neil, Siobhán", "Siobhan Neil"));
        assert!(!same_person("Ana Perez", "Ana Pereira"));
        assert!(!same_person("", ""));
    }

    #[test]
    fn flags_name_the_likely_id_the_name_and_the_section() {
        let r = Roster::new(
            vec![
                enrolled("2026143", "Quinn Marchetti", "01"),
                enrolled("2026150", "Yusuf Galloway", "02"),
            ],
            "roster.csv",
        );
        let sub = |id: &str, name: &str, section: &str| Submission {
            student_id: Some(id.into()),
            student_name: Some(name.into()),
            section: section.into(),
            ..Submission::default()
        };
        let f = r.flags(&sub("2026134", "Marchetti, Quinn", "Sec 01"));
        assert_eq!(f.len(), 1);
        assert_eq!(f[0].0, Flag::NotOnRoster);
        assert!(
            f[0].1.contains("one typing slip from 2026143"),
            "{}",
            f[0].1
        );
        // the workspace page reads the likely id back from the note as results carry it
        let note = format!("not-on-roster: {}", f[0].1);
        assert_eq!(likely_in_note(&note), Some("2026143"));
        // a near id whose name disagrees is not offered
        let f = r.flags(&sub("2026134", "Someone Else", "01"));
        assert!(f[0].1.contains("no enrolled id"), "{}", f[0].1);
        assert_eq!(likely_in_note(&f[0].1), None);
        assert!(r
            .flags(&sub("2026143", "Quinn Marchetti", "Section 1"))
            .is_empty());
        let f = r.flags(&sub("2026143", "Quinn Marcetti", "02"));
        let codes: Vec<Flag> = f.iter().map(|x| x.0).collect();
        assert_eq!(codes, vec![Flag::NameMismatch, Flag::OtherSection]);
        let seen: HashSet<String> = ["2026143".to_string()].into();
        let missing: Vec<&str> = r.missing(&seen).map(|e| e.id.as_str()).collect();
        assert_eq!(missing, vec!["2026150"]);
    }
}
