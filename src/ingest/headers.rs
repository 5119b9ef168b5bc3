//! Header text to fields: "Crude product mass (g)", "Mass recovered / g", "MP start", "Student #".
//!
//! A header is lower-cased, its unit taken out of brackets or from after a slash or comma, and
//! the rest split into words. Rules over those words (not fuzzy string distance, which would
//! confuse "crude mass" with "recovered mass") decide the field. A column about someone other
//! than the student ("Partner ID"), a reference value rather than a measurement ("Literature
//! mp"), or comments ("TA notes") is never taken for the student's own data. An explicit
//! mapping from the rubric or a `--columns` file (by header text, or by column letter, for all
//! sheets or for one file or sheet) is consulted first and always wins.

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
    /// Not the student's own data, and why ("a reference value, not a measurement").
    NotOwn(&'static str),
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
        .replace('#', " number ")
        .replace('+', " plus ");
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

pub(super) const MP_WORDS: [&str; 5] = ["mp", "melting", "melt", "fusion", "meltingpoint"];
pub(super) const ONSET_WORDS: [&str; 10] = [
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
pub(super) const CLEAR_WORDS: [&str; 11] = [
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

/// The field a parsed header names, by rules over its words and unit, tried in order: comments
/// and statuses, what is not the student's own (another person, a reference value), who or
/// where (apparatus, bench, section, assistant), the melting point, the reported recovery, the
/// compound, the solvent, the masses, then the student's id and name.
pub fn classify(h: &ParsedHeader) -> HeaderMeaning {
    let w = Words(&h.words);
    // the experiment's own fields (crude and trial melting ranges, weighings by difference,
    // unknowns) are recognised in one place, `experiment::classify`, consulted first
    super::experiment::classify(h)
        .or_else(|| not_own(&w))
        .or_else(|| container(&w))
        .or_else(|| remarks(&w))
        .or_else(|| place_or_person(&w))
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

/// A notes or comments column (whoever wrote it: "TA notes" is not the assistant), or a status.
fn remarks(w: &Words) -> Option<HeaderMeaning> {
    let f = if w.any(&[
        "notes",
        "note",
        "comment",
        "comments",
        "remark",
        "remarks",
        "observation",
        "observations",
    ]) {
        Field::Notes
    } else if w.any(&[
        "status",
        "attendance",
        "standing",
        "enrolment",
        "enrollment",
        "excused",
        "withdrawn",
        "exempt",
    ]) {
        Field::Status
    } else {
        return None;
    };
    Some(HeaderMeaning::Field(f))
}

/// A column about another person, or a reference or expected value, rather than the student's
/// own measurement.
fn not_own(w: &Words) -> Option<HeaderMeaning> {
    if w.any(&["partner", "partners", "neighbour", "neighbor"]) {
        return Some(HeaderMeaning::NotOwn(
            "about another person (a partner), not the student",
        ));
    }
    if w.any(&[
        "mean",
        "average",
        "avg",
        "median",
        "sum",
        "std",
        "stdev",
        "sd",
        "deviation",
    ]) {
        return Some(HeaderMeaning::NotOwn(
            "a summary of several students, not one student's value",
        ));
    }
    // "Pure mp": the melting point of the pure compound, a reference
    if w.any(&["pure", "authentic"]) && w.any(&MP_WORDS) {
        return Some(HeaderMeaning::NotOwn(
            "a reference or expected value, not the student's measurement",
        ));
    }
    let reference = [
        "literature",
        "lit",
        "crc",
        "theor",
        "expected",
        "reference",
        "ref",
        "theoretical",
        "theory",
        "accepted",
        "handbook",
        "known",
        "target",
        "nominal",
        "true",
        "certified",
    ];
    w.any(&reference).then_some(HeaderMeaning::NotOwn(
        "a reference or expected value, not the student's measurement",
    ))
}

/// A weighing of the container, empty (a tare) or with the product in it (a gross mass): the
/// product's mass is their difference, so neither is the crude or the recovered mass.
fn container(w: &Words) -> Option<HeaderMeaning> {
    const CONTAINERS: [&str; 12] = [
        "vial",
        "flask",
        "beaker",
        "dish",
        "watchglass",
        "glass",
        "paper",
        "container",
        "jar",
        "tube",
        "boat",
        "filter",
    ];
    if w.any(&["tare", "tared", "empty"]) {
        return Some(HeaderMeaning::NotOwn(
            "the empty container's mass (a tare), not the product's",
        ));
    }
    if w.has("gross") || w.any(&CONTAINERS) && w.any(&["plus", "and", "with"]) {
        return Some(HeaderMeaning::NotOwn(
            "the container with the product in it (a gross mass), not the product's mass alone",
        ));
    }
    None
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
    // "Recovery" or "Yield" alone is the percentage; "Recovered" alone the mass
    let bare = h.unit.is_none() && (w.only(&["recovery"]) || w.only(&["yield"]));
    let f = if (percent(w, h) && w.any(&["recovery", "recovered", "yield"])) || bare {
        Field::ReportedRecovery
    } else if w.any(&["compound", "substance", "chemical", "material", "unknown"])
        || w.only(&["sample"])
    {
        Field::Compound
    } else if (w.any(&["volume", "vol"]) || matches!(h.unit, Some(Unit::Volume(_))))
        && !is_mass(w, h)
    {
        Field::SolventVolume
    } else if w.has("solvent") && !is_mass(w, h) && h.unit.is_none() {
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
    let family = w.any(&["surname", "family", "lastname", "familyname"])
        || w.has("name") && w.has("last")
        || w.only(&["last"]);
    let given = w.any(&["forename", "forenames", "given", "firstname", "givenname"])
        || w.has("name") && w.has("first")
        || w.only(&["first"]);
    // "Last, First" and "Student (last, first)" hold the whole name
    if w.has("last") && w.has("first") {
        return Some(HeaderMeaning::Field(Field::StudentName));
    }
    match (family, given) {
        (true, false) => return Some(HeaderMeaning::Field(Field::LastName)),
        (false, true) => return Some(HeaderMeaning::Field(Field::FirstName)),
        _ => {}
    }
    if w.any(&["name", "fullname"]) || w.only(&["student"]) {
        return Some(HeaderMeaning::Field(Field::StudentName));
    }
    None
}

/// A value of a `[columns]` table: a field key for a header (or a column letter), or a table of
/// such mappings for one file or sheet.
#[derive(Clone, Debug, PartialEq, serde::Serialize, serde::Deserialize)]
#[serde(untagged)]
pub enum MappingValue {
    Field(String),
    Scope(BTreeMap<String, String>),
}

/// Where a scoped mapping applies: a file (by name), a sheet (by name), or a sheet of a file.
#[derive(Clone, Debug, PartialEq)]
struct Scope {
    file: Option<String>,
    sheet: Option<String>,
    /// The table's name as written, for messages.
    key: String,
}

impl Scope {
    /// "class.xlsx", "[Sec 07]" or "class.xlsx [Sec 07]".
    fn parse(key: &str) -> Scope {
        let key = key.trim();
        match key.rfind('[').filter(|_| key.ends_with(']')) {
            Some(i) => {
                let file = key[..i].trim();
                Scope {
                    file: (!file.is_empty()).then(|| file.to_string()),
                    sheet: Some(key[i + 1..key.len() - 1].trim().to_string()),
                    key: key.to_string(),
                }
            }
            None => Scope {
                file: Some(key.to_string()),
                sheet: None,
                key: key.to_string(),
            },
        }
    }

    fn matches(&self, file: &str, sheet: Option<&str>) -> bool {
        let name = std::path::Path::new(file)
            .file_name()
            .map(|n| n.to_string_lossy().into_owned())
            .unwrap_or_default();
        // "class.xlsx", "data/class.xlsx" and "./data/class.xlsx" name the same file
        let given = std::path::Path::new(file);
        self.file
            .as_ref()
            .is_none_or(|f| f == &name || f == file || given.ends_with(std::path::Path::new(f)))
            && self
                .sheet
                .as_ref()
                .is_none_or(|s| sheet.is_some_and(|x| canonical(x) == canonical(s)))
    }
}

/// Explicit column choices from the rubric or a `--columns` file: by header text (canonical)
/// or by column letter ("column C"), for every sheet or for one file or sheet. `None` means
/// "ignore this column".
#[derive(Clone, Debug, Default)]
pub struct ColumnOverrides {
    pub map: BTreeMap<String, Option<Field>>,
    /// By column letter ("C").
    pub letters: BTreeMap<String, Option<Field>>,
    scoped: Vec<(Scope, ColumnOverrides)>,
}

/// The column letters of a key written "column C" (any case), if it is one.
fn letter_key(key: &str) -> Option<String> {
    let k = key.trim();
    let rest = k.get(..7).filter(|h| h.eq_ignore_ascii_case("column "))?;
    let letters = k[rest.len()..].trim().to_ascii_uppercase();
    (!letters.is_empty() && letters.len() <= 3 && letters.bytes().all(|b| b.is_ascii_uppercase()))
        .then_some(letters)
}

/// "column 3", "col D", "Column: C": meant as a column by position, but not written as one.
fn looks_like_a_letter_key(key: &str) -> bool {
    let k = key.trim().to_lowercase();
    let rest = k
        .strip_prefix("column")
        .or_else(|| k.strip_prefix("col"))
        .map(|r| r.trim_start_matches(['.', ':', ' ']));
    rest.is_some_and(|r| {
        !r.is_empty() && r.len() <= 3 && r.chars().all(|c| c.is_ascii_alphanumeric())
    })
}

fn field_for(header: &str, key: &str) -> Result<Option<Field>, String> {
    if key == "ignore" {
        return Ok(None);
    }
    Field::from_key(key).map(Some).ok_or_else(|| {
        let known: Vec<&str> = Field::ALL.iter().map(|f| f.key()).collect();
        format!(
            "column \"{header}\" is mapped to unknown field \"{key}\"; use one of {} or \"ignore\"",
            known.join(", ")
        )
    })
}

impl ColumnOverrides {
    /// Reads `"Header text" = "field_key"` pairs ("ignore" drops a column; a key "column C"
    /// names a column by its letter).
    pub fn from_pairs<'a>(
        pairs: impl IntoIterator<Item = (&'a String, &'a String)>,
    ) -> Result<Self, String> {
        let mut out = ColumnOverrides::default();
        for (header, key) in pairs {
            let field = field_for(header, key)?;
            match letter_key(header) {
                Some(l) => out.letters.insert(l, field),
                None if looks_like_a_letter_key(header) => {
                    return Err(format!(
                        "\"{header}\" names no column: write a column by its letters, as in \"column C\" or \"column AB\""
                    ))
                }
                None => out.map.insert(canonical(header), field),
            };
        }
        Ok(out)
    }

    /// Reads a `[columns]` table: pairs for every sheet, and tables of pairs for one file or
    /// sheet (`[columns."class.xlsx [Sec 07]"]`).
    pub fn from_table(table: &BTreeMap<String, MappingValue>) -> Result<Self, String> {
        let pairs: Vec<(&String, &String)> = table
            .iter()
            .filter_map(|(k, v)| match v {
                MappingValue::Field(f) => Some((k, f)),
                MappingValue::Scope(_) => None,
            })
            .collect();
        let mut out = ColumnOverrides::from_pairs(pairs)?;
        for (k, v) in table {
            if let MappingValue::Scope(inner) = v {
                out.scoped
                    .push((Scope::parse(k), ColumnOverrides::from_pairs(inner)?));
            }
        }
        Ok(out)
    }

    pub fn merged_over(mut self, base: &ColumnOverrides) -> ColumnOverrides {
        for (k, v) in &base.map {
            self.map.entry(k.clone()).or_insert(*v);
        }
        for (k, v) in &base.letters {
            self.letters.entry(k.clone()).or_insert(*v);
        }
        self.scoped.extend(base.scoped.iter().cloned());
        self
    }

    /// The mappings that apply to one sheet of one file: its scoped ones over the general ones.
    /// The tables for one file or sheet that matched none of `sheets` (file, sheet name), by
    /// their names as written: a mapping that silently did nothing is worth a word.
    pub fn unmatched_tables<'a>(
        &self,
        sheets: impl Iterator<Item = (&'a str, Option<&'a str>)> + Clone,
    ) -> Vec<String> {
        self.scoped
            .iter()
            .filter(|(scope, _)| !sheets.clone().any(|(f, s)| scope.matches(f, s)))
            .map(|(scope, _)| scope.key.clone())
            .collect()
    }

    pub fn for_sheet(&self, file: &str, sheet: Option<&str>) -> ColumnOverrides {
        let mut out = ColumnOverrides {
            map: self.map.clone(),
            letters: self.letters.clone(),
            scoped: Vec::new(),
        };
        for (scope, m) in &self.scoped {
            if scope.matches(file, sheet) {
                out.map.extend(m.map.iter().map(|(k, v)| (k.clone(), *v)));
                out.letters
                    .extend(m.letters.iter().map(|(k, v)| (k.clone(), *v)));
            }
        }
        out
    }
}

/// The meaning of a header cell in column `letter`, explicit mapping first (by letter, then
/// by header text).
pub fn meaning(text: &str, letter: &str, overrides: &ColumnOverrides) -> (HeaderMeaning, bool) {
    let explicit = overrides
        .letters
        .get(letter)
        .or_else(|| overrides.map.get(&canonical(text)));
    match explicit {
        Some(Some(f)) => (HeaderMeaning::Field(*f), true),
        Some(None) => (HeaderMeaning::Ignored, true),
        None => (classify(&parse_header(text)), false),
    }
}

/// The line to paste into a `--columns` file's `[columns]` table to map a column to a field.
pub fn mapping_line(letter: &str, field: Option<Field>) -> String {
    format!(
        "\"column {letter}\" = \"{}\"",
        field.map_or("ignore", Field::key)
    )
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
            // a gross weighing that says not whose product it holds (weighings that do are the
            // experiment's fields: `experiment::classify`)
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

    proptest! {
        #[test]
        fn no_header_panics(s in "\\PC{0,60}") {
            let _ = classify(&parse_header(&s));
        }
    }
}
