//! The command line: what may be typed, checked for form only. `main` turns it into
//! `benchgrade::Options` and the library does the rest.

use std::path::PathBuf;

use clap::{Args, Parser, Subcommand};

#[derive(Parser, Debug)]
#[command(
    name = "benchgrade",
    version,
    about = "Grades recrystallization lab submissions: recomputes recovery and melting ranges, flags impossible and suspicious entries",
    long_about = None,
    after_help = "Exit codes: 0 every input was read (flags are data); 1 some input could not be read, or a sheet lacks a column grading needs (the rest is still graded); 2 a usage, rubric or configuration error, nothing written."
)]
pub struct Cli {
    #[command(subcommand)]
    pub command: Command,
}

#[derive(Subcommand, Debug)]
pub enum Command {
    /// Grade spreadsheets and folders: results (CSV, JSON, parquet), gradebook, graded workbooks,
    /// section statistics and the cohort report, into DIR
    Grade {
        #[command(flatten)]
        run: RunArgs,
        #[command(flatten)]
        grade: GradeArgs,
    },
    /// Show how each sheet's columns were understood and list the flagged rows; writes nothing
    Check {
        #[command(flatten)]
        run: RunArgs,
        /// Also say what each flag code that was raised means
        #[arg(long)]
        explain: bool,
    },
    /// Work with rubric files
    Rubric {
        #[command(subcommand)]
        action: RubricAction,
    },
    /// Open a grading workspace in the browser: upload the section's spreadsheets, fix columns,
    /// see the flagged students, add overrides and download the outputs. For one person on
    /// this computer; Ctrl-C stops it
    Serve(ServeArgs),
    /// Write entry workbooks from the roster, one per section (or one with a sheet per
    /// section), ready for assistants to type into: ids and names filled in and locked, every
    /// entry cell checked as it is typed, an instructions sheet with the safety cautions
    Template {
        /// The roster (any spreadsheet or CSV with an id column, names, sections, assistants)
        #[arg(long, value_name = "FILE")]
        roster: PathBuf,
        /// Rubric file (TOML); default: rubrics/default.toml, built in
        #[arg(long, value_name = "FILE")]
        rubric: Option<PathBuf>,
        /// Output folder
        #[arg(long, value_name = "DIR")]
        out: PathBuf,
        /// One workbook with a sheet per section instead of one workbook per section
        #[arg(long)]
        one_workbook: bool,
        /// An answer key for unknowns (CSV or spreadsheet: code and compound columns): the
        /// unknown code and identification columns offer its codes and compounds
        #[arg(long, value_name = "FILE")]
        key: Option<PathBuf>,
    },
    /// One grading run of the workspace in the working directory, reported on standard output
    /// as JSON lines: what `serve` runs for each run (a process of its own, so that no file
    /// can take the server down)
    #[command(name = "serve-grading-run", hide = true)]
    ServeGradingRun,
    /// List the reference library with the source of every value
    Compounds {
        /// Print JSON instead of a table
        #[arg(long)]
        json: bool,
        /// A TOML file of extra compounds (same format as the built-in library)
        #[arg(long, value_name = "FILE")]
        compounds: Option<PathBuf>,
    },
}

#[derive(Subcommand, Debug)]
pub enum RubricAction {
    /// Validate a rubric: unknown keys, measures or flag codes, overlapping or unsorted bands,
    /// maxima that do not add up; each error located by line and column
    Check {
        #[arg(value_name = "FILE")]
        file: PathBuf,
    },
}

/// What `serve` takes.
#[derive(Args, Debug)]
pub struct ServeArgs {
    /// The workspace folder (created if needed): inputs/, columns.toml, overrides.csv, an
    /// optional rubric.toml, and graded/, the outputs of `benchgrade grade` run on them
    #[arg(value_name = "WORKSPACE", default_value = "benchgrade-workspace")]
    pub workspace: PathBuf,
    /// The port to listen on; 0 picks a free one
    #[arg(long, value_name = "N", default_value_t = 7410)]
    pub port: u16,
    /// Open the page in the browser
    #[arg(long)]
    pub open: bool,
    /// Listen on this address instead of 127.0.0.1 only (other computers may then reach the
    /// page; a warning is printed)
    #[arg(long, value_name = "ADDR", default_value = "127.0.0.1")]
    pub listen: std::net::IpAddr,
    /// The largest upload, in MB
    #[arg(long, value_name = "MB", default_value_t = 50)]
    pub upload_limit: u64,
}

/// What only `grade` takes.
#[derive(Args, Debug)]
pub struct GradeArgs {
    /// Folder for the outputs (created if needed; inputs are never written)
    #[arg(short, long, value_name = "DIR", default_value = "graded")]
    pub out: PathBuf,
    /// Print nothing but errors
    #[arg(short, long)]
    pub quiet: bool,
    /// Write one graded workbook per section instead of one per input file
    #[arg(long)]
    pub split_sections: bool,
    /// Write results, gradebook and statistics only, no graded workbooks (faster on very
    /// large batches)
    #[arg(long)]
    pub skip_workbooks: bool,
    /// Write no handouts (DIR/handouts/); on very large batches they are the largest output
    #[arg(long)]
    pub skip_handouts: bool,
    /// Also write DIR/results-pseudonymized.csv (ids as keyed hashes, no names) for anything
    /// that leaves the course; the key comes from --pseudonym-key or BENCHGRADE_PSEUDONYM_KEY
    #[arg(long)]
    pub pseudonymize: bool,
    /// An earlier term's output folder (its results.parquet): compare mean recovery, score and
    /// flag rates with it
    #[arg(long, value_name = "DIR")]
    pub baseline: Option<PathBuf>,
    /// File holding the secret pseudonym key (at least 16 bytes)
    #[arg(long, value_name = "FILE", requires = "pseudonymize")]
    pub pseudonym_key: Option<PathBuf>,
    /// Time of grading for the provenance and workbook properties (seconds since 1970-01-01
    /// UTC), for byte-identical outputs; default: SOURCE_DATE_EPOCH, else now
    #[arg(long, value_name = "SECONDS")]
    pub timestamp: Option<i64>,
    /// Title of the cohort report and workbooks, e.g. "CHEM 2150 — Fall 2026"; default: the
    /// rubric's experiment.course, experiment.term and experiment.name
    #[arg(long, value_name = "TEXT")]
    pub title: Option<String>,
}

#[derive(Args, Debug)]
pub struct RunArgs {
    /// Spreadsheets (.xlsx .xlsm .xlsb .xls .ods .csv .tsv) or folders; default: the sample class built in
    #[arg(value_name = "FILES")]
    pub inputs: Vec<PathBuf>,
    /// Rubric file (TOML); default: rubrics/default.toml, built in
    #[arg(long, value_name = "FILE")]
    pub rubric: Option<PathBuf>,
    /// TOML file with a [columns] table mapping header text to fields
    #[arg(long, value_name = "FILE")]
    pub columns: Option<PathBuf>,
    /// TOML file of words added to the built-in vocabulary (header, unit, status and summary
    /// words, range separators), in the tables of src/ingest/vocabulary.toml
    #[arg(long, value_name = "FILE")]
    pub vocabulary: Option<PathBuf>,
    /// A TOML file of extra compounds for the reference library
    #[arg(long, value_name = "FILE")]
    pub compounds: Option<PathBuf>,
    /// Accepted melting point of the experiment's compound, in °C
    #[arg(long, value_name = "CELSIUS", allow_negative_numbers = true)]
    pub reference_mp: Option<f64>,
    /// Apparatus calibration: a CSV, or a workbook whose "Calibration" sheet lists, per apparatus
    /// or bench, standards' observed readings and certified values
    #[arg(long, value_name = "FILE")]
    pub calibration: Option<PathBuf>,
    /// Grader overrides (CSV: student_id, section, criterion, points or adjust, reason, grader),
    /// applied after scoring
    #[arg(long, value_name = "FILE")]
    pub overrides: Option<PathBuf>,
    /// The enrolled students (any spreadsheet or CSV with an id column, and names, sections and
    /// assistants where it has them): every one gets a row, submitted or not
    #[arg(long, value_name = "FILE")]
    pub roster: Option<PathBuf>,
    /// Corrections of typed values (CSV: student_id, section, field, value, reason, grader),
    /// applied before anything is flagged or scored
    #[arg(long, value_name = "FILE")]
    pub corrections: Option<PathBuf>,
    /// Answer key for unknowns: a CSV or spreadsheet with a code column and a compound column
    #[arg(long, value_name = "FILE")]
    pub key: Option<PathBuf>,
}
