//! Commas in numbers typed as text, decided once per column from all its cells.
//!
//! "0,745" and "1,5" can only be decimal commas (a digit group is three digits and never
//! follows a lone 0); "1,800" alone could be either. A column is read with decimal commas when
//! any of its text cells holds a comma that can only be a decimal comma, so "1,850" in a column
//! that also holds "0,745" is 1.85, not 1850; a column of "1,800"-style values only is read as
//! the file reads it (thousands, unless the file uses decimal commas throughout).

use super::cells::Cell;
use super::values::Decimal;

/// What the commas of one number say.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
enum Evidence {
    /// Only a decimal comma reads it: "0,745", "1,5", "121,25".
    Decimal,
    /// A digit group or a decimal comma: "1,800".
    Either,
}

/// The runs of digits, points and commas in `text` that hold a comma, with what each says.
fn evidence(text: &str) -> impl Iterator<Item = Evidence> + '_ {
    text.split(|c: char| !(c.is_ascii_digit() || c == '.' || c == ','))
        .map(|run| run.trim_matches(['.', ',']))
        .filter(|run| run.contains(',') && !run.contains('.'))
        .filter(|run| run.matches(',').count() == 1)
        .filter_map(|run| {
            let (before, after) = run.split_once(',')?;
            if before.is_empty() || after.is_empty() {
                return None;
            }
            Some(if before == "0" || after.len() != 3 || before.len() > 3 {
                Evidence::Decimal
            } else {
                Evidence::Either
            })
        })
}

/// How a column's text cells are read: with decimal commas where any cell holds a comma only a
/// decimal comma reads, else as the file reads numbers.
pub fn column_decimal<'a>(cells: impl Iterator<Item = &'a Cell>, file: Decimal) -> Decimal {
    let decimal = cells
        .filter_map(|c| match c {
            Cell::Text(t) => Some(t),
            _ => None,
        })
        .any(|t| evidence(t).any(|e| e == Evidence::Decimal));
    if decimal {
        Decimal::Comma
    } else {
        file
    }
}

/// Text whose reading is worth showing beside its value: one with a comma (unless the whole
/// file writes decimal commas), a unit or a word, or a mark of approximation; not a plain
/// number or range ("121.5-122", "121.5–122").
pub fn worth_showing(text: &str, file: Decimal) -> bool {
    text.chars().any(|c| {
        c.is_alphabetic() || matches!(c, '~' | '≈' | '°') || c == ',' && file == Decimal::Point
    })
}

#[cfg(test)]
mod tests {
    use super::*;
    use proptest::prelude::*;

    fn decide(texts: &[&str]) -> Decimal {
        let cells: Vec<Cell> = texts.iter().map(|t| Cell::Text((*t).into())).collect();
        column_decimal(cells.iter(), Decimal::Point)
    }

    #[test]
    fn a_column_says_how_its_commas_read() {
        // a digit group is three digits (common practice), so these are decimal commas
        assert_eq!(decide(&["0,745", "1,850"]), Decimal::Comma);
        assert_eq!(decide(&["1,5", "2,250"]), Decimal::Comma);
        assert_eq!(decide(&["120,5 bis 122,0"]), Decimal::Comma);
        // thousands only, plain numbers, numbers with both marks: as the file reads them
        assert_eq!(decide(&["1,800", "2,450"]), Decimal::Point);
        assert_eq!(decide(&["1.5", "2.25", "1,234.5"]), Decimal::Point);
        let numbers = [Cell::Number(0.745)];
        assert_eq!(
            column_decimal(numbers.iter(), Decimal::Comma),
            Decimal::Comma
        );
    }

    #[test]
    fn plain_text_is_not_shown_again() {
        let p = Decimal::Point;
        assert!(!worth_showing("2.31", p));
        assert!(!worth_showing("121.5–122", p));
        assert!(worth_showing("0,745", p));
        assert!(!worth_showing("0,745", Decimal::Comma));
        assert!(worth_showing("1850 mg", p));
        assert!(worth_showing("120,5 bis 122", Decimal::Comma));
    }

    proptest! {
        /// A value written with a decimal comma and one to two decimals always reads as one.
        #[test]
        fn short_decimals_are_decimal_commas(whole in 0u32..100_000, frac in 0u32..100, two in any::<bool>()) {
            let text = if two { format!("{whole},{frac:02}") } else { format!("{whole},{}", frac % 10) };
            prop_assert_eq!(decide(&[&text]), Decimal::Comma);
        }

        #[test]
        fn no_text_panics(s in "\\PC{0,40}") {
            let _ = decide(&[&s]);
            let _ = worth_showing(&s, Decimal::Point);
        }
    }
}
