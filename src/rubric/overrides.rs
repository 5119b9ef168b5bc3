//! Grader overrides: a CSV of (student id, criterion or "total", new points or an adjustment,
//! reason, grader), applied after scoring and shown in every output with its reason.
//!
//! ```text
//! student_id,section,criterion,points,adjust,reason,grader
//! 2026143,,depression,25,,thermometer on bench 5 confirmed faulty,R. Okafor
//! 2026157,,total,,+5,melting point re-run under supervision,R. Okafor
//! ```
//!
//! `section` may be left empty; `points` sets, `adjust` adds (or, negative, takes away).

use std::collections::HashMap;
use std::path::Path;

use crate::error::ConfigError;
use crate::ingest::delimited;
use crate::numtext::points;

/// What an override does to the points.
#[derive(Clone, Copy, Debug, PartialEq)]
pub enum Change {
    Set(f64),
    Adjust(f64),
}

impl Change {
    pub fn apply(self, before: f64) -> f64 {
        match self {
            Change::Set(v) => v,
            Change::Adjust(d) => before + d,
        }
    }
}

/// One line of an overrides file.
#[derive(Clone, Debug, PartialEq)]
pub struct Override {
    pub student_id: String,
    pub section: Option<String>,
    /// A criterion id, or `None` for the total.
    pub criterion: Option<String>,
    pub change: Change,
    pub reason: String,
    pub grader: String,
    /// 1-based line in the file.
    pub line: usize,
}

impl Override {
    pub fn describe(&self, what: &str, before: f64, after: f64) -> String {
        format!(
            "{what} {} -> {} by {}: {}",
            points(before),
            points(after),
            self.grader,
            self.reason
        )
    }
}

/// The overrides of a run, and which of them found their student.
#[derive(Clone, Debug, Default)]
pub struct Overrides {
    pub source: String,
    list: Vec<Override>,
    by_id: HashMap<String, Vec<usize>>,
    used: Vec<bool>,
}

/// The first characters after which a spreadsheet runs a cell as a formula (OWASP's CSV
/// injection guidance, common practice), and the quote that guards them.
const FORMULA_START: [char; 7] = ['=', '+', '-', '@', '\t', '\r', '\0'];

/// A cell of overrides.csv as it is written: a value that a spreadsheet would run as a formula
/// (`=HYPERLINK(...)`, `@SUM(...)`, `-2+3`) gets a leading `'`, as every output CSV's text
/// does; so does a value that itself begins with `'`, so that `unguard` gives back every value
/// exactly.
pub fn guard(value: &str) -> std::borrow::Cow<'_, str> {
    match value.chars().next() {
        Some(c) if c == '\'' || FORMULA_START.contains(&c) => format!("'{value}").into(),
        _ => value.into(),
    }
}

/// A cell as read: the guard `guard` adds taken off (a `'` before a formula character or
/// another `'`); any other text as it is, so a hand-made file reads as before.
pub fn unguard(cell: &str) -> &str {
    match cell.strip_prefix('\'') {
        Some(rest) if rest.starts_with(|c: char| c == '\'' || FORMULA_START.contains(&c)) => rest,
        _ => cell,
    }
}

fn column(headers: &csv::StringRecord, names: &[&str]) -> Option<usize> {
    headers
        .iter()
        .position(|h| names.contains(&h.trim().to_lowercase().replace(' ', "_").as_str()))
}

fn number(text: &str) -> Option<f64> {
    let t = text.trim();
    t.strip_prefix('+')
        .unwrap_or(t)
        .parse::<f64>()
        .ok()
        .filter(|v| v.is_finite())
}

/// What an override may change: each criterion's id with its most points, in the rubric's order.
#[derive(Clone, Debug, Default, PartialEq)]
pub struct Limits {
    pub criteria: Vec<(String, f64)>,
}

impl Limits {
    /// The criterion ids.
    pub fn ids(&self) -> Vec<&str> {
        self.criteria.iter().map(|(id, _)| id.as_str()).collect()
    }

    /// The most points of a criterion, or of the total (`None`).
    fn most(&self, criterion: Option<&str>) -> f64 {
        match criterion {
            Some(c) => self
                .criteria
                .iter()
                .find(|(id, _)| id == c)
                .map_or(0.0, |(_, m)| *m),
            None => self.criteria.iter().map(|(_, m)| m).sum(),
        }
    }
}

/// The parts of one override as typed (a line of the file, or a form), each trimmed and `None`
/// when empty.
#[derive(Clone, Copy, Debug, Default)]
pub struct Typed<'a> {
    pub student_id: Option<&'a str>,
    pub section: Option<&'a str>,
    pub criterion: Option<&'a str>,
    pub points: Option<&'a str>,
    pub adjust: Option<&'a str>,
    pub reason: Option<&'a str>,
    pub grader: Option<&'a str>,
}

/// Why an override cannot be used: the part it concerns, and what to fix.
#[derive(Clone, Debug, PartialEq, Eq)]
pub struct Invalid {
    /// The column (or form field) at fault: "student_id", "criterion", "points", "reason", ...
    pub field: &'static str,
    pub message: String,
}

fn invalid(field: &'static str, message: impl Into<String>) -> Invalid {
    Invalid {
        field,
        message: message.into(),
    }
}

impl Typed<'_> {
    /// Checks an override as typed against the rubric's criteria and their points; `line` is
    /// where it stands in its file.
    pub fn check(&self, limits: &Limits, line: usize) -> Result<Override, Invalid> {
        let student_id = self
            .student_id
            .ok_or_else(|| invalid("student_id", "no student id given"))?;
        let crit = self
            .criterion
            .ok_or_else(|| invalid("criterion", "no criterion given (a criterion id, or total)"))?;
        let criterion = if crit.eq_ignore_ascii_case("total") {
            None
        } else if limits.ids().contains(&crit) {
            Some(crit.to_string())
        } else {
            return Err(invalid(
                "criterion",
                format!(
                    "unknown criterion \"{crit}\"; the rubric's criteria are {}, or total",
                    limits.ids().join(", ")
                ),
            ));
        };
        let reason = self
            .reason
            .ok_or_else(|| invalid("reason", "every override needs a reason"))?;
        let grader = self
            .grader
            .ok_or_else(|| invalid("grader", "every override needs the grader's name"))?;
        Ok(Override {
            student_id: student_id.to_string(),
            section: self.section.map(str::to_string),
            change: self.change(limits, criterion.as_deref())?,
            criterion,
            reason: reason.to_string(),
            grader: grader.to_string(),
            line,
        })
    }

    /// The change, within what the criterion (or the total) can hold: points from 0 to its
    /// most, an adjustment of at most that much either way.
    fn change(&self, limits: &Limits, criterion: Option<&str>) -> Result<Change, Invalid> {
        let most = limits.most(criterion);
        let what = criterion.unwrap_or("the total");
        match (self.points, self.adjust) {
            (Some(p), None) => {
                let v = number(p)
                    .ok_or_else(|| invalid("points", format!("points \"{p}\" is not a number")))?;
                if !(0.0..=most).contains(&v) {
                    return Err(invalid(
                        "points",
                        format!("points {p} are outside 0 to {} for {what}", points(most)),
                    ));
                }
                // "-0" is 0 (adding 0.0 turns -0.0 into 0.0)
                Ok(Change::Set(v + 0.0))
            }
            (None, Some(a)) => {
                let d = number(a)
                    .ok_or_else(|| invalid("adjust", format!("adjust \"{a}\" is not a number")))?;
                if d.abs() > most {
                    return Err(invalid(
                        "adjust",
                        format!(
                            "adjust {a} is more than {what} holds ({} points); an adjustment goes at most that far either way",
                            points(most)
                        ),
                    ));
                }
                Ok(Change::Adjust(d + 0.0))
            }
            _ => Err(invalid(
                "points",
                "give either points (the new value) or adjust (a change), not both or neither",
            )),
        }
    }
}

/// Which column of an overrides file holds each part.
struct FileColumns {
    id: usize,
    criterion: usize,
    reason: usize,
    grader: usize,
    points: Option<usize>,
    adjust: Option<usize>,
    section: Option<usize>,
}

impl FileColumns {
    fn find(headers: &csv::StringRecord) -> Result<FileColumns, String> {
        let need = |names: &[&str], what: &str| {
            column(headers, names).ok_or_else(|| format!("no {what} column; the header must name student_id, criterion, points or adjust, reason and grader"))
        };
        Ok(FileColumns {
            id: need(&["student_id", "id", "student"], "student_id")?,
            criterion: need(&["criterion"], "criterion")?,
            reason: need(&["reason"], "reason")?,
            grader: need(&["grader"], "grader")?,
            points: column(headers, &["points"]),
            adjust: column(headers, &["adjust", "adjustment"]),
            section: column(headers, &["section"]),
        })
    }

    fn typed<'a>(&self, rec: &'a csv::StringRecord) -> Typed<'a> {
        let get = |c: Option<usize>| {
            c.and_then(|c| rec.get(c))
                .map(|s| unguard(s.trim()).trim())
                .filter(|s| !s.is_empty())
        };
        Typed {
            student_id: get(Some(self.id)),
            section: get(self.section),
            criterion: get(Some(self.criterion)),
            points: get(self.points),
            adjust: get(self.adjust),
            reason: get(Some(self.reason)),
            grader: get(Some(self.grader)),
        }
    }
}

impl Overrides {
    /// Reads an overrides file, each line checked against the rubric's `limits`.
    pub fn load(path: &Path, limits: &Limits) -> Result<Overrides, ConfigError> {
        let source = path.display().to_string();
        let bytes = crate::files::read(path)
            .map_err(|e| ConfigError::Invalid(format!("cannot read overrides {source}: {e}")))?;
        let (text, _) = delimited::decode(&bytes);
        let err =
            |line: usize, m: String| ConfigError::Invalid(format!("{source} line {line}: {m}"));
        let mut reader = csv::ReaderBuilder::new()
            .flexible(true)
            .from_reader(text.as_bytes());
        let headers = reader.headers().map_err(|e| err(1, e.to_string()))?.clone();
        let columns = FileColumns::find(&headers).map_err(|m| err(1, m))?;
        let mut out = Overrides {
            source: source.clone(),
            ..Overrides::default()
        };
        for (i, rec) in reader.records().enumerate() {
            let rec = rec.map_err(|e| err(i + 2, e.to_string()))?;
            let line = rec.position().map_or(i + 2, |p| p.line() as usize);
            let typed = columns.typed(&rec);
            // a line without a student is a blank or a note, not an override
            if typed.student_id.is_none() {
                continue;
            }
            let o = typed
                .check(limits, line)
                .map_err(|e| err(line, e.message))?;
            out.push(o);
        }
        Ok(out)
    }

    /// Adds an override (checked) to the list.
    pub fn push(&mut self, o: Override) {
        self.by_id
            .entry(o.student_id.clone())
            .or_default()
            .push(self.list.len());
        self.list.push(o);
        self.used.push(false);
    }

    /// Every override, in the file's order.
    pub fn list(&self) -> &[Override] {
        &self.list
    }

    /// The overrides for a row, marked as used.
    pub fn for_row(&mut self, student_id: Option<&str>, section: &str) -> Vec<Override> {
        let Some(id) = student_id.map(str::trim) else {
            return Vec::new();
        };
        let Some(idx) = self.by_id.get(id) else {
            return Vec::new();
        };
        let mut found = Vec::new();
        for &i in idx {
            let o = &self.list[i];
            let same = |s: &str| {
                s == section || crate::model::section_key(s) == crate::model::section_key(section)
            };
            if o.section.as_deref().is_none_or(same) {
                self.used[i] = true;
                found.push(o.clone());
            }
        }
        found
    }

    /// Overrides that matched no row: each an error naming the student.
    pub fn unmatched(&self) -> Vec<String> {
        self.list
            .iter()
            .zip(&self.used)
            .filter(|(_, used)| !**used)
            .map(|(o, _)| {
                let section = o
                    .section
                    .as_ref()
                    .map(|s| format!(" in section {s}"))
                    .unwrap_or_default();
                // the id itself is personal data: the line names the override
                format!(
                    "{} line {}: no submission has this override's student id{section}; check the id",
                    self.source, o.line
                )
            })
            .collect()
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn load(text: &str) -> Result<Overrides, ConfigError> {
        let dir = tempfile::tempdir().unwrap();
        let p = dir.path().join("o.csv");
        std::fs::write(&p, text).unwrap();
        Overrides::load(&p, &limits())
    }

    fn limits() -> Limits {
        Limits {
            criteria: vec![("recovery".into(), 40.0), ("range".into(), 25.0)],
        }
    }

    #[test]
    fn reads_sets_and_adjustments() {
        let mut o = load("student_id,criterion,points,adjust,reason,grader\ns1,recovery,35,,re-weighed,RO\ns1,total,,-2.5,late,RO\ns2,range,10,,x,RO\n").unwrap();
        let got = o.for_row(Some("s1"), "A");
        assert_eq!(got.len(), 2);
        assert_eq!(got[0].change, Change::Set(35.0));
        assert_eq!(got[1].criterion, None);
        assert_eq!(got[1].change.apply(80.0), 77.5);
        let unmatched = o.unmatched();
        assert_eq!(unmatched.len(), 1);
        assert!(unmatched[0].contains("line 4"), "{unmatched:?}");
        assert!(
            !unmatched[0].contains("s2"),
            "the id is personal data: {unmatched:?}"
        );
    }

    #[test]
    fn unknown_criteria_and_bad_lines_are_named() {
        let e = load("student_id,criterion,points,reason,grader\ns1,purity,3,x,RO\n")
            .unwrap_err()
            .to_string();
        assert!(e.contains("line 2") && e.contains("\"purity\""), "{e}");
        let e = load("student_id,criterion,points,adjust,reason,grader\ns1,range,3,1,x,RO\n")
            .unwrap_err()
            .to_string();
        assert!(e.contains("either points"), "{e}");
        let e = load("student_id,criterion,points,reason,grader\ns1,range,3,,RO\n")
            .unwrap_err()
            .to_string();
        assert!(e.contains("reason"), "{e}");
    }

    /// The values issue 20 found written unguarded, each written as the page writes it and
    /// read back as `--overrides` reads it. The guarded forms are OWASP's CSV injection rule
    /// (common practice): a leading `'` before `= + - @`, a tab or a carriage return.
    #[test]
    fn guarded_values_round_trip_through_the_file() {
        let table = [
            (
                "=HYPERLINK(\"http://example.invalid\",\"x\")",
                "'=HYPERLINK(\"http://example.invalid\",\"x\")",
            ),
            ("@SUM(A1:A9)", "'@SUM(A1:A9)"),
            ("-2+3", "'-2+3"),
            ("=2026002", "'=2026002"),
            ("+5", "'+5"),
            ("'quoted", "''quoted"),
            ("O'Brien", "O'Brien"),
            ("re-weighed", "re-weighed"),
        ];
        for (value, written) in table {
            assert_eq!(guard(value), written);
            assert_eq!(unguard(written), value);
        }
        // a whole file: the guarded cells load as the values, numbers included
        let mut text = String::from("student_id,criterion,points,adjust,reason,grader\n");
        let row = [
            "=2026002",
            "total",
            "",
            "-2",
            "=HYPERLINK(\"a\")",
            "@SUM(A1)",
        ];
        let mut w = csv::Writer::from_writer(Vec::new());
        w.write_record(row.iter().map(|v| guard(v).into_owned()))
            .unwrap();
        text.push_str(&String::from_utf8(w.into_inner().unwrap()).unwrap());
        assert!(text.contains("'=2026002") && text.contains("'-2"), "{text}");
        let o = load(&text).unwrap();
        let got = &o.list()[0];
        assert_eq!(got.student_id, "=2026002");
        assert_eq!(got.change, Change::Adjust(-2.0));
        assert_eq!(got.reason, "=HYPERLINK(\"a\")");
        assert_eq!(got.grader, "@SUM(A1)");
    }

    proptest::proptest! {
        /// Any value (trimmed, as the reader trims) written guarded reads back as itself, and
        /// no written cell begins with a formula character.
        #[test]
        fn any_value_round_trips(v in "\\PC{0,12}") {
            let v = v.trim();
            let written = guard(v);
            proptest::prop_assert!(!written.starts_with(FORMULA_START));
            proptest::prop_assert_eq!(unguard(written.trim()).trim(), v);
        }
    }

    /// An override holds what its criterion can: 0 to its points, an adjustment at most that far
    /// (a trial: 55 of a 40-point criterion was taken and capped without a word).
    #[test]
    fn points_beyond_the_criterion_are_refused_with_the_field() {
        let typed = |criterion, points, adjust| Typed {
            student_id: Some("s1"),
            criterion: Some(criterion),
            points,
            adjust,
            reason: Some("re-weighed"),
            grader: Some("RO"),
            ..Typed::default()
        };
        let l = limits();
        for (t, field) in [
            (typed("recovery", Some("55"), None), "points"),
            (typed("recovery", Some("-1"), None), "points"),
            (typed("range", None, Some("+26")), "adjust"),
            (typed("total", Some("66"), None), "points"),
            (typed("total", None, Some("-500")), "adjust"),
        ] {
            let e = t.check(&l, 2).unwrap_err();
            assert_eq!(e.field, field, "{}", e.message);
        }
        assert!(typed("recovery", Some("55"), None)
            .check(&l, 2)
            .unwrap_err()
            .message
            .contains("0 to 40"));
        for t in [
            typed("recovery", Some("40"), None),
            typed("recovery", Some("0"), None),
            typed("range", None, Some("-25")),
            typed("total", Some("65"), None),
        ] {
            assert!(t.check(&l, 2).is_ok());
        }
    }
}
