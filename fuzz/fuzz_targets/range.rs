//! Melting ranges as written: "120.5-121.7", "120,5 – 121,7 °C", "393.6 to 394.8 K", ...
#![no_main]
use benchgrade::ingest::range::parse_range;
use benchgrade::ingest::values::Decimal;
use libfuzzer_sys::fuzz_target;

fuzz_target!(|text: &str| {
    for decimal in [Decimal::Point, Decimal::Comma] {
        let _ = parse_range(text, decimal);
    }
});
