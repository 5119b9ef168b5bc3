//! Unit tests of `table.rs`: finding the header row and resolving its columns.

use super::super::cells::sheet_of as sheet;
use super::*;

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

/// "Nom" beside "Prénom", "Nombre" beside "Apellidos": the name column holds the other part.
#[test]
fn a_name_column_beside_one_part_of_the_name_is_the_other_part() {
    for (headers, last, first) in [
        (
            [
                "Numéro étudiant",
                "Nom",
                "Prénom",
                "Masse brute (g)",
                "Point de fusion",
            ],
            "B",
            "C",
        ),
        (
            [
                "Matrícula",
                "Nombre",
                "Apellidos",
                "Masa cruda (g)",
                "Punto de fusión",
            ],
            "C",
            "B",
        ),
    ] {
        let s = sheet(&[&headers]);
        let layout = locate(&s, &ColumnOverrides::default()).unwrap();
        assert_eq!(
            layout.column(Field::LastName).unwrap().letter,
            last,
            "{headers:?}"
        );
        assert_eq!(
            layout.column(Field::FirstName).unwrap().letter,
            first,
            "{headers:?}"
        );
        assert!(layout.column(Field::StudentName).is_none());
    }
}

/// From a trial: "column P" = "notes" did nothing when P had no header text.
#[test]
fn a_column_mapped_by_letter_needs_no_header_text() {
    let s = sheet(&[
        &["ID", "Crude mass (g)", "Recovered mass (g)", "MP range"],
        &["s1", "3.0", "2.0", "120-121", "dropped course"],
    ]);
    let pairs = [("column E".to_string(), "notes".to_string())];
    let o = ColumnOverrides::from_pairs(pairs.iter().map(|(a, b)| (a, b))).unwrap();
    let layout = locate(&s, &o).unwrap();
    let notes = layout.column(Field::Notes).unwrap();
    assert_eq!((notes.letter.as_str(), notes.explicit), ("E", true));
    assert_eq!(letter_index("A"), Some(0));
    assert_eq!(letter_index("AA"), Some(26));
    assert_eq!(letter_index("XFD"), Some(16_383));
    assert_eq!(letter_index("XFE"), None);
}
