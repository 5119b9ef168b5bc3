//! A roster (`--roster FILE`): the students enrolled, as a registrar or a learning-management
//! system exports them. Read as a class sheet is read (any format benchgrade reads, title rows,
//! headers by their words, name parts, a mapping), keeping only who each student is: id, name,
//! section and, if given, assistant. The matching against submissions is `assess::roster`'s.

use std::path::Path;

use super::headers::ColumnOverrides;
use super::{read_file, tabulate_as, Event, Problem};
use crate::fields::Field;

/// One enrolled student.
#[derive(Clone, Debug, PartialEq, Eq)]
pub struct Enrolled {
    pub id: String,
    pub name: Option<String>,
    /// The rostered section; `None` where the roster has no section column.
    pub section: Option<String>,
    pub assistant: Option<String>,
    /// Where the roster lists the student ("roster.csv row 4"), for messages.
    pub place: String,
}

/// What reading a roster gave: the students, and the problems met (a sheet with no id column,
/// a row without an id, an id listed twice).
#[derive(Debug, Default)]
pub struct RosterRead {
    pub students: Vec<Enrolled>,
    pub problems: Vec<Problem>,
    /// How each sheet was read, for `check`.
    pub sheets: Vec<super::SheetReport>,
}

/// Reads a roster file: every sheet's rows with an id, in order. A row without an id, and a
/// second row for an id already listed, are problems (not fatal), named by row.
pub fn read(path: &Path, columns: &ColumnOverrides) -> RosterRead {
    let mut out = RosterRead::default();
    let mut events = Vec::new();
    read_file(path, &mut |e| events.push(e));
    let mut seen = std::collections::HashMap::new();
    for event in events {
        match event {
            Event::Sheet(data) => {
                let mut rows = Vec::new();
                match tabulate_as(&data, columns, true, &mut |s| rows.push(s)) {
                    Ok(report) => {
                        let has_section = report.layout.column(Field::Section).is_some();
                        out.sheets.push(report);
                        for s in rows {
                            let place = match &s.sheet {
                                Some(sheet) => format!("{} [{sheet}] row {}", s.source, s.row),
                                None => format!("{} row {}", s.source, s.row),
                            };
                            let note = |message: String| Problem {
                                file: path.display().to_string(),
                                sheet: s.sheet.clone(),
                                message: format!("row {}: {message}", s.row),
                                fatal: false,
                            };
                            let Some(id) = s.student_id.as_deref().map(str::trim) else {
                                out.problems.push(note(
                                    "a roster row without a student id is passed over".into(),
                                ));
                                continue;
                            };
                            // the first listing stays the one named, however often an id recurs
                            if let Some(first) = seen.get(id) {
                                out.problems.push(note(format!(
                                    "a student id listed again (first at {first}); the first listing is used"
                                )));
                                continue;
                            }
                            seen.insert(id.to_string(), place.clone());
                            out.students.push(Enrolled {
                                id: id.to_string(),
                                name: s.student_name.clone(),
                                section: has_section.then(|| s.section.clone()),
                                assistant: s.assistant.clone(),
                                place,
                            });
                        }
                    }
                    Err(p) => out.problems.push(p),
                }
            }
            Event::Problem(p) => out.problems.push(p),
            Event::FileDone(_) => {}
        }
    }
    out
}
