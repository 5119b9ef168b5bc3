//! Assessment: each submission's recomputed measures and its flags, each flag with a reason a
//! person can read. Knows the chemistry and the rubric's tolerances, nothing of spreadsheets.

pub mod flags;
pub mod measures;

use std::collections::HashMap;

use serde::Serialize;

use crate::fields::Field;
use crate::ingest::Submission;
use crate::reference::{Compound, Library};
use crate::rubric::Tolerances;
pub use flags::{Flag, Severity};

/// What the assessment needs besides the rows.
pub struct Context<'a> {
    pub library: &'a Library,
    /// The rubric's compound, for rows that name none.
    pub default_compound: Option<&'a str>,
    /// The accepted melting point for the experiment's compound (rubric or `--reference-mp`).
    pub accepted_mp_c: Option<f64>,
    pub tolerances: &'a Tolerances,
}

/// A submission with its measures and findings.
#[derive(Clone, Debug, Serialize)]
pub struct Assessed {
    pub submission: Submission,
    /// The library's name for the compound, when found.
    pub compound: Option<String>,
    pub reference_mp_c: Option<f64>,
    pub recovery_pct: Option<f64>,
    pub range_width_c: Option<f64>,
    pub depression_c: Option<f64>,
    /// Flags in alphabetical order of their codes, each with its reason.
    pub flags: Vec<(Flag, String)>,
}

impl Assessed {
    pub fn has(&self, flag: Flag) -> bool {
        self.flags.iter().any(|(f, _)| *f == flag)
    }

    pub fn is_impossible(&self) -> bool {
        self.flags
            .iter()
            .any(|(f, _)| f.severity() == Severity::Impossible)
    }

    pub fn flag_codes(&self) -> String {
        self.flags
            .iter()
            .map(|(f, _)| f.code())
            .collect::<Vec<_>>()
            .join(";")
    }

    pub fn flag_notes(&self) -> String {
        self.flags
            .iter()
            .map(|(f, n)| format!("{}: {n}", f.code()))
            .collect::<Vec<_>>()
            .join("; ")
    }
}

/// Formats a mass in grams for a sentence: up to three decimals, trailing zeros dropped.
pub fn grams(v: f64) -> String {
    let s = format!("{v:.3}");
    let s = s.trim_end_matches('0').trim_end_matches('.');
    format!("{s} g")
}

fn celsius(v: f64) -> String {
    format!("{v:.1} °C")
}

/// The compound a row is graded against: its library entry and reference melting point,
/// or why there is none.
#[derive(Clone, Debug)]
struct Resolved<'a> {
    compound: Option<&'a Compound>,
    reference: Option<f64>,
    unknown: Option<String>,
}

fn resolve_compound<'a>(name: Option<&str>, ctx: &Context<'a>) -> Resolved<'a> {
    let Some(name) = name.or(ctx.default_compound) else {
        let why = "no compound named on the row, and the rubric names none".to_string();
        return Resolved {
            compound: None,
            reference: ctx.accepted_mp_c,
            unknown: Some(why),
        };
    };
    let Some(found) = ctx.library.lookup(name) else {
        let why = format!(
            "\"{}\" is not in the reference library; add it with --compounds FILE",
            name.trim()
        );
        return Resolved {
            compound: None,
            reference: None,
            unknown: Some(why),
        };
    };
    let is_experiment = ctx
        .default_compound
        .and_then(|d| ctx.library.lookup(d))
        .is_none_or(|d| d.cas == found.cas);
    let reference = match ctx.accepted_mp_c {
        Some(v) if is_experiment => v,
        _ => found.accepted_mp_c,
    };
    Resolved {
        compound: Some(found),
        reference: Some(reference),
        unknown: None,
    }
}

fn missing_fields(sub: &Submission) -> Vec<&'static str> {
    let mp_unreadable = sub.is_unreadable(Field::MpRange);
    let checks: [(bool, Field); 5] = [
        (sub.student_id.is_none(), Field::StudentId),
        (sub.crude_mass_g.is_none(), Field::CrudeMass),
        (sub.recovered_mass_g.is_none(), Field::RecoveredMass),
        (sub.mp_onset_c.is_none() && !mp_unreadable, Field::MpOnset),
        (sub.mp_clear_c.is_none() && !mp_unreadable, Field::MpClear),
    ];
    checks
        .iter()
        .filter(|(empty, f)| *empty && !sub.is_unreadable(*f))
        .map(|(_, f)| f.label())
        .collect()
}

fn entry_flags(a: &Assessed, t: &Tolerances, out: &mut Vec<(Flag, String)>) {
    let s = &a.submission;
    let missing = missing_fields(s);
    if !missing.is_empty() {
        out.push((
            Flag::MissingValue,
            format!("no {} given", missing.join(", ")),
        ));
    }
    if !s.unreadable.is_empty() {
        let parts: Vec<String> = s
            .unreadable
            .iter()
            .map(|u| format!("{} {} holds {}", u.field.label(), u.cell, u.found))
            .collect();
        out.push((Flag::UnreadableValue, parts.join(", ")));
    }
    let nonpositive: Vec<String> = [("crude", s.crude_mass_g), ("recovered", s.recovered_mass_g)]
        .iter()
        .filter_map(|(what, m)| {
            m.filter(|v| *v <= 0.0)
                .map(|v| format!("{what} mass {} is not positive", grams(v)))
        })
        .collect();
    if !nonpositive.is_empty() {
        out.push((Flag::NonpositiveMass, nonpositive.join(", ")));
    }
    if let (Some(c), Some(r)) = (s.crude_mass_g, s.recovered_mass_g) {
        if c > 0.0 && r > c {
            out.push((
                Flag::RecoveryOver100,
                format!("recovered {} exceeds crude {}", grams(r), grams(c)),
            ));
        }
    }
    if let (Some(o), Some(c)) = (s.mp_onset_c, s.mp_clear_c) {
        if o > c {
            out.push((
                Flag::RangeInverted,
                format!(
                    "onset {} is above the clear point {}",
                    celsius(o),
                    celsius(c)
                ),
            ));
        }
    }
    if let (Some(r), Some(c)) = (a.reference_mp_c, s.mp_clear_c) {
        if c > r + t.above_reference_c {
            out.push((
                Flag::AboveReference,
                format!(
                    "clear point {} is {:.1} °C above the reference {} (tolerance {:.1} °C)",
                    celsius(c),
                    c - r,
                    celsius(r),
                    t.above_reference_c
                ),
            ));
        }
    }
}

fn suspicion_flags(a: &Assessed, t: &Tolerances, out: &mut Vec<(Flag, String)>) {
    let s = &a.submission;
    if let (Some(reported), Some(rec)) = (s.reported_recovery_pct, a.recovery_pct) {
        let (as_pct, _) = measures::reported_as_percent(reported, rec, t.recovery_mismatch_pct);
        if (as_pct - rec).abs() > t.recovery_mismatch_pct {
            out.push((
                Flag::RecoveryMismatch,
                format!(
                    "reported {:.1} % but 100 x {} / {} = {:.1} %",
                    as_pct,
                    grams(s.recovered_mass_g.unwrap_or(0.0)).trim_end_matches(" g"),
                    grams(s.crude_mass_g.unwrap_or(0.0)).trim_end_matches(" g"),
                    rec
                ),
            ));
        }
    }
    let broad = a.range_width_c.filter(|w| *w > t.impure_width_c);
    let depressed = a.depression_c.filter(|d| *d > t.impure_depression_c);
    let mut why = Vec::new();
    if let Some(w) = broad {
        why.push(format!(
            "the range is {w:.1} °C wide (limit {:.1})",
            t.impure_width_c
        ));
    }
    if let Some(d) = depressed {
        why.push(format!(
            "the clear point is {d:.1} °C below the reference (limit {:.1})",
            t.impure_depression_c
        ));
    }
    if !why.is_empty() {
        match a.recovery_pct.filter(|r| *r >= t.wet_recovery_pct) {
            Some(r) => out.push((
                Flag::LikelyWet,
                format!("recovery {r:.1} % (at or above {:.0} %) and {}: solvent likely left in the crystals; dry to constant mass", t.wet_recovery_pct, why.join(" and ")),
            )),
            None => out.push((Flag::LikelyImpure, format!("{} at a normal mass", why.join(" and ")))),
        }
    }
    if let Some(r) = a
        .recovery_pct
        .filter(|r| *r >= 0.0 && *r < t.low_recovery_pct)
    {
        out.push((
            Flag::LowRecovery,
            format!("recovery {r:.1} % is below {:.0} %", t.low_recovery_pct),
        ));
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
struct Duplicates {
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
    fn check(&mut self, s: &Submission) -> Option<String> {
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

/// Assesses submissions one at a time, in batch order, remembering what `duplicate-student`
/// needs and caching compound look-ups (a class names few compounds).
pub struct Assessor<'a> {
    ctx: Context<'a>,
    duplicates: Duplicates,
    compounds: HashMap<String, Resolved<'a>>,
    default: Resolved<'a>,
}

impl<'a> Assessor<'a> {
    pub fn new(ctx: Context<'a>) -> Assessor<'a> {
        let default = resolve_compound(None, &ctx);
        Assessor {
            ctx,
            duplicates: Duplicates::default(),
            compounds: HashMap::new(),
            default,
        }
    }

    fn resolve(&mut self, name: Option<&str>) -> Resolved<'a> {
        let Some(name) = name.filter(|s| !s.trim().is_empty()) else {
            return self.default.clone();
        };
        if let Some(r) = self.compounds.get(name) {
            return r.clone();
        }
        let r = resolve_compound(Some(name), &self.ctx);
        self.compounds.insert(name.to_string(), r.clone());
        r
    }

    /// Assesses the next submission of the batch.
    pub fn assess(&mut self, sub: Submission) -> Assessed {
        let resolved = self.resolve(sub.compound.as_deref());
        let t = self.ctx.tolerances;
        let mut a = Assessed {
            recovery_pct: measures::recovery_pct(sub.crude_mass_g, sub.recovered_mass_g),
            range_width_c: measures::range_width_c(sub.mp_onset_c, sub.mp_clear_c),
            depression_c: measures::depression_c(resolved.reference, sub.mp_clear_c),
            compound: resolved.compound.map(|c| c.name.clone()),
            reference_mp_c: resolved.reference,
            submission: sub,
            flags: Vec::new(),
        };
        let mut flags = Vec::new();
        if let Some(why) = resolved.unknown {
            flags.push((Flag::UnknownCompound, why));
        }
        if let (Some(reported), Some(rec)) = (a.submission.reported_recovery_pct, a.recovery_pct) {
            if measures::reported_as_percent(reported, rec, t.recovery_mismatch_pct).1 {
                a.submission.notes.push(format!(
                    "reported recovery {reported} read as a fraction ({:.1} %)",
                    reported * 100.0
                ));
            }
        }
        entry_flags(&a, t, &mut flags);
        suspicion_flags(&a, t, &mut flags);
        if let Some(why) = self.duplicates.check(&a.submission) {
            flags.push((Flag::DuplicateStudent, why));
        }
        flags.sort_by_key(|(f, _)| f.code());
        a.flags = flags;
        a
    }
}

/// Assesses a whole batch held in memory (the streaming `Assessor` does the work).
pub fn assess_all(subs: Vec<Submission>, ctx: Context) -> Vec<Assessed> {
    let mut assessor = Assessor::new(ctx);
    subs.into_iter().map(|s| assessor.assess(s)).collect()
}

#[cfg(test)]
mod tests;
