//! Rubric files: any text is a rubric or a located error.
#![no_main]
use benchgrade::rubric::Rubric;
use libfuzzer_sys::fuzz_target;

fuzz_target!(|text: &str| {
    if let Ok(r) = Rubric::parse(text, "fuzz.toml") {
        let _ = r.criterion_ids();
        let _ = r.reference_rule(None);
    }
});
