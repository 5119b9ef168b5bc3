//! DIR/cohort-report.html: one self-contained page for the course coordinator: box plots of
//! recovery and score per section, the grade distribution, each bench's shift, the tables, and
//! findings in plain language. Inline SVG and CSS only: no script, no network, prints well.
//! No student names or ids appear on it; every text is HTML-escaped. The content comes from
//! `report`, the charts from `svg`; this module lays out the page.

use std::fmt::Write as _;
use std::path::Path;

use super::atomic::{write_atomic, Stage};
use super::html::{escape, table};
use super::report::{self, Report};
use super::svg::{box_plot, count_bars, shift_bars, Hue, Shift};
use crate::error::WriteError;
use crate::model::Measure;
use crate::stats::{histogram, QUANTILE_DEFINITION};

const STYLE: &str = "body{font-family:Georgia,'DejaVu Serif',serif;max-width:60rem;margin:2rem auto;padding:0 1rem;color:#222}\
h1{font-size:1.6rem}h2{font-size:1.2rem;margin-top:2rem;border-bottom:1px solid #bbb}\
table{border-collapse:collapse;font-size:.85rem;margin:.5rem 0}th,td{border:1px solid #ccc;padding:.2rem .45rem;text-align:right}\
th{background:#eef2f5}td:first-child,th:first-child{text-align:left}.label,.tick{font:11px sans-serif;fill:#333}\
.ctitle{font:bold 13px sans-serif;fill:#222}\
figure{margin:1rem 0}figcaption{font-size:.8rem;color:#555}.finding{background:#fff7e0;border-left:4px solid #c2673a;padding:.3rem .6rem;margin:.3rem 0}\
@media print{body{margin:0;max-width:none}h2{break-after:avoid}figure,tr{break-inside:avoid}thead{display:table-header-group}svg{max-width:100%;height:auto}}";

/// The page's HTML.
pub fn render(r: &Report) -> String {
    let mut s = String::new();
    head(&mut s, r);
    sections(&mut s, r);
    grades(&mut s, r);
    quality(&mut s, r);
    unknowns(&mut s, r);
    benches(&mut s, r);
    statistics(&mut s, r);
    comparisons(&mut s, r);
    baseline(&mut s, r);
    outliers(&mut s, r);
    s.push_str("</body></html>\n");
    s
}

/// The document head, the title and the findings.
fn head(s: &mut String, r: &Report) {
    let _ = write!(s, "<!DOCTYPE html><html lang=\"en\"><head><meta charset=\"utf-8\"><title>{}</title><style>{STYLE}</style></head><body>", escape(r.title));
    let named = if r.quality.no_submission.is_empty() {
        "No student is named on this page."
    } else {
        "Students are named only in the list of those with no submission (from the roster)."
    };
    let _ = write!(
        s,
        "<h1>{}</h1><p>Cohort report generated {} by benchgrade. {named}</p><p>{}</p>",
        escape(r.title),
        escape(r.generated),
        escape(r.used)
    );
    s.push_str("<h2>Findings</h2>");
    for f in report::findings(r) {
        let _ = write!(s, "<p class=\"finding\">{}</p>", escape(&f));
    }
}

/// Box plots of recovery and score by section, and the cohort's recovery histogram.
fn sections(s: &mut String, r: &Report) {
    s.push_str("<h2>Recovery and score by section</h2>");
    s.push_str(&box_plot(
        "Percent recovery by section",
        "%",
        &r.cohort.by_section(Measure::RECOVERY),
        Hue::Section,
    ));
    s.push_str(&box_plot(
        "Score by section",
        "points",
        &r.cohort.by_section(Measure::SCORE),
        Hue::Section,
    ));
    let all: Vec<f64> = r
        .cohort
        .by_section(Measure::RECOVERY)
        .into_iter()
        .flat_map(|(_, v)| v)
        .collect();
    let bins: Vec<(String, usize)> = histogram(&all, 0.0, 10.0, 10)
        .into_iter()
        .map(|(lo, hi, n)| (format!("{lo:.0}-{hi:.0}"), n))
        .collect();
    s.push_str(&count_bars(
        &format!("Percent recovery, the whole cohort (n = {})", all.len()),
        &bins,
        "recovery bin (%)",
        Hue::Section,
    ));
    s.push_str("<p>Plots leave out the rows whose entries for the measure are impossible, and excused students.</p>");
}

fn grades(s: &mut String, r: &Report) {
    s.push_str("<h2>Grade distribution</h2>");
    let n: usize = r.letters.iter().map(|(_, n)| n).sum();
    s.push_str(&count_bars(
        &format!("Students by letter grade (n = {n})"),
        r.letters,
        "letter grade",
        Hue::Grade,
    ));
}

/// Students, scores and data-quality rates by section and by teaching assistant.
fn quality(s: &mut String, r: &Report) {
    s.push_str("<h2>Data quality</h2>");
    s.push_str(&table(&report::quality_table(
        &r.quality.sections,
        "section",
        r.quality.with_roster,
    )));
    if !r.quality.assistants.is_empty() {
        s.push_str("<h3>By teaching assistant</h3>");
        s.push_str(&table(&report::quality_table(
            &r.quality.assistants,
            "assistant",
            r.quality.with_roster,
        )));
    }
    s.push_str("<p>Rates are shares of the students graded (excused students and repeated submissions left out); missing data counts rows with a value missing or unreadable.</p>");
    if r.quality.with_roster {
        s.push_str("<p>Enrolled: rostered students graded, excused or missing in the section (a student who submitted in another section than their own counts there, flagged other-section); submitted: rows read for them; not on roster: rows whose id the roster does not list (left out of gradebook.csv until a grader confirms the id).</p>");
        s.push_str("<h3>Students with no submission</h3>");
        let missing = report::no_submission_table(r.quality, false);
        if missing.rows.is_empty() {
            s.push_str("<p>Every rostered student submitted.</p>");
        } else {
            s.push_str(&table(&missing));
        }
        let likely = report::no_submission_table(r.quality, true);
        if !likely.rows.is_empty() {
            s.push_str("<h3>Likely submitted under a mistyped id</h3><p>A row whose id is not on the roster is one typing slip from each of these students' ids and carries the same name; confirm the id with a correction.</p>");
            s.push_str(&table(&likely));
        }
    }
}

/// Unknowns identified against the key, by section and by code (only when there are any).
fn unknowns(s: &mut String, r: &Report) {
    let ids = &r.cohort.identifications;
    if ids.is_empty() {
        return;
    }
    s.push_str("<h2>Unknowns</h2>");
    s.push_str(&table(&report::identification_sections_table(ids)));
    s.push_str("<h3>By unknown code</h3>");
    s.push_str(&table(&report::identification_codes_table(ids)));
    s.push_str("<p>Where most students given one code name the same other compound, or their recrystallized clear points agree with each other and not with the key's compound, the findings above say so: the key or the sample bottle may be wrong for that code.</p>");
}

fn benches(s: &mut String, r: &Report) {
    s.push_str("<h2>Benches</h2>");
    let bars: Vec<Shift> = r
        .bias
        .iter()
        .map(|b| Shift {
            name: format!("bench {}", b.bench),
            value: b.median_shift_c,
            finding: !b.finding.is_empty(),
        })
        .collect();
    s.push_str(&shift_bars(
        "How far each bench's clear points sit from the rest of the cohort",
        &bars,
        "median shift, °C",
    ));
    let by_bench: Vec<(String, Vec<f64>)> = r
        .cohort
        .by_bench(Measure::DEPRESSION)
        .into_iter()
        .map(|(b, v)| (format!("bench {b}"), v))
        .collect();
    s.push_str(&box_plot(
        "Depression below the literature value by bench, every reading",
        "°C below the reference; negative: above it",
        &by_bench,
        Hue::Bench,
    ));
    s.push_str("<p>Every clear point is drawn here, those above the reference included: they are how a bench that reads high shows.</p>");
    s.push_str(&table(&report::bias_table(r.bias)));
}

fn statistics(s: &mut String, r: &Report) {
    s.push_str("<h2>Section statistics</h2>");
    s.push_str(&table(&report::sections_table(r.stats)));
    let _ = write!(
        s,
        "<p>Each measure leaves out the rows whose entries for it are impossible (excluded) and excused students, and cannot count rows that hold no value for it (no value): n, excluded, excused and no value add up to the section's rows. The score counts every graded student; {}.</p>",
        escape(QUANTILE_DEFINITION)
    );
}

fn comparisons(s: &mut String, r: &Report) {
    s.push_str("<h2>Comparisons</h2>");
    s.push_str(&table(&report::comparisons_table(r.comparisons)));
    s.push_str("<p>Effect sizes: eta squared for ANOVA, epsilon squared (H / (n - 1)) for Kruskal-Wallis, Cohen's d for pairwise tests; pairwise p-values Holm-adjusted within each measure and grouping.</p>");
}

fn baseline(s: &mut String, r: &Report) {
    if !r.baseline.is_empty() {
        s.push_str("<h2>Against the baseline term</h2>");
        s.push_str(&table(&report::baseline_table(r.baseline)));
    }
}

fn outliers(s: &mut String, r: &Report) {
    if !r.outliers.is_empty() {
        s.push_str("<h2>Results far from their section</h2>");
        s.push_str(&table(&report::outliers_table(r.outliers)));
    }
}

pub fn write(path: &Path, r: &Report, stage: &Stage) -> Result<(), WriteError> {
    let html = render(r);
    write_atomic(path, stage, |w| w.write_all(html.as_bytes()))
}
