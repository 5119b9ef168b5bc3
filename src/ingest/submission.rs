//! What ingest hands on: one `Submission` per student row, with every value already in grams,
//! millilitres and degrees Celsius, and the cells that could not be read named, not guessed.

use std::sync::Arc;

use serde::Serialize;

use super::cells::Cell;

use crate::fields::Field;

/// A cell that should have held a number but did not.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct Unreadable {
    pub field: Field,
    /// Spreadsheet-style reference, e.g. `'Section 3'!D7`.
    pub cell: String,
    /// What was found instead, in words: "the error #DIV/0!", "a date", "text".
    pub found: String,
}

/// What a graded workbook copies of the sheet a row came from, shared by its rows: the header
/// texts of its table's columns, which of those columns name the student (printed on every
/// page), and the title rows above the header.
#[derive(Clone, Debug, Default, PartialEq)]
pub struct SheetHead {
    pub headers: Vec<String>,
    /// Positions in `headers` of the id and name columns, in sheet order.
    pub identity: Vec<usize>,
    /// The rows above the header, each as its cells' text.
    pub title: Vec<String>,
}

/// One repeat determination of a melting range, in °C.
#[derive(Clone, Copy, Debug, Default, PartialEq, Serialize)]
pub struct Trial {
    pub onset: Option<f64>,
    pub clear: Option<f64>,
}

/// One student's row, normalized.
#[derive(Clone, Debug, Default, PartialEq, Serialize)]
pub struct Submission {
    /// The input file, as given or as found under a given folder.
    pub source: String,
    pub sheet: Option<String>,
    /// 1-based spreadsheet row (or line of a delimited file).
    pub row: u32,
    pub section: String,
    pub student_id: Option<String>,
    pub student_name: Option<String>,
    pub bench: Option<String>,
    pub apparatus: Option<String>,
    pub assistant: Option<String>,
    pub compound: Option<String>,
    pub solvent: Option<String>,
    pub crude_mass_g: Option<f64>,
    pub recovered_mass_g: Option<f64>,
    pub solvent_volume_ml: Option<f64>,
    pub mp_onset_c: Option<f64>,
    pub mp_clear_c: Option<f64>,
    pub reported_recovery_pct: Option<f64>,
    /// Days after the deadline the report came in (a late-days column), if the sheet has one.
    pub late_days: Option<f64>,
    /// The crude product's melting range as read (before recrystallization).
    pub crude_mp_onset_c: Option<f64>,
    pub crude_mp_clear_c: Option<f64>,
    /// Repeat determinations of the recrystallized product's melting range, in sheet order;
    /// a blank trial is left out.
    pub mp_trials: Vec<Trial>,
    /// Weighings by difference: each product's empty container (tare) and the container with
    /// the product in it (gross), in grams. A tare weighed once for both fills both.
    pub crude_tare_g: Option<f64>,
    pub crude_gross_g: Option<f64>,
    pub recovered_tare_g: Option<f64>,
    pub recovered_gross_g: Option<f64>,
    /// The unknown sample's code, as written.
    pub unknown_code: Option<String>,
    /// The compound the student named for the unknown, as written.
    pub identified_as: Option<String>,
    /// The melting range of the unknown mixed with the compound named.
    pub mixed_mp_onset_c: Option<f64>,
    pub mixed_mp_clear_c: Option<f64>,
    /// The row's status cell, as written ("W", "excused"), if the sheet has a status column.
    pub status: Option<String>,
    /// The row's notes cell, as written, if the sheet has a notes column.
    pub remarks: Option<String>,
    /// The reported recovery carried its percent sign (a percent-formatted cell, or "72.8%"):
    /// it is never read again as a fraction.
    #[serde(skip)]
    pub reported_marked: bool,
    /// The melting entry was one temperature, taken as both onset and clear point.
    pub single_reading: bool,
    /// A rostered student of whom no row was read: a row benchgrade made from the roster
    /// (`--roster`), with status `no-submission`.
    pub no_submission: bool,
    /// A roster was given and the row's id is not on it (kept out of the gradebook until a
    /// grader confirms the id, even when the row carries no flag, as an excused one).
    pub off_roster: bool,
    /// For a row made from the roster: the id of a row not on the roster that is likely this
    /// student's (one typing slip away, the same name).
    pub likely_typed_as: Option<String>,
    /// A grader's correction set the status: it alone decides whether the student is excused
    /// (the notes no longer do).
    pub status_corrected: bool,
    /// What the grader's corrections changed, in words, for the feedback and results.
    pub corrections: Vec<String>,
    /// Fields the sheet has no column for (their absence is the sheet's, not the student's).
    pub no_column: Vec<Field>,
    pub unreadable: Vec<Unreadable>,
    /// Observations that are not flags ("single melting value: onset taken as the clear point").
    pub notes: Vec<String>,
    /// The row's cells under the sheet's header, as read, for the graded workbook.
    #[serde(skip)]
    pub original: Vec<Cell>,
    /// The sheet's header texts and title rows, shared by its rows.
    #[serde(skip)]
    pub original_headers: Option<Arc<SheetHead>>,
}

impl Submission {
    /// True when a cell of `field` was present but could not be read.
    pub fn is_unreadable(&self, field: Field) -> bool {
        self.unreadable.iter().any(|u| u.field == field)
    }

    /// Whether the sheet itself has no column for `field` (for a melting reading: no melting
    /// column at all; a sheet with onset and clear columns needs no range column).
    pub fn lacks_column(&self, field: Field) -> bool {
        if MELTING.contains(&field) {
            // repeat determinations are the melting reading where the sheet has them
            MELTING
                .iter()
                .chain(&[
                    Field::MpTrialRange,
                    Field::MpTrialOnset,
                    Field::MpTrialClear,
                ])
                .all(|f| self.no_column.contains(f))
        } else {
            self.no_column.contains(&field)
        }
    }

    /// The fields grading needs that the row's sheet has no column for (the sheet's `missing`
    /// fields): a sheet without one was not really graded, whatever the rows' scores say.
    pub fn sheet_lacks(&self) -> Vec<Field> {
        // a mass weighed by difference has its gross weighing's column instead of its own
        let gross = |f: Field| match f {
            Field::CrudeMass => Some(Field::CrudeGross),
            Field::RecoveredMass => Some(Field::RecoveredGross),
            _ => None,
        };
        let mut out: Vec<Field> = self
            .no_column
            .iter()
            .copied()
            .filter(|f| f.is_required())
            .filter(|f| gross(*f).is_none_or(|g| self.no_column.contains(&g)))
            .collect();
        if self.lacks_column(Field::MpRange) {
            out.push(Field::MpRange);
        }
        out
    }

    /// Why the student's entry for `field` is missing on a sheet that has a column for it:
    /// "no crude mass was given" for a blank cell, "the crude mass could not be read" for an
    /// error (#DIV/0!), a date or text. `None` when there is a value, or when the sheet has no
    /// such column (that absence is the sheet's, not the student's). Blank, error and
    /// unreadable cells are one case: the rubric's `if_blank` scores them alike.
    pub fn missing_entry(&self, field: Field) -> Option<String> {
        if self.lacks_column(field) {
            return None;
        }
        let melting = MELTING.contains(&field);
        if melting && self.single_reading {
            return None;
        }
        // a melting entry is named as the sheet holds it: one range column, or onset and clear
        let named = if melting && !self.no_column.contains(&Field::MpRange) {
            Field::MpRange
        } else {
            field
        };
        let unreadable = if melting {
            self.unreadable.iter().find(|u| MELTING.contains(&u.field))
        } else {
            self.unreadable.iter().find(|u| u.field == field)
        };
        if let Some(u) = unreadable {
            return Some(format!("the {} could not be read", u.field.label()));
        }
        let given = match field {
            Field::CrudeMass => self.crude_mass_g.is_some(),
            Field::RecoveredMass => self.recovered_mass_g.is_some(),
            Field::SolventVolume => self.solvent_volume_ml.is_some(),
            Field::ReportedRecovery => self.reported_recovery_pct.is_some(),
            Field::MpOnset => self.mp_onset_c.is_some(),
            Field::MpClear | Field::MpRange => self.mp_clear_c.is_some(),
            _ => true,
        };
        (!given).then(|| format!("no {} was given", named.label()))
    }
}

/// The fields a melting reading can come from.
const MELTING: [Field; 3] = [Field::MpRange, Field::MpOnset, Field::MpClear];
