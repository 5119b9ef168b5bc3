//! DIR/cohort-report.xlsx: the coordinator's workbook: an overview with the findings, the
//! per-section statistics, the comparisons, the bench table and the grade distribution, with
//! native charts. The content is the HTML report's (`report`); like it, it names no student.

use std::path::Path;

use rust_xlsxwriter::{
    Chart, ChartType, DocProperties, ExcelDateTime, Format, Workbook, Worksheet, XlsxError,
};

use super::atomic::Stage;
use super::report::{self, Cell, Report, Table};
use crate::error::WriteError;
use crate::stats::QUANTILE_DEFINITION;

fn header(ws: &mut Worksheet, row: u32, names: &[&str], bold: &Format) -> Result<(), XlsxError> {
    for (c, h) in names.iter().enumerate() {
        ws.write_string_with_format(row, c as u16, *h, bold)?;
    }
    Ok(())
}

/// A report table from the top of `ws`: its codes as the header, numbers kept whole.
fn write_table(ws: &mut Worksheet, t: &Table, bold: &Format) -> Result<(), XlsxError> {
    let codes: Vec<&str> = t.columns.iter().map(|c| c.code).collect();
    header(ws, 0, &codes, bold)?;
    for (row, cells) in (1..).zip(&t.rows) {
        for (col, cell) in (0..).zip(cells) {
            match cell {
                Cell::Text(s) => {
                    ws.write_string(row, col, s)?;
                }
                Cell::Count(n) => {
                    ws.write_number(row, col, *n as f64)?;
                }
                Cell::Number(v) if v.is_finite() => {
                    ws.write_number(row, col, *v)?;
                }
                Cell::Number(_) => {}
            }
        }
    }
    Ok(())
}

/// A column chart of one series, labels in column `labels`, values in column `values`.
fn column_chart(
    sheet: &str,
    title: &str,
    name: &str,
    last: u32,
    labels: u16,
    values: u16,
) -> Chart {
    let mut chart = Chart::new(ChartType::Column);
    chart.title().set_name(title);
    chart
        .add_series()
        .set_name(name)
        .set_categories((sheet, 1, labels, last, labels))
        .set_values((sheet, 1, values, last, values));
    chart.legend().set_hidden();
    chart
}

fn overview(wb: &mut Workbook, r: &Report, bold: &Format) -> Result<(), XlsxError> {
    let title = Format::new().set_bold().set_font_size(14);
    let ws = wb.add_worksheet().set_name("Overview")?;
    ws.set_column_width(0, 110)?;
    ws.write_string_with_format(0, 0, r.title, &title)?;
    ws.write_string(
        1,
        0,
        format!(
            "Cohort report generated {} by benchgrade. No student is named in this workbook.",
            r.generated
        ),
    )?;
    ws.write_string(2, 0, r.used)?;
    ws.write_string_with_format(4, 0, "Findings", bold)?;
    for (row, f) in (5..).zip(report::findings(r)) {
        ws.write_string(row, 0, f)?;
    }
    Ok(())
}

fn sections(wb: &mut Workbook, r: &Report, bold: &Format) -> Result<(), XlsxError> {
    let ws = wb.add_worksheet().set_name("Sections")?;
    let row = super::workbook_summary::summary_table(ws, 0, r.stats, |_| true, bold)?;
    ws.write_string(
        row + 1,
        0,
        format!("Rows with impossible entries are left out; {QUANTILE_DEFINITION}."),
    )?;
    ws.set_freeze_panes(1, 0)?;
    Ok(())
}

fn comparisons(wb: &mut Workbook, r: &Report, bold: &Format) -> Result<(), XlsxError> {
    let ws = wb.add_worksheet().set_name("Comparisons")?;
    write_table(ws, &report::comparisons_table(r.comparisons), bold)?;
    ws.set_freeze_panes(1, 0)?;
    Ok(())
}

fn benches(wb: &mut Workbook, r: &Report, bold: &Format) -> Result<(), XlsxError> {
    let ws = wb.add_worksheet().set_name("Benches")?;
    write_table(ws, &report::bias_table(r.bias), bold)?;
    ws.set_column_width(6, 90)?;
    if !r.bias.is_empty() {
        let last = r.bias.len() as u32;
        let title = "Median shift of each bench's clear points (°C; positive reads high)";
        ws.insert_chart(
            last + 2,
            0,
            &column_chart("Benches", title, "shift", last, 0, 2),
        )?;
    }
    Ok(())
}

fn grades(wb: &mut Workbook, r: &Report, bold: &Format) -> Result<(), XlsxError> {
    let ws = wb.add_worksheet().set_name("Grades")?;
    header(ws, 0, &["letter", "students"], bold)?;
    for (i, (l, n)) in r.letters.iter().enumerate() {
        ws.write_string(1 + i as u32, 0, l)?;
        ws.write_number(1 + i as u32, 1, *n as f64)?;
    }
    if !r.letters.is_empty() {
        let last = r.letters.len() as u32;
        let chart = column_chart("Grades", "Grade distribution", "students", last, 0, 1);
        ws.insert_chart(1, 3, &chart)?;
    }
    Ok(())
}

fn outliers(wb: &mut Workbook, r: &Report, bold: &Format) -> Result<(), XlsxError> {
    let ws = wb.add_worksheet().set_name("Outliers")?;
    write_table(ws, &report::outliers_table(r.outliers), bold)
}

fn build(r: &Report, timestamp: i64) -> Result<Workbook, XlsxError> {
    let mut wb = Workbook::new();
    let bold = Format::new().set_bold();
    overview(&mut wb, r, &bold)?;
    sections(&mut wb, r, &bold)?;
    comparisons(&mut wb, r, &bold)?;
    benches(&mut wb, r, &bold)?;
    grades(&mut wb, r, &bold)?;
    outliers(&mut wb, r, &bold)?;
    let when = ExcelDateTime::from_timestamp(timestamp)?;
    wb.set_properties(
        &DocProperties::new()
            .set_creation_datetime(&when)
            .set_title("Cohort report"),
    );
    Ok(wb)
}

/// Writes the cohort workbook atomically (temporary file, then rename).
pub fn write(path: &Path, r: &Report, timestamp: i64, stage: &Stage) -> Result<(), WriteError> {
    let mut wb = build(r, timestamp).map_err(|e| WriteError::other(path, e))?;
    super::atomic::save_workbook(&mut wb, path, stage)
}
