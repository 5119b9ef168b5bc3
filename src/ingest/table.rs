//! Finding the table in a sheet: the header row below any title rows, the columns it names,
//! and the student rows down to the first totals or notes block.

use serde::Serialize;
use std::fmt::Write as _;

use super::cells::{column_letters, RawRow, RawSheet};
use super::headers::{mapping_line, meaning, parse_header, ColumnOverrides, HeaderMeaning};
use super::values::Unit;
use crate::fields::Field;

/// How far down a sheet the header row is looked for.
const HEADER_SEARCH_ROWS: usize = 50;
/// A header row must name at least this many distinct fields.
const MIN_HEADER_FIELDS: usize = 3;

/// Where a column's unit came from.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum UnitSource {
    Header,
    /// A row of units directly under the header ("(g)", "mg", "°C").
    UnitsRow,
}

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
    pub unit_source: Option<UnitSource>,
    /// Why the column is not used, when it is not.
    pub note: Option<String>,
    /// Most of its filled cells under the header hold text that is no number: never offered
    /// as a numeric field.
    #[serde(skip)]
    pub text_cells: bool,
}

/// The located table: where its header is and what each column means.
#[derive(Clone, Debug, Serialize)]
pub struct Layout {
    /// Position of the header row within `RawSheet::rows`.
    #[serde(skip)]
    pub header_pos: usize,
    /// 1-based header row.
    pub header_row: u32,
    /// 1-based row of units directly under the header, if there is one.
    pub units_row: Option<u32>,
    pub columns: Vec<Column>,
    /// Fields grading needs that no column holds.
    pub missing: Vec<Field>,
    /// Every field no column holds (the missing ones, and optional ones such as the reported
    /// recovery), so that a blank cell and a sheet without the column can be told apart.
    #[serde(skip)]
    pub absent: Vec<Field>,
    /// How columns pair up into one value ("crude mass = E - D"), for `check`.
    pub pairings: Vec<String>,
}

impl Layout {
    pub fn column(&self, field: Field) -> Option<&Column> {
        self.columns.iter().find(|c| c.field == Some(field))
    }

    /// Whether some column holds the melting range (or its onset or clear point).
    fn has_melting(&self) -> bool {
        [Field::MpRange, Field::MpOnset, Field::MpClear]
            .iter()
            .any(|f| self.column(*f).is_some())
            || super::experiment::has_trials(&self.columns)
    }

    /// The message for a sheet with no column for a field grading needs: which, the headers
    /// that were not understood, and the line to paste into a `--columns` file.
    pub fn missing_message(&self) -> Option<String> {
        if self.missing.is_empty() {
            return None;
        }
        let wanted: Vec<&str> = self.missing.iter().map(|f| f.label()).collect();
        let unused: Vec<&Column> = self.columns.iter().filter(|c| c.field.is_none()).collect();
        let (list, them) = match wanted.as_slice() {
            [one] => ((*one).to_string(), "it"),
            [rest @ .., last] => (format!("{} and the {last}", rest.join(", the ")), "them"),
            [] => (String::new(), "it"),
        };
        let mut m = format!("no column for the {list}; every row is graded as missing {them}");
        if unused.is_empty() {
            return Some(m);
        }
        let heads: Vec<String> = unused
            .iter()
            .map(|c| format!("{} \"{}\"", c.letter, c.header))
            .collect();
        let _ = write!(m, "; columns not used: {}", heads.join(", "));
        let lines: Vec<String> = example_columns(&unused, &self.missing)
            .into_iter()
            .map(|(c, f)| mapping_line(&c.letter, Some(f)))
            .collect();
        if lines.is_empty() {
            let _ = write!(
                m,
                "; if one holds it, map it in a --columns file's [columns] table (\"column X\" = \"{}\")",
                self.missing[0].key()
            );
        } else {
            let _ = write!(
                m,
                "; if one holds it, map it in a --columns file's [columns] table, for example: {}",
                lines.join(" and ")
            );
        }
        Some(m)
    }
}

/// For each missing field, the unused column most likely to hold it: one whose note names the
/// field (an ambiguity), then one not understood at all, never one set aside for a reason (a
/// partner's, a reference value, a tare). A field with no such column gets no example.
fn example_columns<'c>(unused: &[&'c Column], missing: &[Field]) -> Vec<(&'c Column, Field)> {
    let mut taken: Vec<u32> = Vec::new();
    let mut out = Vec::new();
    for f in missing {
        let names_it = |c: &&&Column| c.note.as_deref().is_some_and(|n| n.contains(f.label()));
        let unknown = |c: &&&Column| c.note.is_none();
        let free = |c: &&&Column| !taken.contains(&c.index) && !super::claims::contradicts(c, *f);
        let pick = unused
            .iter()
            .filter(free)
            .find(names_it)
            .or_else(|| unused.iter().filter(free).find(unknown));
        if let Some(c) = pick {
            taken.push(c.index);
            out.push((*c, *f));
        }
    }
    out
}

/// Why a sheet's table could not be used.
#[derive(Clone, Debug, PartialEq)]
pub enum LayoutError {
    /// Nothing that looks like a header row: the sheet is skipped with a note.
    NoTable,
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
            let letter = column_letters(col);
            let (m, explicit) = meaning(&text, &letter, overrides);
            let unit = parse_header(&text).unit;
            let column = Column {
                index: col,
                letter,
                unit,
                unit_source: unit.map(|_| UnitSource::Header),
                field: match m {
                    HeaderMeaning::Field(f) => Some(f),
                    _ => None,
                },
                explicit,
                text_cells: false,
                note: match m {
                    HeaderMeaning::NotOwn(why) => Some(format!("not used: {why}")),
                    _ => None,
                },
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
    let mut columns = resolve(cols);
    let units_row = units_row(sheet, pos, &mut columns);
    super::claims::mark_text_columns(sheet, pos, &mut columns);
    let mut layout = Layout {
        header_pos: pos,
        header_row: sheet.rows[pos].index + 1,
        units_row,
        pairings: super::experiment::pairings(&columns),
        columns,
        missing: Vec::new(),
        absent: Vec::new(),
    };
    // a mass weighed by difference has its columns (a gross and a tare)
    layout.missing = Field::ALL
        .into_iter()
        .filter(|f| f.is_required() && layout.column(*f).is_none())
        .filter(|f| super::experiment::by_difference(&layout.columns, *f).is_none())
        .collect();
    if !layout.has_melting() {
        layout.missing.push(Field::MpRange);
    }
    layout.absent = Field::ALL
        .into_iter()
        .filter(|f| layout.column(*f).is_none())
        .collect();
    Ok(layout)
}

/// The unit a units-row cell names: "g", "(g)", "[mg]", "°C", "%"; any case.
fn unit_cell(cell: &super::cells::Cell) -> Option<Unit> {
    let t = cell.as_text()?;
    let inner = t
        .trim()
        .trim_start_matches(['(', '['])
        .trim_end_matches([')', ']'])
        .trim();
    super::values::parse_unit(inner)
}

/// Text a units row holds over a column without a unit: a dash, "n/a", or a label ("Units").
fn unit_placeholder(cell: &super::cells::Cell) -> bool {
    let t = cell.as_text().unwrap_or_default().to_lowercase();
    matches!(
        t.trim().trim_matches(['(', ')', '[', ']']),
        "" | "-" | "–" | "—" | "n/a" | "na" | "units" | "unit" | "units:" | "unit:"
    )
}

/// A row directly under the header (a blank row between is allowed) whose every non-empty cell
/// is a unit, or a dash or "units" label over a column without one, gives those columns their
/// unit and is not a submission (common practice in lab sheets: the units on a line of their
/// own). The unit can settle what a header alone does not ("Solvent" over "mL" is a volume,
/// "Recovery" over "g" a mass); a header that names another unit keeps its own, with a note.
/// Returns its 1-based row.
fn units_row(sheet: &RawSheet, header_pos: usize, columns: &mut [Column]) -> Option<u32> {
    let header = &sheet.rows[header_pos];
    let row = sheet.rows.get(header_pos + 1)?;
    if row.index > header.index + 2 {
        return None;
    }
    let mut units: Vec<(u32, Unit)> = Vec::new();
    for (c, cell) in row.non_empty() {
        match unit_cell(cell) {
            Some(u) => units.push((c, u)),
            None if unit_placeholder(cell) => {}
            None => return None,
        }
    }
    if units.is_empty() {
        return None;
    }
    for (c, u) in units {
        if let Some(col) = columns.iter_mut().find(|x| x.index == c) {
            take_unit(col, u);
        }
    }
    Some(row.index + 1)
}

/// Gives a column the unit its units-row cell names.
fn take_unit(col: &mut Column, u: Unit) {
    if let Some(own) = col.unit {
        if own != u {
            col.note = Some(format!(
                "the header says {} and the units row {}; the header's unit is used",
                own.symbol(),
                u.symbol()
            ));
        }
        return;
    }
    col.unit = Some(u);
    col.unit_source = Some(UnitSource::UnitsRow);
    if col.explicit || col.note.is_some() {
        return;
    }
    let mut h = parse_header(&col.header);
    h.unit = Some(u);
    if let HeaderMeaning::Field(f) = super::headers::classify(&h) {
        col.field = Some(f);
    }
}

/// Settles conflicts: explicit beats recognised; a header that could mean two things, or two
/// columns that claim one field, are left unused with a note and the lines that would settle
/// them, never guessed.
fn resolve(cols: Vec<(Column, HeaderMeaning)>) -> Vec<Column> {
    let mut columns: Vec<Column> = Vec::with_capacity(cols.len());
    for (mut c, m) in cols {
        if let HeaderMeaning::Ambiguous(a, b) = m {
            c.note = Some(format!(
                "not used: could be the {} or the {}; say which in a --columns file: {} or {}",
                a.label(),
                b.label(),
                mapping_line(&c.letter, Some(a)),
                mapping_line(&c.letter, Some(b))
            ));
        }
        columns.push(c);
    }
    super::experiment::pair_tares(&mut columns);
    for field in Field::ALL.into_iter().filter(|f| !f.repeats()) {
        settle_claims(&mut columns, field);
    }
    for (range, onset, clear) in [
        (Field::MpRange, Field::MpOnset, Field::MpClear),
        (
            Field::CrudeMpRange,
            Field::CrudeMpOnset,
            Field::CrudeMpClear,
        ),
        (
            Field::MixedMpRange,
            Field::MixedMpOnset,
            Field::MixedMpClear,
        ),
    ] {
        super::claims::range_or_pair(&mut columns, range, onset, clear);
    }
    columns
}

/// Two or more columns that claim `field`: an explicit mapping wins; else none is used.
fn settle_claims(columns: &mut [Column], field: Field) {
    let claims: Vec<usize> = (0..columns.len())
        .filter(|&i| columns[i].field == Some(field))
        .collect();
    if claims.len() < 2 {
        return;
    }
    let explicit: Vec<usize> = claims
        .iter()
        .copied()
        .filter(|&i| columns[i].explicit)
        .collect();
    let keep = (explicit.len() == 1).then(|| explicit[0]);
    let letters: Vec<String> = claims.iter().map(|&i| columns[i].letter.clone()).collect();
    for &i in &claims {
        // the column mapped by hand keeps the field; every other claim is set aside with a note
        if Some(i) == keep {
            continue;
        }
        columns[i].field = None;
        columns[i].note = Some(match keep {
            Some(k) => format!(
                "not used: the {} is mapped explicitly to column {}",
                field.label(),
                columns[k].letter
            ),
            None => format!(
                "not used: columns {} all look like the {}; say which holds it in a --columns file, e.g. {} and {}",
                letters.join(" and "),
                field.label(),
                mapping_line(&columns[i].letter, Some(field)),
                mapping_line(&letters[usize::from(letters[0] == columns[i].letter)], None)
            ),
        });
    }
}

/// Text in a row's first cell (or where a name belongs) that marks the end of the student
/// rows: a label made of summary words ("Average", "Class mean", "Std dev", "Grand total",
/// "Mean ± SD", "Σ"), or a notes heading ("Notes:").
fn is_summary_label(text: &str) -> bool {
    // words that say a row summarises others
    const STAT: [&str; 28] = [
        "total",
        "totals",
        "sum",
        "mean",
        "means",
        "average",
        "averages",
        "avg",
        "ave",
        "median",
        "std",
        "sd",
        "stdev",
        "stddev",
        "deviation",
        "count",
        "n",
        "summary",
        "statistics",
        "stats",
        "min",
        "max",
        "minimum",
        "maximum",
        "range",
        "σ",
        "Σ",
        "variance",
    ];
    // words that may come with them
    const WITH: [&str; 10] = [
        "class", "section", "group", "grand", "overall", "cohort", "standard", "dev", "all",
        "students",
    ];
    const PREFIX: [&str; 6] = ["notes:", "note:", "comments:", "n =", "n=", "average:"];
    let t = text.trim();
    let lower = t.to_lowercase();
    if PREFIX.iter().any(|p| lower.starts_with(p))
        || ["notes", "note", "comments"].contains(&lower.trim_end_matches(':'))
    {
        return true;
    }
    let words: Vec<&str> = lower
        .split(|c: char| !c.is_alphanumeric())
        .filter(|w| !w.is_empty())
        .collect();
    !words.is_empty()
        && words.len() <= 4
        && words.iter().any(|w| STAT.contains(w))
        && words.iter().all(|w| STAT.contains(w) || WITH.contains(w))
}

/// The rows below the header that are student rows, in order.
pub fn student_rows<'a>(sheet: &'a RawSheet, layout: &Layout) -> Vec<&'a RawRow> {
    rows_and_unnamed(sheet, layout).0
}

/// The student rows, and the 1-based rows passed over because they name no one in a sheet that
/// has an id or name column (a template row holding only a bench number or a formula's result,
/// an unlabelled average): they cannot be anyone's grade.
pub fn rows_and_unnamed<'a>(sheet: &'a RawSheet, layout: &Layout) -> (Vec<&'a RawRow>, Vec<u32>) {
    let mapped: Vec<u32> = layout
        .columns
        .iter()
        .filter(|c| c.field.is_some())
        .map(|c| c.index)
        .collect();
    let who: Vec<u32> = [
        Field::StudentId,
        Field::StudentName,
        Field::LastName,
        Field::FirstName,
    ]
    .iter()
    .filter_map(|f| layout.column(*f).map(|c| c.index))
    .collect();
    let id = layout.column(Field::StudentId).map(|c| c.index);
    let header = &sheet.rows[layout.header_pos];
    let mut out = Vec::new();
    let mut unnamed = Vec::new();
    let mut prev = header.index;
    let first = layout.header_pos + 1 + usize::from(layout.units_row.is_some());
    if let Some(units) = sheet
        .rows
        .get(first - 1)
        .filter(|_| layout.units_row.is_some())
    {
        prev = units.index;
    }
    for row in sheet.rows.iter().skip(first) {
        let gap = row.index > prev + 1;
        prev = row.index;
        if ends_the_table(row, id, &who) {
            break;
        }
        let filled = mapped.iter().filter(|&&c| !row.get(c).is_empty()).count();
        let names_someone = who.iter().any(|&c| !row.get(c).is_empty());
        if filled == 0 || is_repeated_header(row, header) {
            continue;
        }
        if gap && (filled == 1 || !names_someone) {
            break;
        }
        if !who.is_empty() && !names_someone {
            unnamed.push(row.index + 1);
            continue;
        }
        out.push(row);
    }
    (out, unnamed)
}

/// A row labelled as a summary ("Average", "Class mean") in its first cell or where a name
/// belongs ends the student rows; a row with a student id is a student, whatever its name cell
/// says ("Max").
fn ends_the_table(row: &RawRow, id: Option<u32>, who: &[u32]) -> bool {
    let has_id = id.is_some_and(|c| {
        let cell = row.get(c);
        !cell.is_empty() && !cell.as_text().is_some_and(|t| is_summary_label(&t))
    });
    let mut labels = row
        .non_empty()
        .take(1)
        .map(|(c, _)| c)
        .chain(who.iter().copied())
        .filter_map(|c| match row.get(c) {
            super::cells::Cell::Text(t) => Some(t.as_str()),
            _ => None,
        });
    !has_id && labels.any(is_summary_label)
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
        // two columns that both look like the crude mass: neither is guessed, both say why
        let s = sheet(&[&["Student ID", "Crude mass (g)", "Crude (g)", "MP range"]]);
        let layout = locate(&s, &ColumnOverrides::default()).unwrap();
        assert!(layout.column(Field::CrudeMass).is_none());
        assert_eq!(layout.missing, vec![Field::CrudeMass, Field::RecoveredMass]);
        for c in &layout.columns[1..3] {
            let note = c.note.as_deref().unwrap_or_default();
            assert!(note.contains("columns B and C"), "{note}");
            assert!(
                note.contains(&format!("\"column {}\" = \"crude_mass\"", c.letter)),
                "{note}"
            );
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

    /// A units row under the header is common practice in class sheets: "(g)", "mg", "°C",
    /// blank over text columns.
    #[test]
    fn a_units_row_gives_columns_their_unit_and_is_not_a_student() {
        for units in [
            ["", "(g)", "mg", "°C"],
            ["", "G", "MG", "°c"],
            ["", "[g]", "(mg)", "deg C"],
        ] {
            let s = sheet(&[
                &["Student ID", "Crude mass", "Recovered mass", "MP range"],
                &units,
                &["s1", "3.0", "2100", "120-121"],
            ]);
            let layout = locate(&s, &ColumnOverrides::default()).unwrap();
            assert_eq!(layout.units_row, Some(2), "{units:?}");
            let rec = layout.column(Field::RecoveredMass).unwrap();
            assert_eq!(rec.unit, Some(Unit::Mass(0.001)), "{units:?}");
            assert_eq!(rec.unit_source, Some(UnitSource::UnitsRow));
            let rows = student_rows(&s, &layout);
            assert_eq!(
                rows.len(),
                1,
                "{units:?}: the units row is not a submission"
            );
            assert_eq!(rows[0].index, 2);
        }
        // a row with anything but units under the header is a student
        let s = sheet(&[
            &[
                "Student ID",
                "Crude mass (g)",
                "Recovered mass (g)",
                "MP range",
            ],
            &["g", "3.0", "2.1", "120-121"],
        ]);
        let layout = locate(&s, &ColumnOverrides::default()).unwrap();
        assert_eq!(layout.units_row, None);
        assert_eq!(student_rows(&s, &layout).len(), 1);
    }
}
