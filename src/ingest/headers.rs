//! Header text to fields: "Crude product mass (g)", "Mass recovered / g", "MP start", "Student #".
//!
//! A header is lower-cased, its unit taken out of brackets or from after a slash or comma, and
//! the rest split into words. Rules over those words (not fuzzy string distance, which would
//! confuse "crude mass" with "recovered mass") decide the field. An explicit mapping from the
//! rubric or a `--columns` file is consulted first and always wins.

use std::collections::BTreeMap;

use super::values::{parse_unit, Unit};
use crate::fields::Field;

/// A header taken apart.
#[derive(Clone, Debug, PartialEq)]
pub struct ParsedHeader {
    pub words: Vec<String>,
    pub unit: Option<Unit>,
}

/// What one header cell means.
#[derive(Clone, Debug, PartialEq)]
pub enum HeaderMeaning {
    Field(Field),
    /// The words fit more than one field; the user must say which.
    Ambiguous(Field, Field),
    Unknown,
    /// Mapped to "ignore" explicitly.
    Ignored,
}

/// Canonical text for comparing a header with an explicit mapping: lower case, single spaces.
pub fn canonical(text: &str) -> String {
    text.split_whitespace()
        .collect::<Vec<_>>()
        .join(" ")
        .to_lowercase()
}

fn take_bracketed_unit(text: &str) -> (String, Option<Unit>) {
    let mut rest = String::with_capacity(text.len());
    let mut unit = None;
    let mut chars = text.char_indices().peekable();
    while let Some((i, c)) = chars.next() {
        let close = match c {
            '(' => ')',
            '[' => ']',
            '{' => '}',
            _ => {
                rest.push(c);
                continue;
            }
        };
        match text[i + 1..].find(close) {
            Some(len) => {
                let inner = &text[i + 1..i + 1 + len];
                if let Some(u) = parse_unit(inner) {
                    unit = Some(u);
                } else {
                    rest.push(' ');
                    rest.push_str(inner);
                    rest.push(' ');
                }
                while let Some((j, _)) = chars.peek() {
                    if *j <= i + 1 + len {
                        chars.next();
                    } else {
                        break;
                    }
                }
            }
            None => rest.push(' '),
        }
    }
    (rest, unit)
}

fn take_trailing_unit(text: &str) -> (String, Option<Unit>) {
    for sep in ['/', ',', ':', '-'] {
        if let Some(p) = text.rfind(sep) {
            if let Some(u) = parse_unit(&text[p + sep.len_utf8()..]) {
                return (text[..p].to_string(), Some(u));
            }
        }
    }
    // "Crude mass in g", "temperature °C"
    let words: Vec<&str> = text.split_whitespace().collect();
    if words.len() >= 2 {
        let last = words[words.len() - 1];
        let unit_like = last.starts_with('°') || last == "%" || last.chars().count() <= 2;
        if unit_like {
            if let Some(u) = parse_unit(last) {
                let mut head = &words[..words.len() - 1];
                if head.last() == Some(&"in") {
                    head = &head[..head.len() - 1];
                }
                return (head.join(" "), Some(u));
            }
        }
    }
    (text.to_string(), None)
}

/// Splits a header into words and a unit.
pub fn parse_header(text: &str) -> ParsedHeader {
    let lower = text.to_lowercase();
    let lower = lower
        .replace("m.p.", " mp ")
        .replace("m. p.", " mp ")
        .replace("wt.", " wt ")
        .replace("vol.", " vol ")
        .replace("no.", " number ")
        .replace('#', " number ");
    let (rest, bracket_unit) = take_bracketed_unit(&lower);
    let (rest, trailing_unit) = take_trailing_unit(rest.trim());
    let mut unit = bracket_unit.or(trailing_unit);
    let rest = rest.replace('%', " percent ").replace('°', " ");
    if rest.contains("percent") && unit.is_none() {
        unit = Some(Unit::Percent);
    }
    let words = rest
        .split(|c: char| !c.is_alphanumeric())
        .filter(|w| !w.is_empty())
        .filter(|w| {
            !matches!(
                *w,
                "of" | "the"
                    | "in"
                    | "a"
                    | "your"
                    | "observed"
                    | "measured"
                    | "exp"
                    | "experimental"
                    | "obtained"
                    | "enter"
                    | "value"
            )
        })
        .map(str::to_string)
        .collect();
    ParsedHeader { words, unit }
}

struct Words<'a>(&'a [String]);

impl Words<'_> {
    fn has(&self, w: &str) -> bool {
        self.0.iter().any(|x| x == w)
    }
    fn any(&self, ws: &[&str]) -> bool {
        ws.iter().any(|w| self.has(w))
    }
    fn only(&self, ws: &[&str]) -> bool {
        !self.0.is_empty() && self.0.iter().all(|x| ws.contains(&x.as_str()))
    }
}

const MP_WORDS: [&str; 5] = ["mp", "melting", "melt", "fusion", "meltingpoint"];
const ONSET_WORDS: [&str; 10] = [
    "onset",
    "start",
    "begin",
    "begins",
    "beginning",
    "initial",
    "low",
    "lower",
    "from",
    "first",
];
const CLEAR_WORDS: [&str; 11] = [
    "clear",
    "clearing",
    "end",
    "final",
    "high",
    "upper",
    "to",
    "last",
    "complete",
    "completion",
    "meniscus",
];
const MASS_WORDS: [&str; 5] = ["mass", "weight", "wt", "grams", "masse"];
const RECOVERED_WORDS: [&str; 12] = [
    "recovered",
    "recovery",
    "pure",
    "purified",
    "recrystallized",
    "recrystallised",
    "final",
    "dry",
    "dried",
    "after",
    "yield",
    "crystals",
];
const CRUDE_WORDS: [&str; 6] = ["crude", "impure", "starting", "initial", "before", "raw"];

/// The field a parsed header names, by rules over its words and unit, tried in order: who or
/// where (apparatus, bench, section, assistant), the melting point, the reported recovery, the
/// compound, the solvent, the masses, then the student's id and name.
pub fn classify(h: &ParsedHeader) -> HeaderMeaning {
    let w = Words(&h.words);
    place_or_person(&w)
        .or_else(|| melting(&w, h))
        .or_else(|| substance(&w, h))
        .or_else(|| mass(&w, h))
        .or_else(|| student(&w))
        .unwrap_or(HeaderMeaning::Unknown)
}

fn percent(w: &Words, h: &ParsedHeader) -> bool {
    matches!(h.unit, Some(Unit::Percent)) || w.any(&["percent", "pct"])
}

fn is_mass(w: &Words, h: &ParsedHeader) -> bool {
    w.any(&MASS_WORDS) || matches!(h.unit, Some(Unit::Mass(_)))
}

/// The apparatus, bench, section or teaching assistant.
fn place_or_person(w: &Words) -> Option<HeaderMeaning> {
    let f = if w.any(&["apparatus", "instrument", "device", "thermometer"]) {
        Field::Apparatus
    } else if w.any(&[
        "bench",
        "station",
        "workstation",
        "hood",
        "desk",
        "drawer",
        "locker",
    ]) {
        Field::Bench
    } else if w.any(&["section", "sec", "sect"])
        || w.only(&["lab", "group", "number"]) && w.has("group")
    {
        Field::Section
    } else if w.any(&[
        "ta",
        "gta",
        "assistant",
        "instructor",
        "demonstrator",
        "tutor",
        "grader",
    ]) {
        Field::Assistant
    } else {
        return None;
    };
    Some(HeaderMeaning::Field(f))
}

/// A melting range, onset or clear point (or a temperature that is none of them: unknown).
fn melting(w: &Words, h: &ParsedHeader) -> Option<HeaderMeaning> {
    let temp = matches!(h.unit, Some(Unit::Temperature(_)));
    let mp = w.any(&MP_WORDS) || (w.has("melting") && w.has("point"));
    if !(mp || temp || w.any(&["onset", "clearing", "meniscus"]) || w.only(&["clear", "point"])) {
        return None;
    }
    let onset = w.any(&ONSET_WORDS);
    let clear = w.any(&CLEAR_WORDS);
    Some(match (onset, clear) {
        (true, false) => HeaderMeaning::Field(Field::MpOnset),
        (false, true) => HeaderMeaning::Field(Field::MpClear),
        (true, true) => HeaderMeaning::Field(Field::MpRange),
        (false, false) if mp || w.has("range") => HeaderMeaning::Field(Field::MpRange),
        _ => HeaderMeaning::Unknown,
    })
}

/// The reported recovery, the compound, the solvent volume or the solvent.
fn substance(w: &Words, h: &ParsedHeader) -> Option<HeaderMeaning> {
    let f = if percent(w, h) && w.any(&["recovery", "recovered", "yield"]) {
        Field::ReportedRecovery
    } else if w.any(&["compound", "substance", "chemical", "material", "unknown"])
        || w.only(&["sample"])
    {
        Field::Compound
    } else if (w.any(&["volume", "vol"]) || matches!(h.unit, Some(Unit::Volume(_))))
        && !is_mass(w, h)
    {
        Field::SolventVolume
    } else if w.has("solvent") && !is_mass(w, h) {
        Field::Solvent
    } else {
        return None;
    };
    Some(HeaderMeaning::Field(f))
}

/// The crude or the recovered mass, or a mass that could be either.
fn mass(w: &Words, h: &ParsedHeader) -> Option<HeaderMeaning> {
    if percent(w, h) {
        return None;
    }
    let mass = is_mass(w, h);
    let crude = w.any(&CRUDE_WORDS);
    let recovered = w.any(&RECOVERED_WORDS);
    match (crude, recovered) {
        (true, false) => Some(HeaderMeaning::Field(Field::CrudeMass)),
        (false, true)
            if mass || w.only(&["recovered", "recovery", "yield", "pure", "crystals"]) =>
        {
            Some(HeaderMeaning::Field(Field::RecoveredMass))
        }
        (true, true) if mass => Some(HeaderMeaning::Ambiguous(
            Field::CrudeMass,
            Field::RecoveredMass,
        )),
        (false, false) if mass && !w.any(&["molar", "molecular"]) => Some(
            HeaderMeaning::Ambiguous(Field::CrudeMass, Field::RecoveredMass),
        ),
        _ => None,
    }
}

/// The student's id or name.
fn student(w: &Words) -> Option<HeaderMeaning> {
    let id_words = ["id", "number", "num", "code"];
    if w.has("student") && w.any(&id_words)
        || w.has("id")
        || w.any(&[
            "sid",
            "netid",
            "matriculation",
            "matric",
            "matrikel",
            "matrikelnummer",
            "registration",
            "username",
            "login",
        ])
    {
        return Some(HeaderMeaning::Field(Field::StudentId));
    }
    if w.any(&["name", "surname", "fullname"]) || w.only(&["student"]) {
        return Some(HeaderMeaning::Field(Field::StudentName));
    }
    None
}

/// Explicit header-to-field choices from the rubric or a `--columns` file.
/// Keys are canonical header text; `None` means "ignore this column".
#[derive(Clone, Debug, Default)]
pub struct ColumnOverrides {
    pub map: BTreeMap<String, Option<Field>>,
}

impl ColumnOverrides {
    /// Reads `"Header text" = "field_key"` pairs, "ignore" to drop a column.
    pub fn from_pairs<'a>(
        pairs: impl IntoIterator<Item = (&'a String, &'a String)>,
    ) -> Result<Self, String> {
        let mut map = BTreeMap::new();
        for (header, key) in pairs {
            let field = if key == "ignore" {
                None
            } else {
                Some(Field::from_key(key).ok_or_else(|| {
                    let known: Vec<&str> = Field::ALL.iter().map(|f| f.key()).collect();
                    format!(
                        "column \"{header}\" is mapped to unknown field \"{key}\"; use one of {} or \"ignore\"",
                        known.join(", ")
                    )
                })?)
            };
            map.insert(canonical(header), field);
        }
        Ok(ColumnOverrides { map })
    }

    pub fn merged_over(mut self, base: &ColumnOverrides) -> ColumnOverrides {
        for (k, v) in &base.map {
            self.map.entry(k.clone()).or_insert(*v);
        }
        self
    }
}

/// The meaning of a header cell, explicit mapping first.
pub fn meaning(text: &str, overrides: &ColumnOverrides) -> (HeaderMeaning, bool) {
    match overrides.map.get(&canonical(text)) {
        Some(Some(f)) => (HeaderMeaning::Field(*f), true),
        Some(None) => (HeaderMeaning::Ignored, true),
        None => (classify(&parse_header(text)), false),
    }
}

#[cfg(test)]
mod tests {
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
        for t in ["Comments", "Date", "Notes", "Signature", ""] {
            assert_eq!(field(t), HeaderMeaning::Unknown, "{t:?}");
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
            meaning("wt  a", &o),
            (HeaderMeaning::Field(Field::CrudeMass), true)
        );
        assert_eq!(meaning("Mass (g)", &o), (HeaderMeaning::Ignored, true));
        let bad = [("x".to_string(), "crude".to_string())];
        assert!(ColumnOverrides::from_pairs(bad.iter().map(|(a, b)| (a, b))).is_err());
    }

    proptest! {
        #[test]
        fn no_header_panics(s in "\\PC{0,60}") {
            let _ = classify(&parse_header(&s));
        }
    }
}
