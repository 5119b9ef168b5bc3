//! Scoring: each criterion's points from its measure, then the flag rules (zero, deduct, cap),
//! then any overrides, and a sentence for every point given or taken.

use super::criteria::Criterion;
use super::criteria::NoSubmission;
use super::overrides::Override;
use super::Rubric;
use crate::compare::settle;
use crate::model::{Assessed, CriterionScore, Flag, Measure, Score};
use crate::numtext::{points, push_points};

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

/// One criterion's sentence while the row is scored: the measure in words, then why its
/// points changed after it was measured.
struct Line {
    words: String,
    why: Vec<String>,
}

/// A row being scored: each criterion's points, then what the flags and overrides did.
struct Scoring<'a> {
    rubric: &'a Rubric,
    criteria: Vec<CriterionScore>,
    lines: Vec<Line>,
    /// Each flag with its reason and what it did to the points.
    flags: Vec<String>,
    /// Points taken off the total, by flag.
    deductions: Vec<(&'static str, f64)>,
    /// The most the total may be, by flag.
    caps: Vec<(&'static str, f64)>,
    /// What lateness costs, and why in words.
    late: Option<(f64, String)>,
    /// Overrides applied, in words.
    applied: Vec<String>,
}

impl<'a> Scoring<'a> {
    /// Each criterion's points from its measure (or `if_missing`), with its sentence.
    fn measure(rubric: &'a Rubric, a: &Assessed) -> Scoring<'a> {
        let mut s = Scoring {
            rubric,
            criteria: Vec::with_capacity(rubric.criteria.len()),
            lines: Vec::with_capacity(rubric.criteria.len()),
            flags: Vec::new(),
            deductions: Vec::new(),
            caps: Vec::new(),
            late: late_deduction(rubric, a),
            applied: Vec::new(),
        };
        for c in &rubric.criteria {
            let (points, words, why) = criterion_points(rubric, c, a);
            s.lines.push(Line {
                words,
                why: why.into_iter().collect(),
            });
            s.criteria.push(CriterionScore {
                id: c.id.get_ref().clone(),
                label: c.label.clone(),
                points,
                max: *c.max.get_ref(),
            });
        }
        s
    }

    /// Zeroes criterion `id` for `flag`; says what that did, if anything.
    fn zero(&mut self, id: &str, flag: Flag) -> Option<String> {
        let i = self.criteria.iter().position(|cs| cs.id == id)?;
        let cs = &mut self.criteria[i];
        if cs.points <= 0.0 {
            return None;
        }
        let effect = format!("{} {} -> 0 points", cs.label, points(cs.points));
        cs.points = 0.0;
        self.lines[i].why.push(flag.short().to_string());
        Some(effect)
    }

    /// The flag rules: criteria zeroed, points deducted, the total capped. A criterion that an
    /// override then sets says so, so that the flag's sentence and the criterion's agree.
    fn apply_flags(&mut self, a: &Assessed, overrides: &[&Override]) {
        let rubric = self.rubric;
        for (flag, reason) in &a.flags {
            let mut effects = Vec::new();
            for rule in rubric.flag_rules.iter().filter(|r| r.applies_to(*flag)) {
                for id in rule.zeroed() {
                    let overridden = overrides.iter().any(|o| o.criterion.as_ref() == Some(id));
                    effects.extend(self.zero(id, *flag).map(|e| {
                        if overridden {
                            format!("{e} before the grader's override")
                        } else {
                            e
                        }
                    }));
                }
                if rule.deduct > 0.0 {
                    self.deductions.push((flag.code(), rule.deduct));
                    effects.push(format!("{} points off the total", points(rule.deduct)));
                }
                if let Some(c) = rule.cap {
                    self.caps.push((flag.code(), c));
                    effects.push(format!("the total may be at most {}", points(c)));
                }
            }
            let effect = if effects.is_empty() {
                "no effect on points".to_string()
            } else {
                effects.join(", ")
            };
            // a note's own "; " would read as two sentences (the feedback's separator)
            self.flags.push(format!(
                "Flag {}: {} ({effect})",
                flag.code(),
                reason.replace("; ", ", ")
            ));
        }
    }

    /// Criterion overrides, clamped to the criterion's range.
    fn apply_criterion_overrides(&mut self, overrides: &[&Override]) {
        for o in overrides {
            let Some(id) = &o.criterion else { continue };
            if let Some(i) = self.criteria.iter().position(|cs| cs.id == *id) {
                let cs = &mut self.criteria[i];
                let before = cs.points;
                cs.points = o.change.apply(before).clamp(0.0, cs.max);
                self.lines[i].why.push(format!(
                    "override by {}, was {}: {}",
                    o.grader,
                    points(before),
                    o.reason.replace(';', ",")
                ));
                self.applied.push(o.describe(&cs.label, before, cs.points));
            }
        }
    }

    /// The flags' deductions and lateness's, each a sentence in `steps`; their sum.
    fn deduct(&self, steps: &mut Vec<String>) -> f64 {
        let mut off = 0.0;
        for (code, d) in &self.deductions {
            off += d;
            steps.push(format!("Deduction for {code}: -{} points", points(*d)));
        }
        if let Some((d, words)) = &self.late {
            off += d;
            steps.push(format!(
                "Deduction for lateness ({words}): -{} points",
                points(*d)
            ));
        }
        off
    }

    /// The total after deductions, the floor at zero, caps and rounding, then total
    /// overrides; and the letter. Each step that moves the total is a sentence of its own.
    fn finish(mut self, overrides: &[&Override]) -> Score {
        let g = &self.rubric.grading;
        let max: f64 = self.criteria.iter().map(|c| c.max).sum();
        let mut steps = Vec::new();
        let mut total: f64 = self.criteria.iter().map(|c| c.points).sum();
        total -= self.deduct(&mut steps);
        if total < 0.0 {
            steps.push(format!(
                "Floor: the total cannot fall below 0, +{} points",
                points(-total)
            ));
            total = 0.0;
        }
        if let Some((code, cap)) = self.caps.iter().min_by(|x, y| x.1.total_cmp(&y.1)) {
            if total > *cap {
                steps.push(format!(
                    "Cap for {code}: the total is held at {}, -{} points",
                    points(*cap),
                    points(total - cap)
                ));
                total = *cap;
            } else {
                steps.push(format!(
                    "Cap for {code}: the total may be at most {}, which it is not above",
                    points(*cap)
                ));
            }
        }
        let rounded = g.round(total);
        if (rounded - total).abs() > 1e-9 {
            let sign = if rounded > total { "+" } else { "-" };
            steps.push(format!(
                "Rounding to a multiple of {}: {sign}{} points",
                points(g.round_to),
                points((rounded - total).abs())
            ));
        }
        total = rounded;
        for o in overrides.iter().filter(|o| o.criterion.is_none()) {
            let before = total;
            total = o.change.apply(before).clamp(0.0, max);
            let said = o.describe("total", before, total);
            steps.push(format!("Override: {said}"));
            self.applied.push(said);
        }
        let percent = if max > 0.0 { 100.0 * total / max } else { 0.0 };
        let letter = g.letter(percent);
        let feedback = self.feedback(&steps, total, max, letter.as_deref());
        Score {
            criteria: self.criteria,
            total,
            max,
            percent,
            letter,
            feedback,
            overrides: self.applied,
            excused: false,
        }
    }

    /// The sentences: each criterion with the points it finally earns, each flag, each step
    /// that moved the total, then the total; the points named add up to it.
    fn feedback(&self, steps: &[String], total: f64, max: f64, letter: Option<&str>) -> String {
        // a row's feedback is a few hundred characters: one allocation instead of a doubling
        // for every sentence
        let mut f = Feedback(String::with_capacity(512));
        for (line, cs) in self.lines.iter().zip(&self.criteria) {
            let out = f.sentence();
            out.push_str(&cs.label);
            out.push_str(": ");
            out.push_str(&line.words);
            out.push_str(", ");
            push_points(out, cs.points);
            out.push_str(" of ");
            push_points(out, cs.max);
            out.push_str(" points");
            if !line.why.is_empty() {
                out.push_str(": ");
                out.push_str(&line.why.join(", "));
            }
        }
        for s in self.flags.iter().chain(steps) {
            f.sentence().push_str(s);
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

/// A criterion's points before flags and overrides, the measure in words, and why the points
/// are not what the measure's rule gives, if they are not.
fn criterion_points(rubric: &Rubric, c: &Criterion, a: &Assessed) -> (f64, String, Option<String>) {
    let m = c.measure();
    let mut words = String::with_capacity(96);
    match (m, m.and_then(|m| m.of_assessed(a))) {
        // a negative width is an inverted range, which has no width to score
        (Some(m), Some(x)) if m == Measure::RANGE_WIDTH && x < 0.0 => {
            m.sentence(&mut words, x, a);
            (
                0.0,
                words,
                Some("an inverted range has no width to score".into()),
            )
        }
        (Some(m), Some(x)) => {
            m.sentence(&mut words, x, a);
            (rubric.grading.round(rule_points(c, x)), words, None)
        }
        // one rule for a missing entry: the sheet has the column and the student's cell is
        // blank, an error or unreadable: `if_blank`; anything else (no column, a zero mass, one
        // temperature for a width): `if_missing`
        (Some(m), None) => {
            if let Some(why) = m.missing_entry(a) {
                words.push_str(&why);
                (c.if_blank, words, None)
            } else {
                words.push_str(&m.why_missing(a));
                (c.if_missing, words, None)
            }
        }
        (None, _) => {
            words.push_str("not scored");
            (0.0, words, None)
        }
    }
}

/// The grade of an excused student: no points, no letter, the reason in the feedback; an
/// override for the student is listed as not applied.
fn excused(rubric: &Rubric, why: &str, overrides: &[&Override]) -> Score {
    let overrides = overrides
        .iter()
        .map(|o| {
            let what = o.criterion.as_deref().unwrap_or("total");
            format!(
                "not applied, the student is excused: {what} by {}: {}",
                o.grader, o.reason
            )
        })
        .collect();
    Score {
        criteria: Vec::new(),
        total: 0.0,
        max: rubric.criteria.iter().map(|c| *c.max.get_ref()).sum(),
        percent: 0.0,
        letter: None,
        feedback: format!("Excused ({why}): not graded."),
        overrides,
        excused: true,
    }
}

/// The grade of a rostered student of whom no row was read: the rubric's `no_submission`,
/// blank (no score, as an excused student's) or a number of points.
fn no_submission(rubric: &Rubric, likely_typed_as: Option<&str>) -> Score {
    let max: f64 = rubric.criteria.iter().map(|c| *c.max.get_ref()).sum();
    let likely = likely_typed_as.map_or(String::new(), |id| {
        format!(": a row with id {id}, which is not on the roster, is one typing slip from this student's id and has the same name: it is likely this student's (confirm the id with a correction)")
    });
    // a student whose row likely carries a mistyped id is left blank until the id is confirmed,
    // never scored twice (once under the typed id, once as missing)
    let rule = if likely_typed_as.is_some() {
        NoSubmission::Blank
    } else {
        rubric.grading.no_submission
    };
    match rule {
        NoSubmission::Blank => Score {
            max,
            feedback: format!(
                "No submission: no report was received under this student's id{likely}; not graded."
            ),
            excused: true,
            ..Score::default()
        },
        NoSubmission::Points(p) => {
            let percent = if max > 0.0 { 100.0 * p / max } else { 0.0 };
            let letter = rubric.grading.letter(percent);
            let mut feedback = format!(
                "No submission: {} points (the rubric's score for a report never received){likely}; Total {} of {}",
                points(p),
                points(p),
                points(max)
            );
            if let Some(l) = &letter {
                feedback = format!("{feedback} ({l})");
            }
            feedback.push('.');
            Score {
                total: p,
                max,
                percent,
                letter,
                feedback,
                ..Score::default()
            }
        }
    }
}

/// Reads a feedback text back and checks that the points it names add up to the total it
/// states: each criterion's "P of M points", each deduction, floor, cap and rounding step's
/// signed points, each total override's change. `labels` are the rubric's criterion labels.
/// Returns the total stated, or what does not add up.
pub fn audit_feedback(feedback: &str, labels: &[&str]) -> Result<f64, String> {
    let num = |t: &str| t.trim().parse::<f64>().ok();
    let mut sum = 0.0;
    let mut stated = None;
    for sentence in feedback.split("; ") {
        let s = sentence.trim_end_matches('.');
        if labels.iter().any(|l| s.starts_with(&format!("{l}: "))) {
            let earned = s.match_indices(" of ").filter_map(|(i, _)| {
                let p = num(s[..i].rsplit(", ").next()?)?;
                let max = num(s[i + 4..].split(" points").next()?)?;
                Some((p, max))
            });
            let (p, _) = earned
                .last()
                .ok_or_else(|| format!("no points in \"{s}\""))?;
            sum += p;
        } else if ["Deduction for ", "Floor: ", "Cap for ", "Rounding "]
            .iter()
            .any(|p| s.starts_with(p))
        {
            if let Some(head) = s.strip_suffix(" points") {
                let v = head.rsplit(' ').next().and_then(num);
                sum += v.ok_or_else(|| format!("no signed points in \"{s}\""))?;
            }
        } else if let Some(rest) = s.strip_prefix("Override: total ") {
            let (before, after) = rest
                .split_once(" -> ")
                .ok_or_else(|| format!("no change in \"{s}\""))?;
            let after = after.split(' ').next().and_then(num);
            sum += after.zip(num(before)).map_or(f64::NAN, |(a, b)| a - b);
        } else if let Some(rest) = s.strip_prefix("No submission: ") {
            if let Some((p, _)) = rest.split_once(" points") {
                sum += num(p).ok_or_else(|| format!("no points in \"{s}\""))?;
            }
        } else if let Some(rest) = s.strip_prefix("Total ") {
            stated = rest.split(' ').next().and_then(num);
        }
    }
    let total = stated.ok_or("no total stated")?;
    // each number is shown to six decimals
    if (sum - total).abs() > 1e-5 {
        return Err(format!(
            "the sentences add up to {sum}, the total is {total}"
        ));
    }
    Ok(total)
}

/// The `[late]` rule on the row's days late: the points off and the reckoning in words, or
/// nothing for a report on time (or a rubric without the rule).
fn late_deduction(rubric: &Rubric, a: &Assessed) -> Option<(f64, String)> {
    let rule = rubric.late.as_ref()?;
    let days = a
        .submission
        .late_days
        .filter(|d| d.is_finite() && *d > 0.0)?;
    let max: f64 = rubric.criteria.iter().map(|c| *c.max.get_ref()).sum();
    let (off, charged) = rule.deduction(days, max);
    if off <= 0.0 {
        return None;
    }
    let rate = match (rule.points_per_day, rule.percent_per_day) {
        (Some(p), _) => format!("{} points a day", points(p)),
        (None, Some(p)) => format!("{} % of {} a day", points(p), points(max)),
        _ => String::new(),
    };
    let grace = if rule.grace_days > 0.0 {
        format!(" after a {}-day grace period", points(rule.grace_days))
    } else {
        String::new()
    };
    let capped = rule
        .max_points
        .filter(|m| off >= *m)
        .map_or(String::new(), |m| format!(", at most {}", points(m)));
    Some((
        off,
        format!(
            "{} days late, {} charged{grace}, {rate}{capped}",
            points(days),
            points(charged)
        ),
    ))
}

/// Grades one assessed row.
pub fn score(rubric: &Rubric, a: &Assessed, overrides: &[&Override]) -> Score {
    let mut s = score_row(rubric, a, overrides);
    // graders' corrections of what was typed come first, each a sentence of its own
    if !a.submission.corrections.is_empty() {
        let mut said = String::new();
        for c in &a.submission.corrections {
            said.push_str("Correction: ");
            said.push_str(&c.replace("; ", ", "));
            said.push_str("; ");
        }
        s.feedback = said + &s.feedback;
    }
    s
}

fn score_row(rubric: &Rubric, a: &Assessed, overrides: &[&Override]) -> Score {
    if let Some(why) = &a.excused {
        return excused(rubric, why, overrides);
    }
    if a.submission.no_submission {
        return no_submission(rubric, a.submission.likely_typed_as.as_deref());
    }
    let mut s = Scoring::measure(rubric, a);
    s.apply_flags(a, overrides);
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
            excused: None,
            workup: crate::model::Workup::default(),
        }
    }

    fn labels(r: &Rubric) -> Vec<&str> {
        r.criteria.iter().map(|c| c.label.as_str()).collect()
    }

    fn points_of(s: &Score) -> Vec<f64> {
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
        assert_eq!(points_of(&s), vec![40.0, 30.0, 15.0, 10.0]);
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
    fn blank_error_and_unreadable_entries_score_alike() {
        // the documented rule (rubrics/README.md): on a sheet with a reported-recovery column, a
        // blank cell, an error (#DIV/0!) and text all earn if_blank; a sheet without the column
        // earns if_missing (hand-worked: 4 and 10 of the report criterion's 10)
        let r = rubric("if_missing = 10\nif_blank = 4\n");
        let report = |a: &Assessed| score(&r, a, &[]).criteria[3].clone();
        let blank = row(80.0, 0.5, 0.0, None);
        let mut error = row(80.0, 0.5, 0.0, None);
        error.submission.unreadable.push(crate::ingest::Unreadable {
            field: crate::fields::Field::ReportedRecovery,
            cell: "E4".into(),
            found: "the error #DIV/0!".into(),
        });
        let mut no_column = row(80.0, 0.5, 0.0, None);
        no_column
            .submission
            .no_column
            .push(crate::fields::Field::ReportedRecovery);
        assert_eq!(report(&blank).points, 4.0);
        assert!(score(&r, &blank, &[])
            .feedback
            .contains("no reported recovery was given"));
        assert_eq!(report(&error).points, 4.0);
        assert!(score(&r, &error, &[])
            .feedback
            .contains("the reported recovery could not be read"));
        assert_eq!(report(&no_column).points, 10.0);
        // a rubric that says nothing gives a blank entry nothing (if_blank defaults to 0)
        let plain = rubric("if_missing = 10\n");
        assert_eq!(score(&plain, &error, &[]).criteria[3].points, 0.0);
    }

    #[test]
    fn a_flag_note_with_a_semicolon_stays_one_sentence_and_a_calibrated_reading_is_not_recorded() {
        let r = rubric("");
        let mut a = row(80.0, 0.0, 0.0, Some(80.0));
        a.flags.push((
            Flag::OutsideCalibratedSpan,
            "no calibration; readings uncorrected".into(),
        ));
        let s = score(&r, &a, &[]);
        assert!(
            s.feedback.contains("no calibration, readings uncorrected"),
            "{}",
            s.feedback
        );
        assert_eq!(audit_feedback(&s.feedback, &labels(&r)), Ok(s.total));
        // a single reading of 121.6 °C corrected to 121.4 °C: the feedback says which is which
        a.range_width_c = None;
        a.submission.single_reading = true;
        a.submission.mp_clear_c = Some(121.6);
        a.mp_clear_c = Some(121.4);
        a.calibration = Some("bench 1: T = -0.2 + 1.0 x reading".into());
        let s = score(&r, &a, &[]);
        assert!(
            s.feedback
                .contains("one temperature was recorded (121.6 °C as read, 121.4 °C calibrated)"),
            "{}",
            s.feedback
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
        // the criterion says what it finally earns and why; the flag says what it did; the cap
        // is a sentence of its own; the sentences add up to the total
        assert!(
            s.feedback.starts_with(
                "Recovery: recovery 104.0 %, 0 of 40 points: recovered mass exceeds crude;"
            ),
            "{}",
            s.feedback
        );
        assert!(s.feedback.contains("Flag recovery-over-100: recovered 2.6 g exceeds crude 2.5 g (Recovery 40 -> 0 points, the total may be at most 50)"), "{}", s.feedback);
        // a grader who sets the zeroed criterion again: the flag's sentence says it came first
        // (a trial: "Recovery 40 -> 0 points" beside "40 of 40 points ... override")
        let set = Override {
            student_id: "s".into(),
            section: None,
            criterion: Some("recovery".into()),
            change: crate::rubric::overrides::Change::Set(40.0),
            reason: "re-weighed dry".into(),
            grader: "RO".into(),
            line: 2,
        };
        let o = score(&r, &a, &[&set]);
        assert!(
            o.feedback
                .contains("(Recovery 40 -> 0 points before the grader's override, the total"),
            "{}",
            o.feedback
        );
        assert_eq!(audit_feedback(&o.feedback, &labels(&r)), Ok(o.total));
        assert!(
            s.feedback
                .contains("Cap for recovery-over-100: the total is held at 50, -10 points"),
            "{}",
            s.feedback
        );
        assert_eq!(audit_feedback(&s.feedback, &labels(&r)), Ok(50.0));
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

    #[test]
    fn an_inverted_range_and_a_single_reading_earn_nothing_for_width_and_say_why() {
        let r = rubric("");
        let mut a = row(80.0, -1.0, 0.0, None);
        let s = score(&r, &a, &[]);
        assert_eq!(s.criteria[1].points, 0.0);
        assert!(
            s.feedback.contains("Range: the range 123.4-122.4 °C is inverted (the onset is above the clear point), 0 of 30 points: an inverted range has no width to score"),
            "{}",
            s.feedback
        );
        // one temperature: the width is not measured, so the criterion's if_missing (0) applies
        a = row(80.0, 0.0, 0.0, None);
        a.range_width_c = None;
        a.submission.single_reading = true;
        let s = score(&r, &a, &[]);
        assert_eq!(s.criteria[1].points, 0.0);
        assert!(
            s.feedback.contains("Range: one temperature (122.4 °C) was recorded, not a range, so no width was measured, 0 of 30 points"),
            "{}",
            s.feedback
        );
        assert_eq!(audit_feedback(&s.feedback, &labels(&r)), Ok(s.total));
    }

    #[test]
    fn deductions_floors_and_rounding_are_sentences_that_add_up() {
        let r = rubric(
            "[[flag_rule]]\nflag = \"likely-wet\"\ndeduct = 7.3\n\
             [[flag_rule]]\nflag = \"missing-value\"\ndeduct = 150\n",
        );
        let mut a = row(80.0, 0.5, 0.0, Some(80.0));
        a.flags = vec![(Flag::LikelyWet, "heavy".into())];
        let s = score(&r, &a, &[]);
        // 100 - 7.3 = 92.7, rounded to a multiple of 0.5: 92.5
        assert_eq!(s.total, 92.5);
        assert!(
            s.feedback.contains("Deduction for likely-wet: -7.3 points"),
            "{}",
            s.feedback
        );
        assert!(
            s.feedback
                .contains("Rounding to a multiple of 0.5: -0.2 points"),
            "{}",
            s.feedback
        );
        assert_eq!(audit_feedback(&s.feedback, &labels(&r)), Ok(92.5));
        a.flags = vec![(Flag::MissingValue, "no crude mass given".into())];
        let s = score(&r, &a, &[]);
        assert_eq!(s.total, 0.0);
        assert!(
            s.feedback
                .contains("Floor: the total cannot fall below 0, +50 points"),
            "{}",
            s.feedback
        );
        assert_eq!(audit_feedback(&s.feedback, &labels(&r)), Ok(0.0));
    }

    #[test]
    fn an_excused_student_gets_no_points_and_the_reason() {
        let r = rubric("");
        let mut a = row(80.0, 0.5, 0.0, None);
        a.excused = Some("status \"W\": withdrawn".into());
        let s = score(&r, &a, &[]);
        assert!(s.excused && s.letter.is_none() && s.criteria.is_empty());
        assert_eq!(s.feedback, "Excused (status \"W\": withdrawn): not graded.");
        let g = crate::model::Graded {
            assessed: a,
            score: s,
        };
        use crate::model::columns::{Value, LETTER, PERCENT, SCORE, STATUS};
        assert!(matches!(SCORE.value(g.row()), Value::Number(None)));
        assert!(matches!(PERCENT.value(g.row()), Value::Number(None)));
        assert!(matches!(LETTER.value(g.row()), Value::Text(None)));
        assert!(matches!(
            STATUS.value(g.row()),
            Value::Text(Some("excused"))
        ));
    }

    proptest::proptest! {
        /// Whatever the measures, flags and overrides, the feedback's points add up to the
        /// total, and each criterion's sentence names the points it finally earned.
        #[test]
        fn feedback_adds_up_to_the_score(
            rec in -20.0f64..150.0,
            width in -3.0f64..6.0,
            dep in -2.0f64..8.0,
            reported in proptest::option::of(-5.0f64..150.0),
            flags in proptest::collection::vec(0usize..Flag::ALL.len(), 0..4),
            set in proptest::option::of(0.0f64..50.0),
            adjust in proptest::option::of(-30.0f64..30.0),
            missing_width in proptest::bool::ANY,
        ) {
            let r = rubric(
                "[[flag_rule]]\nflag = \"recovery-over-100\"\nzero = [\"recovery\"]\n\
                 [[flag_rule]]\nflag = \"range-inverted\"\nzero = [\"range\", \"depression\"]\n\
                 [[flag_rule]]\nflag = \"likely-wet\"\ndeduct = 7.25\n\
                 [[flag_rule]]\nflag = \"suspicious\"\ndeduct = 2\n\
                 [[flag_rule]]\nflag = \"impossible\"\ncap = 50\n",
            );
            let mut a = row(rec, width, dep, reported);
            if missing_width {
                a.range_width_c = None;
                a.submission.single_reading = true;
            }
            let mut fl: Vec<Flag> = flags.iter().map(|&i| Flag::ALL[i]).collect();
            fl.sort_by_key(|f| f.code());
            fl.dedup();
            a.flags = fl.into_iter().map(|f| (f, "a reason".to_string())).collect();
            let over = |criterion: Option<&str>, change| Override {
                student_id: "s".into(),
                section: None,
                criterion: criterion.map(str::to_string),
                change,
                reason: "checked; re-weighed".into(),
                grader: "RO".into(),
                line: 2,
            };
            let mut list = Vec::new();
            if let Some(v) = set { list.push(over(Some("depression"), Change::Set(v))); }
            if let Some(v) = adjust { list.push(over(None, Change::Adjust(v))); }
            let refs: Vec<&Override> = list.iter().collect();
            let s = score(&r, &a, &refs);
            let stated = audit_feedback(&s.feedback, &labels(&r));
            // the feedback shows points to six decimals
            proptest::prop_assert!(
                stated.as_ref().is_ok_and(|t| (t - s.total).abs() < 1e-6),
                "{:?} for {}: {}", stated, s.total, s.feedback
            );
            for cs in &s.criteria {
                let said = format!("{}: ", cs.label);
                let sentence = s.feedback.split("; ").find(|x| x.starts_with(&said)).unwrap();
                let p = format!(", {} of {} points", points(cs.points), points(cs.max));
                proptest::prop_assert!(sentence.contains(&p), "{} / {}", sentence, p);
            }
        }
    }
}
