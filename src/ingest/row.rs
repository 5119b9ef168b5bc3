//! One student row to a `Submission`: each mapped cell read with its column's unit, converted
//! to grams, millilitres and degrees Celsius; a cell that cannot be read is named, not guessed.

use super::cells::{cell_ref, format_number, percent_of_fraction, Cell, RawRow};
use super::experiment::Trials;
use super::range::parse_range;
use super::submission::{Submission, Unreadable};
use super::table::{Column, Layout};
use super::values::{is_blank_marker, parse_quantity, Decimal, TempUnit, Unit};
use crate::fields::{Field, Quantity};

/// Where the rows being read come from.
pub struct Origin<'a> {
    pub source: &'a str,
    pub sheet: Option<&'a str>,
    /// Section used when the sheet has no section column: the sheet name or the file stem.
    pub default_section: &'a str,
    /// Assistant used when the row has no assistant cell: from the mapping or the title rows.
    pub default_assistant: Option<&'a str>,
    pub decimal: Decimal,
    /// The header texts and title rows of the sheet's table, kept with each row.
    pub headers: std::sync::Arc<super::submission::SheetHead>,
}

/// What kind of quantity a numeric field holds.
#[derive(Clone, Copy)]
enum Kind {
    Mass,
    Volume,
    Temperature,
    Percent,
}

/// How a field's values are read: a count of days as a percentage is (a plain number).
fn kind(field: Field) -> Kind {
    match field.quantity() {
        Quantity::Mass => Kind::Mass,
        Quantity::Volume => Kind::Volume,
        Quantity::Temperature => Kind::Temperature,
        Quantity::Percent | Quantity::Days => Kind::Percent,
    }
}

/// Converts a value in `unit` (or the field's default unit) to the field's base unit.
fn convert(kind: Kind, value: f64, unit: Option<Unit>) -> Result<f64, Unit> {
    match (kind, unit) {
        (Kind::Mass | Kind::Volume | Kind::Percent, None) => Ok(value),
        (Kind::Temperature, None) => Ok(value),
        (Kind::Mass, Some(Unit::Mass(f))) | (Kind::Volume, Some(Unit::Volume(f))) => Ok(value * f),
        (Kind::Temperature, Some(Unit::Temperature(t))) => Ok(t.to_celsius(value)),
        (Kind::Percent, Some(Unit::Percent)) => Ok(value),
        (_, Some(other)) => Err(other),
    }
}

fn describe_kind(kind: Kind) -> &'static str {
    match kind {
        Kind::Mass => "a mass",
        Kind::Volume => "a volume",
        Kind::Temperature => "a temperature",
        Kind::Percent => "a percentage",
    }
}

fn found_instead(cell: &Cell) -> String {
    match cell {
        Cell::Error(e) => format!("the error {e}"),
        Cell::Date(_) => "a date".into(),
        Cell::Bool(b) => format!("the value {}", if *b { "TRUE" } else { "FALSE" }),
        Cell::Percent(v) if !percent_of_fraction(*v).is_finite() => {
            format!("the fraction {v:e} shown as a percentage")
        }
        Cell::Percent(v) => format!("the percentage {}", format_number(percent_of_fraction(*v))),
        Cell::Text(t) => format!("the text \"{}\"", t.trim()),
        Cell::Number(v) => format!("the number {v}"),
        Cell::Empty => "nothing".into(),
    }
}

/// Reads a numeric cell. `Ok(None)` for an empty cell; a value no double holds (1e308 shown as
/// a percentage, a mass in kg past the largest double) is unreadable, never infinity.
fn read_number(cell: &Cell, column: &Column, decimal: Decimal) -> Result<Option<f64>, String> {
    match read_number_as_is(cell, column, decimal)? {
        Some(v) if !v.is_finite() => Err(format!(
            "{}, too large to be a measurement",
            found_instead(cell)
        )),
        v => Ok(v),
    }
}

fn read_number_as_is(
    cell: &Cell,
    column: &Column,
    decimal: Decimal,
) -> Result<Option<f64>, String> {
    let field = column.field.unwrap_or(Field::ReportedRecovery);
    let k = kind(field);
    let header_unit = column.unit;
    let (value, unit) = match cell {
        Cell::Empty => return Ok(None),
        // a cell shown as a percentage is one, in every use: 0.728 shown as 72.8 % is 72.8
        Cell::Percent(v) if matches!(k, Kind::Percent) => return Ok(Some(percent_of_fraction(*v))),
        Cell::Percent(_) => {
            return Err(format!(
                "{} where {} belongs",
                found_instead(cell),
                describe_kind(k)
            ))
        }
        Cell::Number(v) => (*v, header_unit),
        Cell::Text(t) if is_blank_marker(t) => return Ok(None),
        // "3 days", "2 d": a count of days carries its word
        Cell::Text(t) if field == Field::LateDays => {
            let n = t
                .trim()
                .trim_end_matches(|c: char| c.is_alphabetic() || c == '.');
            return match parse_quantity(n.trim(), decimal) {
                Some(q) if q.unit.is_none() && q.value.is_finite() => Ok(Some(q.value.max(0.0))),
                _ => Err(found_instead(cell)),
            };
        }
        Cell::Text(t) => match parse_quantity(t, decimal) {
            Some(q) => (q.value, q.unit.or(header_unit)),
            None => return Err(found_instead(cell)),
        },
        other => return Err(found_instead(other)),
    };
    let v = convert(k, value, unit)
        .map_err(|u| format!("{} where {} belongs", u.describe(), describe_kind(k)))?;
    physical(k, v).map(Some)
}

/// Refuses a value no measurement can give: a temperature below absolute zero, a negative
/// volume. (A mass of zero or less is read, and flagged `nonpositive-mass`.)
fn physical(kind: Kind, v: f64) -> Result<f64, String> {
    match kind {
        Kind::Temperature if v < -273.15 => {
            Err(format!("{v} °C, below absolute zero (-273.15 °C)"))
        }
        Kind::Volume if v < 0.0 => Err(format!("a negative volume ({v} mL)")),
        _ => Ok(v),
    }
}

/// Reads a melting-range cell into (onset, clear) in °C; `single` when one value was written.
fn read_range(
    cell: &Cell,
    column: &Column,
    decimal: Decimal,
) -> Result<Option<(f64, f64, bool, bool)>, String> {
    let header_scale = match column.unit {
        Some(Unit::Temperature(t)) => t,
        None => TempUnit::Celsius,
        Some(other) => {
            return Err(format!(
                "a header unit of {} where a temperature belongs",
                other.describe()
            ))
        }
    };
    match cell {
        Cell::Empty => Ok(None),
        Cell::Number(v) => {
            let c = physical(Kind::Temperature, header_scale.to_celsius(*v))?;
            Ok(Some((c, c, true, false)))
        }
        Cell::Text(t) if is_blank_marker(t) => Ok(None),
        Cell::Text(t) => match parse_range(t, decimal) {
            Some(r) => {
                let scale = r.unit.unwrap_or(header_scale);
                let onset = physical(Kind::Temperature, scale.to_celsius(r.onset))?;
                let clear = physical(Kind::Temperature, scale.to_celsius(r.clear))?;
                Ok(Some((onset, clear, r.single, r.completed)))
            }
            None => Err(found_instead(cell)),
        },
        other => Err(found_instead(other)),
    }
}

fn set_text(sub: &mut Submission, field: Field, text: Option<String>) {
    let slot = match field {
        Field::StudentId => &mut sub.student_id,
        Field::StudentName => &mut sub.student_name,
        Field::Section => {
            return if let Some(t) = text {
                sub.section = t;
            }
        }
        Field::Bench => &mut sub.bench,
        Field::Apparatus => &mut sub.apparatus,
        Field::Assistant => {
            return if let Some(t) = text {
                sub.assistant = Some(t);
            }
        }
        Field::Compound => &mut sub.compound,
        Field::Solvent => &mut sub.solvent,
        Field::Status => &mut sub.status,
        Field::Notes => &mut sub.remarks,
        Field::UnknownCode => &mut sub.unknown_code,
        Field::IdentifiedAs => &mut sub.identified_as,
        _ => return,
    };
    *slot = text;
}

/// A status cell as a word: under a yes/no header ("Excused?", "Withdrawn", "Abgemeldet?"),
/// "yes" ("ja", "sí", "oui", "sim") is the header's word and "no" nothing.
fn status_text(header: &str, text: Option<String>) -> Option<String> {
    let t = text?;
    let answer = super::vocabulary::fold(t.trim().trim_end_matches('.'));
    let lower = header.to_lowercase();
    let v = super::vocabulary::current();
    let asks = ["excused", "withdrawn", "exempt", "absent", "dropped"]
        .into_iter()
        .find(|w| lower.contains(w))
        .map(str::to_string)
        .or_else(|| {
            super::vocabulary::fold(header)
                .split(|c: char| !c.is_alphanumeric())
                .find(|w| v.status(w).is_some())
                .map(str::to_string)
        });
    match (asks, answer.as_str()) {
        (
            Some(w),
            "yes" | "y" | "true" | "x" | "✓" | "✔" | "1" | "ja" | "j" | "si" | "oui" | "sim",
        ) => Some(w),
        (Some(_), "no" | "n" | "false" | "0" | "-" | "nein" | "non" | "nao") => None,
        _ => Some(t),
    }
}

/// One name from name parts: "Last, First", or whichever part there is; a whole-name column
/// wins where there is one.
fn join_name(sub: &mut Submission, last: Option<String>, first: Option<String>) {
    if sub.student_name.is_some() {
        return;
    }
    sub.student_name = match (last, first) {
        (Some(l), Some(f)) => Some(format!("{l}, {f}")),
        (l, f) => l.or(f),
    };
}

fn set_number(sub: &mut Submission, field: Field, value: Option<f64>) {
    let slot = match field {
        Field::CrudeMass => &mut sub.crude_mass_g,
        Field::RecoveredMass => &mut sub.recovered_mass_g,
        Field::SolventVolume => &mut sub.solvent_volume_ml,
        Field::MpOnset => &mut sub.mp_onset_c,
        Field::MpClear => &mut sub.mp_clear_c,
        Field::ReportedRecovery => &mut sub.reported_recovery_pct,
        Field::LateDays => &mut sub.late_days,
        Field::CrudeMpOnset => &mut sub.crude_mp_onset_c,
        Field::CrudeMpClear => &mut sub.crude_mp_clear_c,
        Field::CrudeTare => &mut sub.crude_tare_g,
        Field::CrudeGross => &mut sub.crude_gross_g,
        Field::RecoveredTare => &mut sub.recovered_tare_g,
        Field::RecoveredGross => &mut sub.recovered_gross_g,
        Field::MixedMpOnset => &mut sub.mixed_mp_onset_c,
        Field::MixedMpClear => &mut sub.mixed_mp_clear_c,
        _ => return,
    };
    *slot = value;
}

/// Reads a numeric cell into its field (a trial's value or a shared tare into `trials`).
fn read_number_into(
    sub: &mut Submission,
    trials: &mut Trials,
    cell: &Cell,
    column: &Column,
    decimal: Decimal,
) -> Result<(), String> {
    let field = column.field.unwrap_or(Field::ReportedRecovery);
    if field == Field::ReportedRecovery {
        // a value shown with its percent sign is a percentage as it stands
        sub.reported_marked = match cell {
            Cell::Percent(_) => true,
            Cell::Text(t) => t.contains('%'),
            _ => false,
        };
    }
    read_number(cell, column, decimal).map(|v| {
        if !trials.take(field, v) {
            set_number(sub, field, v);
        }
    })
}

/// A row's submission before its cells are read: where it comes from, its defaults and its
/// original cells.
fn blank_submission(row: &RawRow, layout: &Layout, origin: &Origin) -> Submission {
    Submission {
        source: origin.source.to_string(),
        sheet: origin.sheet.map(str::to_string),
        row: row.index + 1,
        section: origin.default_section.to_string(),
        assistant: origin.default_assistant.map(str::to_string),
        original: layout
            .columns
            .iter()
            .map(|c| row.get(c.index).clone())
            .collect(),
        original_headers: Some(origin.headers.clone()),
        no_column: layout.absent.clone(),
        ..Submission::default()
    }
}

/// Reads one student row.
pub fn read_row(row: &RawRow, layout: &Layout, origin: &Origin) -> Submission {
    let mut sub = blank_submission(row, layout, origin);
    let (mut last, mut first) = (None, None);
    let mut trials = Trials::default();
    for column in &layout.columns {
        let Some(field) = column.field else { continue };
        let cell = row.get(column.index);
        let at = || cell_ref(origin.sheet, row.index, column.index);
        let decimal = column.decimal.unwrap_or(origin.decimal);
        let read = if field.is_range() {
            read_range_into(&mut sub, &mut trials, cell, column, decimal, &at)
        } else if field.is_numeric() {
            read_number_into(&mut sub, &mut trials, cell, column, decimal)
        } else if let Cell::Error(_) = cell {
            Err(found_instead(cell))
        } else {
            let text = cell.as_text();
            if text.as_deref().is_some_and(|t| t.contains('\u{fffd}')) {
                sub.notes.push(format!(
                    "{}: holds bytes that are not valid text (shown as \u{fffd})",
                    at()
                ));
            }
            match field {
                Field::LastName => last = text,
                Field::FirstName => first = text,
                Field::Status => sub.status = status_text(&column.header, text),
                _ => set_text(&mut sub, field, text),
            }
            Ok(())
        };
        if let Err(found) = read {
            sub.unreadable.push(Unreadable {
                field,
                cell: at(),
                found,
            });
        }
    }
    join_name(&mut sub, last, first);
    trials.finish(&mut sub);
    one_reading_of_two(&mut sub, layout);
    sub
}

/// Separate onset and clear-point columns with only one of them filled: one temperature, as a
/// single value in a range column is (the clear point, flagged `single-reading`), not a
/// missing value.
fn one_reading_of_two(sub: &mut Submission, layout: &Layout) {
    let two = layout.column(Field::MpOnset).is_some() && layout.column(Field::MpClear).is_some();
    let unread = sub.is_unreadable(Field::MpOnset) || sub.is_unreadable(Field::MpClear);
    if !two || unread {
        return;
    }
    if let (Some(t), None) | (None, Some(t)) = (sub.mp_onset_c, sub.mp_clear_c) {
        sub.mp_onset_c = Some(t);
        sub.mp_clear_c = Some(t);
        sub.single_reading = true;
        sub.notes.push(format!(
            "one melting temperature ({t:.1} °C) given of onset and clear point; taken as both"
        ));
    }
}

/// Reads a melting-range cell into the submission's onset and clear point (the crude
/// product's, the mixture's, or a trial's, by the column's field).
fn read_range_into(
    sub: &mut Submission,
    trials: &mut Trials,
    cell: &Cell,
    column: &Column,
    decimal: Decimal,
    at: &dyn Fn() -> String,
) -> Result<(), String> {
    let read = read_range(cell, column, decimal)?;
    let field = column.field.unwrap_or(Field::MpRange);
    let (onset_slot, clear_slot) = match field {
        Field::CrudeMpRange => (&mut sub.crude_mp_onset_c, &mut sub.crude_mp_clear_c),
        Field::MixedMpRange => (&mut sub.mixed_mp_onset_c, &mut sub.mixed_mp_clear_c),
        Field::MpTrialRange => {
            trials.push_range(read.map(|(o, c, _, _)| (o, c)));
            return Ok(());
        }
        _ => (&mut sub.mp_onset_c, &mut sub.mp_clear_c),
    };
    let Some((onset, clear, single, completed)) = read else {
        return Ok(());
    };
    *onset_slot = Some(onset);
    *clear_slot = Some(clear);
    if field != Field::MpRange {
        return Ok(());
    }
    if completed {
        sub.notes.push(format!(
            "{}: \"{}\" read as {onset:.1}-{clear:.1} °C (the clear point written by its last digits)",
            at(),
            cell.as_text().unwrap_or_default()
        ));
    }
    if single {
        sub.single_reading = true;
        sub.notes.push(format!(
            "{}: one melting value given; taken as both onset and clear point",
            at()
        ));
    }
    Ok(())
}

#[cfg(test)]
mod tests {
    use super::super::cells::{rows_from_cells, RawSheet};
    use super::super::headers::ColumnOverrides;
    use super::super::table::locate;
    use super::*;
    use approx::assert_relative_eq;

    fn one_row(headers: &[&str], cells: Vec<Cell>) -> Submission {
        let mut all: Vec<(u32, u32, Cell)> = headers
            .iter()
            .enumerate()
            .map(|(c, h)| (0, c as u32, Cell::Text(h.to_string())))
            .collect();
        all.extend(cells.into_iter().enumerate().map(|(c, v)| (1, c as u32, v)));
        let sheet = RawSheet {
            name: Some("Sec 2".into()),
            rows: rows_from_cells(all),
            merges: Vec::new(),
        };
        let layout = locate(&sheet, &ColumnOverrides::default()).unwrap();
        let origin = Origin {
            source: "x.xlsx",
            sheet: Some("Sec 2"),
            default_section: "Sec 2",
            default_assistant: None,
            decimal: Decimal::Point,
            headers: std::sync::Arc::new(super::super::submission::SheetHead {
                headers: headers
                    .iter()
                    .map(std::string::ToString::to_string)
                    .collect(),
                ..Default::default()
            }),
        };
        read_row(&sheet.rows[1], &layout, &origin)
    }

    #[test]
    fn units_in_headers_and_cells_convert() {
        let s = one_row(
            &[
                "Student #",
                "Crude (mg)",
                "Mass recovered / g",
                "MP start (°F)",
                "MP end (K)",
            ],
            vec![
                Cell::Number(20231234.0),
                Cell::Number(3020.0),
                Cell::Text("1850 mg".into()),
                Cell::Number(248.0),
                Cell::Text("395.15".into()),
            ],
        );
        assert_eq!(s.student_id.as_deref(), Some("20231234"));
        assert_relative_eq!(s.crude_mass_g.unwrap(), 3.02, epsilon = 1e-12);
        assert_relative_eq!(s.recovered_mass_g.unwrap(), 1.85, epsilon = 1e-12);
        // (248 - 32) x 5/9 = 120 (hand-worked)
        assert_relative_eq!(s.mp_onset_c.unwrap(), 120.0, epsilon = 1e-12);
        assert_relative_eq!(s.mp_clear_c.unwrap(), 122.0, epsilon = 1e-9);
        assert_eq!(s.section, "Sec 2");
    }

    #[test]
    fn names_in_parts_make_one_name_and_percent_cells_are_percentages() {
        let s = one_row(
            &[
                "Surname",
                "Given name",
                "ID",
                "Crude mass (g)",
                "Recovered mass (g)",
                "MP",
                "% recovery",
                "Status",
                "TA notes",
            ],
            vec![
                Cell::Text("Núñez".into()),
                Cell::Text("Pilar".into()),
                Cell::Text("S1".into()),
                Cell::Number(2.39),
                Cell::Number(1.655),
                Cell::Text("119.8-121.5".into()),
                Cell::Percent(0.692),
                Cell::Text("excused".into()),
                Cell::Text("fire alarm during drying".into()),
            ],
        );
        assert_eq!(s.student_name.as_deref(), Some("Núñez, Pilar"));
        // 0.692 shown as 69.2 % is 69.2, exactly as typed
        assert_eq!(s.reported_recovery_pct, Some(69.2));
        assert_eq!(s.status.as_deref(), Some("excused"));
        assert_eq!(s.remarks.as_deref(), Some("fire alarm during drying"));
        assert_eq!(s.assistant, None, "a notes column is not the assistant");
    }

    #[test]
    fn unreadable_cells_are_named() {
        let s = one_row(
            &[
                "ID",
                "Crude mass (g)",
                "Recovered mass (g)",
                "m.p. range (°C)",
            ],
            vec![
                Cell::Text("s9".into()),
                Cell::Error("#DIV/0!".into()),
                Cell::Date("2026-10-03".into()),
                Cell::Text("melted".into()),
            ],
        );
        let cells: Vec<&str> = s.unreadable.iter().map(|u| u.cell.as_str()).collect();
        assert_eq!(cells, vec!["'Sec 2'!B2", "'Sec 2'!C2", "'Sec 2'!D2"]);
        assert_eq!(s.unreadable[0].found, "the error #DIV/0!");
        assert_eq!(s.crude_mass_g, None);
    }

    #[test]
    fn single_value_and_wrong_unit() {
        let s = one_row(
            &["ID", "Crude mass (g)", "Recovered mass (g)", "MP (°C)"],
            vec![
                Cell::Text("s1".into()),
                Cell::Text("25 mL".into()),
                Cell::Text("n/a".into()),
                Cell::Number(122.0),
            ],
        );
        assert_eq!((s.mp_onset_c, s.mp_clear_c), (Some(122.0), Some(122.0)));
        assert_eq!(s.notes.len(), 1);
        assert_eq!(s.unreadable[0].found, "a volume where a mass belongs");
        assert_eq!(s.recovered_mass_g, None);
        assert!(s.unreadable.iter().all(|u| u.field != Field::RecoveredMass));
    }

    #[test]
    fn readings_no_measurement_can_give_are_unreadable() {
        let s = one_row(
            &[
                "ID",
                "Crude mass (g)",
                "Recovered mass (g)",
                "MP (K)",
                "Water (mL)",
            ],
            vec![
                Cell::Text("s1".into()),
                Cell::Number(3.0),
                Cell::Number(2.0),
                Cell::Number(-5.0),
                Cell::Number(-20.0),
            ],
        );
        let found: Vec<&str> = s.unreadable.iter().map(|u| u.found.as_str()).collect();
        assert_eq!(s.unreadable.len(), 2, "{found:?}");
        assert!(found[0].contains("below absolute zero"), "{found:?}");
        assert!(found[1].contains("negative volume"), "{found:?}");
        assert_eq!((s.mp_clear_c, s.solvent_volume_ml), (None, None));
    }

    #[test]
    fn a_yes_under_a_status_header_is_the_headers_word_in_any_language() {
        for (header, answer, want) in [
            ("Excused?", "yes", Some("excused")),
            ("Abgemeldet?", "ja", Some("abgemeldet")),
            ("Abgemeldet?", "nein", None),
            ("¿Baja?", "sí", Some("baja")),
        ] {
            let s = one_row(
                &["ID", "Crude mass (g)", "Recovered mass (g)", "MP", header],
                vec![
                    Cell::Text("s1".into()),
                    Cell::Number(3.0),
                    Cell::Number(2.0),
                    Cell::Text("121-122".into()),
                    Cell::Text(answer.into()),
                ],
            );
            assert_eq!(s.status.as_deref(), want, "{header} {answer}");
        }
    }
}
