//! Where the student rows end, and what stands below them: the rows between the header and
//! the first totals or notes block are students; below the block, a row that looks like a
//! student (an id or a name, and a mass or a melting entry: a late entry typed under the
//! notes) is read as one, with a note, and anything else is passed over and named, so that
//! nothing after the table is lost silently.

use super::cells::{Cell, RawRow, RawSheet};
use super::range::parse_range;
use super::table::Layout;
use super::values::{parse_quantity, Decimal};
use crate::fields::Field;

/// The rows of a sheet's table.
#[derive(Debug, Default)]
pub struct Body<'a> {
    /// The student rows, in order, those below the block included.
    pub rows: Vec<&'a RawRow>,
    /// 1-based rows passed over because they name no one (template or summary rows).
    pub unnamed: Vec<u32>,
    /// The 1-based row where a totals or notes block ends the student rows, if one does.
    pub block: Option<u32>,
    /// 1-based rows below the block read as students.
    pub late: Vec<u32>,
    /// 1-based rows below the block passed over: not students.
    pub passed: Vec<u32>,
}

/// The columns that say who a row is and what it measured.
struct Roles {
    mapped: Vec<u32>,
    who: Vec<u32>,
    id: Option<u32>,
    measured: Vec<u32>,
}

impl Roles {
    fn of(layout: &Layout) -> Roles {
        let cols = |fields: &[Field]| -> Vec<u32> {
            fields
                .iter()
                .filter_map(|f| layout.column(*f).map(|c| c.index))
                .collect()
        };
        Roles {
            mapped: layout
                .columns
                .iter()
                .filter(|c| c.field.is_some())
                .map(|c| c.index)
                .collect(),
            who: cols(&[
                Field::StudentId,
                Field::StudentName,
                Field::LastName,
                Field::FirstName,
            ]),
            id: layout.column(Field::StudentId).map(|c| c.index),
            measured: cols(&[
                Field::CrudeMass,
                Field::RecoveredMass,
                Field::MpRange,
                Field::MpOnset,
                Field::MpClear,
            ]),
        }
    }

    fn names_someone(&self, row: &RawRow) -> bool {
        self.who.iter().any(|&c| !row.get(c).is_empty())
    }

    /// An id or a name, and a mass or a melting entry that reads as a value.
    fn looks_like_a_student(&self, row: &RawRow) -> bool {
        let value = |cell: &Cell| match cell {
            Cell::Number(_) | Cell::Percent(_) => true,
            Cell::Text(t) => {
                parse_quantity(t, Decimal::Point).is_some()
                    || parse_range(t, Decimal::Point).is_some()
            }
            _ => false,
        };
        self.names_someone(row)
            && self.measured.iter().any(|&c| value(row.get(c)))
            && !ends_the_table(row, self.id, &self.who)
    }
}

/// Text in a row's first cell (or where a name belongs) that marks the end of the student
/// rows: a label made of summary words ("Average", "Class mean", "Std dev", "Grand total",
/// "Mean ± SD", "Σ", "Mittelwert"), or a notes heading ("Notes:", "Bemerkungen"). The words
/// are the vocabulary's `[summary.*]`.
fn is_summary_label(text: &str) -> bool {
    let v = super::vocabulary::current();
    let lower = super::vocabulary::fold(text.trim());
    let heading = lower
        .split_once(':')
        .is_some_and(|(head, _)| v.has("summary.heading", head));
    if heading
        || lower.starts_with("n =")
        || lower.starts_with("n=")
        || v.has("summary.notes", lower.trim_end_matches(':'))
    {
        return true;
    }
    let words: Vec<&str> = lower
        .split(|c: char| !c.is_alphanumeric())
        .filter(|w| !w.is_empty())
        .collect();
    !words.is_empty()
        && words.len() <= 4
        && words.iter().any(|w| v.has("summary.stat", w))
        && words
            .iter()
            .all(|w| v.has("summary.stat", w) || v.has("summary.with", w))
}

/// The rows below the header that are student rows, in order.
pub fn student_rows<'a>(sheet: &'a RawSheet, layout: &Layout) -> Vec<&'a RawRow> {
    body(sheet, layout).rows
}

/// The student rows, and the 1-based rows passed over because they name no one in a sheet that
/// has an id or name column (a template row holding only a bench number or a formula's result,
/// an unlabelled average): they cannot be anyone's grade.
pub fn rows_and_unnamed<'a>(sheet: &'a RawSheet, layout: &Layout) -> (Vec<&'a RawRow>, Vec<u32>) {
    let b = body(sheet, layout);
    (b.rows, b.unnamed)
}

/// The table's rows: students down to the first totals or notes block, then what stands below.
pub fn body<'a>(sheet: &'a RawSheet, layout: &Layout) -> Body<'a> {
    let roles = Roles::of(layout);
    let header = &sheet.rows[layout.header_pos];
    let mut out = Body::default();
    let first = layout.body_pos;
    let Some(before) = first.checked_sub(1).and_then(|p| sheet.rows.get(p)) else {
        return out;
    };
    let mut prev = before.index;
    let mut end = None;
    for (pos, row) in sheet.rows.iter().enumerate().skip(first) {
        let gap = row.index > prev + 1;
        prev = row.index;
        if ends_the_table(row, roles.id, &roles.who) {
            end = Some(pos);
            break;
        }
        let filled = roles
            .mapped
            .iter()
            .filter(|&&c| !row.get(c).is_empty())
            .count();
        let names_someone = roles.names_someone(row);
        if filled == 0 || is_repeated_header(row, header) {
            continue;
        }
        if gap && (filled == 1 || !names_someone) {
            end = Some(pos);
            break;
        }
        if !roles.who.is_empty() && !names_someone {
            out.unnamed.push(row.index + 1);
            continue;
        }
        out.rows.push(row);
    }
    if let Some(end) = end {
        out.block = Some(sheet.rows[end].index + 1);
        below_the_block(&sheet.rows[end..], header, &roles, &mut out);
    }
    out
}

/// The rows from the block down: a row that looks like a student is read as one; any other row
/// with something in it is passed over and named. The block's own first row is not listed.
fn below_the_block<'a>(rows: &'a [RawRow], header: &RawRow, roles: &Roles, out: &mut Body<'a>) {
    for (i, row) in rows.iter().enumerate() {
        if i > 0 && roles.looks_like_a_student(row) && !is_repeated_header(row, header) {
            out.late.push(row.index + 1);
            out.rows.push(row);
        } else if i > 0 && row.non_empty().next().is_some() {
            out.passed.push(row.index + 1);
        }
    }
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
            Cell::Text(t) => Some(t.as_str()),
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
    use super::super::cells::sheet_of as sheet;
    use super::super::headers::ColumnOverrides;
    use super::super::table::locate;
    use super::*;

    /// From a trial: a late entry typed below a "Notes:" block was dropped without a word.
    #[test]
    fn a_late_entry_below_the_notes_is_a_student_and_the_rest_is_named() {
        let s = sheet(&[
            &[
                "ID",
                "Name",
                "Crude mass (g)",
                "Recovered mass (g)",
                "MP range",
            ],
            &["s1", "Ann", "3.0", "2.1", "120-122"],
            &[""],
            &["Notes:"],
            &["Bench 4 thermometer replaced"],
            &["s3", "Cy", "2.9", "2.0", "120.5-122"],
            &["Average", "", "3.0", "2.1"],
            &["s4", "Di"],
        ]);
        let layout = locate(&s, &ColumnOverrides::default()).unwrap();
        let b = body(&s, &layout);
        let read: Vec<u32> = b.rows.iter().map(|r| r.index + 1).collect();
        assert_eq!(read, [2, 6]);
        assert_eq!(b.block, Some(4));
        assert_eq!(b.late, [6]);
        // the note, the average, and a name with no measurement
        assert_eq!(b.passed, [5, 7, 8]);
    }

    #[test]
    fn a_table_without_a_block_has_nothing_below() {
        let s = sheet(&[
            &["ID", "Crude mass (g)", "Recovered mass (g)", "MP range"],
            &["s1", "3.0", "2.1", "120-122"],
        ]);
        let layout = locate(&s, &ColumnOverrides::default()).unwrap();
        let b = body(&s, &layout);
        assert_eq!((b.rows.len(), b.block), (1, None));
        assert!(b.passed.is_empty() && b.late.is_empty());
        assert_eq!(super::super::row_list(&[3, 4, 5, 9]), "3-5, 9");
    }
}
