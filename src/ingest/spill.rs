//! The first pass's record of what the readers produced, so that the grading pass replays it
//! instead of unzipping and parsing every workbook a second time.
//!
//! Grading needs each section's centres before the first row is flagged, so a batch is read
//! twice. Parsing spreadsheet XML is most of a read; replaying the same events from a compact
//! file costs a small part of it, keeps memory to one sheet at a time, and guarantees that both
//! passes see the same cells even if an input changes in between. The format is private to one
//! run: tagged records of little-endian numbers and length-prefixed UTF-8.

use std::fs::File;
use std::io::{self, BufReader, BufWriter, Read, Write};
use std::path::{Path, PathBuf};

use super::cells::{Cell, Merge, RawRow, RawSheet};
use super::values::Decimal;
use super::{Event, Problem, SheetData};

const SHEET: u8 = 0;
const PROBLEM: u8 = 1;
const FILE_DONE: u8 = 2;

/// Writes events to a temporary file that is removed when this value (or the `Replay` made
/// from it) is dropped. A failed write only disables the record: the grading pass then reads
/// the inputs again.
pub struct SpillWriter {
    path: PathBuf,
    out: Option<BufWriter<File>>,
}

impl SpillWriter {
    /// Creates `.first-pass.PID.partial` in `dir` (swept like any temporary file if the run is
    /// killed). `None` if the file cannot be created.
    pub fn create(dir: &Path) -> Option<SpillWriter> {
        let path = crate::files::partial_path(dir, Path::new("first-pass"));
        let file = crate::files::create_new(&path).ok()?;
        Some(SpillWriter {
            path,
            out: Some(BufWriter::with_capacity(1 << 16, file)),
        })
    }

    /// Records one event; on an I/O error the record is abandoned.
    pub fn record(&mut self, event: &Event) {
        if let Some(out) = self.out.as_mut() {
            if encode(out, event).is_err() {
                self.out = None;
            }
        }
    }

    /// The finished record, ready to replay; `None` if any write failed.
    pub fn finish(mut self) -> Option<Replay> {
        let out = self.out.take()?;
        out.into_inner().ok()?;
        Some(Replay {
            path: std::mem::take(&mut self.path),
        })
    }
}

impl Drop for SpillWriter {
    fn drop(&mut self) {
        if !self.path.as_os_str().is_empty() {
            let _ = std::fs::remove_file(&self.path);
        }
    }
}

/// A finished record; the file is removed on drop.
pub struct Replay {
    path: PathBuf,
}

impl Drop for Replay {
    fn drop(&mut self) {
        let _ = std::fs::remove_file(&self.path);
    }
}

impl Replay {
    /// Hands every recorded event to `emit`, in the order recorded, until `emit` returns false.
    /// A record that cannot be read back becomes one fatal problem naming it.
    pub fn replay(&self, emit: &mut dyn FnMut(Event) -> bool) {
        let result = File::open(&self.path).and_then(|f| {
            let mut input = BufReader::with_capacity(1 << 16, f);
            while let Some(event) = decode(&mut input)? {
                if !emit(event) {
                    break;
                }
            }
            Ok(())
        });
        if let Err(e) = result {
            emit(Event::Problem(Problem {
                file: self.path.display().to_string(),
                sheet: None,
                message: format!("the first pass's temporary record could not be read back ({e}); grade the batch again"),
                fatal: true,
            }));
        }
    }
}

fn put_len(out: &mut impl Write, mut n: u64) -> io::Result<()> {
    // LEB128: seven bits a byte, high bit set on all but the last
    let mut buf = [0u8; 10];
    let mut i = 0;
    loop {
        let byte = (n & 0x7f) as u8;
        n >>= 7;
        if n == 0 {
            buf[i] = byte;
            i += 1;
            break;
        }
        buf[i] = byte | 0x80;
        i += 1;
    }
    out.write_all(&buf[..i])
}

fn put_str(out: &mut impl Write, s: &str) -> io::Result<()> {
    put_len(out, s.len() as u64)?;
    out.write_all(s.as_bytes())
}

fn put_opt(out: &mut impl Write, s: Option<&str>) -> io::Result<()> {
    match s {
        Some(s) => {
            out.write_all(&[1])?;
            put_str(out, s)
        }
        None => out.write_all(&[0]),
    }
}

fn put_cell(out: &mut impl Write, cell: &Cell) -> io::Result<()> {
    match cell {
        Cell::Empty => out.write_all(&[0]),
        Cell::Number(v) => {
            out.write_all(&[1])?;
            out.write_all(&v.to_le_bytes())
        }
        Cell::Text(t) => {
            out.write_all(&[2])?;
            put_str(out, t)
        }
        Cell::Error(t) => {
            out.write_all(&[3])?;
            put_str(out, t)
        }
        Cell::Date(t) => {
            out.write_all(&[4])?;
            put_str(out, t)
        }
        Cell::Bool(b) => out.write_all(&[5, u8::from(*b)]),
        Cell::Percent(v) => {
            out.write_all(&[6])?;
            out.write_all(&v.to_le_bytes())
        }
    }
}

fn encode(out: &mut impl Write, event: &Event) -> io::Result<()> {
    match event {
        Event::Sheet(d) => {
            out.write_all(&[SHEET])?;
            put_str(out, &d.source)?;
            put_opt(out, d.sheet.name.as_deref())?;
            put_str(out, &d.default_section)?;
            out.write_all(&[u8::from(d.decimal == Decimal::Comma)])?;
            put_opt(out, d.encoding.as_deref())?;
            put_len(out, d.sheet.rows.len() as u64)?;
            for row in &d.sheet.rows {
                put_len(out, u64::from(row.index))?;
                put_len(out, row.cells.len() as u64)?;
                for (col, cell) in &row.cells {
                    put_len(out, u64::from(*col))?;
                    put_cell(out, cell)?;
                }
            }
            put_len(out, d.sheet.merges.len() as u64)?;
            for m in &d.sheet.merges {
                for v in [m.row, m.first, m.last] {
                    put_len(out, u64::from(v))?;
                }
            }
            Ok(())
        }
        Event::Problem(p) => {
            out.write_all(&[PROBLEM])?;
            put_str(out, &p.file)?;
            put_opt(out, p.sheet.as_deref())?;
            put_str(out, &p.message)?;
            out.write_all(&[u8::from(p.fatal)])
        }
        Event::FileDone(source) => {
            out.write_all(&[FILE_DONE])?;
            put_str(out, source)
        }
    }
}

fn corrupt(what: &str) -> io::Error {
    io::Error::new(
        io::ErrorKind::InvalidData,
        format!("corrupt record: {what}"),
    )
}

fn byte(input: &mut impl Read) -> io::Result<u8> {
    let mut b = [0u8];
    input.read_exact(&mut b)?;
    Ok(b[0])
}

fn get_len(input: &mut impl Read) -> io::Result<u64> {
    let mut n = 0u64;
    for shift in (0..64).step_by(7) {
        let b = byte(input)?;
        n |= u64::from(b & 0x7f) << shift;
        if b & 0x80 == 0 {
            return Ok(n);
        }
    }
    Err(corrupt("length"))
}

fn get_u32(input: &mut impl Read) -> io::Result<u32> {
    u32::try_from(get_len(input)?).map_err(|_| corrupt("index"))
}

fn get_str(input: &mut impl Read) -> io::Result<String> {
    let len = get_len(input)?;
    let mut bytes = Vec::with_capacity(usize::try_from(len.min(1 << 20)).unwrap_or(0));
    input.take(len).read_to_end(&mut bytes)?;
    if bytes.len() as u64 != len {
        return Err(corrupt("truncated text"));
    }
    String::from_utf8(bytes).map_err(|_| corrupt("text"))
}

fn get_opt(input: &mut impl Read) -> io::Result<Option<String>> {
    match byte(input)? {
        0 => Ok(None),
        1 => get_str(input).map(Some),
        _ => Err(corrupt("option")),
    }
}

fn get_cell(input: &mut impl Read) -> io::Result<Cell> {
    Ok(match byte(input)? {
        0 => Cell::Empty,
        1 => {
            let mut b = [0u8; 8];
            input.read_exact(&mut b)?;
            Cell::Number(f64::from_le_bytes(b))
        }
        2 => Cell::Text(get_str(input)?),
        3 => Cell::Error(get_str(input)?),
        4 => Cell::Date(get_str(input)?),
        5 => Cell::Bool(byte(input)? != 0),
        6 => {
            let mut b = [0u8; 8];
            input.read_exact(&mut b)?;
            Cell::Percent(f64::from_le_bytes(b))
        }
        _ => return Err(corrupt("cell")),
    })
}

fn get_sheet(input: &mut impl Read) -> io::Result<SheetData> {
    let source = get_str(input)?;
    let name = get_opt(input)?;
    let default_section = get_str(input)?;
    let decimal = if byte(input)? == 1 {
        Decimal::Comma
    } else {
        Decimal::Point
    };
    let encoding = get_opt(input)?;
    let n = get_len(input)?;
    let mut rows = Vec::with_capacity(usize::try_from(n.min(1 << 20)).unwrap_or(0));
    for _ in 0..n {
        let index = get_u32(input)?;
        let k = get_len(input)?;
        let mut cells = Vec::with_capacity(usize::try_from(k.min(1 << 14)).unwrap_or(0));
        for _ in 0..k {
            cells.push((get_u32(input)?, get_cell(input)?));
        }
        rows.push(RawRow { index, cells });
    }
    let m = get_len(input)?;
    let mut merges = Vec::with_capacity(usize::try_from(m.min(1 << 10)).unwrap_or(0));
    for _ in 0..m {
        merges.push(Merge {
            row: get_u32(input)?,
            first: get_u32(input)?,
            last: get_u32(input)?,
        });
    }
    Ok(SheetData {
        source,
        sheet: RawSheet { name, rows, merges },
        default_section,
        decimal,
        encoding,
    })
}

/// The next event, or `None` at a clean end of the record.
fn decode(input: &mut impl Read) -> io::Result<Option<Event>> {
    let mut tag = [0u8];
    if input.read(&mut tag)? == 0 {
        return Ok(None);
    }
    Ok(Some(match tag[0] {
        SHEET => Event::Sheet(get_sheet(input)?),
        PROBLEM => Event::Problem(Problem {
            file: get_str(input)?,
            sheet: get_opt(input)?,
            message: get_str(input)?,
            fatal: byte(input)? != 0,
        }),
        FILE_DONE => Event::FileDone(get_str(input)?),
        _ => return Err(corrupt("event")),
    }))
}

#[cfg(test)]
mod tests {
    use super::*;
    use proptest::prelude::*;

    fn cell() -> impl Strategy<Value = Cell> {
        prop_oneof![
            Just(Cell::Empty),
            any::<f64>().prop_map(Cell::Number),
            ".*".prop_map(Cell::Text),
            ".*".prop_map(Cell::Error),
            ".*".prop_map(Cell::Date),
            any::<bool>().prop_map(Cell::Bool),
            any::<f64>().prop_map(Cell::Percent),
        ]
    }

    fn sheet() -> impl Strategy<Value = SheetData> {
        let row = (
            any::<u32>(),
            prop::collection::vec((any::<u32>(), cell()), 0..6),
        )
            .prop_map(|(index, cells)| RawRow { index, cells });
        (
            ".*",
            prop::option::of(".*"),
            ".*",
            any::<bool>(),
            prop::option::of(".*"),
            prop::collection::vec(row, 0..6),
            prop::collection::vec((any::<u32>(), any::<u32>(), any::<u32>()), 0..3),
        )
            .prop_map(
                |(source, name, default_section, comma, encoding, rows, merges)| SheetData {
                    source,
                    sheet: RawSheet {
                        name,
                        rows,
                        merges: merges
                            .into_iter()
                            .map(|(row, first, last)| Merge { row, first, last })
                            .collect(),
                    },
                    default_section,
                    decimal: if comma {
                        Decimal::Comma
                    } else {
                        Decimal::Point
                    },
                    encoding,
                },
            )
    }

    /// Field by field, numbers by their bits (a NaN must come back as the same NaN).
    fn same(a: &Event, b: &Event) -> bool {
        let cells_eq = |x: &Cell, y: &Cell| match (x, y) {
            (Cell::Number(p), Cell::Number(q)) | (Cell::Percent(p), Cell::Percent(q)) => {
                p.to_bits() == q.to_bits()
            }
            _ => x == y,
        };
        match (a, b) {
            (Event::Sheet(x), Event::Sheet(y)) => {
                x.source == y.source
                    && x.sheet.name == y.sheet.name
                    && x.default_section == y.default_section
                    && x.decimal == y.decimal
                    && x.encoding == y.encoding
                    && x.sheet.merges == y.sheet.merges
                    && x.sheet.rows.len() == y.sheet.rows.len()
                    && x.sheet.rows.iter().zip(&y.sheet.rows).all(|(r, s)| {
                        r.index == s.index
                            && r.cells.len() == s.cells.len()
                            && r.cells
                                .iter()
                                .zip(&s.cells)
                                .all(|((c, v), (d, w))| c == d && cells_eq(v, w))
                    })
            }
            (Event::Problem(x), Event::Problem(y)) => x == y,
            (Event::FileDone(x), Event::FileDone(y)) => x == y,
            _ => false,
        }
    }

    proptest! {
        #[test]
        fn events_come_back_as_recorded(sheets in prop::collection::vec(sheet(), 0..4), msg in ".*") {
            let dir = tempfile::tempdir().unwrap();
            let mut events: Vec<Event> = sheets.into_iter().map(Event::Sheet).collect();
            events.push(Event::Problem(Problem { file: "a.xlsx".into(), sheet: Some(msg.clone()), message: msg, fatal: true }));
            events.push(Event::FileDone("a.xlsx".into()));
            let mut w = SpillWriter::create(dir.path()).unwrap();
            for e in &events {
                w.record(e);
            }
            let replay = w.finish().unwrap();
            let mut back = Vec::new();
            replay.replay(&mut |e| { back.push(e); true });
            prop_assert_eq!(back.len(), events.len());
            for (a, b) in events.iter().zip(&back) {
                prop_assert!(same(a, b));
            }
        }
    }

    #[test]
    fn a_damaged_record_is_one_fatal_problem_and_files_are_removed() {
        let dir = tempfile::tempdir().unwrap();
        let mut w = SpillWriter::create(dir.path()).unwrap();
        w.record(&Event::FileDone("a.csv".into()));
        let replay = w.finish().unwrap();
        let path = std::fs::read_dir(dir.path())
            .unwrap()
            .next()
            .unwrap()
            .unwrap()
            .path();
        std::fs::write(&path, [SHEET, 200]).unwrap();
        let mut back = Vec::new();
        replay.replay(&mut |e| {
            back.push(e);
            true
        });
        assert!(matches!(&back[..], [Event::Problem(p)] if p.fatal));
        drop(replay);
        assert_eq!(std::fs::read_dir(dir.path()).unwrap().count(), 0);
    }
}
