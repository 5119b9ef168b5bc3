//! The batch, start to finish. A reader thread opens the files and parses their sheets while
//! this thread tabulates, assesses and writes the previous sheet, so reading and grading overlap
//! and only a sheet or two is held in memory. Outputs are written as rows stream past, to
//! temporary files renamed into place at the end.

use std::path::{Path, PathBuf};
use std::sync::mpsc::{sync_channel, SyncSender};

use crate::assess::duplicates::{Counted, Repeats};
use crate::assess::{calibration, Calibration, Centres, Context};
use crate::config::Config;
use crate::error::{ConfigError, WriteError};
use crate::export::atomic::Stage;
use crate::export::provenance::Provenance;
use crate::export::row_thread::Fanout;
use crate::ingest::spill::{Replay, SpillWriter};
use crate::ingest::{self, discover, Collector, Problem, SheetReport};
use crate::model::names::BatchNames;
use crate::model::{Graded, Tally};

mod folder;
mod grader;
mod key;
mod labels;
mod outputs;
use folder::{folder_note, open_output_folder, refuse_overwriting_inputs};
pub use folder::{write_templates, LOCK_WAIT};
use grader::{no_submissions, Grader};
use outputs::{Tallies, Writers};

/// What a run read and found.
#[derive(Debug, Default)]
pub struct Batch {
    pub files: Vec<PathBuf>,
    pub sheets: Vec<SheetReport>,
    pub problems: Vec<Problem>,
    pub tally: Tally,
    /// Every graded row, kept only by `assess_batch` (grading streams them to disk).
    pub rows: Vec<Graded>,
}

impl Batch {
    /// Some input could not be read (exit code 1).
    pub fn incomplete(&self) -> bool {
        self.problems.iter().any(|p| p.fatal)
    }
}

/// Why a grading run stopped. Whatever the reason, the output folder keeps the previous
/// run's outputs.
#[derive(Debug, thiserror::Error)]
pub enum RunError {
    #[error(transparent)]
    Config(#[from] ConfigError),
    #[error(transparent)]
    Write(#[from] WriteError),
    /// No file to grade, or no student row in any (exit code 1); the problems say why.
    #[error("{message}")]
    Nothing {
        message: String,
        problems: Vec<Problem>,
    },
    /// A writer thread panicked: a bug, reported as such.
    #[error("{0}")]
    Internal(String),
}

fn context<'a>(
    config: &'a Config,
    calibration: Option<&'a Calibration>,
    inputs: &Inputs<'a>,
) -> Context<'a> {
    Context {
        library: &config.library,
        experiment: &config.rubric.experiment,
        reference: config.reference.clone(),
        tolerances: &config.rubric.tolerances,
        calibration,
        centres: inputs.centres,
        counted: config.rubric.grading.duplicates,
        repeats: inputs.repeats,
        key: inputs.key,
    }
}

/// Loads the calibration, if one is named. A bad file is reported and the batch is graded
/// uncorrected.
fn load_calibration(path: Option<&Path>, problems: &mut Vec<Problem>) -> Option<Calibration> {
    let path = path?;
    match ingest::calibration::load(path).and_then(calibration::from_table) {
        Ok(c) => Some(c),
        Err(errors) => {
            let file = path.display().to_string();
            for message in errors {
                problems.push(Problem {
                    file: file.clone(),
                    sheet: None,
                    message,
                    fatal: true,
                });
            }
            problems.push(Problem {
                file,
                sheet: None,
                message: "calibration not applied: every reading is graded uncorrected".into(),
                fatal: true,
            });
            None
        }
    }
}

/// Calibration entries that no submission used: most often a misspelt apparatus.
fn unused_calibration(
    cal: &Calibration,
    used: &std::collections::BTreeSet<String>,
) -> Vec<Problem> {
    cal.fits
        .iter()
        .filter(|(key, _)| !used.contains(*key))
        .map(|(_, f)| Problem {
            file: cal.source.clone(),
            sheet: None,
            message: format!(
                "row {}: {} \"{}\" appears in no submission; check its spelling",
                f.first_row,
                cal.keyed_by.label(),
                f.name
            ),
            fatal: false,
        })
        .collect()
}

/// What one pass over the inputs reads, and what it already knows.
struct Inputs<'a> {
    files: &'a [PathBuf],
    calibration: Option<&'a Path>,
    /// Section centres from the first pass, for `outlier`.
    centres: Option<&'a Centres>,
    /// The first pass's repeated students, for `duplicates = "last"`.
    repeats: Option<&'a Repeats>,
    /// The first pass's record of what it read, replayed instead of reading `files` again.
    replay: Option<&'a Replay>,
    /// The answer key for unknowns.
    key: Option<&'a crate::assess::unknowns::Key>,
}

impl<'a> Inputs<'a> {
    /// The grading pass: the files, the calibration and the first pass's section centres.
    fn second_pass(
        files: &'a [PathBuf],
        calibration: Option<&'a Path>,
        first: &'a FirstPass,
        key: Option<&'a crate::assess::unknowns::Key>,
    ) -> Inputs<'a> {
        Inputs {
            key,
            files,
            calibration,
            centres: Some(&first.centres),
            repeats: Some(&first.repeats),
            replay: first.replay.as_ref(),
        }
    }
}

/// What the first pass learnt: the section centres, the students' names (kept out of what
/// leaves the course), and its record of the inputs, if kept.
struct FirstPass {
    centres: Centres,
    repeats: Repeats,
    names: std::sync::Arc<BatchNames>,
    replay: Option<Replay>,
}

/// Hands every file's events (or the first pass's record of them) to `tx`, in batch order,
/// until the receiver hangs up.
fn read_all(files: &[PathBuf], replay: Option<&Replay>, tx: &SyncSender<ingest::Event>) {
    if let Some(r) = replay {
        return r.replay(&mut |e| tx.send(e).is_ok());
    }
    for f in files {
        let mut open = true;
        ingest::read_file(f, &mut |e| open &= tx.send(e).is_ok());
        if !open {
            break;
        }
    }
}

/// Reads `files` (or replays the first pass's record of them) on a reader thread and hands each
/// graded row to `on_row`, in batch order; `record` keeps what was read. Stops at the first
/// error `on_row` returns.
fn stream(
    config: &Config,
    inputs: &Inputs,
    mut record: Option<&mut SpillWriter>,
    batch: &mut Batch,
    on_row: &mut dyn FnMut(Graded) -> Result<(), WriteError>,
    progress: &mut dyn FnMut(Progress),
) -> Result<(), RunError> {
    let calibration = load_calibration(inputs.calibration, &mut batch.problems);
    let mut grader = Grader::new(config, calibration.as_ref(), inputs);
    let mut collector = Collector::default();
    let mut failure: Option<WriteError> = None;
    let mut done = Progress {
        files_done: 0,
        files: inputs.files.len(),
        rows: 0,
    };
    std::thread::scope(|scope| {
        let (tx, rx) = sync_channel(0);
        scope.spawn(move || read_all(inputs.files, inputs.replay, &tx));
        for event in &rx {
            let file_done = matches!(event, ingest::Event::FileDone(_));
            if let Some(w) = record.as_deref_mut() {
                w.record(&event);
            }
            collector.handle(event, &config.columns, &mut |sub| {
                if failure.is_none() {
                    let g = grader.grade(sub);
                    done.rows += 1;
                    batch.tally.add(&g.assessed);
                    failure = on_row(g).err();
                }
            });
            done.files_done += usize::from(file_done);
            progress(done);
        }
    });
    if grader.scoring && failure.is_none() {
        failure = no_submissions(&mut grader, on_row).err();
    }
    batch.sheets = collector.sheets;
    batch.problems.extend(collector.problems);
    batch
        .problems
        .extend(unmatched_tables(config, &batch.sheets));
    if let Some(cal) = &calibration {
        let seen = grader.assessor.apparatus_seen();
        batch.problems.extend(unused_calibration(cal, seen));
    }
    batch
        .problems
        .extend(merged_sections(grader.assessor.merged_sections()));
    if let Some(e) = failure {
        return Err(e.into());
    }
    grader.unmatched()
}

/// A note for each section label read as a section spelt otherwise earlier in the batch.
fn merged_sections(merged: &[crate::assess::SectionMerge]) -> Vec<Problem> {
    merged
        .iter()
        .map(|m| Problem {
            file: m.source.clone(),
            sheet: m.sheet.clone(),
            message: format!(
                "row {}: section \"{}\" is graded as section \"{}\" (labels that differ only in case, spacing, punctuation, a prefix such as Sec or Section, or a number's leading zeros name one section); if they are different sections, give them labels that differ in a letter or digit",
                m.row, m.label, m.read_as
            ),
            fatal: false,
        })
        .collect()
}

/// A note for each `[columns."file [sheet]"]` table that matched no sheet read.
fn unmatched_tables(config: &Config, sheets: &[ingest::SheetReport]) -> Vec<Problem> {
    let read = sheets
        .iter()
        .map(|s| (s.source.as_str(), s.sheet.as_deref()));
    config
        .columns
        .unmatched_tables(read)
        .into_iter()
        .map(|table| Problem {
            message: format!(
                "the [columns.\"{table}\"] table matched no file and sheet read; name a file as given (or its name alone), a sheet as \"file [sheet]\""
            ),
            file: table,
            sheet: None,
            fatal: false,
        })
        .collect()
}

/// The first pass: every section's median and MAD of recovery and depression, so that the
/// second pass can flag outliers as it grades. Nothing is kept in memory but two numbers a row;
/// given a folder, what was read is recorded there for the second pass to replay.
fn section_centres(
    config: &Config,
    files: &[PathBuf],
    calibration_file: Option<&Path>,
    spill_dir: Option<&Path>,
    key: Option<&crate::assess::unknowns::Key>,
) -> Result<FirstPass, RunError> {
    let mut centres = Centres::default();
    let mut repeats = Repeats::default();
    let mut names = BatchNames::default();
    let last_counts = config.rubric.grading.duplicates == Counted::Last;
    let mut scratch = Batch::default();
    let mut first_pass = config.clone();
    first_pass.overrides = crate::rubric::overrides::Overrides::default();
    let inputs = Inputs {
        key,
        files,
        calibration: calibration_file,
        centres: None,
        repeats: None,
        replay: None,
    };
    let mut spill = spill_dir.and_then(SpillWriter::create);
    stream(
        &first_pass,
        &inputs,
        spill.as_mut(),
        &mut scratch,
        &mut |g| {
            centres.add(&g.assessed);
            if let Some(name) = g.assessed.submission.student_name.as_deref() {
                names.add(name);
            }
            if last_counts && g.assessed.has(crate::model::Flag::DuplicateStudent) {
                repeats.add_repeat(&g.assessed.submission);
            }
            Ok(())
        },
        &mut |_| {},
    )?;
    centres.settle(config.rubric.tolerances.outlier_min_n);
    // the roster's names are the batch's too, submitted or not
    let enrolled = config
        .roster
        .iter()
        .flat_map(crate::assess::roster::Roster::students);
    for name in enrolled.filter_map(|e| e.name.as_deref()) {
        names.add(name);
    }
    Ok(FirstPass {
        centres,
        repeats,
        names: std::sync::Arc::new(names),
        replay: spill.and_then(SpillWriter::finish),
    })
}

/// A note when the baseline term was graded under another rubric (its score shifts are left out).
fn baseline_note(config: &Config) -> Option<Problem> {
    let b = config.baseline.as_ref()?;
    let sha = crate::export::provenance::sha256_hex(config.rubric_text.as_bytes());
    let why = crate::export::parquet::rubric_mismatch(&b.term, &sha)?;
    Some(Problem {
        file: b.file.display().to_string(),
        sheet: None,
        message: why,
        fatal: false,
    })
}

/// A file found in a folder whose name says it holds the apparatus calibration.
fn is_calibration_file(path: &Path) -> bool {
    path.file_stem()
        .and_then(|s| s.to_str())
        .is_some_and(|s| s.to_lowercase().contains("calibration"))
}

/// The files to grade, and the calibration file to apply: the one named, else one found
/// among the inputs by its name (it is then not graded as submissions). The run's vocabulary
/// is installed first, so that every reader matches headers and cells with it.
fn discover_inputs(config: &Config) -> (Batch, Option<PathBuf>) {
    crate::ingest::vocabulary::install(config.vocabulary.clone());
    let (found, missing) =
        discover::discover(&config.inputs, std::slice::from_ref(&config.out_dir));
    let mut problems: Vec<Problem> = missing
        .into_iter()
        .map(|m| Problem {
            file: m.path.display().to_string(),
            sheet: None,
            message: m.message,
            fatal: m.fatal,
        })
        .collect();
    let named = config
        .calibration
        .as_ref()
        .and_then(|p| p.canonicalize().ok());
    let (calibrations, files): (Vec<PathBuf>, Vec<PathBuf>) = found.into_iter().partition(|f| {
        let is_named = named
            .as_ref()
            .is_some_and(|n| f.canonicalize().is_ok_and(|c| c == *n));
        is_named || is_calibration_file(f)
    });
    let calibration = config
        .calibration
        .clone()
        .or_else(|| calibrations.first().cloned());
    for extra in calibrations
        .iter()
        .filter(|c| Some(*c) != calibration.as_ref())
    {
        problems.push(Problem {
            file: extra.display().to_string(),
            sheet: None,
            message:
                "not used: another calibration file applies; name the one to use with --calibration"
                    .into(),
            fatal: false,
        });
    }
    let files = key::set_aside_named(config, files, &mut problems);
    (
        Batch {
            files,
            problems,
            ..Batch::default()
        },
        calibration,
    )
}

/// Reads, assesses and grades, writing nothing; every row is kept in `Batch::rows`.
pub fn assess_batch(config: &Config) -> Result<Batch, RunError> {
    let (mut batch, calibration) = discover_inputs(config);
    batch
        .problems
        .extend(config.roster_problems.iter().cloned());
    let answer_key = key::take_keys(config, &mut batch);
    let files = std::mem::take(&mut batch.files);
    let first = section_centres(
        config,
        &files,
        calibration.as_deref(),
        None,
        answer_key.as_ref(),
    )?;
    let inputs = Inputs::second_pass(&files, calibration.as_deref(), &first, answer_key.as_ref());
    let mut rows = Vec::new();
    stream(
        config,
        &inputs,
        None,
        &mut batch,
        &mut |g| {
            rows.push(g);
            Ok(())
        },
        &mut |_| {},
    )?;
    batch.rows = rows;
    batch.files = files;
    Ok(batch)
}

/// The files a grading run writes into the output folder.
pub fn output_paths(out_dir: &Path) -> [PathBuf; 3] {
    [
        out_dir.join("results.csv"),
        out_dir.join("results.json"),
        out_dir.join("gradebook.csv"),
    ]
}

/// How far a run has come, for a progress display.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub struct Progress {
    pub files_done: usize,
    pub files: usize,
    pub rows: usize,
}

/// Grades the batch and writes every output into the output folder.
pub fn grade(config: &Config) -> Result<Batch, RunError> {
    grade_with_progress(config, &mut |_| {})
}

/// Refuses a batch with nothing to grade, before anything is written.
fn refuse_nothing(batch: &Batch, config: &Config) -> Result<(), RunError> {
    if !batch.files.is_empty() {
        return Ok(());
    }
    let inputs: Vec<String> = config
        .inputs
        .iter()
        .map(|p| p.display().to_string())
        .collect();
    Err(RunError::Nothing {
        message: format!(
            "nothing to grade in {} (no spreadsheet found, or only the output folder); the outputs in {} are unchanged",
            inputs.join(", "),
            config.out_dir.display()
        ),
        problems: batch.problems.clone(),
    })
}

/// What the run graded with and read: the rubric, the calibration, every input.
///
/// The files that changed grades without being class data (the compound library, the column
/// mapping, the overrides) are named apart from the inputs, each with its SHA-256.
fn provenance(config: &Config, files: &[PathBuf], calibration: Option<&Path>) -> Provenance {
    let mut read: Vec<&Path> = files.iter().map(PathBuf::as_path).collect();
    read.extend(calibration);
    let settings: Vec<(&str, &Path)> = [
        ("compound library", config.compounds_file.as_deref()),
        ("column mapping", config.columns_file.as_deref()),
        ("overrides", config.overrides_file.as_deref()),
        ("corrections", config.corrections_file.as_deref()),
        ("roster", config.roster_file.as_deref()),
    ]
    .into_iter()
    .filter_map(|(role, p)| Some((role, p?)))
    .collect();
    let used = crate::export::provenance::Used {
        rubric: &config.rubric_source,
        rubric_text: &config.rubric_text,
        experiment: &config.rubric.experiment.name,
        title: &config.title,
        calibration,
        settings,
    };
    Provenance::new(config.timestamp, &used, &read)
}

/// Refuses a batch in which no student row could be read.
fn refuse_no_rows(batch: Batch, config: &Config) -> Result<Batch, RunError> {
    if batch.tally.rows > 0 {
        return Ok(batch);
    }
    Err(RunError::Nothing {
        message: format!(
            "no student rows could be read from the inputs; the outputs in {} are unchanged",
            config.out_dir.display()
        ),
        problems: batch.problems,
    })
}

/// `grade`, telling `progress` after each sheet and file.
pub fn grade_with_progress(
    config: &Config,
    progress: &mut dyn FnMut(Progress),
) -> Result<Batch, RunError> {
    let (mut batch, calibration) = discover_inputs(config);
    let answer_key = key::take_keys(config, &mut batch);
    refuse_nothing(&batch, config)?;
    batch
        .problems
        .extend(config.roster_problems.iter().cloned());
    batch.problems.extend(baseline_note(config));
    let paths = output_paths(&config.out_dir);
    refuse_overwriting_inputs(&paths, &batch.files)?;
    let _lock = open_output_folder(config, &batch.files, &mut batch.problems)?;
    let stage = Stage::new();
    let files = std::mem::take(&mut batch.files);
    let first = section_centres(
        config,
        &files,
        calibration.as_deref(),
        Some(&config.out_dir),
        answer_key.as_ref(),
    )?;
    let mut threads = Writers::spawn(config, &paths, &stage, &first.names)?;
    let mut tallies = Tallies::new(config, &stage, &first.names)?;
    let inputs = Inputs::second_pass(&files, calibration.as_deref(), &first, answer_key.as_ref());
    let mut fan = Fanout::new(threads.targets());
    stream(
        config,
        &inputs,
        None,
        &mut batch,
        &mut |g| {
            tallies.add(&g)?;
            fan.row(g);
            Ok(())
        },
        progress,
    )?;
    fan.flush();
    drop(fan);
    drop(first);
    batch.files = files;
    let provenance = provenance(config, &batch.files, calibration.as_deref());
    if let Some(plan) = &tallies.plan {
        refuse_overwriting_inputs(plan.paths(), &batch.files)?;
    }
    let mut batch = refuse_no_rows(batch, config)?;
    batch.problems.extend(tallies.handout_note(config));
    let stats = std::sync::Arc::new(std::mem::take(&mut tallies.stats));
    threads.start_finish(&provenance, &stats, &batch.problems);
    tallies.write_summaries(config, &stats, &provenance, &stage)?;
    threads.wait()?;
    let notes = stage.publish(&config.out_dir, &batch.files)?;
    batch
        .problems
        .extend(notes.into_iter().map(|n| folder_note(&config.out_dir, n)));
    Ok(batch)
}
