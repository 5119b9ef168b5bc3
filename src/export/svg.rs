//! Inline SVG charts for the HTML pages: box plots, count bars and shift bars drawn from plain
//! numbers, every text escaped. No script and no fonts to fetch: the page prints as it shows.
//!
//! Axes have nice ticks (steps of 1, 2, 2.5 or 5 x 10^k, limits on ticks; `ticks`), counts are
//! whole numbers, and colour carries meaning: one hue for each kind of thing (sections, grades,
//! a bench that reads high, one that reads low), never one per bar. Every value is also a text
//! label, so a chart reads the same in grey and to someone who does not tell the hues apart.
//! Each chart carries its title inside the drawing and its caption under it, and a figure is
//! never split across printed pages.

use std::fmt::Write as _;

use super::html::escape;
use super::ticks;
use crate::stats::quantile_sorted;

/// What a chart shows, by its hue.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Hue {
    /// Sections, and values by section.
    Section,
    /// Students by grade.
    Grade,
    /// Benches and apparatus.
    Bench,
}

impl Hue {
    fn colour(self) -> &'static str {
        match self {
            Hue::Section => "#3b6ea8",
            Hue::Grade => "#4f7f5a",
            Hue::Bench => "#7a6a55",
        }
    }
}

/// A bench that reads high, and one that reads low.
const HIGH: &str = "#c2673a";
const LOW: &str = "#3b6ea8";

const WIDTH: f64 = 680.0;

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

/// Opens a figure: the drawing's frame, its accessible name and its visible title.
fn open(s: &mut String, title: &str, height: f64) {
    let t = escape(title);
    let _ = write!(
        s,
        r#"<figure><svg role="img" viewBox="0 0 {WIDTH} {height}" width="{WIDTH}" height="{height}" aria-label="{t}"><title>{t}</title><text x="0" y="14" class="ctitle">{t}</text>"#
    );
}

fn close(s: &mut String, caption: &str) {
    let _ = write!(
        s,
        "</svg><figcaption>{}</figcaption></figure>",
        escape(caption)
    );
}

/// A horizontal value axis from `lo` to `hi` at `y`, gridlines up to `top`, ticks labelled.
fn value_axis(
    s: &mut String,
    (lo, hi, ticks): &(f64, f64, Vec<f64>),
    x: &dyn Fn(f64) -> f64,
    y: f64,
    top: f64,
) {
    let step = ticks.get(1).zip(ticks.first()).map_or(1.0, |(b, a)| b - a);
    let _ = write!(
        s,
        r##"<line x1="{:.1}" y1="{y}" x2="{:.1}" y2="{y}" stroke="#444"/>"##,
        x(*lo),
        x(*hi)
    );
    for t in ticks {
        let _ = write!(
            s,
            r##"<line x1="{0:.1}" y1="{top}" x2="{0:.1}" y2="{y}" stroke="#ddd"/><text x="{0:.1}" y="{1}" text-anchor="middle" class="tick">{2}</text>"##,
            x(*t),
            y + 14.0,
            ticks::label(*t, step)
        );
    }
}

/// Horizontal box plots (median, quartiles, whiskers to the most extreme value within 1.5 IQR,
/// points beyond), one row per group, every group labelled with its n.
pub fn box_plot(title: &str, unit: &str, groups: &[(String, Vec<f64>)], hue: Hue) -> String {
    let mut all: Vec<f64> = groups.iter().flat_map(|(_, v)| v.iter().copied()).collect();
    all.sort_by(f64::total_cmp);
    if all.is_empty() {
        return format!("<p>No values for {}.</p>", escape(title));
    }
    let axis = ticks::axis(all[0], all[all.len() - 1], 6);
    let (left, width, row_h, top) = (170.0, 480.0, 30.0, 28.0);
    let height = top + row_h * groups.len() as f64 + 40.0;
    let x = |v: f64| left + (v - axis.0) / (axis.1 - axis.0) * width;
    let mut s = String::new();
    open(&mut s, title, height);
    let axis_y = top + row_h * groups.len() as f64 + 6.0;
    value_axis(&mut s, &axis, &x, axis_y, top);
    let c = hue.colour();
    for (i, (name, values)) in groups.iter().enumerate() {
        let b = Boxed::of(values);
        let y = top + row_h * i as f64 + row_h / 2.0;
        let _ = write!(
            s,
            r#"<text x="{}" y="{}" text-anchor="end" class="label">{} (n = {})</text>"#,
            left - 8.0,
            y + 4.0,
            escape(name),
            b.sorted.len()
        );
        box_row(&mut s, &b, y, c, &x);
    }
    let _ = write!(
        s,
        r#"<text x="{}" y="{}" text-anchor="middle" class="label">{}</text>"#,
        left + width / 2.0,
        height - 4.0,
        escape(unit)
    );
    close(&mut s, &format!("{title} ({unit}): boxes span the quartiles, the thick line is the median, whiskers reach the furthest values within 1.5 times the box's width, circles lie beyond."));
    s
}

/// One group's row of a box plot at height `y`, in colour `c`, `x` mapping values across.
fn box_row(s: &mut String, b: &Boxed, y: f64, c: &str, x: &dyn Fn(f64) -> f64) {
    let _ = write!(
        s,
        r#"<line x1="{:.1}" y1="{y}" x2="{:.1}" y2="{y}" stroke="{c}"/><rect x="{:.1}" y="{:.1}" width="{:.1}" height="14" fill="{c}" fill-opacity="0.25" stroke="{c}"/>"#,
        x(b.low),
        x(b.high),
        x(b.q1),
        y - 7.0,
        (x(b.q3) - x(b.q1)).max(1.0),
    );
    let _ = write!(
        s,
        r#"<line x1="{0:.1}" y1="{1:.1}" x2="{0:.1}" y2="{2:.1}" stroke="{c}" stroke-width="2.5"/>"#,
        x(b.median),
        y - 7.0,
        y + 7.0
    );
    for p in b.sorted.iter().filter(|p| **p < b.low || **p > b.high) {
        let _ = write!(
            s,
            r#"<circle cx="{:.1}" cy="{y}" r="2.5" fill="none" stroke="{c}"/>"#,
            x(*p)
        );
    }
}

/// Vertical bars of counts (students), one hue, each count written above its bar, the count
/// axis in whole students.
pub fn count_bars(title: &str, bars: &[(String, usize)], x_label: &str, hue: Hue) -> String {
    if bars.is_empty() {
        return String::new();
    }
    let most = bars.iter().map(|b| b.1).max().unwrap_or(0) as f64;
    let step = ticks::count_step(most);
    let top_value = ((most / step).ceil() * step).max(step);
    let (left, top, h) = (50.0, 30.0, 170.0);
    let height = top + h + 50.0;
    let bw = ((WIDTH - left - 20.0) / bars.len() as f64).min(70.0);
    let y = |v: f64| top + h - v / top_value * h;
    let mut s = String::new();
    open(&mut s, title, height);
    let mut v = 0.0;
    while v <= top_value + 1e-9 {
        let _ = write!(
            s,
            r##"<line x1="{left}" y1="{0:.1}" x2="{1:.1}" y2="{0:.1}" stroke="#ddd"/><text x="{2}" y="{3:.1}" text-anchor="end" class="tick">{4}</text>"##,
            y(v),
            left + bw * bars.len() as f64,
            left - 6.0,
            y(v) + 4.0,
            v
        );
        v += step;
    }
    let c = hue.colour();
    for (i, (label, n)) in bars.iter().enumerate() {
        let x = left + i as f64 * bw + bw * 0.15;
        let top_y = y(*n as f64);
        let _ = write!(
            s,
            r#"<rect x="{x:.1}" y="{top_y:.1}" width="{:.1}" height="{:.1}" fill="{c}"/><text x="{:.1}" y="{:.1}" text-anchor="middle" class="label">{n}</text><text x="{2:.1}" y="{}" text-anchor="middle" class="tick">{}</text>"#,
            bw * 0.7,
            top + h - top_y,
            x + bw * 0.35,
            top_y - 4.0,
            top + h + 14.0,
            escape(label)
        );
    }
    let _ = write!(
        s,
        r##"<line x1="{left}" y1="{0}" x2="{1:.1}" y2="{0}" stroke="#444"/><text x="{2:.1}" y="{3}" text-anchor="middle" class="label">{4}</text>"##,
        top + h,
        left + bw * bars.len() as f64,
        left + bw * bars.len() as f64 / 2.0,
        height - 6.0,
        escape(x_label)
    );
    close(&mut s, &format!("{title}: students in each {x_label}."));
    s
}

/// One bench's bar: its name, its shift, and whether it is a finding.
pub struct Shift {
    pub name: String,
    pub value: f64,
    pub finding: bool,
}

/// Horizontal bars of a signed shift around a zero line, one row a bench: reading high in one
/// hue, low in another, every shift written at its bar's end and every bench named beside it.
pub fn shift_bars(title: &str, bars: &[Shift], unit: &str) -> String {
    let values: Vec<f64> = bars
        .iter()
        .map(|b| b.value)
        .filter(|v| v.is_finite())
        .collect();
    if values.is_empty() {
        return String::new();
    }
    let reach = values.iter().fold(0.5f64, |m, v| m.max(v.abs()));
    let axis = ticks::axis(-reach, reach, 6);
    let (left, width, row_h, top) = (170.0, 440.0, 24.0, 28.0);
    let height = top + row_h * bars.len() as f64 + 44.0;
    let x = |v: f64| left + (v - axis.0) / (axis.1 - axis.0) * width;
    let mut s = String::new();
    open(&mut s, title, height);
    let axis_y = top + row_h * bars.len() as f64 + 6.0;
    value_axis(&mut s, &axis, &x, axis_y, top);
    let _ = write!(
        s,
        r##"<line x1="{0:.1}" y1="{top}" x2="{0:.1}" y2="{axis_y}" stroke="#222" stroke-width="1.5"/>"##,
        x(0.0)
    );
    for (i, b) in bars.iter().enumerate() {
        let y = top + row_h * i as f64 + row_h / 2.0;
        shift_row(&mut s, b, y, left, &x);
    }
    let _ = write!(
        s,
        r#"<text x="{}" y="{}" text-anchor="middle" class="label">{}</text>"#,
        left + width / 2.0,
        height - 4.0,
        escape(unit)
    );
    close(&mut s, &format!("{title} ({unit}): to the right of the zero line a bench reads high, to the left low; a finding is named in bold."));
    s
}

/// One bench's row of the shift bars at height `y`.
fn shift_row(s: &mut String, b: &Shift, y: f64, left: f64, x: &dyn Fn(f64) -> f64) {
    let weight = if b.finding {
        " font-weight=\"bold\""
    } else {
        ""
    };
    let mark = if b.finding { " (finding)" } else { "" };
    let _ = write!(
        s,
        r#"<text x="{}" y="{}" text-anchor="end" class="label"{weight}>{}{mark}</text>"#,
        left - 8.0,
        y + 4.0,
        escape(&b.name)
    );
    if !b.value.is_finite() {
        return;
    }
    let (x0, x1) = (x(0.0), x(b.value));
    let (c, anchor, dx) = if b.value >= 0.0 {
        (HIGH, "start", 4.0)
    } else {
        (LOW, "end", -4.0)
    };
    let _ = write!(
        s,
        r#"<rect x="{:.1}" y="{:.1}" width="{:.1}" height="14" fill="{c}"/><text x="{:.1}" y="{:.1}" text-anchor="{anchor}" class="tick">{:+.1}</text>"#,
        x0.min(x1),
        y - 7.0,
        (x1 - x0).abs().max(1.0),
        x1 + dx,
        y + 4.0,
        b.value
    );
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn labels_are_escaped_and_counts_are_whole() {
        let svg = count_bars(
            "Grades",
            &[("A".into(), 3), ("B<".into(), 2)],
            "grade",
            Hue::Grade,
        );
        assert!(svg.contains(">3</text>") && svg.contains("B&lt;"));
        assert!(!svg.contains(".0</text>"), "no half students: {svg}");
        let b = box_plot(
            "Rec <x>",
            "%",
            &[
                ("A".into(), vec![1.0, 2.0, 3.0]),
                ("B<".into(), vec![2.0, 4.0]),
            ],
            Hue::Section,
        );
        assert!(b.contains("A (n = 3)") && b.contains("B&lt; (n = 2)"));
        assert!(!b.contains("<x>"));
    }

    #[test]
    fn axes_end_on_nice_ticks() {
        let b = box_plot(
            "Score",
            "points",
            &[("S".into(), vec![40.0, 55.0, 70.0, 101.6])],
            Hue::Section,
        );
        // 40 to 101.6 in about six ticks: 61.6 / 6 = 10.3, so steps of 20 from 40 to 120
        // (hand-worked)
        for t in ["40", "60", "80", "100", "120"] {
            assert!(b.contains(&format!(">{t}</text>")), "{t}");
        }
        assert!(!b.contains("54.6") && !b.contains("101.6<"));
        let s = shift_bars(
            "Benches",
            &[
                Shift {
                    name: "7".into(),
                    value: 2.64,
                    finding: true,
                },
                Shift {
                    name: "3".into(),
                    value: -0.7,
                    finding: false,
                },
            ],
            "°C",
        );
        assert!(s.contains("+2.6") && s.contains("-0.7") && s.contains("7 (finding)"));
        assert!(s.contains(HIGH) && s.contains(LOW));
    }
}
