//! Assessment: each submission's recomputed measures, physical-chemistry estimates and flags,
//! each flag with a reason a person can read. Knows the chemistry and the rubric's tolerances,
//! nothing of spreadsheets.

pub mod accepted;
pub mod calibration;
pub mod duplicates;
pub mod excused;
mod judge;
pub mod measures;
pub mod physchem;
pub mod roster;
pub mod unknowns;
pub mod workup;

use std::collections::HashMap;

pub use crate::stats::outlier::Centres;

use crate::fields::Field;
use crate::ingest::Submission;
pub use crate::model::{Assessed, Flag, Severity, Workup};
use crate::reference::{Compound, Library};
use crate::rubric::{Experiment, Tolerances};
pub use accepted::{Reference, ReferenceRule};
pub use calibration::Calibration;
use duplicates::{Counted, Duplicates, LastCounts, Repeats};

/// What the assessment needs besides the rows.
pub struct Context<'a> {
    pub library: &'a Library,
    pub experiment: &'a Experiment,
    /// How the experiment compound's reference is chosen.
    pub reference: ReferenceRule,
    pub tolerances: &'a Tolerances,
    pub calibration: Option<&'a Calibration>,
    /// Each section's centres, for `outlier`.
    pub centres: Option<&'a Centres>,
    /// Which repeated submission counts, and (for the last) the first pass's plan of repeats;
    /// without a plan the first counts.
    pub counted: Counted,
    pub repeats: Option<&'a Repeats>,
    /// The answer key for unknowns, if one was given.
    pub key: Option<&'a unknowns::Key>,
}

/// Why a row is an outlier in its section, or nothing.
fn outlier_note(centres: &Centres, a: &Assessed) -> Option<String> {
    let why: Vec<String> = centres
        .far(a)
        .into_iter()
        .map(|f| {
            let (what, unit, v, z) = (f.measure.noun(), f.measure.unit(), f.value, f.z);
            let (med, spread) = (f.centre.median, f.centre.spread());
            format!("{what} {v:.1} {unit} is {z:+.1} robust z from the section's median {med:.1} {unit} ({spread})")
        })
        .collect();
    (!why.is_empty()).then(|| why.join(" and "))
}

/// Formats a mass in grams for a sentence: up to three decimals, trailing zeros dropped.
pub fn grams(v: f64) -> String {
    let s = format!("{v:.3}");
    let s = s.trim_end_matches('0').trim_end_matches('.');
    format!("{s} g")
}

pub(crate) fn celsius(v: f64) -> String {
    format!("{v:.1} °C")
}

/// The compound a row is graded against: its library entry and reference, or why there is none.
#[derive(Clone, Debug)]
struct Resolved<'a> {
    compound: Option<&'a Compound>,
    reference: Option<Reference>,
    unknown: Option<String>,
}

fn resolve_compound<'a>(name: Option<&str>, ctx: &Context<'a>) -> Resolved<'a> {
    let default = ctx.experiment.compound.as_deref();
    let Some(name) = name.or(default) else {
        let reference = match ctx.reference {
            ReferenceRule::Value(v) => Some(Reference::Point(v)),
            ReferenceRule::Range(lo, hi) => Some(Reference::Range(lo, hi)),
            _ => None,
        };
        let why = "no compound named on the row, and the rubric names none".to_string();
        return Resolved {
            compound: None,
            reference,
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
    let is_experiment = default
        .and_then(|d| ctx.library.lookup(d))
        .is_none_or(|d| d.cas == found.cas);
    let rule = if is_experiment {
        &ctx.reference
    } else {
        &ReferenceRule::Accepted
    };
    // a rule that cannot apply was refused when the configuration was built
    let reference =
        accepted::reference_for(found, rule).unwrap_or(Reference::Point(found.accepted_mp_c));
    Resolved {
        compound: Some(found),
        reference: Some(reference),
        unknown: None,
    }
}

/// Assesses submissions one at a time, in batch order, remembering what `duplicate-student`
/// needs and caching compound look-ups (a class names few compounds).
pub struct Assessor<'a> {
    ctx: Context<'a>,
    duplicates: Duplicates,
    last_counts: LastCounts,
    /// Calibration keys of the apparatus (or benches) the rows named.
    apparatus_seen: std::collections::BTreeSet<String>,
    compounds: HashMap<String, Resolved<'a>>,
    default: Resolved<'a>,
    /// Each section's label as first seen, by `section_key`: "01" and "Sec 01" are one section.
    sections: HashMap<String, String>,
    /// Every spelling met, with the section it was read as.
    spellings: HashMap<String, String>,
    /// The spellings read as a section first seen under another, in the order met.
    merged: Vec<SectionMerge>,
}

/// A section label read as a section first seen under another spelling ("sec a" as "Sec A").
#[derive(Clone, Debug)]
pub struct SectionMerge {
    pub label: String,
    pub read_as: String,
    /// Where the spelling was first met.
    pub source: String,
    pub sheet: Option<String>,
    pub row: u32,
}

/// Readings after calibration, and what was done to them.
struct Readings {
    onset: Option<f64>,
    clear: Option<f64>,
    note: Option<String>,
    outside_span: Option<String>,
}

impl<'a> Assessor<'a> {
    pub fn new(ctx: Context<'a>) -> Assessor<'a> {
        let default = resolve_compound(None, &ctx);
        Assessor {
            ctx,
            duplicates: Duplicates::default(),
            last_counts: LastCounts::default(),
            apparatus_seen: std::collections::BTreeSet::default(),
            compounds: HashMap::new(),
            default,
            sections: HashMap::new(),
            spellings: HashMap::new(),
            merged: Vec::new(),
        }
    }

    /// Calibration keys of every apparatus (or bench) named so far.
    pub fn apparatus_seen(&self) -> &std::collections::BTreeSet<String> {
        &self.apparatus_seen
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

    fn calibrate(&mut self, s: &Submission) -> Readings {
        let plain = Readings {
            onset: s.mp_onset_c,
            clear: s.mp_clear_c,
            note: None,
            outside_span: None,
        };
        let Some(cal) = self.ctx.calibration else {
            return plain;
        };
        let key = if cal.keyed_by == Field::Apparatus {
            s.apparatus.as_deref()
        } else {
            s.bench.as_deref()
        };
        if let Some(k) = key {
            self.apparatus_seen.insert(crate::model::bench_key(k));
        }
        let Some(calibration::ApparatusFit { name, fit, .. }) = cal.fit_for(key) else {
            let what = cal.keyed_by.label();
            let note = match key {
                Some(k) => format!("no calibration for {what} {k}; readings uncorrected"),
                None => format!("no {what} given; readings uncorrected"),
            };
            return Readings {
                note: Some(note),
                ..plain
            };
        };
        let margin = self.ctx.tolerances.calibration_margin_c;
        let outside: Vec<String> = [s.mp_onset_c, s.mp_clear_c]
            .into_iter()
            .flatten()
            .filter(|t| !fit.covers(*t, margin))
            .map(|t| format!("{t:.1} °C"))
            .collect();
        let who = if name.chars().all(|c| c.is_ascii_digit()) {
            format!("{} {name}", cal.keyed_by.label())
        } else {
            name.clone()
        };
        let outside_span = (!outside.is_empty()).then(|| {
            let (noun, verb) = if outside.len() == 1 {
                ("reading", "lies")
            } else {
                ("readings", "lie")
            };
            format!(
                "{noun} {} {verb} outside the span of {who}'s standards ({:.1}-{:.1} °C)",
                outside.join(" and "),
                fit.lo,
                fit.hi
            )
        });
        Readings {
            onset: s.mp_onset_c.map(|t| fit.correct(t)),
            clear: s.mp_clear_c.map(|t| fit.correct(t)),
            note: Some(format!("{who}: {}", fit.describe())),
            outside_span,
        }
    }

    fn solvent_bounds(
        &self,
        s: &Submission,
        compound: Option<&Compound>,
    ) -> (Option<f64>, Option<f64>) {
        let exp = self.ctx.experiment;
        let solvent = s.solvent.as_deref().unwrap_or(&exp.solvent);
        let (Some(c), Some(crude)) = (compound, s.crude_mass_g.filter(|m| *m > 0.0)) else {
            return (None, None);
        };
        if !solvent.trim().eq_ignore_ascii_case("water") {
            return (None, None);
        }
        let cold = physchem::solubility_at(&c.solubility, exp.cold_c);
        let hot = physchem::solubility_at(&c.solubility, exp.hot_c);
        let ceiling = cold
            .zip(s.solvent_volume_ml)
            .map(|(sc, v)| physchem::max_recovery_pct(crude, sc, v));
        (ceiling, hot.map(|sh| physchem::min_solvent_ml(crude, sh)))
    }

    /// The row's flags, from the assessment and what came before it; none for an excused
    /// student, against whom nothing about the row is held.
    fn flags(
        &mut self,
        a: &Assessed,
        unknown: Option<String>,
        outside_span: Option<String>,
        more: Vec<(Flag, String)>,
    ) -> Vec<(Flag, String)> {
        let t = self.ctx.tolerances;
        let mut flags = more;
        if let Some(why) = unknown {
            flags.push((Flag::UnknownCompound, why));
        }
        if let Some(why) = outside_span {
            flags.push((Flag::OutsideCalibratedSpan, why));
        }
        judge::impossible(a, t, &mut flags);
        judge::suspicious(a, t, &mut flags);
        let repeat = match (self.ctx.counted, self.ctx.repeats) {
            (Counted::Last, Some(plan)) => self.last_counts.check(&a.submission, plan),
            _ => self.duplicates.check(&a.submission),
        };
        if let Some(why) = repeat {
            flags.push((Flag::DuplicateStudent, why));
        }
        let impossible = flags
            .iter()
            .any(|(f, _)| f.severity() == Severity::Impossible);
        if let (false, Some(c)) = (impossible, self.ctx.centres) {
            if let Some(why) = outlier_note(c, a) {
                flags.push((Flag::Outlier, why));
            }
        }
        if let (true, Some(_)) = (a.submission.single_reading, a.mp_clear_c) {
            flags.push((
                Flag::SingleReading,
                format!(
                    "{}, not a range: it is used as the clear point",
                    crate::model::measure::one_temperature(a)
                ),
            ));
        }
        // nothing about the row is held against an excused student, and a row made from the
        // roster for a student who submitted nothing has nothing to judge
        if a.excused.is_some() || a.submission.no_submission {
            flags.clear();
        }
        flags
    }

    /// Section labels read as a section first seen under another spelling.
    pub fn merged_sections(&self) -> &[SectionMerge] {
        &self.merged
    }

    /// The section's label as first seen in the batch; a new spelling of it is recorded.
    fn section(&mut self, sub: &Submission) -> String {
        if let Some(known) = self.spellings.get(&sub.section) {
            return known.clone();
        }
        let label = &sub.section;
        let key = crate::model::section_key(label);
        let first = self
            .sections
            .entry(key)
            .or_insert_with(|| label.clone())
            .clone();
        if first != *label {
            self.merged.push(SectionMerge {
                label: label.clone(),
                read_as: first.clone(),
                source: sub.source.clone(),
                sheet: sub.sheet.clone(),
                row: sub.row,
            });
        }
        self.spellings.insert(label.clone(), first.clone());
        first
    }

    /// The unknown's identification against the key, and the compound the row is graded
    /// against: the key's for its code; without a key, the one the student named (with a note).
    fn unknown(&mut self, sub: &mut Submission) -> (Workup, Resolved<'a>) {
        let (word, shown, identity) = unknowns::identify(
            sub.unknown_code.as_deref(),
            sub.identified_as.as_deref(),
            self.ctx.key,
            self.ctx.library,
        );
        let graded_as = match (word, &identity, &sub.identified_as) {
            (_, Some(truth), _) => Some(truth.clone()),
            (Some("no-key"), None, Some(named)) if sub.unknown_code.is_some() => {
                sub.notes.push(format!(
                    "no answer key for unknown {}: graded against the compound named, {}",
                    sub.unknown_code.as_deref().unwrap_or_default(),
                    named.trim()
                ));
                Some(named.clone())
            }
            _ => None,
        };
        let resolved = self.resolve(graded_as.as_deref().or(sub.compound.as_deref()));
        let w = Workup {
            identified_as: shown,
            identity,
            identification: word,
            ..Workup::default()
        };
        (w, resolved)
    }

    /// Assesses the next submission of the batch.
    pub fn assess(&mut self, mut sub: Submission) -> Assessed {
        sub.section = self.section(&sub);
        let mut more = workup::by_difference(&mut sub);
        let trials = workup::trials(&mut sub);
        let (known, resolved) = self.unknown(&mut sub);
        let t = self.ctx.tolerances;
        let (mut work, extra) = workup::compare(&sub, trials, known.identified_as.as_deref(), t);
        more.extend(extra);
        work.identified_as = known.identified_as;
        work.identity = known.identity;
        work.identification = known.identification;
        let readings = self.calibrate(&sub);
        let reference = resolved.reference.map(|r| r.at(readings.clear));
        let purity = physchem::purity(
            readings.clear,
            reference,
            resolved.compound,
            t.max_impurity_mol_pct,
        );
        let (max_recovery_pct, min_solvent_ml) = self.solvent_bounds(&sub, resolved.compound);
        let recovery_pct = measures::recovery_pct(sub.crude_mass_g, sub.recovered_mass_g);
        read_reported_as_percent(&mut sub, recovery_pct, t);
        // one temperature is not a range: its width was not measured
        let range_width_c = if sub.single_reading {
            None
        } else {
            measures::range_width_c(readings.onset, readings.clear)
        };
        let excused = excused::reason(&sub);
        let mut a = Assessed {
            recovery_pct,
            range_width_c,
            depression_c: measures::depression_c(reference, readings.clear),
            compound: resolved.compound.map(|c| c.name.clone()),
            reference_mp_c: reference,
            mp_onset_c: readings.onset,
            mp_clear_c: readings.clear,
            purity_mol_pct: purity.mol_pct,
            purity_note: purity.note,
            max_recovery_pct,
            min_solvent_ml,
            calibration: readings.note,
            submission: sub,
            flags: Vec::new(),
            excused,
            workup: work,
        };
        let mut flags = self.flags(&a, resolved.unknown, readings.outside_span, more);
        flags.sort_by_key(|(f, _)| f.code());
        a.flags = flags;
        a
    }
}

/// A reported recovery that is a fraction fitting the masses is a percentage typed without its
/// format: it is read as one here, once, so that flags, scoring and statistics all use the
/// same value.
fn read_reported_as_percent(sub: &mut Submission, recovery_pct: Option<f64>, t: &Tolerances) {
    if sub.reported_marked {
        return;
    }
    if let (Some(reported), Some(rec)) = (sub.reported_recovery_pct, recovery_pct) {
        if measures::reported_as_percent(reported, rec, t.recovery_mismatch_pct).1 {
            let pct = crate::ingest::cells::percent_of_fraction(reported);
            sub.notes.push(format!(
                "reported recovery {reported} read as a fraction ({pct} %)"
            ));
            sub.reported_recovery_pct = Some(pct);
        }
    }
}

/// Assesses a whole batch held in memory (the streaming `Assessor` does the work).
pub fn assess_all(subs: Vec<Submission>, ctx: Context) -> Vec<Assessed> {
    let mut assessor = Assessor::new(ctx);
    subs.into_iter().map(|s| assessor.assess(s)).collect()
}

#[cfg(test)]
#[allow(clippy::too_many_lines)]
mod tests;
