//! The outputs of a grading run, open while rows stream past: the writer threads (text outputs,
//! graded workbooks) that take each row as it is graded, and the tallies the grading thread
//! keeps for the summaries it writes at the end (section statistics, results.parquet, the
//! baseline comparison and the cohort report).

use std::collections::BTreeMap;
use std::path::{Path, PathBuf};
use std::sync::Arc;

use crate::config::Config;
use crate::error::WriteError;
use crate::export::atomic::Stage;
use crate::export::book_plan::BookPlan;
use crate::export::gradebook::Gradebook;
use crate::export::handouts::Handouts;
use crate::export::parquet::{self, BaselineRow, ParquetRows};
use crate::export::provenance::Provenance;
use crate::export::report::Report;
use crate::export::report_html;
use crate::export::results_csv::ResultsCsv;
use crate::export::results_json::ResultsJson;
use crate::export::row_thread::{RowThread, Target};
use crate::export::text_outputs::{TextOutputs, TextWorker};
use crate::export::workbook::GradedWorkbooks;
use crate::export::workbook_worker::{self, BookWorker};
use crate::export::{cohort_csv, cohort_workbook, section_stats};
use crate::ingest::Problem;
use crate::model::names::BatchNames;
use crate::model::Flag;
use crate::model::Graded;
use crate::stats::cohort::{BiasRule, Cohort};
use crate::stats::quality::Quality;
use crate::stats::sections::SectionStats;

use super::labels::Labels;
use super::RunError;

/// The writer threads.
pub(super) struct Writers {
    text: TextWorker,
    /// results.csv, the first of the text outputs, names the text thread in its errors.
    text_path: PathBuf,
    workbooks: Option<BookWorker>,
}

impl Writers {
    /// Opens the text outputs (`paths`: results.csv, results.json, gradebook.csv) and starts the
    /// threads.
    pub(super) fn spawn(
        config: &Config,
        paths: &[PathBuf; 3],
        stage: &Stage,
        names: &Arc<BatchNames>,
    ) -> Result<Writers, WriteError> {
        let outputs = open_text_outputs(config, paths, stage, names)?;
        let text = RowThread::spawn("text outputs", outputs)
            .map_err(|e| WriteError::other(&paths[0], e))?;
        let labels = config
            .rubric
            .criteria
            .iter()
            .map(|c| (c.label.clone(), c.id.get_ref().clone()))
            .collect();
        let max_score = config
            .rubric
            .criteria
            .iter()
            .map(|c| *c.max.get_ref())
            .sum();
        let workbooks = if config.skip_workbooks {
            None
        } else {
            Some(
                BookWorker::spawn(
                    "graded workbooks",
                    GradedWorkbooks::new(
                        &config.out_dir,
                        config.split_sections,
                        labels,
                        max_score,
                        stage.clone(),
                    ),
                )
                .map_err(|e| WriteError::other(&config.out_dir, e))?,
            )
        };
        Ok(Writers {
            text,
            text_path: paths[0].clone(),
            workbooks,
        })
    }

    /// The threads every graded row goes to.
    pub(super) fn targets(&self) -> Vec<&dyn Target> {
        let mut t: Vec<&dyn Target> = vec![&self.text];
        t.extend(self.workbooks.as_ref().map(|w| w as &dyn Target));
        t
    }

    /// Every row has been sent: the workbooks start saving, the text outputs drain their queue
    /// and commit, while the grading thread writes the summaries.
    pub(super) fn start_finish(
        &mut self,
        provenance: &Provenance,
        stats: &Arc<SectionStats>,
        problems: &[Problem],
    ) {
        if let Some(w) = self.workbooks.as_mut() {
            workbook_worker::start_saving(w, provenance.clone(), stats.clone());
        }
        self.text.start_finish(problems.to_vec());
    }

    /// Waits for both threads; the first error either met.
    /// Waits for both threads; the first error either met. A thread that died (a panic) is an
    /// internal error, never a half-written output: nothing is published after it.
    pub(super) fn wait(self) -> Result<(), RunError> {
        let died = |what: &str| RunError::Internal(format!("the thread writing {what} stopped"));
        match self.text.join() {
            Some(outcome) => outcome?,
            None => return Err(died(&self.text_path.display().to_string())),
        }
        if let Some(w) = self.workbooks {
            match w.join() {
                Some(outcome) => {
                    outcome?;
                }
                None => return Err(died("the graded workbooks")),
            }
        }
        Ok(())
    }
}

/// results.csv, results.json, gradebook.csv and, with pseudonyms, results-pseudonymized.csv
/// (the batch's `names` scrubbed from it).
fn open_text_outputs(
    config: &Config,
    paths: &[PathBuf; 3],
    stage: &Stage,
    names: &Arc<BatchNames>,
) -> Result<TextOutputs, WriteError> {
    let ids = config.rubric.criterion_ids();
    let pseudonymized = match &config.pseudonyms {
        Some(p) => Some(ResultsCsv::create_pseudonymized(
            &config.out_dir.join("results-pseudonymized.csv"),
            &ids,
            p.with_names(Arc::clone(names)),
            stage,
        )?),
        None => None,
    };
    Ok(TextOutputs {
        csv: ResultsCsv::create(&paths[0], &ids, stage)?,
        pseudonymized,
        json: ResultsJson::create(&paths[1], stage)?,
        gradebook: Gradebook::create(&paths[2], stage)?,
        handouts: (!config.skip_handouts).then(|| {
            Handouts::new(&config.out_dir, &config.title, stage)
                .with_sheet_notes(config.rubric.grading.notes_to_students)
        }),
    })
}

/// What the grading thread keeps of every row for the summaries.
pub(super) struct Tallies {
    /// The graded workbooks' paths, planned as the workbook thread plans them, so that an
    /// overwrite is refused without waiting for that thread; `None` with `--skip-workbooks`.
    pub(super) plan: Option<BookPlan>,
    pub(super) stats: SectionStats,
    cohort: Cohort,
    quality: Quality,
    labels: Labels,
    parquet: ParquetRows,
    letters: BTreeMap<String, usize>,
    /// The sections that get a handout file, in the order the handouts meet them.
    handout_sections: std::collections::HashSet<String>,
    without_handout: WithoutHandout,
}

/// The students past the handouts' section limit: how many, their sections, the first met.
#[derive(Default)]
struct WithoutHandout {
    students: usize,
    sections: std::collections::BTreeSet<String>,
    first: Option<String>,
}

impl Tallies {
    pub(super) fn new(
        config: &Config,
        stage: &Stage,
        names: &Arc<BatchNames>,
    ) -> Result<Tallies, WriteError> {
        Ok(Tallies {
            plan: (!config.skip_workbooks)
                .then(|| BookPlan::new(&config.out_dir, config.split_sections)),
            stats: SectionStats::default(),
            cohort: Cohort::default(),
            labels: Labels::new(Arc::clone(names)),
            quality: Quality {
                with_roster: config.roster.is_some(),
                ..Quality::default()
            },
            parquet: ParquetRows::create(
                &config.out_dir.join("results.parquet"),
                config
                    .pseudonyms
                    .as_ref()
                    .map(|p| p.with_names(Arc::clone(names))),
                &crate::export::provenance::sha256_hex(config.rubric_text.as_bytes()),
                stage,
            )?,
            letters: BTreeMap::new(),
            handout_sections: std::collections::HashSet::new(),
            without_handout: WithoutHandout::default(),
        })
    }

    pub(super) fn add(&mut self, g: &Graded) -> Result<(), WriteError> {
        self.parquet.add(g)?;
        // the graded workbooks' Statistics sheets find their sections by the labels as read
        self.stats.add(g);
        // the summaries name no student: labels holding a name are told without it
        let told = self.labels.row(g);
        let labelled = told.as_ref().unwrap_or(g);
        self.cohort.add(labelled);
        self.quality.add(labelled);
        // each graded student once: a repeat that does not count has no grade of its own
        if let (false, Some(l)) = (g.assessed.has(Flag::DuplicateStudent), &g.score.letter) {
            *self.letters.entry(l.clone()).or_default() += 1;
        }
        // a row made from the roster has no sheet to write back into
        if let (Some(plan), false) = (self.plan.as_mut(), g.assessed.submission.no_submission) {
            let s = &g.assessed.submission;
            plan.book(&s.source, &s.section);
        }
        self.count_handout(g);
        Ok(())
    }

    /// Follows the handouts' section limit as the text thread meets it (same rows, same order).
    fn count_handout(&mut self, g: &Graded) {
        if g.assessed.has(Flag::DuplicateStudent) || g.assessed.submission.no_submission {
            return;
        }
        let section = &g.assessed.submission.section;
        if self.handout_sections.contains(section) {
            return;
        }
        if self.handout_sections.len() < crate::export::handouts::MAX_SECTIONS {
            self.handout_sections.insert(section.clone());
            return;
        }
        let w = &mut self.without_handout;
        w.students += 1;
        w.sections.insert(section.clone());
        w.first.get_or_insert_with(|| section.clone());
    }

    /// A note when sections past the handouts' limit got none (never with `--skip-handouts`).
    pub(super) fn handout_note(&self, config: &Config) -> Option<Problem> {
        let w = &self.without_handout;
        let first = w.first.as_ref().filter(|_| !config.skip_handouts)?;
        Some(Problem {
            file: config
                .out_dir
                .join(crate::export::handouts::FOLDER)
                .display()
                .to_string(),
            sheet: None,
            message: format!(
                "handouts are written for the first {} sections of a batch; {} more sections ({} students, from section \"{first}\" on) have none: grade them in a batch of their own for their handouts",
                crate::export::handouts::MAX_SECTIONS,
                w.sections.len(),
                w.students
            ),
            fatal: false,
        })
    }

    /// section-stats.csv, the baseline comparison, results.parquet and the cohort report.
    pub(super) fn write_summaries(
        self,
        config: &Config,
        stats: &SectionStats,
        provenance: &Provenance,
        stage: &Stage,
    ) -> Result<(), RunError> {
        let dir = &config.out_dir;
        let told = self.labels.section_stats(stats);
        let stats = told.as_ref();
        section_stats::write(&dir.join("section-stats.csv"), stats, stage)?;
        let mismatch = config
            .baseline
            .as_ref()
            .and_then(|b| parquet::rubric_mismatch(&b.term, &provenance.rubric_sha256));
        let baseline = match &config.baseline {
            Some(earlier) => {
                let rows =
                    parquet::compare(&earlier.term, &self.parquet.term(), mismatch.is_none());
                write_baseline(&dir.join("baseline-comparison.csv"), &rows, stage)?;
                rows
            }
            None => Vec::new(),
        };
        self.parquet.finish()?;
        let letters = letter_counts(config, &self.letters);
        let cohort = Summaries {
            cohort: &self.cohort,
            quality: &self.quality,
            stats,
            letters: &letters,
            baseline: &baseline,
            baseline_note: mismatch.as_deref(),
        };
        write_cohort(config, &cohort, provenance, stage)?;
        Ok(())
    }
}

/// The letters in the rubric's order (highest cut-off first), with how many students earned each.
fn letter_counts(config: &Config, counts: &BTreeMap<String, usize>) -> Vec<(String, usize)> {
    let Some(cuts) = config.rubric.grading.letters.as_ref() else {
        return Vec::new();
    };
    let mut order: Vec<(&String, &f64)> = cuts.get_ref().iter().collect();
    order.sort_by(|a, b| b.1.total_cmp(a.1));
    order
        .into_iter()
        .map(|(l, _)| (l.clone(), counts.get(l).copied().unwrap_or(0)))
        .collect()
}

/// baseline-comparison.csv: metric, baseline, current, shift.
fn write_baseline(path: &Path, rows: &[BaselineRow], stage: &Stage) -> Result<(), WriteError> {
    crate::export::atomic::write_atomic(path, stage, |w| {
        let mut csv = csv::Writer::from_writer(w);
        csv.write_record(["metric", "baseline", "current", "shift"])?;
        for r in rows {
            let n = |v: f64| crate::export::number(Some(v));
            csv.write_record([r.metric.clone(), n(r.baseline), n(r.current), n(r.shift)])?;
        }
        csv.flush()
    })
}

/// section-comparison.csv, bench-bias.csv, cohort-report.xlsx and cohort-report.html.
/// What the cohort report is drawn from, kept through the run.
struct Summaries<'a> {
    cohort: &'a Cohort,
    quality: &'a Quality,
    stats: &'a SectionStats,
    letters: &'a [(String, usize)],
    baseline: &'a [BaselineRow],
    baseline_note: Option<&'a str>,
}

fn write_cohort(
    config: &Config,
    s: &Summaries,
    provenance: &Provenance,
    stage: &Stage,
) -> Result<(), WriteError> {
    let dir = &config.out_dir;
    let comparisons = s.cohort.comparisons();
    let bias = s.cohort.bench_bias(BiasRule::default());
    let outliers = s.cohort.outliers(config.rubric.tolerances.outlier_min_n);
    cohort_csv::write_comparisons(&dir.join("section-comparison.csv"), &comparisons, stage)?;
    cohort_csv::write_bias(&dir.join("bench-bias.csv"), &bias, stage)?;
    let generated = format!(
        "{} UTC from {} input files",
        provenance.time_text,
        provenance.inputs.len()
    );
    let used = provenance.used_line();
    let report = Report {
        title: &config.title,
        generated: &generated,
        used: &used,
        baseline_note: s.baseline_note,
        cohort: s.cohort,
        stats: s.stats,
        comparisons: &comparisons,
        bias: &bias,
        outliers: &outliers,
        letters: s.letters,
        baseline: s.baseline,
        quality: s.quality,
    };
    let xlsx = dir.join("cohort-report.xlsx");
    cohort_workbook::write(&xlsx, &report, config.timestamp, stage)?;
    report_html::write(&dir.join("cohort-report.html"), &report, stage)
}
