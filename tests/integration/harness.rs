//! A small harness: fixtures written into a temporary folder, the real binary run on them,
//! its outputs read back.

use std::collections::HashMap;
use std::path::{Path, PathBuf};
use std::process::Command;

use rust_xlsxwriter::Workbook;

pub struct Fixture {
    pub dir: tempfile::TempDir,
}

pub struct Run {
    pub code: i32,
    pub stdout: String,
    pub stderr: String,
}

pub type Record = HashMap<String, String>;

impl Fixture {
    pub fn new() -> Fixture {
        Fixture {
            dir: tempfile::tempdir().expect("a temporary folder"),
        }
    }

    pub fn path(&self, name: &str) -> PathBuf {
        self.dir.path().join(name)
    }

    pub fn write(&self, name: &str, bytes: impl AsRef<[u8]>) -> PathBuf {
        let p = self.path(name);
        if let Some(parent) = p.parent() {
            std::fs::create_dir_all(parent).unwrap();
        }
        std::fs::write(&p, bytes).unwrap();
        p
    }

    /// Writes an xlsx built by `build`.
    pub fn xlsx(&self, name: &str, build: impl FnOnce(&mut Workbook)) -> PathBuf {
        let mut wb = Workbook::new();
        build(&mut wb);
        let p = self.path(name);
        wb.save(&p).unwrap();
        p
    }

    /// Runs the binary in the fixture folder.
    pub fn run(&self, args: &[&str]) -> Run {
        run_in(self.dir.path(), args)
    }

    /// Reads DIR/results.csv back as records keyed by column name.
    pub fn results(&self, out: &str) -> Vec<Record> {
        read_results(&self.path(out).join("results.csv"))
    }
}

pub fn run_in(dir: &Path, args: &[&str]) -> Run {
    finish(
        Command::new(env!("CARGO_BIN_EXE_benchgrade")).args(args),
        dir,
    )
}

/// Runs the binary with its address space capped at `mib` MiB (`ulimit -v`, through sh): a
/// run that reserved more would die of a failed allocation instead of finishing.
pub fn run_capped(dir: &Path, args: &[&str], mib: u64) -> Run {
    let script = format!("ulimit -v {}; exec \"$0\" \"$@\"", mib * 1024);
    finish(
        Command::new("sh")
            .arg("-c")
            .arg(script)
            .arg(env!("CARGO_BIN_EXE_benchgrade"))
            .args(args),
        dir,
    )
}

/// Runs the binary, killing it if it takes longer than `secs`: a hang fails the test instead
/// of stalling the suite. `None` when it had to be killed.
pub fn run_within(dir: &Path, args: &[&str], secs: u64) -> Option<Run> {
    let mut child = Command::new(env!("CARGO_BIN_EXE_benchgrade"))
        .args(args)
        .current_dir(dir)
        .env("NO_COLOR", "1")
        .env_remove("BENCHGRADE_PSEUDONYM_KEY")
        .env_remove("SOURCE_DATE_EPOCH")
        .stdout(std::process::Stdio::piped())
        .stderr(std::process::Stdio::piped())
        .spawn()
        .expect("the binary runs");
    let deadline = std::time::Instant::now() + std::time::Duration::from_secs(secs);
    loop {
        if child.try_wait().expect("wait").is_some() {
            let out = child.wait_with_output().expect("output");
            return Some(Run {
                code: out.status.code().unwrap_or(-1),
                stdout: String::from_utf8_lossy(&out.stdout).into_owned(),
                stderr: String::from_utf8_lossy(&out.stderr).into_owned(),
            });
        }
        if std::time::Instant::now() > deadline {
            let _ = child.kill();
            let _ = child.wait();
            return None;
        }
        std::thread::sleep(std::time::Duration::from_millis(20));
    }
}

fn finish(cmd: &mut Command, dir: &Path) -> Run {
    let out = cmd
        .current_dir(dir)
        .env("NO_COLOR", "1")
        // the developer's own settings must not leak into a test
        .env_remove("BENCHGRADE_PSEUDONYM_KEY")
        .env_remove("SOURCE_DATE_EPOCH")
        .output()
        .expect("the binary runs");
    Run {
        code: out.status.code().unwrap_or(-1),
        stdout: String::from_utf8_lossy(&out.stdout).into_owned(),
        stderr: String::from_utf8_lossy(&out.stderr).into_owned(),
    }
}

pub fn read_results(path: &Path) -> Vec<Record> {
    let mut r = csv::Reader::from_path(path).unwrap_or_else(|e| panic!("{}: {e}", path.display()));
    let headers = r.headers().unwrap().clone();
    r.records()
        .map(|rec| {
            let rec = rec.unwrap();
            headers
                .iter()
                .zip(rec.iter())
                .map(|(h, v)| (h.to_string(), v.to_string()))
                .collect()
        })
        .collect()
}

pub fn num(r: &Record, col: &str) -> Option<f64> {
    let v = r.get(col).unwrap_or_else(|| panic!("no column {col}"));
    (!v.is_empty()).then(|| {
        v.parse()
            .unwrap_or_else(|_| panic!("{col}={v:?} is not a number"))
    })
}

pub fn flags(r: &Record) -> Vec<&str> {
    r["flags"].split(';').filter(|s| !s.is_empty()).collect()
}

/// The row whose student_id is `id`.
pub fn by_id<'a>(rows: &'a [Record], id: &str) -> &'a Record {
    rows.iter()
        .find(|r| r["student_id"] == id)
        .unwrap_or_else(|| panic!("no row for {id}"))
}

/// The project root, where sample-data/ lives.
pub fn project_root() -> PathBuf {
    PathBuf::from(env!("CARGO_MANIFEST_DIR"))
}

/// `benchgrade grade sample-data --out F/OUT EXTRA...`, run from the project root as the
/// README's first command is.
pub fn grade_sample(f: &Fixture, out: &str, extra: &[&str]) -> Run {
    let sample = project_root().join("sample-data");
    let out = f.path(out);
    let mut args = vec![
        "grade",
        sample.to_str().unwrap(),
        "--out",
        out.to_str().unwrap(),
    ];
    args.extend_from_slice(extra);
    run_in(&project_root(), &args)
}

/// An outside program a check needs: `found`, or, when it is missing, a skip with a message
/// saying what to install. In CI a missing program is a failure, since `.ci/run` installs it.
/// LibreOffice's command, if it is installed.
pub fn soffice() -> Option<&'static str> {
    let found = ["soffice", "libreoffice"].into_iter().find(|s| {
        Command::new(s)
            .arg("--version")
            .output()
            .is_ok_and(|o| o.status.success())
    });
    outside_program(found, "LibreOffice Calc", "libreoffice-calc-nogui")
}

/// Converts `file` with LibreOffice (headless, a profile of its own in `dir`) to `format`
/// ("pdf", "csv", or with a filter: "xls:MS Excel 97") in `dir/converted`; the converted file's
/// path.
pub fn convert(soffice: &str, dir: &Path, file: &Path, format: &str) -> PathBuf {
    let profile = dir.join("lo-profile");
    let out = Command::new(soffice)
        .args([
            "--headless",
            "--norestore",
            &format!("-env:UserInstallation=file://{}", profile.display()),
            "--convert-to",
            format,
            "--outdir",
        ])
        .arg(dir.join("converted"))
        .arg(file)
        .output()
        .expect("LibreOffice runs");
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let stem = file.file_stem().unwrap().to_string_lossy().into_owned();
    let ext = format.split(':').next().unwrap_or(format);
    dir.join("converted").join(format!("{stem}.{ext}"))
}

pub fn outside_program<T>(found: Option<T>, what: &str, install: &str) -> Option<T> {
    if found.is_none() {
        assert!(
            std::env::var_os("CI").is_none() && std::env::var_os("BENCHGRADE_CI").is_none(),
            "CI must install {what} (.ci/run does)"
        );
        eprintln!("skipped: {what} not found (install {install} to run this check)");
    }
    found
}

/// Runs the binary with extra environment variables.
pub fn run_env(dir: &Path, args: &[&str], env: &[(&str, &str)]) -> Run {
    let mut cmd = Command::new(env!("CARGO_BIN_EXE_benchgrade"));
    cmd.args(args);
    for (k, v) in env {
        cmd.env(k, v);
    }
    // `finish` clears the developer's own settings, so set ours after it would: run here
    let out = cmd
        .current_dir(dir)
        .env("NO_COLOR", "1")
        .output()
        .expect("the binary runs");
    Run {
        code: out.status.code().unwrap_or(-1),
        stdout: String::from_utf8_lossy(&out.stdout).into_owned(),
        stderr: String::from_utf8_lossy(&out.stderr).into_owned(),
    }
}

/// Every visible file of an output folder with its SHA-256 (hidden bookkeeping left out).
pub fn folder_state(dir: &Path) -> std::collections::BTreeMap<String, String> {
    let mut state = std::collections::BTreeMap::new();
    let Ok(entries) = std::fs::read_dir(dir) else {
        return state;
    };
    for e in entries.filter_map(Result::ok) {
        let name = e.file_name().to_string_lossy().into_owned();
        if name.starts_with('.') {
            continue;
        }
        let path = dir.join(&name);
        if path.is_dir() {
            // one level of subfolders (the handouts), their files named "folder/file"
            for (inner, hash) in folder_state(&path) {
                state.insert(format!("{name}/{inner}"), hash);
            }
        } else {
            let hash = benchgrade::export::provenance::sha256_file(&path).unwrap_or_default();
            state.insert(name, hash);
        }
    }
    state
}

/// A class of `rows` students over `sections` sections, as CSV text.
pub fn class_csv(rows: usize, sections: usize) -> String {
    let mut s = String::from("ID,Name,Section,Bench,Crude mass (g),Recovered mass (g),MP range\n");
    for i in 0..rows {
        let rec = 1.6 + (i % 13) as f64 * 0.07;
        let clear = 121.0 + (i % 9) as f64 * 0.15;
        s += &format!(
            "s{i},Student {i},S{},{},3.00,{rec:.2},{:.1}-{clear:.1}\n",
            i % sections,
            i % 12 + 1,
            clear - 1.0
        );
    }
    s
}
