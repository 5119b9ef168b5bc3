//! The one shape every reader produces: sheets of sparse rows of typed cells.
//!
//! Workbook formats and delimited text differ in what a cell can hold; downstream code should
//! not care which file a cell came from, only whether it is a number, text, an error or a date.

use std::fmt::Write as _;

/// One cell, as the reader found it.
#[derive(Clone, Debug, PartialEq)]
pub enum Cell {
    Empty,
    Number(f64),
    Text(String),
    /// A spreadsheet error value such as "#DIV/0!".
    Error(String),
    /// A date or time; kept as text for messages only.
    Date(String),
    Bool(bool),
    /// A number shown as a percentage: the cell holds the fraction (0.728 shown as 72.8 %).
    Percent(f64),
}

impl Cell {
    pub fn is_empty(&self) -> bool {
        match self {
            Cell::Empty => true,
            Cell::Text(t) => t.trim().is_empty(),
            _ => false,
        }
    }

    /// The cell as text, for headers and names. Whole numbers print without a fraction,
    /// so a student id typed as a number reads "20231234", not "20231234.0".
    pub fn as_text(&self) -> Option<String> {
        match self {
            Cell::Empty => None,
            Cell::Number(v) => Some(format_number(*v)),
            Cell::Text(t) => {
                let t = t.trim();
                (!t.is_empty()).then(|| t.to_string())
            }
            Cell::Error(e) => Some(e.clone()),
            Cell::Date(d) => Some(d.clone()),
            Cell::Bool(b) => Some(b.to_string()),
            Cell::Percent(v) => Some(format!("{}%", format_number(percent_of_fraction(*v)))),
        }
    }

    /// A text cell that holds a spreadsheet error (ODS and CSV give errors as text).
    pub fn normalized(self) -> Cell {
        match self {
            Cell::Text(t) if looks_like_error(&t) => Cell::Error(t.trim().to_string()),
            other => other,
        }
    }
}

/// A fraction as the percentage a spreadsheet shows for it, exactly as typed: the decimal point
/// moved two places in the shortest digits of the fraction, so 0.576 is 57.6, not the
/// 57.599999999999994 that 100 x 0.576 gives in binary.
pub fn percent_of_fraction(v: f64) -> f64 {
    if !v.is_finite() {
        return v;
    }
    let sci = format!("{v:e}");
    let Some((mantissa, exp)) = sci.split_once('e') else {
        return v * 100.0;
    };
    let exp: i32 = exp.parse().unwrap_or(0);
    format!("{mantissa}e{}", exp + 2)
        .parse()
        .unwrap_or(v * 100.0)
}

/// Formats a number the shortest way that reads back exactly; whole numbers without ".0".
pub fn format_number(v: f64) -> String {
    if v.fract() == 0.0 && v.abs() < 1e15 {
        format!("{}", v as i64)
    } else {
        format!("{v}")
    }
}

/// Spreadsheet error literals (OpenFormula and OOXML share these spellings).
pub fn looks_like_error(text: &str) -> bool {
    matches!(
        text.trim(),
        "#DIV/0!"
            | "#N/A"
            | "#NAME?"
            | "#NULL!"
            | "#NUM!"
            | "#REF!"
            | "#VALUE!"
            | "#N/A!"
            | "Err:502"
            | "Err:504"
            | "Err:508"
            | "Err:511"
            | "#GETTING_DATA"
    )
}

/// A row that has at least one non-empty cell. `index` is 0-based; `cells` are sorted by column.
#[derive(Clone, Debug, Default)]
pub struct RawRow {
    pub index: u32,
    pub cells: Vec<(u32, Cell)>,
}

impl RawRow {
    pub fn get(&self, col: u32) -> &Cell {
        static EMPTY: Cell = Cell::Empty;
        match self.cells.binary_search_by_key(&col, |(c, _)| *c) {
            Ok(i) => &self.cells[i].1,
            Err(_) => &EMPTY,
        }
    }

    pub fn non_empty(&self) -> impl Iterator<Item = (u32, &Cell)> {
        self.cells
            .iter()
            .filter(|(_, c)| !c.is_empty())
            .map(|(i, c)| (*i, c))
    }
}

/// One sheet of a workbook, or the whole of a delimited file (`name` is then `None`).
#[derive(Clone, Debug, Default)]
pub struct RawSheet {
    pub name: Option<String>,
    pub rows: Vec<RawRow>,
    /// Cells merged across columns near the top of the sheet, where a header may stand (read
    /// from .xlsx and .xls; other formats give a merged cell only as a value with blanks to its
    /// right).
    pub merges: Vec<Merge>,
}

/// A cell merged across columns: its row and its first and last column (0-based).
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub struct Merge {
    pub row: u32,
    pub first: u32,
    pub last: u32,
}

/// Collects cells into sparse rows as a reader streams them, dropping empty cells. Cells
/// usually arrive in row order; if they do not, `finish` sorts them.
#[derive(Debug, Default)]
pub struct RowBuilder {
    rows: Vec<RawRow>,
    last: Option<(u32, u32)>,
    unsorted: bool,
}

impl RowBuilder {
    pub fn push(&mut self, r: u32, c: u32, cell: Cell) {
        if cell.is_empty() {
            return;
        }
        if self.last.is_some_and(|l| (r, c) <= l) {
            self.unsorted = true;
        }
        self.last = Some((r, c));
        match self.rows.last_mut() {
            Some(row) if row.index == r => row.cells.push((c, cell)),
            _ => self.rows.push(RawRow {
                index: r,
                cells: vec![(c, cell)],
            }),
        }
    }

    pub fn finish(self) -> Vec<RawRow> {
        if !self.unsorted {
            return self.rows;
        }
        let mut cells: Vec<(u32, u32, Cell)> = self
            .rows
            .into_iter()
            .flat_map(|row| {
                row.cells
                    .into_iter()
                    .map(move |(c, cell)| (row.index, c, cell))
            })
            .collect();
        cells.sort_by_key(|(r, c, _)| (*r, *c));
        let mut sorted = RowBuilder::default();
        for (r, c, cell) in cells {
            sorted.push(r, c, cell);
        }
        sorted.rows
    }
}

/// Builds sparse rows from cells in any order, dropping empty cells.
pub fn rows_from_cells(cells: Vec<(u32, u32, Cell)>) -> Vec<RawRow> {
    let mut b = RowBuilder::default();
    for (r, c, cell) in cells {
        b.push(r, c, cell);
    }
    b.finish()
}

/// A sheet of the given cells for the readers' unit tests, row by row: a cell that parses as
/// a number is one, any other is text (an empty string an empty text cell).
#[cfg(test)]
pub fn sheet_of(rows: &[&[&str]]) -> RawSheet {
    let mut cells = Vec::new();
    for (r, row) in rows.iter().enumerate() {
        for (c, text) in row.iter().enumerate() {
            let cell = match text.parse::<f64>() {
                Ok(v) => Cell::Number(v),
                Err(_) => Cell::Text((*text).to_string()),
            };
            cells.push((r as u32, c as u32, cell));
        }
    }
    RawSheet {
        name: Some("S".into()),
        rows: rows_from_cells(cells),
        merges: Vec::new(),
    }
}

/// Column letters for a 0-based column index: 0 is A, 26 is AA.
pub fn column_letters(col: u32) -> String {
    let mut n = u64::from(col) + 1;
    let mut out = Vec::new();
    while n > 0 {
        let rem = ((n - 1) % 26) as u8;
        out.push(b'A' + rem);
        n = (n - 1) / 26;
    }
    out.reverse();
    String::from_utf8(out).unwrap_or_default()
}

/// A cell reference in spreadsheet style: `'Section 3'!C7`, or `C7` for delimited text.
/// `row` is 0-based here and printed 1-based.
pub fn cell_ref(sheet: Option<&str>, row: u32, col: u32) -> String {
    let mut s = String::new();
    if let Some(name) = sheet {
        let plain = name.chars().all(|c| c.is_alphanumeric() || c == '_');
        if plain {
            let _ = write!(s, "{name}!");
        } else {
            let _ = write!(s, "'{}'!", name.replace('\'', "''"));
        }
    }
    let _ = write!(s, "{}{}", column_letters(col), u64::from(row) + 1);
    s
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn column_letters_follow_spreadsheet_convention() {
        // Column naming: common practice (A..Z, AA.., XFD is the 16,384th column in OOXML).
        assert_eq!(column_letters(0), "A");
        assert_eq!(column_letters(25), "Z");
        assert_eq!(column_letters(26), "AA");
        assert_eq!(column_letters(701), "ZZ");
        assert_eq!(column_letters(16383), "XFD");
    }

    #[test]
    fn references_quote_sheet_names_with_spaces() {
        assert_eq!(cell_ref(Some("Sec3"), 6, 2), "Sec3!C7");
        assert_eq!(cell_ref(Some("Section 3"), 0, 0), "'Section 3'!A1");
        assert_eq!(cell_ref(None, 4, 1), "B5");
    }

    #[test]
    fn rows_are_grouped_and_sorted() {
        let rows = rows_from_cells(vec![
            (2, 1, Cell::Number(1.0)),
            (0, 0, Cell::Text("a".into())),
            (2, 0, Cell::Empty),
            (2, 0, Cell::Text("x".into())),
        ]);
        assert_eq!(rows.len(), 2);
        assert_eq!(rows[1].index, 2);
        assert_eq!(rows[1].get(0), &Cell::Text("x".into()));
        assert_eq!(rows[1].get(5), &Cell::Empty);
    }

    #[test]
    fn ids_typed_as_numbers_read_as_whole_numbers() {
        assert_eq!(
            Cell::Number(20231234.0).as_text().as_deref(),
            Some("20231234")
        );
        assert_eq!(Cell::Number(2.5).as_text().as_deref(), Some("2.5"));
    }
}
