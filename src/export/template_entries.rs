//! What an entry workbook (`benchgrade template`) asks for, derived from what the rubric
//! scores: every criterion's measure and every flag a flag rule names needs certain entries
//! (a melting-point rise needs the crude product's range, a trial spread two trials, a
//! `gross-below-tare` rule weighings by difference), so that a template filled in as it is
//! never loses a criterion's points for a column it did not have. Each entry's header is in
//! benchgrade's own words and reads back, with no mapping file, as exactly the field it stands
//! for (a unit test asks the readers).

use crate::assess::unknowns::Key;
use crate::fields::Field;
use crate::model::{Flag, Measure};
use crate::rubric::Rubric;

/// What a template asks for.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Entry {
    CrudeTare,
    CrudeGross,
    CrudeMass,
    RecoveredTare,
    RecoveredGross,
    RecoveredMass,
    Solvent,
    CrudeOnset,
    CrudeClear,
    Onset,
    Clear,
    Trial1Onset,
    Trial1Clear,
    Trial2Onset,
    Trial2Clear,
    MixedOnset,
    MixedClear,
    Reported,
    Late,
    UnknownCode,
    Identified,
    Status,
    Notes,
}

impl Entry {
    /// Header and unit, in words benchgrade reads without a mapping.
    pub fn header(self) -> (&'static str, &'static str) {
        match self {
            Entry::CrudeTare => ("Crude tare", "g"),
            Entry::CrudeGross => ("Crude gross", "g"),
            Entry::CrudeMass => ("Crude mass", "g"),
            Entry::RecoveredTare => ("Recovered tare", "g"),
            Entry::RecoveredGross => ("Recovered gross", "g"),
            Entry::RecoveredMass => ("Recovered mass", "g"),
            Entry::Solvent => ("Solvent volume", "mL"),
            Entry::CrudeOnset => ("Crude mp onset", "°C"),
            Entry::CrudeClear => ("Crude mp clear point", "°C"),
            Entry::Onset => ("Melting onset", "°C"),
            Entry::Clear => ("Clear point", "°C"),
            Entry::Trial1Onset => ("Trial 1 mp onset", "°C"),
            Entry::Trial1Clear => ("Trial 1 mp clear point", "°C"),
            Entry::Trial2Onset => ("Trial 2 mp onset", "°C"),
            Entry::Trial2Clear => ("Trial 2 mp clear point", "°C"),
            Entry::MixedOnset => ("Mixed mp onset", "°C"),
            Entry::MixedClear => ("Mixed mp clear point", "°C"),
            Entry::Reported => ("Reported recovery", "%"),
            Entry::Late => ("Days late", "days"),
            Entry::UnknownCode => ("Unknown code", ""),
            Entry::Identified => ("Identified as", ""),
            Entry::Status => ("Status", ""),
            Entry::Notes => ("Notes", ""),
        }
    }

    /// The field the header is read back as.
    pub fn field(self) -> Field {
        match self {
            Entry::CrudeTare => Field::CrudeTare,
            Entry::CrudeGross => Field::CrudeGross,
            Entry::CrudeMass => Field::CrudeMass,
            Entry::RecoveredTare => Field::RecoveredTare,
            Entry::RecoveredGross => Field::RecoveredGross,
            Entry::RecoveredMass => Field::RecoveredMass,
            Entry::Solvent => Field::SolventVolume,
            Entry::CrudeOnset => Field::CrudeMpOnset,
            Entry::CrudeClear => Field::CrudeMpClear,
            Entry::Onset => Field::MpOnset,
            Entry::Clear => Field::MpClear,
            Entry::Trial1Onset | Entry::Trial2Onset => Field::MpTrialOnset,
            Entry::Trial1Clear | Entry::Trial2Clear => Field::MpTrialClear,
            Entry::MixedOnset => Field::MixedMpOnset,
            Entry::MixedClear => Field::MixedMpClear,
            Entry::Reported => Field::ReportedRecovery,
            Entry::Late => Field::LateDays,
            Entry::UnknownCode => Field::UnknownCode,
            Entry::Identified => Field::IdentifiedAs,
            Entry::Status => Field::Status,
            Entry::Notes => Field::Notes,
        }
    }

    /// Whether a row is unfinished while the cell is empty: the entries grading needs.
    pub fn required(self) -> bool {
        !matches!(
            self,
            Entry::Solvent
                | Entry::MixedOnset
                | Entry::MixedClear
                | Entry::Reported
                | Entry::Late
                | Entry::UnknownCode
                | Entry::Identified
                | Entry::Status
                | Entry::Notes
        )
    }

    /// A weighing in grams.
    pub fn is_mass(self) -> bool {
        matches!(
            self,
            Entry::CrudeTare
                | Entry::CrudeGross
                | Entry::CrudeMass
                | Entry::RecoveredTare
                | Entry::RecoveredGross
                | Entry::RecoveredMass
        )
    }

    /// The onset and clear point of one melting range, for a temperature entry.
    pub fn pair(self) -> Option<(Entry, Entry)> {
        match self {
            Entry::CrudeOnset | Entry::CrudeClear => Some((Entry::CrudeOnset, Entry::CrudeClear)),
            Entry::Onset | Entry::Clear => Some((Entry::Onset, Entry::Clear)),
            Entry::Trial1Onset | Entry::Trial1Clear => {
                Some((Entry::Trial1Onset, Entry::Trial1Clear))
            }
            Entry::Trial2Onset | Entry::Trial2Clear => {
                Some((Entry::Trial2Onset, Entry::Trial2Clear))
            }
            Entry::MixedOnset | Entry::MixedClear => Some((Entry::MixedOnset, Entry::MixedClear)),
            _ => None,
        }
    }

    /// The tare and gross weighing of one product, for a weighing by difference.
    pub fn weighing(self) -> Option<(Entry, Entry)> {
        match self {
            Entry::CrudeTare | Entry::CrudeGross => Some((Entry::CrudeTare, Entry::CrudeGross)),
            Entry::RecoveredTare | Entry::RecoveredGross => {
                Some((Entry::RecoveredTare, Entry::RecoveredGross))
            }
            _ => None,
        }
    }
}

/// What the rubric scores, in terms of what must be typed.
#[derive(Clone, Copy, Debug, Default, PartialEq, Eq)]
struct Asks {
    /// Net masses (always, unless weighed by difference and nothing compares the net).
    net: bool,
    by_difference: bool,
    crude_range: bool,
    trials: bool,
    mixed: bool,
    reported: bool,
    unknown: bool,
}

/// What a measure a criterion scores is computed from, beyond the masses and the melting
/// range every template has; `None` for a measure this table does not know (a unit test
/// keeps every scorable measure in it).
fn measure_asks(m: Measure) -> Option<Asks> {
    let none = Asks::default();
    Some(match m.key() {
        "recovery_pct"
        | "recovery_of_ceiling_pct"
        | "range_width_c"
        | "depression_c"
        | "purity_mol_pct"
        | "mp_clear_c" => none,
        "recovery_report_error_pct" => Asks {
            reported: true,
            ..none
        },
        "mp_rise_c" | "range_narrowing_c" => Asks {
            crude_range: true,
            ..none
        },
        "trial_spread_c" => Asks {
            trials: true,
            ..none
        },
        "identification" => Asks {
            unknown: true,
            ..none
        },
        _ => return None,
    })
}

/// What a flag a flag rule names needs typed, so that it can be raised at all.
fn flag_asks(f: Flag) -> Asks {
    let none = Asks::default();
    match f {
        Flag::RecoveryMismatch => Asks {
            reported: true,
            ..none
        },
        Flag::NoPurificationShown => Asks {
            crude_range: true,
            ..none
        },
        // the net mass written against the weighings: both
        Flag::NetMismatch => Asks {
            by_difference: true,
            net: true,
            ..none
        },
        Flag::GrossBelowTare => Asks {
            by_difference: true,
            ..none
        },
        Flag::TrialsDisagree => Asks {
            trials: true,
            ..none
        },
        Flag::MixedMpContradicts => Asks {
            mixed: true,
            unknown: true,
            ..none
        },
        _ => none,
    }
}

fn either(a: Asks, b: Asks) -> Asks {
    Asks {
        net: a.net || b.net,
        by_difference: a.by_difference || b.by_difference,
        crude_range: a.crude_range || b.crude_range,
        trials: a.trials || b.trials,
        mixed: a.mixed || b.mixed,
        reported: a.reported || b.reported,
        unknown: a.unknown || b.unknown,
    }
}

/// What the rubric asks for: its criteria's measures and the flags its flag rules name (by
/// code: a rule for every impossible or suspicious flag asks for nothing of its own).
fn asks(rubric: &Rubric) -> Asks {
    let measures = rubric
        .criteria
        .iter()
        .filter_map(crate::rubric::Criterion::measure)
        .filter_map(measure_asks);
    let flags = rubric
        .flag_rules
        .iter()
        .filter_map(|r| Flag::ALL.into_iter().find(|f| f.code() == r.flag.get_ref()))
        .map(flag_asks);
    let a = measures.chain(flags).fold(Asks::default(), either);
    Asks {
        net: a.net || !a.by_difference,
        ..a
    }
}

/// The entries for the rubric, in the order they are typed: the masses (net, or the tare and
/// gross weighings where the rubric scores a weighing by difference, or both), the solvent
/// volume, the crude product's range where a criterion compares it, the melting range (two
/// trials' where the rubric scores their agreement), a mixed melting point, the reported
/// recovery, the days late where the rubric has a `[late]` rule, the unknown's code and its
/// identification where there is an answer key or the rubric scores it, a status and notes.
pub fn entries(rubric: &Rubric, key: Option<&Key>) -> Vec<Entry> {
    let a = asks(rubric);
    let mut e = Vec::new();
    for (tare, gross, net) in [
        (Entry::CrudeTare, Entry::CrudeGross, Entry::CrudeMass),
        (
            Entry::RecoveredTare,
            Entry::RecoveredGross,
            Entry::RecoveredMass,
        ),
    ] {
        if a.by_difference {
            e.extend([tare, gross]);
        }
        if a.net {
            e.push(net);
        }
    }
    e.push(Entry::Solvent);
    if a.crude_range {
        e.extend([Entry::CrudeOnset, Entry::CrudeClear]);
    }
    if a.trials {
        e.extend([
            Entry::Trial1Onset,
            Entry::Trial1Clear,
            Entry::Trial2Onset,
            Entry::Trial2Clear,
        ]);
    } else {
        e.extend([Entry::Onset, Entry::Clear]);
    }
    if a.mixed {
        e.extend([Entry::MixedOnset, Entry::MixedClear]);
    }
    if a.reported {
        e.push(Entry::Reported);
    }
    if rubric.late.is_some() {
        e.push(Entry::Late);
    }
    if a.unknown || key.is_some_and(|k| !k.is_empty()) {
        e.extend([Entry::UnknownCode, Entry::Identified]);
    }
    e.extend([Entry::Status, Entry::Notes]);
    e
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::ingest::headers::{classify, parse_header, HeaderMeaning};

    const ALL: [Entry; 23] = [
        Entry::CrudeTare,
        Entry::CrudeGross,
        Entry::CrudeMass,
        Entry::RecoveredTare,
        Entry::RecoveredGross,
        Entry::RecoveredMass,
        Entry::Solvent,
        Entry::CrudeOnset,
        Entry::CrudeClear,
        Entry::Onset,
        Entry::Clear,
        Entry::Trial1Onset,
        Entry::Trial1Clear,
        Entry::Trial2Onset,
        Entry::Trial2Clear,
        Entry::MixedOnset,
        Entry::MixedClear,
        Entry::Reported,
        Entry::Late,
        Entry::UnknownCode,
        Entry::Identified,
        Entry::Status,
        Entry::Notes,
    ];

    /// Every header reads back, with no mapping, as the field it stands for: with its unit
    /// (the units row under it), and the weighings and temperatures without it too.
    #[test]
    fn every_header_reads_back_as_its_field() {
        for e in ALL {
            let (h, u) = e.header();
            let with = if u.is_empty() {
                h.to_string()
            } else {
                format!("{h} ({u})")
            };
            let mut texts = vec![with];
            if e.is_mass() || e.pair().is_some() {
                texts.push(h.to_string());
            }
            for text in texts {
                assert_eq!(
                    classify(&parse_header(&text)),
                    HeaderMeaning::Field(e.field()),
                    "{text:?}"
                );
            }
        }
    }

    /// A measure added to the registry must say what a template needs typed for it.
    #[test]
    fn every_scorable_measure_says_what_it_needs() {
        for m in Measure::scorable() {
            assert!(measure_asks(m).is_some(), "{}", m.key());
        }
    }

    fn rubric(extra: &str) -> Rubric {
        let text = format!("[experiment]\nname = \"x\"\ncompound = \"benzoic acid\"\n{extra}");
        Rubric::parse(&text, "r.toml").unwrap()
    }

    #[test]
    fn entries_follow_what_the_rubric_scores() {
        use Entry::*;
        // nothing scored beyond the masses and the range
        assert_eq!(
            entries(&rubric(""), None),
            [
                CrudeMass,
                RecoveredMass,
                Solvent,
                Onset,
                Clear,
                Status,
                Notes
            ]
        );
        // a rise and a spread scored, a gross-below-tare rule: crude range, two trials and
        // weighings instead of the net masses
        let r = rubric(
            "[[criterion]]\nid = \"a\"\nlabel = \"a\"\nmax = 1\nmeasure = \"mp_rise_c\"\npass = { at_least = 0 }\n\
             [[criterion]]\nid = \"b\"\nlabel = \"b\"\nmax = 1\nmeasure = \"trial_spread_c\"\npass = { at_most = 1 }\n\
             [[flag_rule]]\nflag = \"gross-below-tare\"\ndeduct = 1\n",
        );
        assert_eq!(
            entries(&r, None),
            [
                CrudeTare,
                CrudeGross,
                RecoveredTare,
                RecoveredGross,
                Solvent,
                CrudeOnset,
                CrudeClear,
                Trial1Onset,
                Trial1Clear,
                Trial2Onset,
                Trial2Clear,
                Status,
                Notes
            ]
        );
        // a net-mismatch rule compares the net mass with the weighings: both are asked for
        let r = rubric("[[flag_rule]]\nflag = \"net-mismatch\"\ndeduct = 1\n");
        assert_eq!(
            &entries(&r, None)[..6],
            [
                CrudeTare,
                CrudeGross,
                CrudeMass,
                RecoveredTare,
                RecoveredGross,
                RecoveredMass
            ]
        );
        // a rule for every impossible flag asks for nothing of its own
        let r = rubric("[[flag_rule]]\nflag = \"impossible\"\ndeduct = 1\n");
        assert_eq!(entries(&r, None), entries(&rubric(""), None));
    }
}
