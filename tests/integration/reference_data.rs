//! The built-in reference library against published data.

use std::collections::HashMap;

use benchgrade::reference::Library;

use crate::harness::{project_root, Fixture};

/// Jean-Claude Bradley Open Melting Point Dataset (CC0): CAS number to melting point in K.
fn bradley() -> HashMap<String, f64> {
    let text =
        std::fs::read_to_string(project_root().join("tests/data/open-melting-points-subset.tsv"))
            .unwrap();
    text.lines()
        .skip(1)
        .filter_map(|l| l.split_once('\t'))
        .map(|(cas, k)| (cas.to_string(), k.trim().parse().unwrap()))
        .collect()
}

#[test]
fn every_builtin_compound_is_within_3_k_of_the_bradley_dataset() {
    let data = bradley();
    for c in Library::builtin().unwrap().compounds() {
        let k = data
            .get(&c.cas)
            .unwrap_or_else(|| panic!("{} ({}) not in the Bradley subset", c.name, c.cas));
        let t = k - 273.15;
        assert!(
            (c.accepted_mp_c - t).abs() <= 3.0,
            "{}: accepted {} °C, Bradley {t:.2} °C",
            c.name,
            c.accepted_mp_c
        );
        for m in &c.melting_points {
            assert!(
                (m.value_c - t).abs() <= 3.0,
                "{}: {} °C ({}) vs Bradley {t:.2} °C",
                c.name,
                m.value_c,
                m.source
            );
        }
    }
}

#[test]
fn benzoic_acid_triple_point_matches_nist() {
    // NIST Chemistry WebBook: benzoic acid triple point 395.52 K.
    let lib = Library::builtin().unwrap();
    let c = lib.lookup("benzoic acid").unwrap();
    assert!(c
        .melting_points
        .iter()
        .any(|m| (m.value_c + 273.15 - 395.52).abs() < 0.005));
    // CRC Handbook: enthalpy of fusion 18.02 kJ/mol.
    assert_eq!(c.hfus_kj_mol.as_ref().unwrap().value, 18.02);
}

#[test]
fn compounds_command_lists_sources() {
    let f = Fixture::new();
    let run = f.run(&["compounds", "--json"]);
    assert_eq!(run.code, 0);
    let list: serde_json::Value = serde_json::from_str(&run.stdout).unwrap();
    let arr = list.as_array().unwrap();
    assert!(arr.len() >= 16);
    assert!(arr.iter().all(|c| c["melting_points"]
        .as_array()
        .unwrap()
        .iter()
        .all(|m| m["source"].as_str().is_some_and(|s| !s.is_empty()))));
    let text = f.run(&["compounds"]);
    assert!(text.stdout.contains("2-naphthol") && text.stdout.contains("Bradley"));
}
