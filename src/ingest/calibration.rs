//! Reading a calibration file: the table of reference standards' readings per apparatus (or
//! bench), found in a CSV/TSV or in a workbook's "Calibration" sheet (else its first), handed
//! on as plain readings in °C. Fitting them is the chemistry's job (`assess::calibration`),
//! which knows nothing of spreadsheets.
//!
//! The table has an apparatus (or bench) column, an optional standard column, and observed and
//! certified temperatures.

use std::path::Path;

use super::cells::{Cell, RawSheet};
use super::values::{parse_quantity, Decimal};
use super::workbook;
use crate::fields::Field;

/// One standard read on one apparatus.
#[derive(Clone, Debug, PartialEq)]
pub struct Reading {
    /// The apparatus or bench, as the file spells it.
    pub apparatus: String,
    /// 1-based row of the file.
    pub row: usize,
    pub observed: f64,
    pub certified: f64,
}

/// A calibration file's readings, and the rows that could not be read.
#[derive(Clone, Debug, PartialEq)]
pub struct CalibrationTable {
    pub source: String,
    /// Which submission column names the apparatus: `Apparatus` or `Bench`.
    pub keyed_by: Field,
    pub readings: Vec<Reading>,
    /// Each row that could not be read, named.
    pub problems: Vec<String>,
}

/// What a header of the calibration table names.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
enum Role {
    Apparatus,
    Bench,
    Observed,
    Standard,
    Certified,
}

fn header_role(text: &str) -> Option<Role> {
    let t = text.to_lowercase();
    let has = |w: &str| t.split(|c: char| !c.is_alphanumeric()).any(|x| x == w);
    if has("apparatus") || has("instrument") || has("device") {
        Some(Role::Apparatus)
    } else if has("bench") || has("station") {
        Some(Role::Bench)
    } else if has("observed") || has("reading") || has("measured") || has("read") {
        Some(Role::Observed)
    } else if (has("standard") || has("compound") || has("substance")) && !has("value") {
        Some(Role::Standard)
    } else if has("certified")
        || has("certificate")
        || has("true")
        || has("reference")
        || has("expected")
    {
        Some(Role::Certified)
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

/// The header row (within the first 20) and each recognised column's role.
fn find_header(sheet: &RawSheet) -> Option<(usize, Vec<(u32, Role)>)> {
    sheet.rows.iter().take(20).enumerate().find_map(|(i, r)| {
        let roles: Vec<(u32, Role)> = r
            .non_empty()
            .filter_map(|(c, cell)| Some((c, header_role(&cell.as_text()?)?)))
            .collect();
        let has = |w| roles.iter().any(|(_, r)| *r == w);
        ((has(Role::Apparatus) || has(Role::Bench)) && has(Role::Observed) && has(Role::Certified))
            .then_some((i, roles))
    })
}

/// Reads the calibration table of a sheet: every reading, and every row that could not be read.
pub fn from_sheet(
    source: &str,
    sheet: &RawSheet,
    decimal: Decimal,
) -> Result<CalibrationTable, Vec<String>> {
    let at = |row: u32| format!("{source} row {}", row + 1);
    let (header_pos, roles) = find_header(sheet).ok_or_else(|| vec![format!("{source}: no calibration table found (columns for the apparatus or bench, the observed reading and the certified value)")])?;
    let col = |w: Role| roles.iter().find(|(_, r)| *r == w).map(|(c, _)| *c);
    let keyed_by = if col(Role::Apparatus).is_some() {
        Field::Apparatus
    } else {
        Field::Bench
    };
    let key_col = col(Role::Apparatus).or(col(Role::Bench)).unwrap_or(0);
    let obs_col = col(Role::Observed).unwrap_or(0);
    let cert_col = col(Role::Certified).unwrap_or(0);
    let mut table = CalibrationTable {
        source: source.to_string(),
        keyed_by,
        readings: Vec::new(),
        problems: Vec::new(),
    };
    for row in &sheet.rows[header_pos + 1..] {
        let Some(apparatus) = row.get(key_col).as_text() else {
            continue;
        };
        let observed = number(row.get(obs_col), decimal);
        let certified = number(row.get(cert_col), decimal);
        match (observed, certified) {
            (Ok(Some(observed)), Ok(Some(certified))) => table.readings.push(Reading {
                apparatus,
                row: row.index as usize + 1,
                observed,
                certified,
            }),
            (Err(()), _) | (_, Err(())) => table.problems.push(format!(
                "{}: a value that is not a temperature; give observed and certified readings in °C",
                at(row.index)
            )),
            _ => table.problems.push(format!(
                "{}: only one reading; each row needs the observed and the certified value",
                at(row.index)
            )),
        }
    }
    Ok(table)
}

/// Reads a calibration file: CSV/TSV, or a workbook's "Calibration" sheet (else its first).
pub fn load(path: &Path) -> Result<CalibrationTable, Vec<String>> {
    let (sheet, decimal) = workbook::read_side_sheet(path, "calibrat").map_err(|e| vec![e])?;
    from_sheet(&path.display().to_string(), &sheet, decimal)
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::ingest::delimited;

    fn table(text: &str) -> Result<CalibrationTable, Vec<String>> {
        let d = delimited::read_delimited(text.as_bytes(), false).unwrap();
        from_sheet("cal.csv", &d.sheet, d.decimal)
    }

    #[test]
    fn rows_that_cannot_be_read_are_named() {
        let t = table("Apparatus,Standard,Observed (°C),Certified (°C)\nA,vanillin,81.0,82.0\nA,caffeine,abc,236\nB,vanillin,81.5,\nC,x,120,121\n").unwrap();
        assert_eq!(t.keyed_by, Field::Apparatus);
        assert_eq!(t.readings.len(), 2);
        assert_eq!(t.readings[1].apparatus, "C");
        assert_eq!(t.readings[1].row, 5);
        assert_eq!(t.problems.len(), 2, "{:?}", t.problems);
        assert!(
            t.problems[0].contains("cal.csv row 3") && t.problems[0].contains("not a temperature")
        );
        assert!(t.problems[1].contains("row 4") && t.problems[1].contains("only one reading"));
    }

    #[test]
    fn semicolons_decimal_commas_and_benches() {
        let t = table("Bench;Standard;Reading;Certified value\n7;vanillin;79,6;82,0\n").unwrap();
        assert_eq!(t.keyed_by, Field::Bench);
        assert_eq!(t.readings[0].observed, 79.6);
        assert!(table("Name,Score\nx,1\n").is_err());
    }
}
