//! The output folder: its lock, the refusal to write over an input, the completion of a
//! publication a killed run left half done, and `benchgrade template`, which writes into a
//! folder as a grading run does.

use std::path::{Path, PathBuf};

use super::RunError;
use crate::config::Config;
use crate::error::ConfigError;
use crate::export::atomic::Stage;
use crate::files::FolderLock;
use crate::ingest::Problem;

/// How long a run waits for another run writing into the same folder before it gives up
/// (`BENCHGRADE_LOCK_WAIT`, in seconds, changes it).
pub const LOCK_WAIT: std::time::Duration = std::time::Duration::from_secs(5);

/// The wait `BENCHGRADE_LOCK_WAIT` asks for: seconds, at most a day (a larger number is taken
/// as a day); anything that is not a number of seconds gives the default.
pub(super) fn lock_wait() -> std::time::Duration {
    std::env::var("BENCHGRADE_LOCK_WAIT")
        .ok()
        .and_then(|s| s.trim().parse::<f64>().ok())
        .filter(|s| s.is_finite() && *s >= 0.0)
        .map_or(LOCK_WAIT, |s| {
            std::time::Duration::from_secs_f64(s.min(86_400.0))
        })
}

pub(super) fn refuse_overwriting_inputs(
    outputs: &[PathBuf],
    inputs: &[PathBuf],
) -> Result<(), ConfigError> {
    match crate::export::atomic::overwritten_input(outputs, inputs) {
        Some(p) => Err(overwrite_refusal(&p)),
        None => Ok(()),
    }
}

pub(super) fn overwrite_refusal(output: &Path) -> ConfigError {
    ConfigError::Invalid(format!(
        "refusing to write {}: it is one of the inputs; choose another --out folder",
        output.display()
    ))
}

/// Creates the output folder and takes its lock; refuses a `handouts` there that is a link (or
/// not a folder) and a state file that is not a regular file, before anything is removed;
/// completes a publication a killed run left half done and sweeps dead runs' temporary files.
/// Notes on outputs the completion set aside go to `problems`.
pub(super) fn open_output_folder(
    config: &Config,
    inputs: &[PathBuf],
    problems: &mut Vec<Problem>,
) -> Result<FolderLock, RunError> {
    use crate::export::journal;
    let dir = &config.out_dir;
    let invalid = |what: &str, e: std::io::Error| {
        ConfigError::Invalid(format!("{what} the output folder {}: {e}", dir.display()))
    };
    std::fs::create_dir_all(dir).map_err(|e| invalid("cannot create", e))?;
    let lock = FolderLock::take(dir, lock_wait())
        .map_err(|e| invalid("cannot lock", e))?
        .ok_or_else(|| {
            ConfigError::Invalid(format!(
                "another benchgrade run is writing into {}; wait for it to finish, or choose another --out folder",
                dir.display()
            ))
        })?;
    let d = crate::files::dir::Dir::open(dir).map_err(|e| invalid("cannot open", e))?;
    let unchanged = |e: std::io::Error| {
        ConfigError::Invalid(format!("{e}; nothing in {} was changed", dir.display()))
    };
    journal::handouts_kind(&d).map_err(unchanged)?;
    journal::read_manifest(&d).map_err(unchanged)?;
    let notes = journal::recover(&d, &journal::identities(inputs))
        .map_err(|e| invalid("cannot finish the last run's outputs in", e))?;
    problems.extend(notes.into_iter().flatten().map(|n| folder_note(dir, n)));
    crate::files::sweep_in(&d);
    if let Ok(h) = d.sub(crate::export::handouts::FOLDER) {
        crate::files::sweep_in(&h);
    }
    Ok(lock)
}

/// A note about the output folder (an output set aside), for standard error.
pub(super) fn folder_note(dir: &Path, message: String) -> Problem {
    Problem {
        file: dir.display().to_string(),
        sheet: None,
        message,
        fatal: false,
    }
}

/// `benchgrade template`: the entry workbooks of the configured roster, written into the
/// output folder under its lock, published together; the paths written, and notes on outputs
/// of an earlier run that were set aside.
pub fn write_templates(
    config: &Config,
    one_workbook: bool,
) -> Result<(Vec<PathBuf>, Vec<Problem>), RunError> {
    let Some(roster) = &config.roster else {
        return Err(ConfigError::Invalid("template needs --roster FILE".into()).into());
    };
    let inputs: Vec<PathBuf> = config
        .roster_file
        .iter()
        .chain(&config.key_file)
        .cloned()
        .collect();
    let key = template_key(config)?;
    let planned: Vec<PathBuf> = vec![config.out_dir.join("entry-sheets.xlsx")];
    refuse_overwriting_inputs(&planned, &inputs)?;
    // the roster's notes (a row without an id, an id listed twice): rows the sheets leave out
    let mut notes = config.roster_problems.clone();
    let _lock = open_output_folder(config, &inputs, &mut notes)?;
    let stage = Stage::new();
    let o = crate::export::template::TemplateOptions {
        roster: roster.students(),
        rubric: &config.rubric,
        title: &config.title,
        out_dir: &config.out_dir,
        one_workbook,
        timestamp: config.timestamp,
        key: key.as_ref(),
    };
    let written = crate::export::template::write(&o, &stage)?;
    refuse_overwriting_inputs(&written, &inputs)?;
    let set_aside = stage.publish(&config.out_dir, &inputs)?;
    notes.extend(
        set_aside
            .into_iter()
            .map(|n| folder_note(&config.out_dir, n)),
    );
    Ok((written, notes))
}

/// The answer key of the entry workbooks' drop-down lists: the rubric's `[key]`, with `--key
/// FILE` (read by the key reader a grading run uses) over it. A key file named on the command
/// line that cannot be read stops `template`, as nothing would otherwise say it was not used.
fn template_key(config: &Config) -> Result<Option<crate::assess::unknowns::Key>, ConfigError> {
    let mut key = config.key.clone();
    if let Some(path) = &config.key_file {
        let pairs = crate::ingest::key::load(path).map_err(ConfigError::Invalid)?;
        let found = crate::assess::unknowns::Key::from_pairs(
            pairs.iter().map(|(a, b)| (a.as_str(), b.as_str())),
            &path.display().to_string(),
        );
        key = Some(key.unwrap_or_default().merged(found));
    }
    Ok(key.filter(|k| !k.is_empty()))
}
