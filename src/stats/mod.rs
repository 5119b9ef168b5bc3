//! Statistics: descriptive summaries of a section's measures, and per-section accumulation
//! over a streaming batch.
//!
//! One quantile definition serves the whole project: the linear, inclusive one, named by its
//! published name only (Hyndman and Fan, 1996, type 7; NumPy's default method "linear"),
//! stated in every output that shows a quantile.

pub mod cohort;
pub mod inference;
pub mod outlier;
pub mod quality;
pub mod sections;
pub mod unknowns;

use statrs::distribution::{ContinuousCDF, StudentsT};

/// The quantile definition, in words, for outputs.
pub const QUANTILE_DEFINITION: &str =
    "quantiles by linear interpolation between order statistics (Hyndman and Fan, type 7)";

/// A descriptive summary of one measure over one group.
#[derive(Clone, Debug, PartialEq)]
pub struct Summary {
    pub n: usize,
    pub mean: f64,
    /// Sample standard deviation (n - 1); NaN when n < 2.
    pub sd: f64,
    pub sem: f64,
    pub median: f64,
    pub q1: f64,
    pub q3: f64,
    pub min: f64,
    pub max: f64,
    /// 95 % confidence interval of the mean (Student's t, n - 1 degrees of freedom).
    pub ci95_low: f64,
    pub ci95_high: f64,
}

impl Summary {
    /// The statistics after n, in the order of `SUMMARY_COLUMNS`.
    pub fn values(&self) -> [f64; 10] {
        [
            self.mean,
            self.sd,
            self.sem,
            self.median,
            self.q1,
            self.q3,
            self.min,
            self.max,
            self.ci95_low,
            self.ci95_high,
        ]
    }
}

/// Column names of a summary table: group, measure, n, then `Summary::values`.
pub const SUMMARY_COLUMNS: [&str; 13] = [
    "section",
    "measure",
    "n",
    "mean",
    "sd",
    "sem",
    "median",
    "q1",
    "q3",
    "min",
    "max",
    "ci95_low",
    "ci95_high",
];

/// Columns appended after `SUMMARY_COLUMNS` in section-stats.csv and the Statistics sheets:
/// rows left out of the measure for impossible entries, excused students, and rows that count
/// but hold no value for it (n + excluded + excused + missing is every row of the section).
pub const LEFT_OUT_COLUMNS: [&str; 4] = ["excluded", "excused", "missing", "no_submission"];

/// Linear inclusive quantile of sorted data: h = (n - 1) p, interpolated between neighbours.
pub fn quantile_sorted(sorted: &[f64], p: f64) -> f64 {
    match sorted.len() {
        0 => f64::NAN,
        1 => sorted[0],
        n => {
            let h = (n - 1) as f64 * p.clamp(0.0, 1.0);
            let lo = h.floor() as usize;
            let hi = (lo + 1).min(n - 1);
            sorted[lo] + (h - lo as f64) * (sorted[hi] - sorted[lo])
        }
    }
}

/// The mean, in two passes: a first mean, then the mean of the deviations from it added back,
/// which keeps the digits of data with many constant leading digits (the NIST StRD sets). The
/// one mean of the project: summaries, the tests and effect sizes all use it.
pub fn mean(x: &[f64]) -> f64 {
    let m0 = x.iter().sum::<f64>() / x.len() as f64;
    m0 + x.iter().map(|v| v - m0).sum::<f64>() / x.len() as f64
}

/// The sum of squared deviations from `m`.
pub fn ss_about(x: &[f64], m: f64) -> f64 {
    x.iter().map(|v| (v - m) * (v - m)).sum()
}

/// The mean and the sum of squared deviations about it, in two passes over the data (more
/// digits than a one-pass update: NIST StRD NumAcc4's standard deviation to 8.3 digits, all
/// that its values as doubles hold, where Welford's update keeps 7.6).
pub fn mean_and_ss(data: &[f64]) -> (f64, f64) {
    let m = mean(data);
    (m, ss_about(data, m))
}

/// Student's t at 0.975 for `df` degrees of freedom. The inverse CDF is a root search of the
/// regularised incomplete beta, costly beside the rest of a summary; sections share few sizes,
/// so each thread keeps the values it has found (the same function, so the same bits).
fn t_975(df: usize) -> f64 {
    thread_local! {
        static FOUND: std::cell::RefCell<std::collections::HashMap<usize, f64>> =
            std::cell::RefCell::new(std::collections::HashMap::new());
    }
    FOUND.with(|found| {
        *found.borrow_mut().entry(df).or_insert_with(|| {
            StudentsT::new(0.0, 1.0, df as f64).map_or(f64::NAN, |d| d.inverse_cdf(0.975))
        })
    })
}

/// Summarises finite values; `None` for no data.
pub fn summarize(values: &[f64]) -> Option<Summary> {
    let mut v: Vec<f64> = values.iter().copied().filter(|x| x.is_finite()).collect();
    if v.is_empty() {
        return None;
    }
    v.sort_by(f64::total_cmp);
    let n = v.len();
    let (mean, ss) = mean_and_ss(&v);
    let sd = if n > 1 {
        (ss / (n - 1) as f64).sqrt()
    } else {
        f64::NAN
    };
    let sem = sd / (n as f64).sqrt();
    let t = if n > 1 { t_975(n - 1) } else { f64::NAN };
    Some(Summary {
        n,
        mean,
        sd,
        sem,
        median: quantile_sorted(&v, 0.5),
        q1: quantile_sorted(&v, 0.25),
        q3: quantile_sorted(&v, 0.75),
        min: v[0],
        max: v[n - 1],
        ci95_low: mean - t * sem,
        ci95_high: mean + t * sem,
    })
}

/// Equal-width bins for a histogram: (lower edge, upper edge, count), the last bin closed.
pub fn histogram(values: &[f64], lo: f64, width: f64, bins: usize) -> Vec<(f64, f64, usize)> {
    let mut counts = vec![0usize; bins];
    for &x in values.iter().filter(|x| x.is_finite()) {
        let i = ((x - lo) / width).floor();
        let i = if i < 0.0 {
            0
        } else {
            (i as usize).min(bins - 1)
        };
        counts[i] += 1;
    }
    counts
        .iter()
        .enumerate()
        .map(|(i, &c)| (lo + i as f64 * width, lo + (i + 1) as f64 * width, c))
        .collect()
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_abs_diff_eq;

    #[test]
    fn hand_computed_summary() {
        // 2, 4, 4, 5, 7, 9 (hand-computed): mean 31/6 = 5.1667, SS = 30.8333, sd = sqrt(6.1667) = 2.4833,
        // median 4.5, Q1 (h = 1.25) = 4, Q3 (h = 3.75) = 6.5
        let s = summarize(&[9.0, 2.0, 4.0, 7.0, 4.0, 5.0]).unwrap();
        assert_eq!(s.n, 6);
        assert_abs_diff_eq!(s.mean, 31.0 / 6.0, epsilon = 1e-12);
        assert_abs_diff_eq!(
            s.sd,
            (30.833_333_333_333_33f64 / 5.0).sqrt(),
            epsilon = 1e-12
        );
        assert_eq!(
            (s.median, s.q1, s.q3, s.min, s.max),
            (4.5, 4.0, 6.5, 2.0, 9.0)
        );
        // t(0.975, 5) = 2.5705818356363146 (scipy.stats.t.ppf, SciPy 1.17.1)
        assert_abs_diff_eq!(
            s.ci95_high - s.mean,
            2.570_581_835_636_314_6 * s.sd / 6f64.sqrt(),
            epsilon = 1e-9
        );
    }

    #[test]
    fn matches_scipy_and_numpy() {
        // Computed once with NumPy 2.4.6 and SciPy 1.17.1: np.mean, np.std(ddof=1),
        // np.percentile (default 'linear'), scipy.stats.t.ppf(0.975, 9) = 2.262157162798205,
        // mean -/+ t x sd / sqrt(10) = 68.55628593707132, 90.14371406292867
        let x = [76.2, 82.6, 113.1, 84.8, 69.5, 71.7, 80.1, 66.4, 90.2, 58.9];
        let s = summarize(&x).unwrap();
        assert_abs_diff_eq!(s.mean, 79.35, epsilon = 1e-9);
        assert_abs_diff_eq!(s.sd, 15.088_571_834_338_726, epsilon = 1e-9);
        assert_abs_diff_eq!(s.q1, 70.05, epsilon = 1e-9);
        assert_abs_diff_eq!(s.median, 78.15, epsilon = 1e-9);
        assert_abs_diff_eq!(s.q3, 84.25, epsilon = 1e-9);
        assert_abs_diff_eq!(s.ci95_low, 68.556_285_937_071_32, epsilon = 1e-6);
        assert_abs_diff_eq!(s.ci95_high, 90.143_714_062_928_67, epsilon = 1e-6);
    }

    #[test]
    fn small_groups() {
        let one = summarize(&[3.0]).unwrap();
        assert!(one.sd.is_nan() && one.ci95_low.is_nan());
        assert_eq!(one.median, 3.0);
        assert_eq!(summarize(&[f64::NAN]), None);
        assert_eq!(
            histogram(&[0.0, 9.99, 10.0, 55.0, -3.0], 0.0, 10.0, 3),
            vec![(0.0, 10.0, 3), (10.0, 20.0, 1), (20.0, 30.0, 1)]
        );
    }
}
