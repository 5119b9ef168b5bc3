//! The write floor for benchmarks: rust_xlsxwriter writing the same cells a graded workbook
//! holds (per row: the class sheet's 8 columns, 11 recomputed numbers, 4 criteria, total, max,
//! letter and flags), in constant-memory mode, one sheet per section, nothing else, at the zip
//! level graded workbooks use.
//!
//!     cargo run --release --example bare_write -- OUT.xlsx [ROWS] [SECTIONS]

mod common;

fn main() -> Result<(), Box<dyn std::error::Error>> {
    let (out, rows, sections) =
        common::out_rows_sections("usage: bare_write OUT.xlsx [ROWS] [SECTIONS]")?;
    let out = out.as_str();
    let per = rows.div_ceil(sections);
    // the zip level graded workbooks are written with, so that the comparison is like for like
    // temporary files beside the output, as graded workbooks keep them
    let beside = std::path::Path::new(out)
        .parent()
        .filter(|p| !p.as_os_str().is_empty());
    let mut wb =
        benchgrade::export::workbook::new_workbook(beside.unwrap_or(std::path::Path::new(".")))?;
    for s in 0..sections {
        let ws = wb.add_worksheet_with_constant_memory()?;
        ws.set_name(format!("Section {:02}", s + 1))?;
        for c in 0..27u16 {
            ws.write_string(0, c, format!("Column {c}"))?;
        }
        for i in 0..per.min(rows.saturating_sub(s * per)) {
            let r = 1 + i as u32;
            let x = (s * per + i) as f64;
            ws.write_string(r, 0, format!("S{:07}", s * per + i))?;
            ws.write_string(r, 1, format!("Student {}", s * per + i))?;
            ws.write_string(r, 6, "120.5-121.7")?;
            for c in [2u16, 3, 4, 5, 7] {
                ws.write_number(r, c, x * 0.001 + f64::from(c))?;
            }
            for c in 8..25u16 {
                ws.write_number(r, c, x * 0.01 + f64::from(c))?;
            }
            ws.write_string(r, 25, "B")?;
            ws.write_string(r, 26, "")?;
        }
    }
    wb.save(out)?;
    Ok(())
}
