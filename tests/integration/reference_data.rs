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

/// The CRC Handbook's tables as the MIT-licensed Python package `chemicals` 1.5.2 carries
/// them (`chemicals.phase_change.Hfus(method="CRC")`, `Tm(method="CRC_ORG")`,
/// `Tm(method="WEBBOOK")`), with the molecular weight it computes from the formula
/// (`chemicals.elements.molecular_weight`): CAS to (formula, g/mol, J/mol, K, K).
struct Handbook {
    formula: String,
    molecular_weight: f64,
    hfus_j_mol: Option<f64>,
    tm_crc_k: Option<f64>,
}

fn handbook() -> HashMap<String, Handbook> {
    let text =
        std::fs::read_to_string(project_root().join("tests/data/chemicals-subset.tsv")).unwrap();
    let num = |s: &str| s.trim().parse::<f64>().ok();
    text.lines()
        .skip(1)
        .map(|l| {
            let f: Vec<&str> = l.split('\t').collect();
            let h = Handbook {
                formula: f[1].to_string(),
                molecular_weight: num(f[2]).unwrap(),
                hfus_j_mol: num(f[3]),
                tm_crc_k: num(f[4]),
            };
            (f[0].to_string(), h)
        })
        .collect()
}

#[test]
fn every_accepted_value_is_within_the_flag_tolerance_of_the_bradley_dataset() {
    // The accepted value is the reference a clear point is judged against; above-reference
    // fires 1.0 °C above it (the default tolerance), so an accepted value further than that
    // from the open dataset could flag a pure sample.
    let data = bradley();
    for c in Library::builtin().unwrap().compounds() {
        let k = data
            .get(&c.cas)
            .unwrap_or_else(|| panic!("{} ({}) not in the Bradley subset", c.name, c.cas));
        let t = k - 273.15;
        assert!(
            (c.accepted_mp_c - t).abs() <= 1.0,
            "{}: accepted {} °C, Bradley {t:.2} °C",
            c.name,
            c.accepted_mp_c
        );
    }
}

#[test]
fn every_literature_value_is_near_an_outside_source() {
    // Handbooks disagree by a few kelvin (sulfanilamide is given from 162 to 166 °C; the
    // rubric may choose among them), so each literature value must lie within 3 K of the
    // Bradley dataset or of the CRC Handbook's organic table: a typo or a wrong unit fails.
    let (bradley, crc) = (bradley(), handbook());
    for c in Library::builtin().unwrap().compounds() {
        let outside: Vec<f64> = [bradley.get(&c.cas).copied(), crc[&c.cas].tm_crc_k]
            .into_iter()
            .flatten()
            .map(|k| k - 273.15)
            .collect();
        for m in &c.melting_points {
            assert!(
                outside.iter().any(|t| (m.value_c - t).abs() <= 3.0),
                "{}: {} °C ({}) is not within 3 K of {outside:?}",
                c.name,
                m.value_c,
                m.source
            );
        }
    }
}

#[test]
fn molar_masses_and_enthalpies_of_fusion_agree_with_the_handbook() {
    let crc = handbook();
    for c in Library::builtin().unwrap().compounds() {
        let h = &crc[&c.cas];
        assert_eq!(c.formula.as_deref(), Some(h.formula.as_str()), "{}", c.name);
        assert!(
            (c.molar_mass.value - h.molecular_weight).abs() < 0.01,
            "{}: {} g/mol against {}",
            c.name,
            c.molar_mass.value,
            h.molecular_weight
        );
        // heats of fusion differ between methods by several per cent; beyond 10 % from the
        // CRC table the library's source must say what the CRC table gives
        if let (Some(lib), Some(j)) = (&c.hfus_kj_mol, h.hfus_j_mol) {
            let crc_kj = j / 1000.0;
            let off = (lib.value - crc_kj).abs() / crc_kj;
            let named = lib.source.contains(&format!("{crc_kj}"));
            assert!(
                off <= 0.10 || named,
                "{}: {} kJ/mol ({}) is {:.0} % from the CRC table's {crc_kj}",
                c.name,
                lib.value,
                lib.source,
                off * 100.0
            );
        }
    }
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
