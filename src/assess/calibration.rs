//! Melting-point apparatus calibration: per apparatus (or bench), reference standards' observed
//! readings against their certified values, fitted as T_true = a + b x T_obs by least squares
//! (a single standard gives an offset only). Students' readings are corrected before flagging.
//!
//! The readings come from `ingest::calibration`, which finds the table in a CSV or workbook;
//! certified values come from the file, since lots differ.

use std::collections::BTreeMap;

use crate::fields::Field;
use crate::ingest::calibration::{CalibrationTable, Reading};
use crate::model::bench_key;

/// A straight-line correction for one apparatus.
#[derive(Clone, Debug, PartialEq)]
pub struct Fit {
    pub a: f64,
    pub b: f64,
    /// Lowest and highest observed standard readings: the calibrated span.
    pub lo: f64,
    pub hi: f64,
    pub standards: usize,
}

impl Fit {
    pub fn correct(&self, t_obs: f64) -> f64 {
        self.a + self.b * t_obs
    }

    /// Whether a reading lies beyond the standards used; a single standard is trusted for
    /// `margin` °C either side.
    pub fn covers(&self, t_obs: f64, margin: f64) -> bool {
        let m = if self.standards == 1 { margin } else { 0.0 };
        t_obs >= self.lo - m && t_obs <= self.hi + m
    }

    pub fn describe(&self) -> String {
        if self.standards == 1 {
            format!("offset {:+.2} °C from one standard", self.a)
        } else {
            format!(
                "T = {:.4} + {:.6} x reading, from {} standards ({:.1}-{:.1} °C)",
                self.a, self.b, self.standards, self.lo, self.hi
            )
        }
    }
}

/// Least-squares line through (observed, certified) pairs; one pair gives an offset.
pub fn fit(points: &[(f64, f64)]) -> Result<Fit, String> {
    let n = points.len();
    if n == 0 {
        return Err("no standards".into());
    }
    let lo = points.iter().map(|p| p.0).fold(f64::INFINITY, f64::min);
    let hi = points.iter().map(|p| p.0).fold(f64::NEG_INFINITY, f64::max);
    let mx = points.iter().map(|p| p.0).sum::<f64>() / n as f64;
    let my = points.iter().map(|p| p.1).sum::<f64>() / n as f64;
    if n == 1 {
        return Ok(Fit {
            a: my - mx,
            b: 1.0,
            lo,
            hi,
            standards: 1,
        });
    }
    let sxx: f64 = points.iter().map(|p| (p.0 - mx).powi(2)).sum();
    if sxx <= 1e-12 * (1.0 + mx * mx) {
        return Err("all its standards were read at the same temperature, so no slope can be fitted; use standards that melt at different temperatures".into());
    }
    let sxy: f64 = points.iter().map(|p| (p.0 - mx) * (p.1 - my)).sum();
    let b = sxy / sxx;
    Ok(Fit {
        a: my - b * mx,
        b,
        lo,
        hi,
        standards: n,
    })
}

/// One apparatus's correction, with the calibration file's spelling of its name and the
/// first row that names it.
#[derive(Clone, Debug, PartialEq)]
pub struct ApparatusFit {
    pub name: String,
    pub first_row: usize,
    pub fit: Fit,
}

/// The corrections of one run.
#[derive(Clone, Debug)]
pub struct Calibration {
    pub source: String,
    /// Which submission column names the apparatus: `Apparatus` or `Bench`.
    pub keyed_by: Field,
    /// Fits by apparatus key.
    pub fits: BTreeMap<String, ApparatusFit>,
}

impl Calibration {
    pub fn fit_for(&self, apparatus: Option<&str>) -> Option<&ApparatusFit> {
        self.fits.get(&bench_key(apparatus?))
    }
}

/// The standards of each apparatus, fitted. Every problem is returned together: the table's
/// (rows that could not be read) first, then each apparatus whose standards give no line.
pub fn from_table(table: CalibrationTable) -> Result<Calibration, Vec<String>> {
    let CalibrationTable {
        source,
        keyed_by,
        readings,
        mut problems,
    } = table;
    // by apparatus key, the first reading's spelling and row
    let mut by_key: BTreeMap<String, (Reading, Vec<(f64, f64)>)> = BTreeMap::new();
    for r in readings {
        let pair = (r.observed, r.certified);
        by_key
            .entry(bench_key(&r.apparatus))
            .or_insert_with(|| (r, Vec::new()))
            .1
            .push(pair);
    }
    let mut fits = BTreeMap::new();
    for (key, (first, pts)) in by_key {
        let (name, first_row) = (first.apparatus, first.row);
        match fit(&pts) {
            Ok(fit) => {
                fits.insert(
                    key,
                    ApparatusFit {
                        name,
                        first_row,
                        fit,
                    },
                );
            }
            Err(why) => problems.push(format!(
                "{source} row {first_row}: apparatus \"{name}\": {why}"
            )),
        }
    }
    if !problems.is_empty() {
        return Err(problems);
    }
    Ok(Calibration {
        source,
        keyed_by,
        fits,
    })
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_abs_diff_eq;

    #[test]
    fn two_standards_hand_worked() {
        // vanillin observed 81.0 -> certified 82.0, caffeine 234.5 -> 236.0 (hand-worked):
        // b = 154 / 153.5 = 1.003257, a = 82 - b x 81 = 0.7362, 120.0 -> 121.13 °C
        let f = fit(&[(81.0, 82.0), (234.5, 236.0)]).unwrap();
        assert_abs_diff_eq!(f.b, 1.003257, epsilon = 5e-7);
        assert_abs_diff_eq!(f.a, 0.7362, epsilon = 5e-5);
        assert_abs_diff_eq!(f.correct(120.0), 121.13, epsilon = 0.005);
        assert!(f.covers(120.0, 5.0) && !f.covers(240.0, 5.0));
    }

    #[test]
    fn one_standard_is_an_offset_and_one_temperature_is_an_error() {
        let f = fit(&[(121.0, 122.4)]).unwrap();
        assert_abs_diff_eq!(f.correct(100.0), 101.4, epsilon = 1e-9);
        assert!(f.covers(125.0, 5.0) && !f.covers(130.0, 5.0));
        assert!(fit(&[(121.0, 122.4), (121.0, 122.0)]).is_err());
    }

    #[test]
    fn least_squares_through_three_points() {
        // y = 1 + 1.01 x exactly through three points: the fit recovers it (hand-worked)
        let f = fit(&[(80.0, 81.8), (120.0, 122.2), (235.0, 238.35)]).unwrap();
        assert_abs_diff_eq!(f.b, 1.01, epsilon = 1e-12);
        assert_abs_diff_eq!(f.a, 1.0, epsilon = 1e-9);
    }

    #[test]
    fn keys_match_across_spellings() {
        assert_eq!(bench_key("Bench 7"), "7");
        assert_eq!(bench_key("B7"), "7");
        assert_eq!(bench_key("7"), "7");
        assert_eq!(bench_key("Mel-Temp 3"), "meltemp3");
        // leading zeros and prefixes name one bench: "01", "1", "B01", "Bench 1"
        for written in ["01", "1", "B01", "Bench 1", "bench 001", "Station 1"] {
            assert_eq!(bench_key(written), "1", "{written}");
        }
        assert_eq!(bench_key("0"), "0");
        assert_eq!(bench_key("1.0"), "1", "a number cell read back as text");
        use crate::model::section_key;
        for written in ["Sec 01", "Section 1", "01", "1", "S1", "sec-1", "1.0"] {
            assert_eq!(section_key(written), "1", "{written}");
        }
        assert_ne!(section_key("Sec 01A"), section_key("Sec 01"));
        assert_eq!(section_key("Monday"), "monday");
        assert_eq!(bench_key("10"), "10");
        assert_eq!(bench_key("B10"), "10");
        // what parts two digits parts the labels (a trial: "2.1" and "21" were one section)
        assert_ne!(section_key("2.1"), section_key("21"));
        assert_ne!(section_key("Lab 1/2"), section_key("Lab 12"));
        assert_ne!(bench_key("B1-2"), bench_key("B12"));
        assert_eq!(bench_key("B1-2"), bench_key("1.2"));
        // a written thousand is not one, and labels without letters or digits stay apart
        // (an adversarial trial: "1,000", "Lab 1" and "1" were one section, "🔥" was "🧪")
        assert_ne!(section_key("1,000"), section_key("1"));
        assert_ne!(section_key("Lab 1"), section_key("1 000"));
        assert_ne!(section_key("🔥"), section_key("🧪"));
        assert_ne!(section_key("🧪"), section_key("🧪🧪"));
        assert_eq!(section_key("🧪"), section_key(" 🧪 "));
        assert_eq!(section_key("Sec 2.1"), section_key("2.1"));
        assert_eq!(bench_key("0.5"), "0-5");
        for written in ["Sec A", "sec a", "Sec-A", "SEC  A", "Sec A."] {
            assert_eq!(section_key(written), "seca", "{written}");
        }
    }

    fn reading(apparatus: &str, row: usize, observed: f64, certified: f64) -> Reading {
        Reading {
            apparatus: apparatus.into(),
            row,
            observed,
            certified,
        }
    }

    fn table(readings: Vec<Reading>, problems: Vec<String>) -> CalibrationTable {
        CalibrationTable {
            source: "cal.csv".into(),
            keyed_by: Field::Bench,
            readings,
            problems,
        }
    }

    #[test]
    fn a_table_fits_each_apparatus_however_it_is_spelt() {
        let cal = from_table(table(
            vec![
                reading("7", 2, 79.6, 82.0),
                reading("Bench 7", 3, 233.0, 236.0),
                reading("3", 4, 114.5, 115.0),
            ],
            vec![],
        ))
        .unwrap();
        assert_eq!(cal.fits.len(), 2);
        let f = cal.fit_for(Some("B7")).unwrap();
        assert_eq!((f.name.as_str(), f.first_row), ("7", 2));
        assert!(f.fit.b > 1.0);
        assert_abs_diff_eq!(
            cal.fit_for(Some("Bench 3")).unwrap().fit.a,
            0.5,
            epsilon = 1e-9
        );
    }

    #[test]
    fn every_problem_is_returned_the_table_first() {
        let errs = from_table(table(
            vec![reading("C", 5, 120.0, 121.0), reading("C", 6, 120.0, 122.0)],
            vec!["cal.csv row 3: a value that is not a temperature".into()],
        ))
        .unwrap_err();
        assert_eq!(errs.len(), 2, "{errs:?}");
        assert!(errs[0].contains("row 3"));
        assert!(
            errs[1].contains("row 5")
                && errs[1].contains("\"C\"")
                && errs[1].contains("same temperature")
        );
    }
}
