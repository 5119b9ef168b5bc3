//! The reference library: literature melting points, enthalpies of fusion and solubilities of
//! the compounds students purify, each value with its source.
//!
//! The data lives in `compounds.toml` beside this file (compiled in), so that a chemist can
//! read and correct it without reading Rust. A user file in the same format adds compounds or
//! replaces built-in ones by name.

use std::collections::HashMap;
use std::path::Path;

use serde::{Deserialize, Serialize};

use crate::error::{parse_toml, ConfigError};

const BUILTIN: &str = include_str!("compounds.toml");

/// A number and where it comes from.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Sourced {
    pub value: f64,
    pub source: String,
}

/// One literature melting point.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct MeltingPoint {
    pub value_c: f64,
    pub source: String,
}

/// Solubility in water at one temperature.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Solubility {
    pub t_c: f64,
    pub g_per_l: f64,
    pub source: String,
}

/// A compound and its reference data.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Compound {
    pub name: String,
    #[serde(default)]
    pub synonyms: Vec<String>,
    pub cas: String,
    #[serde(default)]
    pub formula: Option<String>,
    pub molar_mass: Sourced,
    /// The value used as the reference unless the rubric or the command line says otherwise.
    pub accepted_mp_c: f64,
    pub melting_points: Vec<MeltingPoint>,
    #[serde(default)]
    pub hfus_kj_mol: Option<Sourced>,
    /// Decomposes on melting: the melting range says less about purity.
    #[serde(default)]
    pub decomposes: bool,
    #[serde(default)]
    pub solubility: Vec<Solubility>,
}

#[derive(Deserialize)]
#[serde(deny_unknown_fields)]
struct CompoundFile {
    #[serde(default)]
    compound: Vec<Compound>,
}

/// The compounds known to a run, looked up by name, synonym or CAS number.
#[derive(Clone, Debug)]
pub struct Library {
    compounds: Vec<Compound>,
    index: HashMap<String, usize>,
}

/// The form of a name used for matching: lower case, letters and digits only,
/// Greek beta spelled out and British "sulph" as "sulf".
pub fn name_key(name: &str) -> String {
    let lower = name
        .trim()
        .to_lowercase()
        .replace('β', "beta")
        .replace('α', "alpha")
        .replace("sulph", "sulf");
    lower.chars().filter(|c| c.is_alphanumeric()).collect()
}

fn parse(text: &str, file: &str) -> Result<Vec<Compound>, ConfigError> {
    let parsed: CompoundFile = parse_toml(text, file)?;
    for c in &parsed.compound {
        if c.melting_points.is_empty() {
            return Err(ConfigError::Invalid(format!(
                "{file}: compound \"{}\" lists no melting point",
                c.name
            )));
        }
    }
    Ok(parsed.compound)
}

impl Library {
    /// The built-in library. The data is compiled in; a broken file is an error (and fails
    /// the unit tests), never an empty library.
    pub fn builtin() -> Result<Library, ConfigError> {
        let compounds = parse(BUILTIN, "built-in src/reference/compounds.toml")?;
        Ok(Library::from_compounds(compounds))
    }

    fn from_compounds(compounds: Vec<Compound>) -> Library {
        let mut lib = Library {
            compounds: Vec::new(),
            index: HashMap::new(),
        };
        for c in compounds {
            lib.insert(c);
        }
        lib
    }

    fn insert(&mut self, c: Compound) {
        let pos = if let Some(&i) = self.index.get(&name_key(&c.name)) {
            self.compounds[i] = c.clone();
            i
        } else {
            self.compounds.push(c.clone());
            self.compounds.len() - 1
        };
        for key in std::iter::once(&c.name)
            .chain(&c.synonyms)
            .chain(std::iter::once(&c.cas))
        {
            self.index.insert(name_key(key), pos);
        }
    }

    /// Adds the compounds of a user file, replacing built-in ones of the same name.
    pub fn extend_from_file(&mut self, path: &Path) -> Result<(), ConfigError> {
        let text = crate::files::read_to_string(path).map_err(|e| {
            ConfigError::Invalid(format!("cannot read compound file {}: {e}", path.display()))
        })?;
        for c in parse(&text, &path.display().to_string())? {
            self.insert(c);
        }
        Ok(())
    }

    pub fn lookup(&self, name: &str) -> Option<&Compound> {
        self.index.get(&name_key(name)).map(|&i| &self.compounds[i])
    }

    pub fn compounds(&self) -> &[Compound] {
        &self.compounds
    }
}

/// The library as a plain-text table with the source of every value.
pub fn table(lib: &Library) -> String {
    use std::fmt::Write as _;
    let mut out = String::new();
    for c in lib.compounds() {
        let _ = writeln!(
            out,
            "{} (CAS {}, {:.2} g/mol){}",
            c.name,
            c.cas,
            c.molar_mass.value,
            if c.decomposes {
                ", decomposes on melting"
            } else {
                ""
            }
        );
        if !c.synonyms.is_empty() {
            let _ = writeln!(out, "  also: {}", c.synonyms.join(", "));
        }
        let _ = writeln!(out, "  accepted mp {:.2} °C", c.accepted_mp_c);
        for m in &c.melting_points {
            let _ = writeln!(out, "    mp {:>7.2} °C  {}", m.value_c, m.source);
        }
        if let Some(h) = &c.hfus_kj_mol {
            let _ = writeln!(
                out,
                "  enthalpy of fusion {:.2} kJ/mol  {}",
                h.value, h.source
            );
        }
        for s in &c.solubility {
            let _ = writeln!(
                out,
                "  water solubility {} g/L at {} °C  {}",
                s.g_per_l, s.t_c, s.source
            );
        }
    }
    out
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_abs_diff_eq;

    #[test]
    fn builtin_library_parses_and_has_every_required_compound() {
        let all = parse(BUILTIN, "built-in").expect("compounds.toml must parse");
        let lib = Library::from_compounds(all);
        for name in [
            "benzoic acid",
            "acetanilide",
            "salicylic acid",
            "acetylsalicylic acid",
            "trans-cinnamic acid",
            "naphthalene",
            "urea",
            "vanillin",
            "phenacetin",
            "sulfanilamide",
            "caffeine",
            "benzophenone",
            "biphenyl",
            "adipic acid",
            "succinic acid",
            "2-naphthol",
        ] {
            let c = lib.lookup(name).unwrap_or_else(|| panic!("{name} missing"));
            assert!(!c.cas.is_empty() && c.molar_mass.value > 0.0);
            assert!(c.melting_points.iter().all(|m| !m.source.is_empty()));
        }
    }

    #[test]
    fn names_synonyms_and_cas_match_case_insensitively() {
        let lib = Library::builtin().unwrap();
        assert_eq!(lib.lookup("ASPIRIN").unwrap().name, "acetylsalicylic acid");
        assert_eq!(lib.lookup("Benzoic Acid").unwrap().cas, "65-85-0");
        assert_eq!(lib.lookup("β-naphthol").unwrap().name, "2-naphthol");
        assert_eq!(lib.lookup("beta naphthol").unwrap().name, "2-naphthol");
        assert_eq!(lib.lookup("Sulphanilamide").unwrap().name, "sulfanilamide");
        assert_eq!(
            lib.lookup("cinnamic acid").unwrap().name,
            "trans-cinnamic acid"
        );
        assert_eq!(lib.lookup("65-85-0").unwrap().name, "benzoic acid");
        assert!(lib.lookup("unobtainium").is_none());
    }

    #[test]
    fn every_solubility_follows_from_the_text_it_cites() {
        // "1 g in N mL" is 1000 / N g/L; within 2 %, the rounding of the value written
        let mut checked = 0;
        for c in Library::builtin().unwrap().compounds() {
            for s in &c.solubility {
                let Some(rest) = s.source.split("1 g in ").nth(1) else {
                    continue;
                };
                let ml: f64 = rest
                    .trim_start_matches("about ")
                    .split_whitespace()
                    .next()
                    .and_then(|n| n.parse().ok())
                    .unwrap_or_else(|| panic!("{}: cannot read {:?}", c.name, s.source));
                let cited = 1000.0 / ml;
                assert!(
                    (s.g_per_l - cited).abs() <= 0.02 * cited,
                    "{} at {} °C: {} g/L, but \"{}\" is {cited:.3} g/L",
                    c.name,
                    s.t_c,
                    s.g_per_l,
                    s.source
                );
                checked += 1;
            }
        }
        assert!(checked >= 15, "the citations were read ({checked})");
    }

    #[test]
    fn water_solubility_rises_with_temperature() {
        // common practice: these solids dissolve better in hot water than in cold, which is
        // what recrystallizing them from water relies on
        for c in Library::builtin().unwrap().compounds() {
            for w in c.solubility.windows(2) {
                assert!(w[0].t_c < w[1].t_c, "{}: temperatures in order", c.name);
                assert!(
                    w[0].g_per_l < w[1].g_per_l,
                    "{}: {} g/L at {} °C, {} g/L at {} °C",
                    c.name,
                    w[0].g_per_l,
                    w[0].t_c,
                    w[1].g_per_l,
                    w[1].t_c
                );
            }
        }
    }

    /// Standard atomic weights (IUPAC conventional values, from memory).
    fn molar_mass(formula: &str) -> f64 {
        let weight = |el: &str| match el {
            "C" => 12.011,
            "H" => 1.008,
            "N" => 14.007,
            "O" => 15.999,
            "S" => 32.06,
            other => panic!("no weight for {other}"),
        };
        let mut total = 0.0;
        let chars: Vec<char> = formula.chars().collect();
        let mut i = 0;
        while i < chars.len() {
            let mut el = chars[i].to_string();
            i += 1;
            while i < chars.len() && chars[i].is_ascii_lowercase() {
                el.push(chars[i]);
                i += 1;
            }
            let start = i;
            while i < chars.len() && chars[i].is_ascii_digit() {
                i += 1;
            }
            let n: f64 = if start == i {
                1.0
            } else {
                chars[start..i].iter().collect::<String>().parse().unwrap()
            };
            total += weight(&el) * n;
        }
        total
    }

    #[test]
    fn molar_masses_agree_with_formulas() {
        for c in Library::builtin().unwrap().compounds() {
            let f = c
                .formula
                .as_deref()
                .expect("every built-in compound has a formula");
            assert_abs_diff_eq!(c.molar_mass.value, molar_mass(f), epsilon = 0.02);
        }
    }

    #[test]
    fn user_file_adds_and_replaces() {
        let dir = tempfile::tempdir().unwrap();
        let p = dir.path().join("extra.toml");
        std::fs::write(
            &p,
            "[[compound]]\nname = \"Benzoic acid\"\ncas = \"65-85-0\"\nmolar_mass = { value = 122.12, source = \"x\" }\naccepted_mp_c = 122.0\nmelting_points = [{ value_c = 122.0, source = \"lab lot\" }]\n",
        )
        .unwrap();
        let mut lib = Library::builtin().unwrap();
        let n = lib.compounds().len();
        lib.extend_from_file(&p).unwrap();
        assert_eq!(lib.compounds().len(), n);
        assert_eq!(lib.lookup("benzoic acid").unwrap().accepted_mp_c, 122.0);
        std::fs::write(&p, "[[compound]]\nname = 3\n").unwrap();
        assert!(lib.extend_from_file(&p).is_err());
    }
}
