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
use super::vocabulary::{self, Vocabulary};
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

/// Splits a header into words and a unit. Words are lower-cased with accents folded.
pub fn parse_header(text: &str) -> ParsedHeader {
    parse_with(text, &vocabulary::current())
}

fn parse_with(text: &str, v: &Vocabulary) -> ParsedHeader {
    let lower = vocabulary::fold(text);
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
        .filter(|w| !v.has("header.ignored", w))
        .map(str::to_string)
        .collect();
    ParsedHeader { words, unit }
}

/// A header's words, asked about classes of the vocabulary.
struct Words<'a> {
    words: &'a [String],
    v: &'a Vocabulary,
}

impl Words<'_> {
    /// Some word is one of `class`'s.
    fn any(&self, class: &str) -> bool {
        self.v
            .words(class)
            .is_some_and(|set| self.words.iter().any(|x| set.contains(x)))
    }
    /// Every word is one of these classes' (and there is a word).
    fn only(&self, classes: &[&str]) -> bool {
        !self.words.is_empty()
            && self
                .words
                .iter()
                .all(|x| classes.iter().any(|c| self.v.has(c, x)))
    }
    /// One word of `class`, written one or more times, and nothing else.
    fn just(&self, class: &str) -> bool {
        self.only(&[class]) && self.words.iter().all(|x| *x == self.words[0])
    }
}

/// The field a parsed header names, by rules over its words and unit, tried in order: comments
/// and statuses, what is not the student's own (another person, a reference value), who or
/// where (apparatus, bench, section, assistant), the melting point, the reported recovery, the
/// compound, the solvent, the masses, then the student's id and name. The words of each class
/// come from the vocabulary (`vocabulary.toml`).
pub fn classify(h: &ParsedHeader) -> HeaderMeaning {
    let v = vocabulary::current();
    let w = Words {
        words: &h.words,
        v: &v,
    };
    // the experiment's own fields (crude and trial melting ranges, weighings by difference,
    // unknowns) are recognised in one place, `experiment::classify`, consulted first
    super::experiment::classify(h)
        .or_else(|| not_own(&w))
        .or_else(|| container(&w))
        .or_else(|| remarks(&w))
        .or_else(|| late(&w, h))
        .or_else(|| place_or_person(&w))
        .or_else(|| melting(&w, h))
        .or_else(|| substance(&w, h))
        .or_else(|| mass(&w, h))
        .or_else(|| student(&w))
        .unwrap_or(HeaderMeaning::Unknown)
}

fn percent(w: &Words, h: &ParsedHeader) -> bool {
    matches!(h.unit, Some(Unit::Percent)) || w.any("header.percent")
}

fn is_mass(w: &Words, h: &ParsedHeader) -> bool {
    w.any("header.mass") || matches!(h.unit, Some(Unit::Mass(_)))
}

/// A notes or comments column (whoever wrote it: "TA notes" is not the assistant), or a status.
fn remarks(w: &Words) -> Option<HeaderMeaning> {
    let f = if w.any("field.notes") {
        Field::Notes
    } else if w.any("field.status") {
        Field::Status
    } else {
        return None;
    };
    Some(HeaderMeaning::Field(f))
}

/// How late the report came in: "Days late", "Late (days)", "Verspätung (Tage)"; a mass or a
/// temperature is never it.
fn late(w: &Words, h: &ParsedHeader) -> Option<HeaderMeaning> {
    (w.any("field.late_days") && !is_mass(w, h) && h.unit.is_none())
        .then_some(HeaderMeaning::Field(Field::LateDays))
}

/// A column about another person, or a reference or expected value, rather than the student's
/// own measurement.
fn not_own(w: &Words) -> Option<HeaderMeaning> {
    if w.any("header.partner") {
        return Some(HeaderMeaning::NotOwn(
            "about another person (a partner), not the student",
        ));
    }
    if w.any("header.summary") {
        return Some(HeaderMeaning::NotOwn(
            "a summary of several students, not one student's value",
        ));
    }
    // "Pure mp": the melting point of the pure compound, a reference
    let pure_mp = w.any("header.pure") && w.any("field.mp_range");
    (pure_mp || w.any("header.reference")).then_some(HeaderMeaning::NotOwn(
        "a reference or expected value, not the student's measurement",
    ))
}

/// A weighing of the container, empty (a tare) or with the product in it (a gross mass): the
/// product's mass is their difference, so neither is the crude or the recovered mass.
fn container(w: &Words) -> Option<HeaderMeaning> {
    if w.any("header.tare") {
        return Some(HeaderMeaning::NotOwn(
            "the empty container's mass (a tare), not the product's",
        ));
    }
    if w.any("header.gross") || w.any("header.container") && w.any("header.container_with") {
        return Some(HeaderMeaning::NotOwn(
            "the container with the product in it (a gross mass), not the product's mass alone",
        ));
    }
    None
}

/// The apparatus, bench, section or teaching assistant.
fn place_or_person(w: &Words) -> Option<HeaderMeaning> {
    let f = if w.any("field.apparatus") {
        Field::Apparatus
    } else if w.any("field.bench") {
        Field::Bench
    } else if w.any("field.section")
        || w.only(&["header.group", "header.group_with"]) && w.any("header.group")
    {
        Field::Section
    } else if w.any("field.assistant") {
        Field::Assistant
    } else {
        return None;
    };
    Some(HeaderMeaning::Field(f))
}

/// A melting range, onset or clear point (or a temperature that is none of them: unknown).
fn melting(w: &Words, h: &ParsedHeader) -> Option<HeaderMeaning> {
    let temp = matches!(h.unit, Some(Unit::Temperature(_)));
    let mp = w.any("field.mp_range");
    if !(mp || temp || w.any("header.melting_alone") || w.only(&["header.clear_point"])) {
        return None;
    }
    let onset = w.any("field.mp_onset");
    let clear = w.any("field.mp_clear");
    Some(match (onset, clear) {
        (true, false) => HeaderMeaning::Field(Field::MpOnset),
        (false, true) => HeaderMeaning::Field(Field::MpClear),
        (true, true) => HeaderMeaning::Field(Field::MpRange),
        (false, false) if mp || w.any("header.range") => HeaderMeaning::Field(Field::MpRange),
        _ => HeaderMeaning::Unknown,
    })
}

/// The reported recovery, the compound, the solvent volume or the solvent.
fn substance(w: &Words, h: &ParsedHeader) -> Option<HeaderMeaning> {
    // "Recovery" or "Yield" alone is the percentage; "Recovered" alone the mass
    let bare = h.unit.is_none() && w.just("header.recovery_alone");
    let f = if (percent(w, h) && w.any("field.reported_recovery")) || bare {
        Field::ReportedRecovery
    } else if w.any("field.compound") || w.only(&["header.compound_alone"]) {
        Field::Compound
    } else if (w.any("field.solvent_volume") || matches!(h.unit, Some(Unit::Volume(_))))
        && !is_mass(w, h)
    {
        Field::SolventVolume
    } else if w.any("field.solvent") && !is_mass(w, h) && h.unit.is_none() {
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
    let crude = w.any("field.crude_mass");
    let recovered = w.any("field.recovered_mass");
    match (crude, recovered) {
        (true, false) => Some(HeaderMeaning::Field(Field::CrudeMass)),
        (false, true) if mass || w.only(&["header.recovered_alone"]) => {
            Some(HeaderMeaning::Field(Field::RecoveredMass))
        }
        (true, true) if mass => Some(HeaderMeaning::Ambiguous(
            Field::CrudeMass,
            Field::RecoveredMass,
        )),
        (false, false) if mass && !w.any("header.molar") => Some(HeaderMeaning::Ambiguous(
            Field::CrudeMass,
            Field::RecoveredMass,
        )),
        _ => None,
    }
}

/// The student's id or name.
fn student(w: &Words) -> Option<HeaderMeaning> {
    if w.any("header.student") && w.any("header.id_part") || w.any("field.student_id") {
        return Some(HeaderMeaning::Field(Field::StudentId));
    }
    let (name, last, first) = (
        w.any("header.name"),
        w.any("header.last"),
        w.any("header.first"),
    );
    let family = w.any("field.last_name") || name && last || w.only(&["header.last"]);
    let given = w.any("field.first_name") || name && first || w.only(&["header.first"]);
    // "Last, First" and "Student (last, first)" hold the whole name
    if last && first {
        return Some(HeaderMeaning::Field(Field::StudentName));
    }
    match (family, given) {
        (true, false) => return Some(HeaderMeaning::Field(Field::LastName)),
        (false, true) => return Some(HeaderMeaning::Field(Field::FirstName)),
        _ => {}
    }
    if w.any("field.student_name") || w.only(&["header.student"]) {
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
    /// Values set for every row of a file or sheet: `section = "102"`, `assistant = "R. Okafor"`.
    pub values: BTreeMap<Field, String>,
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

/// `section = "102"` or `assistant = "R. Okafor"`: a value for every row, not a header mapped to
/// a field (a value that is a field's name, or "ignore", maps a column headed "Section").
fn value_key(header: &str, value: &str) -> Option<Field> {
    let f = match canonical(header).as_str() {
        "section" => Field::Section,
        "assistant" => Field::Assistant,
        _ => return None,
    };
    (value != "ignore" && Field::from_key(value).is_none()).then_some(f)
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
            if let Some(f) = value_key(header, key) {
                out.values.insert(f, key.trim().to_string());
                continue;
            }
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
        for (k, v) in &base.values {
            self.values.entry(*k).or_insert_with(|| v.clone());
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
            values: self.values.clone(),
            scoped: Vec::new(),
        };
        for (scope, m) in &self.scoped {
            if scope.matches(file, sheet) {
                out.map.extend(m.map.iter().map(|(k, v)| (k.clone(), *v)));
                out.letters
                    .extend(m.letters.iter().map(|(k, v)| (k.clone(), *v)));
                out.values
                    .extend(m.values.iter().map(|(k, v)| (*k, v.clone())));
            }
        }
        out
    }
}

/// The meaning of a header cell in column `letter`, explicit mapping first (by letter, then
/// by header text).
pub fn meaning(text: &str, letter: &str, overrides: &ColumnOverrides) -> (HeaderMeaning, bool) {
    explicit(text, letter, overrides).unwrap_or_else(|| (classify(&parse_header(text)), false))
}

/// The explicit mapping of a header cell in column `letter` (by letter, then by header text).
pub fn explicit(
    text: &str,
    letter: &str,
    overrides: &ColumnOverrides,
) -> Option<(HeaderMeaning, bool)> {
    let explicit = overrides
        .letters
        .get(letter)
        .or_else(|| overrides.map.get(&canonical(text)))?;
    Some(match explicit {
        Some(f) => (HeaderMeaning::Field(*f), true),
        None => (HeaderMeaning::Ignored, true),
    })
}

/// The line to paste into a `--columns` file's `[columns]` table to map a column to a field.
pub fn mapping_line(letter: &str, field: Option<Field>) -> String {
    format!(
        "\"column {letter}\" = \"{}\"",
        field.map_or("ignore", Field::key)
    )
}

#[cfg(test)]
#[path = "headers_tests.rs"]
mod tests;
