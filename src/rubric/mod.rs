//! The rubric file: which experiment is graded, against which reference, with which
//! tolerances, and any explicit column mapping. TOML, our own format, unknown keys refused so
//! that a typo is an error at its line and column rather than a silently ignored setting.

use std::collections::BTreeMap;
use std::path::Path;

use serde::{Deserialize, Serialize};

pub mod corrections;
pub mod criteria;
pub mod overrides;
pub mod score;

use crate::error::{parse_toml, toml_location, ConfigError, Located};
pub use criteria::{Counted, Criterion, FlagRule, Grading};

/// The rubric shipped as `rubrics/default.toml`, compiled in so that a fresh clone grades.
pub const DEFAULT_RUBRIC: &str = include_str!("../../rubrics/default.toml");

#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Experiment {
    pub name: String,
    /// The course, for titles ("CHEM 2150 Organic Laboratory").
    #[serde(default)]
    pub course: Option<String>,
    /// The term, for titles ("Fall 2026").
    #[serde(default)]
    pub term: Option<String>,
    /// The compound every row is taken to be when a row names none.
    #[serde(default)]
    pub compound: Option<String>,
    /// The accepted melting point for this experiment's compound, overriding the library.
    #[serde(default)]
    pub reference_mp_c: Option<f64>,
    /// Accept any clear point within this range (°C) as at the reference.
    #[serde(default)]
    pub reference_range_c: Option<[f64; 2]>,
    /// Use the library's literature value whose source mentions this text.
    #[serde(default)]
    pub reference_source: Option<String>,
    /// Accept any clear point within the spread of the library's literature values.
    #[serde(default)]
    pub accept_literature_range: bool,
    /// The recrystallization solvent when a row names none (solubilities are known in water).
    #[serde(default = "default_solvent")]
    pub solvent: String,
    /// Temperature of the final cooling (°C): 0 for an ice bath, 20-25 for room temperature.
    #[serde(default)]
    pub cold_c: f64,
    /// Temperature of the hot solvent (°C): 100 for boiling water.
    #[serde(default = "default_hot")]
    pub hot_c: f64,
    /// A calibration file (CSV or workbook), relative to the rubric file.
    #[serde(default)]
    pub calibration: Option<std::path::PathBuf>,
}

fn default_solvent() -> String {
    "water".into()
}

fn default_hot() -> f64 {
    100.0
}

/// Thresholds for the flags. Defaults are those of the results contract.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields, default)]
pub struct Tolerances {
    /// A clear point more than this above the reference is impossible for a pure sample.
    pub above_reference_c: f64,
    /// A range wider than this suggests an impure product.
    pub impure_width_c: f64,
    /// A clear point depressed more than this below the reference suggests an impure product.
    pub impure_depression_c: f64,
    /// Reported and recomputed recovery may differ by this many percentage points.
    pub recovery_mismatch_pct: f64,
    /// Recovery below this is flagged low.
    pub low_recovery_pct: f64,
    /// Recovery at or above this, with a broad or depressed range, points to a wet product
    /// (used where no recovery ceiling can be computed).
    pub wet_recovery_pct: f64,
    /// Recovery above the ceiling by more than this many points: a wet or contaminated product.
    pub ceiling_margin_pct: f64,
    /// Recovery within this many points of the ceiling counts as heavy.
    pub near_ceiling_pct: f64,
    /// The van 't Hoff estimate is given only up to this much impurity (mol %).
    pub max_impurity_mol_pct: f64,
    /// A single calibration standard is trusted this far (°C) either side of its reading.
    pub calibration_margin_c: f64,
    /// The least number of rows without impossible entries a section needs before any of its
    /// rows is flagged `outlier`: a robust z from a handful of values is noise.
    pub outlier_min_n: usize,
    /// Repeat determinations whose clear points differ by more than this (°C) disagree.
    pub trial_spread_c: f64,
    /// A mixture with the compound named that clears more than this (°C) below the sample
    /// contradicts the identification.
    pub mixed_depression_c: f64,
}

impl Default for Tolerances {
    fn default() -> Self {
        Tolerances {
            above_reference_c: 1.0,
            impure_width_c: 2.0,
            impure_depression_c: 2.0,
            recovery_mismatch_pct: 1.0,
            low_recovery_pct: 50.0,
            wet_recovery_pct: 95.0,
            ceiling_margin_pct: 2.0,
            near_ceiling_pct: 5.0,
            max_impurity_mol_pct: 5.0,
            calibration_margin_c: 5.0,
            outlier_min_n: 10,
            trial_spread_c: 1.0,
            mixed_depression_c: 2.0,
        }
    }
}

#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Rubric {
    pub experiment: Experiment,
    #[serde(default)]
    pub tolerances: Tolerances,
    /// Header text (or "column C") to field key ("ignore" drops the column), and tables of
    /// such mappings for one file or sheet.
    #[serde(default)]
    pub columns: BTreeMap<String, crate::ingest::headers::MappingValue>,
    #[serde(default)]
    pub grading: Grading,
    /// Words added to the built-in vocabulary (`[vocabulary.field.crude_mass] nl = ["ruw"]`).
    #[serde(default)]
    pub vocabulary: crate::ingest::vocabulary::Table,
    #[serde(default, rename = "criterion")]
    pub criteria: Vec<Criterion>,
    #[serde(default, rename = "flag_rule")]
    pub flag_rules: Vec<FlagRule>,
    /// An answer key for unknowns: each sample code and the compound it is.
    #[serde(default)]
    pub key: BTreeMap<String, String>,
    /// The late-work rule, applied to a late-days column: points or a percentage of the
    /// maximum off for each day past a grace period, up to a cap.
    #[serde(default)]
    pub late: Option<Late>,
}

/// `[late]`: what a late report costs.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Late {
    /// Points off for each day late past the grace period.
    #[serde(default)]
    pub points_per_day: Option<f64>,
    /// Or a percentage of the maximum off for each such day.
    #[serde(default)]
    pub percent_per_day: Option<f64>,
    /// Days late that cost nothing (default 0).
    #[serde(default)]
    pub grace_days: f64,
    /// The most points lateness may cost (default: no cap but the total).
    #[serde(default)]
    pub max_points: Option<f64>,
}

impl Late {
    /// Points off for `days` late on a rubric worth `max`: each started day past the grace
    /// period (1.2 days past it count as 2), at the rule's rate, at most the cap. Also the days
    /// charged.
    pub fn deduction(&self, days: f64, max: f64) -> (f64, f64) {
        let charged = (days - self.grace_days).max(0.0).ceil();
        let rate = self
            .points_per_day
            .or(self.percent_per_day.map(|p| p / 100.0 * max))
            .unwrap_or(0.0);
        let off = (charged * rate).min(self.max_points.unwrap_or(f64::INFINITY));
        (off, charged)
    }
}

impl Rubric {
    /// Parses rubric text; `file` names it in messages.
    pub fn parse(text: &str, file: &str) -> Result<Rubric, ConfigError> {
        let rubric: Rubric = parse_toml(text, file)?;
        rubric.validate(file)?;
        let mut findings = criteria::check(&rubric.grading, &rubric.criteria, &rubric.flag_rules);
        // words for a class of the vocabulary that does not exist
        if let Err(errors) =
            crate::ingest::vocabulary::Vocabulary::builtin().with(&rubric.vocabulary)
        {
            findings.extend(
                errors
                    .into_iter()
                    .map(|(span, message)| criteria::Finding { span, message }),
            );
        }
        if !findings.is_empty() {
            let errors = findings
                .into_iter()
                .map(|f| {
                    let (line, column) = toml_location(text, Some(f.span.clone()));
                    let snippet = text
                        .get(f.span)
                        .unwrap_or("")
                        .lines()
                        .next()
                        .unwrap_or("")
                        .trim()
                        .to_string();
                    Located {
                        line,
                        column,
                        text: snippet,
                        message: f.message,
                    }
                })
                .collect();
            return Err(ConfigError::Located {
                file: file.to_string(),
                errors,
            });
        }
        Ok(rubric)
    }

    pub fn load(path: &Path) -> Result<Rubric, ConfigError> {
        let text = crate::files::read_to_string(path).map_err(|e| {
            ConfigError::Invalid(format!("cannot read rubric {}: {e}", path.display()))
        })?;
        Rubric::parse(&text, &path.display().to_string())
    }

    /// The criterion ids, in order.
    /// What an override may change: each criterion's id and most points.
    pub fn override_limits(&self) -> overrides::Limits {
        overrides::Limits {
            criteria: self
                .criteria
                .iter()
                .map(|c| (c.id.get_ref().clone(), *c.max.get_ref()))
                .collect(),
        }
    }

    pub fn criterion_ids(&self) -> Vec<String> {
        self.criteria
            .iter()
            .map(|c| c.id.get_ref().clone())
            .collect()
    }

    /// The built-in rubric. It is compiled in; a broken file is an error (and fails the unit
    /// tests), never a silent stand-in.
    pub fn builtin() -> Result<Rubric, ConfigError> {
        Rubric::parse(DEFAULT_RUBRIC, "built-in rubrics/default.toml")
    }

    fn validate(&self, file: &str) -> Result<(), ConfigError> {
        let t = &self.tolerances;
        let named = [
            ("above_reference_c", t.above_reference_c),
            ("impure_width_c", t.impure_width_c),
            ("impure_depression_c", t.impure_depression_c),
            ("recovery_mismatch_pct", t.recovery_mismatch_pct),
            ("low_recovery_pct", t.low_recovery_pct),
            ("wet_recovery_pct", t.wet_recovery_pct),
            ("ceiling_margin_pct", t.ceiling_margin_pct),
            ("near_ceiling_pct", t.near_ceiling_pct),
            ("max_impurity_mol_pct", t.max_impurity_mol_pct),
            ("calibration_margin_c", t.calibration_margin_c),
        ];
        for (key, v) in named {
            if !v.is_finite() || v < 0.0 {
                return Err(ConfigError::Invalid(format!(
                    "{file}: tolerances.{key} is {v}; it must be a number of zero or more"
                )));
            }
        }
        let e = &self.experiment;
        let choices = [
            e.reference_mp_c.is_some(),
            e.reference_range_c.is_some(),
            e.reference_source.is_some(),
            e.accept_literature_range,
        ];
        if choices.iter().filter(|c| **c).count() > 1 {
            return Err(ConfigError::Invalid(format!(
                "{file}: choose one of experiment.reference_mp_c, reference_range_c, reference_source and accept_literature_range"
            )));
        }
        if let Some([lo, hi]) = e.reference_range_c {
            if !(lo.is_finite() && hi.is_finite() && lo <= hi) {
                return Err(ConfigError::Invalid(format!(
                    "{file}: experiment.reference_range_c must be [low, high] in °C"
                )));
            }
        }
        if !(e.cold_c.is_finite() && e.hot_c.is_finite() && e.cold_c < e.hot_c) {
            return Err(ConfigError::Invalid(format!(
                "{file}: experiment.cold_c must be below experiment.hot_c"
            )));
        }
        if let Some(l) = &self.late {
            check_late(l, file)?;
        }
        Ok(())
    }
}

/// `[late]` needs exactly one rate, and no negative number.
fn check_late(l: &Late, file: &str) -> Result<(), ConfigError> {
    if l.points_per_day.is_some() == l.percent_per_day.is_some() {
        return Err(ConfigError::Invalid(format!(
            "{file}: [late] needs exactly one of points_per_day and percent_per_day"
        )));
    }
    let numbers = [
        l.points_per_day,
        l.percent_per_day,
        Some(l.grace_days),
        l.max_points,
    ];
    if numbers
        .into_iter()
        .flatten()
        .any(|v| !v.is_finite() || v < 0.0)
    {
        return Err(ConfigError::Invalid(format!(
            "{file}: [late] takes numbers of zero or more"
        )));
    }
    Ok(())
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn default_rubric_parses_with_contract_defaults() {
        let r = Rubric::parse(DEFAULT_RUBRIC, "default").unwrap();
        assert_eq!(r.tolerances, Tolerances::default());
        assert_eq!(r.experiment.compound.as_deref(), Some("benzoic acid"));
    }

    #[test]
    fn a_typo_is_located() {
        let text = "[experiment]\nname = \"x\"\n[tolerances]\nabove_refrence_c = 2.0\n";
        match Rubric::parse(text, "r.toml") {
            Err(ConfigError::File {
                line,
                column,
                message,
                ..
            }) => {
                assert_eq!((line, column), (4, 1));
                assert!(message.contains("above_refrence_c"), "{message}");
            }
            other => panic!("{other:?}"),
        }
    }

    #[test]
    fn negative_tolerances_are_refused() {
        let text = "[experiment]\nname = \"x\"\n[tolerances]\nimpure_width_c = -1\n";
        assert!(Rubric::parse(text, "r.toml").is_err());
    }
}
