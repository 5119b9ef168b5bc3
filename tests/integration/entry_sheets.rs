//! Entry workbooks (`benchgrade template`) as the tests use them: typed into as an assistant
//! would, and their data-validation rules read back from the saved file.

use std::io::Read;
use std::path::Path;

/// A value typed into an entry cell.
pub enum Typed {
    Number(f64),
    Text(&'static str),
}

/// Types into a template's entry sheet as an assistant would: every text cell of the template
/// copied (calamine reads it, rust_xlsxwriter writes it back), and under each of the
/// template's own headers the value `entry(header, k)` gives for the `k`-th student (from 0).
/// The sheet's headers, and each student's (id, name) as the template holds them.
pub fn fill(
    template: &Path,
    sheet: &str,
    out: &Path,
    entry: impl Fn(&str, usize) -> Option<Typed>,
) -> (Vec<String>, Vec<(String, String)>) {
    use calamine::{open_workbook, Data, DataType, Reader, Xlsx};
    let mut wb: Xlsx<_> = open_workbook(template).unwrap();
    let range = wb.worksheet_range(sheet).unwrap();
    let header = range
        .rows()
        .position(|r| r.first() == Some(&Data::String("Student ID".into())))
        .expect("the header row");
    let heads: Vec<String> = range
        .rows()
        .nth(header)
        .unwrap()
        .iter()
        .map(ToString::to_string)
        .collect();
    let mut book = rust_xlsxwriter::Workbook::new();
    let ws = book.add_worksheet();
    ws.set_name(sheet).unwrap();
    let mut students = Vec::new();
    for (r, row) in range.rows().enumerate() {
        for (c, cell) in row.iter().enumerate() {
            if let Data::String(s) = cell {
                ws.write_string(r as u32, c as u16, s).unwrap();
            }
        }
        // the header and units rows, and any row without a student, are left as they are
        if r <= header + 1 || row.first().is_none_or(DataType::is_empty) {
            continue;
        }
        let k = students.len();
        students.push((row[0].to_string(), row[1].to_string()));
        for (c, h) in heads.iter().enumerate() {
            let (r, c) = (r as u32, c as u16);
            match entry(h, k) {
                Some(Typed::Number(v)) => ws.write_number(r, c, v).map(|_| ()).unwrap(),
                Some(Typed::Text(t)) => ws.write_string(r, c, t).map(|_| ()).unwrap(),
                None => {}
            }
        }
    }
    book.save(out).unwrap();
    (heads, students)
}

/// The text of one part of a saved workbook ("xl/worksheets/sheet2.xml").
pub fn part(workbook: &Path, name: &str) -> String {
    let mut zip = zip::ZipArchive::new(std::fs::File::open(workbook).unwrap()).unwrap();
    let mut xml = String::new();
    zip.by_name(name).unwrap().read_to_string(&mut xml).unwrap();
    xml
}

/// The data-validation rules of a sheet's XML, each as its own XML text.
pub fn rules(xml: &str) -> Vec<String> {
    xml.split("<dataValidation ")
        .skip(1)
        .map(|r| r.split("</dataValidation>").next().unwrap_or(r).to_string())
        .collect()
}

/// The rule whose input message is titled `title`.
pub fn rule<'a>(rules: &'a [String], title: &str) -> Option<&'a String> {
    rules
        .iter()
        .find(|r| r.contains(&format!("promptTitle=\"{title}\"")))
}
