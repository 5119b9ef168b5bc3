//! DIR/results.parquet for analysis elsewhere, and `--baseline DIR`: this term against an
//! earlier term's results.parquet. The only module that sees polars.
//!
//! The file is meant to leave the course: with `--pseudonymize` it holds pseudonyms and no
//! names.

use std::collections::BTreeMap;
use std::path::Path;

use polars::prelude::*;

use super::atomic::AtomicFile;
use super::pseudonym::Pseudonymizer;
use crate::error::WriteError;
use crate::rubric::score::Graded;

/// Columns gathered as the batch streams past.
#[derive(Default)]
pub struct ParquetRows {
    text: BTreeMap<&'static str, Vec<Option<String>>>,
    numbers: BTreeMap<&'static str, Vec<Option<f64>>>,
    rows: Vec<u32>,
    pseudonyms: Option<Pseudonymizer>,
}

const TEXT: [&str; 8] = [
    "source",
    "sheet",
    "section",
    "student_id",
    "student_name",
    "bench",
    "compound",
    "flags",
];
const NUMBERS: [&str; 15] = [
    "crude_mass_g",
    "recovered_mass_g",
    "solvent_volume_ml",
    "mp_onset_c",
    "mp_clear_c",
    "recovery_pct",
    "range_width_c",
    "reference_mp_c",
    "depression_c",
    "purity_mol_pct",
    "max_recovery_pct",
    "min_solvent_ml",
    "score",
    "max_score",
    "percent",
];

impl ParquetRows {
    pub fn new(pseudonyms: Option<Pseudonymizer>) -> ParquetRows {
        ParquetRows {
            pseudonyms,
            ..ParquetRows::default()
        }
    }

    pub fn add(&mut self, g: &Graded) {
        let a = &g.assessed;
        let s = &a.submission;
        let id = match (&self.pseudonyms, s.student_id.as_deref()) {
            (Some(p), Some(id)) => Some(p.pseudonym(id)),
            (_, id) => id.map(str::to_string),
        };
        let name = if self.pseudonyms.is_some() {
            None
        } else {
            s.student_name.clone()
        };
        let text = [
            Some(s.source.clone()),
            s.sheet.clone(),
            Some(s.section.clone()),
            id,
            name,
            s.bench.clone(),
            a.compound.clone().or_else(|| s.compound.clone()),
            Some(a.flag_codes()),
        ];
        for (k, v) in TEXT.iter().zip(text) {
            self.text.entry(k).or_default().push(v);
        }
        let sc = &g.score;
        let numbers = [
            s.crude_mass_g,
            s.recovered_mass_g,
            s.solvent_volume_ml,
            a.mp_onset_c,
            a.mp_clear_c,
            a.recovery_pct,
            a.range_width_c,
            a.reference_mp_c,
            a.depression_c,
            a.purity_mol_pct,
            a.max_recovery_pct,
            a.min_solvent_ml,
            Some(sc.total),
            Some(sc.max),
            Some(sc.percent),
        ];
        for (k, v) in NUMBERS.iter().zip(numbers) {
            self.numbers
                .entry(k)
                .or_default()
                .push(v.filter(|x| x.is_finite()));
        }
        self.rows.push(s.row);
    }

    fn frame(&self) -> PolarsResult<DataFrame> {
        let mut cols = vec![Column::new("row".into(), self.rows.clone())];
        for k in TEXT {
            cols.push(Column::new(
                k.into(),
                self.text.get(k).cloned().unwrap_or_default(),
            ));
        }
        for k in NUMBERS {
            cols.push(Column::new(
                k.into(),
                self.numbers.get(k).cloned().unwrap_or_default(),
            ));
        }
        DataFrame::new_infer_height(cols)
    }

    /// Writes the file atomically.
    pub fn write(&self, path: &Path) -> Result<(), WriteError> {
        let err = |e: PolarsError| WriteError {
            path: path.to_path_buf(),
            source: std::io::Error::other(e.to_string()),
        };
        let mut df = self.frame().map_err(err)?;
        let mut file = AtomicFile::create(path)?;
        ParquetWriter::new(&mut file).finish(&mut df).map_err(err)?;
        file.commit()
    }

    /// The term's headline figures, as `Term::from_parquet` reads them back.
    pub fn term(&self) -> Term {
        let mean = |k: &str| {
            let v: Vec<f64> = self
                .numbers
                .get(k)
                .map(|v| v.iter().flatten().copied().collect())
                .unwrap_or_default();
            if v.is_empty() {
                f64::NAN
            } else {
                v.iter().sum::<f64>() / v.len() as f64
            }
        };
        let flags: Vec<Option<String>> = self.text.get("flags").cloned().unwrap_or_default();
        Term::new(
            self.rows.len(),
            mean("recovery_pct"),
            mean("percent"),
            &flags,
        )
    }
}

/// Headline figures of one term, for the baseline comparison.
#[derive(Clone, Debug, PartialEq)]
pub struct Term {
    pub rows: usize,
    pub mean_recovery_pct: f64,
    pub mean_score_pct: f64,
    /// Share of rows carrying each flag code.
    pub flag_rates: BTreeMap<String, f64>,
}

impl Term {
    fn new(rows: usize, recovery: f64, score: f64, flags: &[Option<String>]) -> Term {
        let mut counts: BTreeMap<String, usize> = BTreeMap::new();
        for f in flags.iter().flatten() {
            for code in f.split(';').filter(|c| !c.is_empty()) {
                *counts.entry(code.to_string()).or_default() += 1;
            }
        }
        let n = rows.max(1) as f64;
        Term {
            rows,
            mean_recovery_pct: recovery,
            mean_score_pct: score,
            flag_rates: counts.into_iter().map(|(k, c)| (k, c as f64 / n)).collect(),
        }
    }

    /// Reads an earlier term's results.parquet.
    pub fn from_parquet(path: &Path) -> Result<Term, String> {
        let file = std::fs::File::open(path)
            .map_err(|e| format!("cannot open the baseline {}: {e}", path.display()))?;
        let df = ParquetReader::new(file).finish().map_err(|e| {
            format!(
                "{}: not a results.parquet benchgrade wrote: {e}",
                path.display()
            )
        })?;
        let mean = |k: &str| -> Result<f64, String> {
            let c = df
                .column(k)
                .map_err(|e| format!("{}: {e}", path.display()))?;
            let v = c.f64().map_err(|e| format!("{}: {e}", path.display()))?;
            Ok(v.mean().unwrap_or(f64::NAN))
        };
        let flags: Vec<Option<String>> = df
            .column("flags")
            .and_then(|c| {
                c.str()
                    .map(|s| s.iter().map(|x| x.map(str::to_string)).collect())
            })
            .map_err(|e| format!("{}: {e}", path.display()))?;
        Ok(Term::new(
            df.height(),
            mean("recovery_pct")?,
            mean("percent")?,
            &flags,
        ))
    }
}

/// (metric, baseline, current, shift) for the baseline comparison.
pub fn compare(baseline: &Term, current: &Term) -> Vec<(String, f64, f64, f64)> {
    let mut out = vec![
        (
            "students".to_string(),
            baseline.rows as f64,
            current.rows as f64,
            current.rows as f64 - baseline.rows as f64,
        ),
        (
            "mean recovery (%)".to_string(),
            baseline.mean_recovery_pct,
            current.mean_recovery_pct,
            current.mean_recovery_pct - baseline.mean_recovery_pct,
        ),
        (
            "mean score (% of maximum)".to_string(),
            baseline.mean_score_pct,
            current.mean_score_pct,
            current.mean_score_pct - baseline.mean_score_pct,
        ),
    ];
    let codes: std::collections::BTreeSet<&String> = baseline
        .flag_rates
        .keys()
        .chain(current.flag_rates.keys())
        .collect();
    for code in codes {
        let b = baseline.flag_rates.get(code).copied().unwrap_or(0.0) * 100.0;
        let c = current.flag_rates.get(code).copied().unwrap_or(0.0) * 100.0;
        out.push((format!("rows flagged {code} (%)"), b, c, c - b));
    }
    out
}
