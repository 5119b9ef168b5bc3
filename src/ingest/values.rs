//! Numbers as people type them into lab spreadsheets: "2.31 g", "1850 mg", "2,31", "~121 °C".
//!
//! This module turns one piece of text into a number and, where the text carries one, its unit.
//! It knows nothing about fields or spreadsheets; `ingest::row` decides what a unit means for a
//! column. Decimal commas are accepted where they cannot be read as digit grouping, or wherever
//! the file's convention (`Decimal::Comma`, sniffed from semicolon CSVs) says so.

/// Which mark separates the integer and fractional part in the file being read.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Decimal {
    Point,
    Comma,
}

/// Temperature scales seen in melting-point columns.
#[derive(Clone, Copy, Debug, PartialEq, Eq, serde::Serialize)]
pub enum TempUnit {
    Celsius,
    Fahrenheit,
    Kelvin,
}

impl TempUnit {
    /// Converts a reading on this scale to degrees Celsius.
    pub fn to_celsius(self, v: f64) -> f64 {
        match self {
            TempUnit::Celsius => v,
            TempUnit::Fahrenheit => (v - 32.0) * 5.0 / 9.0,
            TempUnit::Kelvin => v - 273.15,
        }
    }
}

/// A unit found in a header or a cell.
#[derive(Clone, Copy, Debug, PartialEq)]
pub enum Unit {
    /// Mass, with the factor that converts it to grams.
    Mass(f64),
    /// Volume, with the factor that converts it to millilitres.
    Volume(f64),
    Temperature(TempUnit),
    Percent,
}

impl Unit {
    /// The unit's usual symbol: "g", "mg", "mL", "°C", "%".
    pub fn symbol(&self) -> String {
        let scaled = |f: f64, base: &str| match f {
            1.0 => base.to_string(),
            0.001 => format!("m{base}"),
            1000.0 => format!("k{base}"),
            1e-6 => format!("µ{base}"),
            x => format!("{x} {base}"),
        };
        match self {
            Unit::Mass(f) => scaled(*f, "g"),
            Unit::Volume(1000.0) => "L".into(),
            Unit::Volume(f) if *f == 0.001 => "µL".into(),
            Unit::Volume(f) => {
                if *f == 1.0 {
                    "mL".into()
                } else {
                    format!("{f} mL")
                }
            }
            Unit::Temperature(TempUnit::Celsius) => "°C".into(),
            Unit::Temperature(TempUnit::Fahrenheit) => "°F".into(),
            Unit::Temperature(TempUnit::Kelvin) => "K".into(),
            Unit::Percent => "%".into(),
        }
    }

    pub fn describe(&self) -> &'static str {
        match self {
            Unit::Mass(_) => "a mass",
            Unit::Volume(_) => "a volume",
            Unit::Temperature(_) => "a temperature",
            Unit::Percent => "a percentage",
        }
    }
}

/// Reads a unit name ("mg", "°C", "mL", "%", "Gramm"); `None` when the text is not a unit the
/// vocabulary knows (`[unit.*]` in vocabulary.toml).
pub fn parse_unit(text: &str) -> Option<Unit> {
    let t = text.trim().trim_end_matches('.').trim();
    if t.is_empty() || t.len() > 40 {
        return None;
    }
    let t = super::vocabulary::fold(t).replace(['º', '˚'], "°");
    let v = super::vocabulary::current();
    v.unit(&t)
        .or_else(|| v.unit(&t.replace("deg ", "°").replace("deg", "°")))
}

/// Words and marks people put before a value they are unsure of.
const APPROXIMATE: [&str; 8] = [
    "approximately",
    "approx.",
    "approx",
    "about",
    "ca.",
    "ca",
    "~",
    "≈",
];

/// Removes a leading "~", "ca." or "approx." (and the space after it).
pub fn strip_approximate(text: &str) -> (&str, bool) {
    let t = text.trim_start();
    for word in APPROXIMATE {
        if t.len() >= word.len() && t.is_char_boundary(word.len()) {
            let (head, rest) = t.split_at(word.len());
            let word_like = word.chars().all(char::is_alphabetic);
            let boundary = !word_like || rest.starts_with([' ', '.']) || rest.is_empty();
            if head.eq_ignore_ascii_case(word) && boundary {
                return (rest.trim_start(), true);
            }
        }
    }
    (t, false)
}

/// Splits off the longest leading run that can be a number: sign, digits, one or more
/// separators, an exponent. Returns the numeric text and the rest.
fn split_numeric_prefix(text: &str) -> (&str, &str) {
    let bytes = text.as_bytes();
    let mut end = 0;
    let mut seen_digit = false;
    let mut i = 0;
    if let Some(rest) = text.strip_prefix('−') {
        // a Unicode minus sign: three bytes
        let (num, tail) = split_numeric_prefix(rest);
        if num.is_empty() {
            return ("", text);
        }
        return (&text[..3 + num.len()], tail);
    }
    if i < bytes.len() && (bytes[i] == b'+' || bytes[i] == b'-') {
        i += 1;
    }
    while i < bytes.len() {
        let b = bytes[i];
        if b.is_ascii_digit() {
            seen_digit = true;
            i += 1;
            end = i;
        } else if (b == b'.' || b == b',') && i + 1 < bytes.len() && bytes[i + 1].is_ascii_digit() {
            i += 1;
        } else if (b == b'.' || b == b',') && seen_digit {
            // "12." : a trailing separator belongs to the number
            i += 1;
            end = i;
        } else if (b == b'e' || b == b'E') && seen_digit {
            let mut j = i + 1;
            if j < bytes.len() && (bytes[j] == b'+' || bytes[j] == b'-') {
                j += 1;
            }
            if j < bytes.len() && bytes[j].is_ascii_digit() {
                while j < bytes.len() && bytes[j].is_ascii_digit() {
                    j += 1;
                }
                end = j;
            }
            break;
        } else {
            break;
        }
    }
    if !seen_digit {
        return ("", text);
    }
    (&text[..end], &text[end..])
}

/// True when `s` is digits in groups of three after a first group of one to three, joined by `sep`.
fn is_grouped(s: &str, sep: char) -> bool {
    let mut parts = s.split(sep);
    let first = parts.next().unwrap_or("");
    let first_ok = (1..=3).contains(&first.len()) && first.bytes().all(|b| b.is_ascii_digit());
    let mut rest = parts.peekable();
    first_ok
        && rest.peek().is_some()
        && rest.all(|p| p.len() == 3 && p.bytes().all(|b| b.is_ascii_digit()))
}

/// Interprets the numeric text found by `split_numeric_prefix` under a decimal convention.
fn interpret_number(num: &str, decimal: Decimal) -> Option<f64> {
    let (sign, body) = match num.strip_prefix('−') {
        Some(rest) => ("-", rest),
        None => ("", num),
    };
    let body = body.trim_end_matches(['.', ',']);
    let (mantissa, exponent) = match body.find(['e', 'E']) {
        Some(p) => (&body[..p], &body[p..]),
        None => (body, ""),
    };
    let unsigned = mantissa.trim_start_matches(['+', '-']);
    let prefix = &mantissa[..mantissa.len() - unsigned.len()];
    let has_dot = unsigned.contains('.');
    let has_comma = unsigned.contains(',');
    let normal: String = match (has_dot, has_comma) {
        (true, true) => {
            let last_dot = unsigned.rfind('.')?;
            let last_comma = unsigned.rfind(',')?;
            if last_comma > last_dot {
                unsigned.replace('.', "").replace(',', ".")
            } else {
                unsigned.replace(',', "")
            }
        }
        (false, true) => {
            let single = unsigned.matches(',').count() == 1;
            if decimal == Decimal::Comma && single {
                unsigned.replace(',', ".")
            } else if is_grouped(unsigned, ',') {
                unsigned.replace(',', "")
            } else if single {
                unsigned.replace(',', ".")
            } else {
                return None;
            }
        }
        (true, false) => {
            if unsigned.matches('.').count() == 1 {
                unsigned.to_string()
            } else if is_grouped(unsigned, '.') {
                unsigned.replace('.', "")
            } else {
                return None;
            }
        }
        (false, false) => unsigned.to_string(),
    };
    let text = format!("{sign}{prefix}{normal}{exponent}");
    text.parse::<f64>().ok().filter(|v| v.is_finite())
}

/// A number read from text, with the unit written after it if any.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct Quantity {
    pub value: f64,
    pub unit: Option<Unit>,
}

/// Reads "2.31 g", "1 850 mg"-free forms such as "1850 mg", "2,31", "~121 °C", "-3".
/// Returns `None` when the text is not a number optionally followed by a known unit.
pub fn parse_quantity(text: &str, decimal: Decimal) -> Option<Quantity> {
    let (t, _) = strip_approximate(text.trim());
    if let Some(q) = grouped_by_spaces(t, decimal) {
        return Some(q);
    }
    let (num, rest) = split_numeric_prefix(t);
    if num.is_empty() {
        return None;
    }
    let value = interpret_number(num, decimal)?;
    let rest = rest.trim();
    let unit = if rest.is_empty() {
        None
    } else {
        Some(parse_unit(rest)?)
    };
    Some(Quantity { value, unit })
}

/// A mass or volume written with its thousands in groups apart ("2 450 mg", "1 250,5 mg", with a
/// space, a no-break or a narrow no-break space, as SI and many locales write them). Only with
/// its unit: a bare "121 122" stays unreadable rather than becoming one number.
fn grouped_by_spaces(t: &str, decimal: Decimal) -> Option<Quantity> {
    let is_gap = |c: char| matches!(c, ' ' | '\u{a0}' | '\u{202f}');
    let mut parts = t.split(is_gap).filter(|p| !p.is_empty());
    let first = parts.next()?;
    if !(1..=3).contains(&first.len()) || !first.bytes().all(|b| b.is_ascii_digit()) {
        return None;
    }
    let mut joined = first.to_string();
    let mut grouped = false;
    let mut tail = String::new();
    for p in parts {
        let digits = p.bytes().take_while(u8::is_ascii_digit).count();
        if tail.is_empty() && digits == 3 {
            joined.push_str(&p[..3]);
            grouped = true;
            if p.len() > 3 {
                // "450,5mg" or "450mg": the rest of the number and the unit
                tail.push_str(&p[3..]);
            }
            continue;
        }
        tail.push(' ');
        tail.push_str(p);
    }
    if !grouped {
        return None;
    }
    // the tail keeps its space: "2 450 5 mg" stays "2450 5 mg", which is no quantity
    let q = parse_quantity(&format!("{joined}{tail}"), decimal)?;
    matches!(q.unit, Some(Unit::Mass(_) | Unit::Volume(_))).then_some(q)
}

/// Text that means "nothing entered" rather than a value that cannot be read.
pub fn is_blank_marker(text: &str) -> bool {
    matches!(
        text.trim().to_lowercase().as_str(),
        "" | "-" | "--" | "—" | "–" | "n/a" | "na" | "n.a." | "none" | "nil" | "?" | "."
    )
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;

    fn q(text: &str) -> Option<(f64, Option<Unit>)> {
        parse_quantity(text, Decimal::Point).map(|q| (q.value, q.unit))
    }

    #[test]
    fn thousands_in_spaced_groups_are_one_number_with_a_mass_or_volume_unit() {
        // digits in groups of three set apart by a space: the SI Brochure (BIPM, 9th ed., 5.4.4,
        // from memory);
        // many locales write it so (a trial: "2 450 mg" was unreadable)
        let c = |t: &str| parse_quantity(t, Decimal::Comma).map(|q| q.value);
        assert_eq!(c("2 450 mg"), Some(2450.0));
        assert_eq!(c("1\u{202f}250,5 mg"), Some(1250.5));
        assert_eq!(c("2\u{a0}450mg"), Some(2450.0));
        assert_eq!(q("12 345.5 mL").map(|x| x.0), Some(12345.5));
        // not grouping: a bare pair of numbers, a temperature, groups not of three
        assert_eq!(c("121 122"), None);
        assert_eq!(c("121 122 °C"), None);
        assert_eq!(c("2 45 mg"), None);
        assert_eq!(c("2 450 5 mg"), None);
    }

    #[test]
    fn plain_numbers_and_units() {
        assert_eq!(q("2.31"), Some((2.31, None)));
        assert_eq!(q("2.31 g"), Some((2.31, Some(Unit::Mass(1.0)))));
        assert_eq!(q("1850 mg"), Some((1850.0, Some(Unit::Mass(0.001)))));
        assert_eq!(q("1850mg"), Some((1850.0, Some(Unit::Mass(0.001)))));
        assert_eq!(q("25 mL"), Some((25.0, Some(Unit::Volume(1.0)))));
        assert_eq!(
            q("~121 °C"),
            Some((121.0, Some(Unit::Temperature(TempUnit::Celsius))))
        );
        assert_eq!(q("64 %"), Some((64.0, Some(Unit::Percent))));
        assert_eq!(q("-3"), Some((-3.0, None)));
        assert_eq!(q("−3"), Some((-3.0, None)));
        assert_eq!(q("1e-3"), Some((0.001, None)));
    }

    #[test]
    fn decimal_commas_and_grouping() {
        assert_eq!(q("2,31"), Some((2.31, None)));
        assert_eq!(q("1,850"), Some((1850.0, None)));
        assert_eq!(
            parse_quantity("1,850", Decimal::Comma).map(|q| q.value),
            Some(1.85)
        );
        assert_eq!(q("1.234,5"), Some((1234.5, None)));
        assert_eq!(q("1,234.5"), Some((1234.5, None)));
        assert_eq!(q("1.2.3"), None);
    }

    #[test]
    fn text_that_is_not_a_number() {
        for t in [
            "",
            "abc",
            "g",
            "2.31 apples",
            "#DIV/0!",
            "12/03/2026",
            "3 g g",
        ] {
            assert_eq!(q(t), None, "{t:?}");
        }
    }

    #[test]
    fn temperature_scales() {
        // Conversion formulas: common practice (SI Brochure definitions of the Celsius scale).
        assert_relative_eq!(
            TempUnit::Fahrenheit.to_celsius(251.6),
            122.0,
            epsilon = 1e-9
        );
        assert_relative_eq!(TempUnit::Kelvin.to_celsius(395.52), 122.37, epsilon = 1e-9);
        assert_eq!(
            parse_unit("°F"),
            Some(Unit::Temperature(TempUnit::Fahrenheit))
        );
        assert_eq!(parse_unit("K"), Some(Unit::Temperature(TempUnit::Kelvin)));
        assert_eq!(parse_unit("ºC"), Some(Unit::Temperature(TempUnit::Celsius)));
    }

    #[test]
    fn blank_markers() {
        assert!(is_blank_marker(" n/a "));
        assert!(is_blank_marker("—"));
        assert!(!is_blank_marker("0"));
    }
}
