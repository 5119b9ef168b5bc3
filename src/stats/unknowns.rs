//! Unknowns across the cohort: how often students identified their unknown, by section and by
//! code, and the answer key checked against the class. Where most students given one code name
//! the same other compound, or their recrystallized clear points agree with each other and not
//! with the key's compound, the key or the sample bottle may be wrong for that code: a finding
//! a coordinator otherwise learns from a complaint.

use std::collections::BTreeMap;

use super::inference::median;
use crate::model::{code_key, Flag, Graded};

/// Students judged against the key, in one group.
#[derive(Clone, Debug, Default, PartialEq)]
pub struct Tally {
    pub correct: usize,
    pub wrong: usize,
    pub none: usize,
}

impl Tally {
    pub fn judged(&self) -> usize {
        self.correct + self.wrong + self.none
    }

    /// Share identified correctly, in percent.
    pub fn correct_pct(&self) -> f64 {
        100.0 * self.correct as f64 / self.judged().max(1) as f64
    }

    fn add(&mut self, word: &str) {
        match word {
            "correct" => self.correct += 1,
            "wrong" => self.wrong += 1,
            _ => self.none += 1,
        }
    }
}

/// One unknown code across the class.
#[derive(Clone, Debug, Default, PartialEq)]
pub struct Code {
    /// The code as first written.
    pub code: String,
    /// The key's compound.
    pub identity: String,
    /// The key compound's reference melting point, as the rows were graded against.
    pub reference_c: Option<f64>,
    pub tally: Tally,
    /// How many students named each compound.
    pub named: BTreeMap<String, usize>,
    /// The recrystallized clear points (as used).
    pub clears: Vec<f64>,
}

impl Code {
    /// The compound named most often, and by how many (ties: the first in name order).
    pub fn most_named(&self) -> Option<(&str, usize)> {
        let most = self.named.values().copied().max()?;
        self.named
            .iter()
            .find(|(_, n)| **n == most)
            .map(|(c, n)| (c.as_str(), *n))
    }

    pub fn median_clear(&self) -> Option<f64> {
        (!self.clears.is_empty()).then(|| median(&self.clears))
    }
}

/// Identifications gathered as the batch streams past.
#[derive(Clone, Debug, Default)]
pub struct Identifications {
    pub sections: BTreeMap<String, Tally>,
    /// By `code_key`.
    pub codes: BTreeMap<String, Code>,
}

/// Fewest students of one code before the class is taken as evidence against the key.
const MIN_STUDENTS: usize = 3;
/// Clear points within this of their median agree with each other (°C).
const AGREE_C: f64 = 1.5;
/// A median clear point further than this from the key's reference disagrees with it (°C).
const DISAGREE_C: f64 = 3.0;

impl Identifications {
    pub fn add(&mut self, g: &Graded) {
        let a = &g.assessed;
        let w = &a.workup;
        let (Some(word), Some(code), Some(identity)) = (
            w.identification,
            a.submission.unknown_code.as_deref(),
            w.identity.as_deref(),
        ) else {
            return;
        };
        if a.excused.is_some() || a.has(Flag::DuplicateStudent) {
            return;
        }
        self.sections
            .entry(a.submission.section.clone())
            .or_default()
            .add(word);
        let entry = self.codes.entry(code_key(code)).or_insert_with(|| Code {
            code: code.trim().to_string(),
            identity: identity.to_string(),
            reference_c: a.reference_mp_c,
            ..Code::default()
        });
        entry.tally.add(word);
        if let Some(n) = &w.identified_as {
            *entry.named.entry(n.clone()).or_default() += 1;
        }
        if let Some(c) = a.mp_clear_c.filter(|c| c.is_finite()) {
            entry.clears.push(c);
        }
    }

    pub fn is_empty(&self) -> bool {
        self.codes.is_empty()
    }

    /// The key checked against the class: one sentence for each code the class contradicts.
    pub fn key_findings(&self) -> Vec<String> {
        self.codes.values().filter_map(key_finding).collect()
    }
}

/// A finding about one code, if the class contradicts its key entry.
fn key_finding(c: &Code) -> Option<String> {
    let n = c.tally.judged();
    if n < MIN_STUDENTS {
        return None;
    }
    let other = c
        .most_named()
        .filter(|(name, k)| *name != c.identity && 2 * k > n);
    let clears = c.median_clear().zip(c.reference_c).filter(|(m, r)| {
        let agree = c
            .clears
            .iter()
            .filter(|x| (*x - m).abs() <= AGREE_C)
            .count();
        c.clears.len() >= MIN_STUDENTS
            && 3 * agree >= 2 * c.clears.len()
            && (m - r).abs() > DISAGREE_C
    });
    if other.is_none() && clears.is_none() {
        return None;
    }
    let mut evidence = Vec::new();
    if let Some((name, k)) = other {
        evidence.push(format!("{k} of {n} students named {name}"));
    }
    if let Some((m, r)) = clears {
        evidence.push(format!(
            "their recrystallized clear points agree with each other (median {m:.1} °C) and not with {}'s {r:.1} °C",
            c.identity
        ));
    }
    let points_to = c
        .most_named()
        .filter(|(name, _)| *name != c.identity)
        .map_or(String::new(), |(name, _)| {
            format!("; the class points to {name}")
        });
    Some(format!(
        "unknown {}: the key says {}, but {}{points_to}; check the key and the sample bottle for this code",
        c.code,
        c.identity,
        evidence.join(", and ")
    ))
}

#[cfg(test)]
mod tests {
    use super::*;

    fn code(named: &[(&str, usize)], clears: &[f64]) -> Code {
        let mut c = Code {
            code: "U-3".into(),
            identity: "benzoic acid".into(),
            reference_c: Some(122.4),
            clears: clears.to_vec(),
            ..Code::default()
        };
        for (name, k) in named {
            c.named.insert((*name).to_string(), *k);
            for _ in 0..*k {
                c.tally.add(if *name == "benzoic acid" {
                    "correct"
                } else {
                    "wrong"
                });
            }
        }
        c
    }

    #[test]
    fn a_wrong_key_entry_is_caught() {
        // 4 of 5 name acetanilide, clear points near 114 against benzoic acid's 122.4
        // (hand-worked: median 114.2, 8.2 °C away)
        let c = code(
            &[("acetanilide", 4), ("benzoic acid", 1)],
            &[114.0, 114.2, 114.5, 113.8, 114.3],
        );
        let f = key_finding(&c).unwrap();
        assert!(f.contains("4 of 5 students named acetanilide"), "{f}");
        assert!(f.contains("median 114.2 °C"), "{f}");
        assert!(f.contains("the class points to acetanilide"), "{f}");
        // a class that mostly agrees with the key: nothing to say
        let c = code(
            &[("acetanilide", 1), ("benzoic acid", 4)],
            &[121.8, 122.0, 121.5, 122.1, 114.0],
        );
        assert_eq!(key_finding(&c), None);
        // scattered clear points are no evidence
        let c = code(
            &[("benzoic acid", 1), ("urea", 1), ("vanillin", 1)],
            &[100.0, 110.0, 130.0],
        );
        assert_eq!(key_finding(&c), None);
    }
}
