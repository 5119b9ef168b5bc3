//! Finding the table in a sheet: the header row below any title rows, the columns it names,
//! and the student rows down to the first totals or notes block.

use serde::Serialize;

use super::cells::{column_letters, RawRow, RawSheet};
use super::headers::{meaning, parse_header, ColumnOverrides, HeaderMeaning};
use super::values::Unit;
use crate::fields::Field;

/// How far down a sheet the header row is looked for.
const HEADER_SEARCH_ROWS: usize = 50;
/// A header row must name at least this many distinct fields.
const MIN_HEADER_FIELDS: usize = 3;

/// One column of the header row and what it was taken to mean.
#[derive(Clone, Debug, Serialize)]
pub struct Column {
    /// 0-based column index.
    pub index: u32,
    pub letter: String,
    pub header: String,
    pub field: Option<Field>,
    /// Mapped by the rubric or a `--columns` file rather than recognised.
    pub explicit: bool,
    #[serde(skip)]
    pub unit: Option<Unit>,
    /// Why the column is not used, when it is not.
    pub note: Option<String>,
}

/// The located table: where its header is and what each column means.
#[derive(Clone, Debug, Serialize)]
pub struct Layout {
    /// Position of the header row within `RawSheet::rows`.
    #[serde(skip)]
    pub header_pos: usize,
    /// 1-based header row.
    pub header_row: u32,
    pub columns: Vec<Column>,
}

impl Layout {
    pub fn column(&self, field: Field) -> Option<&Column> {
        self.columns.iter().find(|c| c.field == Some(field))
    }
}

/// Why a sheet's table could not be used.
#[derive(Clone, Debug, PartialEq)]
pub enum LayoutError {
    /// Nothing that looks like a header row: the sheet is skipped with a note.
    NoTable,
    /// A header, or two headers, that could mean more than one thing: an error.
    Ambiguous(String),
}

fn is_core(f: Field) -> bool {
    matches!(
        f,
        Field::CrudeMass | Field::RecoveredMass | Field::MpRange | Field::MpOnset | Field::MpClear
    )
}

fn header_columns(row: &RawRow, overrides: &ColumnOverrides) -> Vec<(Column, HeaderMeaning)> {
    row.non_empty()
        .filter_map(|(col, cell)| match cell {
            super::cells::Cell::Text(t) => Some((col, t.trim().to_string())),
            _ => None,
        })
        .map(|(col, text)| {
            let (m, explicit) = meaning(&text, overrides);
            let column = Column {
                index: col,
                letter: column_letters(col),
                unit: parse_header(&text).unit,
                field: match m {
                    HeaderMeaning::Field(f) => Some(f),
                    _ => None,
                },
                explicit,
                note: None,
                header: text,
            };
            (column, m)
        })
        .collect()
}

fn score(cols: &[(Column, HeaderMeaning)]) -> (usize, bool) {
    let mut fields: Vec<Field> = Vec::new();
    let mut core = false;
    for (_, m) in cols {
        let found = match m {
            HeaderMeaning::Field(f) => vec![*f],
            HeaderMeaning::Ambiguous(a, b) => vec![*a, *b],
            _ => vec![],
        };
        for f in found {
            core |= is_core(f);
            if !fields.contains(&f) {
                fields.push(f);
            }
        }
    }
    (fields.len(), core)
}

/// Finds the header row and resolves each column, or says why not.
pub fn locate(sheet: &RawSheet, overrides: &ColumnOverrides) -> Result<Layout, LayoutError> {
    // (position, columns, distinct fields) of the best header row so far
    type Candidate = (usize, Vec<(Column, HeaderMeaning)>, usize);
    let mut best: Option<Candidate> = None;
    for (pos, row) in sheet.rows.iter().take(HEADER_SEARCH_ROWS).enumerate() {
        // a header is found near the top; once one is, a few more rows settle it
        if best.as_ref().is_some_and(|b| pos > b.0 + 10) {
            break;
        }
        let cols = header_columns(row, overrides);
        let (n, core) = score(&cols);
        if n >= MIN_HEADER_FIELDS && core && best.as_ref().is_none_or(|b| n > b.2) {
            best = Some((pos, cols, n));
        }
    }
    let (pos, cols, _) = best.ok_or(LayoutError::NoTable)?;
    let columns = resolve(cols)?;
    Ok(Layout {
        header_pos: pos,
        header_row: sheet.rows[pos].index + 1,
        columns,
    })
}

/// Settles conflicts: explicit beats recognised; two claims of one kind are an error.
fn resolve(cols: Vec<(Column, HeaderMeaning)>) -> Result<Vec<Column>, LayoutError> {
    for (c, m) in &cols {
        if let HeaderMeaning::Ambiguous(a, b) = m {
            return Err(LayoutError::Ambiguous(format!(
                "header \"{}\" in column {} could be the {} or the {}; say which in a --columns file, e.g. \"{}\" = \"{}\"",
                c.header, c.letter, a.label(), b.label(), c.header, a.key()
            )));
        }
    }
    let mut columns: Vec<Column> = cols.into_iter().map(|(c, _)| c).collect();
    for field in Field::ALL {
        let claims: Vec<usize> = (0..columns.len())
            .filter(|&i| columns[i].field == Some(field))
            .collect();
        if claims.len() < 2 {
            continue;
        }
        let explicit: Vec<usize> = claims
            .iter()
            .copied()
            .filter(|&i| columns[i].explicit)
            .collect();
        if explicit.len() == 1 {
            for &i in &claims {
                if !columns[i].explicit {
                    columns[i].field = None;
                    columns[i].note = Some(format!(
                        "not used: the {} is mapped explicitly to another column",
                        field.label()
                    ));
                }
            }
            continue;
        }
        let (a, b) = (&columns[claims[0]], &columns[claims[1]]);
        return Err(LayoutError::Ambiguous(format!(
            "columns {} (\"{}\") and {} (\"{}\") both look like the {}; map one in a --columns file, e.g. \"{}\" = \"ignore\"",
            a.letter, a.header, b.letter, b.header, field.label(), b.header
        )));
    }
    let has_pair = columns.iter().any(|c| c.field == Some(Field::MpOnset))
        && columns.iter().any(|c| c.field == Some(Field::MpClear));
    if has_pair {
        for c in columns
            .iter_mut()
            .filter(|c| c.field == Some(Field::MpRange))
        {
            c.field = None;
            c.note =
                Some("not used: separate onset and clear-point columns are read instead".into());
        }
    }
    Ok(columns)
}

/// Text in a row's first cell that marks the end of the student rows.
fn is_summary_label(text: &str) -> bool {
    const EXACT: [&str; 20] = [
        "total",
        "totals",
        "sum",
        "mean",
        "average",
        "avg",
        "median",
        "std",
        "sd",
        "stdev",
        "standard deviation",
        "class average",
        "section average",
        "notes",
        "note",
        "comments",
        "count",
        "n",
        "summary",
        "statistics",
    ];
    const PREFIX: [&str; 8] = [
        "total:",
        "average:",
        "mean:",
        "notes:",
        "note:",
        "comments:",
        "n =",
        "n=",
    ];
    let t = text.trim();
    let bare = t.trim_end_matches(':').trim_end();
    let starts = |p: &str| t.get(..p.len()).is_some_and(|h| h.eq_ignore_ascii_case(p));
    EXACT.iter().any(|w| bare.eq_ignore_ascii_case(w)) || PREFIX.iter().any(|p| starts(p))
}

/// The rows below the header that are student rows, in order.
pub fn student_rows<'a>(sheet: &'a RawSheet, layout: &Layout) -> Vec<&'a RawRow> {
    let mapped: Vec<u32> = layout
        .columns
        .iter()
        .filter(|c| c.field.is_some())
        .map(|c| c.index)
        .collect();
    let who: Vec<u32> = [Field::StudentId, Field::StudentName]
        .iter()
        .filter_map(|f| layout.column(*f).map(|c| c.index))
        .collect();
    let header = &sheet.rows[layout.header_pos];
    let mut out = Vec::new();
    let mut prev = header.index;
    for row in &sheet.rows[layout.header_pos + 1..] {
        let gap = row.index > prev + 1;
        prev = row.index;
        let first = row.non_empty().next().map(|(_, c)| c);
        if let Some(super::cells::Cell::Text(t)) = first {
            if is_summary_label(t) {
                break;
            }
        }
        let filled = mapped.iter().filter(|&&c| !row.get(c).is_empty()).count();
        let names_someone = who.iter().any(|&c| !row.get(c).is_empty());
        if filled == 0 || is_repeated_header(row, header) {
            continue;
        }
        if gap && (filled == 1 || !names_someone) {
            break;
        }
        out.push(row);
    }
    out
}

fn is_repeated_header(row: &RawRow, header: &RawRow) -> bool {
    row.cells.len() == header.cells.len()
        && row.cells.iter().zip(&header.cells).all(|(a, b)| a == b)
}

#[cfg(test)]
mod tests {
    use super::super::cells::{rows_from_cells, Cell};
    use super::*;

    fn sheet(rows: &[&[&str]]) -> RawSheet {
        let mut cells = Vec::new();
        for (r, row) in rows.iter().enumerate() {
            for (c, text) in row.iter().enumerate() {
                let cell = match text.parse::<f64>() {
                    Ok(v) => Cell::Number(v),
                    Err(_) => Cell::Text(text.to_string()),
                };
                cells.push((r as u32, c as u32, cell));
            }
        }
        RawSheet {
            name: Some("S".into()),
            rows: rows_from_cells(cells),
        }
    }

    #[test]
    fn header_below_title_rows_and_totals_ignored() {
        let s = sheet(&[
            &["CHEM 2xx Recrystallization", "", ""],
            &[""],
            &[
                "Student ID",
                "Crude mass (g)",
                "Recovered mass (g)",
                "MP range",
            ],
            &["s1", "3.0", "2.0", "120-121"],
            &["s2", "3.1", "2.2", "119-121"],
            &[""],
            &["Average", "3.05", "2.1"],
        ]);
        let layout = locate(&s, &ColumnOverrides::default()).unwrap();
        assert_eq!(layout.header_row, 3);
        let rows = student_rows(&s, &layout);
        assert_eq!(
            rows.iter().map(|r| r.index + 1).collect::<Vec<_>>(),
            vec![4, 5]
        );
    }

    #[test]
    fn notes_block_after_a_gap_is_not_students() {
        let s = sheet(&[
            &[
                "Student ID",
                "Crude mass (g)",
                "Recovered mass (g)",
                "MP range",
            ],
            &["s1", "3.0", "2.0", "120-121"],
            &[""],
            &["Bench 4 thermometer was replaced on Tuesday"],
        ]);
        let layout = locate(&s, &ColumnOverrides::default()).unwrap();
        assert_eq!(student_rows(&s, &layout).len(), 1);
    }

    #[test]
    fn no_table_and_ambiguity() {
        let s = sheet(&[&["Instructions"], &["Weigh the crude product"]]);
        assert_eq!(
            locate(&s, &ColumnOverrides::default()).unwrap_err(),
            LayoutError::NoTable
        );
        let s = sheet(&[&["Student ID", "Crude mass (g)", "Crude (g)", "MP range"]]);
        let err = locate(&s, &ColumnOverrides::default()).unwrap_err();
        match err {
            LayoutError::Ambiguous(m) => assert!(
                m.contains("Crude mass (g)") && m.contains("Crude (g)"),
                "{m}"
            ),
            LayoutError::NoTable => panic!("no table"),
        }
    }

    #[test]
    fn separate_onset_and_clear_win_over_a_range_column() {
        let s = sheet(&[&[
            "ID",
            "Crude (g)",
            "Recovered (g)",
            "MP range",
            "MP start",
            "MP end",
        ]]);
        let layout = locate(&s, &ColumnOverrides::default()).unwrap();
        assert!(layout.column(Field::MpRange).is_none());
        assert!(layout.column(Field::MpOnset).is_some());
    }
}
