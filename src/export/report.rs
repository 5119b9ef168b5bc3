//! The cohort report's content, computed once and drawn twice: by the HTML page
//! (`report_html`) and by the coordinator's workbook (`cohort_workbook`). The findings in plain
//! language, and the tables as typed cells, each column with a label for people, a code (as the
//! CSV files name it) and the decimals a person is shown.

use std::fmt::Write as _;

use super::baseline::BaselineRow;
use crate::model::Measure;
use crate::stats::cohort::{BenchBias, Cohort, Comparison, Outlier};
use crate::stats::quality::{GroupQuality, Quality};
use crate::stats::sections::SectionStats;
use crate::stats::unknowns::Identifications;

/// Everything the report shows.
pub struct Report<'a> {
    pub title: &'a str,
    pub generated: &'a str,
    /// The rubric and calibration graded with, in one line.
    pub used: &'a str,
    /// Why the baseline's score shifts are left out, if they are.
    pub baseline_note: Option<&'a str>,
    pub cohort: &'a Cohort,
    pub stats: &'a SectionStats,
    pub comparisons: &'a [Comparison],
    pub bias: &'a [BenchBias],
    pub outliers: &'a [Outlier],
    pub letters: &'a [(String, usize)],
    /// Against an earlier term, if one was given.
    pub baseline: &'a [BaselineRow],
    /// Data quality by section and by assistant.
    pub quality: &'a Quality,
}

/// One cell of a report table.
#[derive(Clone, Debug, PartialEq)]
pub enum Cell {
    Text(String),
    /// A count of students or rows.
    Count(usize),
    /// A statistic, shown to its column's decimals (kept whole in the workbook).
    Number(f64),
}

/// One column of a report table.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct TableColumn {
    pub label: &'static str,
    pub code: &'static str,
    pub decimals: usize,
}

const fn col(label: &'static str, code: &'static str, decimals: usize) -> TableColumn {
    TableColumn {
        label,
        code,
        decimals,
    }
}

/// A table of the report.
#[derive(Clone, Debug, PartialEq)]
pub struct Table {
    pub columns: Vec<TableColumn>,
    pub rows: Vec<Vec<Cell>>,
}

fn text(s: &str) -> Cell {
    Cell::Text(s.to_string())
}

/// Students, scores and data-quality rates of each group (sections, or assistants).
pub fn quality_table(
    groups: &std::collections::BTreeMap<String, GroupQuality>,
    what: &'static str,
    with_roster: bool,
) -> Table {
    let mut t = Table {
        columns: vec![
            col(what, what, 0),
            col("students graded", "students", 0),
            col("excused", "excused", 0),
            col("mean score", "mean_score", 1),
            col("median score", "median_score", 1),
            col("impossible entries (%)", "impossible_pct", 1),
            col("suspicious only (%)", "suspicious_pct", 1),
            col("missing data (%)", "missing_pct", 1),
        ],
        rows: groups
            .iter()
            .map(|(name, q)| {
                vec![
                    text(name),
                    Cell::Count(q.students),
                    Cell::Count(q.excused),
                    Cell::Number(q.mean_score()),
                    Cell::Number(q.median_score()),
                    Cell::Number(q.share(q.impossible)),
                    Cell::Number(q.share(q.suspicious)),
                    Cell::Number(q.share(q.missing)),
                ]
            })
            .collect(),
    };
    if with_roster {
        t.columns.extend([
            col("enrolled", "enrolled", 0),
            col("submitted", "submitted", 0),
            col("no submission", "no_submission", 0),
            col("not on roster", "not_on_roster", 0),
        ]);
        for (row, q) in t.rows.iter_mut().zip(groups.values()) {
            row.extend([
                Cell::Count(q.enrolled),
                Cell::Count(q.submitted),
                Cell::Count(q.no_submission),
                Cell::Count(q.not_on_roster),
            ]);
        }
    }
    t
}

/// The rostered students of whom no row was read, by section: section, id, name, and the id
/// of a row not on the roster that is likely theirs. `likely`: only those with such a row
/// (likely submitted under a mistyped id), else only those without.
pub fn no_submission_table(q: &Quality, likely: bool) -> Table {
    let mut rows: Vec<&crate::stats::quality::Missing> = q
        .no_submission
        .iter()
        .filter(|m| m.likely_typed_as.is_some() == likely)
        .collect();
    rows.sort_by(|a, b| crate::stats::cohort::natural_cmp(&a.section, &b.section));
    let mut columns = vec![
        col("section", "section", 0),
        col("student id", "student_id", 0),
        col("name", "student_name", 0),
    ];
    if likely {
        columns.push(col("likely submitted as", "likely_typed_as", 0));
    }
    Table {
        columns,
        rows: rows
            .into_iter()
            .map(|m| {
                let mut row = vec![text(&m.section), text(&m.id), text(&m.name)];
                row.extend(m.likely_typed_as.as_deref().map(text));
                row
            })
            .collect(),
    }
}

/// Unknowns identified correctly, by section.
pub fn identification_sections_table(ids: &Identifications) -> Table {
    Table {
        columns: vec![
            col("section", "section", 0),
            col("students with a keyed unknown", "judged", 0),
            col("correct", "correct", 0),
            col("wrong", "wrong", 0),
            col("none given", "none", 0),
            col("correct (%)", "correct_pct", 1),
        ],
        rows: ids
            .sections
            .iter()
            .map(|(name, t)| tally_row(text(name), t))
            .collect(),
    }
}

fn tally_row(first: Cell, t: &crate::stats::unknowns::Tally) -> Vec<Cell> {
    vec![
        first,
        Cell::Count(t.judged()),
        Cell::Count(t.correct),
        Cell::Count(t.wrong),
        Cell::Count(t.none),
        Cell::Number(t.correct_pct()),
    ]
}

/// Unknowns identified correctly, by code, with what the class named and measured.
pub fn identification_codes_table(ids: &Identifications) -> Table {
    let mut columns = vec![col("unknown", "unknown_code", 0)];
    columns.extend(
        identification_sections_table(ids)
            .columns
            .into_iter()
            .skip(1),
    );
    columns.extend([
        col("key's compound", "identity", 0),
        col("named most", "most_named", 0),
        col("median clear point (°C)", "median_clear_c", 1),
    ]);
    Table {
        columns,
        rows: ids
            .codes
            .values()
            .map(|c| {
                let mut row = tally_row(text(&c.code), &c.tally);
                row.push(text(&c.identity));
                row.push(text(c.most_named().map_or("", |(n, _)| n)));
                row.push(c.median_clear().map_or(text(""), Cell::Number));
                row
            })
            .collect(),
    }
}

/// Each bench against the rest of the cohort.
pub fn bias_table(bias: &[BenchBias]) -> Table {
    Table {
        columns: vec![
            col("bench", "bench", 0),
            col("n", "n", 0),
            col("median shift (°C)", "median_shift_c", 2),
            col("U", "u_statistic", 1),
            col("p", "p_value", 4),
            col("p (Holm)", "p_adjusted", 4),
            col("finding", "finding", 0),
            col("note", "note", 0),
        ],
        rows: bias
            .iter()
            .map(|b| {
                vec![
                    text(&b.bench),
                    Cell::Count(b.n),
                    Cell::Number(b.median_shift_c),
                    Cell::Number(b.u_statistic),
                    Cell::Number(b.p_value),
                    Cell::Number(b.p_adjusted),
                    text(&b.finding),
                    text(&b.note),
                ]
            })
            .collect(),
    }
}

/// The omnibus and pairwise tests.
pub fn comparisons_table(comparisons: &[Comparison]) -> Table {
    Table {
        columns: vec![
            col("measure", "measure", 0),
            col("grouping", "grouping", 0),
            col("test", "test", 0),
            col("group a", "group_a", 0),
            col("group b", "group_b", 0),
            col("statistic", "statistic", 3),
            col("df1", "df1", 1),
            col("df2", "df2", 1),
            col("p", "p_value", 4),
            col("p (Holm)", "p_adjusted", 4),
            col("effect", "effect_size", 3),
            col("note", "note", 0),
        ],
        rows: comparisons
            .iter()
            .map(|c| {
                vec![
                    text(c.measure.key()),
                    text(c.grouping),
                    text(c.test),
                    text(&c.group_a),
                    text(&c.group_b),
                    Cell::Number(c.statistic),
                    Cell::Number(c.df1),
                    Cell::Number(c.df2),
                    Cell::Number(c.p_value),
                    Cell::Number(c.p_adjusted),
                    Cell::Number(c.effect_size),
                    text(&c.note),
                ]
            })
            .collect(),
    }
}

/// Results far from their section's centre.
pub fn outliers_table(outliers: &[Outlier]) -> Table {
    Table {
        columns: vec![
            col("section", "section", 0),
            col("where", "where", 0),
            col("measure", "measure", 0),
            col("value", "value", 2),
            col("robust z", "robust_z", 1),
        ],
        rows: outliers
            .iter()
            .map(|o| {
                vec![
                    text(&o.section),
                    text(&o.place),
                    text(o.measure.key()),
                    Cell::Number(o.value),
                    Cell::Number(o.robust_z),
                ]
            })
            .collect(),
    }
}

/// This term against the baseline term.
pub fn baseline_table(rows: &[BaselineRow]) -> Table {
    Table {
        columns: vec![
            col("metric", "metric", 0),
            col("baseline", "baseline", 2),
            col("this term", "current", 2),
            col("shift", "shift", 2),
        ],
        rows: rows
            .iter()
            .map(|r| {
                vec![
                    text(&r.metric),
                    Cell::Number(r.baseline),
                    Cell::Number(r.current),
                    Cell::Number(r.shift),
                ]
            })
            .collect(),
    }
}

/// Each section's summary of each measure that has values.
pub fn sections_table(stats: &SectionStats) -> Table {
    Table {
        columns: vec![
            col("section", "section", 0),
            col("measure", "measure", 0),
            col("n", "n", 0),
            col("mean", "mean", 2),
            col("sd", "sd", 2),
            col("median", "median", 2),
            col("q1", "q1", 2),
            col("q3", "q3", 2),
            col("95 % CI low", "ci95_low", 2),
            col("95 % CI high", "ci95_high", 2),
            col("excluded", "excluded", 0),
            col("excused", "excused", 0),
            col("no value", "missing", 0),
        ],
        rows: stats
            .summaries()
            .into_iter()
            .filter(|row| row.summary.is_some() || row.excused + row.excluded + row.missing > 0)
            .map(|row| {
                let mut cells = vec![text(row.section), text(&row.measure.column().header())];
                if let Some(x) = row.summary {
                    cells.extend([
                        Cell::Count(x.n),
                        Cell::Number(x.mean),
                        Cell::Number(x.sd),
                        Cell::Number(x.median),
                        Cell::Number(x.q1),
                        Cell::Number(x.q3),
                        Cell::Number(x.ci95_low),
                        Cell::Number(x.ci95_high),
                    ]);
                } else {
                    // every row excused, impossible or blank for the measure: the counts say which
                    cells.push(Cell::Count(0));
                    cells.extend(std::iter::repeat_n(Cell::Number(f64::NAN), 7));
                }
                cells.extend([
                    Cell::Count(row.excluded),
                    Cell::Count(row.excused),
                    Cell::Count(row.missing),
                ]);
                cells
            })
            .collect(),
    }
}

/// A number to `places` decimals for a sentence, or a dash.
fn fmt(v: f64, places: usize) -> String {
    super::html::fmt(v, places)
}

/// The findings in plain language, most important first.
/// The sentence about results far from their section's median, if there are any.
fn outliers_finding(n: usize) -> Option<String> {
    let (count, lie, its) = match n {
        0 => return None,
        1 => ("1 result".to_string(), "lies", "its"),
        n => (format!("{n} results"), "lie", "their"),
    };
    Some(format!(
        "{count} {lie} far from {its} section's median (robust z beyond 3.5); listed below"
    ))
}

/// Share of a group's graded students with missing or unreadable data, and with an impossible
/// entry, at or above which a difference between groups is said to may come from the data.
pub const POOR_MISSING_PCT: f64 = 25.0;
pub const POOR_IMPOSSIBLE_PCT: f64 = 50.0;

/// Appends to a finding of a difference between groups the groups whose data are poor (a high
/// share of missing, unreadable or impossible entries), and for the score, the same test over
/// the rows with nothing missing or unreadable.
fn caution_poor_data(line: &mut String, r: &Report, c: &Comparison) {
    let groups = if c.grouping == "section" {
        &r.quality.sections
    } else {
        &r.quality.assistants
    };
    let poor: Vec<String> = groups
        .iter()
        .filter_map(|(name, q)| {
            let (missing, impossible) = (q.share(q.missing), q.share(q.impossible));
            (missing >= POOR_MISSING_PCT || impossible >= POOR_IMPOSSIBLE_PCT).then(|| {
                format!(
                    "{name} ({} % missing or unreadable, {} % impossible)",
                    fmt(missing, 0),
                    fmt(impossible, 0)
                )
            })
        })
        .collect();
    if poor.is_empty() {
        return;
    }
    let _ = write!(
        line,
        "; caution: {} {} a high share of poor data, so the difference may come from reading the sheets rather than from the work",
        poor.join(", "),
        if poor.len() == 1 { "has" } else { "have" }
    );
    if c.measure == Measure::SCORE {
        if let Some((k, left)) = r.cohort.score_without_unreadable(c.grouping) {
            if k.p_value.is_finite() {
                let _ = write!(
                    line,
                    "; without the {left} rows with missing or unreadable data: H = {}, p = {}",
                    fmt(k.statistic, 2),
                    fmt(k.p_value, 4)
                );
            } else {
                let _ = write!(
                    line,
                    "; without the {left} rows with missing or unreadable data the test cannot be made ({})",
                    k.note
                );
            }
        }
    }
}

pub fn findings(r: &Report) -> Vec<String> {
    let mut out: Vec<String> = r
        .bias
        .iter()
        .filter(|b| !b.finding.is_empty())
        .map(|b| b.finding.clone())
        .collect();
    for c in r
        .comparisons
        .iter()
        .filter(|c| c.test == "Kruskal-Wallis" && c.p_value < 0.05)
    {
        let mut line = format!(
            "{}s differ in {} (Kruskal-Wallis H = {}, p = {}); see the pairwise tests below",
            c.grouping,
            c.measure.key().replace('_', " "),
            fmt(c.statistic, 2),
            fmt(c.p_value, 4)
        );
        caution_poor_data(&mut line, r, c);
        out.push(line);
    }
    for b in r
        .baseline
        .iter()
        .filter(|b| b.is_mean() && b.shift.abs() >= 2.0)
    {
        out.push(format!(
            "against the baseline term, {} moved from {} to {} ({}{})",
            b.metric,
            fmt(b.baseline, 1),
            fmt(b.current, 1),
            if b.shift > 0.0 { "+" } else { "" },
            fmt(b.shift, 1)
        ));
    }
    if let Some(note) = r.baseline_note {
        out.push(note.to_string());
    }
    let undefined: Vec<&Comparison> = r
        .comparisons
        .iter()
        .filter(|c| !c.p_value.is_finite())
        .collect();
    if let Some(first) = undefined.first() {
        out.push(format!(
            "{} of the {} comparisons could not be made from these data and are listed with the reason (for example {} by {}, {}: {})",
            undefined.len(),
            r.comparisons.len(),
            first.measure.key().replace('_', " "),
            first.grouping,
            first.test,
            first.note
        ));
    }
    out.extend(outliers_finding(r.outliers.len()));
    out.extend(r.cohort.identifications.key_findings());
    if out.is_empty() {
        out.push("No section, assistant or bench stands out at the thresholds used.".into());
    }
    out
}
