//! Melting ranges as students write them: "121-122", "121–122 °C", "121 to 122.5", "~121-122".
//!
//! A range is an onset and a clear point. A single value is taken as both, and the caller is
//! told so that it can say so in the notes. An inverted range is kept as written: judging it is
//! the assessment's job, not the parser's.

use super::values::{parse_quantity, strip_approximate, Decimal, TempUnit, Unit};

/// A melting range in the scale it was written in, before conversion.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct RawRange {
    pub onset: f64,
    pub clear: f64,
    /// The scale written in the cell, if any.
    pub unit: Option<TempUnit>,
    /// Only one value was written.
    pub single: bool,
    /// The clear point was written by its last digits and completed ("121-2").
    pub completed: bool,
}

const DASHES: [char; 5] = ['–', '—', '‒', '~', '/'];

fn temperature(text: &str, decimal: Decimal) -> Option<(f64, Option<TempUnit>)> {
    let q = parse_quantity(text, decimal)?;
    match q.unit {
        None => Some((q.value, None)),
        Some(Unit::Temperature(t)) => Some((q.value, Some(t))),
        Some(_) => None,
    }
}

/// Finds the hyphen that separates two numbers: the first '-' that follows a digit,
/// ignoring spaces, so that a leading minus sign or an exponent's sign is not taken.
fn separating_hyphen(text: &str) -> Option<usize> {
    let mut last_significant: Option<char> = None;
    for (i, c) in text.char_indices() {
        if c == '-' || c == '−' {
            if matches!(last_significant, Some(d) if d.is_ascii_digit() || d == 'C' || d == 'F' || d == 'K' || d == '°' || d == 'c')
            {
                return Some(i);
            }
        } else if !c.is_whitespace() {
            last_significant = Some(c);
        }
    }
    None
}

fn split_range(text: &str) -> Option<(&str, &str)> {
    let lower = text.to_lowercase();
    // the words between onset and clear point ("to", "bis", "a", "à"), from the vocabulary
    for word in super::vocabulary::current().separators() {
        let sep = format!(" {word} ");
        if let Some(p) = lower.find(&sep) {
            // lowercase can change byte offsets only for non-ASCII; guard the boundary
            if text.is_char_boundary(p) && text.is_char_boundary(p + sep.len()) {
                return Some((&text[..p], &text[p + sep.len()..]));
            }
        }
    }
    for dash in DASHES {
        if let Some(p) = text.find(dash) {
            if p > 0 {
                return Some((&text[..p], &text[p + dash.len_utf8()..]));
            }
        }
    }
    let p = separating_hyphen(text)?;
    let width = text[p..].chars().next()?.len_utf8();
    Some((&text[..p], &text[p + width..]))
}

/// The common case, "121.5-122.0" (digits and points around one hyphen), read without the
/// general machinery. `None` sends anything else down the general path.
fn plain_range(text: &str) -> Option<RawRange> {
    let b = text.as_bytes();
    let plain = |s: &[u8]| {
        !s.is_empty() && s[0].is_ascii_digit() && s.iter().all(|c| c.is_ascii_digit() || *c == b'.')
    };
    let dash = b.iter().position(|c| *c == b'-')?;
    let (a, rest) = (&b[..dash], &b[dash + 1..]);
    if !plain(a) || !plain(rest) {
        return None;
    }
    // a number too long for a double is not a temperature
    let onset = text[..dash].parse().ok().filter(|v: &f64| v.is_finite())?;
    let clear = text[dash + 1..]
        .parse()
        .ok()
        .filter(|v: &f64| v.is_finite())?;
    Some(RawRange {
        onset,
        clear,
        unit: None,
        single: false,
        completed: false,
    })
}

/// Reads a melting range; `None` when the text is not one.
pub fn parse_range(text: &str, decimal: Decimal) -> Option<RawRange> {
    parse_written(text, decimal).map(complete_shorthand)
}

/// Completes a clear point written by its last digits ("121-2" is 121-122, "120.5-1.5" is
/// 120.5-121.5, "119-21" is 119-121): a clear point below the onset with fewer whole-number
/// digits takes the onset's leading digits, where that gives a range of at most 10 degrees.
fn complete_shorthand(r: RawRange) -> RawRange {
    if r.single || r.clear >= r.onset || r.clear < 0.0 || r.onset < 10.0 {
        return r;
    }
    let digits = |v: f64| v.trunc().abs().to_string().len() as i32;
    let (k, n) = (digits(r.clear), digits(r.onset));
    if k >= n {
        return r;
    }
    let scale = 10f64.powi(k);
    let mut clear = (r.onset / scale).trunc() * scale + r.clear;
    if clear < r.onset {
        clear += scale;
    }
    // "143.4-3.4" would complete to the onset itself: no range, left as written (inverted)
    if clear == r.onset || clear - r.onset > 10.0 {
        return r;
    }
    RawRange {
        clear,
        completed: true,
        ..r
    }
}

/// The range without the words written around it: a leading label ("mp", "m.p.:", "melting
/// point"), a closing remark in brackets ("(sharp)") and a last word about how it melted
/// ("sharp", "broad", "dec").
fn without_words(text: &str) -> &str {
    const LABELS: [&str; 10] = [
        "melting point",
        "melting range",
        "mp range",
        "melted at",
        "melts at",
        "m. p.",
        "m.p.",
        "mpt",
        "mp",
        "range",
    ];
    const MANNER: [&str; 7] = [
        "sharp",
        "broad",
        "dec",
        "decomp",
        "decomposes",
        "decomposed",
        "d",
    ];
    let mut t = text.trim();
    for label in LABELS {
        let head = t.get(..label.len());
        if head.is_some_and(|h| h.eq_ignore_ascii_case(label)) {
            let rest = t[label.len()..].trim_start();
            let rest = rest.strip_prefix([':', '=']).unwrap_or(rest).trim_start();
            // "mp" must be a word of its own: "mpa" is not a label
            if rest.len() < t.len() - label.len() || rest.starts_with(|c: char| !c.is_alphabetic())
            {
                t = rest;
            }
            break;
        }
    }
    if let (Some(open), true) = (t.find('('), t.ends_with(')')) {
        if t[..open].contains(|c: char| c.is_ascii_digit()) {
            t = t[..open].trim_end();
        }
    }
    for _ in 0..2 {
        let Some((head, last)) = t.rsplit_once(' ') else {
            break;
        };
        let word = last.trim_end_matches(['.', ',']).to_ascii_lowercase();
        if !MANNER.contains(&word.as_str()) {
            break;
        }
        t = head.trim_end().trim_end_matches(',');
    }
    t
}

fn parse_written(text: &str, decimal: Decimal) -> Option<RawRange> {
    if let Some(r) = plain_range(text) {
        return Some(r);
    }
    let (t, _) = strip_approximate(without_words(text));
    let t = t.trim();
    if t.is_empty() {
        return None;
    }
    if let Some((a, b)) = split_range(t) {
        let (onset, u1) = temperature(strip_approximate(a).0, decimal)?;
        let (clear, u2) = temperature(strip_approximate(b).0, decimal)?;
        if u1.is_some() && u2.is_some() && u1 != u2 {
            return None;
        }
        Some(RawRange {
            onset,
            clear,
            unit: u2.or(u1),
            single: false,
            completed: false,
        })
    } else {
        let (v, unit) = temperature(t, decimal)?;
        Some(RawRange {
            onset: v,
            clear: v,
            unit,
            single: true,
            completed: false,
        })
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use proptest::prelude::*;

    fn r(text: &str) -> Option<(f64, f64, bool)> {
        parse_range(text, Decimal::Point).map(|r| (r.onset, r.clear, r.single))
    }

    #[test]
    fn written_forms_from_the_issue() {
        assert_eq!(r("121-122"), Some((121.0, 122.0, false)));
        assert_eq!(r("121–122 °C"), Some((121.0, 122.0, false)));
        assert_eq!(r("121 to 122.5"), Some((121.0, 122.5, false)));
        assert_eq!(r("121.5 - 122"), Some((121.5, 122.0, false)));
        assert_eq!(r("~121-122"), Some((121.0, 122.0, false)));
        assert_eq!(r("122"), Some((122.0, 122.0, true)));
        assert_eq!(r("121 °C - 122 °C"), Some((121.0, 122.0, false)));
        assert_eq!(r("ca. 120—121"), Some((120.0, 121.0, false)));
    }

    #[test]
    fn words_around_a_range_are_read_past() {
        // from a trial: "121-122.5 (sharp)" and "mp 120.5-122" were unreadable
        assert_eq!(r("121-122.5 (sharp)"), Some((121.0, 122.5, false)));
        assert_eq!(r("mp 120.5-122"), Some((120.5, 122.0, false)));
        assert_eq!(r("m.p.: 121-122 °C"), Some((121.0, 122.0, false)));
        assert_eq!(
            r("Melting point = 121.5 to 122.5"),
            Some((121.5, 122.5, false))
        );
        assert_eq!(r("121-122 sharp"), Some((121.0, 122.0, false)));
        assert_eq!(r("121-123 °C, broad"), Some((121.0, 123.0, false)));
        assert_eq!(r("mp ~121-122 (dec.)"), Some((121.0, 122.0, false)));
        // words that are not about the range still make it unreadable
        assert_eq!(r("mpa 121-122"), None);
        assert_eq!(r("121-122 melted"), None);
        assert_eq!(r("(sharp)"), None);
        // too long for a double (an adversarial trial: read as infinity, then "inverted")
        assert_eq!(r(&format!("{}-122", "9".repeat(400))), None);
    }

    #[test]
    fn scales_and_commas() {
        let f = parse_range("250-252 °F", Decimal::Point).unwrap();
        assert_eq!(f.unit, Some(TempUnit::Fahrenheit));
        let c = parse_range("121,5-122,0", Decimal::Comma).unwrap();
        assert_eq!((c.onset, c.clear), (121.5, 122.0));
        let k = parse_range("394 K to 395 K", Decimal::Point).unwrap();
        assert_eq!(k.unit, Some(TempUnit::Kelvin));
    }

    #[test]
    fn a_clear_point_written_by_its_last_digits_is_completed() {
        // common practice in lab notebooks: "121-2" for 121-122 °C
        assert_eq!(r("121-2"), Some((121.0, 122.0, false)));
        assert_eq!(r("120.5-1.5"), Some((120.5, 121.5, false)));
        assert_eq!(r("119-21"), Some((119.0, 121.0, false)));
        assert_eq!(r("129-1"), Some((129.0, 131.0, false)));
        // a truly inverted range stays as written
        assert_eq!(r("124.5-123.5"), Some((124.5, 123.5, false)));
        assert_eq!(r("121-19"), Some((121.0, 19.0, false)));
        // its last digits would repeat the onset (a case proptest found): no range, as written
        assert_eq!(r("143.4-3.4"), Some((143.4, 3.4, false)));
    }

    #[test]
    fn inverted_ranges_are_kept_as_written() {
        assert_eq!(r("122-119"), Some((122.0, 119.0, false)));
    }

    #[test]
    fn not_ranges() {
        for t in [
            "",
            "melted",
            "121-",
            "-",
            "12 g - 13 g",
            "121 °C - 122 °F",
            "#VALUE!",
        ] {
            assert_eq!(r(t), None, "{t:?}");
        }
    }

    proptest! {
        // Anything we format the way students write ranges parses back to the same numbers.
        #[test]
        fn formatted_ranges_parse_back(a in 0u32..4000, b in 0u32..4000, sep in 0usize..6, approx in any::<bool>(), unit in 0usize..3) {
            let (onset, clear) = (f64::from(a) / 10.0, f64::from(b) / 10.0);
            let seps = ["-", " - ", "–", " to ", "—", " – "];
            let units = ["", " °C", "°C"];
            let text = format!("{}{}{}{}{}", if approx { "~" } else { "" }, onset, seps[sep], clear, units[unit]);
            let got = parse_range(&text, Decimal::Point).unwrap();
            // a clear point with fewer digits than the onset is shorthand, completed (tested above)
            prop_assert_eq!((got.onset, got.single), (onset, false));
            prop_assert!(got.clear == clear || got.completed, "{} -> {}", text, got.clear);
            prop_assert!(!got.completed || (got.clear > onset && got.clear - onset <= 10.0));
        }

        #[test]
        fn single_values_parse_back(a in -500i32..4000) {
            let v = f64::from(a) / 10.0;
            let got = parse_range(&format!("{v}"), Decimal::Point).unwrap();
            prop_assert_eq!((got.onset, got.clear, got.single), (v, v, true));
        }

        #[test]
        fn decimal_comma_ranges_parse_back(a in 0u32..4000, b in 0u32..4000) {
            let (onset, clear) = (f64::from(a) / 10.0, f64::from(b) / 10.0);
            let text = format!("{onset}-{clear}").replace('.', ",");
            let got = parse_range(&text, Decimal::Comma).unwrap();
            prop_assert_eq!(got.onset, onset);
            prop_assert!(got.clear == clear || got.completed);
        }

        #[test]
        fn no_text_panics(s in "\\PC{0,40}") {
            let _ = parse_range(&s, Decimal::Point);
            let _ = parse_range(&s, Decimal::Comma);
        }

        #[test]
        fn quantities_parse_back(v in -1.0e6f64..1.0e6, unit in 0usize..4) {
            let units = ["", " g", "mg", " mL"];
            let text = format!("{v}{}", units[unit]);
            let got = parse_quantity(&text, Decimal::Point).unwrap();
            prop_assert_eq!(got.value, v);
        }

        #[test]
        fn no_quantity_text_panics(s in "\\PC{0,40}") {
            let _ = parse_quantity(&s, Decimal::Point);
            let _ = parse_quantity(&s, Decimal::Comma);
        }
    }
}
