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

impl Overrides {
    /// Reads an overrides file; `criteria` are the rubric's criterion ids.
    pub fn load(path: &Path, criteria: &[String]) -> Result<Overrides, ConfigError> {
        let source = path.display().to_string();
        let bytes = std::fs::read(path)
            .map_err(|e| ConfigError::Invalid(format!("cannot read overrides {source}: {e}")))?;
        let (text, _) = delimited::decode(&bytes);
        let err =
            |line: usize, m: String| ConfigError::Invalid(format!("{source} line {line}: {m}"));
        let mut reader = csv::ReaderBuilder::new()
            .flexible(true)
            .from_reader(text.as_bytes());
        let headers = reader.headers().map_err(|e| err(1, e.to_string()))?.clone();
        let need = |names: &[&str], what: &str| {
            column(&headers, names).ok_or_else(|| err(1, format!("no {what} column; the header must name student_id, criterion, points or adjust, reason and grader")))
        };
        let id_col = need(&["student_id", "id", "student"], "student_id")?;
        let crit_col = need(&["criterion"], "criterion")?;
        let reason_col = need(&["reason"], "reason")?;
        let grader_col = need(&["grader"], "grader")?;
        let points_col = column(&headers, &["points"]);
        let adjust_col = column(&headers, &["adjust", "adjustment"]);
        let section_col = column(&headers, &["section"]);
        let mut out = Overrides {
            source: source.clone(),
            ..Overrides::default()
        };
        for (i, rec) in reader.records().enumerate() {
            let rec = rec.map_err(|e| err(i + 2, e.to_string()))?;
            let line = rec.position().map_or(i + 2, |p| p.line() as usize);
            let get = |c: Option<usize>| {
                c.and_then(|c| rec.get(c))
                    .map(str::trim)
                    .filter(|s| !s.is_empty())
            };
            let Some(student_id) = get(Some(id_col)) else {
                continue;
            };
            let crit = get(Some(crit_col))
                .ok_or_else(|| err(line, "no criterion given (a criterion id, or total)".into()))?;
            let criterion = if crit.eq_ignore_ascii_case("total") {
                None
            } else if criteria.iter().any(|c| c == crit) {
                Some(crit.to_string())
            } else {
                return Err(err(
                    line,
                    format!(
                        "unknown criterion \"{crit}\"; the rubric's criteria are {}, or total",
                        criteria.join(", ")
                    ),
                ));
            };
            let change = match (get(points_col), get(adjust_col)) {
                (Some(p), None) => Change::Set(
                    number(p)
                        .ok_or_else(|| err(line, format!("points \"{p}\" is not a number")))?,
                ),
                (None, Some(a)) => Change::Adjust(
                    number(a)
                        .ok_or_else(|| err(line, format!("adjust \"{a}\" is not a number")))?,
                ),
                _ => return Err(err(
                    line,
                    "give either points (the new value) or adjust (a change), not both or neither"
                        .into(),
                )),
            };
            let reason = get(Some(reason_col))
                .ok_or_else(|| err(line, "every override needs a reason".into()))?
                .to_string();
            let grader = get(Some(grader_col))
                .ok_or_else(|| err(line, "every override needs the grader's name".into()))?
                .to_string();
            let section = get(section_col).map(str::to_string);
            out.by_id
                .entry(student_id.to_string())
                .or_default()
                .push(out.list.len());
            out.list.push(Override {
                student_id: student_id.to_string(),
                section,
                criterion,
                change,
                reason,
                grader,
                line,
            });
        }
        out.used = vec![false; out.list.len()];
        Ok(out)
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
            if o.section.as_deref().is_none_or(|s| s == section) {
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
                format!(
                    "{} line {}: no submission for student \"{}\"{section}; check the id",
                    self.source, o.line, o.student_id
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
        Overrides::load(&p, &["recovery".to_string(), "range".to_string()])
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
        assert!(unmatched[0].contains("line 4") && unmatched[0].contains("\"s2\""));
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
}
