//! The graded part of a rubric: criteria with their scoring rules, flag rules, rounding and
//! letter cut-offs, and the checks that make a typo an error at its line and column.

use std::collections::BTreeMap;

use serde::{Deserialize, Serialize};
use toml::Spanned;

use crate::model::{Flag, Measure};

/// One band of a banded rule: points for a value between its bounds. A lower bound is `from`
/// (value at or above) or `above` (strictly above); an upper bound is `to` (strictly below) or
/// `through` (at or below). A missing bound is open.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Band {
    #[serde(default)]
    pub from: Option<f64>,
    #[serde(default)]
    pub above: Option<f64>,
    #[serde(default)]
    pub to: Option<f64>,
    #[serde(default)]
    pub through: Option<f64>,
    pub points: f64,
}

impl Band {
    /// (bound, inclusive) of the lower end.
    fn lower(&self) -> (f64, bool) {
        match (self.from, self.above) {
            (Some(v), _) => (v, true),
            (None, Some(v)) => (v, false),
            _ => (f64::NEG_INFINITY, true),
        }
    }

    fn upper(&self) -> (f64, bool) {
        match (self.to, self.through) {
            (Some(v), _) => (v, false),
            (None, Some(v)) => (v, true),
            _ => (f64::INFINITY, true),
        }
    }

    pub fn contains(&self, x: f64) -> bool {
        let (lo, lo_in) = self.lower();
        let (hi, hi_in) = self.upper();
        (x > lo || (lo_in && x == lo)) && (x < hi || (hi_in && x == hi))
    }

    pub fn describe(&self) -> String {
        let lo = match (self.from, self.above) {
            (Some(v), _) => format!("at least {v}"),
            (None, Some(v)) => format!("above {v}"),
            _ => String::new(),
        };
        let hi = match (self.to, self.through) {
            (Some(v), _) => format!("below {v}"),
            (None, Some(v)) => format!("at most {v}"),
            _ => String::new(),
        };
        [lo, hi]
            .into_iter()
            .filter(|s| !s.is_empty())
            .collect::<Vec<_>>()
            .join(" and ")
    }
}

/// Points rising (or falling) in a straight line between two anchors, clamped to 0..max.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Linear {
    pub zero_at: f64,
    pub full_at: f64,
}

/// All the points or none.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Pass {
    #[serde(default)]
    pub at_least: Option<f64>,
    #[serde(default)]
    pub at_most: Option<f64>,
}

/// A graded criterion.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Criterion {
    pub id: Spanned<String>,
    pub label: String,
    pub max: Spanned<f64>,
    pub measure: Spanned<String>,
    #[serde(default)]
    pub bands: Option<Spanned<Vec<Band>>>,
    #[serde(default)]
    pub linear: Option<Spanned<Linear>>,
    #[serde(default)]
    pub pass: Option<Spanned<Pass>>,
    /// Points when the measure cannot be computed for a row for a reason other than the
    /// student's own entry: the sheet has no column for it, a zero mass, one temperature for a
    /// width (default 0).
    #[serde(default)]
    pub if_missing: f64,
    /// Points when an entry the measure is computed from was left blank, holds an error
    /// (#DIV/0!) or cannot be read, on a sheet that has a column for it (default 0).
    #[serde(default)]
    pub if_blank: f64,
}

impl Criterion {
    /// The measure the criterion scores, if it names one a criterion may score.
    pub fn measure(&self) -> Option<Measure> {
        Measure::from_key(self.measure.get_ref()).filter(|m| m.role().scorable)
    }
}

/// What a flag does to the points.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct FlagRule {
    /// A flag code, or "impossible" / "suspicious" for every flag of that kind.
    pub flag: Spanned<String>,
    /// Criteria that earn nothing when the flag is raised.
    #[serde(default)]
    pub zero: Option<Spanned<Vec<String>>>,
    /// Points taken off the total.
    #[serde(default)]
    pub deduct: f64,
    /// The most the total may be.
    #[serde(default)]
    pub cap: Option<f64>,
}

impl FlagRule {
    pub fn applies_to(&self, flag: Flag) -> bool {
        use crate::model::Severity;
        match self.flag.get_ref().as_str() {
            "impossible" => flag.severity() == Severity::Impossible,
            "suspicious" => flag.severity() == Severity::Suspicious,
            code => code == flag.code(),
        }
    }

    pub fn zeroed(&self) -> &[String] {
        self.zero.as_ref().map_or(&[], |z| z.get_ref().as_slice())
    }
}

/// Totals, rounding and letters.
#[derive(Clone, Debug, Default, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Grading {
    /// If given, the criteria's maxima must add up to it.
    #[serde(default)]
    pub total: Option<Spanned<f64>>,
    /// Round each criterion's points and the total to a multiple of this (0: no rounding).
    #[serde(default)]
    pub round_to: f64,
    /// Letter grades by the lowest percentage that earns them.
    #[serde(default)]
    pub letters: Option<Spanned<BTreeMap<String, f64>>>,
    /// Which of a student's repeated submissions in a section counts: "first" or "last".
    #[serde(default)]
    pub duplicates: Counted,
    /// The score of a rostered student with no submission (`--roster`): "blank" (the default:
    /// no score, and left out of the score's statistics) or a number of points.
    #[serde(default)]
    pub no_submission: NoSubmission,
    /// Whether the sheet's notes column is printed on the students' handouts (it is written
    /// for the assistants; off unless the rubric says so).
    #[serde(default)]
    pub notes_to_students: bool,
}

/// What a rostered student who submitted nothing scores.
#[derive(Clone, Copy, Debug, Default, PartialEq, Serialize, Deserialize)]
#[serde(untagged)]
pub enum NoSubmission {
    /// "blank": no score.
    #[default]
    #[serde(with = "blank")]
    Blank,
    /// A number of points.
    Points(f64),
}

/// The word "blank" as the unit variant `NoSubmission::Blank`.
mod blank {
    use serde::{de::Error, Deserialize, Deserializer, Serializer};

    pub fn serialize<S: Serializer>(s: S) -> Result<S::Ok, S::Error> {
        s.serialize_str("blank")
    }

    pub fn deserialize<'de, D: Deserializer<'de>>(d: D) -> Result<(), D::Error> {
        let word = String::deserialize(d)?;
        if word == "blank" {
            Ok(())
        } else {
            Err(D::Error::custom(format!(
                "no_submission is \"blank\" or a number of points, not \"{word}\""
            )))
        }
    }
}

/// Which of a student's repeated submissions in a section counts.
#[derive(Clone, Copy, Debug, Default, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "lowercase")]
pub enum Counted {
    #[default]
    First,
    Last,
}

impl Grading {
    /// The letter for a percentage, if letters are set.
    pub fn letter(&self, percent: f64) -> Option<String> {
        let letters = self.letters.as_ref()?.get_ref();
        let mut cut: Vec<(&String, &f64)> = letters.iter().collect();
        cut.sort_by(|a, b| b.1.total_cmp(a.1));
        cut.into_iter()
            .find(|(_, min)| percent >= **min - 1e-9)
            .map(|(l, _)| l.clone())
    }

    pub fn round(&self, v: f64) -> f64 {
        if self.round_to > 0.0 {
            (v / self.round_to).round() * self.round_to
        } else {
            v
        }
    }
}

/// A problem found in a rubric, at a byte span of its text.
#[derive(Clone, Debug, PartialEq)]
pub struct Finding {
    pub span: std::ops::Range<usize>,
    pub message: String,
}

fn at<T>(s: &Spanned<T>, message: String) -> Finding {
    Finding {
        span: s.span(),
        message,
    }
}

fn check_bands(c: &Criterion, bands: &Spanned<Vec<Band>>, out: &mut Vec<Finding>) {
    let list = bands.get_ref();
    if list.is_empty() {
        out.push(at(bands, "bands is empty".into()));
    }
    for b in list {
        if (b.from.is_some() && b.above.is_some()) || (b.to.is_some() && b.through.is_some()) {
            out.push(at(bands, "a band may have one lower bound (from or above) and one upper bound (to or through)".into()));
        }
        if b.points < 0.0 || b.points > *c.max.get_ref() {
            out.push(at(
                bands,
                format!(
                    "a band gives {} points, outside 0..{} (the criterion's max)",
                    b.points,
                    c.max.get_ref()
                ),
            ));
        }
        let ((lo, lo_in), (hi, hi_in)) = (b.lower(), b.upper());
        if lo > hi || (lo == hi && !(lo_in && hi_in)) {
            out.push(at(
                bands,
                format!("the band {} contains no value", b.describe()),
            ));
        }
    }
    for w in list.windows(2) {
        let ((a_lo, _), (b_lo, _)) = (w[0].lower(), w[1].lower());
        if b_lo < a_lo {
            out.push(at(bands, format!("bands are unsorted: \"{}\" comes after \"{}\"; list them from the lowest values up", w[1].describe(), w[0].describe())));
        }
        let ((a_hi, a_hi_in), (b_lo, b_lo_in)) = (w[0].upper(), w[1].lower());
        if a_hi > b_lo || (a_hi == b_lo && a_hi_in && b_lo_in) {
            out.push(at(
                bands,
                format!(
                    "bands overlap: \"{}\" and \"{}\"",
                    w[0].describe(),
                    w[1].describe()
                ),
            ));
        }
    }
}

fn check_criterion(c: &Criterion, out: &mut Vec<Finding>) {
    if c.measure().is_none() {
        let known: Vec<&str> = Measure::scorable().into_iter().map(Measure::key).collect();
        out.push(at(
            &c.measure,
            format!(
                "unknown measure \"{}\"; use one of {}",
                c.measure.get_ref(),
                known.join(", ")
            ),
        ));
    }
    let max = *c.max.get_ref();
    if !(max.is_finite() && max >= 0.0) {
        out.push(at(&c.max, "max must be zero or more".into()));
    }
    let rules = [c.bands.is_some(), c.linear.is_some(), c.pass.is_some()]
        .iter()
        .filter(|r| **r)
        .count();
    if rules != 1 {
        out.push(at(
            &c.id,
            format!(
                "criterion \"{}\" needs exactly one scoring rule: bands, linear or pass",
                c.id.get_ref()
            ),
        ));
    }
    if let Some(b) = &c.bands {
        check_bands(c, b, out);
    }
    if let Some(l) = &c.linear {
        if l.get_ref().zero_at == l.get_ref().full_at {
            out.push(at(l, "linear needs zero_at and full_at to differ".into()));
        }
    }
    if let Some(p) = &c.pass {
        if p.get_ref().at_least.is_none() == p.get_ref().at_most.is_none() {
            out.push(at(
                p,
                "pass needs exactly one of at_least and at_most".into(),
            ));
        }
    }
    for (key, points) in [("if_missing", c.if_missing), ("if_blank", c.if_blank)] {
        if !(0.0..=max).contains(&points) {
            out.push(at(
                &c.id,
                format!("{key} gives {points} points, outside 0..{max}"),
            ));
        }
    }
}

/// Every problem in the graded part of a rubric.
pub fn check(grading: &Grading, criteria: &[Criterion], flag_rules: &[FlagRule]) -> Vec<Finding> {
    let mut out = Vec::new();
    let ids = check_criteria(criteria, &mut out);
    for r in flag_rules {
        check_flag_rule(r, &ids, &mut out);
    }
    check_grading(grading, criteria, &mut out);
    out
}

/// Each criterion, and that ids are well formed and unique; returns the ids.
fn check_criteria<'a>(criteria: &'a [Criterion], out: &mut Vec<Finding>) -> Vec<&'a str> {
    let mut ids: Vec<&str> = Vec::new();
    for c in criteria {
        let id = c.id.get_ref().as_str();
        let well_formed =
            !id.is_empty() && id.chars().all(|ch| ch.is_ascii_alphanumeric() || ch == '_');
        if !well_formed {
            out.push(at(&c.id, format!("criterion id \"{id}\" must be letters, digits and _ (it names the points_{id} column)")));
        }
        if ids.contains(&id) {
            out.push(at(&c.id, format!("criterion id \"{id}\" is used twice")));
        }
        ids.push(id);
        check_criterion(c, out);
    }
    ids
}

/// A flag rule names a flag code (or a kind) and only criteria that exist.
fn check_flag_rule(r: &FlagRule, ids: &[&str], out: &mut Vec<Finding>) {
    let code = r.flag.get_ref().as_str();
    let known =
        code == "impossible" || code == "suspicious" || Flag::ALL.iter().any(|f| f.code() == code);
    if !known {
        let codes: Vec<&str> = Flag::ALL.iter().map(|f| f.code()).collect();
        out.push(at(
            &r.flag,
            format!(
                "unknown flag code \"{code}\"; use one of {}, impossible or suspicious",
                codes.join(", ")
            ),
        ));
    }
    if let Some(z) = &r.zero {
        for id in z.get_ref() {
            if !ids.contains(&id.as_str()) {
                out.push(at(z, format!("zero names unknown criterion \"{id}\"")));
            }
        }
    }
}

/// The total, the letter cut-offs and the rounding.
fn check_grading(grading: &Grading, criteria: &[Criterion], out: &mut Vec<Finding>) {
    if let Some(total) = &grading.total {
        let sum: f64 = criteria.iter().map(|c| *c.max.get_ref()).sum();
        if (sum - total.get_ref()).abs() > 1e-9 {
            out.push(at(
                total,
                format!(
                    "the criteria's maximum points add up to {sum}, not {}",
                    total.get_ref()
                ),
            ));
        }
    }
    if let Some(letters) = &grading.letters {
        let mut cuts: Vec<f64> = letters.get_ref().values().copied().collect();
        cuts.sort_by(f64::total_cmp);
        if cuts.windows(2).any(|w| w[0] == w[1]) {
            out.push(at(letters, "two letters share one cut-off".into()));
        }
    }
    if grading.round_to < 0.0 {
        out.push(Finding {
            span: 0..0,
            message: "grading.round_to must be zero or more".into(),
        });
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn band(from: Option<f64>, above: Option<f64>, to: Option<f64>, through: Option<f64>) -> Band {
        Band {
            from,
            above,
            to,
            through,
            points: 1.0,
        }
    }

    #[test]
    fn band_edges() {
        let b = band(Some(60.0), None, Some(70.0), None);
        assert!(b.contains(60.0) && b.contains(69.999) && !b.contains(70.0) && !b.contains(59.999));
        let c = band(None, Some(1.0), None, Some(2.0));
        assert!(!c.contains(1.0) && c.contains(1.0001) && c.contains(2.0) && !c.contains(2.0001));
        let open = band(None, None, None, None);
        assert!(open.contains(-1e300) && open.contains(1e300));
    }

    #[test]
    fn letters_by_cut_off() {
        let g: Grading = toml::from_str("letters = { A = 90, B = 80, F = 0 }").unwrap();
        assert_eq!(g.letter(90.0).as_deref(), Some("A"));
        assert_eq!(g.letter(89.99).as_deref(), Some("B"));
        assert_eq!(g.letter(0.0).as_deref(), Some("F"));
        let none = Grading::default();
        assert_eq!(none.letter(95.0), None);
        assert_eq!(
            Grading {
                round_to: 0.5,
                ..Grading::default()
            }
            .round(7.74),
            7.5
        );
        assert_eq!(
            Grading {
                round_to: 0.5,
                ..Grading::default()
            }
            .round(7.75),
            8.0
        );
    }
}
