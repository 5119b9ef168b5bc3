//! An .ods's content.xml from the fuzzer's bytes, in a well-formed archive (the `ods` target's
//! mutations mostly break the zip itself): `ingest::ods_scan`'s budgets and percentages, and
//! calamine's .ods reader behind them.
#![no_main]
use std::io::Write;

use libfuzzer_sys::fuzz_target;

#[path = "workbook.rs"]
mod workbook;

const MANIFEST: &[u8] = br#"<?xml version="1.0" encoding="UTF-8"?><manifest:manifest xmlns:manifest="urn:oasis:names:tc:opendocument:xmlns:manifest:1.0" manifest:version="1.2"><manifest:file-entry manifest:full-path="/" manifest:media-type="application/vnd.oasis.opendocument.spreadsheet"/><manifest:file-entry manifest:full-path="content.xml" manifest:media-type="text/xml"/></manifest:manifest>"#;

fn ods_of(content: &[u8]) -> Option<Vec<u8>> {
    let mut z = zip::ZipWriter::new(std::io::Cursor::new(Vec::new()));
    let stored =
        zip::write::SimpleFileOptions::default().compression_method(zip::CompressionMethod::Stored);
    z.start_file("mimetype", stored).ok()?;
    z.write_all(b"application/vnd.oasis.opendocument.spreadsheet").ok()?;
    z.start_file("META-INF/manifest.xml", stored).ok()?;
    z.write_all(MANIFEST).ok()?;
    z.start_file("content.xml", stored).ok()?;
    z.write_all(content).ok()?;
    Some(z.finish().ok()?.into_inner())
}

fuzz_target!(|content: &[u8]| {
    if let Some(bytes) = ods_of(content) {
        workbook::read_as(&bytes, "ods");
    }
});
