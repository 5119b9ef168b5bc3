//! The read floor for benchmarks: open a workbook with calamine and build every sheet's cell
//! range, doing nothing else, and print the number of non-empty cells.
//!
//!     cargo run --release --example bare_read -- FILE.xlsx

use calamine::{open_workbook_auto, Data, Reader};

fn main() -> Result<(), Box<dyn std::error::Error>> {
    let path = std::env::args().nth(1).ok_or("usage: bare_read FILE")?;
    let mut wb = open_workbook_auto(&path)?;
    let mut cells = 0usize;
    for name in wb.sheet_names() {
        let range = wb.worksheet_range(&name)?;
        cells += range
            .used_cells()
            .filter(|(_, _, d)| !matches!(d, Data::Empty))
            .count();
    }
    println!("{cells} cells");
    Ok(())
}
