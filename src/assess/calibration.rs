//! Melting-point apparatus calibration: per apparatus (or bench), reference standards' observed
//! readings against their certified values, fitted as T_true = a + b x T_obs by least squares
//! (a single standard gives an offset only). Students' readings are corrected before flagging.
//!
//! The file is a table with an apparatus (or bench) column, an optional standard column, and
//! observed and certified temperatures in °C: a CSV, or a sheet named "Calibration" (else the
//! first sheet) of a workbook. Certified values come from the file, since lots differ.

use std::collections::BTreeMap;
use std::path::Path;

use crate::fields::Field;
use crate::ingest::cells::{Cell, RawSheet};
use crate::ingest::values::{parse_quantity, Decimal};
use crate::ingest::{delimited, workbook};
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

/// The corrections of one run.
#[derive(Clone, Debug)]
pub struct Calibration {
    pub source: String,
    /// Which submission column names the apparatus: `Apparatus` or `Bench`.
    pub keyed_by: Field,
    /// Fits by apparatus key, with the calibration file's spelling and first row.
    pub fits: BTreeMap<String, (String, usize, Fit)>,
}

impl Calibration {
    pub fn fit_for(&self, apparatus: Option<&str>) -> Option<&(String, usize, Fit)> {
        self.fits.get(&bench_key(apparatus?))
    }
}

fn header_role(text: &str) -> Option<&'static str> {
    let t = text.to_lowercase();
    let has = |w: &str| t.split(|c: char| !c.is_alphanumeric()).any(|x| x == w);
    if has("apparatus") || has("instrument") || has("device") {
        Some("apparatus")
    } else if has("bench") || has("station") {
        Some("bench")
    } else if has("observed") || has("reading") || has("measured") || has("read") {
        Some("observed")
    } else if (has("standard") || has("compound") || has("substance")) && !has("value") {
        Some("standard")
    } else if has("certified")
        || has("certificate")
        || has("true")
        || has("reference")
        || has("expected")
    {
        Some("certified")
    } else {
        None
    }
}

fn number(cell: &Cell, decimal: Decimal) -> Result<Option<f64>, ()> {
    match cell {
        Cell::Empty => Ok(None),
        Cell::Number(v) => Ok(Some(*v)),
        Cell::Text(t) => parse_quantity(t, decimal).map(|q| Some(q.value)).ok_or(()),
        _ => Err(()),
    }
}

/// Reads and fits a calibration table. Every problem found is returned, each naming the row.
pub fn from_sheet(
    source: &str,
    sheet: &RawSheet,
    decimal: Decimal,
) -> Result<Calibration, Vec<String>> {
    let at = |row: u32| format!("{source} row {}", row + 1);
    let (header_pos, roles) = sheet
        .rows
        .iter()
        .take(20)
        .enumerate()
        .map(|(i, r)| (i, r.non_empty().filter_map(|(c, cell)| Some((c, header_role(&cell.as_text()?)?))).collect::<Vec<_>>()))
        .find(|(_, roles)| {
            let has = |w| roles.iter().any(|(_, r)| *r == w);
            (has("apparatus") || has("bench")) && has("observed") && has("certified")
        })
        .ok_or_else(|| vec![format!("{source}: no calibration table found (columns for the apparatus or bench, the observed reading and the certified value)")])?;
    let col = |w: &str| roles.iter().find(|(_, r)| *r == w).map(|(c, _)| *c);
    let keyed_by = if col("apparatus").is_some() {
        Field::Apparatus
    } else {
        Field::Bench
    };
    let key_col = col("apparatus").or(col("bench")).unwrap_or(0);
    let (obs_col, cert_col) = (col("observed").unwrap_or(0), col("certified").unwrap_or(0));
    let mut errors = Vec::new();
    // by apparatus key: the file's spelling, its first row, and the (observed, certified) pairs
    type Standards = (String, usize, Vec<(f64, f64)>);
    let mut points: BTreeMap<String, Standards> = BTreeMap::new();
    for row in &sheet.rows[header_pos + 1..] {
        let Some(name) = row.get(key_col).as_text() else {
            continue;
        };
        let (obs, cert) = (
            number(row.get(obs_col), decimal),
            number(row.get(cert_col), decimal),
        );
        match (obs, cert) {
            (Ok(Some(o)), Ok(Some(c))) => {
                let entry = points
                    .entry(bench_key(&name))
                    .or_insert_with(|| (name.clone(), row.index as usize + 1, Vec::new()));
                entry.2.push((o, c));
            }
            (Err(()), _) | (_, Err(())) => errors.push(format!(
                "{}: a value that is not a temperature; give observed and certified readings in °C",
                at(row.index)
            )),
            _ => errors.push(format!(
                "{}: only one reading; each row needs the observed and the certified value",
                at(row.index)
            )),
        }
    }
    let mut fits = BTreeMap::new();
    for (key, (name, first_row, pts)) in points {
        match fit(&pts) {
            Ok(f) => {
                fits.insert(key, (name, first_row, f));
            }
            Err(why) => errors.push(format!(
                "{source} row {first_row}: apparatus \"{name}\": {why}"
            )),
        }
    }
    if !errors.is_empty() {
        return Err(errors);
    }
    Ok(Calibration {
        source: source.to_string(),
        keyed_by,
        fits,
    })
}

/// Reads a calibration file: CSV/TSV, or a workbook's "Calibration" sheet (else its first).
pub fn load(path: &Path) -> Result<Calibration, Vec<String>> {
    let source = path.display().to_string();
    let ext = path
        .extension()
        .and_then(|e| e.to_str())
        .unwrap_or("")
        .to_ascii_lowercase();
    if let Some(format) = workbook::Format::from_extension(&ext) {
        let mut sheets = Vec::new();
        workbook::read_workbook(path, format, &mut |s| sheets.push(s))
            .map_err(|e| vec![format!("{source}: {e}")])?;
        let pick = sheets
            .iter()
            .position(|s| s.name.to_lowercase().contains("calibrat"))
            .unwrap_or(0);
        let chosen = sheets
            .into_iter()
            .nth(pick)
            .ok_or_else(|| vec![format!("{source}: the workbook has no sheets")])?;
        let sheet = chosen.result.map_err(|e| vec![format!("{source}: {e}")])?;
        return from_sheet(&source, &sheet, Decimal::Point);
    }
    let bytes = std::fs::read(path).map_err(|e| vec![format!("{source}: cannot read: {e}")])?;
    let d = delimited::read_delimited(&bytes, ext == "tsv")
        .map_err(|e| vec![format!("{source}: {e}")])?;
    from_sheet(&source, &d.sheet, d.decimal)
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
    }

    #[test]
    fn bad_files_name_their_rows() {
        let (sheet, _) = sheet_of("Apparatus,Standard,Observed (°C),Certified (°C)\nA,vanillin,81.0,82.0\nA,caffeine,abc,236\nB,vanillin,81.5,\nC,x,120,121\nC,y,120,122\n");
        let errs = from_sheet("cal.csv", &sheet, Decimal::Point).unwrap_err();
        assert_eq!(errs.len(), 3, "{errs:?}");
        assert!(errs[0].contains("cal.csv row 3") && errs[0].contains("not a temperature"));
        assert!(errs[1].contains("row 4") && errs[1].contains("only one reading"));
        assert!(errs[2].contains("\"C\"") && errs[2].contains("same temperature"));
    }

    fn sheet_of(text: &str) -> (RawSheet, Decimal) {
        let d = delimited::read_delimited(text.as_bytes(), false).unwrap();
        (d.sheet, d.decimal)
    }

    #[test]
    fn a_good_file_fits_each_apparatus() {
        let (sheet, dec) = sheet_of("Bench;Standard;Reading;Certified value\n7;vanillin;79,6;82,0\n7;caffeine;233,0;236,0\n3;acetanilide;114,5;115,0\n");
        let cal = from_sheet("cal.csv", &sheet, dec).unwrap();
        assert_eq!(cal.keyed_by, Field::Bench);
        assert_eq!(cal.fits.len(), 2);
        let (_, _, f) = cal.fit_for(Some("B7")).unwrap();
        assert!(f.b > 1.0);
        assert_abs_diff_eq!(
            cal.fit_for(Some("Bench 3")).unwrap().2.a,
            0.5,
            epsilon = 1e-9
        );
    }
}
