//! Speed work must not change a byte: every output of the sample class and of a generated term
//! is compared, by SHA-256, with the digests recorded before the speed work began
//! (`tests/data/same-outputs.sha256`, written by this test with `BENCHGRADE_BLESS=1` at the
//! commit its first line names). A difference names each output that changed.
//!
//! Workbooks are compared by the digest of their zip entries (names and uncompressed bytes), not
//! of the zip container: the compressor's bytes are the deflate library's business and may
//! differ between processors, while every byte a spreadsheet program reads must not.

use std::collections::BTreeMap;
use std::fmt::Write as _;
use std::io::Read;
use std::path::Path;

use sha2::{Digest, Sha256};

use crate::harness::{project_root, run_in, Fixture};

const RECORD: &str = "tests/data/same-outputs.sha256";
const WHEN: &str = "1767225600";

/// An invented term: six sections kept as CSV files, with the share of wet, impure, mistyped,
/// impossible, excused and blank rows a real term has, and one file long enough to cross the
/// writers' chunks of 256 rows. A linear congruential generator keeps it the same everywhere.
fn generated_term(f: &Fixture) {
    let mut seed: u64 = 20_261_204;
    let mut next = move || {
        seed = seed
            .wrapping_mul(6_364_136_223_846_793_005)
            .wrapping_add(1_442_695_040_888_963_407);
        (seed >> 33) as f64 / f64::from(1u32 << 31)
    };
    let first = [
        "Ilse", "Taro", "Wren", "Yusuf", "Zofia", "Amaru", "Bex", "Cyan",
    ];
    let last = [
        "Quillfeather",
        "Ravensdale",
        "Stonebridge",
        "Tillinghast",
        "Underhay",
    ];
    let mut id = 7_310_000;
    for file in 0..6 {
        let rows = if file == 2 { 600 } else { 40 };
        let mut s = String::from(
            "Student ID,Name,Bench,Crude mass (g),Recovered mass (g),Solvent volume (mL),\
             MP range (°C),% Recovery,Notes\n",
        );
        for _ in 0..rows {
            id += 1;
            let crude = 0.8 + next() * 0.4;
            let share = if next() < 0.04 {
                1.02 + next() * 0.2
            } else {
                0.4 + next() * 0.5
            };
            let onset = if next() < 0.15 {
                110.0 + next() * 8.0
            } else {
                119.0 + next() * 3.0
            };
            let clear = onset + 0.3 + next() * 3.0;
            let reported = if next() < 0.05 {
                share * 90.0
            } else {
                share * 100.0
            };
            let notes = match (next() * 40.0) as u32 {
                0 => "excused (illness)",
                1 => "sample still damp when weighed",
                _ => "",
            };
            let name = format!(
                "{}, {}",
                last[(next() * 5.0) as usize % 5],
                first[(next() * 8.0) as usize % 8]
            );
            let recovered = if next() < 0.02 {
                String::new()
            } else {
                format!("{:.3}", crude * share)
            };
            let _ = writeln!(
                s,
                "{id},\"{name}\",{},{crude:.3},{recovered},{:.1},{onset:.1}-{clear:.1},{reported:.1},{notes}",
                1 + (next() * 12.0) as u32,
                8.0 + next() * 17.0,
            );
        }
        f.write(&format!("term/section-{:02}.csv", file + 1), s);
    }
}

/// Every visible output below `dir` with its digest (workbooks by their entries).
fn digests(dir: &Path, prefix: &str, into: &mut BTreeMap<String, String>) {
    let mut entries: Vec<_> = std::fs::read_dir(dir)
        .unwrap()
        .filter_map(Result::ok)
        .collect();
    entries.sort_by_key(std::fs::DirEntry::file_name);
    for e in entries {
        let name = e.file_name().to_string_lossy().into_owned();
        let path = e.path();
        if name.starts_with('.') {
            continue;
        }
        if path.is_dir() {
            digests(&path, &format!("{prefix}{name}/"), into);
            continue;
        }
        let bytes = std::fs::read(&path).unwrap();
        let digest = if name.ends_with(".xlsx") {
            entries_digest(&bytes)
        } else {
            hex(&Sha256::digest(&bytes))
        };
        into.insert(format!("{prefix}{name}"), digest);
    }
}

fn entries_digest(bytes: &[u8]) -> String {
    let mut zip = zip::ZipArchive::new(std::io::Cursor::new(bytes)).unwrap();
    let mut h = Sha256::new();
    for i in 0..zip.len() {
        let mut entry = zip.by_index(i).unwrap();
        let mut content = Vec::new();
        entry.read_to_end(&mut content).unwrap();
        h.update(entry.name().unwrap().as_bytes());
        h.update((content.len() as u64).to_le_bytes());
        h.update(&content);
    }
    hex(&h.finalize())
}

fn hex(d: &[u8]) -> String {
    d.iter().fold(String::new(), |mut s, b| {
        let _ = write!(s, "{b:02x}");
        s
    })
}

fn compare(set: &str, found: &BTreeMap<String, String>) {
    let path = project_root().join(RECORD);
    let text = std::fs::read_to_string(&path).unwrap_or_default();
    if std::env::var_os("BENCHGRADE_BLESS").is_some() {
        let mut kept: Vec<String> = text
            .lines()
            .filter(|l| !l.starts_with(&format!("{set} ")) && !l.is_empty())
            .map(str::to_owned)
            .collect();
        kept.extend(found.iter().map(|(n, d)| format!("{set} {n} {d}")));
        std::fs::write(&path, kept.join("\n") + "\n").unwrap();
        return;
    }
    let recorded: BTreeMap<&str, &str> = text
        .lines()
        .filter_map(|l| l.strip_prefix(&format!("{set} ")))
        .filter_map(|l| l.split_once(' '))
        .collect();
    assert!(!recorded.is_empty(), "{RECORD} records nothing for {set}");
    let mut changed = Vec::new();
    for (name, digest) in &recorded {
        match found.get(*name) {
            Some(d) if d == digest => {}
            Some(_) => changed.push(format!("{name} changed")),
            None => changed.push(format!("{name} missing")),
        }
    }
    for name in found.keys() {
        if !recorded.contains_key(name.as_str()) {
            changed.push(format!("{name} is new"));
        }
    }
    assert!(
        changed.is_empty(),
        "{set}: outputs differ from those recorded: {changed:#?}"
    );
}

#[test]
fn the_sample_class_s_outputs_are_those_recorded_before_the_speed_work() {
    let f = Fixture::new();
    f.write("key", "a course-local pseudonym key, invented");
    let run = run_in(
        f.dir.path(),
        &[
            "grade",
            "--out",
            "graded",
            "--timestamp",
            WHEN,
            "--pseudonymize",
            "--pseudonym-key",
            "key",
        ],
    );
    assert!(run.code <= 1, "{}", run.stderr);
    let mut found = BTreeMap::new();
    digests(&f.path("graded"), "", &mut found);
    compare("sample", &found);
}

#[test]
fn a_generated_term_s_outputs_are_those_recorded_before_the_speed_work() {
    let f = Fixture::new();
    generated_term(&f);
    // a relative path, as a grader types it: the provenance names inputs as given
    let run = run_in(
        f.dir.path(),
        &["grade", "term", "--out", "graded", "--timestamp", WHEN],
    );
    assert!(run.code <= 1, "{}", run.stderr);
    let mut found = BTreeMap::new();
    digests(&f.path("graded"), "", &mut found);
    compare("term", &found);
}
