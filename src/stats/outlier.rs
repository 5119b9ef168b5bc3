//! The one outlier rule, used by the `outlier` flag and by the cohort report's list of results
//! far from their section, so that the two can never disagree: a value is an outlier when its
//! robust z-score (Iglewicz and Hoaglin: 0.6745 x distance from the median / MAD) lies beyond
//! 3.5, measured against its section's rows without impossible entries, in a section with at
//! least `outlier_min_n` of them (a rubric tolerance, default 10). Where most values are
//! equal the MAD is 0; the score then uses the mean absolute deviation from the median, as
//! 0.7979 x distance / mean absolute deviation (0.7979 = sqrt(2/pi), the ratio of the mean
//! absolute deviation to the standard deviation of a normal distribution: common practice, as
//! in IBM SPSS's modified z-score).

use std::collections::HashMap;

use super::inference::{mad, mean_abs_deviation, median};
use crate::compare::{resolution, settle};
use crate::model::{Assessed, Measure, Row};

/// The measures an outlier is judged on.
pub const MEASURES: [Measure; 2] = [Measure::RECOVERY, Measure::DEPRESSION];

/// Robust z-score beyond which a value is an outlier (Iglewicz and Hoaglin's 3.5).
pub const OUTLIER_Z: f64 = 3.5;

/// Where a section's values centre, and how far they spread.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct Centre {
    pub median: f64,
    /// Median absolute deviation from the median (unscaled).
    pub mad: f64,
    /// Mean absolute deviation from the median, used where the MAD is 0.
    pub mean_ad: f64,
    /// The least MAD the values' resolution allows: half the step they are written in (a
    /// reading is uncertain by half a step from rounding alone), 0 for continuous values.
    pub floor: f64,
}

impl Centre {
    /// The centre of a group's values.
    /// Values are settled first (`compare::settle`): readings equal as written are ties.
    pub fn of(values: &[f64]) -> Centre {
        let v: Vec<f64> = values.iter().map(|x| settle(*x)).collect();
        Centre {
            median: median(&v),
            mad: mad(&v),
            mean_ad: mean_abs_deviation(&v),
            floor: resolution(&v).map_or(0.0, |step| step / 2.0),
        }
    }

    /// The robust z-score of a value: 0.6745 (x - median) / MAD; where the MAD is 0,
    /// 0.7979 (x - median) / mean absolute deviation; 0 when every value is the median.
    ///
    /// The scale never falls below the values' resolution: the score is never larger than
    /// 0.6745 (x - median) / `floor`, so that readings in 0.5 °C steps (MAD 0.15 from a few
    /// equal readings) do not make a reading two steps away an outlier.
    pub fn z(&self, x: f64) -> f64 {
        let d = settle(x) - self.median;
        let z = self.z_unfloored(d);
        if self.floor > 0.0 {
            let by_step = 0.6745 * d / self.floor;
            if by_step.abs() < z.abs() {
                return by_step;
            }
        }
        z
    }

    fn z_unfloored(&self, d: f64) -> f64 {
        if self.mad > 0.0 {
            0.6745 * d / self.mad
        } else if self.mean_ad > 0.0 {
            0.7979 * d / self.mean_ad
        } else {
            0.0
        }
    }

    /// The spread the score was measured against, in words: "MAD 1.20", or the fallback.
    pub fn spread(&self) -> String {
        let mut s = if self.mad > 0.0 || self.mean_ad.is_nan() || self.mean_ad <= 0.0 {
            format!("MAD {:.2}", self.mad)
        } else {
            format!("MAD 0, mean absolute deviation {:.2}", self.mean_ad)
        };
        if self.floor > self.mad {
            s = format!(
                "{s}; taken as at least {}, half the {} step the values are written in",
                self.floor,
                self.floor * 2.0
            );
        }
        s
    }

    /// The robust z-score of a value beyond the threshold, or `None` for a value within it.
    pub fn outlier(&self, x: f64) -> Option<f64> {
        let z = self.z(x);
        (z.abs() > OUTLIER_Z).then_some(z)
    }
}

/// Each section's centre of every outlier measure, over its rows without impossible entries,
/// gathered in a first pass so that `outlier` is known when a row is graded. A section with
/// fewer such rows than the rubric's `outlier_min_n` gets no centres: in three rows a MAD of
/// 0.09 makes 72.5 % beside 74.5 % look extreme, and a robust z says nothing.
#[derive(Clone, Debug, Default)]
pub struct Centres {
    values: HashMap<String, ([Vec<f64>; MEASURES.len()], usize)>,
    by_section: HashMap<String, [Centre; MEASURES.len()]>,
}

/// A value far from its section's centre.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct Far {
    pub measure: Measure,
    pub value: f64,
    pub centre: Centre,
    pub z: f64,
}

impl Centres {
    /// Gathers a row's values (rows with impossible entries are passed over).
    pub fn add(&mut self, a: &Assessed) {
        if a.is_impossible() || a.excused.is_some() {
            return;
        }
        let section = &a.submission.section;
        if !self.values.contains_key(section) {
            self.values.insert(section.clone(), Default::default());
        }
        if let Some((slots, rows)) = self.values.get_mut(section) {
            *rows += 1;
            for (slot, m) in slots.iter_mut().zip(MEASURES) {
                slot.extend(m.of_assessed(a).filter(|v| v.is_finite()));
            }
        }
    }

    /// Computes the centres of every section with at least `min_n` rows once all rows are
    /// gathered.
    pub fn settle(&mut self, min_n: usize) {
        for (section, (values, rows)) in self.values.drain() {
            if rows >= min_n {
                self.by_section
                    .insert(section, values.each_ref().map(|v| Centre::of(v)));
            }
        }
    }

    /// The measures on which a row lies far from its section's centre.
    pub fn far(&self, a: &Assessed) -> Vec<Far> {
        let Some(centres) = self.by_section.get(&a.submission.section) else {
            return Vec::new();
        };
        let row = Row {
            assessed: a,
            score: None,
        };
        MEASURES
            .iter()
            .zip(centres)
            .filter_map(|(m, c)| {
                let v = m.value(row)?;
                let z = c.outlier(v)?;
                Some(Far {
                    measure: *m,
                    value: v,
                    centre: *c,
                    z,
                })
            })
            .collect()
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_abs_diff_eq;

    #[test]
    fn robust_scores() {
        // 1, 2, 3, 4, 100: median 3, MAD 1 (hand-worked); 100 -> 0.6745 x 97 = 65.43
        let c = Centre::of(&[1.0, 2.0, 3.0, 4.0, 100.0]);
        assert_eq!((c.median, c.mad), (3.0, 1.0));
        assert_abs_diff_eq!(c.z(100.0), 65.4265, epsilon = 1e-9);
        assert!(c.outlier(100.0).is_some() && c.outlier(4.0).is_none());
        // 3.5 / 0.6745 = 5.189 MADs from the median is the edge (hand-worked)
        assert!(c.outlier(3.0 + 5.18).is_none() && c.outlier(3.0 + 5.2).is_some());
    }

    #[test]
    fn a_mad_of_zero_falls_back_to_the_mean_absolute_deviation() {
        // ten recoveries at 75 % and one at 40 %: median 75, MAD 0; mean absolute deviation
        // 35 / 11 = 3.1818 (hand-worked); 40 % is 0.7979 x 35 / 3.1818 = 8.78 robust z away
        let mut v = vec![75.0; 10];
        v.push(40.0);
        let c = Centre::of(&v);
        assert_eq!((c.median, c.mad), (75.0, 0.0));
        let z = c
            .outlier(40.0)
            .expect("40 % among ten at 75 % is an outlier");
        assert_abs_diff_eq!(z, -0.7979 * 35.0 / (35.0 / 11.0), epsilon = 1e-9);
        assert!(c.outlier(75.0).is_none());
        assert!(c.spread().contains("mean absolute deviation 3.18"));
        assert_eq!(Centre::of(&[5.0, 5.0]).z(5.0), 0.0);
    }

    #[test]
    fn coarse_readings_are_not_outliers_for_their_step() {
        // depressions from readings in 0.5 °C steps (hand-worked): eleven at 1.0 or 1.5,
        // median 1.0, MAD 0; the mean absolute deviation is 0.1364, which would put 2.0 °C at
        // 0.7979 x 1.0 / 0.1364 = 5.85 robust z. Half the 0.5 step is the least scale a
        // reading allows: 0.6745 x 1.0 / 0.25 = 2.70, within 3.5 (Iglewicz and Hoaglin's limit)
        let mut v = vec![1.0; 9];
        v.extend([1.5, 2.0]);
        let c = Centre::of(&v);
        assert_eq!((c.median, c.mad, c.floor), (1.0, 0.0, 0.25));
        assert_abs_diff_eq!(c.z(2.0), 0.6745 * 1.0 / 0.25, epsilon = 1e-12);
        assert!(c.outlier(2.0).is_none());
        // five steps away is one: 0.6745 x 3.0 / 0.25 = 8.09
        assert!(c.outlier(4.0).is_some());
        assert!(c.spread().contains("half the 0.5 step"));
        // depressions equal as written are one value: 114.3 - 113.0 and 122.4 - 121.1
        let d = Centre::of(&[114.3 - 113.0, 122.4 - 121.1, 1.3]);
        assert_eq!(d.mad, 0.0);
    }
}
