//! The batch, start to finish. A reader thread opens the files and parses their sheets while
//! this thread tabulates, assesses and writes the previous sheet, so reading and grading overlap
//! and only a sheet or two is held in memory. Outputs are written as rows stream past, to
//! temporary files renamed into place at the end.

use std::path::{Path, PathBuf};
use std::sync::mpsc::sync_channel;

use crate::assess::{Assessed, Assessor, Context};
use crate::config::Config;
use crate::error::{ConfigError, WriteError};
use crate::export::{results_csv::ResultsCsv, results_json::ResultsJson};
use crate::ingest::{self, discover, Collector, Problem, SheetReport};

/// Counts over the batch's rows.
#[derive(Clone, Copy, Debug, Default, PartialEq, Eq)]
pub struct Tally {
    pub rows: usize,
    pub impossible: usize,
    pub suspicious: usize,
}

impl Tally {
    fn add(&mut self, a: &Assessed) {
        self.rows += 1;
        if a.is_impossible() {
            self.impossible += 1;
        } else if !a.flags.is_empty() {
            self.suspicious += 1;
        }
    }
}

/// What a run read and found.
#[derive(Debug, Default)]
pub struct Batch {
    pub files: Vec<PathBuf>,
    pub sheets: Vec<SheetReport>,
    pub problems: Vec<Problem>,
    pub tally: Tally,
    /// Every assessed row, kept only by `assess_batch` (grading streams them to disk).
    pub rows: Vec<Assessed>,
}

impl Batch {
    /// Some input could not be read (exit code 1).
    pub fn incomplete(&self) -> bool {
        self.problems.iter().any(|p| p.fatal)
    }
}

/// Why a grading run stopped.
#[derive(Debug, thiserror::Error)]
pub enum RunError {
    #[error(transparent)]
    Config(#[from] ConfigError),
    #[error(transparent)]
    Write(#[from] WriteError),
}

fn context(config: &Config) -> Context<'_> {
    Context {
        library: &config.library,
        default_compound: config.rubric.experiment.compound.as_deref(),
        accepted_mp_c: config.accepted_mp_c,
        tolerances: &config.rubric.tolerances,
    }
}

/// Reads `files` on a reader thread and hands each assessed row to `on_row`, in batch order.
/// Stops at the first error `on_row` returns.
fn stream(
    config: &Config,
    files: &[PathBuf],
    batch: &mut Batch,
    on_row: &mut dyn FnMut(&Assessed) -> Result<(), WriteError>,
    keep_rows: bool,
) -> Result<(), WriteError> {
    let mut assessor = Assessor::new(context(config));
    let mut collector = Collector::default();
    let mut failure: Option<WriteError> = None;
    std::thread::scope(|scope| {
        let (tx, rx) = sync_channel(0);
        scope.spawn(move || {
            for f in files {
                let mut open = true;
                ingest::read_file(f, &mut |e| open &= tx.send(e).is_ok());
                if !open {
                    break;
                }
            }
        });
        let mut handle_row = |sub| {
            if failure.is_some() {
                return;
            }
            let a = assessor.assess(sub);
            batch.tally.add(&a);
            match on_row(&a) {
                Ok(()) if keep_rows => batch.rows.push(a),
                Ok(()) => {}
                Err(e) => failure = Some(e),
            }
        };
        for event in rx.iter() {
            collector.handle(event, &config.columns, &mut handle_row);
        }
    });
    batch.sheets = collector.sheets;
    batch.problems.extend(collector.problems);
    failure.map_or(Ok(()), Err)
}

fn discover_inputs(config: &Config) -> Batch {
    let (files, missing) =
        discover::discover(&config.inputs, std::slice::from_ref(&config.out_dir));
    let problems = missing
        .into_iter()
        .map(|m| Problem {
            file: m.path.display().to_string(),
            sheet: None,
            message: m.message,
            fatal: true,
        })
        .collect();
    Batch {
        files,
        problems,
        ..Batch::default()
    }
}

/// Reads and assesses, writing nothing; every row is kept in `Batch::rows`.
pub fn assess_batch(config: &Config) -> Batch {
    let mut batch = discover_inputs(config);
    let files = std::mem::take(&mut batch.files);
    // on_row never fails here, so neither does stream
    let _ = stream(config, &files, &mut batch, &mut |_| Ok(()), true);
    batch.files = files;
    batch
}

/// The files a grading run writes into the output folder.
pub fn output_paths(out_dir: &Path) -> [PathBuf; 2] {
    [out_dir.join("results.csv"), out_dir.join("results.json")]
}

fn refuse_overwriting_inputs(outputs: &[PathBuf], inputs: &[PathBuf]) -> Result<(), ConfigError> {
    for o in outputs {
        let Ok(target) = o.canonicalize() else {
            continue;
        };
        if inputs
            .iter()
            .any(|i| i.canonicalize().is_ok_and(|c| c == target))
        {
            return Err(ConfigError::Invalid(format!(
                "refusing to write {}: it is one of the inputs; choose another --out folder",
                o.display()
            )));
        }
    }
    Ok(())
}

/// Grades the batch and writes results.csv and results.json into the output folder.
pub fn grade(config: &Config) -> Result<Batch, RunError> {
    let mut batch = discover_inputs(config);
    let outputs = output_paths(&config.out_dir);
    refuse_overwriting_inputs(&outputs, &batch.files)?;
    std::fs::create_dir_all(&config.out_dir).map_err(|e| {
        ConfigError::Invalid(format!(
            "cannot create the output folder {}: {e}",
            config.out_dir.display()
        ))
    })?;
    let mut csv = ResultsCsv::create(&outputs[0])?;
    let mut json = ResultsJson::create(&outputs[1])?;
    let files = std::mem::take(&mut batch.files);
    stream(
        config,
        &files,
        &mut batch,
        &mut |a| {
            csv.row(a)?;
            json.row(a)
        },
        false,
    )?;
    batch.files = files;
    csv.finish()?;
    json.finish(&batch.problems)?;
    Ok(batch)
}
