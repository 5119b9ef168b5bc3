//! The one description of every column a graded row is written as, and of every measure:
//! its name in results.csv, results.json and results.parquet, its label and unit for people,
//! the decimals a person is shown, its kind, which outputs carry it, whether it is personal
//! data, which flags shade it in the graded workbook, and how it is read from a graded row.
//!
//! Every writer iterates `ALL`: results.csv and results.json take the columns marked for them
//! in this order (the public contract's order: new columns are appended, never renamed or
//! moved), results.parquet the ones marked for it, the graded workbook its recomputed
//! columns. A column with a measure role is also a measure (`Measure`): section statistics,
//! the cohort comparisons and the rubric's criteria take their measures from here. Adding a
//! measure is one entry below plus its computation.

use super::measure::{sentences, MeasureRole};
use super::{Assessed, CriterionScore, Flag, Row, Score};
use crate::fields::Field;
use crate::ingest::Submission;

/// What a column holds, which decides how each output writes it.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Kind {
    Text,
    Number,
    /// A whole number (the spreadsheet row).
    Integer,
    /// A list: results.json writes an array, the CSV and parquet files join the items with
    /// `sep`.
    List {
        sep: &'static str,
    },
    /// Each criterion's points. results.json writes them here as one object; results.csv
    /// writes one `points_<criterion id>` column per criterion after every other column.
    Points,
}

/// Which outputs carry a column.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub struct Outputs(u8);

impl Outputs {
    pub const NONE: Outputs = Outputs(0);
    /// results.csv (and the pseudonymized results).
    pub const CSV: Outputs = Outputs(1);
    pub const JSON: Outputs = Outputs(2);
    pub const PARQUET: Outputs = Outputs(4);
    /// The recomputed columns of a graded workbook's section sheets.
    pub const WORKBOOK: Outputs = Outputs(8);
    /// results.csv and results.json, which hold every recorded column.
    pub const RESULTS: Outputs = Outputs(1 | 2);

    pub const fn and(self, other: Outputs) -> Outputs {
        Outputs(self.0 | other.0)
    }

    pub const fn has(self, other: Outputs) -> bool {
        self.0 & other.0 == other.0
    }
}

/// Personal data: replaced (an id, by its pseudonym), left out (a name) or told without the
/// row's own cell text (sentences that may quote it) in anything that leaves the course.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Personal {
    Id,
    Name,
    Quotes,
}

/// The items of a list column, borrowed from the row.
#[derive(Clone, Copy, Debug)]
pub enum Items<'a> {
    /// Flag codes.
    Codes(&'a [(Flag, String)]),
    /// Each flag as "code: reason".
    Notes(&'a [(Flag, String)]),
    Texts(&'a [String]),
}

impl Items<'_> {
    pub fn len(&self) -> usize {
        match self {
            Items::Codes(f) | Items::Notes(f) => f.len(),
            Items::Texts(t) => t.len(),
        }
    }

    pub fn is_empty(&self) -> bool {
        self.len() == 0
    }

    /// Appends item `i` to `out`.
    pub fn push_item(&self, i: usize, out: &mut String) {
        match self {
            Items::Codes(f) => out.push_str(f[i].0.code()),
            Items::Notes(f) => {
                out.push_str(f[i].0.code());
                out.push_str(": ");
                out.push_str(&f[i].1);
            }
            Items::Texts(t) => out.push_str(&t[i]),
        }
    }

    /// Appends every item to `out`, `sep` between them.
    pub fn push_joined(&self, sep: &str, out: &mut String) {
        for i in 0..self.len() {
            if i > 0 {
                out.push_str(sep);
            }
            self.push_item(i, out);
        }
    }
}

/// A column's value in one row, borrowed from it.
#[derive(Clone, Copy, Debug)]
pub enum Value<'a> {
    Text(Option<&'a str>),
    Number(Option<f64>),
    Integer(u64),
    Items(Items<'a>),
    Points(&'a [CriterionScore]),
}

/// One column of the graded row.
#[derive(Clone, Copy)]
pub struct Column {
    /// The name in results.csv, results.json and results.parquet (and a measure's key).
    pub name: &'static str,
    /// For people: a workbook header, a table heading.
    pub label: &'static str,
    pub unit: Option<&'static str>,
    /// Decimals a person is shown (the files keep every digit).
    pub decimals: u8,
    pub kind: Kind,
    pub outputs: Outputs,
    pub personal: Option<Personal>,
    /// Flags that shade this column's cell in the graded workbook.
    pub shaded_by: &'static [Flag],
    /// Set for a measure: a number that statistics summarise or a criterion scores.
    pub measure: Option<MeasureRole>,
    /// For a workbook column: a section sheet carries it only when its input sheet has a
    /// column for one of these fields (empty: always). A sheet without the whole experiment's
    /// columns keeps its layout.
    pub sheet_has: &'static [Field],
    pub get: fn(Row<'_>) -> Value<'_>,
}

impl std::fmt::Debug for Column {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        write!(f, "Column({})", self.name)
    }
}

impl Column {
    /// The column's value in a row.
    pub fn value<'a>(&self, row: Row<'a>) -> Value<'a> {
        (self.get)(row)
    }

    /// The column's value as a number, for a numeric column.
    pub fn number(&self, row: Row<'_>) -> Option<f64> {
        match (self.get)(row) {
            Value::Number(v) => v,
            Value::Integer(n) => Some(n as f64),
            _ => None,
        }
    }

    /// "Crude (g)": the label with its unit, as a header for people.
    pub fn header(&self) -> String {
        match self.unit {
            Some(u) => format!("{} ({u})", self.label),
            None => self.label.to_string(),
        }
    }

    pub fn is_in(&self, output: Outputs) -> bool {
        self.outputs.has(output)
    }

    /// Whether a section sheet whose rows are like `s` carries this workbook column: always,
    /// or when the input sheet has a column for one of `sheet_has` (`s.no_column` lists the
    /// fields it has none for).
    pub fn in_sheet_of(&self, s: &Submission) -> bool {
        self.sheet_has.is_empty() || self.sheet_has.iter().any(|f| !s.no_column.contains(f))
    }
}

/// Every column, in the results contract's order (new ones appended).
pub fn all() -> impl Iterator<Item = &'static Column> {
    ALL.iter().copied()
}

/// The columns an output carries, in order.
pub fn carried_by(output: Outputs) -> impl Iterator<Item = &'static Column> {
    all().filter(move |c| c.is_in(output))
}

/// Where a column stands among those an output carries.
pub fn position_in(output: Outputs, column: &Column) -> Option<usize> {
    carried_by(output).position(|c| c.name == column.name)
}

const RESULTS: Outputs = Outputs::RESULTS;
const RESULTS_PARQUET: Outputs = Outputs::RESULTS.and(Outputs::PARQUET);
const EVERYWHERE: Outputs = RESULTS_PARQUET.and(Outputs::WORKBOOK);
/// Flags about the masses.
const MASS_FLAGS: &[Flag] = &[
    Flag::RecoveryOver100,
    Flag::NonpositiveMass,
    Flag::LowRecovery,
    Flag::RecoveryMismatch,
];
const RECOVERED_FLAGS: &[Flag] = &[
    Flag::RecoveryOver100,
    Flag::NonpositiveMass,
    Flag::LowRecovery,
    Flag::RecoveryMismatch,
    Flag::LikelyWet,
];
const WEIGHING_FLAGS: &[Flag] = &[Flag::GrossBelowTare, Flag::NetMismatch];
const READING_FLAGS: &[Flag] = &[Flag::RangeInverted, Flag::OutsideCalibratedSpan];

/// The defaults every entry starts from.
const BLANK: Column = Column {
    name: "",
    label: "",
    unit: None,
    decimals: 1,
    kind: Kind::Text,
    outputs: RESULTS,
    personal: None,
    shaded_by: &[],
    measure: None,
    sheet_has: &[],
    get: |_| Value::Text(None),
};

fn a(r: Row<'_>) -> &Assessed {
    r.assessed
}

fn w(r: Row<'_>) -> &super::Workup {
    &r.assessed.workup
}

/// The score of a graded row; `None` for an excused student or a row not yet scored.
fn graded(r: Row<'_>) -> Option<&Score> {
    r.score.filter(|s| !s.excused)
}

macro_rules! registry {
    ($( $(#[doc = $doc:literal])* $id:ident = { $($body:tt)* } )*) => {
        $( $(#[doc = $doc])* pub const $id: Column = Column { $($body)* ..BLANK }; )*
        /// Every column, in the results contract's order.
        pub const ALL: &[&Column] = &[ $( &$id ),* ];
    };
}

registry! {
    SOURCE = { name: "source", label: "File", outputs: RESULTS_PARQUET,
        get: |r| Value::Text(Some(&a(r).submission.source)), }
    SHEET = { name: "sheet", label: "Sheet", outputs: RESULTS_PARQUET,
        get: |r| Value::Text(a(r).submission.sheet.as_deref()), }
    ROW = { name: "row", label: "Row", kind: Kind::Integer, outputs: RESULTS_PARQUET,
        get: |r| Value::Integer(u64::from(a(r).submission.row)), }
    SECTION = { name: "section", label: "Section", outputs: RESULTS_PARQUET,
        get: |r| Value::Text(Some(&a(r).submission.section)), }
    STUDENT_ID = { name: "student_id", label: "Student id", outputs: RESULTS_PARQUET,
        personal: Some(Personal::Id),
        get: |r| Value::Text(a(r).submission.student_id.as_deref()), }
    STUDENT_NAME = { name: "student_name", label: "Name", outputs: RESULTS_PARQUET,
        personal: Some(Personal::Name),
        get: |r| Value::Text(a(r).submission.student_name.as_deref()), }
    BENCH = { name: "bench", label: "Bench", outputs: RESULTS_PARQUET,
        get: |r| Value::Text(a(r).submission.bench.as_deref()), }
    /// The library's name for the compound, else the name as written.
    COMPOUND = { name: "compound", label: "Compound", outputs: RESULTS_PARQUET,
        personal: Some(Personal::Quotes),
        get: |r| Value::Text(a(r).compound.as_deref().or(a(r).submission.compound.as_deref())), }
    CRUDE_MASS_G = { name: "crude_mass_g", label: "Crude", unit: Some("g"), decimals: 3,
        kind: Kind::Number, outputs: EVERYWHERE, shaded_by: MASS_FLAGS,
        get: |r| Value::Number(a(r).submission.crude_mass_g), }
    RECOVERED_MASS_G = { name: "recovered_mass_g", label: "Recovered", unit: Some("g"),
        decimals: 3, kind: Kind::Number, outputs: EVERYWHERE, shaded_by: RECOVERED_FLAGS,
        get: |r| Value::Number(a(r).submission.recovered_mass_g), }
    SOLVENT_VOLUME_ML = { name: "solvent_volume_ml", label: "Solvent volume", unit: Some("mL"),
        kind: Kind::Number, outputs: RESULTS_PARQUET,
        get: |r| Value::Number(a(r).submission.solvent_volume_ml), }
    /// The onset used: corrected by the calibration where one applies.
    MP_ONSET_C = { name: "mp_onset_c", label: "Onset used", unit: Some("°C"),
        kind: Kind::Number, outputs: EVERYWHERE, shaded_by: READING_FLAGS,
        get: |r| Value::Number(a(r).mp_onset_c), }
    MP_CLEAR_C = { name: "mp_clear_c", label: "Clear point used", unit: Some("°C"),
        kind: Kind::Number, outputs: EVERYWHERE,
        shaded_by: &[Flag::RangeInverted, Flag::OutsideCalibratedSpan, Flag::AboveReference],
        measure: Some(MeasureRole::scored(sentences::clear, "no usable melting range was recorded").reads(&[Field::MpClear])),
        get: |r| Value::Number(a(r).mp_clear_c), }
    REPORTED_RECOVERY_PCT = { name: "reported_recovery_pct", label: "Reported recovery",
        unit: Some("%"), kind: Kind::Number,
        get: |r| Value::Number(a(r).submission.reported_recovery_pct), }
    RECOVERY_PCT = { name: "recovery_pct", label: "Recovery", unit: Some("%"),
        kind: Kind::Number, outputs: EVERYWHERE, shaded_by: RECOVERED_FLAGS,
        measure: Some(MeasureRole::compared(sentences::recovery, "no recovery could be computed from the masses").reads(&[Field::CrudeMass, Field::RecoveredMass])),
        get: |r| Value::Number(a(r).recovery_pct), }
    RANGE_WIDTH_C = { name: "range_width_c", label: "Range width", unit: Some("°C"),
        kind: Kind::Number, outputs: EVERYWHERE,
        shaded_by: &[Flag::RangeInverted, Flag::OutsideCalibratedSpan, Flag::LikelyImpure],
        measure: Some(MeasureRole::summarised(sentences::width, "no usable melting range was recorded").reads(&[Field::MpOnset, Field::MpClear])),
        get: |r| Value::Number(a(r).range_width_c), }
    REFERENCE_MP_C = { name: "reference_mp_c", label: "Reference mp", unit: Some("°C"),
        kind: Kind::Number, outputs: EVERYWHERE,
        get: |r| Value::Number(a(r).reference_mp_c), }
    DEPRESSION_C = { name: "depression_c", label: "Depression", unit: Some("°C"),
        kind: Kind::Number, outputs: EVERYWHERE,
        shaded_by: &[Flag::LikelyImpure, Flag::AboveReference, Flag::RangeInverted],
        measure: Some(MeasureRole::compared(sentences::depression, "no clear point and reference to compare").reads(&[Field::MpClear])),
        get: |r| Value::Number(a(r).depression_c), }
    FLAGS = { name: "flags", label: "Flags", kind: Kind::List { sep: ";" },
        outputs: RESULTS_PARQUET, get: |r| Value::Items(Items::Codes(&a(r).flags)), }
    FLAG_NOTES = { name: "flag_notes", label: "Reasons", kind: Kind::List { sep: "; " },
        personal: Some(Personal::Quotes),
        get: |r| Value::Items(Items::Notes(&a(r).flags)), }
    ASSISTANT = { name: "assistant", label: "Teaching assistant",
        get: |r| Value::Text(a(r).submission.assistant.as_deref()), }
    APPARATUS = { name: "apparatus", label: "Apparatus",
        get: |r| Value::Text(a(r).submission.apparatus.as_deref()), }
    SOLVENT = { name: "solvent", label: "Solvent",
        get: |r| Value::Text(a(r).submission.solvent.as_deref()), }
    NOTES = { name: "notes", label: "Notes", kind: Kind::List { sep: "; " },
        personal: Some(Personal::Quotes),
        get: |r| Value::Items(Items::Texts(&a(r).submission.notes)), }
    PURITY_MOL_PCT = { name: "purity_mol_pct", label: "Purity", unit: Some("mol %"),
        kind: Kind::Number, outputs: EVERYWHERE,
        shaded_by: &[Flag::AboveReference, Flag::RangeInverted],
        measure: Some(MeasureRole::compared(sentences::purity, "no purity estimate could be made").reads(&[Field::MpClear])),
        get: |r| Value::Number(a(r).purity_mol_pct), }
    PURITY_NOTE = { name: "purity_note", label: "Purity note",
        get: |r| Value::Text(Some(&a(r).purity_note)), }
    MAX_RECOVERY_PCT = { name: "max_recovery_pct", label: "Recovery ceiling", unit: Some("%"),
        kind: Kind::Number, outputs: EVERYWHERE, shaded_by: &[Flag::LikelyWet],
        get: |r| Value::Number(a(r).max_recovery_pct), }
    MIN_SOLVENT_ML = { name: "min_solvent_ml", label: "Least solvent", unit: Some("mL"),
        kind: Kind::Number, outputs: EVERYWHERE, shaded_by: &[Flag::SolventBelowMinimum],
        get: |r| Value::Number(a(r).min_solvent_ml), }
    /// The onset as read, before any calibration.
    MP_ONSET_OBSERVED_C = { name: "mp_onset_observed_c", label: "Onset read", unit: Some("°C"),
        kind: Kind::Number, get: |r| Value::Number(a(r).submission.mp_onset_c), }
    MP_CLEAR_OBSERVED_C = { name: "mp_clear_observed_c", label: "Clear point read",
        unit: Some("°C"), kind: Kind::Number,
        get: |r| Value::Number(a(r).submission.mp_clear_c), }
    CALIBRATION = { name: "calibration", label: "Calibration",
        get: |r| Value::Text(a(r).calibration.as_deref()), }
    SCORE = { name: "score", label: "Score", unit: Some("points"), kind: Kind::Number,
        outputs: RESULTS_PARQUET, measure: Some(MeasureRole::TOTAL),
        get: |r| Value::Number(graded(r).map(|s| s.total)), }
    MAX_SCORE = { name: "max_score", label: "Max", kind: Kind::Number,
        outputs: RESULTS_PARQUET, get: |r| Value::Number(r.score.map(|s| s.max)), }
    PERCENT = { name: "percent", label: "Percent", unit: Some("%"), kind: Kind::Number,
        outputs: RESULTS_PARQUET, get: |r| Value::Number(graded(r).map(|s| s.percent)), }
    LETTER = { name: "letter", label: "Letter",
        get: |r| Value::Text(graded(r).and_then(|s| s.letter.as_deref())), }
    POINTS = { name: "points", label: "Points", kind: Kind::Points,
        get: |r| Value::Points(r.score.map_or(&[], |s| s.criteria.as_slice())), }
    FEEDBACK = { name: "feedback", label: "Feedback", personal: Some(Personal::Quotes),
        get: |r| Value::Text(Some(r.score.map_or("", |s| s.feedback.as_str()))), }
    OVERRIDES = { name: "overrides", label: "Overrides", kind: Kind::List { sep: "; " },
        get: |r| Value::Items(Items::Texts(r.score.map_or(&[], |s| s.overrides.as_slice()))), }
    /// Recovery as a percentage of the recovery ceiling (a measure for criteria only).
    RECOVERY_OF_CEILING_PCT = { name: "recovery_of_ceiling_pct", label: "Recovery of ceiling",
        unit: Some("%"), kind: Kind::Number, outputs: Outputs::NONE,
        measure: Some(MeasureRole::scored(sentences::of_ceiling, "no recovery ceiling could be computed (masses, solvent volume or the cold solubility unknown)").reads(&[Field::CrudeMass, Field::RecoveredMass, Field::SolventVolume])),
        get: |r| Value::Number(
            a(r).recovery_pct.zip(a(r).max_recovery_pct.filter(|c| *c > 0.0)).map(|(rec, c)| 100.0 * rec / c)
        ), }
    /// |reported - recomputed| recovery, in percentage points (a measure for criteria only).
    RECOVERY_REPORT_ERROR_PCT = { name: "recovery_report_error_pct",
        label: "Reported recovery error", unit: Some("points"), kind: Kind::Number,
        outputs: Outputs::NONE,
        measure: Some(MeasureRole::scored(sentences::report_error, "no reported recovery to check").reads(&[Field::ReportedRecovery])),
        get: |r| Value::Number(
            a(r).submission.reported_recovery_pct.zip(a(r).recovery_pct).map(|(rep, rec)| (rep - rec).abs())
        ), }
    /// `graded`, `excused` for a student who withdrew or was excused (no score given), or
    /// `no-submission` for a rostered student of whom no row was read.
    STATUS = { name: "status", label: "Status", outputs: RESULTS_PARQUET,
        get: |r| Value::Text(Some(if a(r).submission.no_submission {
            "no-submission"
        } else if a(r).excused.is_some() {
            "excused"
        } else {
            "graded"
        })), }
    /// The text of the sheet's own notes or comments column, as the assistant wrote it
    /// (`notes` holds benchgrade's reading notes). Free text about a person: left out of
    /// anything pseudonymised.
    SHEET_NOTES = { name: "sheet_notes", label: "Sheet notes", personal: Some(Personal::Name),
        get: |r| Value::Text(a(r).submission.remarks.as_deref()), }
    // appended for the whole experiment (crude and recrystallized ranges, weighing by
    // difference, repeat determinations, unknowns); in a graded workbook's section sheet only
    // where the input sheet has such columns (`sheet_has`), so that other sheets stay as they
    // were
    CRUDE_MP_ONSET_C = { name: "crude_mp_onset_c", label: "Crude onset", unit: Some("°C"),
        kind: Kind::Number, outputs: EVERYWHERE, sheet_has: &[Field::CrudeMpRange, Field::CrudeMpOnset, Field::CrudeMpClear],
        get: |r| Value::Number(w(r).crude_mp_onset_c), }
    CRUDE_MP_CLEAR_C = { name: "crude_mp_clear_c", label: "Crude clear point", unit: Some("°C"),
        kind: Kind::Number, outputs: EVERYWHERE, sheet_has: &[Field::CrudeMpRange, Field::CrudeMpOnset, Field::CrudeMpClear],
        get: |r| Value::Number(w(r).crude_mp_clear_c), }
    CRUDE_RANGE_WIDTH_C = { name: "crude_range_width_c", label: "Crude range width",
        unit: Some("°C"), kind: Kind::Number, outputs: EVERYWHERE, sheet_has: &[Field::CrudeMpRange, Field::CrudeMpOnset, Field::CrudeMpClear],
        get: |r| Value::Number(w(r).crude_range_width_c), }
    /// Recrystallized clear point minus the crude's.
    MP_RISE_C = { name: "mp_rise_c", label: "Melting point rise", unit: Some("°C"),
        kind: Kind::Number, outputs: EVERYWHERE, sheet_has: &[Field::CrudeMpRange, Field::CrudeMpOnset, Field::CrudeMpClear], shaded_by: &[Flag::NoPurificationShown],
        measure: Some(MeasureRole::scored(sentences::rise, "no crude and recrystallized clear points to compare")),
        get: |r| Value::Number(w(r).mp_rise_c), }
    /// Crude width minus recrystallized width.
    RANGE_NARROWING_C = { name: "range_narrowing_c", label: "Range narrowing", unit: Some("°C"),
        kind: Kind::Number, outputs: EVERYWHERE, sheet_has: &[Field::CrudeMpRange, Field::CrudeMpOnset, Field::CrudeMpClear], shaded_by: &[Flag::NoPurificationShown],
        measure: Some(MeasureRole::scored(sentences::narrowing, "no crude and recrystallized ranges to compare")),
        get: |r| Value::Number(w(r).range_narrowing_c), }
    CRUDE_TARE_G = { name: "crude_tare_g", label: "Crude tare", unit: Some("g"), decimals: 3,
        kind: Kind::Number, outputs: EVERYWHERE, sheet_has: &[Field::Tare, Field::CrudeTare], shaded_by: WEIGHING_FLAGS,
        get: |r| Value::Number(a(r).submission.crude_tare_g), }
    CRUDE_GROSS_G = { name: "crude_gross_g", label: "Crude gross", unit: Some("g"), decimals: 3,
        kind: Kind::Number, outputs: EVERYWHERE, sheet_has: &[Field::CrudeGross], shaded_by: WEIGHING_FLAGS,
        get: |r| Value::Number(a(r).submission.crude_gross_g), }
    RECOVERED_TARE_G = { name: "recovered_tare_g", label: "Recovered tare", unit: Some("g"),
        decimals: 3, kind: Kind::Number, outputs: EVERYWHERE, sheet_has: &[Field::Tare, Field::RecoveredTare], shaded_by: WEIGHING_FLAGS,
        get: |r| Value::Number(a(r).submission.recovered_tare_g), }
    RECOVERED_GROSS_G = { name: "recovered_gross_g", label: "Recovered gross", unit: Some("g"),
        decimals: 3, kind: Kind::Number, outputs: EVERYWHERE, sheet_has: &[Field::RecoveredGross], shaded_by: WEIGHING_FLAGS,
        get: |r| Value::Number(a(r).submission.recovered_gross_g), }
    /// How many trials the melting range used is the mean of.
    MP_TRIALS = { name: "mp_trials", label: "Trials", decimals: 0, kind: Kind::Number,
        outputs: RESULTS_PARQUET, get: |r| Value::Number(w(r).mp_trials), }
    /// The largest difference between the trials' clear points.
    TRIAL_SPREAD_C = { name: "trial_spread_c", label: "Trial spread", unit: Some("°C"),
        kind: Kind::Number, outputs: EVERYWHERE, sheet_has: &[Field::MpTrialRange, Field::MpTrialOnset, Field::MpTrialClear], shaded_by: &[Flag::TrialsDisagree],
        measure: Some(MeasureRole::scored(sentences::spread, "no repeat determinations were recorded")),
        get: |r| Value::Number(w(r).trial_spread_c), }
    UNKNOWN_CODE = { name: "unknown_code", label: "Unknown",
        outputs: RESULTS_PARQUET,
        get: |r| Value::Text(a(r).submission.unknown_code.as_deref()), }
    /// The library's name for the compound the student named, else the name as written.
    IDENTIFIED_AS = { name: "identified_as", label: "Identified as",
        outputs: RESULTS_PARQUET, personal: Some(Personal::Quotes),
        get: |r| Value::Text(w(r).identified_as.as_deref().or(a(r).submission.identified_as.as_deref())), }
    /// The answer key's compound for the unknown's code.
    IDENTITY = { name: "identity", label: "Key compound", outputs: RESULTS_PARQUET,
        get: |r| Value::Text(w(r).identity.as_deref()), }
    /// `correct`, `wrong`, `none` or `no-key`.
    IDENTIFICATION = { name: "identification", label: "Identification",
        outputs: RESULTS_PARQUET, get: |r| Value::Text(w(r).identification), }
    MIXED_MP_ONSET_C = { name: "mixed_mp_onset_c", label: "Mixed onset", unit: Some("°C"),
        kind: Kind::Number, outputs: EVERYWHERE, sheet_has: &[Field::MixedMpRange, Field::MixedMpOnset, Field::MixedMpClear],
        get: |r| Value::Number(w(r).mixed_mp_onset_c), }
    MIXED_MP_CLEAR_C = { name: "mixed_mp_clear_c", label: "Mixed clear point", unit: Some("°C"),
        kind: Kind::Number, outputs: EVERYWHERE, sheet_has: &[Field::MixedMpRange, Field::MixedMpOnset, Field::MixedMpClear],
        get: |r| Value::Number(w(r).mixed_mp_clear_c), }
    /// The sample's clear point minus the mixture's.
    MIXED_DEPRESSION_C = { name: "mixed_depression_c", label: "Mixed depression",
        unit: Some("°C"), kind: Kind::Number, outputs: EVERYWHERE, sheet_has: &[Field::MixedMpRange, Field::MixedMpOnset, Field::MixedMpClear],
        shaded_by: &[Flag::MixedMpContradicts],
        get: |r| Value::Number(w(r).mixed_depression_c), }
    /// 1 for an unknown identified correctly, 0 otherwise (a measure for criteria only; the
    /// results carry the word in `identification`).
    IDENTIFICATION_SCORE = { name: "identification", label: "Identification", unit: Some("points"),
        kind: Kind::Number, outputs: Outputs::NONE,
        measure: Some(MeasureRole::scored(sentences::identification, "no unknown was identified against a key")),
        get: |r| Value::Number(match w(r).identification {
            Some("correct") => Some(1.0),
            Some("wrong" | "none") => Some(0.0),
            _ => None,
        }), }
    /// What graders' corrections (`--corrections`) changed in the row, each with who and why.
    CORRECTIONS = { name: "corrections", label: "Corrections", kind: Kind::List { sep: "; " },
        get: |r| Value::Items(Items::Texts(a(r).submission.corrections.as_slice())), }
    /// Days after the deadline the report came in, from a late-days column.
    LATE_DAYS = { name: "late_days", label: "Days late", unit: Some("days"), kind: Kind::Number,
        get: |r| Value::Number(a(r).submission.late_days), }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Names are distinct among the columns an output carries, and among the measures (the
    /// `identification` measure, 1 or 0, is carried by no output: the results hold the word).
    #[test]
    fn names_are_distinct_snake_case() {
        assert!(all().all(|c| c
            .name
            .chars()
            .all(|ch| ch.is_ascii_lowercase() || ch == '_')));
        for group in [
            all()
                .filter(|c| c.outputs != Outputs::NONE)
                .collect::<Vec<_>>(),
            all().filter(|c| c.measure.is_some()).collect(),
        ] {
            let mut names: Vec<&str> = group.iter().map(|c| c.name).collect();
            let n = names.len();
            names.sort_unstable();
            names.dedup();
            assert_eq!(names.len(), n);
        }
    }

    #[test]
    fn every_numeric_column_says_how_it_reads_and_every_workbook_column_has_a_unit() {
        for c in carried_by(Outputs::WORKBOOK) {
            assert_eq!(c.kind, Kind::Number, "{}", c.name);
            assert!(c.unit.is_some(), "{} needs a unit for its header", c.name);
        }
        for c in all().filter(|c| c.measure.is_some()) {
            assert_eq!(c.kind, Kind::Number, "measure {} must be a number", c.name);
        }
    }

    #[test]
    fn every_getter_gives_a_value_of_its_kind() {
        let g = super::super::Graded::default();
        for c in all() {
            let ok = matches!(
                (c.kind, c.value(g.row())),
                (Kind::Text, Value::Text(_))
                    | (Kind::Number, Value::Number(_))
                    | (Kind::Integer, Value::Integer(_))
                    | (Kind::List { .. }, Value::Items(_))
                    | (Kind::Points, Value::Points(_))
            );
            assert!(ok, "{} gives a value of another kind", c.name);
        }
    }
}
