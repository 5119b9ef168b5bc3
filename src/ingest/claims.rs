//! Which column holds what, beyond the header words: a range column against separate onset and
//! clear-point columns (a field mapped by hand belongs to that column alone), and the cells and
//! units that contradict a field, so that a suggested mapping never names such a column.

use super::cells::{Cell, RawRow, RawSheet};
use super::headers::{classify, parse_header, HeaderMeaning};
use super::range;
use super::table::Column;
use super::values::{self, Unit};
use crate::fields::Field;

/// Whether a column's cells or header unit contradict a field: text where a number belongs,
/// a unit of another quantity (a volume for a mass), a weighing of a container.
pub(super) fn contradicts(c: &Column, f: Field) -> bool {
    let numeric = f.is_numeric() || f.is_range() || f.is_required() && f != Field::StudentId;
    let unit_clash = match (c.unit, f) {
        (Some(u), Field::CrudeMass | Field::RecoveredMass) => !matches!(u, Unit::Mass(_)),
        (Some(u), _) if f.is_range() || matches!(f, Field::MpOnset | Field::MpClear) => {
            !matches!(u, Unit::Temperature(_))
        }
        _ => false,
    };
    let header = parse_header(&c.header);
    let weighing = matches!(classify(&header), HeaderMeaning::NotOwn(_));
    numeric && c.text_cells || unit_clash || weighing
}

/// Marks the columns whose filled cells (of the first 30 rows under the header) are mostly text
/// that reads as no number.
pub(super) fn mark_text_columns(sheet: &RawSheet, header_pos: usize, columns: &mut [Column]) {
    let rows: Vec<&RawRow> = sheet.rows.iter().skip(header_pos + 1).take(30).collect();
    for c in columns.iter_mut() {
        let (mut text, mut filled) = (0, 0);
        for r in &rows {
            let cell = r.get(c.index);
            if cell.is_empty() {
                continue;
            }
            filled += 1;
            if let Cell::Text(t) = cell {
                let number = values::parse_quantity(t, values::Decimal::Point).is_some()
                    || values::parse_quantity(t, values::Decimal::Comma).is_some()
                    || range::parse_range(t, values::Decimal::Point).is_some();
                text += usize::from(!number);
            }
        }
        c.text_cells = filled > 0 && text * 2 > filled;
    }
}

/// A range column beside separate onset and clear-point columns: the pair is read, unless the
/// range column alone was mapped by hand (a field mapped by hand belongs to that column alone).
pub(super) fn range_or_pair(columns: &mut [Column], range: Field, onset: Field, clear: Field) {
    let has = |f: Field| {
        columns
            .iter()
            .find(|c| c.field == Some(f))
            .map(|c| c.explicit)
    };
    let (Some(range_explicit), Some(o), Some(c)) = (has(range), has(onset), has(clear)) else {
        return;
    };
    let range_wins = range_explicit && !o && !c;
    let letter = columns
        .iter()
        .find(|c| c.field == Some(range))
        .map(|c| c.letter.clone())
        .unwrap_or_default();
    for col in columns.iter_mut() {
        if range_wins && (col.field == Some(onset) || col.field == Some(clear)) {
            col.field = None;
            col.note = Some(format!(
                "not used: the {} is mapped explicitly to column {letter}",
                range.label()
            ));
        } else if !range_wins && col.field == Some(range) {
            col.field = None;
            col.note =
                Some("not used: separate onset and clear-point columns are read instead".into());
        }
    }
}
