//! Inline SVG charts for the HTML pages: box plots and bar charts drawn from plain numbers,
//! every text escaped. No script and no fonts to fetch: the page prints as it shows.

use std::fmt::Write as _;

use super::html::{escape, fmt};
use crate::stats::quantile_sorted;

const PALETTE: [&str; 8] = [
    "#3b6ea8", "#c2673a", "#4f8f5b", "#8a5a9e", "#b8962e", "#4a9aa0", "#a4485c", "#6b6b6b",
];

/// A group's five numbers as a box plot draws them: quartiles, median, and whiskers to the
/// most extreme values within 1.5 IQR of the box.
struct Boxed {
    sorted: Vec<f64>,
    q1: f64,
    median: f64,
    q3: f64,
    low: f64,
    high: f64,
}

impl Boxed {
    fn of(values: &[f64]) -> Boxed {
        let mut v = values.to_vec();
        v.sort_by(f64::total_cmp);
        let (q1, median, q3) = (
            quantile_sorted(&v, 0.25),
            quantile_sorted(&v, 0.5),
            quantile_sorted(&v, 0.75),
        );
        let iqr = q3 - q1;
        let low = v
            .iter()
            .copied()
            .find(|x| *x >= q1 - 1.5 * iqr)
            .unwrap_or(q1);
        let high = v
            .iter()
            .rev()
            .copied()
            .find(|x| *x <= q3 + 1.5 * iqr)
            .unwrap_or(q3);
        Boxed {
            sorted: v,
            q1,
            median,
            q3,
            low,
            high,
        }
    }
}

/// One group's row of a box plot at height `y`, in colour `c`, `x` mapping values across.
fn box_row(s: &mut String, b: &Boxed, y: f64, c: &str, x: impl Fn(f64) -> f64) {
    let _ = write!(
        s,
        r#"<line x1="{:.1}" y1="{y}" x2="{:.1}" y2="{y}" stroke="{c}"/>"#,
        x(b.low),
        x(b.high)
    );
    let _ = write!(
        s,
        r#"<rect x="{:.1}" y="{:.1}" width="{:.1}" height="16" fill="{c}" fill-opacity="0.25" stroke="{c}"/>"#,
        x(b.q1),
        y - 8.0,
        (x(b.q3) - x(b.q1)).max(1.0)
    );
    let _ = write!(
        s,
        r#"<line x1="{:.1}" y1="{:.1}" x2="{:.1}" y2="{:.1}" stroke="{c}" stroke-width="2.5"/>"#,
        x(b.median),
        y - 8.0,
        x(b.median),
        y + 8.0
    );
    for p in b.sorted.iter().filter(|p| **p < b.low || **p > b.high) {
        let _ = write!(
            s,
            r#"<circle cx="{:.1}" cy="{y}" r="2.5" fill="none" stroke="{c}"/>"#,
            x(*p)
        );
    }
}

/// Horizontal box plots (median, quartiles, whiskers to the most extreme value within 1.5 IQR,
/// points beyond), one row per group.
pub fn box_plot(title: &str, unit: &str, groups: &[(String, Vec<f64>)]) -> String {
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
        let b = Boxed::of(values);
        let y = 20.0 + row_h * i as f64 + row_h / 2.0;
        let _ = write!(
            s,
            r#"<text x="{}" y="{}" text-anchor="end" class="label">{} (n = {})</text>"#,
            left - 8.0,
            y + 4.0,
            escape(name),
            b.sorted.len()
        );
        box_row(&mut s, &b, y, PALETTE[i % PALETTE.len()], x);
    }
    let axis_y = height - 14.0;
    for k in 0..=4 {
        let v = lo + (hi - lo) * f64::from(k) / 4.0;
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
pub fn bar_chart(title: &str, bars: &[(String, f64)], unit: &str) -> String {
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

#[cfg(test)]
mod tests {
    use super::*;

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
        assert!(svg.contains("A (n = 3)") && svg.contains("B&lt; (n = 2)"));
        assert_eq!(svg.matches("<rect").count(), 2);
    }
}
