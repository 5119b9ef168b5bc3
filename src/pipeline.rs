//! The batch, start to finish: ingest every input, assess every row, write the outputs.
//! The binary calls these; each returns values and leaves printing and exit codes to it.

use std::path::{Path, PathBuf};

use crate::assess::{self, Assessed, Context};
use crate::config::Config;
use crate::error::{ConfigError, WriteError};
use crate::export;
use crate::ingest::{self, Problem, SheetReport};

/// What a run read and found.
#[derive(Debug)]
pub struct Batch {
    pub files: Vec<PathBuf>,
    pub rows: Vec<Assessed>,
    pub sheets: Vec<SheetReport>,
    pub problems: Vec<Problem>,
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

/// Reads and assesses, writing nothing.
pub fn assess_batch(config: &Config) -> Batch {
    let ingested = ingest::ingest(
        &config.inputs,
        std::slice::from_ref(&config.out_dir),
        &config.columns,
    );
    let ctx = Context {
        library: &config.library,
        default_compound: config.rubric.experiment.compound.as_deref(),
        accepted_mp_c: config.accepted_mp_c,
        tolerances: &config.rubric.tolerances,
    };
    let rows = assess::assess_all(ingested.submissions, &ctx);
    Batch {
        files: ingested.files,
        rows,
        sheets: ingested.sheets,
        problems: ingested.problems,
    }
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
    let batch = assess_batch(config);
    let outputs = output_paths(&config.out_dir);
    refuse_overwriting_inputs(&outputs, &batch.files)?;
    std::fs::create_dir_all(&config.out_dir).map_err(|e| {
        ConfigError::Invalid(format!(
            "cannot create the output folder {}: {e}",
            config.out_dir.display()
        ))
    })?;
    export::results_csv::write(&outputs[0], &batch.rows)?;
    export::results_json::write(&outputs[1], &batch.rows, &batch.problems)?;
    Ok(batch)
}
