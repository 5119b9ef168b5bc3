//! `duplicate-student`: remembers where each (section, student id) was first seen, so that
//! every later row with the same trimmed id in the same section is flagged.

use std::collections::HashMap;

use crate::ingest::Submission;

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
            let at = match &places[first.place as usize] {
                (source, Some(sheet)) => format!("{source} sheet \"{sheet}\" row {}", first.row),
                (source, None) => format!("{source} row {}", first.row),
            };
            return Some(format!(
                "this id already appears in section {} at {}",
                s.section, at
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
