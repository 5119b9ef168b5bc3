//! The I/O floor for benchmarks: read every cell of a workbook with calamine and write them
//! back with rust_xlsxwriter (constant-memory sheets, the zip level graded workbooks use), and
//! nothing else. No tool that reads a class and writes a workbook can be faster than this.
//!
//!     cargo run --release --example io_floor -- IN.xlsx OUT.xlsx

use calamine::{open_workbook_auto, Data, Reader};

fn main() -> Result<(), Box<dyn std::error::Error>> {
    let args: Vec<String> = std::env::args().collect();
    let (Some(input), Some(output)) = (args.get(1), args.get(2)) else {
        return Err("usage: io_floor IN.xlsx OUT.xlsx".into());
    };
    let mut reader = open_workbook_auto(input)?;
    // temporary files beside the output, as graded workbooks keep them
    let beside = std::path::Path::new(output.as_str())
        .parent()
        .filter(|p| !p.as_os_str().is_empty());
    let mut out =
        benchgrade::export::workbook::new_workbook(beside.unwrap_or(std::path::Path::new(".")))?;
    let mut cells = 0usize;
    for name in reader.sheet_names() {
        let range = reader.worksheet_range(&name)?;
        let ws = out.add_worksheet_with_constant_memory()?;
        ws.set_name(&name)?;
        let (r0, c0) = range.start().unwrap_or((0, 0));
        for (r, c, d) in range.used_cells() {
            let (row, col) = (r0 + r as u32, (c0 + c as u32) as u16);
            match d {
                Data::Int(i) => ws.write_number(row, col, *i as f64)?,
                Data::Float(f) => ws.write_number(row, col, *f)?,
                Data::String(s) | Data::DateTimeIso(s) | Data::DurationIso(s) => {
                    ws.write_string(row, col, s)?
                }
                Data::Bool(b) => ws.write_boolean(row, col, *b)?,
                Data::DateTime(t) => ws.write_number(row, col, t.as_f64())?,
                Data::Error(e) => ws.write_string(row, col, format!("{e}"))?,
                Data::Empty => continue,
            };
            cells += 1;
        }
    }
    out.save(output)?;
    println!("{cells} cells");
    Ok(())
}
