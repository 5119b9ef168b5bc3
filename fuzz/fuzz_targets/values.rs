//! Cell values as students type them: quantities with units, approximate markers, blanks.
#![no_main]
use benchgrade::ingest::values::{
    is_blank_marker, parse_quantity, parse_unit, strip_approximate, Decimal,
};
use libfuzzer_sys::fuzz_target;

fuzz_target!(|text: &str| {
    for decimal in [Decimal::Point, Decimal::Comma] {
        if let Some(q) = parse_quantity(text, decimal) {
            // a parsed quantity is a number, never NaN from text
            assert!(!q.value.is_nan(), "{text:?} parsed to NaN");
        }
    }
    let _ = parse_unit(text);
    let (rest, _) = strip_approximate(text);
    assert!(rest.len() <= text.len());
    let _ = is_blank_marker(text);
});
