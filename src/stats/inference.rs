//! Tests for comparing sections, assistants and benches: one-way ANOVA, Welch's ANOVA,
//! Kruskal-Wallis with tie correction, Welch's t, Holm's adjustment, Mann-Whitney U and the
//! median absolute deviation. Distributions come from statrs.
//!
//! A test that is undefined for the data (fewer than two groups, a group of one, no variation)
//! says why instead of giving a number: statrs panics on a NaN statistic, and a NaN in a report
//! explains nothing. ANOVA forms its sums from deviations about a provisional centre (the first
//! value), so data with many constant leading digits (NIST StRD SmLs07-09) keep their digits.

use statrs::distribution::{ChiSquared, ContinuousCDF, FisherSnedecor, StudentsT};

use super::{mean, ss_about};

/// A classical one-way analysis of variance.
#[derive(Clone, Debug, PartialEq)]
pub struct Anova {
    pub f: f64,
    pub df1: f64,
    pub df2: f64,
    pub p: f64,
    /// Effect size: SS between / SS total.
    pub eta_squared: f64,
    pub ss_between: f64,
    pub ss_within: f64,
    /// Square root of the within-groups mean square.
    pub residual_sd: f64,
}

/// A test statistic with its degrees of freedom and p-value.
#[derive(Clone, Debug, PartialEq)]
pub struct Test {
    pub statistic: f64,
    pub df1: f64,
    pub df2: f64,
    pub p: f64,
}

/// Why a test gives no number, in words.
pub type Undefined = String;

/// Why a group was left out of Welch's ANOVA.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum LeftOut {
    /// One value: no variance.
    OneValue,
    /// Every value the same: a variance of zero gives it infinite weight.
    NoSpread,
}

/// Welch's ANOVA over the groups it can weigh, and the groups (by index) it left out.
#[derive(Clone, Debug, PartialEq)]
pub struct Welch {
    pub result: Result<Test, Undefined>,
    pub left_out: Vec<(usize, LeftOut)>,
}

fn f_sf(f: f64, d1: f64, d2: f64) -> f64 {
    if !(f.is_finite() && d1 > 0.0 && d2 > 0.0) {
        return f64::NAN;
    }
    FisherSnedecor::new(d1, d2).map_or(f64::NAN, |d| d.sf(f))
}

fn chi2_sf(x: f64, df: f64) -> f64 {
    if !(x.is_finite() && df > 0.0) {
        return f64::NAN;
    }
    ChiSquared::new(df).map_or(f64::NAN, |d| d.sf(x))
}

/// Two-sided p of Student's t.
fn t_two_sided(t: f64, df: f64) -> f64 {
    if !(t.is_finite() && df > 0.0) {
        return f64::NAN;
    }
    StudentsT::new(0.0, 1.0, df).map_or(f64::NAN, |d| 2.0 * d.sf(t.abs()))
}

/// One-way ANOVA over the groups that have values.
pub fn one_way_anova(groups: &[&[f64]]) -> Result<Anova, Undefined> {
    let groups: Vec<&[f64]> = groups.iter().copied().filter(|g| !g.is_empty()).collect();
    let k = groups.len();
    let n: usize = groups.iter().map(|g| g.len()).sum();
    if k < 2 {
        return Err("fewer than two groups with data".into());
    }
    if n <= k {
        return Err("every group has a single value, so there is no variation within groups to compare against".into());
    }
    // deviations from a provisional centre: exact for values close to it, and small, so the
    // sums of squares keep their digits
    let centre = groups[0][0];
    let dev: Vec<Vec<f64>> = groups
        .iter()
        .map(|g| g.iter().map(|x| x - centre).collect())
        .collect();
    let all: Vec<f64> = dev.iter().flatten().copied().collect();
    let grand = mean(&all);
    let means: Vec<f64> = dev.iter().map(|g| mean(g)).collect();
    let ss_between: f64 = dev
        .iter()
        .zip(&means)
        .map(|(g, m)| g.len() as f64 * (m - grand) * (m - grand))
        .sum();
    let ss_within: f64 = dev.iter().zip(&means).map(|(g, m)| ss_about(g, *m)).sum();
    if ss_within <= 0.0 {
        return Err("no variation within any group (every value equals its group's mean)".into());
    }
    let (df1, df2) = ((k - 1) as f64, (n - k) as f64);
    let ms_within = ss_within / df2;
    let f = (ss_between / df1) / ms_within;
    Ok(Anova {
        f,
        df1,
        df2,
        p: f_sf(f, df1, df2),
        eta_squared: ss_between / (ss_between + ss_within),
        ss_between,
        ss_within,
        residual_sd: ms_within.sqrt(),
    })
}

/// Welch's heteroscedastic one-way ANOVA (Welch 1951) over the groups with at least two values
/// and some spread; the others are named as left out.
pub fn welch_anova(groups: &[&[f64]]) -> Welch {
    let mut left_out = Vec::new();
    let mut stats: Vec<(f64, f64, f64)> = Vec::new();
    for (i, g) in groups.iter().enumerate() {
        if g.is_empty() {
            continue;
        }
        if g.len() < 2 {
            left_out.push((i, LeftOut::OneValue));
            continue;
        }
        let n = g.len() as f64;
        let m = mean(g);
        let v = ss_about(g, m) / (n - 1.0);
        if v <= 0.0 {
            left_out.push((i, LeftOut::NoSpread));
            continue;
        }
        stats.push((n, m, v));
    }
    let result = if stats.len() < 2 {
        Err("fewer than two groups with two or more differing values".into())
    } else {
        Ok(welch_statistic(&stats))
    };
    Welch { result, left_out }
}

/// Welch's F from each group's (n, mean, variance).
fn welch_statistic(stats: &[(f64, f64, f64)]) -> Test {
    let k = stats.len() as f64;
    let w: Vec<f64> = stats.iter().map(|(n, _, v)| n / v).collect();
    let sw: f64 = w.iter().sum();
    let mw = stats
        .iter()
        .zip(&w)
        .map(|((_, m, _), w)| w * m)
        .sum::<f64>()
        / sw;
    let a = stats
        .iter()
        .zip(&w)
        .map(|((_, m, _), w)| w * (m - mw) * (m - mw))
        .sum::<f64>()
        / (k - 1.0);
    let lambda: f64 = stats
        .iter()
        .zip(&w)
        .map(|((n, _, _), w)| (1.0 - w / sw).powi(2) / (n - 1.0))
        .sum();
    let b = 1.0 + 2.0 * (k - 2.0) / (k * k - 1.0) * lambda;
    let f = a / b;
    let df2 = (k * k - 1.0) / (3.0 * lambda);
    Test {
        statistic: f,
        df1: k - 1.0,
        df2,
        p: f_sf(f, k - 1.0, df2),
    }
}

/// Average ranks (1-based) of the pooled values, and the sizes of the tied groups.
///
/// Values are ranked as written (`compare::settle`): 114.3 - 113.0 and 122.4 - 121.1 are one
/// depression of 1.3 °C and share a rank, though they differ in the 13th digit.
fn ranks(values: &[f64]) -> (Vec<f64>, Vec<usize>) {
    let values: Vec<f64> = values.iter().map(|v| crate::compare::settle(*v)).collect();
    let mut idx: Vec<usize> = (0..values.len()).collect();
    idx.sort_by(|&a, &b| values[a].total_cmp(&values[b]));
    let mut r = vec![0.0; values.len()];
    let mut ties = Vec::new();
    let mut i = 0;
    while i < idx.len() {
        let mut j = i;
        while j + 1 < idx.len() && values[idx[j + 1]] == values[idx[i]] {
            j += 1;
        }
        let avg = (i + j) as f64 / 2.0 + 1.0;
        for &k in &idx[i..=j] {
            r[k] = avg;
        }
        ties.push(j - i + 1);
        i = j + 1;
    }
    (r, ties)
}

/// Kruskal-Wallis H with the correction for ties, against chi-squared with k - 1 df.
pub fn kruskal_wallis(groups: &[&[f64]]) -> Result<Test, Undefined> {
    let groups: Vec<&[f64]> = groups.iter().copied().filter(|g| !g.is_empty()).collect();
    let k = groups.len();
    if k < 2 {
        return Err("fewer than two groups with data".into());
    }
    let all: Vec<f64> = groups.iter().flat_map(|g| g.iter().copied()).collect();
    let n = all.len() as f64;
    let (r, ties) = ranks(&all);
    let mut start = 0;
    let mut sum = 0.0;
    for g in &groups {
        let rs: f64 = r[start..start + g.len()].iter().sum();
        sum += rs * rs / g.len() as f64;
        start += g.len();
    }
    let h = 12.0 / (n * (n + 1.0)) * sum - 3.0 * (n + 1.0);
    let correction =
        1.0 - ties.iter().map(|&t| (t * t * t - t) as f64).sum::<f64>() / (n * n * n - n);
    if correction <= 0.0 || !correction.is_finite() {
        return Err("every value is the same, so there is nothing to rank".into());
    }
    let h = h / correction;
    let df = (k - 1) as f64;
    Ok(Test {
        statistic: h,
        df1: df,
        df2: f64::NAN,
        p: chi2_sf(h, df),
    })
}

/// Welch's two-sample t-test, two-sided.
pub fn welch_t(a: &[f64], b: &[f64]) -> Result<Test, Undefined> {
    if a.len() < 2 || b.len() < 2 {
        return Err("a group of one value has no spread to test against".into());
    }
    let (na, nb) = (a.len() as f64, b.len() as f64);
    let (ma, mb) = (mean(a), mean(b));
    let (va, vb) = (ss_about(a, ma) / (na - 1.0), ss_about(b, mb) / (nb - 1.0));
    let se2 = va / na + vb / nb;
    if se2 <= 0.0 {
        return Err("neither group varies".into());
    }
    let t = (ma - mb) / se2.sqrt();
    let df = se2 * se2 / ((va / na).powi(2) / (na - 1.0) + (vb / nb).powi(2) / (nb - 1.0));
    Ok(Test {
        statistic: t,
        df1: df,
        df2: f64::NAN,
        p: t_two_sided(t, df),
    })
}

/// Holm's step-down adjustment of p-values, in the input order.
pub fn holm(p: &[f64]) -> Vec<f64> {
    let m = p.len();
    let mut idx: Vec<usize> = (0..m).collect();
    idx.sort_by(|&a, &b| p[a].total_cmp(&p[b]));
    let mut out = vec![0.0; m];
    let mut running: f64 = 0.0;
    for (rank, &i) in idx.iter().enumerate() {
        let adj = ((m - rank) as f64 * p[i]).min(1.0);
        running = running.max(adj);
        out[i] = running;
    }
    out
}

/// P(U <= t) for samples of sizes `m` and `n` without ties: the first t + 1 coefficients of the
/// Gaussian binomial [m + n choose m](q), whose coefficient of q^u counts the arrangements
/// giving U = u, built as the product over k = 1..m of (1 - q^(n+k)) / (1 - q^k) and cut at
/// degree t. O(m t) work in all; the low coefficients are free of cancellation, so a lower tail
/// keeps its digits (an upper tail is taken through the symmetry of U).
fn u_lower_tail(m: usize, n: usize, t: usize) -> f64 {
    let (m, n) = (m.min(n), m.max(n));
    let len = t + 1;
    let mut c = vec![0.0f64; len];
    c[0] = 1.0;
    let mut total = 1.0f64;
    for k in 1..=m {
        // multiply by (1 - q^(n+k)), then divide by (1 - q^k): q_j = p_j + q_(j-k)
        let mut q = vec![0.0f64; len];
        for j in 0..len {
            let p = c[j] - if j >= n + k { c[j - n - k] } else { 0.0 };
            q[j] = p + if j >= k { q[j - k] } else { 0.0 };
        }
        c = q;
        // C(n + k, k), the number of arrangements
        total = total * (n + k) as f64 / k as f64;
    }
    (c.iter().sum::<f64>() / total).min(1.0)
}

/// Mann-Whitney U, two-sided, as SciPy's `mannwhitneyu` (method "auto"): the exact
/// distribution when there are no ties and one sample has at most 8 values, else the normal
/// approximation with the tie and continuity corrections. Returns U for the first sample and p.
/// (statrs' `mannwhitneyu` was checked against SciPy and gave p = 1 for a case SciPy puts at
/// 0.032, so it is not used.)
pub fn mann_whitney(a: &[f64], b: &[f64]) -> Option<(f64, f64)> {
    let (m, n) = (a.len(), b.len());
    if m == 0 || n == 0 {
        return None;
    }
    let (r, ties) = ranks(&[a, b].concat());
    let u1 = r[..m].iter().sum::<f64>() - (m * (m + 1)) as f64 / 2.0;
    let u2 = (m * n) as f64 - u1;
    let u = u1.max(u2);
    let tied = ties.iter().any(|&t| t > 1);
    let p = if !tied && m.min(n) <= 8 {
        // P(U >= u) = P(U <= mn - u) by symmetry; U is whole without ties
        2.0 * u_lower_tail(m, n, (m * n) - u as usize)
    } else {
        let nn = (m + n) as f64;
        let t: f64 = ties.iter().map(|&t| (t * t * t - t) as f64).sum();
        let sigma = ((m * n) as f64 / 12.0 * ((nn + 1.0) - t / (nn * (nn - 1.0)))).sqrt();
        if sigma <= 0.0 {
            return Some((u1, 1.0));
        }
        let z = (u - (m * n) as f64 / 2.0 - 0.5) / sigma;
        2.0 * statrs::distribution::Normal::standard().sf(z)
    };
    Some((u1, p.min(1.0)))
}

/// Median of a slice (the middle value, or the mean of the two middle values).
pub fn median(x: &[f64]) -> f64 {
    let mut v: Vec<f64> = x.to_vec();
    v.sort_by(f64::total_cmp);
    super::quantile_sorted(&v, 0.5)
}

/// Median absolute deviation from the median (unscaled).
pub fn mad(x: &[f64]) -> f64 {
    let m = median(x);
    median(&x.iter().map(|v| (v - m).abs()).collect::<Vec<_>>())
}

/// Mean absolute deviation from the median, the outlier rule's fallback where the MAD is 0.
pub fn mean_abs_deviation(x: &[f64]) -> f64 {
    let m = median(x);
    x.iter().map(|v| (v - m).abs()).sum::<f64>() / x.len() as f64
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_abs_diff_eq;

    // NIST/SEMATECH e-Handbook of Statistical Methods, one-way ANOVA example (section 7.4.3):
    // three levels; F = 9.591, p = 0.00325; Kruskal-Wallis H = 8.390, p = 0.0151 (recomputed
    // with SciPy 1.17: f_oneway, kruskal).
    const L1: [f64; 5] = [6.9, 5.4, 5.8, 4.6, 4.0];
    const L2: [f64; 5] = [8.3, 6.8, 7.8, 9.2, 6.5];
    const L3: [f64; 5] = [8.0, 10.5, 8.1, 6.9, 9.3];
    // SciPy 1.17.1 to full precision: f_oneway F 9.591107036442812, p 0.0032482226008593005;
    // kruskal H 8.389982110912344, p 0.015070877263608444

    #[test]
    fn sematech_example() {
        let a = one_way_anova(&[&L1, &L2, &L3]).unwrap();
        assert_abs_diff_eq!(a.f, 9.591, epsilon = 0.0005);
        assert_abs_diff_eq!(a.p, 0.00325, epsilon = 0.000005);
        assert_abs_diff_eq!(a.f, 9.591_107_036_442_812, epsilon = 1e-9);
        assert_abs_diff_eq!(a.p, 0.003_248_222_600_859_300_5, epsilon = 1e-11);
        assert_eq!((a.df1, a.df2), (2.0, 12.0));
        let k = kruskal_wallis(&[&L1, &L2, &L3]).unwrap();
        assert_abs_diff_eq!(k.statistic, 8.390, epsilon = 0.0005);
        assert_abs_diff_eq!(k.p, 0.0151, epsilon = 0.00005);
        assert_abs_diff_eq!(k.statistic, 8.389_982_110_912_344, epsilon = 1e-9);
        assert_abs_diff_eq!(k.p, 0.015_070_877_263_608_444, epsilon = 1e-11);
    }

    #[test]
    fn holm_by_hand() {
        // raw 0.01, 0.04, 0.03, 0.005 -> 0.03, 0.06, 0.06, 0.02 (hand-worked: sorted
        // 0.005 x 4, 0.01 x 3, 0.03 x 2, 0.04 x 1, then running maximum)
        let adj = holm(&[0.01, 0.04, 0.03, 0.005]);
        for (got, want) in adj.iter().zip([0.03, 0.06, 0.06, 0.02]) {
            assert_abs_diff_eq!(*got, want, epsilon = 1e-12);
        }
    }

    #[test]
    fn welch_and_mann_whitney_against_scipy() {
        // SciPy 1.17.1: ttest_ind(L1, L2, equal_var=False), mannwhitneyu(L1, L2),
        // f_oneway(L1, L2, L3, equal_var=False)
        let t = welch_t(&L1, &L2).unwrap();
        assert_abs_diff_eq!(t.statistic, -3.389_639_386_780_516, epsilon = 1e-9);
        assert_abs_diff_eq!(t.df1, 7.998_734_940_809_775, epsilon = 1e-9);
        assert_abs_diff_eq!(t.p, 0.009_507_253_160_036_151, epsilon = 1e-9);
        let (u, p) = mann_whitney(&L1, &L2).unwrap();
        assert_eq!(u, 2.0);
        assert_abs_diff_eq!(p, 0.031_746_031_746_031_744, epsilon = 1e-12);
        // with ties and larger samples, the normal approximation: SciPy 1.17.1
        // mannwhitneyu([1, 2, 2, 3, 5, 6, 7, 8, 9, 9], [2, 3, 3, 4, 10, 11, 12, 12, 13, 14])
        let a = [1.0, 2.0, 2.0, 3.0, 5.0, 6.0, 7.0, 8.0, 9.0, 9.0];
        let b = [2.0, 3.0, 3.0, 4.0, 10.0, 11.0, 12.0, 12.0, 13.0, 14.0];
        let (u, p) = mann_whitney(&a, &b).unwrap();
        assert_eq!(u, 27.0);
        assert_abs_diff_eq!(p, 0.087_771_777_481_226_47, epsilon = 1e-10);
        let w = welch_anova(&[&L1, &L2, &L3]).result.unwrap();
        assert_abs_diff_eq!(w.statistic, 9.023_741_344_048_918, epsilon = 1e-9);
        assert_abs_diff_eq!(w.p, 0.009_051_398_579_123_376, epsilon = 1e-9);
    }

    #[test]
    fn ties_are_corrected() {
        // SciPy 1.17.1: kruskal([1, 2, 2, 3], [2, 3, 3, 4]) = H 2.3026315789473673, p 0.12915501399006685
        let k = kruskal_wallis(&[&[1.0, 2.0, 2.0, 3.0], &[2.0, 3.0, 3.0, 4.0]]).unwrap();
        assert_abs_diff_eq!(k.statistic, 2.302_631_578_947_367_3, epsilon = 1e-12);
        assert_abs_diff_eq!(k.p, 0.129_155_013_990_066_85, epsilon = 1e-12);
    }

    #[test]
    fn readings_equal_as_written_are_ties() {
        // depressions as the tool computes them (reference minus clear point): 114.3 - 113.0
        // and 122.4 - 121.1 differ in the 13th digit but are both 1.3 as written.
        // SciPy 1.17.1 on the values as written: kruskal([1.3, 1.3, 0.9, 1.6],
        // [1.3, 2.1, 1.8, 1.3, 2.4]) = H 2.356363636363633, p 0.1247727360437237;
        // mannwhitneyu(same, alternative="two-sided") = U 4.0, p 0.15939040677403393
        let a = [114.3 - 113.0, 122.4 - 121.1, 122.4 - 121.5, 122.4 - 120.8];
        let b = [
            1.3,
            122.4 - 120.3,
            122.4 - 120.6,
            114.3 - 113.0,
            122.4 - 120.0,
        ];
        assert_ne!(a[0], a[1]);
        let k = kruskal_wallis(&[&a, &b]).unwrap();
        assert_abs_diff_eq!(k.statistic, 2.356_363_636_363_633, epsilon = 1e-9);
        assert_abs_diff_eq!(k.p, 0.124_772_736_043_723_7, epsilon = 1e-9);
        let (u, p) = mann_whitney(&a, &b).unwrap();
        assert_abs_diff_eq!(u, 4.0, epsilon = 1e-12);
        assert_abs_diff_eq!(p, 0.159_390_406_774_033_93, epsilon = 1e-9);
    }

    #[test]
    fn mann_whitney_exact_for_a_small_sample_against_a_large_one() {
        // SciPy 1.17.1, mannwhitneyu(a, b, method="auto"), which is exact here (no ties, the
        // smaller sample has at most 8 values) however large the other sample is
        let b: Vec<f64> = (0..1994)
            .map(|i| f64::from(i) + 0.25 * f64::from(i % 3))
            .collect();
        let a = [100.6, 400.7, 900.8, 1200.9, 1500.1, 1990.2];
        let (u, p) = mann_whitney(&a, &b).unwrap();
        assert_eq!(u, 6095.0);
        assert_abs_diff_eq!(p, 0.938_106_973_681_689_2, epsilon = 1e-12);
        let high = [1500.1, 1700.2, 1800.3, 1850.4, 1900.6, 1980.7];
        let (u, p) = mann_whitney(&high, &b).unwrap();
        assert_eq!(u, 10734.0);
        assert_abs_diff_eq!(p, 0.000_159_726_134_943_529_26, epsilon = 1e-15);
        let c = [1.5, 2.25, 3.75, 4.5, 10.5, 11.25, 12.75, 20.5];
        let d: Vec<f64> = (5..35).map(|x| f64::from(x) + 0.1).collect();
        let (u, p) = mann_whitney(&c, &d).unwrap();
        assert_eq!(u, 37.0);
        assert_abs_diff_eq!(p, 0.001_925_424_875_589_661_3, epsilon = 1e-15);
    }

    #[test]
    fn undefined_tests_say_why() {
        // every student full marks in two sections: no variation at all
        let same: [&[f64]; 2] = [&[100.0, 100.0], &[100.0, 100.0, 100.0]];
        assert!(one_way_anova(&same).unwrap_err().contains("no variation"));
        assert!(kruskal_wallis(&same).unwrap_err().contains("the same"));
        let w = welch_anova(&same);
        assert!(w.result.is_err());
        assert_eq!(
            w.left_out,
            vec![(0, LeftOut::NoSpread), (1, LeftOut::NoSpread)]
        );
        assert!(welch_t(&[1.0], &[1.0, 2.0])
            .unwrap_err()
            .contains("one value"));
        // one group, and groups of one
        assert!(one_way_anova(&[&[1.0, 2.0]])
            .unwrap_err()
            .contains("fewer than two"));
        assert!(one_way_anova(&[&[1.0], &[2.0]]).is_err());
        // Welch leaves out a group of one and says so, and still tests the rest
        let w = welch_anova(&[&L1, &[7.0], &L2]);
        assert_eq!(w.left_out, vec![(1, LeftOut::OneValue)]);
        assert!(w.result.is_ok());
    }
}
