//! From what the user typed to what a run uses: the rubric opened and checked, the column
//! mapping and compound files read, the paths resolved. Fails before anything is written.

use std::collections::BTreeMap;
use std::path::{Path, PathBuf};

use serde::Deserialize;

use crate::assess::{accepted, ReferenceRule};
use crate::error::{parse_toml, ConfigError, Located};
use crate::export::parquet::Term;
use crate::export::pseudonym::Pseudonymizer;
use crate::ingest::headers::{ColumnOverrides, MappingValue};
use crate::ingest::vocabulary::{Table as VocabularyTable, Vocabulary};
use crate::reference::Library;
use crate::rubric::overrides::Overrides;
use crate::rubric::Rubric;
use std::sync::Arc;

/// Options as typed, already checked for form by the command-line parser.
#[derive(Clone, Debug, Default)]
pub struct Options {
    pub inputs: Vec<PathBuf>,
    /// Used when `inputs` is empty.
    pub sample_data: Option<PathBuf>,
    pub out: Option<PathBuf>,
    pub rubric: Option<PathBuf>,
    pub columns: Option<PathBuf>,
    /// Words added to the built-in vocabulary.
    pub vocabulary: Option<PathBuf>,
    pub compounds: Option<PathBuf>,
    /// The enrolled students: `--roster FILE`.
    pub roster: Option<PathBuf>,
    /// Graders' corrections of typed values: `--corrections FILE`.
    pub corrections: Option<PathBuf>,
    pub reference_mp_c: Option<f64>,
    pub calibration: Option<PathBuf>,
    pub overrides: Option<PathBuf>,
    /// One graded workbook per section instead of per input file.
    pub split_sections: bool,
    /// No graded workbooks.
    pub skip_workbooks: bool,
    /// No handouts.
    pub skip_handouts: bool,
    /// Also write a pseudonymised results file with this key.
    pub pseudonym_key: Option<Vec<u8>>,
    /// An earlier term's output folder, to compare this term with.
    pub baseline: Option<PathBuf>,
    /// Time of grading, seconds since the epoch (from --timestamp or SOURCE_DATE_EPOCH).
    pub timestamp: Option<i64>,
    /// The title of the reports; default: the rubric's course, term and experiment name.
    pub title: Option<String>,
    /// An answer key for unknowns (CSV or spreadsheet: code and compound columns).
    pub key: Option<PathBuf>,
}

/// Everything a run needs, validated.
#[derive(Clone, Debug)]
pub struct Config {
    pub inputs: Vec<PathBuf>,
    pub out_dir: PathBuf,
    pub rubric: Rubric,
    /// Where the rubric came from, for messages and provenance.
    pub rubric_source: String,
    pub columns: ColumnOverrides,
    /// The words headers, units, statuses and summary rows are read by: the built-in
    /// vocabulary with the rubric's and a `--vocabulary` file's additions.
    pub vocabulary: Arc<Vocabulary>,
    pub library: Library,
    /// How the experiment compound's reference is chosen.
    pub reference: ReferenceRule,
    /// The calibration file to apply, if any (command line, else the rubric's).
    pub calibration: Option<PathBuf>,
    /// Grader overrides, applied after scoring.
    pub overrides: Overrides,
    /// The overrides file, for provenance.
    pub overrides_file: Option<PathBuf>,
    /// The `--columns` mapping file, for provenance.
    pub columns_file: Option<PathBuf>,
    /// Graders' corrections of typed values, applied before anything is judged.
    pub corrections: crate::rubric::corrections::Corrections,
    pub corrections_file: Option<PathBuf>,
    /// The enrolled students (`--roster`), and the roster file's non-fatal problems.
    pub roster: Option<crate::assess::roster::Roster>,
    pub roster_file: Option<PathBuf>,
    pub roster_problems: Vec<crate::ingest::Problem>,
    /// How the roster's sheets were read, for `check`.
    pub roster_sheets: Vec<crate::ingest::SheetReport>,
    /// The `--compounds` library file, for provenance.
    pub compounds_file: Option<PathBuf>,
    /// The rubric's text, for its SHA-256 in the provenance.
    pub rubric_text: String,
    pub split_sections: bool,
    pub skip_workbooks: bool,
    pub skip_handouts: bool,
    /// Writes DIR/results-pseudonymized.csv when set (and pseudonymises results.parquet).
    pub pseudonyms: Option<Pseudonymizer>,
    /// The earlier term's results.parquet.
    pub baseline: Option<Baseline>,
    /// Seconds since the epoch: fixed, or the time the run started.
    pub timestamp: i64,
    /// The reports' title: `--title`, else the rubric's course, term and experiment name.
    pub title: String,
    /// The rubric's `[key]` table, if any.
    pub key: Option<crate::assess::unknowns::Key>,
    /// `--key FILE`: read with the inputs (a file that cannot be read is a problem of the run).
    pub key_file: Option<PathBuf>,
}

/// An earlier term's results.parquet and its headline figures.
#[derive(Clone, Debug)]
pub struct Baseline {
    pub file: PathBuf,
    pub term: Term,
}

#[derive(Deserialize)]
#[serde(deny_unknown_fields)]
struct ColumnsFile {
    columns: BTreeMap<String, MappingValue>,
}

fn read_columns_file(path: &Path) -> Result<ColumnOverrides, ConfigError> {
    let file = path.display().to_string();
    let text = crate::files::read_to_string(path)
        .map_err(|e| ConfigError::Invalid(format!("cannot read columns file {file}: {e}")))?;
    let parsed: ColumnsFile = parse_toml(&text, &file)?;
    ColumnOverrides::from_table(&parsed.columns)
        .map_err(|m| ConfigError::Invalid(format!("{file}: {m}")))
}

impl Config {
    pub fn build(opts: Options) -> Result<Config, ConfigError> {
        let (rubric, rubric_source, rubric_text) = load_rubric(opts.rubric.as_deref())?;
        let columns = column_map(&rubric, &rubric_source, opts.columns.as_deref())?;
        let vocabulary = vocabulary(
            &rubric,
            &rubric_source,
            &rubric_text,
            opts.vocabulary.as_deref(),
        )?;
        let library = library(opts.compounds.as_deref())?;
        let reference = reference_rule(&rubric, &rubric_source, &library, opts.reference_mp_c)?;
        let (roster, roster_problems, roster_sheets) =
            read_roster(opts.roster.as_deref(), &columns)?;
        let out_dir = opts.out.clone().unwrap_or_else(|| PathBuf::from("graded"));
        if out_dir.is_file() {
            return Err(ConfigError::Invalid(format!(
                "--out {} is a file; name a folder for the outputs",
                out_dir.display()
            )));
        }
        Ok(Config {
            inputs: inputs(&opts)?,
            out_dir,
            overrides_file: opts.overrides.clone(),
            columns_file: opts.columns.clone(),
            roster,
            roster_file: opts.roster.clone(),
            corrections: corrections(opts.corrections.as_deref())?,
            corrections_file: opts.corrections.clone(),
            roster_problems,
            roster_sheets,
            compounds_file: opts.compounds.clone(),
            rubric_text,
            split_sections: opts.split_sections,
            skip_workbooks: opts.skip_workbooks,
            skip_handouts: opts.skip_handouts,
            baseline: baseline_file(opts.baseline.as_deref())?,
            pseudonyms: match &opts.pseudonym_key {
                Some(k) => Some(Pseudonymizer::new(k).map_err(ConfigError::Invalid)?),
                None => None,
            },
            timestamp: timestamp(opts.timestamp)?,
            overrides: match &opts.overrides {
                Some(p) => Overrides::load(p, &rubric.override_limits())?,
                None => Overrides::default(),
            },
            reference,
            calibration: calibration_file(&opts, &rubric),
            title: title(opts.title.as_deref(), &rubric),
            key: rubric_key(&rubric, &rubric_source),
            key_file: opts.key.clone(),
            rubric,
            rubric_source,
            columns,
            vocabulary,
            library,
        })
    }
}

/// The `--corrections` file: every line checked, a status among them by the words that excuse
/// (or "graded", which undoes an excuse the notes gave).
pub fn corrections(
    path: Option<&Path>,
) -> Result<crate::rubric::corrections::Corrections, ConfigError> {
    let c = crate::rubric::corrections::Corrections::load_opt(path)?;
    let wrong: Vec<String> = c
        .statuses()
        .filter(|(_, v)| !status_read(v))
        .map(|(line, v)| {
            format!(
                "{}:{line}: status \"{v}\" is neither graded nor a word that excuses (W, withdrawn, excused, absent, exempt, ...)",
                c.source
            )
        })
        .collect();
    if wrong.is_empty() {
        Ok(c)
    } else {
        Err(ConfigError::Invalid(wrong.join("\n")))
    }
}

/// Whether a status a correction sets is one the readers know: `graded`, or a word that
/// excuses (W, withdrawn, excused, absent, exempt, ...).
pub fn status_read(v: &str) -> bool {
    let sub = crate::ingest::Submission {
        status: Some(v.to_string()),
        ..crate::ingest::Submission::default()
    };
    v.trim().eq_ignore_ascii_case("graded") || crate::assess::excused::reason(&sub).is_some()
}

/// The built-in reference library, with a `--compounds` file's over it.
fn library(compounds: Option<&Path>) -> Result<Library, ConfigError> {
    let mut library = Library::builtin()?;
    if let Some(p) = compounds {
        library.extend_from_file(p)?;
    }
    Ok(library)
}

/// The rubric's `[key]` table of unknown codes and compounds.
fn rubric_key(rubric: &Rubric, source: &str) -> Option<crate::assess::unknowns::Key> {
    (!rubric.key.is_empty()).then(|| {
        crate::assess::unknowns::Key::from_pairs(
            rubric.key.iter().map(|(a, b)| (a.as_str(), b.as_str())),
            &format!("{source} [key]"),
        )
    })
}

/// Reads `--roster FILE` as a class sheet is read; a roster that cannot be read, or lists no
/// student id, stops the run before anything is written.
/// (the roster, its notes, how its sheets were read); nothing without `--roster`.
type RosterParts = (
    Option<crate::assess::roster::Roster>,
    Vec<crate::ingest::Problem>,
    Vec<crate::ingest::SheetReport>,
);

fn read_roster(path: Option<&Path>, columns: &ColumnOverrides) -> Result<RosterParts, ConfigError> {
    let Some(path) = path else {
        return Ok((None, Vec::new(), Vec::new()));
    };
    let mut read = crate::ingest::roster::read(path, columns);
    let fatal: Vec<String> = read
        .problems
        .iter()
        .filter(|p| p.fatal)
        .map(|p| p.message.clone())
        .collect();
    if !fatal.is_empty() || read.students.is_empty() {
        let why = if fatal.is_empty() {
            let mut why = "no table with a student id column beside at least two other fields (a name or name parts, a section, an assistant)".to_string();
            why.push_str(&id_columns_unused(&read.sheets));
            why
        } else {
            fatal.join("; ")
        };
        return Err(ConfigError::Invalid(format!(
            "--roster {}: {why}",
            path.display()
        )));
    }
    let students = std::mem::take(&mut read.students);
    let roster = crate::assess::roster::Roster::new(students, &path.display().to_string());
    Ok((Some(roster), read.problems, read.sheets))
}

/// Why a roster's id columns were not used, where a sheet says (several columns that look
/// like the id: a learning-management system's export has an internal id beside the
/// registrar's), with the line to paste; empty otherwise.
fn id_columns_unused(sheets: &[crate::ingest::SheetReport]) -> String {
    sheets
        .iter()
        .flat_map(|s| &s.layout.columns)
        .filter_map(|c| c.note.as_deref())
        .find(|n| n.contains("look like the student id"))
        .map(|n| format!("; {}", n.trim_start_matches("not used: ")))
        .unwrap_or_default()
}

/// `--title`, else the rubric's course, term and experiment name, joined by dashes.
fn title(given: Option<&str>, rubric: &Rubric) -> String {
    if let Some(t) = given.map(str::trim).filter(|t| !t.is_empty()) {
        return t.to_string();
    }
    let e = &rubric.experiment;
    [
        e.course.as_deref(),
        e.term.as_deref(),
        Some(e.name.as_str()),
    ]
    .into_iter()
    .flatten()
    .map(str::trim)
    .filter(|p| !p.is_empty())
    .collect::<Vec<_>>()
    .join(" — ")
}

/// The rubric named, else the built-in one: parsed, where it came from, and its text.
fn load_rubric(path: Option<&Path>) -> Result<(Rubric, String, String), ConfigError> {
    let Some(p) = path else {
        let source = "built-in rubrics/default.toml".to_string();
        return Ok((
            Rubric::builtin()?,
            source,
            crate::rubric::DEFAULT_RUBRIC.to_string(),
        ));
    };
    let text = crate::files::read_to_string(p)
        .map_err(|e| ConfigError::Invalid(format!("cannot read rubric {}: {e}", p.display())))?;
    let source = p.display().to_string();
    Ok((Rubric::parse(&text, &source)?, source, text))
}

/// The built-in vocabulary with the rubric's `[vocabulary]` words and a `--vocabulary` file's
/// added; a class that does not exist is an error located in its file.
fn vocabulary(
    rubric: &Rubric,
    rubric_source: &str,
    rubric_text: &str,
    file: Option<&Path>,
) -> Result<Arc<Vocabulary>, ConfigError> {
    let located = |file: &str, text: &str, errors: Vec<(std::ops::Range<usize>, String)>| {
        let errors = errors
            .into_iter()
            .map(|(span, message)| {
                let (line, column) = crate::error::toml_location(text, Some(span.clone()));
                let snippet = text.get(span).unwrap_or("").lines().next().unwrap_or("");
                Located {
                    line,
                    column,
                    text: snippet.trim().to_string(),
                    message,
                }
            })
            .collect();
        ConfigError::Located {
            file: file.to_string(),
            errors,
        }
    };
    let mut v = Vocabulary::builtin()
        .with(&rubric.vocabulary)
        .map_err(|e| located(rubric_source, rubric_text, e))?;
    if let Some(p) = file {
        let name = p.display().to_string();
        let text = crate::files::read_to_string(p).map_err(|e| {
            ConfigError::Invalid(format!("cannot read vocabulary file {name}: {e}"))
        })?;
        let table: VocabularyTable = parse_toml(&text, &name)?;
        v = v.with(&table).map_err(|e| located(&name, &text, e))?;
    }
    Ok(Arc::new(v))
}

/// The rubric's column mapping, with a `--columns` file's over it.
fn column_map(
    rubric: &Rubric,
    rubric_source: &str,
    file: Option<&Path>,
) -> Result<ColumnOverrides, ConfigError> {
    let from_rubric = ColumnOverrides::from_table(&rubric.columns)
        .map_err(|m| ConfigError::Invalid(format!("{rubric_source}: {m}")))?;
    Ok(match file {
        Some(p) => read_columns_file(p)?.merged_over(&from_rubric),
        None => from_rubric,
    })
}

/// How the experiment's compound is judged, checked against the library.
fn reference_rule(
    rubric: &Rubric,
    rubric_source: &str,
    library: &Library,
    command_line_mp_c: Option<f64>,
) -> Result<ReferenceRule, ConfigError> {
    let reference = ReferenceRule::for_experiment(&rubric.experiment, command_line_mp_c);
    if let Some(c) = rubric.experiment.compound.as_deref() {
        let Some(compound) = library.lookup(c) else {
            return Err(ConfigError::Invalid(format!(
                "{rubric_source}: experiment.compound \"{c}\" is not in the reference library; add it with --compounds FILE (see `benchgrade compounds`)"
            )));
        };
        accepted::reference_for(compound, &reference)
            .map_err(|m| ConfigError::Invalid(format!("{rubric_source}: {m}")))?;
    }
    if command_line_mp_c.is_some_and(|v| !v.is_finite()) {
        return Err(ConfigError::Invalid(
            "--reference-mp must be a temperature in °C".into(),
        ));
    }
    Ok(reference)
}

/// The inputs named, else the sample data.
fn inputs(opts: &Options) -> Result<Vec<PathBuf>, ConfigError> {
    if !opts.inputs.is_empty() {
        return Ok(opts.inputs.clone());
    }
    match &opts.sample_data {
        Some(p) if p.is_dir() => Ok(vec![p.clone()]),
        _ => Err(ConfigError::Invalid(
            "no input files given and no sample-data/ folder here; name the spreadsheets or folders to read".into(),
        )),
    }
}

/// An earlier term's results.parquet, from its output folder (or the file itself).
fn baseline_file(dir: Option<&Path>) -> Result<Option<Baseline>, ConfigError> {
    let Some(dir) = dir else { return Ok(None) };
    let file = if dir.is_dir() {
        dir.join("results.parquet")
    } else {
        dir.to_path_buf()
    };
    if !file.is_file() {
        return Err(ConfigError::Invalid(format!(
            "--baseline {}: no results.parquet there; name an earlier term's output folder",
            dir.display()
        )));
    }
    let term = crate::export::parquet::read_term(&file)
        .map_err(|e| ConfigError::Invalid(format!("--baseline: {e}")))?;
    Ok(Some(Baseline { file, term }))
}

/// The time of grading: the one given, if the workbooks can carry it, else now.
fn timestamp(given: Option<i64>) -> Result<i64, ConfigError> {
    let Some(t) = given else { return Ok(now()) };
    crate::export::provenance::check_timestamp(t).map_err(|why| {
        ConfigError::Invalid(format!(
            "--timestamp (or SOURCE_DATE_EPOCH) {t}: {why}; give seconds since 1970-01-01 UTC"
        ))
    })?;
    Ok(t)
}

/// The calibration named on the command line, else the rubric's (relative to the rubric).
fn calibration_file(opts: &Options, rubric: &Rubric) -> Option<PathBuf> {
    opts.calibration.clone().or_else(|| {
        let rel = rubric.experiment.calibration.as_ref()?;
        let base = opts
            .rubric
            .as_ref()
            .and_then(|r| r.parent())
            .unwrap_or(Path::new(""));
        Some(base.join(rel))
    })
}

/// Seconds since the epoch, now.
fn now() -> i64 {
    std::time::SystemTime::now()
        .duration_since(std::time::UNIX_EPOCH)
        .map_or(0, |d| d.as_secs() as i64)
}
