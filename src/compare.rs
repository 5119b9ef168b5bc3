//! One rule for comparing a computed value with a threshold, used by every band, flag and
//! tolerance, and one rule for when two computed values are the same reading.
//!
//! Values come from arithmetic on numbers written with a few decimals, and binary floating point
//! cannot hold most of them exactly: 100 x 1.36 / 2.72 is 50.00000000000001, 122.4 - 121.1 is
//! 1.3000000000000114 and 114.3 - 113.0 is 1.2999999999999972. Judged as computed, the first is
//! "not below 50 %" by luck and the last two are different depressions. Judged as written they
//! are 50, 1.3 and 1.3. So every value is *settled* before it is compared: rounded to nine
//! decimals, far finer than any balance or thermometer writes (0.0001 g, 0.1 °C) and far coarser
//! than the noise (about 1e-13 at these magnitudes).

/// The decimals a value is settled to before any comparison.
pub const DECIMALS: i32 = 9;

/// `x` rounded to `DECIMALS` decimals: as written, without floating-point noise.
pub fn settle(x: f64) -> f64 {
    if !x.is_finite() || x.abs() >= 1e9 {
        return x;
    }
    (x * 1e9).round() / 1e9
}

/// `x < limit`, as written.
pub fn below(x: f64, limit: f64) -> bool {
    settle(x) < settle(limit)
}

/// `x > limit`, as written.
pub fn above(x: f64, limit: f64) -> bool {
    settle(x) > settle(limit)
}

/// `x >= limit`, as written.
pub fn at_least(x: f64, limit: f64) -> bool {
    !below(x, limit)
}

/// `x <= limit`, as written.
pub fn at_most(x: f64, limit: f64) -> bool {
    !above(x, limit)
}

/// `|a - b| > tolerance`, as written: a difference of exactly the tolerance is within it.
pub fn differ_by_more_than(a: f64, b: f64, tolerance: f64) -> bool {
    above((a - b).abs(), tolerance)
}

/// The step the values are written in: `10^-d x k`, with d the fewest decimals (at most six)
/// that write every value (settled) and k the largest of 5, 2 and 1 (the steps instrument scales
/// are graduated in: common practice) that divides every value's distance from the smallest, in
/// units of the last decimal (so a constant offset such as a reference temperature does not
/// hide it). `None` for fewer than two distinct values, or for values with more than six
/// decimals (a computed, continuous measure such as a recovery).
///
/// Readings taken in 0.5 °C steps give 0.5; whole degrees give 1, or 5 if every distance is a
/// multiple of 5; masses written to 0.01 g give 0.01 or 0.02 or 0.05.
pub fn resolution(values: &[f64]) -> Option<f64> {
    let finite: Vec<f64> = values
        .iter()
        .copied()
        .filter(|v| v.is_finite())
        .map(settle)
        .collect();
    let min = finite.iter().copied().fold(f64::INFINITY, f64::min);
    if !min.is_finite() {
        return None;
    }
    for d in 0..=6 {
        let scale = 10f64.powi(d);
        let mut g: u64 = 0;
        let mut whole = true;
        for v in &finite {
            let k = (v - min) * scale;
            let r = k.round();
            if (k - r).abs() > 1e-3 || r > 1e15 {
                whole = false;
                break;
            }
            g = gcd(g, r as u64);
        }
        if whole {
            let k = [5, 2, 1]
                .into_iter()
                .find(|k| g.is_multiple_of(*k))
                .unwrap_or(1);
            return (g > 0).then(|| k as f64 / scale);
        }
    }
    None
}

fn gcd(a: u64, b: u64) -> u64 {
    if b == 0 {
        a
    } else {
        gcd(b, a % b)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn thresholds_are_judged_as_written() {
        // hand-worked: 100 x 1.36 / 2.72 = 50 exactly; in binary floating point it is not
        let r = 100.0 * 1.36 / 2.72;
        assert!(!below(r, 50.0), "{r}");
        assert!(at_least(r, 50.0));
        // hand-worked: 76.0 reported against 100 x 1.5 / 2.0 = 75.0 is off by exactly 1.0
        assert!(!differ_by_more_than(76.0, 100.0 * 1.5 / 2.0, 1.0));
        assert!(differ_by_more_than(76.1, 75.0, 1.0));
        // hand-worked: 122.0 - 120.8 = 1.2, not 1.2000000000000028
        assert!(at_most(122.0 - 120.8, 1.2));
        assert!(!above(122.0 - 120.8, 1.2));
        assert!(above(122.0 - 120.7, 1.2));
    }

    #[test]
    fn equal_readings_settle_to_one_value() {
        // hand-worked: both depressions are 1.3 °C as written
        assert_eq!(settle(114.3 - 113.0), settle(122.4 - 121.1));
        assert_ne!(114.3 - 113.0, 122.4 - 121.1);
    }

    #[test]
    fn the_step_values_are_written_in() {
        // hand-worked: readings in half degrees, offset by a reference of 122.4
        let d: Vec<f64> = [121.5, 122.0, 120.5, 121.0]
            .iter()
            .map(|c| 122.4 - c)
            .collect();
        assert_eq!(resolution(&d), Some(0.5));
        assert_eq!(resolution(&[1.23, 1.25, 1.31]), Some(0.02));
        assert_eq!(resolution(&[2.0, 4.0, 8.0]), Some(2.0));
        assert_eq!(resolution(&[75.0, 40.0]), Some(5.0));
        assert_eq!(resolution(&[1.0, 4.0, 10.0]), Some(1.0));
        assert_eq!(resolution(&[1.0, 1.0]), None);
        assert_eq!(resolution(&[0.1234567, 0.2]), None);
        assert_eq!(resolution(&[]), None);
    }
}
