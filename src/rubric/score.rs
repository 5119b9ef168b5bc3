//! Scoring: each criterion's points from its measure, then the flag rules (zero, deduct, cap),
//! then any overrides, and a sentence for every point given or taken.

use super::criteria::Criterion;
use super::overrides::Override;
use super::Rubric;
use crate::model::{Assessed, CriterionScore, Score};
use crate::numtext::{points, push_points};

/// Removes floating-point noise from a computed value (122.0 - 120.8 is 1.2000000000000028)
/// so that a value on a band edge is judged as written.
fn settle(x: f64) -> f64 {
    (x * 1e9).round() / 1e9
}

/// Points a rule gives for a value, before rounding.
pub fn rule_points(c: &Criterion, x: f64) -> f64 {
    let max = *c.max.get_ref();
    let x = settle(x);
    if let Some(bands) = &c.bands {
        return bands
            .get_ref()
            .iter()
            .find(|b| b.contains(x))
            .map_or(0.0, |b| b.points);
    }
    if let Some(l) = &c.linear {
        let l = l.get_ref();
        return max * ((x - l.zero_at) / (l.full_at - l.zero_at)).clamp(0.0, 1.0);
    }
    if let Some(p) = &c.pass {
        let p = p.get_ref();
        let ok = p.at_least.is_none_or(|v| x >= v) && p.at_most.is_none_or(|v| x <= v);
        return if ok { max } else { 0.0 };
    }
    0.0
}

/// The feedback of one row, sentence by sentence, in one string.
#[derive(Default)]
struct Feedback(String);

impl Feedback {
    /// Starts a sentence (after "; " unless it is the first) and returns the text to append to.
    fn sentence(&mut self) -> &mut String {
        if !self.0.is_empty() {
            self.0.push_str("; ");
        }
        &mut self.0
    }
}

/// A row being scored: each criterion's points, then what the flags and overrides did.
struct Scoring<'a> {
    rubric: &'a Rubric,
    criteria: Vec<CriterionScore>,
    /// The criteria's sentences: the measure in words and the points it earned.
    measured: Vec<String>,
    /// Each flag with its reason and what it did to the points.
    flags: Vec<String>,
    deduct: f64,
    cap: f64,
    /// Overrides applied, in words.
    applied: Vec<String>,
}

impl<'a> Scoring<'a> {
    /// Each criterion's points from its measure (or `if_missing`), with its sentence.
    fn measure(rubric: &'a Rubric, a: &Assessed) -> Scoring<'a> {
        let mut s = Scoring {
            rubric,
            criteria: Vec::with_capacity(rubric.criteria.len()),
            measured: Vec::with_capacity(rubric.criteria.len()),
            flags: Vec::new(),
            deduct: 0.0,
            cap: f64::INFINITY,
            applied: Vec::new(),
        };
        for c in &rubric.criteria {
            let (points, sentence) = criterion_points(rubric, c, a);
            s.measured.push(sentence);
            s.criteria.push(CriterionScore {
                id: c.id.get_ref().clone(),
                label: c.label.clone(),
                points,
                max: *c.max.get_ref(),
            });
        }
        s
    }

    /// The flag rules: criteria zeroed, points deducted, the total capped.
    fn apply_flags(&mut self, a: &Assessed) {
        for (flag, reason) in &a.flags {
            let mut effects = Vec::new();
            for rule in self
                .rubric
                .flag_rules
                .iter()
                .filter(|r| r.applies_to(*flag))
            {
                for id in rule.zeroed() {
                    if let Some(cs) = self.criteria.iter_mut().find(|cs| cs.id == *id) {
                        if cs.points > 0.0 {
                            effects.push(format!("{} earns nothing", cs.label));
                        }
                        cs.points = 0.0;
                    }
                }
                if rule.deduct > 0.0 {
                    self.deduct += rule.deduct;
                    effects.push(format!("{} points off", points(rule.deduct)));
                }
                if let Some(c) = rule.cap {
                    self.cap = self.cap.min(c);
                    effects.push(format!("the total is capped at {}", points(c)));
                }
            }
            let effect = if effects.is_empty() {
                "no effect on points".to_string()
            } else {
                effects.join(", ")
            };
            self.flags
                .push(format!("Flag {}: {reason} ({effect})", flag.code()));
        }
    }

    /// Criterion overrides, clamped to the criterion's range.
    fn apply_criterion_overrides(&mut self, overrides: &[&Override]) {
        for o in overrides {
            let Some(id) = &o.criterion else { continue };
            if let Some(cs) = self.criteria.iter_mut().find(|cs| cs.id == *id) {
                let before = cs.points;
                cs.points = o.change.apply(before).clamp(0.0, cs.max);
                self.applied.push(o.describe(&cs.label, before, cs.points));
            }
        }
    }

    /// The total after deductions and caps, rounded, then total overrides; and the letter.
    fn finish(mut self, overrides: &[&Override]) -> Score {
        let g = &self.rubric.grading;
        let max: f64 = self.criteria.iter().map(|c| c.max).sum();
        let sum: f64 = self.criteria.iter().map(|c| c.points).sum();
        let mut total = g.round((sum - self.deduct).max(0.0).min(self.cap));
        for o in overrides.iter().filter(|o| o.criterion.is_none()) {
            let before = total;
            total = o.change.apply(before).clamp(0.0, max);
            self.applied.push(o.describe("total", before, total));
        }
        let percent = if max > 0.0 { 100.0 * total / max } else { 0.0 };
        let letter = g.letter(percent);
        let feedback = self.feedback(total, max, letter.as_deref());
        Score {
            criteria: self.criteria,
            total,
            max,
            percent,
            letter,
            feedback,
            overrides: self.applied,
        }
    }

    /// The sentences: each criterion, each flag, each override, then the total.
    fn feedback(&self, total: f64, max: f64, letter: Option<&str>) -> String {
        let mut f = Feedback::default();
        for s in self.measured.iter().chain(&self.flags) {
            f.sentence().push_str(s);
        }
        for s in &self.applied {
            let out = f.sentence();
            out.push_str("Override: ");
            out.push_str(s);
        }
        let out = f.sentence();
        out.push_str("Total ");
        push_points(out, total);
        out.push_str(" of ");
        push_points(out, max);
        if let Some(l) = letter {
            out.push_str(" (");
            out.push_str(l);
            out.push(')');
        }
        out.push('.');
        f.0
    }
}

/// A criterion's points before flags and overrides, and its sentence.
fn criterion_points(rubric: &Rubric, c: &Criterion, a: &Assessed) -> (f64, String) {
    let max = *c.max.get_ref();
    let m = c.measure();
    let mut out = String::with_capacity(96);
    out.push_str(&c.label);
    out.push_str(": ");
    let points = match (m, m.and_then(|m| m.of_assessed(a))) {
        (Some(m), Some(x)) => {
            m.sentence(&mut out, x, a);
            rubric.grading.round(rule_points(c, x))
        }
        (Some(m), None) => {
            out.push_str(m.role().missing);
            c.if_missing
        }
        (None, _) => {
            out.push_str("not scored");
            0.0
        }
    };
    out.push_str(", ");
    push_points(&mut out, points);
    out.push_str(" of ");
    push_points(&mut out, max);
    out.push_str(" points");
    (points, out)
}

/// Grades one assessed row.
pub fn score(rubric: &Rubric, a: &Assessed, overrides: &[&Override]) -> Score {
    let mut s = Scoring::measure(rubric, a);
    s.apply_flags(a);
    s.apply_criterion_overrides(overrides);
    s.finish(overrides)
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::ingest::Submission;
    use crate::model::{Assessed, Flag};
    use crate::rubric::overrides::Change;

    fn rubric(extra: &str) -> Rubric {
        let text = format!(
            "[experiment]\nname = \"t\"\n[grading]\ntotal = 100\nround_to = 0.5\nletters = {{ A = 90, B = 80, F = 0 }}\n\
             [[criterion]]\nid = \"recovery\"\nlabel = \"Recovery\"\nmax = 40\nmeasure = \"recovery_pct\"\n\
             bands = [{{ to = 50, points = 10 }}, {{ from = 50, to = 70, points = 25 }}, {{ from = 70, points = 40 }}]\n\
             [[criterion]]\nid = \"range\"\nlabel = \"Range\"\nmax = 30\nmeasure = \"range_width_c\"\n\
             bands = [{{ through = 1.0, points = 30 }}, {{ above = 1.0, through = 2.0, points = 20 }}, {{ above = 2.0, points = 0 }}]\n\
             [[criterion]]\nid = \"depression\"\nlabel = \"Depression\"\nmax = 20\nmeasure = \"depression_c\"\nlinear = {{ full_at = 0.0, zero_at = 4.0 }}\n\
             [[criterion]]\nid = \"report\"\nlabel = \"Report\"\nmax = 10\nmeasure = \"recovery_report_error_pct\"\npass = {{ at_most = 1.0 }}\n{extra}"
        );
        Rubric::parse(&text, "t.toml").unwrap()
    }

    fn row(recovery: f64, width: f64, depression: f64, reported: Option<f64>) -> Assessed {
        Assessed {
            submission: Submission {
                reported_recovery_pct: reported,
                ..Submission::default()
            },
            compound: None,
            reference_mp_c: Some(122.4),
            mp_onset_c: Some(122.4 - depression - width),
            mp_clear_c: Some(122.4 - depression),
            recovery_pct: Some(recovery),
            range_width_c: Some(width),
            depression_c: Some(depression),
            purity_mol_pct: None,
            purity_note: String::new(),
            max_recovery_pct: None,
            min_solvent_ml: None,
            calibration: None,
            flags: Vec::new(),
        }
    }

    fn points(s: &Score) -> Vec<f64> {
        s.criteria.iter().map(|c| c.points).collect()
    }

    #[test]
    fn every_band_edge() {
        let r = rubric("");
        // from is inclusive, to exclusive: 50 falls in [50, 70), 70 in [70, ...)
        for (rec, want) in [
            (49.999, 10.0),
            (50.0, 25.0),
            (69.999, 25.0),
            (70.0, 40.0),
            (-5.0, 10.0),
            (130.0, 40.0),
        ] {
            assert_eq!(
                score(&r, &row(rec, 0.5, 0.0, None), &[]).criteria[0].points,
                want,
                "recovery {rec}"
            );
        }
        // through is inclusive, above exclusive: 1.0 earns 30, just above earns 20, 2.0 earns 20
        for (w, want) in [(1.0, 30.0), (1.0001, 20.0), (2.0, 20.0), (2.0001, 0.0)] {
            assert_eq!(
                score(&r, &row(80.0, w, 0.0, None), &[]).criteria[1].points,
                want,
                "width {w}"
            );
        }
        // floating-point noise on an edge is settled: a range of 127.3-128.3 °C is
        // 128.3 - 127.3 = 1.0000000000000142 in doubles, which unsettled would fall in the
        // "above 1.0" band; as written it is 1.0 wide and earns the "through 1.0" band's 30
        let width = 128.3 - 127.3;
        assert!(width > 1.0, "the noise this test is about: {width}");
        assert_eq!(rule_points(&r.criteria[1], width), 30.0);
        assert_eq!(
            rule_points(&r.criteria[1], 128.3 - 126.3),
            20.0,
            "2.000000000000014"
        );
    }

    #[test]
    fn linear_and_pass_rules() {
        let r = rubric("");
        // linear from 20 points at 0 °C to 0 at 4 °C: 1.0 °C below gives 15 (hand-worked)
        let s = score(&r, &row(80.0, 0.5, 1.0, Some(80.5)), &[]);
        assert_eq!(points(&s), vec![40.0, 30.0, 15.0, 10.0]);
        // 1.3 °C: 20 x (1 - 1.3/4) = 13.5 exactly; 1.4 °C: 13.0; clamped beyond the anchors
        assert_eq!(
            score(&r, &row(80.0, 0.5, 1.3, None), &[]).criteria[2].points,
            13.5
        );
        assert_eq!(
            score(&r, &row(80.0, 0.5, 6.0, None), &[]).criteria[2].points,
            0.0
        );
        assert_eq!(
            score(&r, &row(80.0, 0.5, -0.5, None), &[]).criteria[2].points,
            20.0
        );
        // pass at most 1.0: an error of exactly 1.0 passes, 1.1 fails; no report earns if_missing (0)
        assert_eq!(
            score(&r, &row(80.0, 0.5, 0.0, Some(81.0)), &[]).criteria[3].points,
            10.0
        );
        assert_eq!(
            score(&r, &row(80.0, 0.5, 0.0, Some(81.1)), &[]).criteria[3].points,
            0.0
        );
        assert_eq!(
            score(&r, &row(80.0, 0.5, 0.0, None), &[]).criteria[3].points,
            0.0
        );
    }

    #[test]
    fn rounding_totals_and_letters() {
        let r = rubric("");
        // 40 + 30 + 20 x (1 - 0.9/4) = 15.5 + 10 = 95.5 -> A
        let s = score(&r, &row(80.0, 0.5, 0.9, Some(80.0)), &[]);
        assert_eq!(s.total, 95.5);
        assert_eq!(s.letter.as_deref(), Some("A"));
        assert!(
            s.feedback.contains("Total 95.5 of 100 (A)"),
            "{}",
            s.feedback
        );
    }

    #[test]
    fn flags_zero_deduct_and_cap() {
        let r = rubric(
            "[[flag_rule]]\nflag = \"recovery-over-100\"\nzero = [\"recovery\"]\n\
             [[flag_rule]]\nflag = \"likely-wet\"\ndeduct = 7\n\
             [[flag_rule]]\nflag = \"impossible\"\ncap = 50\n",
        );
        let mut a = row(104.0, 0.5, 0.0, Some(104.0));
        a.flags = vec![(
            Flag::RecoveryOver100,
            "recovered 2.6 g exceeds crude 2.5 g".into(),
        )];
        let s = score(&r, &a, &[]);
        // recovery zeroed: 0 + 30 + 20 + 10 = 60, capped at 50 by the impossible group rule
        assert_eq!(s.criteria[0].points, 0.0);
        assert_eq!(s.total, 50.0);
        assert!(s.feedback.contains("Flag recovery-over-100: recovered 2.6 g exceeds crude 2.5 g (Recovery earns nothing, the total is capped at 50)"), "{}", s.feedback);
        a.flags = vec![(Flag::LikelyWet, "heavy".into())];
        assert_eq!(score(&r, &a, &[]).total, 93.0, "100 - 7");
        a.flags = vec![(Flag::LowRecovery, "low".into())];
        let s = score(&r, &a, &[]);
        assert!(
            s.feedback
                .contains("Flag low-recovery: low (no effect on points)"),
            "never silent: {}",
            s.feedback
        );
    }

    #[test]
    fn overrides_apply_after_scoring_and_are_shown() {
        let r = rubric("[[flag_rule]]\nflag = \"impossible\"\ncap = 50\n");
        let mut a = row(60.0, 0.5, 0.0, Some(60.0));
        a.flags = vec![(Flag::AboveReference, "x".into())];
        let o = |criterion: Option<&str>, change| Override {
            student_id: "s".into(),
            section: None,
            criterion: criterion.map(str::to_string),
            change,
            reason: "re-run under supervision".into(),
            grader: "RO".into(),
            line: 2,
        };
        let set = o(Some("recovery"), Change::Set(45.0));
        let s = score(&r, &a, &[&set]);
        assert_eq!(s.criteria[0].points, 40.0, "clamped to the criterion's max");
        assert_eq!(
            s.total, 50.0,
            "the cap still applies to criterion overrides"
        );
        let total = o(None, Change::Adjust(12.5));
        let s = score(&r, &a, &[&total]);
        assert_eq!(s.total, 62.5, "a total override comes last: 50 + 12.5");
        assert_eq!(
            s.overrides,
            vec!["total 50 -> 62.5 by RO: re-run under supervision"]
        );
        assert!(s.feedback.contains("Override: total 50 -> 62.5"));
    }
}
