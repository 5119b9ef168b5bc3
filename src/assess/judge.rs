//! The flags, decided from the measures, each with the numbers that led to it.
//!
//! Wet or impure, one documented decision:
//! - *off*: the range is wider than `impure_width_c`, or the clear point is depressed more than
//!   `impure_depression_c` below the reference;
//! - *heavy*: recovery over 100 %, or within `near_ceiling_pct` points of the recovery ceiling
//!   (the most that could crystallise from the solvent used), or, where no ceiling can be
//!   computed, at or above `wet_recovery_pct`;
//! - `likely-wet` when heavy and off, or when recovery exceeds the ceiling by more than
//!   `ceiling_margin_pct` (more mass than could have crystallised: solvent or insoluble matter);
//! - `likely-impure` when off but not wet: a broad or depressed range at a normal mass.

use super::{celsius, grams, Assessed, Flag};
use crate::compare::{above, at_least, below, differ_by_more_than};
use crate::fields::Field;
use crate::ingest::Submission;
use crate::numtext::Fast;
use crate::rubric::Tolerances;

fn missing_fields(sub: &Submission) -> Vec<String> {
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
        .map(|(_, f)| {
            if sub.lacks_column(*f) {
                format!("{} (the sheet has no column for it)", f.label())
            } else {
                f.label().to_string()
            }
        })
        .collect()
}

/// Flags for entries that cannot be true.
pub(super) fn impossible(a: &Assessed, t: &Tolerances, out: &mut Vec<(Flag, String)>) {
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
    if let (Some(o), Some(c)) = (a.mp_onset_c, a.mp_clear_c) {
        if above(o, c) {
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
    if let (Some(r), Some(c)) = (a.reference_mp_c, a.mp_clear_c) {
        if above(c - r, t.above_reference_c) {
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

fn mismatch(a: &Assessed, t: &Tolerances) -> Option<String> {
    let s = &a.submission;
    // read once, before any flag (a fraction that fits the masses is already a percentage)
    let (as_pct, rec) = (s.reported_recovery_pct?, a.recovery_pct?);
    differ_by_more_than(as_pct, rec, t.recovery_mismatch_pct).then(|| {
        let m = |v: Option<f64>| grams(v.unwrap_or(0.0)).trim_end_matches(" g").to_string();
        format!(
            "reported {as_pct:.1} % but 100 x {} / {} = {rec:.1} %",
            m(s.recovered_mass_g),
            m(s.crude_mass_g)
        )
    })
}

/// Why the range looks off, in words, or nothing.
fn off_reasons(a: &Assessed, t: &Tolerances) -> Vec<String> {
    let mut why = Vec::new();
    if let Some(w) = a.range_width_c.filter(|w| above(*w, t.impure_width_c)) {
        why.push(format!(
            "the range is {w:.1} °C wide (limit {:.1})",
            t.impure_width_c
        ));
    }
    if let Some(d) = a.depression_c.filter(|d| above(*d, t.impure_depression_c)) {
        why.push(format!(
            "the clear point is {d:.1} °C below the reference (limit {:.1})",
            t.impure_depression_c
        ));
    }
    if let (false, Some(p)) = (why.is_empty(), a.purity_mol_pct) {
        why.push(format!("estimated purity {p:.1} mol %"));
    }
    why
}

fn wet_or_impure(a: &Assessed, t: &Tolerances, out: &mut Vec<(Flag, String)>) {
    let off = off_reasons(a, t);
    let Some(rec) = a.recovery_pct else {
        if !off.is_empty() {
            out.push((Flag::LikelyImpure, off.join(" and ")));
        }
        return;
    };
    let ceiling = a.max_recovery_pct;
    let over_ceiling = ceiling.filter(|c| above(rec - c, t.ceiling_margin_pct));
    let heavy = above(rec, 100.0)
        || match ceiling {
            Some(c) => at_least(rec, c - t.near_ceiling_pct),
            None => at_least(rec, t.wet_recovery_pct),
        };
    // written only for a row that is flagged (most are not)
    let mass = || match ceiling {
        Some(c) => format!(
            "recovery {:.1} % against a ceiling of {:.1} % for the solvent used",
            Fast(rec),
            Fast(c)
        ),
        None => format!("recovery {:.1} %", Fast(rec)),
    };
    if let Some(c) = over_ceiling {
        let mut note = format!("recovery {rec:.1} % exceeds the most that could crystallise ({c:.1} %): solvent or insoluble matter in the product");
        if !off.is_empty() {
            note.push_str(", and ");
            note.push_str(&off.join(" and "));
        }
        out.push((
            Flag::LikelyWet,
            note + " (dry to constant mass and reweigh)",
        ));
    } else if heavy && !off.is_empty() {
        out.push((
            Flag::LikelyWet,
            format!(
                "{}{} and {}: solvent likely left in the crystals (dry to constant mass)",
                mass(),
                if ceiling.is_none() && !above(rec, 100.0) {
                    format!(" (at or above {:.0} %)", t.wet_recovery_pct)
                } else {
                    String::new()
                },
                off.join(" and ")
            ),
        ));
    } else if !off.is_empty() {
        out.push((
            Flag::LikelyImpure,
            format!("{} at a normal mass ({})", off.join(" and "), mass()),
        ));
    }
}

/// Flags for entries that only look wrong.
pub(super) fn suspicious(a: &Assessed, t: &Tolerances, out: &mut Vec<(Flag, String)>) {
    if let Some(note) = mismatch(a, t) {
        out.push((Flag::RecoveryMismatch, note));
    }
    wet_or_impure(a, t, out);
    if let Some(r) = a
        .recovery_pct
        .filter(|r| *r >= 0.0 && below(*r, t.low_recovery_pct))
    {
        out.push((
            Flag::LowRecovery,
            format!("recovery {r:.1} % is below {:.0} %", t.low_recovery_pct),
        ));
    }
    if let (Some(v), Some(min)) = (a.submission.solvent_volume_ml, a.min_solvent_ml) {
        if below(v, min) {
            out.push((
                Flag::SolventBelowMinimum,
                format!("{v:.1} mL is less than the {min:.1} mL of boiling solvent needed to dissolve the crude (insoluble matter may have been filtered off hot)"),
            ));
        }
    }
}
