//! Delimited files from bytes to submissions: decoding, delimiter and decimal sniffing, the
//! table finder and every row's cells.
#![no_main]
use benchgrade::ingest::delimited::read_delimited;
use benchgrade::ingest::headers::ColumnOverrides;
use benchgrade::ingest::{tabulate, SheetData};
use libfuzzer_sys::fuzz_target;

fuzz_target!(|bytes: &[u8]| {
    for is_tsv in [false, true] {
        let Ok(d) = read_delimited(bytes, is_tsv) else {
            continue;
        };
        let data = SheetData {
            source: "fuzz.csv".into(),
            sheet: d.sheet,
            default_section: "fuzz".into(),
            decimal: d.decimal,
            encoding: Some(d.encoding.to_string()),
        };
        let _ = tabulate(&data, &ColumnOverrides::default(), &mut |_| {});
    }
});
