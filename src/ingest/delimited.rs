//! CSV and TSV exports: UTF-8 with or without a byte-order mark (and UTF-8 with a few damaged
//! bytes, which stay UTF-8 and are marked), UTF-16 from "Unicode text" exports with or without
//! a mark, Latin-1 (read as Windows-1252, its superset); comma, semicolon or tab delimited;
//! decimal commas where the file uses them.

use encoding_rs::{Encoding, UTF_16BE, UTF_16LE, UTF_8, WINDOWS_1252};

use super::cells::{Cell, RawRow, RawSheet};
use super::values::Decimal;

/// A delimited file decoded into one sheet, with the conventions that were found.
pub struct Delimited {
    pub sheet: RawSheet,
    pub decimal: Decimal,
    pub delimiter: u8,
    pub encoding: &'static str,
    /// Bytes that were not valid in the file's encoding (UTF-8 read with a few damaged bytes),
    /// each shown as U+FFFD, and the line of the first.
    pub damaged: Option<(usize, usize)>,
}

/// Valid multi-byte UTF-8 sequences and invalid bytes in `bytes`.
fn utf8_census(bytes: &[u8]) -> (usize, usize) {
    let (mut valid, mut invalid) = (0, 0);
    for chunk in bytes.utf8_chunks() {
        valid += chunk.valid().chars().filter(|c| !c.is_ascii()).count();
        invalid += chunk.invalid().len();
    }
    (valid, invalid)
}

/// UTF-16 without a byte-order mark: text whose every other byte is mostly zero.
fn utf16_without_bom(bytes: &[u8]) -> Option<&'static Encoding> {
    let sample = &bytes[..bytes.len().min(4096) & !1];
    if sample.len() < 4 {
        return None;
    }
    let zeros = |offset: usize| {
        sample
            .iter()
            .skip(offset)
            .step_by(2)
            .filter(|b| **b == 0)
            .count()
    };
    let (even, odd) = (zeros(0), zeros(1));
    let half = sample.len() / 2;
    if odd * 10 >= half * 7 && even * 10 < half {
        Some(UTF_16LE)
    } else if even * 10 >= half * 7 && odd * 10 < half {
        Some(UTF_16BE)
    } else {
        None
    }
}

/// Decodes bytes to text: a byte-order mark decides; else UTF-16 if it looks so; else UTF-8
/// if valid, or nearly so (a few damaged bytes among real UTF-8 letters are shown as U+FFFD,
/// not taken for Windows-1252, which would garble every "ë"); else Windows-1252.
pub fn decode(bytes: &[u8]) -> (String, &'static str) {
    if let Some((enc, bom_len)) = Encoding::for_bom(bytes) {
        let (text, _) = enc.decode_without_bom_handling(&bytes[bom_len..]);
        return (text.into_owned(), enc.name());
    }
    if let Some(enc) = utf16_without_bom(bytes) {
        let (text, _) = enc.decode_without_bom_handling(bytes);
        return (text.into_owned(), enc.name());
    }
    if let Ok(s) = std::str::from_utf8(bytes) {
        return (s.to_string(), UTF_8.name());
    }
    let (valid, invalid) = utf8_census(bytes);
    if valid > 0 && invalid <= (valid / 4).max(1) {
        return (
            String::from_utf8_lossy(bytes).into_owned(),
            "UTF-8, with bytes that are not UTF-8",
        );
    }
    let (text, _) = WINDOWS_1252.decode_without_bom_handling(bytes);
    (text.into_owned(), "ISO-8859-1 (read as windows-1252)")
}

/// Counts a candidate delimiter on a line, outside double quotes.
fn count_outside_quotes(line: &str, delim: char) -> usize {
    let mut inside = false;
    let mut n = 0;
    for c in line.chars() {
        if c == '"' {
            inside = !inside;
        } else if c == delim && !inside {
            n += 1;
        }
    }
    n
}

/// Picks the delimiter that splits the most lines the same way.
pub fn sniff_delimiter(text: &str, is_tsv: bool) -> u8 {
    if is_tsv {
        return b'\t';
    }
    let lines: Vec<&str> = text
        .lines()
        .filter(|l| !l.trim().is_empty())
        .take(30)
        .collect();
    let mut best = (b',', 0usize, 0usize);
    for delim in [',', ';', '\t'] {
        let counts: Vec<usize> = lines
            .iter()
            .map(|l| count_outside_quotes(l, delim))
            .collect();
        let mut modal = counts.clone();
        modal.sort_unstable();
        let mode = modal
            .chunk_by(|a, b| a == b)
            .filter(|g| g[0] > 0)
            .max_by_key(|g| (g.len(), g[0]))
            .map_or(0, |g| g[0]);
        let agreeing = counts.iter().filter(|&&c| c == mode && c > 0).count();
        if (agreeing, mode) > (best.1, best.2) {
            best = (delim as u8, agreeing, mode);
        }
    }
    best.0
}

/// Semicolon files come from locales that write decimal commas; others are sniffed by
/// comparing how many cells look like "2,31" against "2.31".
fn sniff_decimal(rows: &[RawRow], delimiter: u8) -> Decimal {
    if delimiter == b';' {
        return Decimal::Comma;
    }
    let (mut comma, mut point) = (0usize, 0usize);
    for row in rows.iter().take(200) {
        for (_, cell) in &row.cells {
            if let Cell::Text(t) = cell {
                let t = t.trim();
                let digits_around = |sep: char| {
                    t.split_once(sep).is_some_and(|(a, b)| {
                        !a.is_empty()
                            && a.trim_start_matches('-')
                                .bytes()
                                .all(|x| x.is_ascii_digit())
                            && !b.is_empty()
                            && b.len() != 3
                            && b.bytes().all(|x| x.is_ascii_digit())
                    })
                };
                comma += usize::from(digits_around(','));
                point += usize::from(digits_around('.'));
            }
        }
    }
    if comma > point {
        Decimal::Comma
    } else {
        Decimal::Point
    }
}

/// Reads a delimited file's bytes. Rows are numbered by the line they start on.
pub fn read_delimited(bytes: &[u8], is_tsv: bool) -> Result<Delimited, String> {
    let (text, encoding) = decode(bytes);
    if text.contains('\0') {
        return Err("the file holds binary data, not delimited text (if it is UTF-16 text, save it as UTF-8 CSV)".into());
    }
    let damaged = text.find('\u{fffd}').map(|at| {
        let line = text[..at].matches('\n').count() + 1;
        (text.matches('\u{fffd}').count(), line)
    });
    let delimiter = sniff_delimiter(&text, is_tsv);
    let mut reader = csv::ReaderBuilder::new()
        .has_headers(false)
        .flexible(true)
        .delimiter(delimiter)
        .from_reader(text.as_bytes());
    let bytes = text.as_bytes();
    // The reader's own line count lags over blank lines: count from the record's first byte.
    // Records come in order, so the newlines are counted once, from where the last one began
    // (a file of blank lines costs no memory).
    let mut counted = (0usize, 0usize);
    let mut line_of = |offset: u64| {
        let mut at = (offset as usize).max(counted.0);
        while at < bytes.len() && (bytes[at] == b'\n' || bytes[at] == b'\r') {
            at += 1;
        }
        let more = bytes[counted.0..at].split(|&b| b == b'\n').count() - 1;
        counted = (at, counted.1 + more);
        counted.1
    };
    let mut rows = Vec::new();
    let mut record = csv::StringRecord::new();
    loop {
        match reader.read_record(&mut record) {
            Ok(false) => break,
            Ok(true) => {
                let line = record.position().map_or(0, |p| line_of(p.byte()));
                let index = u32::try_from(line).map_err(|_| "the file has too many lines")?;
                let cells: Vec<(u32, Cell)> = record
                    .iter()
                    .enumerate()
                    .filter(|(_, f)| !f.trim().is_empty())
                    .map(|(c, f)| (c as u32, Cell::Text(f.to_string()).normalized()))
                    .collect();
                if !cells.is_empty() {
                    rows.push(RawRow { index, cells });
                }
            }
            Err(e) => return Err(format!("not readable as delimited text: {e}")),
        }
    }
    let decimal = sniff_decimal(&rows, delimiter);
    Ok(Delimited {
        sheet: RawSheet {
            rows,
            ..RawSheet::default()
        },
        decimal,
        delimiter,
        encoding,
        damaged,
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn semicolons_and_decimal_commas() {
        let d = read_delimited(b"ID;Crude (g);Recovered (g)\ns1;3,02;2,31\n", false).unwrap();
        assert_eq!(d.delimiter, b';');
        assert_eq!(d.decimal, Decimal::Comma);
        assert_eq!(d.sheet.rows[1].get(1), &Cell::Text("3,02".into()));
    }

    #[test]
    fn bom_and_latin1() {
        let d = read_delimited(b"\xEF\xBB\xBFID,Name\ns1,Ana\n", false).unwrap();
        assert_eq!(d.sheet.rows[0].get(0), &Cell::Text("ID".into()));
        let d = read_delimited(b"ID,Name\ns1,Jos\xE9\n", false).unwrap();
        assert_eq!(d.sheet.rows[1].get(1), &Cell::Text("José".into()));
        assert!(d.encoding.starts_with("ISO-8859-1"));
    }

    #[test]
    fn nearly_utf8_stays_utf8_and_utf16_is_found_without_a_mark() {
        // "Zoë" twice in UTF-8, one stray 0xE9 (a Latin-1 é) in another cell
        let d = read_delimited(
            b"ID,Name\ns1,Zo\xC3\xAB\ns2,Ren\xE9\ns3,Zo\xC3\xAB\n",
            false,
        )
        .unwrap();
        assert_eq!(d.sheet.rows[1].get(1), &Cell::Text("Zoë".into()));
        assert_eq!(d.sheet.rows[2].get(1), &Cell::Text("Ren\u{fffd}".into()));
        assert_eq!(d.damaged, Some((1, 3)));
        let utf16: Vec<u8> = "ID,Name\ns1,Zoë\n"
            .encode_utf16()
            .flat_map(u16::to_le_bytes)
            .collect();
        let d = read_delimited(&utf16, false).unwrap();
        assert_eq!(d.encoding, "UTF-16LE");
        assert_eq!(d.sheet.rows[1].get(1), &Cell::Text("Zoë".into()));
    }

    #[test]
    fn rows_are_numbered_by_line_even_across_blank_lines() {
        let d = read_delimited(b"Title\n\nID,Crude\ns1,3\n", false).unwrap();
        let idx: Vec<u32> = d.sheet.rows.iter().map(|r| r.index).collect();
        assert_eq!(idx, vec![0, 2, 3]);
    }

    #[test]
    fn blank_lines_cost_no_rows_and_keep_the_line_count() {
        // 200,000 blank lines (LF and CRLF) between a header and a row: the row is numbered by
        // its line (0-based: the header is line 0, the blanks lines 1 to 200,000)
        let mut bytes = b"ID,Crude\n".to_vec();
        for i in 0..200_000 {
            bytes.extend_from_slice(if i % 2 == 0 { b"\n" } else { b"\r\n" });
        }
        bytes.extend_from_slice(b"s1,3\n\n\n");
        let d = read_delimited(&bytes, false).unwrap();
        let idx: Vec<u32> = d.sheet.rows.iter().map(|r| r.index).collect();
        assert_eq!(idx, vec![0, 200_001]);
    }

    #[test]
    fn tabs_and_errors() {
        let d = read_delimited(b"ID\tCrude\ns1\t#DIV/0!\n", true).unwrap();
        assert_eq!(d.sheet.rows[1].get(1), &Cell::Error("#DIV/0!".into()));
        assert!(read_delimited(b"PK\x03\x04\0\0\0", false).is_err());
    }
}
