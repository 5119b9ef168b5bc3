//! The sheets that close every graded workbook: the statistics of each section with native
//! charts, and the provenance (tool, rubric and inputs with their SHA-256, time of grading).
//! Added once the batch has ended, when the statistics are known.

use rust_xlsxwriter::{Chart, ChartType, Format, Workbook, Worksheet, XlsxError};

use super::provenance::Provenance;
use super::workbook::{computed_position, fit_cell, write_opt, Book, Formats};
use crate::model::{columns, Measure};
use crate::stats::sections::SectionStats;
use crate::stats::{histogram, QUANTILE_DEFINITION};

pub(super) fn statistics_sheet(
    book: &mut Book,
    stats: &SectionStats,
    f: &Formats,
) -> Result<(), XlsxError> {
    let data_sheets: Vec<(String, u32, usize)> = book
        .sheets
        .iter()
        .map(|s| (s.name.clone(), s.next_row, s.originals))
        .collect();
    let sections = book.sections.clone();
    let ws = book.workbook.add_worksheet();
    // reserved: no section sheet can be named so
    let name = "Statistics".to_string();
    ws.set_name(&name)?;
    ws.set_column_width(0, 16)?;
    ws.set_column_width(1, 18)?;
    let mut r = summary_table(ws, stats, |s| sections.iter().any(|x| x == s), &f.header)?;
    r += 1;
    ws.write_string(r, 0, format!("Each measure leaves out the rows whose entries for it are impossible (excluded) and every excused student; the score counts every graded student; {QUANTILE_DEFINITION}; sd and ci95 use n - 1."))?;
    r += 2;
    ws.write_string_with_format(r, 0, "Flag counts", &f.bold)?;
    r += 1;
    for section in &sections {
        if let Some(g) = stats.groups.get(section) {
            for (code, n) in &g.flags {
                ws.write_string(r, 0, fit_cell(section))?;
                ws.write_string(r, 1, *code)?;
                ws.write_number(r, 2, *n as f64)?;
                r += 1;
            }
        }
    }
    r += 1;
    ws.write_string_with_format(r, 0, "Rows left out of the statistics", &f.bold)?;
    r += 1;
    for section in &sections {
        if let Some(g) = stats.groups.get(section) {
            ws.write_string(r, 0, fit_cell(section))?;
            ws.write_number(r, 2, g.excluded.len() as f64)?;
            r += 1;
            for e in &g.excluded {
                ws.write_string(r, 1, fit_cell(e))?;
                r += 1;
            }
        }
    }
    charts(ws, &name, &sections, stats, &data_sheets, r + 2)
}

/// The per-section statistics as a table from the top of `ws`, for the sections `keep` accepts;
/// returns the first row after it. Shared by the graded and the cohort workbooks.
pub(crate) fn summary_table(
    ws: &mut Worksheet,
    stats: &SectionStats,
    keep: impl Fn(&str) -> bool,
    header: &Format,
) -> Result<u32, XlsxError> {
    let stats_columns = crate::stats::SUMMARY_COLUMNS.len() as u16;
    let headers = crate::stats::SUMMARY_COLUMNS
        .iter()
        .chain(&crate::stats::LEFT_OUT_COLUMNS);
    for (c, h) in headers.enumerate() {
        ws.write_string_with_format(0, c as u16, *h, header)?;
    }
    let mut r = 1;
    for row in stats.summaries().into_iter().filter(|x| keep(x.section)) {
        ws.write_string(r, 0, fit_cell(row.section))?;
        ws.write_string(r, 1, row.measure.key())?;
        ws.write_number(r, 2, row.summary.as_ref().map_or(0.0, |s| s.n as f64))?;
        for (i, v) in row
            .summary
            .iter()
            .flat_map(super::super::stats::Summary::values)
            .enumerate()
        {
            write_opt(ws, r, 3 + i as u16, v)?;
        }
        ws.write_number(r, stats_columns, row.excluded as f64)?;
        ws.write_number(r, stats_columns + 1, row.excused as f64)?;
        r += 1;
    }
    Ok(r)
}

/// A column chart with its title and axis names.
fn column_chart(title: &str, x: &str, y: &str) -> Chart {
    let mut c = Chart::new(ChartType::Column);
    c.title().set_name(title);
    c.x_axis().set_name(x);
    c.y_axis().set_name(y);
    c
}

/// Histograms binned by us (the writer has no histogram type), drawn as column charts, and a
/// scatter of recovery against range width read from the section sheets.
fn charts(
    ws: &mut Worksheet,
    name: &str,
    sections: &[String],
    stats: &SectionStats,
    data: &[(String, u32, usize)],
    start: u32,
) -> Result<(), XlsxError> {
    let (recovery, score) = histograms(ws, name, sections, stats, start)?;
    let r = start + 14;
    ws.insert_chart(r, 0, &recovery)?;
    ws.insert_chart(r, 8, &score)?;
    ws.insert_chart(r + 16, 0, &scatter(data))?;
    Ok(())
}

/// The recovery and score histograms of every section, their bins written from row `r`.
fn histograms(
    ws: &mut Worksheet,
    name: &str,
    sections: &[String],
    stats: &SectionStats,
    r: u32,
) -> Result<(Chart, Chart), XlsxError> {
    ws.write_string(r, 0, "Recovery bins (%)")?;
    let bins = histogram(&[], 0.0, 10.0, 11);
    for (i, (lo, hi, _)) in bins.iter().enumerate() {
        ws.write_string(r + 1 + i as u32, 0, format!("{lo:.0}-{hi:.0}"))?;
    }
    let title = "Recovery by section (rows without impossible entries)";
    let mut recovery = column_chart(title, "Recovery (%)", "Students");
    let x = "Score (% of maximum, bins of 10)";
    let mut score = column_chart("Score distribution", x, "Students");
    ws.write_string(r, 14, "Score bins")?;
    for i in 0..11 {
        ws.write_string(r + 1 + i, 14, format!("{}-{}", i * 10, i * 10 + 10))?;
    }
    for (k, section) in sections.iter().enumerate() {
        let Some(g) = stats.groups.get(section) else {
            continue;
        };
        let columns = [
            (&mut recovery, 0, 1, Measure::RECOVERY),
            (&mut score, 14, 15, Measure::SCORE),
        ];
        for (chart, labels, first, measure) in columns {
            let Some(values) = g.values(stats, measure) else {
                continue;
            };
            let col = (labels, first + k as u16);
            histogram_series(ws, chart, (name, r), col, section, values)?;
        }
    }
    Ok((recovery, score))
}

/// Recovery against range width, a series per section sheet, read from the sheets' cells.
fn scatter(data: &[(String, u32, usize)]) -> Chart {
    let mut scatter = Chart::new(ChartType::Scatter);
    scatter.title().set_name("Recovery against range width");
    scatter.x_axis().set_name("Range width (°C)");
    scatter.y_axis().set_name("Recovery (%)");
    let at = |c: &columns::Column| computed_position(c);
    let (Some(width_at), Some(rec_at)) = (at(&columns::RANGE_WIDTH_C), at(&columns::RECOVERY_PCT))
    else {
        return scatter;
    };
    for (sheet, rows, originals) in data {
        if *rows < 2 {
            continue;
        }
        let width_col = *originals as u16 + width_at;
        let rec_col = *originals as u16 + rec_at;
        scatter
            .add_series()
            .set_name(sheet.as_str())
            .set_categories((sheet.as_str(), 1, width_col, rows - 1, width_col))
            .set_values((sheet.as_str(), 1, rec_col, rows - 1, rec_col));
    }
    scatter
}

pub(super) fn provenance_sheet(
    wb: &mut Workbook,
    p: &Provenance,
    book_notes: &[String],
    f: &Formats,
) -> Result<(), XlsxError> {
    let ws = wb.add_worksheet();
    ws.set_name("Provenance")?;
    ws.set_column_width(0, 22)?;
    ws.set_column_width(1, 60)?;
    ws.set_column_width(2, 68)?;
    let mut r = 0;
    let (calibration, calibration_sha) = match &p.calibration {
        Some((file, sha)) => (file.clone(), sha.clone()),
        None => ("none".to_string(), String::new()),
    };
    for (k, v) in [
        ("tool", format!("benchgrade {}", p.version)),
        ("graded at (UTC)", p.time_text.clone()),
        ("title", p.title.clone()),
        ("experiment", p.experiment.clone()),
        ("rubric", p.rubric.clone()),
        ("rubric SHA-256", p.rubric_sha256.clone()),
        ("calibration", calibration),
        ("calibration SHA-256", calibration_sha),
    ] {
        ws.write_string_with_format(r, 0, k, &f.bold)?;
        ws.write_string(r, 1, &v)?;
        r += 1;
    }
    r += 1;
    ws.write_string_with_format(r, 0, "input", &f.bold)?;
    ws.write_string_with_format(r, 2, "SHA-256", &f.bold)?;
    r += 1;
    for (file, sha) in &p.inputs {
        ws.write_string(r, 1, fit_cell(file))?;
        ws.write_string(r, 2, sha)?;
        r += 1;
    }
    r += 1;
    for note in p.notes.iter().chain(book_notes) {
        ws.write_string(r, 0, fit_cell(note))?;
        r += 1;
    }
    Ok(())
}

/// One section's column of 11 ten-wide bins from 0, written at `(row, column)` below its name
/// and added to `chart` as a series over the bin labels in `columns.0`.
fn histogram_series(
    ws: &mut Worksheet,
    chart: &mut Chart,
    (sheet, r): (&str, u32),
    (labels, col): (u16, u16),
    section: &str,
    values: &[f64],
) -> Result<(), XlsxError> {
    ws.write_string(r, col, fit_cell(section))?;
    for (i, (_, _, n)) in histogram(values, 0.0, 10.0, 11).iter().enumerate() {
        ws.write_number(r + 1 + i as u32, col, *n as f64)?;
    }
    chart
        .add_series()
        .set_name(fit_cell(section).as_ref())
        .set_categories((sheet, r + 1, labels, r + 11, labels))
        .set_values((sheet, r + 1, col, r + 11, col));
    Ok(())
}
