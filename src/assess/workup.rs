//! The experiment beyond one mass pair and one range: masses weighed by difference, the mean of
//! repeat melting-point determinations, the crude product's range against the recrystallized
//! one, and the mixed melting point. Pure functions over a submission's numbers; each returns
//! the flags it raises, with reasons a grader can read.

use super::{celsius, grams};
use crate::ingest::Submission;
use crate::model::{Flag, Workup};
use crate::rubric::Tolerances;

/// The finest decimal place written among `values` (as their shortest text), as a mass: a
/// balance reading to 0.001 g writes three decimals. At most 0.0001 g; 0.01 g when no value
/// has a decimal.
pub fn resolution(values: &[f64]) -> f64 {
    let decimals = values
        .iter()
        .map(|v| {
            let t = format!("{v}");
            t.split_once('.').map_or(0, |(_, d)| d.len())
        })
        .max()
        .unwrap_or(2)
        .clamp(0, 4);
    10f64.powi(-(decimals as i32))
}

/// One product's mass weighed by difference: the gross minus the tare where no net mass is
/// written; beside a net mass, the net is kept and checked against the difference. Returns the
/// flags raised.
fn one_mass(
    what: &str,
    net: &mut Option<f64>,
    tare: Option<f64>,
    gross: Option<f64>,
    notes: &mut Vec<String>,
) -> Vec<(Flag, String)> {
    let (Some(t), Some(g)) = (tare, gross) else {
        return Vec::new();
    };
    let diff = g - t;
    let mut flags = Vec::new();
    if g < t {
        flags.push((
            Flag::GrossBelowTare,
            format!(
                "{what}: the container with the product ({}) weighs less than the empty container ({})",
                grams(g),
                grams(t)
            ),
        ));
    }
    match *net {
        None => {
            *net = Some(diff);
            notes.push(format!(
                "{what} mass = {} - {} = {} (weighed by difference)",
                grams(g),
                grams(t),
                grams(diff)
            ));
        }
        Some(n) => {
            let res = resolution(&[n, t, g]);
            if (n - diff).abs() > res + 1e-9 {
                flags.push((
                    Flag::NetMismatch,
                    format!(
                        "{what} mass written {} but the weighings give {} - {} = {} (a balance reading to {} g)",
                        grams(n),
                        grams(g),
                        grams(t),
                        grams(diff),
                        res
                    ),
                ));
            }
        }
    }
    flags
}

/// Both masses weighed by difference, where the sheet has the weighings.
pub fn by_difference(sub: &mut Submission) -> Vec<(Flag, String)> {
    let mut notes = Vec::new();
    let mut flags = one_mass(
        "crude",
        &mut sub.crude_mass_g,
        sub.crude_tare_g,
        sub.crude_gross_g,
        &mut notes,
    );
    flags.extend(one_mass(
        "recovered",
        &mut sub.recovered_mass_g,
        sub.recovered_tare_g,
        sub.recovered_gross_g,
        &mut notes,
    ));
    sub.notes.extend(notes);
    flags
}

/// Repeat determinations: the onset and clear point used are the means of the trials given
/// (common practice), unless the sheet also has the range itself. Returns the number of trials
/// and the largest difference between their clear points.
pub fn trials(sub: &mut Submission) -> (Option<f64>, Option<f64>) {
    let clears: Vec<f64> = sub.mp_trials.iter().filter_map(|t| t.clear).collect();
    let onsets: Vec<f64> = sub.mp_trials.iter().filter_map(|t| t.onset).collect();
    if clears.is_empty() {
        return (None, None);
    }
    let mean = |v: &[f64]| v.iter().sum::<f64>() / v.len() as f64;
    let spread = clears.iter().copied().fold(f64::NEG_INFINITY, f64::max)
        - clears.iter().copied().fold(f64::INFINITY, f64::min);
    if sub.mp_onset_c.is_none() && sub.mp_clear_c.is_none() {
        let (o, c) = (mean(&onsets), mean(&clears));
        sub.mp_onset_c = Some(o);
        sub.mp_clear_c = Some(c);
        sub.single_reading = sub
            .mp_trials
            .iter()
            .all(|t| t.onset == t.clear || t.onset.is_none() || t.clear.is_none());
        sub.notes.push(format!(
            "melting range {:.1}-{:.1} °C: the mean of {} trial{}",
            o,
            c,
            clears.len(),
            if clears.len() == 1 { "" } else { "s" }
        ));
    }
    (
        Some(clears.len() as f64),
        (clears.len() > 1).then_some(spread),
    )
}

/// The crude product's range against the recrystallized one (both as read: an apparatus's
/// offset cancels in a difference), the trials, and the mixed melting point, with their flags.
/// `identified` is the compound the student named, for the mixed melting point's wording.
pub fn compare(
    sub: &Submission,
    trials: (Option<f64>, Option<f64>),
    identified: Option<&str>,
    t: &Tolerances,
) -> (Workup, Vec<(Flag, String)>) {
    let width = |o: Option<f64>, c: Option<f64>| Some(c? - o?);
    let recryst_width = if sub.single_reading {
        None
    } else {
        width(sub.mp_onset_c, sub.mp_clear_c)
    };
    let crude_width = width(sub.crude_mp_onset_c, sub.crude_mp_clear_c)
        .filter(|_| sub.crude_mp_onset_c != sub.crude_mp_clear_c);
    let mut w = Workup {
        crude_mp_onset_c: sub.crude_mp_onset_c,
        crude_mp_clear_c: sub.crude_mp_clear_c,
        crude_range_width_c: crude_width,
        mp_rise_c: sub.mp_clear_c.zip(sub.crude_mp_clear_c).map(|(r, c)| r - c),
        range_narrowing_c: crude_width.zip(recryst_width).map(|(c, r)| c - r),
        mp_trials: trials.0,
        trial_spread_c: trials.1,
        mixed_mp_onset_c: sub.mixed_mp_onset_c,
        mixed_mp_clear_c: sub.mixed_mp_clear_c,
        mixed_depression_c: sub.mp_clear_c.zip(sub.mixed_mp_clear_c).map(|(s, m)| s - m),
        ..Workup::default()
    };
    let mut flags = Vec::new();
    if let (Some(rise), Some(narrowing)) = (w.mp_rise_c, w.range_narrowing_c) {
        if rise <= 0.0 && narrowing <= 0.0 {
            flags.push((
                Flag::NoPurificationShown,
                no_purification(sub, rise, narrowing),
            ));
        }
    }
    if let (Some(n), Some(spread)) = (w.mp_trials, w.trial_spread_c) {
        if spread > t.trial_spread_c + 1e-9 {
            flags.push((
                Flag::TrialsDisagree,
                format!(
                    "the {n:.0} trials' clear points differ by {} (more than {}); the mean is used",
                    celsius(spread),
                    celsius(t.trial_spread_c)
                ),
            ));
        }
    }
    if let (Some(d), Some(name)) = (w.mixed_depression_c, identified) {
        if d > t.mixed_depression_c + 1e-9 {
            flags.push((
                Flag::MixedMpContradicts,
                format!(
                    "the mixture with {name} cleared at {}, {} below the sample's {} (more than {}): the unknown is likely not {name}; check the identification",
                    celsius(sub.mixed_mp_clear_c.unwrap_or_default()),
                    celsius(d),
                    celsius(sub.mp_clear_c.unwrap_or_default()),
                    celsius(t.mixed_depression_c)
                ),
            ));
        }
    }
    w.identified_as = None;
    (w, flags)
}

fn no_purification(sub: &Submission, rise: f64, narrowing: f64) -> String {
    let range = |o: Option<f64>, c: Option<f64>| match (o, c) {
        (Some(o), Some(c)) => format!("{o:.1}-{c:.1} °C"),
        _ => "?".into(),
    };
    format!(
        "recrystallized {} against crude {}: the clear point moved {:+.1} °C and the range narrowed {:+.1} °C",
        range(sub.mp_onset_c, sub.mp_clear_c),
        range(sub.crude_mp_onset_c, sub.crude_mp_clear_c),
        rise,
        narrowing
    )
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::ingest::submission::Trial;
    use approx::assert_relative_eq;

    #[test]
    fn resolution_from_the_digits_written() {
        assert_relative_eq!(resolution(&[12.345, 14.1]), 0.001);
        assert_relative_eq!(resolution(&[12.0, 14.0]), 1.0);
        assert_relative_eq!(resolution(&[12.12345678]), 0.0001);
    }

    #[test]
    fn hand_worked_masses_by_difference() {
        // hand-worked: crude 15.432 - 12.105 = 3.327 g; recovered 14.210 - 12.105 = 2.105 g
        let mut s = Submission {
            crude_tare_g: Some(12.105),
            crude_gross_g: Some(15.432),
            recovered_tare_g: Some(12.105),
            recovered_gross_g: Some(14.210),
            ..Submission::default()
        };
        assert!(by_difference(&mut s).is_empty());
        assert_relative_eq!(s.crude_mass_g.unwrap(), 3.327, epsilon = 1e-9);
        assert_relative_eq!(s.recovered_mass_g.unwrap(), 2.105, epsilon = 1e-9);
        // a net column beside the weighings is used; 2.150 against the difference 2.105 differs
        // by 0.045 g, more than the 0.001 g the readings are written to (hand-worked)
        let mut s = Submission {
            recovered_mass_g: Some(2.150),
            ..s
        };
        s.crude_mass_g = Some(3.327);
        let flags = by_difference(&mut s);
        assert_eq!(flags.len(), 1, "{flags:?}");
        assert_eq!(flags[0].0, Flag::NetMismatch);
        assert!(flags[0].1.contains("2.15 g") && flags[0].1.contains("2.105 g"));
        assert_eq!(s.recovered_mass_g, Some(2.150));
        // 0.001 g apart is within a balance reading to 0.001 g (hand-worked)
        let mut s = Submission {
            recovered_mass_g: Some(2.106),
            ..s
        };
        assert!(by_difference(&mut s).is_empty());
        // a gross below its tare is impossible
        let mut s = Submission {
            crude_tare_g: Some(12.0),
            crude_gross_g: Some(11.5),
            ..Submission::default()
        };
        let flags = by_difference(&mut s);
        assert_eq!(flags[0].0, Flag::GrossBelowTare);
        assert_relative_eq!(s.crude_mass_g.unwrap(), -0.5);
    }

    #[test]
    fn hand_worked_trial_means_and_spread() {
        // trials 120.5-121.8 and 120.9-122.4: mean 120.7-122.1, spread 0.6 (hand-worked)
        let mut s = Submission {
            mp_trials: vec![
                Trial {
                    onset: Some(120.5),
                    clear: Some(121.8),
                },
                Trial {
                    onset: Some(120.9),
                    clear: Some(122.4),
                },
            ],
            ..Submission::default()
        };
        let (n, spread) = trials(&mut s);
        assert_eq!(n, Some(2.0));
        assert_relative_eq!(spread.unwrap(), 0.6, epsilon = 1e-9);
        assert_relative_eq!(s.mp_onset_c.unwrap(), 120.7, epsilon = 1e-9);
        assert_relative_eq!(s.mp_clear_c.unwrap(), 122.1, epsilon = 1e-9);
        assert!(!s.single_reading);
        let t = Tolerances::default();
        let (_, flags) = compare(&s, (n, spread), None, &t);
        assert!(flags.is_empty(), "0.6 °C is within the default 1.0 °C");
        // 119.0 and 122.4: 3.4 °C apart, more than 1.0 (hand-worked)
        s.mp_trials[0].clear = Some(119.0);
        s.mp_onset_c = None;
        s.mp_clear_c = None;
        let (n, spread) = trials(&mut s);
        let (_, flags) = compare(&s, (n, spread), None, &t);
        assert_eq!(flags[0].0, Flag::TrialsDisagree);
        // one trial blank: the other is used alone
        let mut s = Submission {
            mp_trials: vec![Trial {
                onset: Some(121.0),
                clear: Some(122.0),
            }],
            ..Submission::default()
        };
        assert_eq!(trials(&mut s), (Some(1.0), None));
        assert_eq!((s.mp_onset_c, s.mp_clear_c), (Some(121.0), Some(122.0)));
    }

    #[test]
    fn hand_worked_crude_against_recrystallized() {
        // crude 114.0-119.5, recrystallized 120.6-121.9: rise 121.9 - 119.5 = 2.4,
        // narrowing 5.5 - 1.3 = 4.2 (hand-worked)
        let s = Submission {
            crude_mp_onset_c: Some(114.0),
            crude_mp_clear_c: Some(119.5),
            mp_onset_c: Some(120.6),
            mp_clear_c: Some(121.9),
            ..Submission::default()
        };
        let t = Tolerances::default();
        let (w, flags) = compare(&s, (None, None), None, &t);
        assert_relative_eq!(w.crude_range_width_c.unwrap(), 5.5, epsilon = 1e-9);
        assert_relative_eq!(w.mp_rise_c.unwrap(), 2.4, epsilon = 1e-9);
        assert_relative_eq!(w.range_narrowing_c.unwrap(), 4.2, epsilon = 1e-9);
        assert!(flags.is_empty());
        // no higher and no narrower: no purification shown
        let s = Submission {
            crude_mp_onset_c: Some(120.0),
            crude_mp_clear_c: Some(122.0),
            mp_onset_c: Some(119.5),
            mp_clear_c: Some(121.8),
            ..s
        };
        let (_, flags) = compare(&s, (None, None), None, &t);
        assert_eq!(flags[0].0, Flag::NoPurificationShown);
    }

    #[test]
    fn hand_worked_mixed_melting_point() {
        // sample clears at 122.0, the mixture with the compound named at 115.5: 6.5 °C below,
        // more than 2.0 (hand-worked; a depressed mixed melting point means two different
        // compounds, common practice)
        let s = Submission {
            mp_onset_c: Some(121.0),
            mp_clear_c: Some(122.0),
            mixed_mp_onset_c: Some(111.0),
            mixed_mp_clear_c: Some(115.5),
            ..Submission::default()
        };
        let t = Tolerances::default();
        let (w, flags) = compare(&s, (None, None), Some("benzoic acid"), &t);
        assert_relative_eq!(w.mixed_depression_c.unwrap(), 6.5, epsilon = 1e-9);
        assert_eq!(flags[0].0, Flag::MixedMpContradicts);
        assert!(flags[0].1.contains("likely not benzoic acid"));
        // 121.2: 0.8 °C below, no contradiction
        let s = Submission {
            mixed_mp_clear_c: Some(121.2),
            ..s
        };
        let (_, flags) = compare(&s, (None, None), Some("benzoic acid"), &t);
        assert!(flags.is_empty());
    }
}
