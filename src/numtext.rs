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
}
