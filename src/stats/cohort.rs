//! The coordinator's view: whether sections, teaching assistants, benches or apparatus differ.
//! Rows are gathered compactly as the batch streams past; the tests run at the end.
//!
//! Comparisons use, for each measure, the rows whose entries for it are possible, never an
//! excused student or a repeat that does not count. Bench bias uses every row with a
//! depression (an above-reference reading is the evidence of a bench that reads high), and is
//! worded as an equipment finding, never as a mark against the students.

use std::collections::BTreeMap;

use super::inference::{
    holm, kruskal_wallis, mann_whitney, median, one_way_anova, welch_anova, welch_t, LeftOut,
};
use super::mean_and_ss;
use super::outlier::{self, Centre};
use crate::model::{bench_key, Flag, Graded, Measure};

/// Most groups whose every pair is tested (40 groups make 780 pairs): thousands of sections
/// would make millions of rows, more than a worksheet holds.
pub const MAX_PAIRWISE_GROUPS: usize = 40;

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
    impossible: bool,
    /// Bit i set: the row's value in slot i enters comparisons (`Assessed::counts_for`).
    counts: u32,
    above_reference: bool,
    /// The row misses an entry or holds one that could not be read (its zeros may be the
    /// sheet's reading, not the student's work).
    unreadable: bool,
    /// The spreadsheet row, and the "file [sheet]" it is in (in `Cohort::origins`).
    origin: u32,
    line: u32,
}

/// Names interned once: every row refers to its section, assistant, bench and file by number.
#[derive(Clone, Debug, Default)]
struct Names {
    names: Vec<String>,
    index: BTreeMap<String, u32>,
}

impl Names {
    fn intern(&mut self, name: &str) -> u32 {
        if let Some(&i) = self.index.get(name) {
            return i;
        }
        let i = self.names.len() as u32;
        self.names.push(name.to_string());
        self.index.insert(name.to_string(), i);
        i
    }

    fn get(&self, i: u32) -> &str {
        &self.names[i as usize]
    }
}

/// Everything the cohort report needs, gathered row by row.
#[derive(Clone, Debug)]
pub struct Cohort {
    /// The measures compared: the registry's compared measures.
    measures: Vec<Measure>,
    sections: Names,
    assistants: Names,
    benches: Names,
    origins: Names,
    rows: Vec<Row>,
    /// Each row's value of every compared measure (NaN where none), row after row.
    values: Vec<f64>,
    /// Unknowns identified against a key, by section and by code.
    pub identifications: super::unknowns::Identifications,
}

impl Default for Cohort {
    fn default() -> Self {
        Cohort {
            measures: Measure::compared(),
            sections: Names::default(),
            assistants: Names::default(),
            benches: Names::default(),
            origins: Names::default(),
            rows: Vec::new(),
            values: Vec::new(),
            identifications: super::unknowns::Identifications::default(),
        }
    }
}

/// One line of section-comparison.csv.
#[derive(Clone, Debug, PartialEq)]
pub struct Comparison {
    pub measure: Measure,
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
    /// Why the test gives no number, or which groups it left out; empty otherwise.
    pub note: String,
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
    /// Why the test gives no p-value; empty otherwise.
    pub note: String,
}

/// A student whose value sits far from the section's median (robust z beyond 3.5).
#[derive(Clone, Debug, PartialEq)]
pub struct Outlier {
    pub section: String,
    pub place: String,
    pub measure: Measure,
    pub value: f64,
    pub robust_z: f64,
}

impl Cohort {
    /// "file [sheet] row N", as the report names a row.
    fn place(&self, r: &Row) -> String {
        format!("{} row {}", self.origins.get(r.origin), r.line)
    }

    pub fn add(&mut self, g: &Graded) {
        self.identifications.add(g);
        let a = &g.assessed;
        let s = &a.submission;
        let section = self.sections.intern(&s.section);
        let assistant = s.assistant.as_deref().map(|x| self.assistants.intern(x));
        // benches match however they are written ("Bench 7", "B7", "7"), as in calibration
        let bench = s
            .apparatus
            .as_deref()
            .or(s.bench.as_deref())
            .map(|x| self.benches.intern(&bench_key(x)));
        let origin = match &s.sheet {
            Some(sheet) => self.origins.intern(&format!("{} [{sheet}]", s.source)),
            None => self.origins.intern(&s.source),
        };
        let row = g.row();
        // an excused student or a repeat that does not count has no values here at all
        let left_out = a.excused.is_some() || a.has(Flag::DuplicateStudent);
        let value = |m: &Measure| m.value(row).filter(|_| !left_out).unwrap_or(f64::NAN);
        self.values.extend(self.measures.iter().map(value));
        let counts = self
            .measures
            .iter()
            .enumerate()
            .filter(|(_, m)| a.counts_for(**m))
            .fold(0u32, |bits, (i, _)| bits | (1 << i));
        self.rows.push(Row {
            section,
            assistant,
            bench,
            impossible: a.is_impossible() || left_out,
            counts,
            above_reference: a.has(Flag::AboveReference),
            unreadable: a.has(Flag::MissingValue) || a.has(Flag::UnreadableValue),
            origin,
            line: s.row,
        });
    }

    /// Where measure `m` sits among each row's values; `None` if it is not compared.
    fn slot(&self, m: Measure) -> Option<usize> {
        self.measures.iter().position(|x| *x == m)
    }

    /// Row `i`'s value in slot `slot`.
    fn value(&self, i: usize, slot: usize) -> f64 {
        self.values[i * self.measures.len() + slot]
    }

    /// Values in `slot` by group, for rows whose entries for the measure are possible, groups
    /// in name order.
    fn groups(
        &self,
        slot: usize,
        names: &Names,
        key: impl Fn(&Row) -> Option<u32>,
    ) -> Vec<(String, Vec<f64>)> {
        let mut by: BTreeMap<String, Vec<f64>> = BTreeMap::new();
        for (i, r) in self.rows.iter().enumerate() {
            let v = self.value(i, slot);
            if r.counts & (1 << slot) == 0 || !v.is_finite() {
                continue;
            }
            if let Some(k) = key(r) {
                by.entry(names.get(k).to_string()).or_default().push(v);
            }
        }
        by.into_iter().collect()
    }

    pub fn sections(&self) -> Vec<String> {
        let mut s: Vec<String> = self
            .rows
            .iter()
            .map(|r| self.sections.get(r.section).to_string())
            .collect();
        s.sort();
        s.dedup();
        s
    }

    /// Values of a measure by section (rows without impossible entries), for plots; empty for
    /// a measure that is not compared.
    pub fn by_section(&self, m: Measure) -> Vec<(String, Vec<f64>)> {
        match self.slot(m) {
            Some(slot) => self.groups(slot, &self.sections, |r| Some(r.section)),
            None => Vec::new(),
        }
    }

    /// Values of a measure by bench or apparatus, benches in natural order ("2" before "10"),
    /// for plots: every row with a value, impossible ones included (a clear point above the
    /// reference is the evidence of a bench that reads high), as bench bias counts them.
    pub fn by_bench(&self, m: Measure) -> Vec<(String, Vec<f64>)> {
        let Some(slot) = self.slot(m) else {
            return Vec::new();
        };
        let mut by: BTreeMap<String, Vec<f64>> = BTreeMap::new();
        for (i, r) in self.rows.iter().enumerate() {
            let v = self.value(i, slot);
            if let (Some(b), true) = (r.bench, v.is_finite()) {
                by.entry(self.benches.get(b).to_string())
                    .or_default()
                    .push(v);
            }
        }
        let mut groups: Vec<(String, Vec<f64>)> = by.into_iter().collect();
        groups.sort_by(|a, b| natural_cmp(&a.0, &b.0));
        groups
    }

    /// Kruskal-Wallis of the score across sections or assistants (`grouping`) over the rows
    /// with no missing or unreadable entry, and how many rows that leaves out: whether a
    /// difference in score survives without the zeros a reading failure gives.
    pub fn score_without_unreadable(&self, grouping: &str) -> Option<(Comparison, usize)> {
        let slot = self.slot(Measure::SCORE)?;
        let left = self.rows.iter().filter(|r| r.unreadable).count();
        let clean = |r: &Row| !r.unreadable;
        let groups = match grouping {
            "section" => self.groups(slot, &self.sections, |r| clean(r).then_some(r.section)),
            _ => self.groups(slot, &self.assistants, |r| r.assistant.filter(|_| clean(r))),
        };
        let grouping = if grouping == "section" {
            "section"
        } else {
            "assistant"
        };
        let blank = Comparison::blank(Measure::SCORE, grouping);
        let kw = omnibus(&blank, &groups)
            .into_iter()
            .find(|c| c.test == "Kruskal-Wallis")?;
        Some((kw, left))
    }

    /// Omnibus and pairwise tests of every compared measure across sections (and assistants).
    pub fn comparisons(&self) -> Vec<Comparison> {
        let mut out = Vec::new();
        for (slot, &measure) in self.measures.iter().enumerate() {
            let by_section = self.groups(slot, &self.sections, |r| Some(r.section));
            let by_assistant = self.groups(slot, &self.assistants, |r| r.assistant);
            for (grouping, groups) in [("section", by_section), ("assistant", by_assistant)] {
                let blank = Comparison::blank(measure, grouping);
                match groups.len() {
                    0 => {}
                    1 => out.extend(omnibus(&blank, &groups).into_iter().map(|c| {
                        let why = format!("only one {grouping} has values for this measure");
                        Comparison {
                            note: why,
                            ..blank.undefined(c.test, String::new())
                        }
                    })),
                    n => {
                        out.extend(omnibus(&blank, &groups));
                        if n <= MAX_PAIRWISE_GROUPS {
                            out.extend(pairwise(&blank, &groups));
                        } else {
                            let why = format!(
                                "pairwise tests left out: {n} {grouping}s make {} pairs, more than a table can show; compare a few at a time",
                                n * (n - 1) / 2
                            );
                            out.push(blank.undefined("Welch t", why));
                        }
                    }
                }
            }
        }
        out
    }

    /// Each bench against the rest of the cohort on depression, Holm-adjusted across benches.
    pub fn bench_bias(&self, rule: BiasRule) -> Vec<BenchBias> {
        let Some(slot) = self.slot(Measure::DEPRESSION) else {
            return Vec::new();
        };
        let with_value: Vec<(usize, &Row)> = self
            .rows
            .iter()
            .enumerate()
            .filter(|(i, _)| self.value(*i, slot).is_finite())
            .collect();
        let mut by: BTreeMap<u32, Vec<usize>> = BTreeMap::new();
        for (i, r) in &with_value {
            if let Some(b) = r.bench {
                by.entry(b).or_default().push(*i);
            }
        }
        let mut out: Vec<BenchBias> = Vec::new();
        for (&bench, members) in &by {
            let mine: Vec<f64> = members.iter().map(|&i| self.value(i, slot)).collect();
            let rest: Vec<f64> = with_value
                .iter()
                .filter(|(_, r)| r.bench != Some(bench))
                .map(|(i, _)| self.value(*i, slot))
                .collect();
            let Some((u, p)) = mann_whitney(&mine, &rest) else {
                out.push(BenchBias {
                    bench: self.benches.get(bench).to_string(),
                    n: mine.len(),
                    median_shift_c: f64::NAN,
                    u_statistic: f64::NAN,
                    p_value: f64::NAN,
                    p_adjusted: f64::NAN,
                    above_reference: 0,
                    finding: String::new(),
                    note: "no other clear points to compare this bench with".into(),
                });
                continue;
            };
            out.push(BenchBias {
                bench: self.benches.get(bench).to_string(),
                n: mine.len(),
                median_shift_c: median(&rest) - median(&mine),
                u_statistic: u,
                p_value: p,
                p_adjusted: f64::NAN,
                above_reference: members
                    .iter()
                    .filter(|&&i| self.rows[i].above_reference)
                    .count(),
                finding: String::new(),
                note: String::new(),
            });
        }
        adjust_and_judge(&mut out, rule);
        out.sort_by(|a, b| natural_cmp(&a.bench, &b.bench));
        out
    }

    /// Students far from their section's centre, by the one outlier rule, in sections with at
    /// least `min_n` rows without impossible entries.
    pub fn outliers(&self, min_n: usize) -> Vec<Outlier> {
        let mut out = Vec::new();
        let mut sizes: BTreeMap<u32, usize> = BTreeMap::new();
        for r in self.rows.iter().filter(|r| !r.impossible) {
            *sizes.entry(r.section).or_default() += 1;
        }
        for measure in outlier::MEASURES {
            let Some(slot) = self.slot(measure) else {
                continue;
            };
            let mut by: BTreeMap<u32, Vec<usize>> = BTreeMap::new();
            for (i, r) in self.rows.iter().enumerate() {
                if !r.impossible && self.value(i, slot).is_finite() {
                    by.entry(r.section).or_default().push(i);
                }
            }
            for (section, members) in by {
                if sizes.get(&section).copied().unwrap_or(0) < min_n {
                    continue;
                }
                let v: Vec<f64> = members.iter().map(|&i| self.value(i, slot)).collect();
                let centre = Centre::of(&v);
                for (&i, &value) in members.iter().zip(&v) {
                    if let Some(z) = centre.outlier(value) {
                        out.push(Outlier {
                            section: self.sections.get(section).to_string(),
                            place: self.place(&self.rows[i]),
                            measure,
                            value,
                            robust_z: z,
                        });
                    }
                }
            }
        }
        out
    }
}

impl Comparison {
    /// A comparison of `measure` by `grouping`, its test and numbers still to be set.
    fn blank(measure: Measure, grouping: &'static str) -> Comparison {
        Comparison {
            measure,
            grouping,
            test: "",
            group_a: String::new(),
            group_b: String::new(),
            statistic: f64::NAN,
            df1: f64::NAN,
            df2: f64::NAN,
            p_value: f64::NAN,
            p_adjusted: f64::NAN,
            effect_size: f64::NAN,
            note: String::new(),
        }
    }

    /// The test, with no number and the reason in words.
    fn undefined(&self, test: &'static str, why: String) -> Comparison {
        Comparison {
            test,
            note: why,
            ..self.clone()
        }
    }
}

/// One-way ANOVA, Welch's ANOVA and Kruskal-Wallis across the groups; a test the data leave
/// undefined is a row with the reason.
fn omnibus(blank: &Comparison, groups: &[(String, Vec<f64>)]) -> Vec<Comparison> {
    let refs: Vec<&[f64]> = groups.iter().map(|(_, v)| v.as_slice()).collect();
    let row = |test, statistic, df1, df2, p_value, effect_size| Comparison {
        test,
        statistic,
        df1,
        df2,
        p_value,
        effect_size,
        ..blank.clone()
    };
    let mut out = Vec::new();
    out.push(match one_way_anova(&refs) {
        Ok(a) => row("one-way ANOVA", a.f, a.df1, a.df2, a.p, a.eta_squared),
        Err(why) => blank.undefined("one-way ANOVA", why),
    });
    let welch = welch_anova(&refs);
    let left_out = welch_left_out(&welch.left_out, groups);
    out.push(match welch.result {
        Ok(w) => Comparison {
            note: left_out,
            ..row("Welch ANOVA", w.statistic, w.df1, w.df2, w.p, f64::NAN)
        },
        Err(why) if left_out.is_empty() => blank.undefined("Welch ANOVA", why),
        Err(why) => blank.undefined("Welch ANOVA", format!("{why}; {left_out}")),
    });
    out.push(match kruskal_wallis(&refs) {
        Ok(k) => {
            let n: usize = refs.iter().map(|g| g.len()).sum();
            // epsilon squared, H / (n - 1)
            let epsilon = k.statistic / (n as f64 - 1.0);
            row("Kruskal-Wallis", k.statistic, k.df1, f64::NAN, k.p, epsilon)
        }
        Err(why) => blank.undefined("Kruskal-Wallis", why),
    });
    out
}

/// "left out Sec 03 (one value), Sec 05 (every value the same)", or nothing.
fn welch_left_out(left: &[(usize, LeftOut)], groups: &[(String, Vec<f64>)]) -> String {
    if left.is_empty() {
        return String::new();
    }
    let named: Vec<String> = left
        .iter()
        .map(|(i, why)| {
            let why = match why {
                LeftOut::OneValue => "one value",
                LeftOut::NoSpread => "every value the same",
            };
            format!("{} ({why})", groups[*i].0)
        })
        .collect();
    // a note names a few groups and counts the rest, so that it reads (and fits a cell)
    const NAMED: usize = 10;
    if named.len() > NAMED {
        return format!(
            "left out {} and {} more groups (one value or every value the same)",
            named[..NAMED].join(", "),
            named.len() - NAMED
        );
    }
    format!("left out {}", named.join(", "))
}

/// Welch's t between every pair of groups (Cohen's d), Holm-adjusted together; a pair the
/// data leave undefined is a row with the reason and takes no part in the adjustment.
fn pairwise(blank: &Comparison, groups: &[(String, Vec<f64>)]) -> Vec<Comparison> {
    let mut pairs = Vec::new();
    for (i, (name_a, a)) in groups.iter().enumerate() {
        for (name_b, b) in &groups[i + 1..] {
            let named = Comparison {
                group_a: name_a.clone(),
                group_b: name_b.clone(),
                ..blank.clone()
            };
            pairs.push(match welch_t(a, b) {
                Ok(t) => Comparison {
                    test: "Welch t",
                    statistic: t.statistic,
                    df1: t.df1,
                    p_value: t.p,
                    effect_size: cohen_d(a, b),
                    ..named
                },
                Err(why) => named.undefined("Welch t", why),
            });
        }
    }
    let tested: Vec<usize> = (0..pairs.len())
        .filter(|&i| pairs[i].note.is_empty())
        .collect();
    let adjusted = holm(&tested.iter().map(|&i| pairs[i].p_value).collect::<Vec<_>>());
    for (&i, adj) in tested.iter().zip(adjusted) {
        pairs[i].p_adjusted = adj;
    }
    pairs
}

/// Holm-adjusts the benches' p-values and words a finding for each bench past the rule.
fn adjust_and_judge(benches: &mut [BenchBias], rule: BiasRule) {
    let tested: Vec<usize> = (0..benches.len())
        .filter(|&i| benches[i].note.is_empty())
        .collect();
    let adjusted = holm(
        &tested
            .iter()
            .map(|&i| benches[i].p_value)
            .collect::<Vec<_>>(),
    );
    for (&i, adj) in tested.iter().zip(adjusted) {
        let b = &mut benches[i];
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
}

/// Orders names as people count: "2" before "10", "B1-2" before "B1-10", each run of digits
/// compared as a number and the rest as text.
pub fn natural_cmp(a: &str, b: &str) -> std::cmp::Ordering {
    fn runs(s: &str) -> Vec<(bool, &str)> {
        let mut out = Vec::new();
        let mut start = 0;
        let mut digits = None;
        for (i, c) in s.char_indices() {
            let d = c.is_ascii_digit();
            if digits.is_some_and(|x| x != d) {
                out.push((digits == Some(true), &s[start..i]));
                start = i;
            }
            digits = Some(d);
        }
        if start < s.len() {
            out.push((digits == Some(true), &s[start..]));
        }
        out
    }
    let (ra, rb) = (runs(a), runs(b));
    for (x, y) in ra.iter().zip(&rb) {
        let o = match (x, y) {
            ((true, p), (true, q)) => {
                let (p, q) = (p.trim_start_matches('0'), q.trim_start_matches('0'));
                p.len().cmp(&q.len()).then_with(|| p.cmp(q))
            }
            ((_, p), (_, q)) => p.cmp(q),
        };
        if o.is_ne() {
            return o;
        }
    }
    ra.len().cmp(&rb.len()).then_with(|| a.cmp(b))
}

/// Cohen's d with the pooled standard deviation.
fn cohen_d(a: &[f64], b: &[f64]) -> f64 {
    let (na, nb) = (a.len() as f64, b.len() as f64);
    let (ma, ssa) = mean_and_ss(a);
    let (mb, ssb) = mean_and_ss(b);
    let pooled = ((ssa + ssb) / (na + nb - 2.0)).sqrt();
    (ma - mb) / pooled
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn names_sort_as_people_count() {
        let mut v = vec!["B1-10", "10", "B1-2", "2", "B10", "B2", "01"];
        v.sort_by(|a, b| natural_cmp(a, b));
        assert_eq!(v, ["01", "2", "10", "B1-2", "B1-10", "B2", "B10"]);
    }

    #[test]
    fn thousands_of_sections_do_not_make_millions_of_pairs() {
        let mut cohort = Cohort::default();
        for i in 0..2000 {
            for v in [70.0, 72.0 + f64::from(i % 7)] {
                let mut g = Graded::default();
                g.assessed.submission.section = format!("S{i}");
                g.assessed.recovery_pct = Some(v);
                cohort.add(&g);
            }
        }
        let rows = cohort.comparisons();
        assert!(rows.len() < 100, "{} rows", rows.len());
        assert!(rows
            .iter()
            .any(|c| c.test == "Welch t" && c.note.contains("1999000 pairs")));
    }
}
