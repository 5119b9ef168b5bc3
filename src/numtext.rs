//! Numbers as text, fast and exactly as Rust's own formatting writes them. Every graded row
//! carries sentences with a dozen rounded numbers ("recovery 65.9 %"); `{:.1}` on an `f64` goes
//! through an exact decimal expansion that costs about a thousand instructions a number, more than
//! all the arithmetic of grading the row. `Fast` gives the same text by integer arithmetic when
//! the rounding is not in doubt and falls back to the standard formatting when it is.

use std::fmt;

/// An `f64` that formats like `f64` itself, faster for fixed precisions up to 3 places.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct Fast(pub f64);

const SCALE: [f64; 4] = [1.0, 10.0, 100.0, 1000.0];

impl fmt::Display for Fast {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        let x = self.0;
        let Some(places) = f.precision().filter(|p| *p < SCALE.len()) else {
            return fmt::Display::fmt(&x, f);
        };
        if f.width().is_some() || f.sign_plus() {
            return fmt::Display::fmt(&x, f);
        }
        match fixed(x, places) {
            Some(text) => f.write_str(&text),
            None => write!(f, "{x:.places$}"),
        }
    }
}

/// `x` rounded to `places` decimals, as `format!("{x:.places$}")` writes it, or `None` when
/// the rounding could go either way (within a hair of a tie) or `x` is too large to be sure.
fn fixed(x: f64, places: usize) -> Option<String> {
    let scaled = x * SCALE[places];
    // below 2^30 the product's rounding error (half an ulp, at most 2^-23) is far smaller than
    // the margin kept from a tie, so the integer nearest the product is the exact answer
    if !scaled.is_finite() || scaled.abs() >= (1u64 << 30) as f64 {
        return None;
    }
    let nearest = scaled.round();
    if ((scaled - nearest).abs() - 0.5).abs() < 1e-4 {
        return None;
    }
    let n = nearest.abs() as u64;
    let mut out = String::with_capacity(16);
    if x.is_sign_negative() {
        out.push('-'); // as Rust writes it, also for -0.0 and what rounds to zero
    }
    let unit = [1u64, 10, 100, 1000][places];
    push_u64(&mut out, n / unit);
    if places > 0 {
        out.push('.');
        let frac = n % unit;
        let mut div = unit / 10;
        while div > 0 {
            out.push(char::from(b'0' + ((frac / div) % 10) as u8));
            div /= 10;
        }
    }
    Some(out)
}

/// Appends an unsigned integer's decimal digits.
pub fn push_u64(out: &mut String, mut n: u64) {
    let mut buf = [0u8; 20];
    let mut i = buf.len();
    loop {
        i -= 1;
        buf[i] = b'0' + (n % 10) as u8;
        n /= 10;
        if n == 0 {
            break;
        }
    }
    // the bytes are ASCII digits
    out.push_str(std::str::from_utf8(&buf[i..]).unwrap_or_default());
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
        push_u64(out, x.abs() as u64);
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

/// Points as feedback and overrides write them: the shortest text of the value rounded to a
/// millionth of a point, so that sums such as 13.500000000000002 read 13.5.
pub fn push_points(out: &mut String, v: f64) {
    push_number(out, Some((v * 1e6).round() / 1e6));
}

/// `push_points` into a new string.
/// A count with its noun, singular for one: "1 file", "3 files".
pub fn count(n: usize, one: &str, many: &str) -> String {
    format!("{n} {}", if n == 1 { one } else { many })
}

pub fn points(v: f64) -> String {
    let mut s = String::new();
    push_points(&mut s, v);
    s
}

#[cfg(test)]
mod tests {
    use super::*;
    use proptest::prelude::*;

    #[test]
    fn ties_and_signs_follow_the_standard_library() {
        // ties resolved on the exact binary value: 0.25 is exact (ties to even), 0.35 is
        // 0.34999999999999997779... (rounds down); both fall back to the standard formatting
        for (x, p) in [
            (0.25, 1),
            (0.35, 1),
            (2.5, 0),
            (-0.04, 1),
            (-0.0, 1),
            (65.87301587301587, 1),
            (121.6, 1),
            (1e12, 1),
            (f64::NAN, 1),
            (f64::INFINITY, 2),
            (0.0005, 3),
            (99.95, 1),
        ] {
            assert_eq!(format!("{:.*}", p, Fast(x)), format!("{x:.p$}"), "{x} {p}");
        }
        assert_eq!(format!("{}", Fast(36.0)), "36");
        assert_eq!(format!("{:+.1}", Fast(1.25)), "+1.2");
    }

    proptest! {
        #[test]
        fn the_same_text_as_the_standard_library(
            x in prop_oneof![-1e4f64..1e4, -1e10f64..1e10, any::<f64>()],
            p in 0usize..4,
        ) {
            prop_assert_eq!(format!("{:.*}", p, Fast(x)), format!("{x:.p$}"));
        }

        #[test]
        fn tenths_and_halves_as_graders_type_them(n in -100_000i64..100_000, p in 0usize..4) {
            let x = n as f64 / 20.0;
            prop_assert_eq!(format!("{:.*}", p, Fast(x)), format!("{x:.p$}"));
        }

        #[test]
        fn integers_as_digits(n in any::<u64>()) {
            let mut s = String::new();
            push_u64(&mut s, n);
            prop_assert_eq!(s, n.to_string());
        }
    }

    #[test]
    fn numbers_round_trip_at_full_precision() {
        let v = 100.0 * 2.31 / 3.02;
        assert_eq!(number(Some(v)).parse::<f64>().unwrap(), v);
        assert_eq!(number(None), "");
        assert_eq!(number(Some(f64::NAN)), "");
    }

    proptest! {
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
