//! CSV and TSV exports: UTF-8 with or without a byte-order mark, UTF-16 from "Unicode text"
//! exports, Latin-1 (read as Windows-1252, its superset); comma, semicolon or tab delimited;
//! decimal commas where the file uses them.

use encoding_rs::{Encoding, UTF_8, WINDOWS_1252};

use super::cells::{Cell, RawRow, RawSheet};
use super::values::Decimal;

/// A delimited file decoded into one sheet, with the conventions that were found.
pub struct Delimited {
    pub sheet: RawSheet,
    pub decimal: Decimal,
    pub delimiter: u8,
    pub encoding: &'static str,
}

/// Decodes bytes to text: a byte-order mark decides, else UTF-8 if valid, else Windows-1252.
pub fn decode(bytes: &[u8]) -> (String, &'static str) {
    if let Some((enc, bom_len)) = Encoding::for_bom(bytes) {
        let (text, _) = enc.decode_without_bom_handling(&bytes[bom_len..]);
        return (text.into_owned(), enc.name());
    }
    if let Ok(s) = std::str::from_utf8(bytes) {
        (s.to_string(), UTF_8.name())
    } else {
        let (text, _) = WINDOWS_1252.decode_without_bom_handling(bytes);
        (text.into_owned(), "ISO-8859-1 (read as windows-1252)")
    }
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
        return Err("the file holds binary data, not delimited text".into());
    }
    let delimiter = sniff_delimiter(&text, is_tsv);
    let mut reader = csv::ReaderBuilder::new()
        .has_headers(false)
        .flexible(true)
        .delimiter(delimiter)
        .from_reader(text.as_bytes());
    let newlines: Vec<usize> = text
        .bytes()
        .enumerate()
        .filter(|(_, b)| *b == b'\n')
        .map(|(i, _)| i)
        .collect();
    let bytes = text.as_bytes();
    // The reader's own line count lags over blank lines: count from the record's first byte.
    let line_of = |offset: u64| {
        let mut at = offset as usize;
        while at < bytes.len() && (bytes[at] == b'\n' || bytes[at] == b'\r') {
            at += 1;
        }
        newlines.partition_point(|&n| n < at)
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
        sheet: RawSheet { name: None, rows },
        decimal,
        delimiter,
        encoding,
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
    fn rows_are_numbered_by_line_even_across_blank_lines() {
        let d = read_delimited(b"Title\n\nID,Crude\ns1,3\n", false).unwrap();
        let idx: Vec<u32> = d.sheet.rows.iter().map(|r| r.index).collect();
        assert_eq!(idx, vec![0, 2, 3]);
    }

    #[test]
    fn tabs_and_errors() {
        let d = read_delimited(b"ID\tCrude\ns1\t#DIV/0!\n", true).unwrap();
        assert_eq!(d.sheet.rows[1].get(1), &Cell::Error("#DIV/0!".into()));
        assert!(read_delimited(b"PK\x03\x04\0\0\0", false).is_err());
    }
}
