//! Unit tests of `headers.rs`: header text to field, and explicit mappings.

use super::*;
use proptest::prelude::*;

fn field(text: &str) -> HeaderMeaning {
    classify(&parse_header(text))
}

#[test]
fn spellings_from_the_issue() {
    use Field::*;
    let cases = [
        ("Crude product mass (g)", CrudeMass),
        ("Mass recovered / g", RecoveredMass),
        ("m.p. range (°C)", MpRange),
        ("MP start", MpOnset),
        ("MP end", MpClear),
        ("Student #", StudentId),
        ("Student ID", StudentId),
        ("ID", StudentId),
        ("Matrikel ID", StudentId),
        ("Campus ID number", StudentId),
        ("Name", StudentName),
        ("Student", StudentName),
        ("Lab section", Section),
        ("Bench #", Bench),
        ("Station", Bench),
        ("TA", Assistant),
        ("Teaching assistant", Assistant),
        ("Compound", Compound),
        ("Crude (mg)", CrudeMass),
        ("Wt. crude", CrudeMass),
        ("Recovered (g)", RecoveredMass),
        ("Final mass, g", RecoveredMass),
        ("Solvent volume (mL)", SolventVolume),
        ("Vol. water (mL)", SolventVolume),
        ("Solvent", Solvent),
        ("Melting point onset (°F)", MpOnset),
        ("Clear point", MpClear),
        ("Onset", MpOnset),
        ("Melting range", MpRange),
        ("% recovery", ReportedRecovery),
        ("Recovery (%)", ReportedRecovery),
        ("Percent recovery", ReportedRecovery),
        ("MP apparatus", Apparatus),
        ("Mp low (K)", MpOnset),
        ("Mp high (K)", MpClear),
    ];
    for (text, want) in cases {
        assert_eq!(field(text), HeaderMeaning::Field(want), "{text:?}");
    }
}

#[test]
fn units_are_taken_from_the_header() {
    assert_eq!(
        parse_header("Crude product mass (g)").unit,
        Some(Unit::Mass(1.0))
    );
    assert_eq!(
        parse_header("Mass recovered / mg").unit,
        Some(Unit::Mass(0.001))
    );
    assert_eq!(
        parse_header("Crude mass in kg").unit,
        Some(Unit::Mass(1000.0))
    );
    assert_eq!(
        parse_header("MP start [°F]").unit,
        Some(Unit::Temperature(
            super::super::values::TempUnit::Fahrenheit
        ))
    );
}

#[test]
fn a_bare_mass_is_ambiguous() {
    assert_eq!(
        field("Mass (g)"),
        HeaderMeaning::Ambiguous(Field::CrudeMass, Field::RecoveredMass)
    );
}

#[test]
fn unrelated_headers_are_unknown() {
    for t in ["Date", "Signature", ""] {
        assert_eq!(field(t), HeaderMeaning::Unknown, "{t:?}");
    }
}

#[test]
fn headers_are_read_by_meaning() {
    use Field::*;
    for (text, want) in [
        ("TA notes", Notes),
        ("Comments", Notes),
        ("Instructor remarks", Notes),
        ("Status", Status),
        ("Last name", LastName),
        ("Family name", LastName),
        ("Surname", LastName),
        ("First name", FirstName),
        ("Given name", FirstName),
        ("Forename", FirstName),
        ("TA", Assistant),
        ("TA name", Assistant),
    ] {
        assert_eq!(field(text), HeaderMeaning::Field(want), "{text:?}");
    }
    for text in [
        "Partner ID",
        "Lab partner",
        "Literature mp (°C)",
        "Lit. m.p.",
        "Expected mass (g)",
        "Theoretical yield (g)",
        "Reference melting point",
        // a gross weighing that names no product is no product's mass (the experiment's
        // weighings by difference, paired with their tares, are `experiment::classify`'s)
        "Gross mass (g)",
    ] {
        assert!(
            matches!(field(text), HeaderMeaning::NotOwn(_)),
            "{text:?}: {:?}",
            field(text)
        );
    }
}

#[test]
fn explicit_mapping_wins() {
    let pairs = [
        ("Wt A".to_string(), "crude_mass".to_string()),
        ("Mass (g)".to_string(), "ignore".to_string()),
    ];
    let o = ColumnOverrides::from_pairs(pairs.iter().map(|(a, b)| (a, b))).unwrap();
    assert_eq!(
        meaning("wt  a", "A", &o),
        (HeaderMeaning::Field(Field::CrudeMass), true)
    );
    assert_eq!(meaning("Mass (g)", "B", &o), (HeaderMeaning::Ignored, true));
    let bad = [("x".to_string(), "crude".to_string())];
    assert!(ColumnOverrides::from_pairs(bad.iter().map(|(a, b)| (a, b))).is_err());
}

#[test]
fn columns_by_letter_for_one_file_or_sheet() {
    let table: BTreeMap<String, MappingValue> = toml::from_str(
        "\"column C\" = \"crude_mass\"\n[\"two.xlsx [Sheet1]\"]\n\"column D\" = \"recovered_mass\"\n",
    )
    .unwrap();
    let o = ColumnOverrides::from_table(&table).unwrap();
    let here = o.for_sheet("data/two.xlsx", Some("Sheet1"));
    assert_eq!(
        meaning("Mass (g)", "C", &here).0,
        HeaderMeaning::Field(Field::CrudeMass)
    );
    assert_eq!(
        meaning("Mass (g)", "D", &here).0,
        HeaderMeaning::Field(Field::RecoveredMass)
    );
    let elsewhere = o.for_sheet("other.xlsx", Some("Sheet1"));
    assert!(matches!(
        meaning("Mass (g)", "D", &elsewhere).0,
        HeaderMeaning::Ambiguous(..)
    ));
    assert_eq!(
        mapping_line("D", Some(Field::RecoveredMass)),
        "\"column D\" = \"recovered_mass\""
    );
}

#[test]
fn a_file_table_sets_the_section_and_the_assistant() {
    let table: BTreeMap<String, MappingValue> = toml::from_str(
        "[\"exp3.xlsx\"]\nsection = \"102\"\nassistant = \"R. Okafor\"\n\"Section\" = \"section\"\n",
    )
    .unwrap();
    let o = ColumnOverrides::from_table(&table).unwrap();
    let here = o.for_sheet("data/exp3.xlsx", Some("Exp3"));
    assert_eq!(
        here.values.get(&Field::Section).map(String::as_str),
        Some("102")
    );
    assert_eq!(
        here.values.get(&Field::Assistant).map(String::as_str),
        Some("R. Okafor")
    );
    // a field's name as the value maps a column headed "Section"
    assert_eq!(
        meaning("Section", "C", &here).0,
        HeaderMeaning::Field(Field::Section)
    );
    assert!(o.for_sheet("other.xlsx", None).values.is_empty());
}

/// Headers in German, Spanish, French and Portuguese (invented sheets; the words from the
/// vocabulary), read as their English twins are.
#[test]
fn headers_in_other_languages_read_as_their_english_twins() {
    use Field::*;
    for (text, want) in [
        ("Matrikelnummer", StudentId),
        ("Rohprodukt (g)", CrudeMass),
        ("Ausbeute (g)", RecoveredMass),
        ("Ausbeute (%)", ReportedRecovery),
        ("Schmelzbereich (°C)", MpRange),
        ("Platz", Bench),
        ("Matrícula", StudentId),
        ("Matricula", StudentId),
        ("Masa cruda (g)", CrudeMass),
        ("Masa recuperada (g)", RecoveredMass),
        ("% Recuperación", ReportedRecovery),
        ("Punto de fusión", MpRange),
        ("Numéro étudiant", StudentId),
        ("Masse brute (g)", CrudeMass),
        ("Masse purifiée (g)", RecoveredMass),
        ("Rendement (%)", ReportedRecovery),
        ("Point de fusion (°C)", MpRange),
        ("Paillasse", Bench),
        ("Massa bruta (g)", CrudeMass),
        ("Massa recuperada (g)", RecoveredMass),
        ("Ponto de fusão (°C)", MpRange),
        ("Bancada", Bench),
        ("Observações", Notes),
    ] {
        assert_eq!(field(text), HeaderMeaning::Field(want), "{text:?}");
    }
}

proptest! {
    #[test]
    fn no_header_panics(s in "\\PC{0,60}") {
        let _ = classify(&parse_header(&s));
    }
}
