//! Whole .xls files through benchgrade's reader: the pre-scan that holds the file to the
//! budgets (`ingest::xls_guard`), the percentage scan, and calamine's reader behind them.
#![no_main]
use libfuzzer_sys::fuzz_target;

#[path = "workbook.rs"]
mod workbook;

fuzz_target!(|bytes: &[u8]| workbook::read_as(bytes, "xls"));
