//! Finding the table in a sheet: the header row below any title rows, the columns it names,
//! and the student rows down to the first totals or notes block.

use serde::Serialize;
use std::fmt::Write as _;

pub use super::body::{rows_and_unnamed, student_rows};
use super::cells::{column_letters, RawRow, RawSheet};
use super::grouped::{combine, GroupedColumn};
use super::headers::{
    classify, explicit, mapping_line, meaning, parse_header, ColumnOverrides, HeaderMeaning,
};
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
    /// How its text cells' commas read, decided from all its cells (`commas.rs`); `None` until
    /// the student rows are known, then as the file reads numbers unless the cells say so.
    #[serde(skip)]
    pub decimal: Option<super::values::Decimal>,
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
    /// 1-based row of sub-headers under a two-row (grouped) header, if the header is one.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub sub_header_row: Option<u32>,
    /// 1-based row of units directly under the header, if there is one.
    pub units_row: Option<u32>,
    /// Position within `RawSheet::rows` of the first row below the header (and its sub-header
    /// and units rows).
    #[serde(skip)]
    pub body_pos: usize,
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

/// A field that makes a row a header row: a mass or the melting range, in any of the forms a
/// layout takes for them (a mass weighed by difference has its gross weighing; the range may be
/// given as repeat determinations), so that a sheet weighed by difference with trials is found.
fn is_core(f: Field) -> bool {
    matches!(
        f,
        Field::CrudeMass
            | Field::RecoveredMass
            | Field::CrudeGross
            | Field::RecoveredGross
            | Field::MpRange
            | Field::MpOnset
            | Field::MpClear
            | Field::MpTrialRange
            | Field::MpTrialOnset
            | Field::MpTrialClear
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
            column(col, letter, text, m, explicit, unit)
        })
        .collect()
}

/// The columns of a two-row header: each read from its group name's words and its own, or
/// from its own alone (with the group's unit) where the two together name nothing.
fn grouped_columns(
    cols: &[GroupedColumn],
    overrides: &ColumnOverrides,
) -> Vec<(Column, HeaderMeaning)> {
    cols.iter()
        .map(|g| {
            let text = g.text();
            let letter = column_letters(g.index);
            let parsed = g.parsed();
            let (m, explicit) = explicit(&text, &letter, overrides).unwrap_or_else(|| {
                let m = match (classify(&parsed), g.child_alone()) {
                    (HeaderMeaning::Unknown, Some(alone)) => classify(&alone),
                    (m, _) => m,
                };
                (m, false)
            });
            column(g.index, letter, text, m, explicit, parsed.unit)
        })
        .collect()
}

fn column(
    index: u32,
    letter: String,
    header: String,
    m: HeaderMeaning,
    explicit: bool,
    unit: Option<Unit>,
) -> (Column, HeaderMeaning) {
    let column = Column {
        index,
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
        header,
        decimal: None,
    };
    (column, m)
}

fn score(cols: &[(Column, HeaderMeaning)], is_core: fn(Field) -> bool) -> (usize, bool) {
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

/// The best header starting at `pos`: the row alone, or it and the row under it read as a
/// two-row header where that names more fields than either row alone. Returns the columns,
/// their distinct fields, whether a core field is among them, and whether two rows were read.
fn header_at(
    sheet: &RawSheet,
    pos: usize,
    overrides: &ColumnOverrides,
    is_core: fn(Field) -> bool,
) -> (Vec<(Column, HeaderMeaning)>, usize, bool, bool) {
    let row = &sheet.rows[pos];
    let cols = header_columns(row, overrides);
    let (n, core) = score(&cols, is_core);
    let grouped = sheet
        .rows
        .get(pos + 1)
        .and_then(|next| Some((next, combine(row, next, &sheet.merges)?)))
        .map(|(next, g)| {
            let below = score(&header_columns(next, overrides), is_core).0;
            let cols = grouped_columns(&g, overrides);
            (cols, below)
        });
    if let Some((gcols, below)) = grouped {
        let (gn, gcore) = score(&gcols, is_core);
        // more fields, or as many with fewer left ambiguous ("Mass (g)" alone could be either)
        if (gn, definite(&gcols)) > (n, definite(&cols)) && gn > below && gcore {
            return (gcols, gn, gcore, true);
        }
    }
    (cols, n, core, false)
}

/// A column mapped by its letter ("column P" = "notes") whose header cell is blank is a column
/// all the same, headed by nothing.
fn headerless_mapped(cols: &mut Vec<(Column, HeaderMeaning)>, overrides: &ColumnOverrides) {
    for (letter, field) in &overrides.letters {
        let Some(index) = letter_index(letter) else {
            continue;
        };
        if cols.iter().any(|(c, _)| c.index == index) {
            continue;
        }
        let m = field.map_or(HeaderMeaning::Ignored, HeaderMeaning::Field);
        cols.push(column(index, letter.clone(), String::new(), m, true, None));
    }
    cols.sort_by_key(|(c, _)| c.index);
}

/// The 0-based index of column letters ("A" is 0, "AA" 26), up to XFD.
fn letter_index(letters: &str) -> Option<u32> {
    let mut n: u32 = 0;
    for b in letters.bytes() {
        if !b.is_ascii_uppercase() {
            return None;
        }
        n = n.checked_mul(26)?.checked_add(u32::from(b - b'A') + 1)?;
    }
    (1..=16_384).contains(&n).then(|| n - 1)
}

/// The distinct fields named for certain (not as one of two).
fn definite(cols: &[(Column, HeaderMeaning)]) -> usize {
    let mut fields: Vec<Field> = cols
        .iter()
        .filter_map(|(_, m)| match m {
            HeaderMeaning::Field(f) => Some(*f),
            _ => None,
        })
        .collect();
    fields.sort_unstable();
    fields.dedup();
    fields.len()
}

/// Finds the header row and resolves each column, or says why not.
pub fn locate(sheet: &RawSheet, overrides: &ColumnOverrides) -> Result<Layout, LayoutError> {
    locate_by(sheet, overrides, is_core)
}

/// Finds a roster's header row: one naming the student id and at least two other fields.
pub fn locate_roster(sheet: &RawSheet, overrides: &ColumnOverrides) -> Result<Layout, LayoutError> {
    locate_by(sheet, overrides, |f| f == Field::StudentId)
}

/// Finds the header row whose fields include one `is_core` accepts.
fn locate_by(
    sheet: &RawSheet,
    overrides: &ColumnOverrides,
    is_core: fn(Field) -> bool,
) -> Result<Layout, LayoutError> {
    // (position, columns, distinct fields, two rows) of the best header row so far
    type Candidate = (usize, Vec<(Column, HeaderMeaning)>, usize, bool);
    let mut best: Option<Candidate> = None;
    for pos in 0..sheet.rows.len().min(HEADER_SEARCH_ROWS) {
        // a header is found near the top; once one is, a few more rows settle it
        if best.as_ref().is_some_and(|b| pos > b.0 + 10) {
            break;
        }
        let (cols, n, core, two) = header_at(sheet, pos, overrides, is_core);
        if n >= MIN_HEADER_FIELDS && core && best.as_ref().is_none_or(|b| n > b.2) {
            best = Some((pos, cols, n, two));
        }
    }
    let (pos, mut cols, _, two) = best.ok_or(LayoutError::NoTable)?;
    headerless_mapped(&mut cols, overrides);
    let mut columns = resolve(cols);
    name_parts(&mut columns);
    let last = pos + usize::from(two);
    let units_row = units_row(sheet, last, &mut columns);
    super::claims::mark_text_columns(sheet, last, &mut columns);
    let mut layout = Layout {
        header_pos: pos,
        header_row: sheet.rows[pos].index + 1,
        sub_header_row: two.then(|| sheet.rows[last].index + 1),
        units_row,
        body_pos: last + 1 + usize::from(units_row.is_some()),
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

/// A name column beside a column for one part of the name holds the other part: "Nom" beside
/// "Prénom" is the family name, "Nombre" beside "Apellidos" the given name (common practice
/// in French and Spanish class lists), so that the two make one name.
fn name_parts(columns: &mut [Column]) {
    let has = |f: Field| columns.iter().any(|c| c.field == Some(f));
    let other = match (has(Field::LastName), has(Field::FirstName)) {
        (true, false) => Field::FirstName,
        (false, true) => Field::LastName,
        _ => return,
    };
    let names: Vec<usize> = (0..columns.len())
        .filter(|&i| columns[i].field == Some(Field::StudentName) && !columns[i].explicit)
        .collect();
    if let [i] = names[..] {
        columns[i].field = Some(other);
    }
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

#[cfg(test)]
#[path = "table_tests.rs"]
mod tests;
