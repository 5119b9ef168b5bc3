//! Axis ticks a person reads at a glance: steps of 1, 2, 2.5 or 5 times a power of ten, and
//! axis limits on ticks. Used by the report's charts and the workbooks' chart axes, so that no
//! axis says 40.0, 54.6, 69.1 and no count axis has half a student.

/// The nice step nearest above `span / target` (target: the ticks wanted, about 5).
pub fn step(span: f64, target: usize) -> f64 {
    if !span.is_finite() || span <= 0.0 {
        return 1.0;
    }
    let raw = span / target.max(1) as f64;
    let power = 10f64.powf(raw.log10().floor());
    let m = raw / power;
    let nice = [1.0, 2.0, 2.5, 5.0, 10.0]
        .into_iter()
        .find(|n| m <= *n + 1e-9)
        .unwrap_or(10.0);
    nice * power
}

/// The axis for values from `lo` to `hi`: limits on ticks that hold them, and every tick.
pub fn axis(lo: f64, hi: f64, target: usize) -> (f64, f64, Vec<f64>) {
    let (lo, hi) = if hi > lo {
        (lo, hi)
    } else {
        (lo - 1.0, lo + 1.0)
    };
    let s = step(hi - lo, target);
    let first = (lo / s).floor() * s;
    let last = (hi / s).ceil() * s;
    let n = ((last - first) / s).round() as usize;
    let ticks = (0..=n).map(|i| tidy(first + i as f64 * s)).collect();
    (tidy(first), tidy(last), ticks)
}

/// A step for an axis of counts up to `max`: a whole number of students, at least 1.
pub fn count_step(max: f64) -> f64 {
    step(max.max(1.0), 5).max(1.0).round()
}

/// Removes the binary noise of a tick (0.30000000000000004 is 0.3).
fn tidy(v: f64) -> f64 {
    let r = (v * 1e9).round() / 1e9;
    if r == 0.0 {
        0.0
    } else {
        r
    }
}

/// A tick as a label: as many decimals as the step needs, the same for every tick.
pub fn label(v: f64, step: f64) -> String {
    let decimals = (0..6)
        .find(|d| {
            let scaled = step * 10f64.powi(*d);
            (scaled - scaled.round()).abs() < 1e-6
        })
        .unwrap_or(6) as usize;
    format!("{v:.decimals$}")
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn steps_are_one_two_two_and_a_half_or_five_times_a_power_of_ten() {
        // hand-worked: 40 to 101.6 in about 5 ticks is 61.6 / 5 = 12.3 -> 20 (not 12.3)
        assert_eq!(step(61.6, 5), 20.0);
        assert_eq!(step(10.0, 5), 2.0);
        assert_eq!(step(12.0, 5), 2.5);
        assert_eq!(step(0.9, 5), 0.2);
        assert_eq!(step(3.0, 5), 1.0);
        assert_eq!(step(40.0, 5), 10.0);
        for span in [0.013, 0.7, 3.3, 47.0, 512.0, 8000.0] {
            let s = step(span, 5);
            let m = s / 10f64.powf(s.log10().floor());
            assert!(
                [1.0, 2.0, 2.5, 5.0].iter().any(|n| (m - n).abs() < 1e-9),
                "{span}: {s}"
            );
            assert!(span / s <= 5.0 + 1e-9 && span / s > 1.0, "{span}: {s}");
        }
    }

    #[test]
    fn limits_lie_on_ticks_that_hold_the_values() {
        let (lo, hi, ticks) = axis(40.0, 101.6, 5);
        assert_eq!((lo, hi), (40.0, 120.0));
        assert_eq!(ticks, vec![40.0, 60.0, 80.0, 100.0, 120.0]);
        let (lo, hi, ticks) = axis(-1.2, 2.9, 5);
        assert_eq!((lo, hi), (-2.0, 3.0));
        assert_eq!(ticks.len(), 6);
        assert!(ticks.contains(&0.0));
        assert_eq!(axis(5.0, 5.0, 5).2.first(), Some(&4.0));
    }

    #[test]
    fn counts_step_in_whole_students() {
        assert_eq!(count_step(0.0), 1.0);
        assert_eq!(count_step(3.0), 1.0);
        assert_eq!(count_step(17.0), 5.0);
        assert_eq!(count_step(240.0), 50.0);
        assert_eq!(label(2.5, 2.5), "2.5");
        assert_eq!(label(5.0, 2.5), "5.0");
        assert_eq!(label(0.4, 0.2), "0.4");
        assert_eq!(label(120.0, 20.0), "120");
    }
}
