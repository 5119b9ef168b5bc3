//! Assessing and scoring rows one after another, with what a run adds to a row before it is
//! judged: graders' corrections of what was typed, and the roster (its ids, its assistants,
//! its flags), and the rows the roster adds for the students of whom none was read.

use super::{context, Inputs, RunError};
use crate::assess::{Assessor, Calibration};
use crate::config::Config;
use crate::error::{ConfigError, WriteError};
use crate::ingest;
use crate::model::{Graded, Score};
use crate::rubric::overrides::{Override, Overrides};
use crate::rubric::score;

/// Assesses and scores rows one after another.
pub(super) struct Grader<'a> {
    pub(super) config: &'a Config,
    pub(super) assessor: Assessor<'a>,
    pub(super) overrides: Overrides,
    /// Whether rows are scored: not in the first pass, which needs only the measures.
    pub(super) scoring: bool,
    /// The ids of the rows graded, for the roster's students with no row.
    pub(super) seen: std::collections::HashSet<String>,
    /// The sections rows were read in, by section key, each as first written: a rostered
    /// student with no row goes in the sheet's section where the roster writes it in full.
    pub(super) sections_seen: std::collections::HashMap<String, String>,
    /// Rostered ids a row not on the roster is likely to be, with that row's id.
    pub(super) likely: std::collections::HashMap<String, String>,
    /// Which corrections found their row.
    pub(super) corrections_used: Vec<bool>,
    /// Ids a correction gave a row, and those that left a row with another row's id.
    pub(super) corrected_ids: std::collections::HashSet<String>,
    pub(super) clashes: std::collections::BTreeSet<String>,
}

impl<'a> Grader<'a> {
    pub(super) fn new(
        config: &'a Config,
        calibration: Option<&'a Calibration>,
        inputs: &Inputs<'a>,
    ) -> Self {
        Grader {
            config,
            assessor: Assessor::new(context(config, calibration, inputs)),
            overrides: config.overrides.clone(),
            scoring: inputs.centres.is_some(),
            seen: std::collections::HashSet::new(),
            sections_seen: std::collections::HashMap::new(),
            likely: std::collections::HashMap::new(),
            corrections_used: vec![false; config.corrections.len()],
            corrected_ids: std::collections::HashSet::new(),
            clashes: std::collections::BTreeSet::new(),
        }
    }

    /// Refuses the run when an override or (in the grading pass) a correction found no row.
    pub(super) fn unmatched(&self) -> Result<(), RunError> {
        let mut unmatched = self.overrides.unmatched();
        if self.scoring {
            unmatched.extend(self.config.corrections.unmatched(&self.corrections_used));
            unmatched.extend(self.config.corrections.clashing(&self.clashes));
        }
        if unmatched.is_empty() {
            Ok(())
        } else {
            Err(ConfigError::Invalid(unmatched.join("\n")).into())
        }
    }

    pub(super) fn grade(&mut self, mut sub: ingest::Submission) -> Graded {
        if !self.config.corrections.is_empty() && !sub.no_submission {
            let typed = sub.student_id.clone();
            sub.corrections = self
                .config
                .corrections
                .apply(&mut sub, &mut self.corrections_used);
            if let (Some(t), Some(now)) = (typed, &sub.student_id) {
                if t.trim() != now.trim() {
                    self.corrected_ids.insert(now.trim().to_string());
                }
            }
        }
        if let Some(roster) = &self.config.roster {
            roster.settle(&mut sub);
            sub.off_roster = !sub.no_submission
                && sub
                    .student_id
                    .as_deref()
                    .is_some_and(|id| roster.get(id).is_none());
        }
        let mut a = self.assessor.assess(sub);
        let id = a.submission.student_id.as_deref().map(str::trim);
        if let (true, Some(id)) = (a.has(crate::model::Flag::DuplicateStudent), id) {
            if self.corrected_ids.contains(id) {
                self.clashes.insert(id.to_string());
            }
        }
        if let Some(roster) = &self.config.roster {
            if let Some(id) = a.submission.student_id.as_deref() {
                self.seen.insert(id.trim().to_string());
            }
            if !a.submission.no_submission {
                let section = &a.submission.section;
                self.sections_seen
                    .entry(crate::model::section_key(section))
                    .or_insert_with(|| section.clone());
            }
            if a.excused.is_none() && !a.submission.no_submission {
                a.flags.extend(roster.flags(&a.submission));
                a.flags.sort_by_key(|(f, _)| f.code());
            }
            if let (Some(e), Some(typed)) = (roster.likely(&a.submission), &a.submission.student_id)
            {
                self.likely.insert(e.id.clone(), typed.trim().to_string());
            }
        }
        let score = if self.scoring {
            let s = &a.submission;
            // an override applies to the submission that counts, never to a repeat
            let own = if a.has(crate::model::Flag::DuplicateStudent) {
                Vec::new()
            } else {
                self.overrides.for_row(s.student_id.as_deref(), &s.section)
            };
            let refs: Vec<&Override> = own.iter().collect();
            score::score(&self.config.rubric, &a, &refs)
        } else {
            Score::default()
        };
        Graded { score, assessed: a }
    }
}

/// A row for each rostered student of whom no row was read, after every input: status
/// `no-submission`, graded as the rubric's `no_submission` says, in the rostered section.
pub(super) fn no_submissions(
    grader: &mut Grader,
    on_row: &mut dyn FnMut(Graded) -> Result<(), WriteError>,
) -> Result<(), WriteError> {
    let Some(roster) = &grader.config.roster else {
        return Ok(());
    };
    let missing: Vec<ingest::Submission> = roster
        .missing(&grader.seen)
        .map(|e| ingest::Submission {
            source: roster.source.clone(),
            row: e
                .place
                .rsplit(' ')
                .next()
                .and_then(|n| n.parse().ok())
                .unwrap_or(0),
            section: e.section.as_deref().map_or_else(
                || "(no section on the roster)".into(),
                |full| {
                    // "CHEM 2299 Lab 101" on the roster, "101" on the sheets: the sheets' name
                    roster
                        .short_key(full)
                        .and_then(|k| grader.sections_seen.get(k))
                        .map_or_else(|| full.to_string(), Clone::clone)
                },
            ),
            student_id: Some(e.id.clone()),
            student_name: e.name.clone(),
            assistant: e.assistant.clone(),
            no_submission: true,
            likely_typed_as: grader.likely.get(&e.id).cloned(),
            ..ingest::Submission::default()
        })
        .collect();
    // rows made from the roster are not submissions: the tally counts what was read
    for sub in missing {
        on_row(grader.grade(sub))?;
    }
    Ok(())
}
