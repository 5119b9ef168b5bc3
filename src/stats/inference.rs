//! Tests for comparing sections, assistants and benches: one-way ANOVA, Welch's ANOVA,
//! Kruskal-Wallis with tie correction, Welch's t, Holm's adjustment, Mann-Whitney U and the
//! median absolute deviation. Distributions come from statrs.
//!
//! statrs' own `f_oneway` sums squares from raw values and loses every digit on the NIST StRD
//! sets with many constant leading digits (SmLs06, SmLs09), so ANOVA here works from deviations
//! about each group's mean, computed in two passes.

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

fn f_sf(f: f64, d1: f64, d2: f64) -> f64 {
    FisherSnedecor::new(d1, d2).map_or(f64::NAN, |d| d.sf(f))
}

/// One-way ANOVA over groups with at least one value each; `None` with fewer than two groups
/// or no within-group degrees of freedom.
pub fn one_way_anova(groups: &[&[f64]]) -> Option<Anova> {
    let groups: Vec<&[f64]> = groups.iter().copied().filter(|g| !g.is_empty()).collect();
    let k = groups.len();
    let n: usize = groups.iter().map(|g| g.len()).sum();
    if k < 2 || n <= k {
        return None;
    }
    let all: Vec<f64> = groups.iter().flat_map(|g| g.iter().copied()).collect();
    let grand = mean(&all);
    let means: Vec<f64> = groups.iter().map(|g| mean(g)).collect();
    let ss_between: f64 = groups
        .iter()
        .zip(&means)
        .map(|(g, m)| g.len() as f64 * (m - grand) * (m - grand))
        .sum();
    let ss_within: f64 = groups
        .iter()
        .zip(&means)
        .map(|(g, m)| ss_about(g, *m))
        .sum();
    let (df1, df2) = ((k - 1) as f64, (n - k) as f64);
    let ms_within = ss_within / df2;
    let f = (ss_between / df1) / ms_within;
    Some(Anova {
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

/// Welch's heteroscedastic one-way ANOVA (Welch 1951). Needs at least two values per group.
pub fn welch_anova(groups: &[&[f64]]) -> Option<Test> {
    let groups: Vec<&[f64]> = groups.iter().copied().filter(|g| g.len() >= 2).collect();
    let k = groups.len() as f64;
    if k < 2.0 {
        return None;
    }
    let stats: Vec<(f64, f64, f64)> = groups
        .iter()
        .map(|g| {
            let n = g.len() as f64;
            let m = mean(g);
            (n, m, ss_about(g, m) / (n - 1.0))
        })
        .collect();
    if stats.iter().any(|(_, _, v)| *v <= 0.0) {
        return None;
    }
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
    Some(Test {
        statistic: f,
        df1: k - 1.0,
        df2,
        p: f_sf(f, k - 1.0, df2),
    })
}

/// Average ranks (1-based) of the pooled values, and the sizes of the tied groups.
fn ranks(values: &[f64]) -> (Vec<f64>, Vec<usize>) {
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
pub fn kruskal_wallis(groups: &[&[f64]]) -> Option<Test> {
    let groups: Vec<&[f64]> = groups.iter().copied().filter(|g| !g.is_empty()).collect();
    let k = groups.len();
    if k < 2 {
        return None;
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
    if correction <= 0.0 {
        return None;
    }
    let h = h / correction;
    let df = (k - 1) as f64;
    Some(Test {
        statistic: h,
        df1: df,
        df2: f64::NAN,
        p: ChiSquared::new(df).map_or(f64::NAN, |d| d.sf(h)),
    })
}

/// Welch's two-sample t-test, two-sided.
pub fn welch_t(a: &[f64], b: &[f64]) -> Option<Test> {
    if a.len() < 2 || b.len() < 2 {
        return None;
    }
    let (na, nb) = (a.len() as f64, b.len() as f64);
    let (ma, mb) = (mean(a), mean(b));
    let (va, vb) = (ss_about(a, ma) / (na - 1.0), ss_about(b, mb) / (nb - 1.0));
    let se2 = va / na + vb / nb;
    if se2 <= 0.0 {
        return None;
    }
    let t = (ma - mb) / se2.sqrt();
    let df = se2 * se2 / ((va / na).powi(2) / (na - 1.0) + (vb / nb).powi(2) / (nb - 1.0));
    let p = StudentsT::new(0.0, 1.0, df).map_or(f64::NAN, |d| 2.0 * d.sf(t.abs()));
    Some(Test {
        statistic: t,
        df1: df,
        df2: f64::NAN,
        p,
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

/// Number of arrangements giving each U for samples of sizes m and n, no ties.
fn u_distribution(m: usize, n: usize) -> Vec<f64> {
    // f[i][j][u]: ways for sizes i and j; f(i, j, u) = f(i - 1, j, u - j) + f(i, j - 1, u)
    let max = m * n;
    let mut prev: Vec<Vec<f64>> = (0..=n)
        .map(|_| {
            let mut v = vec![0.0; max + 1];
            v[0] = 1.0;
            v
        })
        .collect();
    for i in 1..=m {
        let mut cur: Vec<Vec<f64>> = vec![vec![0.0; max + 1]; n + 1];
        cur[0][0] = 1.0;
        for j in 1..=n {
            for u in 0..=i * j {
                let a = if u >= j { prev[j][u - j] } else { 0.0 };
                cur[j][u] = a + cur[j - 1][u];
            }
        }
        prev = cur;
    }
    prev[n].clone()
}

/// Mann-Whitney U, two-sided, as SciPy's `mannwhitneyu` (method "auto"): the exact
/// distribution when there are no ties and a sample has at most 8 values, else the normal
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
    let p = if !tied && m.min(n) <= 8 && m * n <= 10_000 {
        let dist = u_distribution(m, n);
        let total: f64 = dist.iter().sum();
        let upper: f64 = dist[(u as usize).min(m * n)..].iter().sum::<f64>() / total;
        2.0 * upper
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
        let w = welch_anova(&[&L1, &L2, &L3]).unwrap();
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
}
