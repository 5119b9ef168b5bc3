//! The recomputed measures: percent recovery, melting-range width and depression below the
//! literature value. Pure functions over plain numbers.

/// Percent recovery = 100 x recovered / crude; `None` unless both masses are known and the
/// crude mass is positive.
pub fn recovery_pct(crude_g: Option<f64>, recovered_g: Option<f64>) -> Option<f64> {
    match (crude_g, recovered_g) {
        (Some(c), Some(r)) if c > 0.0 => Some(100.0 * r / c),
        _ => None,
    }
}

/// Width of the melting range, clear point minus onset (negative when inverted).
pub fn range_width_c(onset_c: Option<f64>, clear_c: Option<f64>) -> Option<f64> {
    Some(clear_c? - onset_c?)
}

/// How far the clear point lies below the reference (negative when above it).
pub fn depression_c(reference_c: Option<f64>, clear_c: Option<f64>) -> Option<f64> {
    Some(reference_c? - clear_c?)
}

/// A student may report recovery as a fraction (a cell formatted as a percentage holds 0.64).
/// Returns the reported value in percent, and whether it was read as a fraction.
pub fn reported_as_percent(reported: f64, recomputed: f64, tolerance: f64) -> (f64, bool) {
    let as_fraction = reported * 100.0;
    let fraction_fits = reported.abs() <= 1.5 && (as_fraction - recomputed).abs() <= tolerance;
    if fraction_fits && (reported - recomputed).abs() > tolerance {
        (as_fraction, true)
    } else {
        (reported, false)
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;

    #[test]
    fn hand_worked_recovery() {
        // 2.31 g recovered from 3.02 g crude: 100 x 2.31 / 3.02 = 76.490066... % (hand-worked)
        assert_relative_eq!(
            recovery_pct(Some(3.02), Some(2.31)).unwrap(),
            76.490_066_225_165_56,
            epsilon = 1e-10
        );
        assert_eq!(recovery_pct(Some(0.0), Some(1.0)), None);
        assert_eq!(recovery_pct(None, Some(1.0)), None);
    }

    #[test]
    fn hand_worked_range_and_depression() {
        // 119.8-121.0 °C against benzoic acid 122.4 °C: width 1.2, depression 1.4 (hand-worked)
        assert_relative_eq!(
            range_width_c(Some(119.8), Some(121.0)).unwrap(),
            1.2,
            epsilon = 1e-9
        );
        assert_relative_eq!(
            depression_c(Some(122.4), Some(121.0)).unwrap(),
            1.4,
            epsilon = 1e-9
        );
        assert_relative_eq!(range_width_c(Some(122.0), Some(119.0)).unwrap(), -3.0);
        assert_eq!(depression_c(None, Some(1.0)), None);
    }

    #[test]
    fn fractions_are_recognised_only_when_they_fit() {
        assert_eq!(reported_as_percent(0.695, 69.5, 1.0), (69.5, true));
        assert_eq!(reported_as_percent(69.0, 69.5, 1.0), (69.0, false));
        assert_eq!(reported_as_percent(0.5, 0.8, 1.0), (0.5, false));
    }
}
