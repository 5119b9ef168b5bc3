//! The words benchgrade reads in class sheets, in one data file (`vocabulary.toml`, compiled
//! in) rather than scattered through the matchers: header words for each field, unit words,
//! status words (withdrawn, excused), the words that end the student rows (mean, total, notes)
//! and range separators ("to", "bis", "a", "à"), in English, German, Spanish, French and
//! Portuguese. A user adds words for a language or course in the rubric's `[vocabulary]`
//! table or a `--vocabulary FILE` of the same shape; an unknown class is an error located in
//! the file.
//!
//! Words are compared lower-cased with accents folded (common practice for header matching:
//! "Matrícula" and "Matricula", "Schmelzpunkt" typed as "Schmelzpunkt"). The vocabulary a run
//! reads with is installed once, before its readers start (`install`), and every matcher asks
//! for it with `current()`; without an install the built-in one is used.

use std::collections::BTreeMap;

use rustc_hash::{FxHashMap, FxHashSet};
use std::ops::Range;
use std::sync::{Arc, OnceLock, RwLock};

use super::values::{TempUnit, Unit};

/// The built-in vocabulary's text.
pub const BUILTIN: &str = include_str!("vocabulary.toml");

/// A class's words by language, as written, with where the class's table stands in its file.
pub type Languages = toml::Spanned<BTreeMap<String, Vec<String>>>;

/// A vocabulary file (or a rubric's `[vocabulary]` table): group, then class, then language.
pub type Table = BTreeMap<String, BTreeMap<String, Languages>>;

/// The words of every class, folded, ready to match.
#[derive(Clone, Debug, Default)]
pub struct Vocabulary {
    /// "field.crude_mass" -> its words.
    classes: FxHashMap<String, FxHashSet<String>>,
    /// Unit word -> unit.
    units: FxHashMap<String, Unit>,
    /// Status word -> what it means ("withdrawn", "dropped the course").
    status: FxHashMap<String, String>,
    /// Registrar code -> what it means.
    codes: FxHashMap<String, String>,
    /// Range separators in file order, each as written and folded.
    separators: Vec<String>,
}

/// Lower case with accents folded: "Matrícula" is "matricula", "Gefäß" "gefass".
pub fn fold(text: &str) -> String {
    if text.is_ascii() {
        return text.to_ascii_lowercase();
    }
    let mut out = String::with_capacity(text.len());
    for c in text.chars().flat_map(char::to_lowercase) {
        match c {
            'à' | 'á' | 'â' | 'ã' | 'ä' | 'å' | 'ā' | 'ă' | 'ą' => out.push('a'),
            'è' | 'é' | 'ê' | 'ë' | 'ē' | 'ė' | 'ę' | 'ě' => out.push('e'),
            'ì' | 'í' | 'î' | 'ï' | 'ī' | 'į' => out.push('i'),
            'ò' | 'ó' | 'ô' | 'õ' | 'ö' | 'ø' | 'ō' | 'ő' => out.push('o'),
            'ù' | 'ú' | 'û' | 'ü' | 'ū' | 'ů' | 'ű' => out.push('u'),
            'ý' | 'ÿ' => out.push('y'),
            'ñ' | 'ń' | 'ň' => out.push('n'),
            'ç' | 'ć' | 'č' => out.push('c'),
            'ś' | 'š' | 'ş' => out.push('s'),
            'ź' | 'ż' | 'ž' => out.push('z'),
            'ł' => out.push('l'),
            'ř' => out.push('r'),
            'ď' => out.push('d'),
            'ť' => out.push('t'),
            'ß' => out.push_str("ss"),
            'œ' => out.push_str("oe"),
            'æ' => out.push_str("ae"),
            other => out.push(other),
        }
    }
    out
}

/// The unit a `[unit.<name>]` class names.
fn unit_of(name: &str) -> Option<Unit> {
    Some(match name {
        "g" => Unit::Mass(1.0),
        "mg" => Unit::Mass(0.001),
        "kg" => Unit::Mass(1000.0),
        "ug" => Unit::Mass(1e-6),
        "ml" => Unit::Volume(1.0),
        "l" => Unit::Volume(1000.0),
        "ul" => Unit::Volume(0.001),
        "celsius" => Unit::Temperature(TempUnit::Celsius),
        "fahrenheit" => Unit::Temperature(TempUnit::Fahrenheit),
        "kelvin" => Unit::Temperature(TempUnit::Kelvin),
        "percent" => Unit::Percent,
        _ => return None,
    })
}

impl Vocabulary {
    /// The built-in vocabulary (a test checks that its file reads). Parsed once per process:
    /// the rubric's check, the configuration and the matchers all start from it, and parsing
    /// its TOML was a tenth of a one-section run.
    pub fn builtin() -> Vocabulary {
        static PARSED: OnceLock<Vocabulary> = OnceLock::new();
        PARSED.get_or_init(Vocabulary::parse_builtin).clone()
    }

    fn parse_builtin() -> Vocabulary {
        let table: Table = toml::from_str(BUILTIN).unwrap_or_default();
        let mut v = Vocabulary::default();
        for (group, classes) in &table {
            for (class, langs) in classes {
                v.classes.entry(format!("{group}.{class}")).or_default();
                v.add(group, class, langs.get_ref());
            }
        }
        v
    }

    fn add(&mut self, group: &str, class: &str, langs: &BTreeMap<String, Vec<String>>) {
        let key = format!("{group}.{class}");
        for word in langs.values().flatten() {
            let folded = fold(word.trim());
            if folded.is_empty() {
                continue;
            }
            match group {
                "unit" => {
                    if let Some(u) = unit_of(class) {
                        self.units.insert(folded.clone(), u);
                    }
                }
                "status" => {
                    self.status
                        .entry(folded.clone())
                        .or_insert_with(|| class.replace('_', " "));
                }
                "status_code" => {
                    self.codes
                        .entry(folded.clone())
                        .or_insert_with(|| class.replace('_', " "));
                }
                "range" => {
                    for form in [word.trim().to_lowercase(), folded.clone()] {
                        if !self.separators.contains(&form) {
                            self.separators.push(form);
                        }
                    }
                }
                _ => {}
            }
            if let Some(set) = self.classes.get_mut(&key) {
                set.insert(folded);
            }
        }
    }

    /// This vocabulary with a user's words added. Each class must be one the built-in file
    /// has; the error gives the byte span of the class's table and what is wrong.
    pub fn with(&self, table: &Table) -> Result<Vocabulary, Vec<(Range<usize>, String)>> {
        let mut v = self.clone();
        let mut errors = Vec::new();
        for (group, classes) in table {
            for (class, langs) in classes {
                let key = format!("{group}.{class}");
                if !v.classes.contains_key(&key) {
                    errors.push((langs.span(), self.unknown_class(group, class)));
                    continue;
                }
                if let Some((lang, _)) = langs
                    .get_ref()
                    .iter()
                    .find(|(_, words)| words.iter().any(|w| w.trim().is_empty()))
                {
                    errors.push((
                        langs.span(),
                        format!("[{key}] {lang}: an empty word; remove it"),
                    ));
                    continue;
                }
                v.add(group, class, langs.get_ref());
            }
        }
        if errors.is_empty() {
            Ok(v)
        } else {
            Err(errors)
        }
    }

    fn unknown_class(&self, group: &str, class: &str) -> String {
        let mut same: Vec<&str> = self
            .classes
            .keys()
            .filter(|k| k.split('.').next() == Some(group))
            .map(String::as_str)
            .collect();
        same.sort_unstable();
        if same.is_empty() {
            let mut groups: Vec<&str> = self
                .classes
                .keys()
                .filter_map(|k| k.split('.').next())
                .collect();
            groups.sort_unstable();
            groups.dedup();
            return format!(
                "[{group}.{class}]: no such group of words; use one of {}",
                groups.join(", ")
            );
        }
        format!(
            "[{group}.{class}]: no such class of words; use one of {}",
            same.join(", ")
        )
    }

    /// Whether `word` (already folded) is one of `class`'s words.
    pub fn has(&self, class: &str, word: &str) -> bool {
        self.classes.get(class).is_some_and(|s| s.contains(word))
    }

    /// `class`'s words (already folded), to test many words against one class.
    pub fn words(&self, class: &str) -> Option<&FxHashSet<String>> {
        self.classes.get(class)
    }

    /// The unit a word names ("mg", "gramos", "°c"), the text already folded.
    pub fn unit(&self, word: &str) -> Option<Unit> {
        self.units.get(word).copied()
    }

    /// What a status word means ("withdrawn"), the word already folded.
    pub fn status(&self, word: &str) -> Option<&str> {
        self.status.get(word).map(String::as_str)
    }

    /// What a registrar code means, the code already folded.
    pub fn code(&self, code: &str) -> Option<&str> {
        self.codes.get(code).map(String::as_str)
    }

    /// The words between an onset and a clear point, in file order.
    pub fn separators(&self) -> &[String] {
        &self.separators
    }

    /// Whether a class of this name exists.
    pub fn knows(&self, class: &str) -> bool {
        self.classes.contains_key(class)
    }
}

fn slot() -> &'static RwLock<Arc<Vocabulary>> {
    static SLOT: OnceLock<RwLock<Arc<Vocabulary>>> = OnceLock::new();
    SLOT.get_or_init(|| RwLock::new(Arc::new(Vocabulary::builtin())))
}

/// The vocabulary in use.
pub fn current() -> Arc<Vocabulary> {
    match slot().read() {
        Ok(v) => v.clone(),
        Err(poisoned) => poisoned.into_inner().clone(),
    }
}

/// Makes `v` the vocabulary every matcher reads with, for the run about to start.
pub fn install(v: Arc<Vocabulary>) {
    match slot().write() {
        Ok(mut slot) => *slot = v,
        Err(poisoned) => *poisoned.into_inner() = v,
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// The classes named in headers.rs, table.rs, body.rs, range.rs, values.rs and excused.rs.
    const USED: [&str; 51] = [
        "field.student_id",
        "field.student_name",
        "field.last_name",
        "field.first_name",
        "field.section",
        "field.bench",
        "field.apparatus",
        "field.assistant",
        "field.compound",
        "field.crude_mass",
        "field.recovered_mass",
        "field.solvent_volume",
        "field.solvent",
        "field.mp_range",
        "field.mp_onset",
        "field.mp_clear",
        "field.reported_recovery",
        "field.notes",
        "field.status",
        "header.ignored",
        "header.mass",
        "header.percent",
        "header.recovery_alone",
        "header.recovered_alone",
        "header.compound_alone",
        "header.molar",
        "header.range",
        "header.melting_alone",
        "header.clear_point",
        "header.student",
        "header.id_part",
        "header.name",
        "header.last",
        "header.first",
        "header.group",
        "header.group_with",
        "header.partner",
        "header.summary",
        "header.pure",
        "header.reference",
        "header.tare",
        "header.gross",
        "header.container",
        "header.container_with",
        "status_denial.words",
        "status_context.words",
        "summary.stat",
        "summary.with",
        "summary.notes",
        "summary.heading",
        "range.separator",
    ];

    #[test]
    fn the_built_in_file_reads_and_has_every_class_the_matchers_use() {
        let parsed: Result<Table, _> = toml::from_str(BUILTIN);
        assert!(parsed.is_ok(), "{parsed:?}");
        let v = Vocabulary::builtin();
        for class in USED {
            assert!(v.knows(class), "{class}");
        }
        // every field has its entry, so that a new field's words have their place
        for f in crate::fields::Field::ALL {
            assert!(v.knows(&format!("field.{}", f.key())), "{}", f.key());
        }
    }

    #[test]
    fn words_match_with_accents_or_without() {
        let v = Vocabulary::builtin();
        assert_eq!(fold("Matrícula"), "matricula");
        assert_eq!(fold("Gefäß"), "gefass");
        assert!(v.has("field.student_id", &fold("MATRÍCULA")));
        assert!(v.has("field.student_id", "matricula"));
        assert_eq!(v.status("abgemeldet"), Some("withdrawn"));
        assert_eq!(v.status("dropped"), Some("dropped the course"));
        assert_eq!(v.code("wd"), Some("withdrawn"));
        assert_eq!(v.unit("gramos"), Some(Unit::Mass(1.0)));
        assert!(v.separators().iter().any(|s| s == "à"));
        assert!(v.separators().iter().any(|s| s == "a"));
    }

    #[test]
    fn a_user_adds_words_and_an_unknown_class_is_named() {
        let base = Vocabulary::builtin();
        let table: Table = toml::from_str(
            "[field.crude_mass]\nnl = [\"ruw\", \"Ruwe\"]\n[status.withdrawn]\nnl = [\"uitgeschreven\"]\n",
        )
        .unwrap();
        let v = base.with(&table).unwrap();
        assert!(v.has("field.crude_mass", "ruwe"));
        assert_eq!(v.status("uitgeschreven"), Some("withdrawn"));
        assert!(
            !base.has("field.crude_mass", "ruwe"),
            "the base is unchanged"
        );
        let text = "[field.crud_mass]\nnl = [\"ruw\"]\n";
        let table: Table = toml::from_str(text).unwrap();
        let errors = base.with(&table).unwrap_err();
        assert_eq!(errors.len(), 1);
        assert!(errors[0].1.contains("field.crude_mass"), "{}", errors[0].1);
        // located on the line that names the class
        assert_eq!(text[..errors[0].0.start].matches('\n').count(), 0);
    }

    proptest::proptest! {
        /// Folding is lower case without accents, and folding twice changes nothing.
        #[test]
        fn folding_twice_changes_nothing(s in "\\PC{0,30}") {
            let once = fold(&s);
            proptest::prop_assert_eq!(fold(&once), once.clone());
            proptest::prop_assert!(!once.chars().any(|c| "áéíóúàèäöüñçß".contains(c)));
        }
    }
}
