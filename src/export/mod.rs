//! Exporters: one module per output, each taking finished values and a destination.

pub mod atomic;
pub mod baseline;
pub mod book_plan;
pub mod check_report;
pub mod cohort_csv;
pub mod cohort_workbook;
pub mod gradebook;
#[cfg(feature = "parquet")]
pub mod parquet;
#[cfg(not(feature = "parquet"))]
#[path = "parquet_stub.rs"]
pub mod parquet;
pub mod provenance;
pub mod pseudonym;
pub mod report_html;
pub mod results_csv;
pub mod results_json;
pub mod row_thread;
pub mod section_stats;
pub mod text_outputs;
pub mod workbook;
pub mod workbook_summary;
pub mod workbook_worker;

/// Guards a text cell from student input against spreadsheet formula injection in CSV:
/// text starting with = + - @, a tab, a carriage return or NUL gets a leading apostrophe.
pub fn neutralise(text: &str) -> std::borrow::Cow<'_, str> {
    match text.chars().next() {
        Some('=' | '+' | '-' | '@' | '\t' | '\r' | '\0') => format!("'{text}").into(),
        _ => text.into(),
    }
}

/// A number at full precision (the shortest text that reads back exactly), or nothing.
pub fn number(v: Option<f64>) -> String {
    let mut s = String::new();
    push_number(&mut s, v);
    s
}

/// Appends a number as `number` writes it: the shortest round-trip digits, no exponent and no
/// trailing ".0", as Rust's `Display` writes it but faster (ryu; where two digit strings are
/// equally short, ryu's choice).
pub fn push_number(out: &mut String, v: Option<f64>) {
    let Some(x) = v.filter(|x| x.is_finite()) else {
        return;
    };
    if x.fract() == 0.0 && x != 0.0 && x.abs() < 1e15 {
        // whole numbers (points, totals, volumes) need no shortest-digits search
        if x < 0.0 {
            out.push('-');
        }
        crate::numtext::push_u64(out, x.abs() as u64);
        return;
    }
    let mut buf = ryu::Buffer::new();
    let s = buf.format_finite(x);
    if s.contains('e') {
        use std::fmt::Write as _;
        let _ = write!(out, "{x}");
    } else {
        out.push_str(s.strip_suffix(".0").unwrap_or(s));
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn formula_injection_is_neutralised() {
        // OWASP CSV injection guidance (common practice): prefix such cells with a quote.
        assert_eq!(neutralise("=HYPERLINK(\"x\")"), "'=HYPERLINK(\"x\")");
        assert_eq!(neutralise("@SUM(A1)"), "'@SUM(A1)");
        assert_eq!(neutralise("Ana"), "Ana");
    }

    #[test]
    fn numbers_round_trip_at_full_precision() {
        let v = 100.0 * 2.31 / 3.02;
        assert_eq!(number(Some(v)).parse::<f64>().unwrap(), v);
        assert_eq!(number(None), "");
        assert_eq!(number(Some(f64::NAN)), "");
    }

    proptest::proptest! {
        #[test]
        fn numbers_read_back_exactly_in_as_many_digits_as_display(x in proptest::num::f64::NORMAL | proptest::num::f64::ZERO) {
            // shortest round-trip digits; where two are equally short (18400638876687.812 and
            // .813 both read back as the same double) ryu and Rust's Display may pick apart
            let text = number(Some(x));
            proptest::prop_assert_eq!(text.parse::<f64>().unwrap(), x);
            proptest::prop_assert!(!text.contains('e'));
            proptest::prop_assert_eq!(text.len(), format!("{x}").len());
        }

        #[test]
        fn whole_numbers_as_display_writes_them(n in -(1i64 << 53)..(1i64 << 53), scale in 0u32..3) {
            let x = n as f64 * 10f64.powi(scale as i32);
            proptest::prop_assert_eq!(number(Some(x)), format!("{x}"));
        }
    }
}
