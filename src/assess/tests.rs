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

/// The default rubric's experiment: benzoic acid from water, cooled in ice.
fn experiment() -> Experiment {
    crate::rubric::Rubric::builtin().unwrap().experiment
}

fn with_rule(
    subs: Vec<Submission>,
    reference: ReferenceRule,
    calibration: Option<&Calibration>,
) -> Vec<Assessed> {
    let lib = Library::builtin().unwrap();
    let t = Tolerances::default();
    let e = experiment();
    let ctx = Context {
        library: &lib,
        experiment: &e,
        reference,
        tolerances: &t,
        calibration,
        centres: None,
        counted: crate::rubric::Counted::First,
        repeats: None,
        key: None,
    };
    assess_all(subs, ctx)
}

fn run(sub: Submission) -> Assessed {
    with_rule(vec![sub], ReferenceRule::Accepted, None).remove(0)
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
    let out = with_rule(rows, ReferenceRule::Accepted, None);
    let dup: Vec<bool> = out.iter().map(|a| a.has(Flag::DuplicateStudent)).collect();
    assert_eq!(dup, vec![false, true, false, true]);
    assert!(out[1].flags[0].1.contains("row 2"));
}

#[test]
fn accepted_value_overrides_only_the_experiment_compound() {
    let out = with_rule(
        vec![
            base(),
            Submission {
                compound: Some("acetanilide".into()),
                ..base()
            },
        ],
        ReferenceRule::Value(122.0),
        None,
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
    sorted.sort_unstable();
    assert_eq!(c, sorted);
    assert_eq!(a.flag_codes(), c.join(";"));
}

#[test]
fn ceiling_and_least_solvent_columns() {
    // 1.00 g benzoic acid in 25 mL: ceiling 100 x (1 - 1.7 x 0.025) = 95.75 % at 0 °C, and
    // 1.00 / 56.3 g/L = 17.76 mL of boiling water at least (handbook solubilities, from memory)
    let a = run(Submission {
        crude_mass_g: Some(1.0),
        recovered_mass_g: Some(0.7),
        solvent_volume_ml: Some(25.0),
        ..base()
    });
    assert_relative_eq!(a.max_recovery_pct.unwrap(), 95.75, epsilon = 1e-9);
    assert_relative_eq!(
        a.min_solvent_ml.unwrap(),
        17.761_989_342_806_39,
        epsilon = 1e-9
    );
    assert!(a.flags.is_empty(), "{:?}", a.flags);
    let short = run(Submission {
        crude_mass_g: Some(3.0),
        recovered_mass_g: Some(2.1),
        solvent_volume_ml: Some(40.0),
        ..base()
    });
    assert_eq!(codes(&short), vec!["solvent-below-minimum"]);
    let other = run(Submission {
        solvent: Some("ethanol".into()),
        solvent_volume_ml: Some(25.0),
        ..base()
    });
    assert_eq!(
        other.max_recovery_pct, None,
        "solubilities are known in water only"
    );
}

#[test]
fn wet_is_told_from_impure_by_the_ceiling() {
    // recovery 104 %, 115-119 °C for benzoic acid: likely-wet, not likely-impure (issue check)
    let wet = run(Submission {
        crude_mass_g: Some(2.50),
        recovered_mass_g: Some(2.60),
        solvent_volume_ml: Some(60.0),
        mp_onset_c: Some(115.0),
        mp_clear_c: Some(119.0),
        ..base()
    });
    assert!(
        wet.has(Flag::LikelyWet) && !wet.has(Flag::LikelyImpure),
        "{:?}",
        wet.flags
    );
    // recovery 70 %, 114-119 °C: a dry impure product
    let impure = run(Submission {
        crude_mass_g: Some(3.00),
        recovered_mass_g: Some(2.10),
        solvent_volume_ml: Some(60.0),
        mp_onset_c: Some(114.0),
        mp_clear_c: Some(119.0),
        ..base()
    });
    assert!(
        impure.has(Flag::LikelyImpure) && !impure.has(Flag::LikelyWet),
        "{:?}",
        impure.flags
    );
    // 2.45 / 2.50 = 98 %, above the 96.1 % ceiling (60 mL) by more than 2 points, sharp range:
    // more mass than could crystallise
    let heavy = run(Submission {
        crude_mass_g: Some(2.50),
        recovered_mass_g: Some(2.45),
        solvent_volume_ml: Some(60.0),
        ..base()
    });
    assert_eq!(codes(&heavy), vec!["likely-wet"]);
    assert!(heavy.flags[0]
        .1
        .contains("exceeds the most that could crystallise"));
}

#[test]
fn purity_column_from_the_clear_point() {
    // clear point 120.50 °C against benzoic acid's accepted 122.4 °C, ΔHfus 18.02 kJ/mol:
    // ln x1 = -(18020 / 8.314462618)(1/393.65 - 1/395.55) -> x1 = 0.9739 (hand-worked)
    let a = run(Submission {
        mp_onset_c: Some(119.8),
        mp_clear_c: Some(120.5),
        ..base()
    });
    assert_relative_eq!(a.purity_mol_pct.unwrap(), 97.39, epsilon = 0.01);
    let above = run(Submission {
        mp_onset_c: Some(122.5),
        mp_clear_c: Some(123.0),
        ..base()
    });
    assert_eq!(above.purity_mol_pct, None);
    assert!(above.purity_note.contains("above the reference"));
}

#[test]
fn calibration_corrects_before_flagging() {
    use super::calibration::{fit, ApparatusFit, Calibration};
    let entry = |name: &str, first_row, fit| ApparatusFit {
        name: name.to_string(),
        first_row,
        fit,
    };
    let mut fits = std::collections::BTreeMap::new();
    fits.insert(
        "7".to_string(),
        entry("Bench 7", 2, fit(&[(124.8, 122.4)]).unwrap()),
    );
    fits.insert(
        "3".to_string(),
        entry("Bench 3", 3, fit(&[(81.0, 82.0), (234.5, 236.0)]).unwrap()),
    );
    let cal = Calibration {
        source: "cal.csv".into(),
        keyed_by: Field::Bench,
        fits,
    };
    let rows = vec![
        // bench 7 reads 2.4 °C high: 123.9-124.6 observed is 121.5-122.2 true, not above-reference
        Submission {
            bench: Some("B7".into()),
            mp_onset_c: Some(123.9),
            mp_clear_c: Some(124.6),
            ..base()
        },
        // bench 3: 120.0 observed -> 0.7362 + 1.003257 x 120 = 121.13 °C (hand-worked)
        Submission {
            bench: Some("3".into()),
            row: 3,
            student_id: Some("s2".into()),
            mp_onset_c: Some(119.0),
            mp_clear_c: Some(120.0),
            ..base()
        },
        Submission {
            bench: Some("9".into()),
            row: 4,
            student_id: Some("s3".into()),
            ..base()
        },
        Submission {
            bench: Some("7".into()),
            row: 5,
            student_id: Some("s4".into()),
            mp_onset_c: Some(112.0),
            mp_clear_c: Some(118.0),
            ..base()
        },
    ];
    let out = with_rule(rows, ReferenceRule::Accepted, Some(&cal));
    assert!(out[0].flags.is_empty(), "{:?}", out[0].flags);
    assert_relative_eq!(out[0].mp_clear_c.unwrap(), 122.2, epsilon = 1e-9);
    assert_eq!(
        out[0].submission.mp_clear_c,
        Some(124.6),
        "the reading is kept"
    );
    assert_relative_eq!(out[1].mp_clear_c.unwrap(), 121.13, epsilon = 0.005);
    assert!(out[2]
        .calibration
        .as_deref()
        .unwrap()
        .contains("no calibration for bench 9"));
    assert!(
        out[3].has(Flag::OutsideCalibratedSpan),
        "112 is more than 5 °C from the single standard at 124.8"
    );
}

#[test]
fn an_accepted_range_puts_clear_points_inside_it_at_the_reference() {
    let sulfa = |clear: f64| Submission {
        compound: Some("sulfanilamide".into()),
        mp_onset_c: Some(clear - 1.0),
        mp_clear_c: Some(clear),
        ..base()
    };
    let e = Experiment {
        compound: Some("sulfanilamide".into()),
        ..experiment()
    };
    let lib = Library::builtin().unwrap();
    let t = Tolerances::default();
    let ctx = Context {
        library: &lib,
        experiment: &e,
        reference: ReferenceRule::Range(164.5, 166.5),
        tolerances: &t,
        calibration: None,
        centres: None,
        counted: crate::rubric::Counted::First,
        repeats: None,
        key: None,
    };
    let out = assess_all(vec![sulfa(165.0), sulfa(161.0), sulfa(168.0)], ctx);
    assert_eq!(out[0].depression_c, Some(0.0));
    assert_eq!(out[1].reference_mp_c, Some(164.5));
    assert!(out[1].has(Flag::LikelyImpure));
    assert!(out[2].has(Flag::AboveReference), "168 > 166.5 + 1.0");
}

#[test]
fn outliers_by_robust_z_within_the_section() {
    // recoveries 70, 71, 72, 73, 74 in section A: median 72, MAD 1 (hand-worked); 90 % is
    // 0.6745 x 18 / 1 = 12.1 robust z away, an outlier; 74 % is 1.3, not. A first pass over
    // the section gathers its centres, as the pipeline does.
    let mut centres = Centres::default();
    let lib0 = Library::builtin().unwrap();
    let (t0, e0) = (Tolerances::default(), experiment());
    let first = Context {
        library: &lib0,
        experiment: &e0,
        reference: ReferenceRule::Accepted,
        tolerances: &t0,
        calibration: None,
        centres: None,
        counted: crate::rubric::Counted::First,
        repeats: None,
        key: None,
    };
    let section: Vec<Submission> = [70.0, 71.0, 72.0, 73.0, 74.0]
        .iter()
        .enumerate()
        .map(|(i, rec)| Submission {
            student_id: Some(format!("f{i}")),
            crude_mass_g: Some(3.0),
            recovered_mass_g: Some(3.0 * rec / 100.0),
            mp_onset_c: Some(121.0),
            mp_clear_c: Some(121.7),
            ..base()
        })
        .collect();
    for a in assess_all(section, first) {
        centres.add(&a);
    }
    centres.settle(5);
    let lib = Library::builtin().unwrap();
    let t = Tolerances::default();
    let e = experiment();
    let ctx = Context {
        library: &lib,
        experiment: &e,
        reference: ReferenceRule::Accepted,
        tolerances: &t,
        calibration: None,
        centres: Some(&centres),
        counted: crate::rubric::Counted::First,
        repeats: None,
        key: None,
    };
    let row = |rec: f64| Submission {
        crude_mass_g: Some(3.0),
        recovered_mass_g: Some(3.0 * rec / 100.0),
        mp_onset_c: Some(121.0),
        mp_clear_c: Some(121.7),
        ..base()
    };
    let out = assess_all(
        vec![
            row(90.0),
            Submission {
                student_id: Some("s2".into()),
                ..row(74.0)
            },
        ],
        ctx,
    );
    assert!(out[0].has(Flag::Outlier), "{:?}", out[0].flags);
    assert!(out[0]
        .flags
        .iter()
        .any(|(f, n)| *f == Flag::Outlier && n.contains("+12.1 robust z")));
    assert!(!out[1].has(Flag::Outlier));
}

fn run_with(sub: Submission, t: &Tolerances) -> Assessed {
    let lib = Library::builtin().unwrap();
    let e = experiment();
    let ctx = Context {
        library: &lib,
        experiment: &e,
        reference: ReferenceRule::Accepted,
        tolerances: t,
        calibration: None,
        centres: None,
        counted: crate::rubric::Counted::First,
        repeats: None,
        key: None,
    };
    assess_all(vec![sub], ctx).remove(0)
}

/// Every documented threshold (README's flag table, rubrics/default.toml's [tolerances]) judged
/// on the value as written: exactly at the limit is within it, a step past it is not. Each
/// case is hand-worked; the floating-point results quoted were printed by Python 3 (IEEE 754
/// doubles, as Rust's f64).
#[test]
fn every_documented_threshold_is_judged_as_written() {
    let t = Tolerances::default();
    let flagged = |sub: Submission, t: &Tolerances| codes(&run_with(sub, t));
    // low-recovery below 50 %: 100 x 1.36 / 2.72 = 49.99999999999999 in doubles, 50 as written
    let at = Submission {
        crude_mass_g: Some(2.72),
        recovered_mass_g: Some(1.36),
        ..base()
    };
    assert!(!flagged(at.clone(), &t).contains(&"low-recovery"));
    let past = Submission {
        recovered_mass_g: Some(1.35),
        ..at.clone()
    };
    assert!(flagged(past, &t).contains(&"low-recovery"));
    // recovery-mismatch beyond 1.0 point: 51.0 reported against 49.99999999999999 differs by
    // 1.00000000000001 in doubles, by 1.0 as written
    let reported = |pct: f64| Submission {
        reported_recovery_pct: Some(pct),
        ..at.clone()
    };
    assert!(!flagged(reported(51.0), &t).contains(&"recovery-mismatch"));
    assert!(flagged(reported(51.1), &t).contains(&"recovery-mismatch"));
    // above-reference beyond 1.0 °C (benzoic acid 122.4): 123.4 is at the limit, 123.5 past it
    let clear = |o: f64, c: f64| Submission {
        mp_onset_c: Some(o),
        mp_clear_c: Some(c),
        ..base()
    };
    assert!(!flagged(clear(122.9, 123.4), &t).contains(&"above-reference"));
    assert!(flagged(clear(122.9, 123.5), &t).contains(&"above-reference"));
    // a tolerance of 1.1 °C for acetanilide (114.3): 115.4 - 114.3 = 1.1000000000000085 in
    // doubles, 1.1 as written
    let acetanilide = |c: f64| Submission {
        compound: Some("acetanilide".into()),
        mp_onset_c: Some(114.9),
        mp_clear_c: Some(c),
        ..base()
    };
    let loose = Tolerances {
        above_reference_c: 1.1,
        ..Tolerances::default()
    };
    assert!(!flagged(acetanilide(115.4), &loose).contains(&"above-reference"));
    assert!(flagged(acetanilide(115.5), &loose).contains(&"above-reference"));
    // likely-impure: wider than 2.0 °C, or depressed more than 2.0 °C
    assert!(flagged(clear(120.1, 122.1), &t).is_empty());
    assert!(flagged(clear(120.0, 122.1), &t).contains(&"likely-impure"));
    assert!(flagged(clear(119.9, 120.4), &t).is_empty());
    assert!(flagged(clear(119.8, 120.3), &t).contains(&"likely-impure"));
    // likely-wet at or above 95 % with a broad range (no solvent volume, so no ceiling):
    // 100 x 2.09 / 2.2 = 94.99999999999999 in doubles, 95 as written: heavy, so wet
    let heavy = |r: f64| Submission {
        crude_mass_g: Some(2.2),
        recovered_mass_g: Some(r),
        mp_onset_c: Some(117.0),
        mp_clear_c: Some(120.0),
        ..base()
    };
    assert_eq!(flagged(heavy(2.09), &t), vec!["likely-wet"]);
    assert_eq!(flagged(heavy(2.08), &t), vec!["likely-impure"]);
}
