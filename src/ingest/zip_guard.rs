//! What a zipped workbook (.xlsx, .xlsm, .xlsb, .ods) may ask of the reader, checked from its
//! directory and its small parts before calamine opens it: how far it expands in all and part by
//! part (the parts read whole are inflated once and counted, since a damaged file can understate
//! them), and how many styles it lists. calamine builds a full style (font, fill, borders) for
//! each cell format of styles.xml, and the workbook is opened on two threads: 3 million style
//! entries in a 620 KB file took 1.13 GB.

use std::fs::File;
use std::io::BufReader;
use std::path::Path;

use quick_xml::events::Event;

/// Largest total size a zipped workbook may expand to.
pub const MAX_EXPANDED_BYTES: u64 = 2 << 30;
/// Largest size a part that is read whole (the shared strings, the styles, the workbook's own
/// XML) may expand to. A class of a hundred thousand students has a few MB of shared strings;
/// a single cell holds at most 32,767 characters.
pub const MAX_PART_BYTES: u64 = 64 << 20;
/// Largest size one worksheet part (read as a stream) may expand to: a million students in ten
/// columns fit.
pub const MAX_SHEET_BYTES: u64 = 1 << 30;
/// Most entries of each list in styles.xml (cell formats, fonts, fills, borders, number
/// formats): a workbook holds about 64,000 distinct cell formats at most (from memory: Excel's
/// "unique cell formats" limit is 64,000 / 65,490 by version).
pub const MOST_STYLES: usize = 65_536;

/// OLE2 compound files: legacy .xls, and OOXML workbooks encrypted with a password.
const OLE_MAGIC: [u8; 8] = [0xD0, 0xCF, 0x11, 0xE0, 0xA1, 0xB1, 0x1A, 0xE1];

/// Says what a file that should be a zip archive is instead.
fn not_a_zip(path: &Path) -> String {
    let bytes = crate::files::read(path).unwrap_or_default();
    if bytes.starts_with(&OLE_MAGIC) {
        let marker: Vec<u8> = "EncryptionInfo"
            .encode_utf16()
            .flat_map(u16::to_le_bytes)
            .collect();
        if bytes.windows(marker.len()).any(|w| w == marker.as_slice()) {
            return "the workbook is password-protected (encrypted); save an unprotected copy and grade that".into();
        }
        return "this is an older binary workbook (.xls) under another name; rename it to .xls"
            .into();
    }
    if bytes.starts_with(b"PK") {
        return "not a readable workbook: the zip archive is truncated or damaged".into();
    }
    let texty = bytes
        .iter()
        .take(512)
        .all(|b| b.is_ascii_graphic() || b.is_ascii_whitespace() || *b >= 0x80);
    if texty {
        "not a workbook: the file holds plain text; if it is a CSV export, name it .csv".into()
    } else {
        "not a workbook: the file is neither a zip archive nor a spreadsheet format benchgrade reads".into()
    }
}

/// A worksheet part, read as a stream; every other part is read whole.
fn is_sheet_part(name: &str) -> bool {
    name.starts_with("xl/worksheets/sheet") || name == "content.xml"
}

/// How many bytes a part really inflates to, counted up to `limit` + 1 and thrown away.
fn inflated_size<R: std::io::Read + std::io::Seek>(
    archive: &mut zip::ZipArchive<R>,
    i: usize,
    limit: u64,
) -> Result<u64, String> {
    let entry = archive
        .by_index(i)
        .map_err(|e| format!("not a readable workbook: {e}"))?;
    std::io::copy(
        &mut std::io::Read::take(entry, limit + 1),
        &mut std::io::sink(),
    )
    .map_err(|e| format!("not a readable workbook: {e}"))
}

/// Reads the zip directory and refuses an archive that would expand past the limits: in all,
/// and for any one part (those read whole are inflated once and counted, since a damaged or
/// malicious file can understate their size).
pub fn check_zip(path: &Path) -> Result<(), String> {
    let file = File::open(path).map_err(|e| format!("cannot open: {e}"))?;
    let mut archive = zip::ZipArchive::new(BufReader::new(file)).map_err(|_| not_a_zip(path))?;
    let mut total: u64 = 0;
    for i in 0..archive.len() {
        let (name, declared) = {
            let entry = archive
                .by_index_raw(i)
                .map_err(|e| format!("not a readable workbook: {e}"))?;
            let name = entry.name().map(|n| n.to_string()).unwrap_or_default();
            (name, entry.size())
        };
        let limit = if is_sheet_part(&name) {
            MAX_SHEET_BYTES
        } else {
            MAX_PART_BYTES
        };
        let size = if is_sheet_part(&name) || declared > limit {
            declared
        } else {
            inflated_size(&mut archive, i, limit)?
        };
        if size > limit {
            return Err(format!(
                "refused: its part {name} would expand to more than {} MiB, more than a class file holds (a damaged file or a zip bomb)",
                limit >> 20
            ));
        }
        total = total.saturating_add(size);
        if name.to_ascii_lowercase().ends_with("styles.xml") {
            count_styles(&mut archive, i, &name)?;
        }
    }
    if total > MAX_EXPANDED_BYTES {
        return Err(format!(
            "refused: the workbook would expand to {} MiB, more than the {} MiB limit (a damaged file or a zip bomb)",
            total >> 20,
            MAX_EXPANDED_BYTES >> 20
        ));
    }
    Ok(())
}

/// Refuses a styles part listing more than `MOST_STYLES` of any one kind of entry (counted as
/// the part streams; nothing is kept).
fn count_styles<R: std::io::Read + std::io::Seek>(
    archive: &mut zip::ZipArchive<R>,
    i: usize,
    name: &str,
) -> Result<(), String> {
    let entry = archive
        .by_index(i)
        .map_err(|e| format!("not a readable workbook: {e}"))?;
    let mut xml = quick_xml::Reader::from_reader(BufReader::new(entry));
    let kinds = ["xf", "font", "fill", "border", "numFmt"];
    let mut counts = [0usize; 5];
    let mut buf = Vec::new();
    loop {
        match xml.read_event_into(&mut buf) {
            Ok(Event::Start(e) | Event::Empty(e)) => {
                let local = e.local_name();
                if let Some(k) = kinds.iter().position(|k| local.as_ref() == *k) {
                    counts[k] += 1;
                    if counts[k] > MOST_STYLES {
                        return Err(format!(
                            "refused: its part {name} lists more than {MOST_STYLES} {} entries, more than a workbook holds (a damaged file)",
                            kinds[k]
                        ));
                    }
                }
            }
            // the reader reports what it cannot parse
            Ok(Event::Eof) | Err(_) => return Ok(()),
            Ok(_) => {}
        }
        buf.clear();
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn xlsx_with_styles(xfs: usize) -> tempfile::TempDir {
        let dir = tempfile::tempdir().unwrap();
        let f = File::create(dir.path().join("s.xlsx")).unwrap();
        let mut z = zip::ZipWriter::new(f);
        z.start_file("xl/styles.xml", zip::write::SimpleFileOptions::default())
            .unwrap();
        let body = format!(
            r#"<styleSheet xmlns="http://schemas.openxmlformats.org/spreadsheetml/2006/main"><cellXfs count="{xfs}">{}</cellXfs></styleSheet>"#,
            "<xf numFmtId=\"0\"/>".repeat(xfs)
        );
        std::io::Write::write_all(&mut z, body.as_bytes()).unwrap();
        z.finish().unwrap();
        dir
    }

    #[test]
    fn a_styles_part_listing_more_cell_formats_than_a_workbook_holds_is_refused() {
        let dir = xlsx_with_styles(MOST_STYLES + 1);
        let why = check_zip(&dir.path().join("s.xlsx")).unwrap_err();
        assert!(
            why.contains("xl/styles.xml") && why.contains("xf entries"),
            "{why}"
        );
        let dir = xlsx_with_styles(1000);
        assert!(check_zip(&dir.path().join("s.xlsx")).is_ok());
    }
}
