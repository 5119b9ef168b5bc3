//! Measures: the numbers of a graded row that statistics summarise, the cohort compares and
//! criteria score. A measure is a column of the registry (`columns`) with a role; `Measure`
//! names one, so no measure is ever a string or an index outside the registry.

use std::fmt::Write as _;

use super::columns::{self, Column};
use super::{Assessed, Row};
use crate::fields::Field;
use crate::numtext::Fast;

/// Writes a measure's value as a student reads it ("recovery 64.0 %").
pub type Sentence = fn(&mut String, f64, &Assessed);

/// What a column is as a measure.
#[derive(Clone, Copy)]
pub struct MeasureRole {
    /// Summarised per section (section-stats.csv, the Statistics sheets).
    pub summarised: bool,
    /// Compared across sections and assistants (section-comparison.csv).
    pub compared: bool,
    /// A rubric criterion may score it.
    pub scorable: bool,
    /// The feedback sentence for a value.
    pub sentence: Sentence,
    /// Why there is no value, for the feedback.
    pub missing: &'static str,
    /// The entries the value is computed from: where the sheet has a column for each and the
    /// student's cell of one is blank or unreadable, a criterion gives its `if_blank` points.
    pub reads: &'static [Field],
}

impl MeasureRole {
    /// A measure criteria may score, neither summarised nor compared.
    pub const fn scored(sentence: Sentence, missing: &'static str) -> MeasureRole {
        MeasureRole {
            summarised: false,
            compared: false,
            scorable: true,
            sentence,
            missing,
            reads: &[],
        }
    }

    /// The same role, computed from these entries.
    pub const fn reads(self, reads: &'static [Field]) -> MeasureRole {
        MeasureRole { reads, ..self }
    }

    /// Scored and summarised per section.
    pub const fn summarised(sentence: Sentence, missing: &'static str) -> MeasureRole {
        MeasureRole {
            summarised: true,
            ..MeasureRole::scored(sentence, missing)
        }
    }

    /// Scored, summarised and compared across groups.
    pub const fn compared(sentence: Sentence, missing: &'static str) -> MeasureRole {
        MeasureRole {
            compared: true,
            ..MeasureRole::summarised(sentence, missing)
        }
    }

    /// The total score: summarised and compared, never scored by a criterion.
    pub const TOTAL: MeasureRole = MeasureRole {
        summarised: true,
        compared: true,
        scorable: false,
        sentence: sentences::total,
        missing: "not graded",
        reads: &[],
    };
}

/// A measure: a registry column with a measure role.
#[derive(Clone, Copy)]
pub struct Measure(&'static Column);

impl Measure {
    pub const RECOVERY: Measure = Measure(&columns::RECOVERY_PCT);
    pub const RANGE_WIDTH: Measure = Measure(&columns::RANGE_WIDTH_C);
    pub const DEPRESSION: Measure = Measure(&columns::DEPRESSION_C);
    pub const PURITY: Measure = Measure(&columns::PURITY_MOL_PCT);
    pub const CLEAR: Measure = Measure(&columns::MP_CLEAR_C);
    pub const SCORE: Measure = Measure(&columns::SCORE);
    pub const REPORT_ERROR: Measure = Measure(&columns::RECOVERY_REPORT_ERROR_PCT);

    /// Every measure, in registry order.
    pub fn all() -> impl Iterator<Item = Measure> {
        columns::all().filter(|c| c.measure.is_some()).map(Measure)
    }

    /// The measures summarised per section, in registry order.
    pub fn summarised() -> Vec<Measure> {
        Measure::all().filter(|m| m.role().summarised).collect()
    }

    /// The measures compared across groups, in registry order.
    pub fn compared() -> Vec<Measure> {
        Measure::all().filter(|m| m.role().compared).collect()
    }

    /// The measures a criterion may score, in registry order.
    pub fn scorable() -> Vec<Measure> {
        Measure::all().filter(|m| m.role().scorable).collect()
    }

    /// The measure named `key` in a rubric or an output.
    pub fn from_key(key: &str) -> Option<Measure> {
        Measure::all().find(|m| m.key() == key)
    }

    /// Its name in files and rubrics: "recovery_pct".
    pub fn key(self) -> &'static str {
        self.0.name
    }

    pub fn column(self) -> &'static Column {
        self.0
    }

    pub fn role(self) -> MeasureRole {
        // every `Measure` is made from a column with a role (`all` filters, the constants
        // are tested)
        self.0.measure.unwrap_or(MeasureRole::TOTAL)
    }

    /// "recovery", as a sentence names the measure.
    pub fn noun(self) -> String {
        self.0.label.to_lowercase()
    }

    pub fn unit(self) -> &'static str {
        self.0.unit.unwrap_or("")
    }

    /// The measure's value in a row; `None` where it cannot be computed (or is not finite).
    pub fn value(self, row: Row<'_>) -> Option<f64> {
        self.0.number(row).filter(|v| v.is_finite())
    }

    /// The measure's value in a row not yet scored (`None` for the score).
    pub fn of_assessed(self, a: &Assessed) -> Option<f64> {
        self.0.number(Row {
            assessed: a,
            score: None,
        })
    }

    /// Why a row has no value of this measure, in words for its feedback.
    pub fn why_missing(self, a: &Assessed) -> String {
        match (
            self == Measure::RANGE_WIDTH,
            a.submission.single_reading,
            a.mp_clear_c,
        ) {
            (true, true, Some(_)) => format!(
                "{}, not a range, so no width was measured",
                one_temperature(a)
            ),
            _ => self.role().missing.to_string(),
        }
    }

    /// Why the measure has no value because of the student's own entry: the first of the
    /// entries it reads that was left blank or could not be read on a sheet that has a column
    /// for it (`Submission::missing_entry`). `None` when the cause lies elsewhere (no column,
    /// a zero mass, one temperature), which the criterion's `if_missing` scores.
    pub fn missing_entry(self, a: &Assessed) -> Option<String> {
        let reads = self.role().reads;
        if reads.iter().any(|f| a.submission.lacks_column(*f)) {
            return None;
        }
        reads.iter().find_map(|f| a.submission.missing_entry(*f))
    }

    /// Appends the feedback sentence for value `x`.
    pub fn sentence(self, out: &mut String, x: f64, a: &Assessed) {
        (self.role().sentence)(out, x, a);
    }
}

/// "one temperature (121.5 °C) was recorded", or, where a calibration corrected it, "one
/// temperature was recorded (121.5 °C as read, 121.3 °C calibrated)": the value a student wrote
/// is never called recorded when it is the corrected one.
pub fn one_temperature(a: &Assessed) -> String {
    match (a.submission.mp_clear_c, a.mp_clear_c) {
        (Some(read), Some(used)) if a.calibration.is_some() && read != used => format!(
            "one temperature was recorded ({:.1} °C as read, {:.1} °C calibrated)",
            Fast(read),
            Fast(used)
        ),
        (_, Some(used)) => format!("one temperature ({:.1} °C) was recorded", Fast(used)),
        (Some(read), None) => format!("one temperature ({:.1} °C) was recorded", Fast(read)),
        (None, None) => "one temperature was recorded".to_string(),
    }
}

impl PartialEq for Measure {
    fn eq(&self, other: &Measure) -> bool {
        self.key() == other.key()
    }
}

impl Eq for Measure {}

impl std::hash::Hash for Measure {
    fn hash<H: std::hash::Hasher>(&self, h: &mut H) {
        self.key().hash(h);
    }
}

impl std::fmt::Debug for Measure {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        write!(f, "Measure({})", self.key())
    }
}

/// The feedback sentences of the measures, as the student reads them.
pub mod sentences {
    use super::*;

    fn reference(out: &mut String, a: &Assessed) {
        if let Some(r) = a.reference_mp_c {
            let _ = write!(out, " ({:.1} °C)", Fast(r));
        }
    }

    pub fn recovery(out: &mut String, x: f64, _: &Assessed) {
        let _ = write!(out, "recovery {:.1} %", Fast(x));
    }

    pub fn width(out: &mut String, x: f64, a: &Assessed) {
        let v = Fast(x);
        if x < 0.0 {
            let _ = match (a.mp_onset_c, a.mp_clear_c) {
                (Some(o), Some(c)) => write!(
                    out,
                    "the range {:.1}-{:.1} °C is inverted (the onset is above the clear point)",
                    Fast(o),
                    Fast(c)
                ),
                _ => write!(
                    out,
                    "the range is inverted (the onset is above the clear point)"
                ),
            };
            return;
        }
        let _ = match (a.mp_onset_c, a.mp_clear_c) {
            (Some(o), Some(c)) => write!(
                out,
                "the range {:.1}-{:.1} °C is {v:.1} °C wide",
                Fast(o),
                Fast(c)
            ),
            _ => write!(out, "the range is {v:.1} °C wide"),
        };
    }

    pub fn depression(out: &mut String, x: f64, a: &Assessed) {
        let _ = if x >= 0.0 {
            write!(
                out,
                "the clear point is {:.1} °C below the literature value",
                Fast(x)
            )
        } else {
            write!(
                out,
                "the clear point is {:.1} °C above the literature value",
                Fast(-x)
            )
        };
        reference(out, a);
    }

    pub fn purity(out: &mut String, x: f64, _: &Assessed) {
        let _ = write!(out, "estimated purity {:.1} mol %", Fast(x));
    }

    pub fn clear(out: &mut String, x: f64, _: &Assessed) {
        let _ = write!(out, "clear point {:.1} °C", Fast(x));
    }

    pub fn of_ceiling(out: &mut String, x: f64, _: &Assessed) {
        let _ = write!(
            out,
            "recovery is {:.0} % of the most that could crystallise",
            Fast(x)
        );
    }

    pub fn report_error(out: &mut String, x: f64, _: &Assessed) {
        if x < 0.05 {
            out.push_str("the reported recovery matches the masses");
        } else {
            let _ = write!(out, "the reported recovery is off by {:.1} points", Fast(x));
        }
    }

    pub fn rise(out: &mut String, x: f64, _: &Assessed) {
        let _ = if x >= 0.0 {
            write!(
                out,
                "the clear point rose {:.1} °C on recrystallization",
                Fast(x)
            )
        } else {
            write!(
                out,
                "the clear point fell {:.1} °C on recrystallization",
                Fast(-x)
            )
        };
    }

    pub fn narrowing(out: &mut String, x: f64, _: &Assessed) {
        let _ = if x >= 0.0 {
            write!(
                out,
                "the range narrowed by {:.1} °C on recrystallization",
                Fast(x)
            )
        } else {
            write!(
                out,
                "the range widened by {:.1} °C on recrystallization",
                Fast(-x)
            )
        };
    }

    pub fn spread(out: &mut String, x: f64, a: &Assessed) {
        let n = a.workup.mp_trials.unwrap_or(0.0);
        let _ = write!(out, "{n:.0} trials agree within {:.1} °C", Fast(x));
    }

    pub fn identification(out: &mut String, x: f64, a: &Assessed) {
        let named = a.workup.identified_as.as_deref();
        let key = a.workup.identity.as_deref().unwrap_or("the key's compound");
        let _ = match (x >= 0.5, named) {
            (true, Some(n)) => write!(out, "the unknown was correctly identified as {n}"),
            (true, None) => write!(out, "the unknown was correctly identified"),
            (false, Some(n)) => write!(out, "the unknown was identified as {n}, but it was {key}"),
            (false, None) => write!(
                out,
                "no identification of the unknown was given (it was {key})"
            ),
        };
    }

    pub fn total(out: &mut String, x: f64, _: &Assessed) {
        let _ = write!(out, "total {:.1} points", Fast(x));
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn the_named_measures_are_measures_of_the_registry() {
        for m in [
            Measure::RECOVERY,
            Measure::RANGE_WIDTH,
            Measure::DEPRESSION,
            Measure::PURITY,
            Measure::CLEAR,
            Measure::SCORE,
        ] {
            assert!(m.column().measure.is_some(), "{m:?}");
            assert_eq!(Measure::from_key(m.key()), Some(m));
        }
        assert_eq!(Measure::from_key("recovery"), None);
    }

    #[test]
    fn roles_as_the_outputs_use_them() {
        let keys = |v: Vec<Measure>| v.into_iter().map(Measure::key).collect::<Vec<_>>();
        assert_eq!(
            keys(Measure::summarised()),
            [
                "recovery_pct",
                "range_width_c",
                "depression_c",
                "purity_mol_pct",
                "score"
            ]
        );
        assert_eq!(
            keys(Measure::compared()),
            ["recovery_pct", "depression_c", "purity_mol_pct", "score"]
        );
        assert!(!Measure::scorable().contains(&Measure::SCORE));
    }
}
