//! The coordinator's view: whether sections, teaching assistants, benches or apparatus differ.
//! Rows are gathered compactly as the batch streams past; the tests run at the end.
//!
//! Comparisons use the rows without impossible entries. Bench bias uses every row with a
//! depression (an above-reference reading is the evidence of a bench that reads high), and is
//! worded as an equipment finding, never as a mark against the students.

use std::collections::BTreeMap;

use super::inference::{
    holm, kruskal_wallis, mad, mann_whitney, median, one_way_anova, robust_z, welch_anova, welch_t,
};
use crate::assess::{Flag, Severity};
use crate::rubric::score::Graded;

/// The measures compared across groups, as named in section-comparison.csv.
pub const COMPARED: [&str; 4] = ["recovery_pct", "depression_c", "purity_mol_pct", "score"];

/// Thresholds for a bench finding.
#[derive(Clone, Copy, Debug)]
pub struct BiasRule {
    pub min_shift_c: f64,
    pub min_students: usize,
    pub max_p_adjusted: f64,
}

impl Default for BiasRule {
    fn default() -> Self {
        BiasRule {
            min_shift_c: 1.5,
            min_students: 5,
            max_p_adjusted: 0.05,
        }
    }
}

#[derive(Clone, Debug)]
struct Row {
    section: u32,
    assistant: Option<u32>,
    bench: Option<u32>,
    values: [f64; 4],
    impossible: bool,
    above_reference: bool,
    where_: u32,
}

/// Everything the cohort report needs, gathered row by row.
#[derive(Clone, Debug, Default)]
pub struct Cohort {
    names: Vec<String>,
    index: BTreeMap<String, u32>,
    rows: Vec<Row>,
    /// Where each row came from: the interned "file [sheet]" and the spreadsheet row.
    places: Vec<(u32, u32)>,
}

/// One line of section-comparison.csv.
#[derive(Clone, Debug, PartialEq)]
pub struct Comparison {
    pub measure: &'static str,
    pub grouping: &'static str,
    pub test: &'static str,
    pub group_a: String,
    pub group_b: String,
    pub statistic: f64,
    pub df1: f64,
    pub df2: f64,
    pub p_value: f64,
    pub p_adjusted: f64,
    pub effect_size: f64,
}

/// One line of bench-bias.csv.
#[derive(Clone, Debug, PartialEq)]
pub struct BenchBias {
    pub bench: String,
    pub n: usize,
    /// How far the bench's clear points sit above the rest of the cohort's (median of the
    /// rest's depression minus the bench's): positive reads high.
    pub median_shift_c: f64,
    pub u_statistic: f64,
    pub p_value: f64,
    pub p_adjusted: f64,
    pub above_reference: usize,
    pub finding: String,
}

/// A student whose value sits far from the section's median (robust z beyond 3.5).
#[derive(Clone, Debug, PartialEq)]
pub struct Outlier {
    pub section: String,
    pub place: String,
    pub measure: &'static str,
    pub value: f64,
    pub robust_z: f64,
}

impl Cohort {
    /// "file [sheet] row N", as the report names a row.
    fn place(&self, i: u32) -> String {
        let (origin, row) = self.places[i as usize];
        let origin = &self.names[origin as usize];
        format!("{} row {row}", origin.trim_start_matches('\u{3}'))
    }

    fn intern(&mut self, name: &str) -> u32 {
        if let Some(&i) = self.index.get(name) {
            return i;
        }
        let i = self.names.len() as u32;
        self.names.push(name.to_string());
        self.index.insert(name.to_string(), i);
        i
    }

    pub fn add(&mut self, g: &Graded) {
        let a = &g.assessed;
        let s = &a.submission;
        let section = self.intern(&s.section);
        let assistant = s
            .assistant
            .as_deref()
            .map(|x| self.intern(&format!("\u{1}{x}")));
        let bench = s
            .apparatus
            .as_deref()
            .or(s.bench.as_deref())
            // benches match however they are written ("Bench 7", "B7", "7"), as in calibration
            .map(|x| {
                self.intern(&format!(
                    "\u{2}{}",
                    crate::assess::calibration::apparatus_key(x)
                ))
            });
        let origin = match &s.sheet {
            Some(sheet) => format!("\u{3}{} [{sheet}]", s.source),
            None => format!("\u{3}{}", s.source),
        };
        let origin = self.intern(&origin);
        self.places.push((origin, s.row));
        let v = |x: Option<f64>| x.filter(|v| v.is_finite()).unwrap_or(f64::NAN);
        self.rows.push(Row {
            section,
            assistant,
            bench,
            values: [
                v(a.recovery_pct),
                v(a.depression_c),
                v(a.purity_mol_pct),
                g.score.total,
            ],
            impossible: a
                .flags
                .iter()
                .any(|(f, _)| f.severity() == Severity::Impossible),
            above_reference: a.has(Flag::AboveReference),
            where_: self.places.len() as u32 - 1,
        });
    }

    fn name(&self, i: u32) -> &str {
        self.names[i as usize].trim_start_matches(['\u{1}', '\u{2}'])
    }

    /// Values of measure `m` by group, for rows without impossible entries, groups in name order.
    fn groups(&self, m: usize, key: impl Fn(&Row) -> Option<u32>) -> Vec<(String, Vec<f64>)> {
        let mut by: BTreeMap<String, Vec<f64>> = BTreeMap::new();
        for r in self
            .rows
            .iter()
            .filter(|r| !r.impossible && r.values[m].is_finite())
        {
            if let Some(k) = key(r) {
                by.entry(self.name(k).to_string())
                    .or_default()
                    .push(r.values[m]);
            }
        }
        by.into_iter().collect()
    }

    pub fn sections(&self) -> Vec<String> {
        let mut s: Vec<String> = self
            .rows
            .iter()
            .map(|r| self.name(r.section).to_string())
            .collect();
        s.sort();
        s.dedup();
        s
    }

    /// Values of a measure by section (rows without impossible entries), for plots.
    pub fn by_section(&self, measure: &str) -> Vec<(String, Vec<f64>)> {
        let m = COMPARED.iter().position(|x| *x == measure).unwrap_or(0);
        self.groups(m, |r| Some(r.section))
    }

    /// Omnibus and pairwise tests of every compared measure across sections (and assistants).
    pub fn comparisons(&self) -> Vec<Comparison> {
        let mut out = Vec::new();
        let groupings: [(&'static str, GroupKey); 2] = [
            ("section", |r| Some(r.section)),
            ("assistant", |r| r.assistant),
        ];
        for (m, measure) in COMPARED.iter().enumerate() {
            for (grouping, key) in groupings {
                let groups = self.groups(m, key);
                if groups.len() < 2 {
                    continue;
                }
                let refs: Vec<&[f64]> = groups.iter().map(|(_, v)| v.as_slice()).collect();
                let row = |test, statistic, df1, df2, p, effect| Comparison {
                    measure,
                    grouping,
                    test,
                    group_a: String::new(),
                    group_b: String::new(),
                    statistic,
                    df1,
                    df2,
                    p_value: p,
                    p_adjusted: f64::NAN,
                    effect_size: effect,
                };
                if let Some(a) = one_way_anova(&refs) {
                    out.push(row("one-way ANOVA", a.f, a.df1, a.df2, a.p, a.eta_squared));
                }
                if let Some(w) = welch_anova(&refs) {
                    out.push(row("Welch ANOVA", w.statistic, w.df1, w.df2, w.p, f64::NAN));
                }
                if let Some(k) = kruskal_wallis(&refs) {
                    let n: usize = refs.iter().map(|g| g.len()).sum();
                    // epsilon squared, H / (n - 1)
                    out.push(row(
                        "Kruskal-Wallis",
                        k.statistic,
                        k.df1,
                        f64::NAN,
                        k.p,
                        k.statistic / (n as f64 - 1.0),
                    ));
                }
                let mut pairs = Vec::new();
                for i in 0..groups.len() {
                    for j in i + 1..groups.len() {
                        if let Some(t) = welch_t(&groups[i].1, &groups[j].1) {
                            let d = cohen_d(&groups[i].1, &groups[j].1);
                            pairs.push(Comparison {
                                group_a: groups[i].0.clone(),
                                group_b: groups[j].0.clone(),
                                ..row("Welch t", t.statistic, t.df1, f64::NAN, t.p, d)
                            });
                        }
                    }
                }
                let adjusted = holm(&pairs.iter().map(|p| p.p_value).collect::<Vec<_>>());
                for (p, adj) in pairs.iter_mut().zip(adjusted) {
                    p.p_adjusted = adj;
                }
                out.extend(pairs);
            }
        }
        out
    }

    /// Each bench against the rest of the cohort on depression, Holm-adjusted across benches.
    pub fn bench_bias(&self, rule: BiasRule) -> Vec<BenchBias> {
        let m = 1; // depression_c
        let mut by: BTreeMap<u32, Vec<&Row>> = BTreeMap::new();
        for r in self.rows.iter().filter(|r| r.values[m].is_finite()) {
            if let Some(b) = r.bench {
                by.entry(b).or_default().push(r);
            }
        }
        let mut out: Vec<BenchBias> = Vec::new();
        for (&bench, rows) in &by {
            let mine: Vec<f64> = rows.iter().map(|r| r.values[m]).collect();
            let rest: Vec<f64> = self
                .rows
                .iter()
                .filter(|r| r.values[m].is_finite() && r.bench != Some(bench))
                .map(|r| r.values[m])
                .collect();
            let Some((u, p)) = mann_whitney(&mine, &rest) else {
                continue;
            };
            out.push(BenchBias {
                bench: self.name(bench).to_string(),
                n: mine.len(),
                median_shift_c: median(&rest) - median(&mine),
                u_statistic: u,
                p_value: p,
                p_adjusted: f64::NAN,
                above_reference: rows.iter().filter(|r| r.above_reference).count(),
                finding: String::new(),
            });
        }
        let adjusted = holm(&out.iter().map(|b| b.p_value).collect::<Vec<_>>());
        for (b, adj) in out.iter_mut().zip(adjusted) {
            b.p_adjusted = adj;
            if b.median_shift_c.abs() >= rule.min_shift_c
                && b.n >= rule.min_students
                && adj < rule.max_p_adjusted
            {
                let dir = if b.median_shift_c > 0.0 {
                    "high"
                } else {
                    "low"
                };
                b.finding = format!(
                    "bench {} reads {:.1} °C {dir}; {} of its {} students were flagged above-reference; check the apparatus",
                    b.bench,
                    b.median_shift_c.abs(),
                    b.above_reference,
                    b.n
                );
            }
        }
        out.sort_by_key(|b| natural(&b.bench));
        out
    }

    /// Students far from their section's median recovery or depression (|robust z| > 3.5).
    pub fn outliers(&self) -> Vec<Outlier> {
        let mut out = Vec::new();
        for (m, measure) in [(0, "recovery_pct"), (1, "depression_c")] {
            let mut by: BTreeMap<u32, Vec<&Row>> = BTreeMap::new();
            for r in self
                .rows
                .iter()
                .filter(|r| !r.impossible && r.values[m].is_finite())
            {
                by.entry(r.section).or_default().push(r);
            }
            for (section, rows) in by {
                let v: Vec<f64> = rows.iter().map(|r| r.values[m]).collect();
                let (med, d) = (median(&v), mad(&v));
                for r in rows {
                    let z = robust_z(r.values[m], med, d);
                    if z.abs() > crate::assess::OUTLIER_Z {
                        out.push(Outlier {
                            section: self.name(section).to_string(),
                            place: self.place(r.where_),
                            measure,
                            value: r.values[m],
                            robust_z: z,
                        });
                    }
                }
            }
        }
        out
    }
}

/// Which group a row belongs to under a grouping.
type GroupKey = fn(&Row) -> Option<u32>;

/// Sort key that puts "2" before "10".
fn natural(s: &str) -> (String, u64, String) {
    let digits: String = s.chars().filter(|c| c.is_ascii_digit()).collect();
    let prefix: String = s.chars().take_while(|c| !c.is_ascii_digit()).collect();
    (prefix, digits.parse().unwrap_or(0), s.to_string())
}

/// Cohen's d with the pooled standard deviation.
fn cohen_d(a: &[f64], b: &[f64]) -> f64 {
    let (na, nb) = (a.len() as f64, b.len() as f64);
    let ma = a.iter().sum::<f64>() / na;
    let mb = b.iter().sum::<f64>() / nb;
    let va = a.iter().map(|x| (x - ma).powi(2)).sum::<f64>() / (na - 1.0);
    let vb = b.iter().map(|x| (x - mb).powi(2)).sum::<f64>() / (nb - 1.0);
    let pooled = (((na - 1.0) * va + (nb - 1.0) * vb) / (na + nb - 2.0)).sqrt();
    (ma - mb) / pooled
}
