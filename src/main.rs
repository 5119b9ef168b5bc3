//! The thin binary: parse the command line, build the configuration, call the library,
//! print, and map the outcome to the exit code of the contract (0, 1 or 2).

mod alloc;
mod cli;
mod fail;

use std::io::{IsTerminal, Write};
use std::path::PathBuf;
use std::process::ExitCode;

use anyhow::{Context as _, Result};
use clap::Parser;

use benchgrade::export::check_report::{self, Style};
use benchgrade::reference::Library;
use benchgrade::{Batch, Config, Options, RunError};
use cli::{Cli, Command, GradeArgs, RubricAction, RunArgs, ServeArgs};

/// The sample class built into the binary, for a run given no inputs: written into a fresh
/// folder that becomes the working directory, so that the files read show as `sample-data/...`
/// wherever the binary runs. Paths typed on the command line are made absolute first. The
/// folder is removed when the run ends.
struct SampleClass(PathBuf);

impl SampleClass {
    fn prepare(run: &mut RunArgs, more: &mut [&mut PathBuf]) -> Result<Option<SampleClass>> {
        if !run.inputs.is_empty() {
            return Ok(None);
        }
        let here = std::env::current_dir().context("finding the working directory")?;
        let absolute = |p: &mut PathBuf| {
            if p.is_relative() {
                *p = here.join(&*p);
            }
        };
        for p in [
            &mut run.rubric,
            &mut run.columns,
            &mut run.compounds,
            &mut run.calibration,
            &mut run.overrides,
        ]
        .into_iter()
        .flatten()
        {
            absolute(p);
        }
        for p in more.iter_mut() {
            absolute(p);
        }
        let nanos = std::time::SystemTime::now()
            .duration_since(std::time::UNIX_EPOCH)
            .map_or(0, |d| d.subsec_nanos());
        let dir =
            std::env::temp_dir().join(format!("benchgrade-sample-{}-{nanos}", std::process::id()));
        std::fs::create_dir(&dir).context("making a folder for the sample class")?;
        let class = SampleClass(dir);
        benchgrade::sample::write_into(&class.0).context("writing out the sample class")?;
        std::env::set_current_dir(&class.0).context("entering the sample class's folder")?;
        run.inputs = vec![PathBuf::from(benchgrade::sample::FOLDER)];
        fail::say(&format!(
            "benchgrade: no inputs named; using the sample class built into benchgrade ({} files of an invented course)",
            benchgrade::sample::FILES.len()
        ));
        Ok(Some(class))
    }
}

impl Drop for SampleClass {
    fn drop(&mut self) {
        let _ = std::env::set_current_dir(std::env::temp_dir());
        let _ = std::fs::remove_dir_all(&self.0);
    }
}

fn options(run: RunArgs, out: Option<PathBuf>) -> Options {
    Options {
        inputs: run.inputs,
        sample_data: None,
        out,
        rubric: run.rubric,
        columns: run.columns,
        vocabulary: run.vocabulary,
        compounds: run.compounds,
        roster: run.roster,
        corrections: run.corrections,
        reference_mp_c: run.reference_mp,
        calibration: run.calibration,
        overrides: run.overrides,
        key: run.key,
        split_sections: false,
        skip_workbooks: false,
        skip_handouts: false,
        pseudonym_key: None,
        baseline: None,
        timestamp: std::env::var("SOURCE_DATE_EPOCH")
            .ok()
            .and_then(|v| v.trim().parse().ok()),
        title: None,
    }
}

fn style() -> Style {
    let no_color = std::env::var_os("NO_COLOR").is_some_and(|v| !v.is_empty());
    Style {
        color: std::io::stdout().is_terminal() && !no_color,
    }
}

fn report_problems(problems: &[benchgrade::ingest::Problem]) {
    for p in problems {
        let kind = if p.fatal { "error" } else { "note" };
        fail::say(&format!(
            "benchgrade: {kind}: {}",
            check_report::printable(&p.to_string())
        ));
    }
}

fn exit_for(batch: &Batch) -> ExitCode {
    ExitCode::from(u8::from(batch.incomplete()))
}

/// The secret key for `--pseudonymize`: the key file, else BENCHGRADE_PSEUDONYM_KEY.
fn pseudonym_key(g: &GradeArgs) -> Result<Option<Vec<u8>>, String> {
    if !g.pseudonymize {
        return Ok(None);
    }
    match (&g.pseudonym_key, std::env::var_os("BENCHGRADE_PSEUDONYM_KEY")) {
        (Some(file), _) => benchgrade::files::read(file)
            .map(Some)
            .map_err(|e| format!("cannot read the pseudonym key {}: {e}", file.display())),
        (None, Some(k)) => Ok(Some(k.into_encoded_bytes())),
        (None, None) => Err("--pseudonymize needs a secret key: --pseudonym-key FILE or BENCHGRADE_PSEUDONYM_KEY; no guessable default is used".into()),
    }
}

/// A progress bar on standard error, shown only for runs past a couple of seconds on a
/// terminal, never with `--quiet`.
struct Bar {
    show: bool,
    started: std::time::Instant,
    shown: Option<indicatif::ProgressBar>,
}

impl Bar {
    fn new(quiet: bool) -> Bar {
        Bar {
            show: !quiet && std::io::stderr().is_terminal(),
            started: std::time::Instant::now(),
            shown: None,
        }
    }

    fn update(&mut self, p: benchgrade::Progress) {
        if !self.show || self.started.elapsed() < std::time::Duration::from_secs(2) {
            return;
        }
        let b = self.shown.get_or_insert_with(|| {
            let b = indicatif::ProgressBar::new(p.files as u64);
            let style = indicatif::ProgressStyle::with_template(
                "{elapsed} [{bar:30}] {pos}/{len} files, {msg}",
            )
            .unwrap_or_else(|_| indicatif::ProgressStyle::default_bar());
            b.set_style(style.progress_chars("=> "));
            b
        });
        b.set_position(p.files_done as u64);
        b.set_message(format!("{} rows", p.rows));
    }

    fn clear(self) {
        if let Some(b) = self.shown {
            b.finish_and_clear();
        }
    }
}

fn grade(mut run: RunArgs, mut g: GradeArgs) -> Result<ExitCode> {
    let mut paths: Vec<&mut PathBuf> = vec![&mut g.out];
    paths.extend(g.baseline.as_mut());
    paths.extend(g.pseudonym_key.as_mut());
    let _sample = SampleClass::prepare(&mut run, &mut paths)?;
    let quiet = g.quiet;
    let key = match pseudonym_key(&g) {
        Ok(k) => k,
        Err(e) => return usage_error(&e),
    };
    let mut opts = options(run, Some(g.out));
    opts.split_sections = g.split_sections;
    opts.skip_workbooks = g.skip_workbooks;
    opts.skip_handouts = g.skip_handouts;
    opts.baseline = g.baseline;
    opts.pseudonym_key = key;
    opts.timestamp = g.timestamp.or(opts.timestamp);
    opts.title = g.title;
    let config = match Config::build(opts) {
        Ok(c) => c,
        Err(e) => return usage_error(&e),
    };
    fail::doing(format!("grading into {}", config.out_dir.display()));
    let mut bar = Bar::new(quiet);
    let result = benchgrade::grade_with_progress(&config, &mut |p| bar.update(p));
    bar.clear();
    let batch = match result {
        Ok(b) => b,
        Err(RunError::Config(e)) => return usage_error(&e),
        Err(RunError::Write(e)) => return Err(e).context("writing the results"),
        Err(RunError::Nothing { message, problems }) => {
            report_problems(&problems);
            fail::say(&format!("benchgrade: {message}"));
            return Ok(ExitCode::from(1));
        }
        Err(RunError::Internal(_)) => return Ok(fail::internal_error()),
    };
    report_problems(&batch.problems);
    if !quiet {
        let mut out = std::io::stdout().lock();
        write!(
            out,
            "{}",
            check_report::summary(&batch.tally, &[], batch.files.len())
        )?;
        let mut wrote = vec!["the results", "gradebook"];
        if !config.skip_workbooks {
            wrote.push("workbooks");
        }
        if !config.skip_handouts {
            wrote.push("handouts");
        }
        writeln!(
            out,
            "wrote {} and cohort report into {}",
            wrote.join(", "),
            config.out_dir.display()
        )?;
    }
    Ok(exit_for(&batch))
}

fn check(mut run: RunArgs, explain: bool) -> Result<ExitCode> {
    let _sample = SampleClass::prepare(&mut run, &mut [])?;
    let config = match Config::build(options(run, None)) {
        Ok(c) => c,
        Err(e) => return usage_error(&e),
    };
    fail::doing("checking the inputs".into());
    let batch = match benchgrade::assess_batch(&config) {
        Ok(b) => b,
        Err(RunError::Internal(_)) => return Ok(fail::internal_error()),
        Err(e) => return usage_error(&e),
    };
    let style = style();
    let mut out = std::io::stdout().lock();
    write!(out, "{}", check_report::layouts(&batch.sheets, style))?;
    writeln!(out)?;
    if let Some(roster) = &config.roster {
        writeln!(
            out,
            "Roster: {} enrolled students, its columns read as",
            roster.students().len()
        )?;
        // the sheets without the inputs' "Columns" heading, which would stand under this line
        let sheets = check_report::layouts(&config.roster_sheets, style);
        write!(
            out,
            "{}",
            sheets.split_once('\n').map_or("", |(_, rest)| rest)
        )?;
        writeln!(out)?;
    }
    write!(out, "{}", check_report::flagged(&batch.rows, style))?;
    writeln!(out)?;
    if explain {
        write!(out, "{}", check_report::legend(&batch.rows, style))?;
        writeln!(out)?;
    }
    write!(
        out,
        "{}",
        check_report::summary(&batch.tally, &batch.problems, batch.files.len())
    )?;
    Ok(exit_for(&batch))
}

fn template(
    roster: PathBuf,
    rubric: Option<PathBuf>,
    key: Option<PathBuf>,
    out: PathBuf,
    one_workbook: bool,
) -> Result<ExitCode> {
    let opts = Options {
        inputs: vec![roster.clone()],
        out: Some(out),
        rubric,
        key,
        roster: Some(roster),
        timestamp: std::env::var("SOURCE_DATE_EPOCH")
            .ok()
            .and_then(|v| v.trim().parse().ok()),
        ..Options::default()
    };
    let config = match Config::build(opts) {
        Ok(c) => c,
        Err(e) => return usage_error(&e),
    };
    fail::doing("writing the entry workbooks".into());
    match benchgrade::pipeline::write_templates(&config, one_workbook) {
        Ok((paths, notes)) => {
            report_problems(&notes);
            let mut out = std::io::stdout().lock();
            for p in paths {
                writeln!(out, "wrote {}", p.display())?;
            }
            Ok(ExitCode::SUCCESS)
        }
        Err(RunError::Internal(_)) => Ok(fail::internal_error()),
        Err(e) => usage_error(&e),
    }
}

fn compounds(json: bool, extra: Option<PathBuf>) -> Result<ExitCode> {
    let mut lib = match Library::builtin() {
        Ok(l) => l,
        Err(e) => return usage_error(&e),
    };
    if let Some(p) = extra {
        if let Err(e) = lib.extend_from_file(&p) {
            return usage_error(&e);
        }
    }
    let mut out = std::io::stdout().lock();
    if json {
        serde_json::to_writer_pretty(&mut out, lib.compounds())?;
        writeln!(out)?;
    } else {
        write!(out, "{}", benchgrade::reference::table(&lib))?;
    }
    Ok(ExitCode::SUCCESS)
}

fn rubric_check(file: &std::path::Path) -> Result<ExitCode> {
    match benchgrade::rubric::Rubric::load(file) {
        Ok(r) => {
            let max: f64 = r.criteria.iter().map(|c| *c.max.get_ref()).sum();
            writeln!(
                std::io::stdout().lock(),
                "{}: ok, {} criteria worth {} points, {} flag rules",
                file.display(),
                r.criteria.len(),
                benchgrade::export::number(Some(max)),
                r.flag_rules.len()
            )?;
            Ok(ExitCode::SUCCESS)
        }
        Err(e) => usage_error(&e),
    }
}

/// `serve`: the library runs the server until Ctrl-C.
fn serve(s: ServeArgs) -> Result<ExitCode> {
    let opts = benchgrade::serve::ServeOptions {
        workspace: s.workspace,
        listen: s.listen,
        port: s.port,
        open: s.open,
        upload_limit_mb: s.upload_limit,
    };
    match benchgrade::serve::run(opts) {
        Ok(()) => Ok(ExitCode::SUCCESS),
        Err(e) => usage_error(&e),
    }
}

// every command returns a Result, and a usage error is one of its outcomes
#[allow(clippy::unnecessary_wraps)]
fn usage_error(e: &dyn std::fmt::Display) -> Result<ExitCode> {
    let text = e.to_string();
    let lines: Vec<_> = text.lines().map(check_report::printable).collect();
    fail::say(&format!("benchgrade: {}", lines.join("\n")));
    Ok(ExitCode::from(2))
}

fn main() -> ExitCode {
    alloc::tune_late();
    fail::install_hook();
    std::panic::catch_unwind(run).unwrap_or_else(|_| fail::internal_error())
}

fn run() -> ExitCode {
    let cli = match Cli::try_parse() {
        Ok(c) => c,
        Err(e) => {
            let _ = e.print();
            return ExitCode::from(if e.use_stderr() { 2 } else { 0 });
        }
    };
    let result = match cli.command {
        Command::Grade { run, grade: g } => grade(run, g),
        Command::Check { run, explain } => check(run, explain),
        Command::Rubric {
            action: RubricAction::Check { file },
        } => rubric_check(&file),
        Command::Compounds {
            json,
            compounds: extra,
        } => compounds(json, extra),
        Command::Template {
            roster,
            rubric,
            out,
            one_workbook,
            key,
        } => template(roster, rubric, key, out, one_workbook),
        Command::Serve(s) => serve(s),
        Command::ServeGradingRun => {
            benchgrade::serve::child::child_main();
            Ok(ExitCode::SUCCESS)
        }
    };
    match result {
        Ok(code) => code,
        Err(e) if fail::is_broken_pipe(&e) => ExitCode::SUCCESS,
        Err(e) => {
            fail::say(&format!("benchgrade: {}", message(&e)));
            ExitCode::from(2)
        }
    }
}

/// The error and its causes, each said once: a library error that already names its cause in
/// its own text is not followed by that cause again.
fn message(e: &anyhow::Error) -> String {
    let mut out = String::new();
    for part in e.chain().map(ToString::to_string) {
        if out.ends_with(&part) {
            continue;
        }
        if !out.is_empty() {
            out.push_str(": ");
        }
        out.push_str(&part);
    }
    out
}
