//! Generates an invented class workbook of any size for benchmarks and load tests:
//! one sheet per section, with a realistic share of wet, impure, mistyped and impossible rows.
//!
//!     cargo run --release --example make_class -- OUT.xlsx [ROWS] [SECTIONS]
//!
//! Defaults: 100,000 rows over 8 sections. The same arguments give the same workbook.

// a generator reads best as one long recipe
#![allow(clippy::too_many_lines)]

mod common;
use common::Lcg;

use rust_xlsxwriter::{DocProperties, ExcelDateTime, Workbook};

const HEADERS: [&str; 8] = [
    "Student ID",
    "Name",
    "Bench",
    "Crude mass (g)",
    "Recovered mass (g)",
    "Solvent volume (mL)",
    "MP range (°C)",
    "% Recovery",
];

fn round(v: f64, places: i32) -> f64 {
    let f = 10f64.powi(places);
    (v * f).round() / f
}

fn main() -> Result<(), Box<dyn std::error::Error>> {
    let (out, rows, sections) =
        common::out_rows_sections("usage: make_class OUT.xlsx [ROWS] [SECTIONS]")?;
    let out = out.as_str();
    let mut rng = Lcg(42);
    let mut wb = Workbook::new();
    let when = ExcelDateTime::from_ymd(2026, 9, 1)?;
    wb.set_properties(&DocProperties::new().set_creation_datetime(&when));
    let per = rows.div_ceil(sections);
    for s in 0..sections {
        let ws = wb.add_worksheet_with_constant_memory()?;
        ws.set_name(format!("Section {:02}", s + 1))?;
        ws.write_string(0, 0, format!("Invented class, section {:02}", s + 1))?;
        for (c, h) in HEADERS.iter().enumerate() {
            ws.write_string(2, c as u16, *h)?;
        }
        let n = per.min(rows.saturating_sub(s * per));
        for i in 0..n {
            let r = 3 + i as u32;
            let kind = rng.next();
            let crude = round(rng.between(2.2, 3.6), 2);
            let mut recovery = rng.between(0.5, 0.88);
            let mut clear = round(rng.between(120.5, 122.3), 1);
            let mut onset = round(clear - rng.between(0.4, 1.9), 1);
            if kind < 0.03 {
                recovery = rng.between(1.01, 1.15); // impossible: more than the crude
            } else if kind < 0.06 {
                recovery = rng.between(0.95, 1.05); // wet: heavy and broad
                onset = round(clear - rng.between(3.0, 5.0), 1);
            } else if kind < 0.10 {
                clear = round(clear - rng.between(2.5, 4.0), 1); // impure: depressed and broad
                onset = round(clear - rng.between(2.5, 4.0), 1);
            }
            let recovered = round(crude * recovery, 2);
            ws.write_string(r, 0, format!("S{:07}", s * per + i))?;
            ws.write_string(r, 1, format!("Student {}", s * per + i))?;
            ws.write_number(r, 2, (1 + i % 12) as f64)?;
            ws.write_number(r, 3, crude)?;
            if kind > 0.99 {
                ws.write_string(r, 4, "see notebook")?; // mistyped
            } else {
                ws.write_number(r, 4, recovered)?;
            }
            // boiling water needs about 18 mL per gram of benzoic acid; students use a little more
            ws.write_number(r, 5, round(crude * rng.between(19.0, 27.0), 0))?;
            ws.write_string(r, 6, format!("{onset:.1}-{clear:.1}"))?;
            ws.write_number(r, 7, round(100.0 * recovered / crude, 1))?;
        }
    }
    wb.save(out)?;
    Ok(())
}
