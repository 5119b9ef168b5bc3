//! DIR/cohort-report.html: one self-contained page for the course coordinator: box plots of
//! recovery and score per section, the grade distribution, each bench's shift, the tables, and
//! findings in plain language. Inline SVG and CSS only: no script, no network, prints well.
//! No student names or ids appear on it; every text is HTML-escaped.

use std::fmt::Write as _;
use std::path::Path;

use super::atomic::write_atomic;
use crate::error::WriteError;
use crate::model::Measure;
use crate::stats::cohort::{BenchBias, Cohort, Comparison, Outlier};
use crate::stats::sections::SectionStats;
use crate::stats::{quantile_sorted, QUANTILE_DEFINITION};

/// Everything the page shows.
pub struct Report<'a> {
    pub title: &'a str,
    pub generated: &'a str,
    pub cohort: &'a Cohort,
    pub stats: &'a SectionStats,
    pub comparisons: &'a [Comparison],
    pub bias: &'a [BenchBias],
    pub outliers: &'a [Outlier],
    pub letters: &'a [(String, usize)],
    /// (metric, baseline, current, shift) against an earlier term, if one was given.
    pub baseline: &'a [(String, f64, f64, f64)],
}

pub fn escape(s: &str) -> String {
    let mut out = String::with_capacity(s.len());
    for c in s.chars() {
        match c {
            '&' => out.push_str("&amp;"),
            '<' => out.push_str("&lt;"),
            '>' => out.push_str("&gt;"),
            '"' => out.push_str("&quot;"),
            '\'' => out.push_str("&#39;"),
            c => out.push(c),
        }
    }
    out
}

fn fmt(v: f64, places: usize) -> String {
    if v.is_finite() {
        format!("{v:.places$}")
    } else {
        "–".into()
    }
}

const PALETTE: [&str; 8] = [
    "#3b6ea8", "#c2673a", "#4f8f5b", "#8a5a9e", "#b8962e", "#4a9aa0", "#a4485c", "#6b6b6b",
];

/// Horizontal box plots (median, quartiles, whiskers to the most extreme value within 1.5 IQR,
/// points beyond), one row per group.
fn box_plot(title: &str, unit: &str, groups: &[(String, Vec<f64>)]) -> String {
    let mut all: Vec<f64> = groups.iter().flat_map(|(_, v)| v.iter().copied()).collect();
    all.sort_by(f64::total_cmp);
    if all.is_empty() {
        return format!("<p>No values for {}.</p>", escape(title));
    }
    let (lo, hi) = (all[0], all[all.len() - 1]);
    let pad = ((hi - lo) * 0.05).max(0.5);
    let (lo, hi) = (lo - pad, hi + pad);
    let (left, width, row_h) = (130.0, 520.0, 34.0);
    let height = 40.0 + row_h * groups.len() as f64;
    let x = |v: f64| left + (v - lo) / (hi - lo) * width;
    let mut s = String::new();
    let _ = write!(
        s,
        r#"<figure><svg role="img" viewBox="0 0 680 {height}" width="680" height="{height}" aria-label="{}"><title>{}</title>"#,
        escape(title),
        escape(title)
    );
    for (i, (name, values)) in groups.iter().enumerate() {
        let mut v = values.clone();
        v.sort_by(f64::total_cmp);
        let (q1, med, q3) = (
            quantile_sorted(&v, 0.25),
            quantile_sorted(&v, 0.5),
            quantile_sorted(&v, 0.75),
        );
        let iqr = q3 - q1;
        let lo_w = v
            .iter()
            .copied()
            .find(|x| *x >= q1 - 1.5 * iqr)
            .unwrap_or(q1);
        let hi_w = v
            .iter()
            .rev()
            .copied()
            .find(|x| *x <= q3 + 1.5 * iqr)
            .unwrap_or(q3);
        let y = 20.0 + row_h * i as f64 + row_h / 2.0;
        let c = PALETTE[i % PALETTE.len()];
        let _ = write!(
            s,
            r#"<text x="{}" y="{}" text-anchor="end" class="label">{} (n={})</text>"#,
            left - 8.0,
            y + 4.0,
            escape(name),
            v.len()
        );
        let _ = write!(
            s,
            r#"<line x1="{:.1}" y1="{y}" x2="{:.1}" y2="{y}" stroke="{c}"/>"#,
            x(lo_w),
            x(hi_w)
        );
        let _ = write!(
            s,
            r#"<rect x="{:.1}" y="{:.1}" width="{:.1}" height="16" fill="{c}" fill-opacity="0.25" stroke="{c}"/>"#,
            x(q1),
            y - 8.0,
            (x(q3) - x(q1)).max(1.0)
        );
        let _ = write!(
            s,
            r#"<line x1="{:.1}" y1="{:.1}" x2="{:.1}" y2="{:.1}" stroke="{c}" stroke-width="2.5"/>"#,
            x(med),
            y - 8.0,
            x(med),
            y + 8.0
        );
        for p in v.iter().filter(|p| **p < lo_w || **p > hi_w) {
            let _ = write!(
                s,
                r#"<circle cx="{:.1}" cy="{y}" r="2.5" fill="none" stroke="{c}"/>"#,
                x(*p)
            );
        }
    }
    let axis_y = height - 14.0;
    for k in 0..=4 {
        let v = lo + (hi - lo) * k as f64 / 4.0;
        let _ = write!(
            s,
            r#"<text x="{:.1}" y="{axis_y}" text-anchor="middle" class="tick">{}</text>"#,
            x(v),
            fmt(v, 1)
        );
    }
    let _ = write!(s, "</svg><figcaption>{} ({}); boxes span the quartiles, the thick line is the median.</figcaption></figure>", escape(title), escape(unit));
    s
}

/// Vertical bars with labels; negative values drawn below the axis.
fn bar_chart(title: &str, bars: &[(String, f64)], unit: &str) -> String {
    if bars.is_empty() {
        return String::new();
    }
    let max = bars.iter().map(|b| b.1.abs()).fold(1e-9, f64::max);
    let has_negative = bars.iter().any(|b| b.1 < 0.0);
    let (h, top) = (180.0, 20.0);
    let zero = if has_negative { top + h / 2.0 } else { top + h };
    let scale = if has_negative { h / 2.0 / max } else { h / max };
    let bw = (600.0 / bars.len() as f64).min(60.0);
    let mut s = String::new();
    let _ = write!(
        s,
        r#"<figure><svg role="img" viewBox="0 0 680 250" width="680" height="250" aria-label="{}"><title>{}</title>"#,
        escape(title),
        escape(title)
    );
    let _ = write!(
        s,
        r##"<line x1="40" y1="{zero}" x2="660" y2="{zero}" stroke="#444"/>"##
    );
    for (i, (label, v)) in bars.iter().enumerate() {
        let x = 50.0 + i as f64 * bw;
        let len = v.abs() * scale;
        let y = if *v >= 0.0 { zero - len } else { zero };
        let c = PALETTE[i % PALETTE.len()];
        let _ = write!(
            s,
            r#"<rect x="{x:.1}" y="{y:.1}" width="{:.1}" height="{len:.1}" fill="{c}"/>"#,
            bw * 0.7
        );
        let _ = write!(
            s,
            r#"<text x="{:.1}" y="{}" text-anchor="middle" class="tick">{}</text>"#,
            x + bw * 0.35,
            top + h + 30.0,
            escape(label)
        );
        let _ = write!(
            s,
            r#"<text x="{:.1}" y="{:.1}" text-anchor="middle" class="tick">{}</text>"#,
            x + bw * 0.35,
            if *v >= 0.0 { y - 4.0 } else { y + len + 12.0 },
            fmt(*v, 1)
        );
    }
    let _ = write!(
        s,
        "</svg><figcaption>{} ({})</figcaption></figure>",
        escape(title),
        escape(unit)
    );
    s
}

fn table(head: &[&str], rows: &[Vec<String>]) -> String {
    let mut s = String::from("<table><thead><tr>");
    for h in head {
        let _ = write!(s, "<th>{}</th>", escape(h));
    }
    s.push_str("</tr></thead><tbody>");
    for r in rows {
        s.push_str("<tr>");
        for c in r {
            let _ = write!(s, "<td>{}</td>", escape(c));
        }
        s.push_str("</tr>");
    }
    s.push_str("</tbody></table>");
    s
}

/// The findings in plain language, most important first.
pub fn findings_text(r: &Report) -> Vec<String> {
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
        out.push(format!(
            "{}s differ in {} (Kruskal-Wallis H = {}, p = {}); see the pairwise tests below",
            c.grouping,
            c.measure.key().replace('_', " "),
            fmt(c.statistic, 2),
            fmt(c.p_value, 4)
        ));
    }
    for (m, b, c, d) in r
        .baseline
        .iter()
        .filter(|(m, _, _, d)| m.starts_with("mean") && d.abs() >= 2.0)
    {
        out.push(format!(
            "against the baseline term, {m} moved from {} to {} ({}{})",
            fmt(*b, 1),
            fmt(*c, 1),
            if *d > 0.0 { "+" } else { "" },
            fmt(*d, 1)
        ));
    }
    if !r.outliers.is_empty() {
        out.push(format!("{} results lie far from their section's median (robust z beyond 3.5); they are listed below", r.outliers.len()));
    }
    if out.is_empty() {
        out.push("No section, assistant or bench stands out at the thresholds used.".into());
    }
    out
}

const STYLE: &str = "body{font-family:Georgia,'DejaVu Serif',serif;max-width:60rem;margin:2rem auto;padding:0 1rem;color:#222}\
h1{font-size:1.6rem}h2{font-size:1.2rem;margin-top:2rem;border-bottom:1px solid #bbb}\
table{border-collapse:collapse;font-size:.85rem;margin:.5rem 0}th,td{border:1px solid #ccc;padding:.2rem .45rem;text-align:right}\
th{background:#eef2f5}td:first-child,th:first-child{text-align:left}.label,.tick{font:11px sans-serif;fill:#333}\
figure{margin:1rem 0}figcaption{font-size:.8rem;color:#555}.finding{background:#fff7e0;border-left:4px solid #c2673a;padding:.3rem .6rem;margin:.3rem 0}\
@media print{body{margin:0}h2{break-after:avoid}figure,table{break-inside:avoid}}";

/// The page's HTML.
pub fn render(r: &Report) -> String {
    let mut s = String::new();
    let _ = write!(s, "<!DOCTYPE html><html lang=\"en\"><head><meta charset=\"utf-8\"><title>{}</title><style>{STYLE}</style></head><body>", escape(r.title));
    let _ = write!(s, "<h1>{}</h1><p>Cohort report generated {} by benchgrade. No student is named on this page.</p>", escape(r.title), escape(r.generated));
    s.push_str("<h2>Findings</h2>");
    for f in findings_text(r) {
        let _ = write!(s, "<p class=\"finding\">{}</p>", escape(&f));
    }
    s.push_str("<h2>Recovery and score by section</h2>");
    s.push_str(&box_plot(
        "Percent recovery by section",
        "%",
        &r.cohort.by_section(Measure::RECOVERY),
    ));
    s.push_str(&box_plot(
        "Score by section",
        "points",
        &r.cohort.by_section(Measure::SCORE),
    ));
    s.push_str("<h2>Grade distribution</h2>");
    s.push_str(&bar_chart(
        "Students by letter grade",
        &r.letters
            .iter()
            .map(|(l, n)| (l.clone(), *n as f64))
            .collect::<Vec<_>>(),
        "students",
    ));
    s.push_str("<h2>Benches</h2>");
    s.push_str(&bar_chart(
        "Median shift of each bench's clear points from the rest of the cohort",
        &r.bias
            .iter()
            .map(|b| (b.bench.clone(), b.median_shift_c))
            .collect::<Vec<_>>(),
        "°C; positive reads high",
    ));
    let bias_rows: Vec<Vec<String>> = r
        .bias
        .iter()
        .map(|b| {
            vec![
                b.bench.clone(),
                b.n.to_string(),
                fmt(b.median_shift_c, 2),
                fmt(b.u_statistic, 1),
                fmt(b.p_value, 4),
                fmt(b.p_adjusted, 4),
                b.finding.clone(),
            ]
        })
        .collect();
    s.push_str(&table(
        &[
            "bench",
            "n",
            "median shift (°C)",
            "U",
            "p",
            "p (Holm)",
            "finding",
        ],
        &bias_rows,
    ));
    s.push_str("<h2>Section statistics</h2>");
    let stat_rows: Vec<Vec<String>> = r
        .stats
        .summaries()
        .into_iter()
        .filter_map(|(sec, m, sum)| {
            let x = sum?;
            Some(vec![
                sec.to_string(),
                m.key().to_string(),
                x.n.to_string(),
                fmt(x.mean, 2),
                fmt(x.sd, 2),
                fmt(x.median, 2),
                fmt(x.q1, 2),
                fmt(x.q3, 2),
                fmt(x.ci95_low, 2),
                fmt(x.ci95_high, 2),
            ])
        })
        .collect();
    s.push_str(&table(
        &[
            "section",
            "measure",
            "n",
            "mean",
            "sd",
            "median",
            "q1",
            "q3",
            "95 % CI low",
            "95 % CI high",
        ],
        &stat_rows,
    ));
    let _ = write!(
        s,
        "<p>Rows with impossible entries are left out; {}.</p>",
        escape(QUANTILE_DEFINITION)
    );
    s.push_str("<h2>Comparisons</h2>");
    let cmp_rows: Vec<Vec<String>> = r
        .comparisons
        .iter()
        .map(|c| {
            vec![
                c.measure.key().to_string(),
                c.grouping.to_string(),
                c.test.to_string(),
                c.group_a.clone(),
                c.group_b.clone(),
                fmt(c.statistic, 3),
                fmt(c.df1, 1),
                fmt(c.df2, 1),
                fmt(c.p_value, 4),
                fmt(c.p_adjusted, 4),
                fmt(c.effect_size, 3),
            ]
        })
        .collect();
    s.push_str(&table(
        &[
            "measure",
            "grouping",
            "test",
            "group a",
            "group b",
            "statistic",
            "df1",
            "df2",
            "p",
            "p (Holm)",
            "effect",
        ],
        &cmp_rows,
    ));
    s.push_str("<p>Effect sizes: eta squared for ANOVA, epsilon squared (H / (n - 1)) for Kruskal-Wallis, Cohen's d for pairwise tests; pairwise p-values Holm-adjusted within each measure and grouping.</p>");
    if !r.baseline.is_empty() {
        s.push_str("<h2>Against the baseline term</h2>");
        let rows: Vec<Vec<String>> = r
            .baseline
            .iter()
            .map(|(m, b, c, d)| vec![m.clone(), fmt(*b, 2), fmt(*c, 2), fmt(*d, 2)])
            .collect();
        s.push_str(&table(&["metric", "baseline", "this term", "shift"], &rows));
    }
    if !r.outliers.is_empty() {
        s.push_str("<h2>Results far from their section</h2>");
        let rows: Vec<Vec<String>> = r
            .outliers
            .iter()
            .map(|o| {
                vec![
                    o.section.clone(),
                    o.place.clone(),
                    o.measure.key().to_string(),
                    fmt(o.value, 2),
                    fmt(o.robust_z, 1),
                ]
            })
            .collect();
        s.push_str(&table(
            &["section", "where", "measure", "value", "robust z"],
            &rows,
        ));
    }
    s.push_str("</body></html>\n");
    s
}

pub fn write(path: &Path, r: &Report) -> Result<(), WriteError> {
    let html = render(r);
    write_atomic(path, |w| w.write_all(html.as_bytes()))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn text_is_escaped() {
        assert_eq!(
            escape("<script>alert('x')</script> & \"y\""),
            "&lt;script&gt;alert(&#39;x&#39;)&lt;/script&gt; &amp; &quot;y&quot;"
        );
    }

    #[test]
    fn box_plot_draws_each_group() {
        let svg = box_plot(
            "t",
            "%",
            &[
                ("A".into(), vec![1.0, 2.0, 3.0]),
                ("B<".into(), vec![2.0, 9.0]),
            ],
        );
        assert!(svg.contains("A (n=3)") && svg.contains("B&lt; (n=2)"));
        assert_eq!(svg.matches("<rect").count(), 2);
    }
}
