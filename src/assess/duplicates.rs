//! `duplicate-student`: which of a student's repeated submissions in a section counts. By
//! default the first: `Duplicates` remembers where each (section, student id) was first seen and
//! flags every later row with the same trimmed id in the same section. With the rubric's
//! `duplicates = "last"` the first pass gathers a `Repeats` plan (how many rows each repeated
//! student has, and where the last is), and every row but the last is flagged.

use std::collections::HashMap;

use crate::ingest::Submission;
pub use crate::rubric::Counted;

/// "file sheet \"S\" row N": where a row is, for a sentence.
fn where_is(source: &str, sheet: Option<&str>, row: u32) -> String {
    match sheet {
        Some(sheet) => format!("{source} sheet \"{sheet}\" row {row}"),
        None => format!("{source} row {row}"),
    }
}

/// The repeated students of a batch, gathered in the first pass: by (section, trimmed id), how
/// many rows they have and where the last one is. Holds only students who repeat.
#[derive(Clone, Debug, Default)]
pub struct Repeats {
    by_student: HashMap<(String, String), (u32, String)>,
}

impl Repeats {
    /// Takes note of a first-pass row that `Duplicates` flagged as a repeat (first counts).
    pub fn add_repeat(&mut self, s: &Submission) {
        let Some(id) = trimmed_id(s) else { return };
        let e = self
            .by_student
            .entry((s.section.clone(), id.to_string()))
            .or_insert((1, String::new()));
        e.0 += 1;
        e.1 = where_is(&s.source, s.sheet.as_deref(), s.row);
    }
}

fn trimmed_id(s: &Submission) -> Option<&str> {
    s.student_id
        .as_deref()
        .map(str::trim)
        .filter(|x| !x.is_empty())
}

/// Flags every row of a repeated student but the last, from the first pass's plan.
#[derive(Default)]
pub(super) struct LastCounts {
    seen: HashMap<(String, String), u32>,
}

impl LastCounts {
    pub(super) fn check(&mut self, s: &Submission, plan: &Repeats) -> Option<String> {
        let id = trimmed_id(s)?;
        let key = (s.section.clone(), id.to_string());
        let (total, last) = plan.by_student.get(&key)?;
        let n = self.seen.entry(key).or_default();
        *n += 1;
        (*n < *total).then(|| {
            format!(
                "this id appears again later in section {}: the last submission, at {last}, is the one that counts",
                s.section
            )
        })
    }
}

/// Where one (section, student id) was first seen; the id itself lives in `Duplicates::ids`.
#[derive(Clone, Copy)]
struct FirstSeen {
    section: u32,
    start: u32,
    len: u32,
    place: u32,
    row: u32,
}

/// Remembers where each (section, student id) was first seen, compactly: 20 bytes and the id's
/// text per student, so that a million-row term does not hold a million keyed strings.
#[derive(Default)]
pub(super) struct Duplicates {
    sections: HashMap<String, u32>,
    /// (source, sheet) of the places rows came from, in order.
    places: Vec<(String, Option<String>)>,
    ids: String,
    seen: hashbrown::HashTable<FirstSeen>,
    hasher: std::hash::RandomState,
}

impl Duplicates {
    fn intern_place(&mut self, s: &Submission) -> u32 {
        let same = self
            .places
            .last()
            .is_some_and(|(src, sheet)| *src == s.source && *sheet == s.sheet);
        if !same {
            self.places.push((s.source.clone(), s.sheet.clone()));
        }
        self.places.len() as u32 - 1
    }

    fn section(&mut self, name: &str) -> u32 {
        if let Some(&i) = self.sections.get(name) {
            return i;
        }
        let i = self.sections.len() as u32;
        self.sections.insert(name.to_string(), i);
        i
    }

    /// The note for a row whose id already appeared in its section, or `None`.
    pub(super) fn check(&mut self, s: &Submission) -> Option<String> {
        use std::hash::BuildHasher;
        let id = s
            .student_id
            .as_deref()
            .map(str::trim)
            .filter(|x| !x.is_empty())?;
        let section = self.section(&s.section);
        let place = self.intern_place(s);
        let Duplicates {
            ids,
            seen,
            hasher,
            places,
            ..
        } = self;
        let text = |e: &FirstSeen| &ids[e.start as usize..(e.start + e.len) as usize];
        let hash = hasher.hash_one((section, id));
        if let Some(first) = seen.find(hash, |e| e.section == section && text(e) == id) {
            let (source, sheet) = &places[first.place as usize];
            let at = where_is(source, sheet.as_deref(), first.row);
            return Some(format!(
                "this id already appears in section {} at {at}: the first submission is the one that counts",
                s.section
            ));
        }
        let entry = FirstSeen {
            section,
            start: ids.len() as u32,
            len: id.len() as u32,
            place,
            row: s.row,
        };
        ids.push_str(id);
        let ids: &str = ids;
        seen.insert_unique(hash, entry, |e| {
            hasher.hash_one((
                e.section,
                &ids[e.start as usize..(e.start + e.len) as usize],
            ))
        });
        None
    }
}
