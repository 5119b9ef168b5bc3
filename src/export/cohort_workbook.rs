//! DIR/cohort-report.xlsx: the coordinator's workbook: an overview with the findings, the
//! per-section statistics with a box view of recovery and score, data quality by section and
//! assistant, the comparisons, the bench table and the grade distribution, with native charts.
//! The content is the HTML report's (`report`); like it, it names no student.
//!
//! Every table has two header rows: words for people, then the code each column has in the CSV
//! files. Columns are as wide as their headers and values; p-values read "0.0123" or
//! "< 0.0001"; every sheet prints fitted to the page's width, each chart below its table after
//! a page break, so that no chart is cut.

use std::path::Path;

use rust_xlsxwriter::{
    Chart, ChartAxisLabelPosition, ChartFont, ChartFormat, ChartSolidFill, ChartType,
    DocProperties, ExcelDateTime, Format, FormatAlign, Workbook, Worksheet, XlsxError,
};

use super::atomic::Stage;
use super::report::{self, Cell, Report, Table};
use super::ticks;
use super::workbook::fit_cell;
use crate::error::WriteError;
use crate::model::Measure;
use crate::stats::QUANTILE_DEFINITION;

/// The formats of the workbook's tables.
struct Formats {
    label: Format,
    code: Format,
    bold: Format,
    p: Format,
    decimals: Vec<Format>,
}

impl Formats {
    fn new() -> Formats {
        Formats {
            label: Format::new()
                .set_bold()
                .set_text_wrap()
                .set_align(FormatAlign::Top)
                .set_background_color(0xE8EDF1),
            code: Format::new().set_italic().set_font_color(0x666666),
            bold: Format::new().set_bold(),
            p: Format::new().set_num_format("[<0.0001]\"< 0.0001\";0.0000"),
            decimals: (0..6)
                .map(|d| {
                    let pattern = match d {
                        0 => "0".to_string(),
                        d => format!("0.{}", "0".repeat(d)),
                    };
                    Format::new().set_num_format(&pattern)
                })
                .collect(),
        }
    }
}

/// Prints a sheet landscape, fitted to the page's width.
fn print_setup(ws: &mut Worksheet) {
    ws.set_landscape();
    ws.set_print_fit_to_pages(1, 0);
    ws.set_footer("&C&A, page &P of &N");
}

/// A report table from row `top` of `ws`: words, then codes, as the two header rows; numbers
/// kept whole and shown to the column's decimals; columns sized to what they hold. Returns the
/// first row after it.
fn write_table(ws: &mut Worksheet, top: u32, t: &Table, f: &Formats) -> Result<u32, XlsxError> {
    let mut widths: Vec<usize> = t
        .columns
        .iter()
        .map(|c| c.code.len().max(c.label.len().div_ceil(2)).max(6))
        .collect();
    ws.set_row_height(top, 30)?;
    for (i, c) in t.columns.iter().enumerate() {
        ws.write_string_with_format(top, i as u16, c.label, &f.label)?;
        ws.write_string_with_format(top + 1, i as u16, c.code, &f.code)?;
    }
    let mut row = top + 2;
    for cells in &t.rows {
        for (i, (cell, c)) in cells.iter().zip(&t.columns).enumerate() {
            let col = i as u16;
            let shown = match cell {
                Cell::Text(s) => {
                    ws.write_string(row, col, fit_cell(s))?;
                    s.chars().count()
                }
                Cell::Count(n) => {
                    ws.write_number(row, col, *n as f64)?;
                    n.to_string().len()
                }
                Cell::Number(v) if v.is_finite() => {
                    let format = if c.code.starts_with("p_") {
                        &f.p
                    } else {
                        &f.decimals[c.decimals.min(5)]
                    };
                    ws.write_number_with_format(row, col, *v, format)?;
                    format!("{v:.*}", c.decimals).len().max(8)
                }
                Cell::Number(_) => 0,
            };
            widths[i] = widths[i].max(shown.min(60));
        }
        row += 1;
    }
    for (i, w) in widths.iter().enumerate() {
        ws.set_column_width(i as u16, (*w + 2) as f64)?;
    }
    ws.set_freeze_panes(top + 2, 0)?;
    Ok(row)
}

/// A chart's title in a size that fits it.
fn titled(chart: &mut Chart, title: &str) {
    chart
        .title()
        .set_name(title)
        .set_font(ChartFont::new().set_size(11).set_bold());
}

fn overview(wb: &mut Workbook, r: &Report, f: &Formats) -> Result<(), XlsxError> {
    let title = Format::new().set_bold().set_font_size(14);
    let ws = wb.add_worksheet().set_name("Overview")?;
    ws.set_column_width(0, 120)?;
    let wrap = Format::new().set_text_wrap();
    ws.write_string_with_format(0, 0, fit_cell(r.title), &title)?;
    ws.write_string(
        1,
        0,
        format!(
            "Cohort report generated {} by benchgrade. {}",
            r.generated,
            if r.quality.no_submission.is_empty() {
                "No student is named in this workbook."
            } else {
                "Students are named only on the No submission sheet (from the roster)."
            }
        ),
    )?;
    ws.write_string_with_format(2, 0, fit_cell(r.used), &wrap)?;
    ws.write_string_with_format(4, 0, "Findings", &f.bold)?;
    for (row, finding) in (5..).zip(report::findings(r)) {
        ws.write_string_with_format(row, 0, fit_cell(&finding), &wrap)?;
    }
    print_setup(ws);
    Ok(())
}

/// The statistics, and a box view of recovery and score: a stacked column from the first
/// quartile to the third, its colour changing at the median (the writer has no box plot).
fn sections(wb: &mut Workbook, r: &Report, f: &Formats) -> Result<(), XlsxError> {
    let ws = wb.add_worksheet().set_name("Sections")?;
    let row = super::workbook_summary::summary_table(ws, 0, r.stats, |_| true, &f.label)?;
    ws.write_string(
        row + 1,
        0,
        format!("Each measure leaves out the rows whose entries for it are impossible, and excused students; n, left out, excused and no value add up to the section's rows; {QUANTILE_DEFINITION}."),
    )?;
    ws.set_freeze_panes(1, 0)?;
    let at = row + 3;
    ws.set_page_breaks(&[at])?;
    let mut col = 20;
    for (k, m) in [Measure::RECOVERY, Measure::SCORE].into_iter().enumerate() {
        if let Some(chart) = box_view(ws, r, m, at, col)? {
            ws.insert_chart(at + 1, 8 * k as u16, &chart)?;
        }
        col += 5;
    }
    ws.set_print_area(0, 0, at + 22, 14)?;
    print_setup(ws);
    Ok(())
}

/// One measure's box view: its quartiles by section written from (`r`, `col`).
fn box_view(
    ws: &mut Worksheet,
    rep: &Report,
    m: Measure,
    r: u32,
    col: u16,
) -> Result<Option<Chart>, XlsxError> {
    let rows: Vec<(String, f64, f64, f64)> = rep
        .stats
        .summaries()
        .into_iter()
        .filter(|s| s.measure == m)
        .filter_map(|s| {
            let x = s.summary?;
            Some((s.section.to_string(), x.q1, x.median, x.q3))
        })
        .collect();
    if rows.is_empty() {
        return Ok(None);
    }
    for (h, text) in ["section", "q1", "median - q1", "q3 - median"]
        .iter()
        .enumerate()
    {
        ws.write_string(r, col + h as u16, *text)?;
    }
    for (i, (section, q1, med, q3)) in rows.iter().enumerate() {
        let row = r + 1 + i as u32;
        ws.write_string(row, col, fit_cell(section))?;
        ws.write_number(row, col + 1, *q1)?;
        ws.write_number(row, col + 2, med - q1)?;
        ws.write_number(row, col + 3, q3 - med)?;
    }
    let last = r + rows.len() as u32;
    let mut chart = Chart::new(ChartType::ColumnStacked);
    let sheet = "Sections";
    let fills = [None, Some(0x9DB7D5), Some(0x3B6EA8)];
    let names = ["", "first quartile to median", "median to third quartile"];
    for (k, fill) in fills.into_iter().enumerate() {
        let series = chart
            .add_series()
            .set_name(names[k])
            .set_categories((sheet, r + 1, col, last, col))
            .set_values((sheet, r + 1, col + 1 + k as u16, last, col + 1 + k as u16));
        match fill {
            Some(c) => series
                .set_format(ChartFormat::new().set_solid_fill(ChartSolidFill::new().set_color(c))),
            None => series.set_format(ChartFormat::new().set_no_fill()),
        };
    }
    let lo = rows.iter().map(|x| x.1).fold(f64::INFINITY, f64::min);
    let hi = rows.iter().map(|x| x.3).fold(f64::NEG_INFINITY, f64::max);
    let (min, max, _) = ticks::axis(lo, hi, 5);
    chart.y_axis().set_min(min).set_max(max).set_name(m.unit());
    chart.legend().set_hidden();
    titled(
        &mut chart,
        &format!("{}: quartiles by section", m.column().header()),
    );
    chart.set_width(520).set_height(320);
    Ok(Some(chart))
}

fn quality(wb: &mut Workbook, r: &Report, f: &Formats) -> Result<(), XlsxError> {
    let ws = wb.add_worksheet().set_name("Data quality")?;
    let next = write_table(
        ws,
        0,
        &report::quality_table(&r.quality.sections, "section", r.quality.with_roster),
        f,
    )?;
    if !r.quality.assistants.is_empty() {
        let t = report::quality_table(&r.quality.assistants, "assistant", r.quality.with_roster);
        write_table(ws, next + 1, &t, f)?;
        ws.set_freeze_panes(0, 0)?;
    }
    print_setup(ws);
    Ok(())
}

/// With a roster: the enrolled students of whom no row was read, by section.
fn no_submission(wb: &mut Workbook, r: &Report, f: &Formats) -> Result<(), XlsxError> {
    if !r.quality.with_roster {
        return Ok(());
    }
    let ws = wb.add_worksheet().set_name("No submission")?;
    let next = write_table(ws, 0, &report::no_submission_table(r.quality, false), f)?;
    let likely = report::no_submission_table(r.quality, true);
    if !likely.rows.is_empty() {
        write_table(ws, next + 1, &likely, f)?;
    }
    Ok(())
}

/// Unknowns identified against the key, by section and by code (a sheet only when there are any).
fn unknowns(wb: &mut Workbook, r: &Report, f: &Formats) -> Result<(), XlsxError> {
    let ids = &r.cohort.identifications;
    if ids.is_empty() {
        return Ok(());
    }
    let ws = wb.add_worksheet().set_name("Unknowns")?;
    let next = write_table(ws, 0, &report::identification_sections_table(ids), f)?;
    write_table(ws, next + 1, &report::identification_codes_table(ids), f)?;
    ws.set_freeze_panes(0, 0)?;
    print_setup(ws);
    Ok(())
}

fn comparisons(wb: &mut Workbook, r: &Report, f: &Formats) -> Result<(), XlsxError> {
    let ws = wb.add_worksheet().set_name("Comparisons")?;
    write_table(ws, 0, &report::comparisons_table(r.comparisons), f)?;
    print_setup(ws);
    Ok(())
}

fn benches(wb: &mut Workbook, r: &Report, f: &Formats) -> Result<(), XlsxError> {
    let ws = wb.add_worksheet().set_name("Benches")?;
    let next = write_table(ws, 0, &report::bias_table(r.bias), f)?;
    if !r.bias.is_empty() {
        let last = r.bias.len() as u32 + 1;
        let mut chart = Chart::new(ChartType::Bar);
        chart
            .add_series()
            .set_name("median shift (°C)")
            .set_categories(("Benches", 2, 0, last, 0))
            .set_values(("Benches", 2, 2, last, 2));
        chart.legend().set_hidden();
        // drawn across: the values run along the bottom, the benches down the side, their
        // labels at the left edge rather than on the zero line among the bars
        chart.x_axis().set_name("°C; positive: reads high");
        chart
            .y_axis()
            .set_name("bench")
            .set_label_position(ChartAxisLabelPosition::Low);
        titled(
            &mut chart,
            "Median shift of each bench's clear points from the rest",
        );
        chart.set_width(620).set_height(340);
        ws.set_page_breaks(&[next + 1])?;
        ws.insert_chart(next + 2, 0, &chart)?;
    }
    print_setup(ws);
    Ok(())
}

fn grades(wb: &mut Workbook, r: &Report, f: &Formats) -> Result<(), XlsxError> {
    let ws = wb.add_worksheet().set_name("Grades")?;
    for (c, h) in ["Letter", "Students"].iter().enumerate() {
        ws.write_string_with_format(0, c as u16, *h, &f.label)?;
    }
    for (i, (l, n)) in r.letters.iter().enumerate() {
        ws.write_string(1 + i as u32, 0, fit_cell(l))?;
        ws.write_number(1 + i as u32, 1, *n as f64)?;
    }
    if !r.letters.is_empty() {
        let last = r.letters.len() as u32;
        let most = r.letters.iter().map(|x| x.1).max().unwrap_or(0) as f64;
        let mut chart = Chart::new(ChartType::Column);
        chart
            .add_series()
            .set_name("students")
            .set_categories(("Grades", 1, 0, last, 0))
            .set_values(("Grades", 1, 1, last, 1));
        chart.legend().set_hidden();
        chart
            .y_axis()
            .set_name("Students")
            .set_min(0.0)
            .set_major_unit(ticks::count_step(most))
            .set_num_format("0");
        let n: usize = r.letters.iter().map(|x| x.1).sum();
        titled(&mut chart, &format!("Students by letter grade (n = {n})"));
        ws.insert_chart(1, 3, &chart)?;
    }
    print_setup(ws);
    Ok(())
}

fn outliers(wb: &mut Workbook, r: &Report, f: &Formats) -> Result<(), XlsxError> {
    let ws = wb.add_worksheet().set_name("Outliers")?;
    write_table(ws, 0, &report::outliers_table(r.outliers), f)?;
    print_setup(ws);
    Ok(())
}

fn build(r: &Report, timestamp: i64) -> Result<Workbook, XlsxError> {
    let mut wb = Workbook::new();
    let f = Formats::new();
    overview(&mut wb, r, &f)?;
    sections(&mut wb, r, &f)?;
    quality(&mut wb, r, &f)?;
    no_submission(&mut wb, r, &f)?;
    unknowns(&mut wb, r, &f)?;
    comparisons(&mut wb, r, &f)?;
    benches(&mut wb, r, &f)?;
    grades(&mut wb, r, &f)?;
    outliers(&mut wb, r, &f)?;
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
