//! The sheets that close every graded workbook: the statistics of each section, for people
//! (labels with units, numbers to a sensible precision, native charts placed so that each
//! prints whole), and the provenance (tool, rubric, calibration and inputs with their SHA-256,
//! time of grading). Added once the batch has ended, when the statistics are known.

use rust_xlsxwriter::{Chart, ChartFont, ChartType, Format, Workbook, Worksheet, XlsxError};

use super::provenance::Provenance;
use super::ticks;
use super::workbook::{fit_cell, write_opt, Book, Formats};
use crate::model::{Flag, Measure};
use crate::stats::sections::{SectionStats, SectionSummary};
use crate::stats::{histogram, QUANTILE_DEFINITION};

/// The statistics table's headers, for people; the columns of section-stats.csv in order.
pub const STAT_LABELS: [&str; 17] = [
    "Section",
    "Measure",
    "n",
    "Mean",
    "SD",
    "SEM",
    "Median",
    "Q1",
    "Q3",
    "Min",
    "Max",
    "95 % CI, low",
    "95 % CI, high",
    "Left out (impossible)",
    "Excused",
    "No value",
    "No submission",
];

/// Where the charts' own numbers are written: to the right of what is printed.
const DATA_COLUMN: u16 = 20;
/// Most points a section puts in the scatter plot.
const MOST_POINTS: usize = 100_000;

/// Rows a band of charts takes, one band a printed page.
const BAND_ROWS: u32 = 24;

/// A measure as a person reads it: "Recovery (%)".
pub fn measure_label(m: Measure) -> String {
    m.column().header()
}

/// A number format for a statistic of a measure shown to `decimals`.
fn decimals_format(decimals: u8) -> Format {
    let pattern = match decimals {
        0 => "0".to_string(),
        d => format!("0.{}", "0".repeat(usize::from(d))),
    };
    Format::new().set_num_format(&pattern)
}

/// The per-section statistics as a table from row `r` of `ws`, for the sections `keep` accepts;
/// returns the first row after it. Shared by the graded and the cohort workbooks.
pub(crate) fn summary_table(
    ws: &mut Worksheet,
    r: u32,
    stats: &SectionStats,
    keep: impl Fn(&str) -> bool,
    header: &Format,
) -> Result<u32, XlsxError> {
    ws.set_row_height(r, 30)?;
    for (c, h) in STAT_LABELS.iter().enumerate() {
        ws.write_string_with_format(r, c as u16, *h, header)?;
    }
    ws.set_column_width(0, 16)?;
    ws.set_column_width(1, 18)?;
    for c in 2..STAT_LABELS.len() as u16 {
        ws.set_column_width(c, 11)?;
    }
    let mut r = r + 1;
    for row in stats.summaries_where(keep) {
        summary_row(ws, r, &row)?;
        r += 1;
    }
    Ok(r)
}

fn summary_row(ws: &mut Worksheet, r: u32, row: &SectionSummary<'_>) -> Result<(), XlsxError> {
    let shown = row.measure.column().decimals;
    let (plain, finer) = (decimals_format(shown), decimals_format(shown + 1));
    ws.write_string(r, 0, fit_cell(row.section))?;
    ws.write_string(r, 1, measure_label(row.measure))?;
    ws.write_number(r, 2, row.summary.as_ref().map_or(0.0, |s| s.n as f64))?;
    if let Some(s) = &row.summary {
        // the mean, its spread and its interval one decimal finer than the values
        let cells = [
            (s.mean, &finer),
            (s.sd, &finer),
            (s.sem, &finer),
            (s.median, &plain),
            (s.q1, &plain),
            (s.q3, &plain),
            (s.min, &plain),
            (s.max, &plain),
            (s.ci95_low, &finer),
            (s.ci95_high, &finer),
        ];
        for (i, (v, format)) in cells.into_iter().enumerate() {
            if v.is_finite() {
                ws.write_number_with_format(r, 3 + i as u16, v, format)?;
            }
        }
    }
    ws.write_number(r, 13, row.excluded as f64)?;
    ws.write_number(r, 14, row.excused as f64)?;
    ws.write_number(r, 15, row.missing as f64)?;
    ws.write_number(r, 16, row.no_submission as f64)?;
    Ok(())
}

pub(super) fn statistics_sheet(
    book: &mut Book,
    stats: &SectionStats,
    max_score: f64,
    f: &Formats,
) -> Result<(), XlsxError> {
    let sections = book.sections.clone();
    let ws = book.workbook.add_worksheet();
    // reserved: no section sheet can be named so
    let name = "Statistics".to_string();
    ws.set_name(&name)?;
    ws.write_string_with_format(0, 0, "Statistics by section", &f.title)?;
    let last_printed = STAT_LABELS.len() as u16 - 1;
    ws.set_row_height(1, 30)?;
    ws.merge_range(1, 0, 1, last_printed, &format!("Each measure leaves out the rows whose entries for it are impossible and every excused student (n, left out, excused, no value and no submission add up to the section's rows); the score counts every graded student. Quartiles: {QUANTILE_DEFINITION}; SD and the 95 % CI use n - 1."), &f.wrap)?;
    let mut r = summary_table(ws, 3, stats, |s| sections.iter().any(|x| x == s), &f.header)?;
    r = flag_counts(ws, r + 1, &sections, stats, f)?;
    r = left_out_rows(ws, r + 1, &sections, stats, f)?;
    let charts_at = r + 1;
    ws.set_page_breaks(&[charts_at, charts_at + BAND_ROWS])?;
    charts(ws, &name, &sections, stats, max_score, charts_at)?;
    ws.set_print_area(0, 0, charts_at + 2 * BAND_ROWS, last_printed)?;
    ws.set_landscape();
    ws.set_print_fit_to_pages(1, 0);
    ws.set_footer("&CStatistics, page &P of &N");
    Ok(())
}

/// How many rows of each section carry each flag, the flag in words.
fn flag_counts(
    ws: &mut Worksheet,
    mut r: u32,
    sections: &[String],
    stats: &SectionStats,
    f: &Formats,
) -> Result<u32, XlsxError> {
    ws.write_string_with_format(r, 0, "Flags raised", &f.bold)?;
    r += 1;
    for (c, h) in ["Section", "Rows", "Flag"].iter().enumerate() {
        ws.write_string_with_format(r, c as u16, *h, &f.header)?;
    }
    r += 1;
    for section in sections {
        let Some(g) = stats.groups.get(section) else {
            continue;
        };
        for flag in Flag::ALL {
            if let Some(n) = g.flags.get(flag.code()) {
                let kind = flag.severity().word();
                ws.write_string(r, 0, fit_cell(section))?;
                ws.write_number(r, 1, *n as f64)?;
                // the words run on over the empty cells to the right
                ws.write_string(r, 2, format!("{} ({kind})", capitalised(flag.short())))?;
                r += 1;
            }
        }
    }
    Ok(r)
}

fn capitalised(s: &str) -> String {
    let mut c = s.chars();
    c.next()
        .map(|first| first.to_uppercase().chain(c).collect())
        .unwrap_or_default()
}

/// The rows each section left out of some measure, and why.
fn left_out_rows(
    ws: &mut Worksheet,
    mut r: u32,
    sections: &[String],
    stats: &SectionStats,
    f: &Formats,
) -> Result<u32, XlsxError> {
    ws.write_string_with_format(r, 0, "Rows left out of a measure", &f.bold)?;
    r += 1;
    for section in sections {
        let Some(g) = stats.groups.get(section) else {
            continue;
        };
        ws.write_string(r, 0, fit_cell(section))?;
        ws.write_string(
            r,
            1,
            format!(
                "{} of {} rows; {} excused",
                g.excluded.len(),
                g.rows,
                g.excused
            ),
        )?;
        r += 1;
        for e in &g.excluded {
            ws.write_string(r, 1, fit_cell(e))?;
            r += 1;
        }
    }
    Ok(r)
}

/// A column chart of counts: whole students on the value axis.
fn count_chart(title: &str, x: &str, most: f64) -> Chart {
    let mut c = Chart::new(ChartType::Column);
    c.title()
        .set_name(title)
        .set_font(ChartFont::new().set_size(11).set_bold());
    c.x_axis().set_name(x);
    c.y_axis()
        .set_name("Students")
        .set_min(0.0)
        .set_major_unit(ticks::count_step(most))
        .set_num_format("0");
    c.set_width(520).set_height(330);
    c
}

/// Two bands of charts from row `r`, a printed page each: the recovery and score histograms,
/// then recovery against range width. Their numbers go to the right of the printed area.
fn charts(
    ws: &mut Worksheet,
    name: &str,
    sections: &[String],
    stats: &SectionStats,
    max_score: f64,
    r: u32,
) -> Result<(), XlsxError> {
    let recovery = histogram_chart(ws, name, sections, stats, Hist::recovery(), r)?;
    let score = histogram_chart(ws, name, sections, stats, Hist::score(max_score), r)?;
    ws.insert_chart(r + 1, 0, &recovery)?;
    ws.insert_chart(r + 1, 7, &score)?;
    if let Some(scatter) = scatter(ws, name, sections, stats, r)? {
        ws.insert_chart(r + BAND_ROWS + 1, 0, &scatter)?;
    }
    Ok(())
}

/// One histogram: its measure, its bins and where its numbers go.
struct Hist {
    measure: Measure,
    width: f64,
    /// The first data column, and the axis title.
    column: u16,
    axis: String,
}

impl Hist {
    fn recovery() -> Hist {
        Hist {
            measure: Measure::RECOVERY,
            width: 10.0,
            column: DATA_COLUMN,
            axis: "Recovery (%), bins of 10".into(),
        }
    }

    /// Ten bins from 0 to the most points, the most in the last.
    fn score(max: f64) -> Hist {
        let max = if max > 0.0 { max } else { 100.0 };
        Hist {
            measure: Measure::SCORE,
            width: max / 10.0,
            column: DATA_COLUMN + 40,
            axis: format!("Score (points of {})", crate::numtext::points(max)),
        }
    }
}

fn histogram_chart(
    ws: &mut Worksheet,
    name: &str,
    sections: &[String],
    stats: &SectionStats,
    h: Hist,
    r: u32,
) -> Result<Chart, XlsxError> {
    let bins = 10;
    for (i, (lo, hi, _)) in histogram(&[], 0.0, h.width, bins).iter().enumerate() {
        let label = format!(
            "{}-{}",
            crate::numtext::points(*lo),
            crate::numtext::points(*hi)
        );
        ws.write_string(r + 1 + i as u32, h.column, label)?;
    }
    let (mut n, mut left_out, mut excused, mut most) = (0, 0, 0, 0usize);
    let mut series = Vec::new();
    for (k, section) in sections.iter().enumerate() {
        let Some(g) = stats.groups.get(section) else {
            continue;
        };
        let values = g.values(stats, h.measure).unwrap_or_default();
        n += values.len();
        left_out += stats.left_out(section, h.measure);
        excused += g.excused;
        let col = h.column + 1 + k as u16;
        ws.write_string(r, col, fit_cell(section))?;
        for (i, (_, _, count)) in histogram(values, 0.0, h.width, bins).iter().enumerate() {
            most = most.max(*count);
            ws.write_number(r + 1 + i as u32, col, *count as f64)?;
        }
        series.push(col);
    }
    let what = measure_label(h.measure);
    let title =
        format!("{what} by section: n = {n}; left out: {left_out} impossible, {excused} excused");
    let mut chart = count_chart(&title, &h.axis, most as f64);
    let last = r + bins as u32;
    for col in series {
        // the series is named by the cell holding the section, never by the text itself: a
        // chart reads text such as `=x!A1` or `a!B2` as a range (a label can never stop a run)
        chart
            .add_series()
            .set_name((name, r, col))
            .set_categories((name, r + 1, h.column, last, h.column))
            .set_values((name, r + 1, col, last, col));
    }
    Ok(chart)
}

/// Recovery against range width, a series per section, over the rows where both count;
/// `None` when no row has both.
fn scatter(
    ws: &mut Worksheet,
    name: &str,
    sections: &[String],
    stats: &SectionStats,
    r: u32,
) -> Result<Option<Chart>, XlsxError> {
    let mut chart = Chart::new(ChartType::Scatter);
    chart.x_axis().set_name("Range width (°C)");
    chart.y_axis().set_name("Recovery (%)");
    chart.set_width(760).set_height(330);
    let (mut n, mut left_out, mut shown_all) = (0, 0, true);
    let mut col = DATA_COLUMN + 80;
    for section in sections {
        let Some(g) = stats.groups.get(section) else {
            continue;
        };
        left_out += g.scatter_left_out;
        if g.width_recovery.is_empty() {
            continue;
        }
        // a sheet holds about a million rows, and a plot of more points shows nothing more
        let points = &g.width_recovery[..g.width_recovery.len().min(MOST_POINTS)];
        n += points.len();
        shown_all &= points.len() == g.width_recovery.len();
        ws.write_string(r, col, fit_cell(section))?;
        for (i, (w, rec)) in points.iter().enumerate() {
            write_opt(ws, r + 1 + i as u32, col, *w)?;
            write_opt(ws, r + 1 + i as u32, col + 1, *rec)?;
        }
        let last = r + points.len() as u32;
        chart
            .add_series()
            .set_name((name, r, col))
            .set_categories((name, r + 1, col, last, col))
            .set_values((name, r + 1, col + 1, last, col + 1));
        col += 2;
    }
    chart
        .title()
        .set_name(&format!(
            "Recovery against range width: n = {n}{}; left out: {left_out} impossible",
            if shown_all {
                String::new()
            } else {
                format!(" (the first {MOST_POINTS} of each section)")
            }
        ))
        .set_font(ChartFont::new().set_size(11).set_bold());
    Ok((n > 0).then_some(chart))
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
    ws.set_column_width(1, 70)?;
    ws.set_column_width(2, 66)?;
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
        ws.write_string_with_format(r, 1, &v, &f.wrap)?;
        r += 1;
    }
    // the other files that changed grades, each with its SHA-256
    for (role, file, sha) in &p.settings {
        ws.write_string_with_format(r, 0, role, &f.bold)?;
        ws.write_string_with_format(r, 1, fit_cell(file), &f.wrap)?;
        ws.write_string(r, 2, sha)?;
        r += 1;
    }
    r += 1;
    ws.write_string_with_format(r, 0, "input", &f.bold)?;
    ws.write_string_with_format(r, 2, "SHA-256", &f.bold)?;
    r += 1;
    for (file, sha) in &p.inputs {
        ws.write_string_with_format(r, 1, fit_cell(file), &f.wrap)?;
        ws.write_string(r, 2, sha)?;
        r += 1;
    }
    r += 1;
    for note in p.notes.iter().chain(book_notes) {
        ws.write_string(r, 0, fit_cell(note))?;
        r += 1;
    }
    // labels and values on one page: fitted to the width
    ws.set_landscape();
    ws.set_print_fit_to_pages(1, 0);
    Ok(())
}
