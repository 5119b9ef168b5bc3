//! Small pieces of HTML shared by the pages benchgrade writes: text escaping (every text
//! from a spreadsheet goes through it), numbers to a fixed number of places, and tables.

use std::fmt::Write as _;

use super::report::{Cell, Table};

/// Escapes text for HTML and SVG: & < > " and '.
pub fn escape(s: &str) -> String {
    let mut out = String::with_capacity(s.len() + 8);
    escape_into(&mut out, s);
    out
}

/// Appends `s` escaped to `out`: the stretches between special characters are copied whole.
pub fn escape_into(out: &mut String, s: &str) {
    let mut from = 0;
    for (i, b) in s.bytes().enumerate() {
        let entity = match b {
            b'&' => "&amp;",
            b'<' => "&lt;",
            b'>' => "&gt;",
            b'"' => "&quot;",
            b'\'' => "&#39;",
            _ => continue,
        };
        // every special character is ASCII, so `i` is a character boundary
        out.push_str(&s[from..i]);
        out.push_str(entity);
        from = i + 1;
    }
    out.push_str(&s[from..]);
}

/// A number to `places` decimals, or a dash where there is none.
pub fn fmt(v: f64, places: usize) -> String {
    if v.is_finite() {
        format!("{v:.places$}")
    } else {
        "–".into()
    }
}

/// A p-value as a reader wants it: four decimals, "< 0.0001" below that, a dash for none.
pub fn p_value(p: f64) -> String {
    if !p.is_finite() {
        "–".into()
    } else if p < 0.0001 {
        "< 0.0001".into()
    } else {
        format!("{p:.4}")
    }
}

/// A table of typed cells: text escaped, numbers to each column's decimals (p-values as
/// `p_value` writes them).
pub fn table(t: &Table) -> String {
    let mut s = String::from("<table><thead><tr>");
    for c in &t.columns {
        let _ = write!(s, "<th>{}</th>", escape(c.label));
    }
    s.push_str("</tr></thead><tbody>");
    for r in &t.rows {
        s.push_str("<tr>");
        for (cell, c) in r.iter().zip(&t.columns) {
            let text = match cell {
                Cell::Text(x) => escape(x),
                Cell::Count(n) => n.to_string(),
                Cell::Number(v) if c.code.starts_with("p_") => p_value(*v),
                Cell::Number(v) => fmt(*v, c.decimals),
            };
            let _ = write!(s, "<td>{text}</td>");
        }
        s.push_str("</tr>");
    }
    s.push_str("</tbody></table>");
    s
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn p_values_read_as_a_reader_wants_them() {
        assert_eq!(p_value(8.699e-5), "< 0.0001");
        assert_eq!(p_value(0.0001), "0.0001");
        assert_eq!(p_value(0.04567), "0.0457");
        assert_eq!(p_value(f64::NAN), "–");
    }

    #[test]
    fn text_is_escaped() {
        assert_eq!(
            escape("<script>alert('x')</script> & \"y\""),
            "&lt;script&gt;alert(&#39;x&#39;)&lt;/script&gt; &amp; &quot;y&quot;"
        );
    }

    proptest::proptest! {
        /// Any text, multibyte included, escapes to markup-free text that the five entities
        /// turn back into the original (the reference: HTML's own entity meanings).
        #[test]
        fn escaping_is_lossless_and_leaves_no_markup(s in "\\PC{0,40}|[<>&'\"aé€]{0,12}") {
            let e = escape(&s);
            proptest::prop_assert!(!e.contains(['<', '>', '"', '\'']));
            let back = e
                .replace("&lt;", "<")
                .replace("&gt;", ">")
                .replace("&quot;", "\"")
                .replace("&#39;", "'")
                .replace("&amp;", "&");
            proptest::prop_assert_eq!(back, s);
        }
    }
}
