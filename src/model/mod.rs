//! The shared model: what a graded row is (`Assessed`, `Score`, `Graded`), the flag codes, and
//! the one description of every output column and measure (`columns`). It sits below the stages
//! that compute these values (`assess`, `rubric`, `stats`) and the writers that print them
//! (`export`), so that each of them can name the same types without naming each other.

pub mod columns;
pub mod flags;
pub mod measure;

use serde::Serialize;

use crate::ingest::Submission;
pub use flags::{Flag, Severity};
pub use measure::Measure;

/// A submission with its measures and findings.
#[derive(Clone, Debug, Default, Serialize)]
pub struct Assessed {
    pub submission: Submission,
    /// The library's name for the compound, when found.
    pub compound: Option<String>,
    pub reference_mp_c: Option<f64>,
    /// Onset and clear point as used: corrected by the calibration where one applies,
    /// else as read (the submission keeps the readings).
    pub mp_onset_c: Option<f64>,
    pub mp_clear_c: Option<f64>,
    pub recovery_pct: Option<f64>,
    pub range_width_c: Option<f64>,
    pub depression_c: Option<f64>,
    pub purity_mol_pct: Option<f64>,
    pub purity_note: String,
    pub max_recovery_pct: Option<f64>,
    pub min_solvent_ml: Option<f64>,
    /// The correction applied to the readings, in words.
    pub calibration: Option<String>,
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

/// One criterion's result.
#[derive(Clone, Debug, PartialEq)]
pub struct CriterionScore {
    pub id: String,
    pub label: String,
    pub points: f64,
    pub max: f64,
}

/// One row's grade.
#[derive(Clone, Debug, Default, PartialEq)]
pub struct Score {
    pub criteria: Vec<CriterionScore>,
    pub total: f64,
    pub max: f64,
    pub percent: f64,
    pub letter: Option<String>,
    /// Plain sentences for the student.
    pub feedback: String,
    /// Overrides applied, each with its reason and grader.
    pub overrides: Vec<String>,
}

/// A row with its assessment and its grade.
#[derive(Clone, Debug, Default)]
pub struct Graded {
    pub assessed: Assessed,
    pub score: Score,
}

impl Graded {
    /// The row as the column registry reads it.
    pub fn row(&self) -> Row<'_> {
        Row {
            assessed: &self.assessed,
            score: Some(&self.score),
        }
    }
}

/// A row as the column registry reads it: assessed, and scored unless it is being scored.
#[derive(Clone, Copy, Debug)]
pub struct Row<'a> {
    pub assessed: &'a Assessed,
    pub score: Option<&'a Score>,
}

/// Matching key for an apparatus or bench, the one way benches are told apart everywhere: lower case, letters and digits only, and a leading
/// "bench", "station", "apparatus" or "b" before a number dropped ("Bench 7", "B7" and "7" match).
pub fn bench_key(text: &str) -> String {
    let k: String = text
        .to_lowercase()
        .chars()
        .filter(|c| c.is_alphanumeric())
        .collect();
    for prefix in ["bench", "station", "apparatus", "b"] {
        if let Some(rest) = k.strip_prefix(prefix) {
            if rest.starts_with(|c: char| c.is_ascii_digit()) {
                return rest.to_string();
            }
        }
    }
    k
}

/// A sentence about a row with every piece of the row's own cell text taken out, for exports
/// that leave the course: a name typed into a mass cell is quoted in the reasons ("holds the
/// text \"Ana Lima\"") and must not travel with a pseudonym.
pub fn without_cell_text(text: &str, a: &Assessed) -> String {
    let mut out = text.to_string();
    for u in &a.submission.unreadable {
        if u.found.starts_with("the text ") {
            out = out.replace(&u.found, "text in a number cell");
        }
    }
    if let Some(c) = a.submission.compound.as_deref().map(str::trim) {
        if !c.is_empty() && a.compound.is_none() {
            if out.trim() == c {
                return "(a compound not in the library)".into();
            }
            out = out.replace(&format!("\"{c}\""), "a compound");
        }
    }
    out
}

/// Counts over the batch's rows.
#[derive(Clone, Copy, Debug, Default, PartialEq, Eq)]
pub struct Tally {
    pub rows: usize,
    pub impossible: usize,
    pub suspicious: usize,
}

impl Tally {
    pub fn add(&mut self, a: &Assessed) {
        self.rows += 1;
        if a.is_impossible() {
            self.impossible += 1;
        } else if !a.flags.is_empty() {
            self.suspicious += 1;
        }
    }
}
