//! The answer key a run uses: the rubric's `[key]` table, a `--key FILE`, and any key file
//! found among the inputs (by its name, or a small file holding only a code and a compound
//! column), which is then used as a key and not graded as a class; likewise the roster,
//! corrections and overrides files the command line names, when they lie among the inputs.

use std::path::PathBuf;

use super::Batch;
use crate::assess::unknowns::Key;
use crate::config::Config;
use crate::ingest::{self, Problem};

/// Files smaller than this among the inputs are looked into for a key's two columns.
const SMALL_FILE: u64 = 64 * 1024;

fn is_key(path: &std::path::Path) -> bool {
    if ingest::key::is_key_file(path) {
        return true;
    }
    let small = std::fs::metadata(path).is_ok_and(|m| m.len() <= SMALL_FILE);
    small && key_sheet(path)
}

/// Whether a small file's first sheet is a key and nothing else.
fn key_sheet(path: &std::path::Path) -> bool {
    let ext = path
        .extension()
        .and_then(|e| e.to_str())
        .unwrap_or("")
        .to_ascii_lowercase();
    if let Some(format) = ingest::workbook::Format::from_extension(&ext) {
        let mut sheets = Vec::new();
        if ingest::workbook::read_workbook(path, format, &mut |s| sheets.push(s)).is_err() {
            return false;
        }
        return sheets.len() == 1
            && sheets
                .into_iter()
                .next()
                .and_then(|s| s.result.ok())
                .is_some_and(|s| ingest::key::looks_like_a_key(&s));
    }
    crate::files::read(path)
        .ok()
        .and_then(|b| ingest::delimited::read_delimited(&b, ext == "tsv").ok())
        .is_some_and(|d| ingest::key::looks_like_a_key(&d.sheet))
}

/// Takes the key files out of the batch's files and reads every key: the rubric's, then the
/// files found, then `--key` over them. A key file that cannot be read is a problem, never the
/// end of the run.
pub fn take_keys(config: &Config, batch: &mut Batch) -> Option<Key> {
    let (keys, files): (Vec<PathBuf>, Vec<PathBuf>) = std::mem::take(&mut batch.files)
        .into_iter()
        .partition(|f| is_key(f));
    batch.files = files;
    let mut key = config.key.clone();
    let named = config.key_file.iter().cloned();
    for path in keys.into_iter().chain(named) {
        match ingest::key::load(&path) {
            Ok(pairs) => {
                let source = path.display().to_string();
                let found =
                    Key::from_pairs(pairs.iter().map(|(a, b)| (a.as_str(), b.as_str())), &source);
                batch.problems.push(Problem {
                    file: source,
                    sheet: None,
                    message: format!(
                        "read as an answer key for unknowns ({} code{}), not graded",
                        pairs.len(),
                        if pairs.len() == 1 { "" } else { "s" }
                    ),
                    fatal: false,
                });
                key = Some(key.unwrap_or_default().merged(found));
            }
            Err(message) => batch.problems.push(Problem {
                file: path.display().to_string(),
                sheet: None,
                message,
                fatal: true,
            }),
        }
    }
    key.filter(|k| !k.is_empty())
}

/// The inputs without the roster, corrections and overrides files the command line names
/// (kept in the class folder, they were read as class sheets that hold no table: an error and
/// exit code 1), each with a note.
pub(super) fn set_aside_named(
    config: &Config,
    files: Vec<PathBuf>,
    problems: &mut Vec<Problem>,
) -> Vec<PathBuf> {
    let named: Vec<(PathBuf, &str)> = [
        (&config.roster_file, "the roster (--roster)"),
        (&config.corrections_file, "the corrections (--corrections)"),
        (&config.overrides_file, "the overrides (--overrides)"),
    ]
    .into_iter()
    .filter_map(|(p, what)| Some((p.as_ref()?.canonicalize().ok()?, what)))
    .collect();
    if named.is_empty() {
        return files;
    }
    files
        .into_iter()
        .filter(|f| {
            let Some((_, what)) = f
                .canonicalize()
                .ok()
                .and_then(|c| named.iter().find(|(n, _)| *n == c))
            else {
                return true;
            };
            problems.push(Problem {
                file: f.display().to_string(),
                sheet: None,
                message: format!("read as {what}, not graded"),
                fatal: false,
            });
            false
        })
        .collect()
}
