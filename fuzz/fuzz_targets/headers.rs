//! Column headers: what a header means, with and without an explicit mapping.
#![no_main]
use benchgrade::fields::Field;
use benchgrade::ingest::headers::{
    canonical, classify, meaning, parse_header, ColumnOverrides, HeaderMeaning,
};
use libfuzzer_sys::fuzz_target;

fuzz_target!(|text: &str| {
    let _ = canonical(text);
    let parsed = parse_header(text);
    let _ = classify(&parsed);
    let _ = meaning(text, "A", &ColumnOverrides::default());
    // an explicit mapping of this very header to a field is always honoured
    let (header, field) = (text.to_string(), "crude_mass".to_string());
    let o = ColumnOverrides::from_pairs([(&header, &field)]).expect("crude_mass is a field key");
    assert_eq!(
        meaning(text, "B", &o),
        (HeaderMeaning::Field(Field::CrudeMass), true)
    );
});
