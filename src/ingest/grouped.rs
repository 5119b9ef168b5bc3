//! Two-row (grouped) headers: a row of group names, each merged (or left blank to its right, as
//! a spreadsheet stores a merged cell) over a row of sub-headers, read as one header a column.
//!
//! "Mass (g)" over "Crude" and "Recovered" is the crude mass and the recovered mass in grams;
//! "Melting range (°C)" over "Start" and "End" the onset and the clear point. A column named only
//! in the upper row ("Comments") keeps that name, one named only in the lower row keeps its own.
//! The parent's words and the child's are read together, the unit taken from whichever names
//! one (the child's first). calamine gives a merged cell's value in its first column and blanks
//! in the rest, which is also how a group name typed once over its sub-headers looks, so both
//! are read by one rule: a group name stands over the sub-headers under it and under the blank
//! upper cells to its right, up to the next upper cell or a column with no sub-header.

use std::collections::BTreeMap;

use super::cells::{Cell, Merge, RawRow};
use super::headers::{parse_header, ParsedHeader};
use super::range::parse_range;
use super::values::{is_blank_marker, parse_quantity, parse_unit, Decimal};

/// What joins a group name and a sub-header in the header text shown (`check`, workbooks).
pub const JOIN: &str = " / ";

/// One column of a two-row header: the group name over it and its own sub-header.
#[derive(Clone, Debug, PartialEq)]
pub struct GroupedColumn {
    pub index: u32,
    pub parent: Option<String>,
    pub child: Option<String>,
}

impl GroupedColumn {
    /// The header as shown: "Mass (g) / Crude", or the one part there is.
    pub fn text(&self) -> String {
        match (&self.parent, &self.child) {
            (Some(p), Some(c)) => format!("{p}{JOIN}{c}"),
            (Some(one), None) | (None, Some(one)) => one.clone(),
            (None, None) => String::new(),
        }
    }

    /// The parent's and the child's words together, with the child's unit or else the parent's.
    pub fn parsed(&self) -> ParsedHeader {
        let p = self.parent.as_deref().map(parse_header);
        let c = self.child.as_deref().map(parse_header);
        let mut words = Vec::new();
        for h in [&p, &c].into_iter().flatten() {
            words.extend(h.words.iter().cloned());
        }
        let unit = c
            .as_ref()
            .and_then(|h| h.unit)
            .or(p.as_ref().and_then(|h| h.unit));
        ParsedHeader { words, unit }
    }

    /// The sub-header alone with the unit it inherits, for a group name that adds nothing a
    /// reading can use ("Trial 1" over "Clear").
    pub fn child_alone(&self) -> Option<ParsedHeader> {
        self.parent.as_ref()?;
        let mut h = parse_header(self.child.as_deref()?);
        h.unit = h.unit.or(self.parsed().unit);
        Some(h)
    }
}

/// The text cells of a row, or `None` if it holds anything else (a number, a date).
fn texts(row: &RawRow) -> Option<Vec<(u32, String)>> {
    row.non_empty()
        .map(|(c, cell)| match cell {
            Cell::Text(t) => Some((c, t.trim().to_string())),
            _ => None,
        })
        .collect()
}

/// Text that is a value rather than a header: a number, a range, a blank marker ("n/a").
fn is_value(t: &str) -> bool {
    is_blank_marker(t)
        || parse_quantity(t, Decimal::Point).is_some()
        || parse_range(t, Decimal::Point).is_some()
}

/// A unit alone ("(g)", "mg", "°C"): a row of them is a units row, not sub-headers.
fn is_unit(t: &str) -> bool {
    parse_unit(
        t.trim()
            .trim_start_matches(['(', '['])
            .trim_end_matches([')', ']']),
    )
    .is_some()
}

/// The columns of `upper` and `lower` read as one two-row header, or `None` when `lower` is not
/// a row of sub-headers under `upper`: it must follow directly, both must hold only text (no
/// value, not only units), the upper row at least two cells, and at least one group name must
/// stand over two or more sub-headers. Where the workbook says which cells of the upper row
/// are merged (`merges`), a group name stands over exactly its merged columns; else over the
/// sub-headers under it and under the blank cells to its right.
pub fn combine(upper: &RawRow, lower: &RawRow, merges: &[Merge]) -> Option<Vec<GroupedColumn>> {
    if lower.index != upper.index + 1 {
        return None;
    }
    let up = texts(upper)?;
    let low = texts(lower)?;
    if up.len() < 2 || low.len() < 2 || low.iter().any(|(_, t)| is_value(t)) {
        return None;
    }
    if low.iter().all(|(_, t)| is_unit(t)) || up.iter().any(|(_, t)| is_value(t)) {
        return None;
    }
    let mut cols: Vec<u32> = up.iter().chain(&low).map(|(c, _)| *c).collect();
    cols.sort_unstable();
    cols.dedup();
    let merged: Vec<&Merge> = merges.iter().filter(|m| m.row == upper.index).collect();
    let carried = if merged.is_empty() {
        carried_right(&cols, &up, &low)
    } else {
        carried_by_merges(&merged, &up)
    };
    let mut spans = false;
    let out = cols
        .into_iter()
        .map(|c| {
            let (u, l) = (get(&up, c), get(&low, c));
            let parent = u.or_else(|| {
                let name = carried.get(&c).cloned();
                spans |= name.is_some() && l.is_some();
                name
            });
            let (parent, child) = match (parent, l) {
                // a lower cell under no group name is a header of its own
                (None, c) => (c, None),
                pc => pc,
            };
            GroupedColumn {
                index: c,
                parent,
                child,
            }
        })
        .collect();
    spans.then_some(out)
}

fn get(v: &[(u32, String)], c: u32) -> Option<String> {
    v.iter().find(|(x, _)| *x == c).map(|(_, t)| t.clone())
}

/// The blank upper cells a group name stands over, by column: those to its right, as far as
/// each has a sub-header, starting from a group name that has one itself.
fn carried_right(
    cols: &[u32],
    up: &[(u32, String)],
    low: &[(u32, String)],
) -> BTreeMap<u32, String> {
    let mut out = BTreeMap::new();
    // the group name carried right, and the last column it stands over
    let mut group: Option<(String, u32)> = None;
    for &c in cols {
        match (get(up, c), get(low, c)) {
            (Some(u), Some(_)) => group = Some((u, c)),
            (Some(_), None) => group = None,
            (None, l) => match group.take() {
                Some((name, last)) if last + 1 == c && l.is_some() => {
                    out.insert(c, name.clone());
                    group = Some((name, c));
                }
                _ => {}
            },
        }
    }
    out
}

/// The upper cells a merged group name covers, by column.
fn carried_by_merges(merged: &[&Merge], up: &[(u32, String)]) -> BTreeMap<u32, String> {
    let mut out = BTreeMap::new();
    for m in merged {
        if let Some(name) = get(up, m.first) {
            for c in m.first + 1..=m.last {
                out.insert(c, name.clone());
            }
        }
    }
    out
}

#[cfg(test)]
mod tests {
    use super::super::cells::sheet_of as sheet;
    use super::super::headers::ColumnOverrides;
    use super::super::table::{locate, student_rows};
    use super::super::values::Unit;
    use super::*;
    use crate::fields::Field;
    use proptest::prelude::*;

    fn row(index: u32, cells: &[(u32, &str)]) -> RawRow {
        RawRow {
            index,
            cells: cells
                .iter()
                .map(|(c, t)| (*c, Cell::Text((*t).to_string())))
                .collect(),
        }
    }

    #[test]
    fn group_names_stand_over_their_sub_headers() {
        let upper = row(
            0,
            &[
                (0, "Student ID"),
                (1, "Mass (g)"),
                (3, "Melting range (°C)"),
                (5, "Comments"),
            ],
        );
        let lower = row(
            1,
            &[(1, "Crude"), (2, "Recovered"), (3, "Start"), (4, "End")],
        );
        let cols = combine(&upper, &lower, &[]).unwrap();
        let shown: Vec<String> = cols.iter().map(GroupedColumn::text).collect();
        assert_eq!(
            shown,
            [
                "Student ID",
                "Mass (g) / Crude",
                "Mass (g) / Recovered",
                "Melting range (°C) / Start",
                "Melting range (°C) / End",
                "Comments"
            ]
        );
        let h = cols[2].parsed();
        assert_eq!(h.words, ["mass", "recovered"]);
        assert_eq!(h.unit, Some(super::super::values::Unit::Mass(1.0)));
    }

    #[test]
    fn rows_that_are_not_sub_headers() {
        let upper = row(0, &[(0, "Mass (g)"), (2, "Melting range")]);
        // a student row, a units row, a row not directly under, no group over two columns
        for lower in [
            row(1, &[(0, "3.02"), (1, "2.31"), (2, "121-122")]),
            row(1, &[(0, "(g)"), (1, "mg"), (2, "°C")]),
            row(2, &[(0, "Crude"), (1, "Recovered")]),
        ] {
            assert_eq!(combine(&upper, &lower, &[]), None, "{lower:?}");
        }
        let full = row(0, &[(0, "ID"), (1, "Crude (g)"), (2, "Recovered (g)")]);
        assert_eq!(
            combine(&full, &row(1, &[(0, "s1"), (1, "Ann"), (2, "absent")]), &[]),
            None,
            "a full header row spans nothing"
        );
    }

    /// A two-row header as class sheets keep it (common practice: merged group names over
    /// sub-headers); the sub-header row is not a student.
    #[test]
    fn a_two_row_header_is_read_as_one_header_a_column() {
        let s = sheet(&[
            &["Recrystallization, section 3"],
            &[
                "Student ID",
                "Mass (g)",
                "",
                "Melting range (°C)",
                "",
                "Comments",
            ],
            &["", "Crude", "Recovered", "Start", "End"],
            &["s1", "3.0", "2.0", "120.5", "121.5", "dropped course"],
        ]);
        let layout = locate(&s, &ColumnOverrides::default()).unwrap();
        assert_eq!((layout.header_row, layout.sub_header_row), (2, Some(3)));
        let fields: Vec<Option<Field>> = layout.columns.iter().map(|c| c.field).collect();
        assert_eq!(
            fields,
            [
                Some(Field::StudentId),
                Some(Field::CrudeMass),
                Some(Field::RecoveredMass),
                Some(Field::MpOnset),
                Some(Field::MpClear),
                Some(Field::Notes)
            ]
        );
        assert_eq!(layout.columns[3].header, "Melting range (°C) / Start");
        assert_eq!(layout.columns[5].header, "Comments");
        assert_eq!(layout.columns[1].unit, Some(Unit::Mass(1.0)));
        let rows = student_rows(&s, &layout);
        assert_eq!(rows.iter().map(|r| r.index + 1).collect::<Vec<_>>(), [4]);
    }

    #[test]
    fn a_group_name_that_adds_nothing_leaves_the_sub_header_its_meaning() {
        let s = sheet(&[
            &["ID", "Crude mass (g)", "Recovered mass (g)", "Trial 1", ""],
            &["", "", "", "Onset", "Clear"],
            &["s1", "3.0", "2.0", "120.5", "121.5"],
        ]);
        let layout = locate(&s, &ColumnOverrides::default()).unwrap();
        assert_eq!(
            layout.column(Field::MpOnset).unwrap().header,
            "Trial 1 / Onset"
        );
        assert_eq!(
            layout.column(Field::MpClear).unwrap().header,
            "Trial 1 / Clear"
        );
    }

    /// From a trial: "Mass (g)" merged over "Crude" and "Recovered", the melting range one
    /// column: as many fields as the upper row alone names with "Mass (g)" ambiguous, but the
    /// two rows together name both masses for certain.
    #[test]
    fn a_grouped_header_that_settles_an_ambiguity_is_read() {
        let s = sheet(&[
            &["ID", "Name", "Mass (g)", "", "% Recovery", "MP range (°C)"],
            &["", "", "Crude", "Recovered"],
            &["s1", "Ann", "3.0", "2.0", "66.7", "120-121"],
        ]);
        let layout = locate(&s, &ColumnOverrides::default()).unwrap();
        assert_eq!(layout.sub_header_row, Some(2));
        assert_eq!(layout.column(Field::CrudeMass).unwrap().letter, "C");
        assert_eq!(layout.column(Field::RecoveredMass).unwrap().letter, "D");
    }

    /// A merged group name stands over exactly its merged columns, a sub-header left blank
    /// inside it too; without merges the blank breaks the group.
    #[test]
    fn merged_cells_say_how_far_a_group_name_stands() {
        let upper = row(
            0,
            &[
                (0, "ID"),
                (1, "Name"),
                (2, "Melting range (°C)"),
                (5, "Notes"),
            ],
        );
        let lower = row(1, &[(2, "Start"), (4, "End")]);
        let merged = [Merge {
            row: 0,
            first: 2,
            last: 4,
        }];
        let cols = combine(&upper, &lower, &merged).unwrap();
        let shown: Vec<String> = cols.iter().map(GroupedColumn::text).collect();
        assert_eq!(
            shown,
            [
                "ID",
                "Name",
                "Melting range (°C) / Start",
                "Melting range (°C) / End",
                "Notes"
            ]
        );
        // the same rows without the merge: "End" stands under no group name
        assert_eq!(combine(&upper, &lower, &[]), None);
    }

    proptest! {
        #[test]
        fn no_rows_panic(a in proptest::collection::vec((0u32..12, "\\PC{0,12}"), 0..8),
                         b in proptest::collection::vec((0u32..12, "\\PC{0,12}"), 0..8)) {
            let mut a = a; a.sort_by_key(|x| x.0); a.dedup_by_key(|x| x.0);
            let mut b = b; b.sort_by_key(|x| x.0); b.dedup_by_key(|x| x.0);
            let ra = RawRow { index: 0, cells: a.into_iter().map(|(c, t)| (c, Cell::Text(t))).collect() };
            let rb = RawRow { index: 1, cells: b.into_iter().map(|(c, t)| (c, Cell::Text(t))).collect() };
            if let Some(cols) = combine(&ra, &rb, &[]) {
                // every column of either row is one column of the header, in order
                let idx: Vec<u32> = cols.iter().map(|c| c.index).collect();
                let mut sorted = idx.clone(); sorted.sort_unstable(); sorted.dedup();
                prop_assert_eq!(idx, sorted);
            }
        }
    }
}
