//! The library's layers point only down: each top-level module may name (`crate::x`) only the
//! modules below it in `LAYERS`, so there can be no import cycle. Test code is left out. A new
//! top-level module must be given its place here.

use std::collections::{BTreeMap, BTreeSet};
use std::path::Path;

use crate::harness::project_root;

/// From the bottom up: a module may use only those before it.
const LAYERS: [&str; 17] = [
    "contain",
    "error",
    "compare",
    "fields",
    "numtext",
    "files",
    "sample",
    "ingest",
    "model",
    "reference",
    "rubric",
    "stats",
    "assess",
    "export",
    "config",
    "pipeline",
    "serve",
];

/// The binary's own files, which sit above the library.
const BINARY: [&str; 5] = ["lib.rs", "main.rs", "cli.rs", "alloc.rs", "fail.rs"];

/// The source of every file of a top-level module, with its test modules cut off.
fn module_sources(src: &Path) -> BTreeMap<String, Vec<String>> {
    let mut out: BTreeMap<String, Vec<String>> = BTreeMap::new();
    for entry in std::fs::read_dir(src).unwrap() {
        let path = entry.unwrap().path();
        let name = path.file_name().unwrap().to_string_lossy().into_owned();
        if BINARY.contains(&name.as_str()) {
            continue;
        }
        let module = name.trim_end_matches(".rs").to_string();
        let mut files = Vec::new();
        collect(&path, &mut files);
        out.entry(module).or_default().extend(files);
    }
    out
}

fn collect(path: &Path, out: &mut Vec<String>) {
    if path.is_dir() {
        for e in std::fs::read_dir(path).unwrap() {
            collect(&e.unwrap().path(), out);
        }
    } else if path.extension().is_some_and(|e| e == "rs") && !path.ends_with("tests.rs") {
        let text = std::fs::read_to_string(path).unwrap();
        let code = match text.find("#[cfg(test)]\nmod tests") {
            Some(i) => text[..i].to_string(),
            None => text,
        };
        out.push(code);
    }
}

/// The top-level modules a module's code names as `crate::name`.
fn uses(sources: &[String], known: &BTreeSet<String>) -> BTreeSet<String> {
    let mut out = BTreeSet::new();
    for code in sources {
        for (i, _) in code.match_indices("crate::") {
            let rest = &code[i + "crate::".len()..];
            let name: String = rest
                .chars()
                .take_while(|c| c.is_alphanumeric() || *c == '_')
                .collect();
            if known.contains(&name) {
                out.insert(name);
            }
        }
    }
    out
}

#[test]
fn every_module_uses_only_the_layers_below_it() {
    let sources = module_sources(&project_root().join("src"));
    let known: BTreeSet<String> = sources.keys().cloned().collect();
    let unplaced: Vec<&String> = known
        .iter()
        .filter(|m| !LAYERS.contains(&m.as_str()))
        .collect();
    assert!(
        unplaced.is_empty(),
        "give these modules a layer in tests/integration/layers.rs: {unplaced:?}"
    );
    let rank = |m: &str| LAYERS.iter().position(|l| *l == m).unwrap();
    let mut upward = Vec::new();
    for (module, code) in &sources {
        for used in uses(code, &known) {
            if used != *module && rank(&used) > rank(module) {
                upward.push(format!("{module} uses {used}"));
            }
        }
    }
    assert!(upward.is_empty(), "imports that point up: {upward:?}");
}

#[test]
fn the_layer_check_sees_an_upward_import() {
    // the check itself, on a made-up module that reaches up to `pipeline`
    let known: BTreeSet<String> = ["model", "pipeline"]
        .iter()
        .map(std::string::ToString::to_string)
        .collect();
    let code = vec!["use crate::pipeline::Batch;\nuse crate::model::Graded;".to_string()];
    let found = uses(&code, &known);
    assert!(found.contains("pipeline") && found.contains("model"));
}
