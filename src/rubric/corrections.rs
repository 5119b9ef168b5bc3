//! Corrections of what was typed (`--corrections FILE`): a grader fixes a value without
//! editing the class file, which benchgrade never modifies. Each correction names the student
//! (by the id as it stands in the sheet, and optionally the section), the field, the value as it
//! should have been typed, a reason and the grader; it is applied after reading and before
//! anything is flagged or scored, and shown in the feedback, results and provenance.
//!
//! ```text
//! student_id,section,field,value,reason,grader
//! 2026143,,crude_mass,0.745,typed with a decimal comma,R. Okafor
//! 270231,S4,student_id,2701231,a digit dropped; confirmed with the student,R. Okafor
//! 2026157,,mp_range,120.5-121.6,read from the lab notebook,R. Okafor
//! 2026164,,status,excused,medical note received,R. Okafor
//! ```

use std::collections::HashMap;
use std::path::Path;

use crate::error::ConfigError;
use crate::fields::Field;
use crate::ingest::range::parse_range;
use crate::ingest::values::{parse_quantity, Decimal, Unit};
use crate::ingest::{delimited, Submission};
use crate::rubric::overrides::{unguard, Invalid};

/// The value a correction sets, parsed as its field is.
#[derive(Clone, Debug, PartialEq)]
pub enum Value {
    Text(String),
    /// Grams, millilitres, degrees Celsius or a percentage, as the field holds it.
    Number(f64),
    Range(f64, f64),
}

/// One line of a corrections file.
#[derive(Clone, Debug, PartialEq)]
pub struct Correction {
    pub student_id: String,
    pub section: Option<String>,
    pub field: Field,
    pub value: Value,
    /// The value as written in the file, for the feedback.
    pub written: String,
    pub reason: String,
    pub grader: String,
    pub line: usize,
}

/// The fields a correction may set.
pub const CORRECTABLE: [Field; 16] = [
    Field::StudentId,
    Field::StudentName,
    Field::Section,
    Field::Bench,
    Field::Compound,
    Field::CrudeMass,
    Field::RecoveredMass,
    Field::SolventVolume,
    Field::MpRange,
    Field::MpOnset,
    Field::MpClear,
    Field::ReportedRecovery,
    Field::Status,
    Field::UnknownCode,
    Field::IdentifiedAs,
    Field::LateDays,
];

/// Parses a value as `field` holds it; the message says what was expected.
pub fn parse_value(field: Field, text: &str) -> Result<Value, String> {
    parse_value_in(field, text, false)
}

/// `parse_value`, for a file whose commas are decimal commas (`comma_file`: a semicolon file,
/// as a spreadsheet in a decimal-comma locale saves CSV, where "2,905" is 2.905).
fn parse_value_in(field: Field, text: &str, comma_file: bool) -> Result<Value, String> {
    let t = text.trim();
    let decimal = if comma_file && t.contains(',') {
        Decimal::Comma
    } else {
        comma_reading(t)
    };
    let number = |want: &str, convert: &dyn Fn(Unit, f64) -> Option<f64>| {
        if let Some((point, plain)) = ambiguous_comma(t).filter(|_| !comma_file) {
            return Err(format!(
                "\"{t}\" could be {point} or {plain}: write it with a point ({point}) or without the comma ({plain})"
            ));
        }
        let q = parse_quantity(t, decimal).ok_or_else(|| format!("\"{t}\" is not {want}"))?;
        match q.unit {
            None => Ok(Value::Number(q.value)),
            Some(u) => convert(u, q.value)
                .map(Value::Number)
                .ok_or_else(|| format!("\"{t}\" is not {want}")),
        }
    };
    match field {
        Field::CrudeMass | Field::RecoveredMass => number("a mass (g or mg)", &|u, v| match u {
            Unit::Mass(f) => Some(v * f),
            _ => None,
        }),
        Field::SolventVolume => number("a volume (mL or L)", &|u, v| match u {
            Unit::Volume(f) => Some(v * f),
            _ => None,
        }),
        Field::MpOnset | Field::MpClear => number("a temperature", &|u, v| match u {
            Unit::Temperature(s) => Some(s.to_celsius(v)),
            _ => None,
        }),
        Field::LateDays => number("a number of days", &|_, _| None),
        Field::ReportedRecovery => number("a percentage", &|u, v| {
            matches!(u, Unit::Percent).then_some(v)
        }),
        Field::MpRange => {
            let r = parse_range(t, decimal)
                .ok_or_else(|| format!("\"{t}\" is not a melting range such as 120.5-121.6"))?;
            let c = |v: f64| r.unit.map_or(v, |u| u.to_celsius(v));
            Ok(Value::Range(c(r.onset), c(r.clear)))
        }
        _ if t.is_empty() => Err("no value given".into()),
        _ => Ok(Value::Text(t.to_string())),
    }
}

/// How a value's comma is meant: a decimal comma where there is no point and the comma is not
/// followed by exactly three digits ("0,745" and "1,5" are decimal commas, "1,800" is
/// thousands; common practice, as class sheets are read).
fn comma_reading(t: &str) -> Decimal {
    let number: String = t
        .chars()
        .take_while(|c| c.is_ascii_digit() || matches!(c, ',' | '.' | '-' | '+'))
        .collect();
    match number.rsplit_once(',') {
        Some((whole, frac)) if !number.contains('.') => {
            let digits = frac.chars().filter(char::is_ascii_digit).count();
            if digits != 3 || whole.trim_start_matches(['-', '+']) == "0" {
                Decimal::Comma
            } else {
                Decimal::Point
            }
        }
        _ => Decimal::Point,
    }
}

/// Refuses a corrections file without a column a correction needs, naming the columns.
fn needed_columns(file: &str, col: &dyn Fn(&str) -> Option<usize>) -> Result<(), ConfigError> {
    let need = ["student_id", "field", "value", "reason", "grader"];
    let missing: Vec<&str> = need.iter().copied().filter(|n| col(n).is_none()).collect();
    if missing.is_empty() {
        return Ok(());
    }
    Err(ConfigError::Invalid(format!(
        "{file}: no column {} (a corrections file has student_id, section, field, value, reason, grader)",
        missing.join(", ")
    )))
}

/// A number whose one comma could be a decimal comma or a thousands separator ("2,905":
/// 2.905 or 2905), with its two readings; `None` for any other text. A correction is one value
/// typed on purpose, with no column beside it to tell which was meant, so it is asked for
/// again rather than read as thousands (a mass a thousand times too large).
fn ambiguous_comma(t: &str) -> Option<(String, String)> {
    let number: String = t
        .chars()
        .take_while(|c| c.is_ascii_digit() || matches!(c, ',' | '-' | '+'))
        .collect();
    if t[number.len()..].starts_with('.') || number.matches(',').count() != 1 {
        return None;
    }
    let (whole, frac) = number.split_once(',')?;
    let digits = whole.trim_start_matches(['-', '+']);
    let ambiguous = frac.len() == 3
        && frac.bytes().all(|b| b.is_ascii_digit())
        && (1..=3).contains(&digits.len())
        && digits.bytes().all(|b| b.is_ascii_digit())
        && digits != "0";
    ambiguous.then(|| (format!("{whole}.{frac}"), format!("{whole}{frac}")))
}

/// The corrections of a run, by the student id they name.
#[derive(Clone, Debug, Default)]
pub struct Corrections {
    pub source: String,
    list: Vec<Correction>,
    by_id: HashMap<String, Vec<usize>>,
}

impl Corrections {
    /// `load` for a file given, none otherwise.
    pub fn load_opt(path: Option<&Path>) -> Result<Corrections, ConfigError> {
        path.map_or_else(|| Ok(Corrections::default()), Corrections::load)
    }

    /// Reads a corrections file; every line is checked, and every fault named with its line.
    pub fn load(path: &Path) -> Result<Corrections, ConfigError> {
        let file = path.display().to_string();
        let bytes = crate::files::read(path)
            .map_err(|e| ConfigError::Invalid(format!("cannot read {file}: {e}")))?;
        let (text, _) = delimited::decode(&bytes);
        // a spreadsheet in a decimal-comma locale saves CSV with semicolons
        let delimiter = delimited::sniff_delimiter(&text, false);
        let mut reader = csv::ReaderBuilder::new()
            .flexible(true)
            .delimiter(delimiter)
            .from_reader(text.as_bytes());
        let headers = reader
            .headers()
            .map_err(|e| ConfigError::Invalid(format!("{file}: {e}")))?
            .clone();
        let col = |name: &str| {
            headers
                .iter()
                .position(|h| h.trim().to_lowercase().replace(' ', "_") == name)
        };
        needed_columns(&file, &col)?;
        let mut out = Corrections {
            source: file.clone(),
            ..Corrections::default()
        };
        let mut faults = Vec::new();
        for (i, record) in reader.records().enumerate() {
            let line = i + 2;
            let Ok(record) = record else {
                faults.push(format!("{file}:{line}: not a CSV line"));
                continue;
            };
            let get = |name: &str| {
                col(name)
                    .and_then(|c| record.get(c))
                    .map(|v| unguard(v.trim()).trim())
                    .filter(|v| !v.is_empty())
            };
            let typed = Typed {
                student_id: get("student_id"),
                section: get("section"),
                field: get("field"),
                value: get("value"),
                reason: get("reason"),
                grader: get("grader"),
            };
            match typed.check_in(line, delimiter == b';') {
                Ok(c) => out.push(c),
                Err(why) => faults.push(format!("{file}:{line}: {}", why.message)),
            }
        }
        if faults.is_empty() {
            Ok(out)
        } else {
            Err(ConfigError::Invalid(faults.join("\n")))
        }
    }

    fn push(&mut self, c: Correction) {
        self.by_id
            .entry(c.student_id.clone())
            .or_default()
            .push(self.list.len());
        self.list.push(c);
    }

    /// The status values the corrections set, with their lines: each must say graded or
    /// excused in words the readers know, which only the assessment can tell.
    pub fn statuses(&self) -> impl Iterator<Item = (usize, &str)> {
        self.list.iter().filter_map(|c| match (&c.value, c.field) {
            (Value::Text(t), Field::Status) => Some((c.line, t.as_str())),
            _ => None,
        })
    }

    pub fn is_empty(&self) -> bool {
        self.list.is_empty()
    }

    /// Applies every correction naming this row (its id as read, and its section if the
    /// correction gives one), in file order, and returns what each did in words.
    pub fn apply(&self, sub: &mut Submission, used: &mut [bool]) -> Vec<String> {
        let Some(id) = sub.student_id.as_deref().map(str::trim) else {
            return Vec::new();
        };
        let Some(lines) = self.by_id.get(id) else {
            return Vec::new();
        };
        let lines = lines.clone();
        let mut said = Vec::new();
        for i in lines {
            let c = &self.list[i];
            let here = c.section.as_deref().is_none_or(|s| {
                crate::model::section_key(s) == crate::model::section_key(&sub.section)
            });
            if here {
                used[i] = true;
                said.push(apply_one(c, sub));
            }
        }
        said
    }

    pub fn len(&self) -> usize {
        self.list.len()
    }

    /// Every correction, in file order.
    pub fn list(&self) -> &[Correction] {
        &self.list
    }

    /// The lines whose corrected id left a row sharing its id with another row of its section
    /// (`ids`, trimmed), for the message that stops the run; the ids themselves are not shown.
    pub fn clashing(&self, ids: &std::collections::BTreeSet<String>) -> Vec<String> {
        self.list
            .iter()
            .filter(|c| c.field == Field::StudentId)
            .filter(|c| matches!(&c.value, Value::Text(t) if ids.contains(t.trim())))
            .map(|c| {
                format!(
                    "{}:{}: the id this line sets makes a row share an id with another row of its section; a corrected id must be the student's own (correct the other row too, or check the id)",
                    self.source, c.line
                )
            })
            .collect()
    }

    /// The corrections that found no row, for the message that stops the run.
    pub fn unmatched(&self, used: &[bool]) -> Vec<String> {
        self.list
            .iter()
            .zip(used)
            .filter(|(_, u)| !**u)
            .map(|(c, _)| {
                format!(
                    "{}:{}: the correction of {} matches no student row (check the id as the sheet has it{})",
                    self.source,
                    c.line,
                    c.field.key(),
                    if c.section.is_some() { " and the section" } else { "" }
                )
            })
            .collect()
    }
}

/// A correction as a line of the file or the workspace page's form gives it: each part
/// trimmed, `None` where it is empty. Its check is the file's check, so the page refuses
/// exactly what `--corrections` would, naming the part at fault.
#[derive(Clone, Copy, Debug, Default)]
pub struct Typed<'a> {
    pub student_id: Option<&'a str>,
    pub section: Option<&'a str>,
    pub field: Option<&'a str>,
    pub value: Option<&'a str>,
    pub reason: Option<&'a str>,
    pub grader: Option<&'a str>,
}

fn fault(field: &'static str, message: impl Into<String>) -> Invalid {
    Invalid {
        field,
        message: message.into(),
    }
}

impl Typed<'_> {
    /// The correction on `line`, or the part at fault and what to fix.
    pub fn check(&self, line: usize) -> Result<Correction, Invalid> {
        self.check_in(line, false)
    }

    /// `check`, for a line of a file whose commas are decimal commas (`parse_value_in`).
    fn check_in(&self, line: usize, comma_file: bool) -> Result<Correction, Invalid> {
        let student_id = self
            .student_id
            .ok_or_else(|| fault("student_id", "no student id given"))?;
        let key = self.field.ok_or_else(|| fault("field", "no field given"))?;
        let field = Field::from_key(key)
            .filter(|f| CORRECTABLE.contains(f))
            .ok_or_else(|| {
                let keys: Vec<&str> = CORRECTABLE.iter().map(|f| f.key()).collect();
                fault(
                    "field",
                    format!(
                        "unknown field \"{key}\"; a correction may set {}",
                        keys.join(", ")
                    ),
                )
            })?;
        let written = self.value.ok_or_else(|| fault("value", "no value given"))?;
        let value = parse_value_in(field, written, comma_file).map_err(|m| fault("value", m))?;
        Ok(Correction {
            student_id: student_id.to_string(),
            section: self.section.map(str::to_string),
            field,
            value,
            written: written.to_string(),
            reason: self
                .reason
                .ok_or_else(|| fault("reason", "every correction needs a reason"))?
                .to_string(),
            grader: self
                .grader
                .ok_or_else(|| fault("grader", "every correction needs the grader's name"))?
                .to_string(),
            line,
        })
    }
}

/// A value as a sentence shows it.
fn shown(v: Option<f64>, unit: &str) -> String {
    v.map_or("blank".to_string(), |v| format!("{v} {unit}"))
}

/// Applies one correction; what it did, in words.
fn apply_one(c: &Correction, sub: &mut Submission) -> String {
    let by = format!("by {}: {}", c.grader, c.reason.replace(';', ","));
    let label = c.field.label();
    let number = |slot: &mut Option<f64>, unit: &str, v: f64| {
        let before = shown(*slot, unit);
        *slot = Some(v);
        format!("{label} corrected from {before} to {v} {unit} {by}")
    };
    // a corrected cell is no longer unreadable
    sub.unreadable.retain(|u| {
        u.field != c.field
            && !(c.field == Field::MpRange && matches!(u.field, Field::MpOnset | Field::MpClear))
    });
    match (&c.value, c.field) {
        (Value::Number(v), Field::CrudeMass) => number(&mut sub.crude_mass_g, "g", *v),
        (Value::Number(v), Field::RecoveredMass) => number(&mut sub.recovered_mass_g, "g", *v),
        (Value::Number(v), Field::SolventVolume) => number(&mut sub.solvent_volume_ml, "mL", *v),
        (Value::Number(v), Field::ReportedRecovery) => {
            sub.reported_marked = true;
            number(&mut sub.reported_recovery_pct, "%", *v)
        }
        (Value::Number(v), Field::MpOnset) => number(&mut sub.mp_onset_c, "°C", *v),
        (Value::Number(v), Field::MpClear) => number(&mut sub.mp_clear_c, "°C", *v),
        (Value::Number(v), Field::LateDays) => number(&mut sub.late_days, "days", *v),
        (Value::Range(o, cl), _) => {
            let before = match (sub.mp_onset_c, sub.mp_clear_c) {
                (Some(a), Some(b)) => format!("{a}-{b} °C"),
                _ => "blank".to_string(),
            };
            sub.mp_onset_c = Some(*o);
            sub.mp_clear_c = Some(*cl);
            sub.single_reading = o == cl;
            format!("{label} corrected from {before} to {o}-{cl} °C {by}")
        }
        (Value::Text(t), f) => {
            let slot = match f {
                Field::StudentId => &mut sub.student_id,
                Field::StudentName => &mut sub.student_name,
                Field::Bench => &mut sub.bench,
                Field::Compound => &mut sub.compound,
                Field::Status => &mut sub.status,
                Field::UnknownCode => &mut sub.unknown_code,
                Field::IdentifiedAs => &mut sub.identified_as,
                _ => {
                    let before = std::mem::replace(&mut sub.section, t.clone());
                    return format!("{label} corrected from {before} to {t} {by}");
                }
            };
            let before = slot.replace(t.clone()).unwrap_or_else(|| "blank".into());
            if f == Field::Status {
                // the status the grader gives decides; the notes no longer excuse
                sub.status_corrected = true;
            }
            format!("{label} corrected from {before} to {t} {by}")
        }
        (Value::Number(_), _) => format!("{label}: {} {by}", c.written),
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn values_parse_as_their_field() {
        // hand-worked conversions: 745 mg is 0.745 g; "0,745" is a decimal comma
        assert_eq!(
            parse_value(Field::CrudeMass, "745 mg"),
            Ok(Value::Number(0.745))
        );
        assert_eq!(
            parse_value(Field::CrudeMass, "0,745"),
            Ok(Value::Number(0.745))
        );
        assert_eq!(
            parse_value(Field::MpRange, "120.5-121.6"),
            Ok(Value::Range(120.5, 121.6))
        );
        assert_eq!(parse_value(Field::CrudeMass, "1,5"), Ok(Value::Number(1.5)));
        // one comma before three digits is a decimal comma or thousands: asked for again
        // (seen in a coordinator's trial: "2,905" g became 2905 g)
        let asked = parse_value(Field::CrudeMass, "2,905").unwrap_err();
        assert!(asked.contains("2.905") && asked.contains("2905"), "{asked}");
        assert!(parse_value(Field::CrudeMass, "1,800 mg").is_err());
        // in a semicolon file (a decimal-comma locale's CSV) the comma is a decimal comma
        assert_eq!(
            parse_value_in(Field::CrudeMass, "2,905", true),
            Ok(Value::Number(2.905))
        );
        assert_eq!(
            parse_value_in(Field::CrudeMass, "2.905", true),
            Ok(Value::Number(2.905))
        );
        assert_eq!(
            parse_value(Field::CrudeMass, "1,8005"),
            Ok(Value::Number(1.8005))
        );
        assert_eq!(
            parse_value(Field::CrudeMass, "0,745 g"),
            Ok(Value::Number(0.745))
        );
        assert_eq!(
            parse_value(Field::CrudeMass, "1,800,000 mg"),
            Ok(Value::Number(1800.0))
        );
        assert_eq!(
            parse_value(Field::MpRange, "120,5-121,6"),
            Ok(Value::Range(120.5, 121.6))
        );
        assert!(parse_value(Field::CrudeMass, "12 mL").is_err());
        assert!(parse_value(Field::RecoveredMass, "lots").is_err());
        assert_eq!(
            parse_value(Field::StudentId, " 2701231 "),
            Ok(Value::Text("2701231".into()))
        );
    }

    #[test]
    fn a_correction_applies_before_grading_and_says_so() {
        let c = Correction {
            student_id: "s1".into(),
            section: None,
            field: Field::CrudeMass,
            value: Value::Number(0.745),
            written: "0.745".into(),
            reason: "typed with a comma".into(),
            grader: "R. Okafor".into(),
            line: 2,
        };
        let mut sub = Submission {
            student_id: Some("s1".into()),
            crude_mass_g: Some(745.0),
            ..Submission::default()
        };
        let said = apply_one(&c, &mut sub);
        assert_eq!(sub.crude_mass_g, Some(0.745));
        assert_eq!(
            said,
            "crude mass corrected from 745 g to 0.745 g by R. Okafor: typed with a comma"
        );
    }
}
