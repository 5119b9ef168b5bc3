//! DIR/cohort-report.xlsx: the coordinator's workbook: an overview with the findings, the
//! per-section statistics, the comparisons, the bench table and the grade distribution, with
//! native charts. Like the HTML report it names no student.

use std::path::Path;

use rust_xlsxwriter::{
    Chart, ChartType, DocProperties, ExcelDateTime, Format, Workbook, Worksheet, XlsxError,
};

use super::report_html::Report;
use crate::error::WriteError;
use crate::stats::QUANTILE_DEFINITION;

fn header(ws: &mut Worksheet, row: u32, names: &[&str], bold: &Format) -> Result<(), XlsxError> {
    for (c, h) in names.iter().enumerate() {
        ws.write_string_with_format(row, c as u16, *h, bold)?;
    }
    Ok(())
}

fn num(ws: &mut Worksheet, r: u32, c: u16, v: f64) -> Result<(), XlsxError> {
    if v.is_finite() {
        ws.write_number(r, c, v)?;
    }
    Ok(())
}

fn build(r: &Report, timestamp: i64) -> Result<Workbook, XlsxError> {
    let mut wb = Workbook::new();
    let bold = Format::new().set_bold();
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
    ws.write_string_with_format(3, 0, "Findings", &bold)?;
    for (row, f) in (4..).zip(super::report_html::findings_text(r)) {
        ws.write_string(row, 0, f)?;
    }

    let ws = wb.add_worksheet().set_name("Sections")?;
    let row = super::workbook_summary::summary_table(ws, r.stats, |_| true, &bold)?;
    ws.write_string(
        row + 1,
        0,
        format!("Rows with impossible entries are left out; {QUANTILE_DEFINITION}."),
    )?;
    ws.set_freeze_panes(1, 0)?;

    let ws = wb.add_worksheet().set_name("Comparisons")?;
    header(ws, 0, &super::cohort_csv::COMPARISON_COLUMNS, &bold)?;
    for (i, c) in r.comparisons.iter().enumerate() {
        let row = 1 + i as u32;
        for (col, t) in [c.measure.key(), c.grouping, c.test, &c.group_a, &c.group_b]
            .into_iter()
            .enumerate()
        {
            ws.write_string(row, col as u16, t)?;
        }
        for (j, v) in [
            c.statistic,
            c.df1,
            c.df2,
            c.p_value,
            c.p_adjusted,
            c.effect_size,
        ]
        .into_iter()
        .enumerate()
        {
            num(ws, row, 5 + j as u16, v)?;
        }
    }
    ws.set_freeze_panes(1, 0)?;

    let ws = wb.add_worksheet().set_name("Benches")?;
    header(ws, 0, &super::cohort_csv::BIAS_COLUMNS, &bold)?;
    for (i, b) in r.bias.iter().enumerate() {
        let row = 1 + i as u32;
        ws.write_string(row, 0, &b.bench)?;
        ws.write_number(row, 1, b.n as f64)?;
        for (j, v) in [b.median_shift_c, b.u_statistic, b.p_value, b.p_adjusted]
            .into_iter()
            .enumerate()
        {
            num(ws, row, 2 + j as u16, v)?;
        }
        ws.write_string(row, 6, &b.finding)?;
    }
    ws.set_column_width(6, 90)?;
    if !r.bias.is_empty() {
        let last = r.bias.len() as u32;
        let mut chart = Chart::new(ChartType::Column);
        chart
            .title()
            .set_name("Median shift of each bench's clear points (°C; positive reads high)");
        chart
            .add_series()
            .set_name("shift")
            .set_categories(("Benches", 1, 0, last, 0))
            .set_values(("Benches", 1, 2, last, 2));
        chart.legend().set_hidden();
        ws.insert_chart(last + 2, 0, &chart)?;
    }

    let ws = wb.add_worksheet().set_name("Grades")?;
    header(ws, 0, &["letter", "students"], &bold)?;
    for (i, (l, n)) in r.letters.iter().enumerate() {
        ws.write_string(1 + i as u32, 0, l)?;
        ws.write_number(1 + i as u32, 1, *n as f64)?;
    }
    if !r.letters.is_empty() {
        let last = r.letters.len() as u32;
        let mut chart = Chart::new(ChartType::Column);
        chart.title().set_name("Grade distribution");
        chart
            .add_series()
            .set_name("students")
            .set_categories(("Grades", 1, 0, last, 0))
            .set_values(("Grades", 1, 1, last, 1));
        chart.legend().set_hidden();
        ws.insert_chart(1, 3, &chart)?;
    }

    let ws = wb.add_worksheet().set_name("Outliers")?;
    header(
        ws,
        0,
        &["section", "where", "measure", "value", "robust_z"],
        &bold,
    )?;
    for (i, o) in r.outliers.iter().enumerate() {
        let row = 1 + i as u32;
        ws.write_string(row, 0, &o.section)?;
        ws.write_string(row, 1, &o.place)?;
        ws.write_string(row, 2, o.measure.key())?;
        ws.write_number(row, 3, o.value)?;
        ws.write_number(row, 4, o.robust_z)?;
    }

    let when = ExcelDateTime::from_timestamp(timestamp)?;
    wb.set_properties(
        &DocProperties::new()
            .set_creation_datetime(&when)
            .set_title("Cohort report"),
    );
    Ok(wb)
}

/// Writes the cohort workbook atomically (temporary file, then rename).
pub fn write(path: &Path, r: &Report, timestamp: i64) -> Result<(), WriteError> {
    let mut wb = build(r, timestamp).map_err(|e| WriteError::other(path, e))?;
    super::atomic::save_workbook(&mut wb, path)
}
