//! Hand-worked cases for every formula and flag (numbers worked by hand beside each case).

use super::*;
use crate::ingest::{Submission, Unreadable};
use approx::assert_relative_eq;

fn base() -> Submission {
    Submission {
        source: "t.csv".into(),
        row: 2,
        section: "A".into(),
        student_id: Some("s1".into()),
        crude_mass_g: Some(3.02),
        recovered_mass_g: Some(2.31),
        mp_onset_c: Some(121.0),
        mp_clear_c: Some(122.0),
        ..Submission::default()
    }
}

fn run(sub: Submission) -> Assessed {
    let lib = Library::builtin();
    let t = Tolerances::default();
    let ctx = Context {
        library: &lib,
        default_compound: Some("benzoic acid"),
        accepted_mp_c: None,
        tolerances: &t,
    };
    assess_all(vec![sub], ctx).remove(0)
}

fn codes(a: &Assessed) -> Vec<&'static str> {
    a.flags.iter().map(|(f, _)| f.code()).collect()
}

#[test]
fn a_clean_benzoic_acid_row_has_no_flags() {
    let a = run(base());
    // benzoic acid accepted 122.4 °C (library); depression 122.4 - 122.0 = 0.4 (hand-worked)
    assert_relative_eq!(a.reference_mp_c.unwrap(), 122.4);
    assert_relative_eq!(a.depression_c.unwrap(), 0.4, epsilon = 1e-9);
    assert_relative_eq!(a.range_width_c.unwrap(), 1.0);
    assert!(a.flags.is_empty(), "{:?}", a.flags);
}

#[test]
fn recovery_over_100_names_both_masses() {
    let a = run(Submission {
        crude_mass_g: Some(3.02),
        recovered_mass_g: Some(3.41),
        ..base()
    });
    assert!(a.has(Flag::RecoveryOver100));
    let note = &a
        .flags
        .iter()
        .find(|(f, _)| *f == Flag::RecoveryOver100)
        .unwrap()
        .1;
    assert_eq!(note, "recovered 3.41 g exceeds crude 3.02 g");
}

#[test]
fn inverted_and_above_reference() {
    let a = run(Submission {
        mp_onset_c: Some(124.0),
        mp_clear_c: Some(123.6),
        ..base()
    });
    // 123.6 > 122.4 + 1.0 (hand-worked): above-reference; 124.0 > 123.6: inverted
    assert_eq!(codes(&a), vec!["above-reference", "range-inverted"]);
    let b = run(Submission {
        mp_clear_c: Some(123.4),
        ..base()
    });
    assert!(
        !b.has(Flag::AboveReference),
        "123.4 is exactly at the tolerance, not above it"
    );
}

#[test]
fn nonpositive_missing_and_unreadable() {
    let a = run(Submission {
        crude_mass_g: Some(0.0),
        recovered_mass_g: None,
        ..base()
    });
    assert_eq!(codes(&a), vec!["missing-value", "nonpositive-mass"]);
    assert_eq!(a.recovery_pct, None);
    let b = run(Submission {
        crude_mass_g: None,
        student_id: None,
        unreadable: vec![Unreadable {
            field: Field::CrudeMass,
            cell: "B2".into(),
            found: "the error #DIV/0!".into(),
        }],
        ..base()
    });
    assert_eq!(codes(&b), vec!["missing-value", "unreadable-value"]);
    assert_eq!(b.flags[0].1, "no student id given");
    assert!(b.flags[1].1.contains("B2") && b.flags[1].1.contains("#DIV/0!"));
}

#[test]
fn unknown_compound() {
    let a = run(Submission {
        compound: Some("unobtainium".into()),
        ..base()
    });
    assert_eq!(codes(&a), vec!["unknown-compound"]);
    assert_eq!(a.reference_mp_c, None);
    let b = run(Submission {
        compound: Some("Acetanilide".into()),
        mp_onset_c: Some(113.0),
        mp_clear_c: Some(114.0),
        ..base()
    });
    // acetanilide accepted 114.3 °C (library), so 113.0-114.0 is clean
    assert_eq!(b.compound.as_deref(), Some("acetanilide"));
    assert!(b.flags.is_empty(), "{:?}", b.flags);
}

#[test]
fn recovery_mismatch_and_fractions() {
    // 100 x 2.31 / 3.02 = 76.49 %; 74.0 differs by 2.49 points > 1.0
    let a = run(Submission {
        reported_recovery_pct: Some(74.0),
        ..base()
    });
    assert_eq!(codes(&a), vec!["recovery-mismatch"]);
    assert_eq!(
        a.flags[0].1,
        "reported 74.0 % but 100 x 2.31 / 3.02 = 76.5 %"
    );
    let b = run(Submission {
        reported_recovery_pct: Some(76.0),
        ..base()
    });
    assert!(b.flags.is_empty());
    let c = run(Submission {
        reported_recovery_pct: Some(0.765),
        ..base()
    });
    assert!(c.flags.is_empty());
    assert_eq!(c.submission.notes.len(), 1);
}

#[test]
fn wet_versus_impure_versus_low() {
    // Heavy (104 %) and broad (115-119, 4 °C wide): wet, not impure
    let wet = run(Submission {
        crude_mass_g: Some(2.50),
        recovered_mass_g: Some(2.60),
        mp_onset_c: Some(115.0),
        mp_clear_c: Some(119.0),
        ..base()
    });
    assert!(
        wet.has(Flag::LikelyWet) && !wet.has(Flag::LikelyImpure),
        "{:?}",
        wet.flags
    );
    // Normal mass (70 %), 114-119: impure
    let impure = run(Submission {
        crude_mass_g: Some(3.00),
        recovered_mass_g: Some(2.10),
        mp_onset_c: Some(114.0),
        mp_clear_c: Some(119.0),
        ..base()
    });
    assert_eq!(codes(&impure), vec!["likely-impure"]);
    // 1.20 / 3.00 = 40 % < 50 %
    let low = run(Submission {
        recovered_mass_g: Some(1.20),
        crude_mass_g: Some(3.0),
        ..base()
    });
    assert_eq!(codes(&low), vec!["low-recovery"]);
}

#[test]
fn duplicates_in_the_same_section_only() {
    let lib = Library::builtin();
    let t = Tolerances::default();
    let ctx = Context {
        library: &lib,
        default_compound: Some("benzoic acid"),
        accepted_mp_c: None,
        tolerances: &t,
    };
    let rows = vec![
        base(),
        Submission {
            student_id: Some(" s1 ".into()),
            row: 3,
            ..base()
        },
        Submission {
            section: "B".into(),
            row: 4,
            ..base()
        },
        Submission { row: 5, ..base() },
    ];
    let out = assess_all(rows, ctx);
    let dup: Vec<bool> = out.iter().map(|a| a.has(Flag::DuplicateStudent)).collect();
    assert_eq!(dup, vec![false, true, false, true]);
    assert!(out[1].flags[0].1.contains("row 2"));
}

#[test]
fn accepted_value_overrides_only_the_experiment_compound() {
    let lib = Library::builtin();
    let t = Tolerances::default();
    let ctx = Context {
        library: &lib,
        default_compound: Some("benzoic acid"),
        accepted_mp_c: Some(122.0),
        tolerances: &t,
    };
    let out = assess_all(
        vec![
            base(),
            Submission {
                compound: Some("acetanilide".into()),
                ..base()
            },
        ],
        ctx,
    );
    assert_eq!(out[0].reference_mp_c, Some(122.0));
    assert_eq!(out[1].reference_mp_c, Some(114.3));
}

#[test]
fn flags_are_in_alphabetical_order() {
    let a = run(Submission {
        student_id: None,
        crude_mass_g: Some(2.0),
        recovered_mass_g: Some(2.5),
        mp_onset_c: Some(125.0),
        mp_clear_c: Some(124.0),
        ..base()
    });
    let c = codes(&a);
    let mut sorted = c.clone();
    sorted.sort();
    assert_eq!(c, sorted);
    assert_eq!(a.flag_codes(), c.join(";"));
}
