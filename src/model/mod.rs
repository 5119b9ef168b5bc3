//! The shared model: what a graded row is (`Assessed`, `Score`, `Graded`), the flag codes, and
//! the one description of every output column and measure (`columns`). It sits below the stages
//! that compute these values (`assess`, `rubric`, `stats`) and the writers that print them
//! (`export`), so that each of them can name the same types without naming each other.

pub mod columns;
pub mod flags;
pub mod measure;
pub mod names;

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
    /// Why the student is excused (a withdrawal or an excuse in the status or notes), if so:
    /// the row is then not graded and left out of every statistic.
    pub excused: Option<String>,
    /// The rest of the experiment: crude against recrystallized range, trials, the unknown.
    pub workup: Workup,
}

/// What the whole experiment adds to a row, where its sheet records it: the crude product's
/// melting range against the recrystallized one, repeat determinations, and an unknown's
/// identification with its mixed melting point. Every value `None` where the sheet has none.
#[derive(Clone, Debug, Default, PartialEq, Serialize)]
pub struct Workup {
    pub crude_mp_onset_c: Option<f64>,
    pub crude_mp_clear_c: Option<f64>,
    /// Crude clear point minus crude onset.
    pub crude_range_width_c: Option<f64>,
    /// Recrystallized clear point minus the crude's (as read: one apparatus's offset cancels).
    pub mp_rise_c: Option<f64>,
    /// Crude width minus recrystallized width.
    pub range_narrowing_c: Option<f64>,
    /// How many trials the melting range was the mean of.
    pub mp_trials: Option<f64>,
    /// The largest difference between the trials' clear points.
    pub trial_spread_c: Option<f64>,
    /// The library's name for the compound the student identified (else as written).
    pub identified_as: Option<String>,
    /// The answer key's compound for the row's unknown code.
    pub identity: Option<String>,
    /// `correct`, `wrong`, `none` (no identification given) or `no-key`.
    pub identification: Option<&'static str>,
    pub mixed_mp_onset_c: Option<f64>,
    pub mixed_mp_clear_c: Option<f64>,
    /// The sample's clear point minus the mixture's.
    pub mixed_depression_c: Option<f64>,
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

    /// Whether the row's value of measure `m` enters statistics and comparisons: not for an
    /// excused student or a repeated submission that does not count, nor where the row holds
    /// an impossible entry about that measure (a flag that shades its column). The score
    /// counts for every graded student.
    pub fn counts_for(&self, m: Measure) -> bool {
        if self.excused.is_some() || self.has(Flag::DuplicateStudent) {
            return false;
        }
        let about = m.column().shaded_by;
        !self
            .flags
            .iter()
            .any(|(f, _)| f.severity() == Severity::Impossible && about.contains(f))
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
    /// The student is excused: no total, percent or letter is given.
    pub excused: bool,
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

/// Matching key for an apparatus or bench, the one way benches are told apart everywhere:
/// lower case, letters and digits only, a leading "bench", "station", "apparatus" or "b" before
/// a number dropped, and the number's leading zeros too ("Bench 7", "B07", "07" and "7" match).
/// Whatever stands between two digits still parts them: "1-2", "1.2" and "1 2" are one label,
/// "12" another.
pub fn bench_key(text: &str) -> String {
    // a number cell read back as text: bench 1.0 is bench 1, not bench 10
    if let Ok(v) = text.trim().parse::<f64>() {
        if v.is_finite() && v >= 0.0 && v.fract() == 0.0 && v < 1e9 {
            return format!("{}", v as u64);
        }
    }
    let k = letters_and_digits(text);
    let mut rest = k.as_str();
    for prefix in ["bench", "station", "apparatus", "b"] {
        if let Some(r) = k.strip_prefix(prefix) {
            if r.starts_with(|c: char| c.is_ascii_digit()) {
                rest = r;
                break;
            }
        }
    }
    if rest.starts_with(|c: char| c.is_ascii_digit()) {
        let trimmed = rest.trim_start_matches('0');
        let keep = if trimmed.starts_with(|c: char| c.is_ascii_digit()) {
            trimmed
        } else {
            // all zeros, or zeros before letters ("0A"): keep one zero
            &rest[rest.len() - trimmed.len() - 1..]
        };
        return keep.to_string();
    }
    rest.to_string()
}

/// `text` in lower case, letters and digits only, with a "-" where anything else stood between
/// two digits (never a "." that would read back as a decimal point). A label with no letter or
/// digit at all ("🧪", "..") is its own key, its trimmed lower-case text: only the same text
/// matches it, and no key of letters and digits can (every such key holds one).
fn letters_and_digits(text: &str) -> String {
    let mut k = String::with_capacity(text.len());
    let mut gap = false;
    for c in text.chars().flat_map(char::to_lowercase) {
        if c.is_alphanumeric() {
            if gap && c.is_ascii_digit() && k.ends_with(|d: char| d.is_ascii_digit()) {
                k.push('-');
            }
            k.push(c);
            gap = false;
        } else {
            gap = true;
        }
    }
    if k.is_empty() {
        return text.trim().to_lowercase();
    }
    k
}

/// Matching key for a section label, the way benches are matched: "Sec 01", "Section 1", "01",
/// "1" and "S1" are one section; "Sec 01A" and "Monday" are themselves; "2.1" is not "21".
pub fn section_key(text: &str) -> String {
    if text.trim().parse::<f64>().is_ok() {
        return bench_key(text);
    }
    let k = letters_and_digits(text);
    let mut rest = k.as_str();
    for prefix in ["section", "sect", "sec", "lab", "group", "s"] {
        if let Some(r) = k.strip_prefix(prefix) {
            if r.starts_with(|c: char| c.is_ascii_digit()) {
                rest = r;
                break;
            }
        }
    }
    bench_key(rest)
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

/// Matching key for an unknown's code: lower case, letters and digits, a leading "unknown",
/// "unk" or "sample" word dropped, and leading zeros of a number ("U-07", "u7" and "U 7" are
/// one code; "7" is another).
pub fn code_key(code: &str) -> String {
    let lower = code.trim().to_lowercase();
    let mut rest = lower.as_str();
    for prefix in ["unknown", "unk", "sample"] {
        if let Some(r) = rest.strip_prefix(prefix) {
            if r.starts_with(|c: char| !c.is_alphabetic()) {
                rest = r;
                break;
            }
        }
    }
    let k: String = rest.chars().filter(|c| c.is_alphanumeric()).collect();
    // leading zeros of the number part: "u07" is "u7"
    let letters: String = k.chars().take_while(|c| !c.is_ascii_digit()).collect();
    let digits = k[letters.len()..].trim_start_matches('0');
    let digits = if digits.is_empty() && k.len() > letters.len() {
        "0"
    } else {
        digits
    };
    format!("{letters}{digits}")
}

/// Counts over the batch's rows.
#[derive(Clone, Copy, Debug, Default, PartialEq, Eq)]
pub struct Tally {
    pub rows: usize,
    pub impossible: usize,
    pub suspicious: usize,
    pub excused: usize,
}

impl Tally {
    pub fn add(&mut self, a: &Assessed) {
        self.rows += 1;
        if a.excused.is_some() {
            self.excused += 1;
        } else if a.is_impossible() {
            self.impossible += 1;
        } else if !a.flags.is_empty() {
            self.suspicious += 1;
        }
    }
}
