//! Column headers: what a header means, with and without an explicit mapping.
#![no_main]
use benchgrade::ingest::headers::{canonical, classify, meaning, parse_header, ColumnOverrides};
use libfuzzer_sys::fuzz_target;

fuzz_target!(|text: &str| {
    let _ = canonical(text);
    let parsed = parse_header(text);
    let _ = classify(&parsed);
    let _ = meaning(text, &ColumnOverrides::default());
    // an explicit mapping of this very header to a field is honoured or refused, never a panic
    let (header, field) = (text.to_string(), "crude_mass_g".to_string());
    if let Ok(o) = ColumnOverrides::from_pairs([(&header, &field)]) {
        let _ = meaning(text, &o);
    }
});
