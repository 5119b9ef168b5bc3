//! The columns of the whole experiment as courses run it, beyond one crude mass, one recovered
//! mass and one melting range: the crude product's melting range beside the recrystallized
//! one, weighings by difference (an empty container and the container with the product),
//! repeat determinations of the melting range (trials, runs, capillaries), and unknowns (the
//! sample's code, the student's identification, a mixed melting point).
//!
//! The header words for these fields live here, in one table-like place that `headers::classify`
//! consults first, so that they can move into a shared vocabulary file as they are; this module
//! also pairs the columns up once a header row is read (which empty container goes with which
//! weighing) and says so for `check`.

use super::headers::{HeaderMeaning, ParsedHeader};

// The English words of a melting reading, for the experiment's fields alone (the vocabulary's
// classes serve the other fields).
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
use super::submission::{Submission, Trial};
use super::table::Column;
use super::values::Unit;
use crate::fields::Field;

/// Words that mark the crude product (before recrystallization).
const CRUDE: [&str; 7] = [
    "crude",
    "before",
    "impure",
    "raw",
    "unpurified",
    "unrecrystallized",
    "unrecrystallised",
];
/// Words that mark the recrystallized product.
const RECRYSTALLIZED: [&str; 13] = [
    "recryst",
    "recrystallized",
    "recrystallised",
    "recrystallization",
    "recrystallisation",
    "crystals",
    "product",
    "pure",
    "purified",
    "recovered",
    "dry",
    "dried",
    "final",
];
/// Words that mark one of several determinations of the same melting range.
const TRIAL: [&str; 12] = [
    "trial",
    "run",
    "capillary",
    "capillaries",
    "determination",
    "det",
    "repeat",
    "replicate",
    "1st",
    "2nd",
    "3rd",
    "4th",
];
/// Words that mark the melting point of a mixture with a known compound.
const MIXED: [&str; 4] = ["mixed", "mixture", "mix", "admixture"];
/// Containers a product is weighed in.
const CONTAINERS: [&str; 13] = [
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
    "bottle",
];
const TARE: [&str; 3] = ["tare", "tared", "empty"];
const WITH: [&str; 3] = ["plus", "and", "with"];

struct Words<'a>(&'a [String]);

impl Words<'_> {
    fn has(&self, w: &str) -> bool {
        self.0.iter().any(|x| x == w)
    }
    fn any(&self, ws: &[&str]) -> bool {
        ws.iter().any(|w| self.has(w))
    }
    /// Some word is in the vocabulary's class: the other languages' words (and a user's)
    /// beside this module's English ones.
    fn class(&self, class: &str) -> bool {
        let v = super::vocabulary::current();
        self.0.iter().any(|x| v.has(class, x))
    }
    fn only(&self, ws: &[&str]) -> bool {
        !self.0.is_empty() && self.0.iter().all(|x| ws.contains(&x.as_str()))
    }
}

/// The field of a header naming one of this module's fields; `None` leaves the header to the
/// general rules.
pub fn classify(h: &ParsedHeader) -> Option<HeaderMeaning> {
    let w = Words(&h.words);
    // a summary or another person's value is left to the general rules, which set it aside
    let set_aside = [
        "mean", "average", "avg", "median", "sd", "std", "partner", "partners",
    ];
    if w.any(&set_aside) {
        return None;
    }
    unknown(&w)
        .or_else(|| weighing(&w, h))
        .or_else(|| melting(&w, h))
        .or_else(|| recrystallized_mass(&w, h))
}

/// "Recryst. mass (g)", "Mass after recrystallization": the recovered mass.
fn recrystallized_mass(w: &Words, h: &ParsedHeader) -> Option<HeaderMeaning> {
    let mass = matches!(h.unit, Some(Unit::Mass(_))) || w.any(&["mass", "weight", "wt"]);
    let recryst = w.any(&["recryst", "recrystallization", "recrystallisation"]);
    (mass && recryst && !w.any(&CRUDE) && !w.any(&["percent", "pct"]))
        .then_some(HeaderMeaning::Field(Field::RecoveredMass))
}

/// An unknown's code ("Unknown #", "Sample code") or the student's identification of it
/// ("Identified as", "Identity", "Unknown is").
fn unknown(w: &Words) -> Option<HeaderMeaning> {
    let identified = w.any(&["identified", "identity", "identification", "identify"])
        || w.has("unknown") && w.has("is");
    if identified && !w.any(&["student", "partner"]) {
        return Some(HeaderMeaning::Field(Field::IdentifiedAs));
    }
    let code_words = [
        "unknown", "sample", "number", "code", "id", "no", "letter", "label", "vial", "bottle",
    ];
    let code = (w.has("unknown") || w.has("sample") && w.any(&["code", "number", "letter"]))
        && w.only(&code_words);
    code.then_some(HeaderMeaning::Field(Field::UnknownCode))
}

fn is_mass_header(w: &Words, h: &ParsedHeader) -> bool {
    matches!(h.unit, Some(Unit::Mass(_)))
        || w.any(&["mass", "weight", "wt", "grams"])
        || h.unit.is_none()
}

/// A weighing of a container: empty (a tare, one product's or both's) or with a product in it
/// (a gross mass, paired by what the product is). A container weighed after the product left
/// it ("Vial after transfer") is neither product's mass.
fn weighing(w: &Words, h: &ParsedHeader) -> Option<HeaderMeaning> {
    let container = w.any(&CONTAINERS);
    let tare = w.any(&TARE);
    if !(container || tare || w.has("gross")) || !is_mass_header(w, h) {
        return None;
    }
    let crude = w.any(&CRUDE);
    let recryst = w.any(&RECRYSTALLIZED);
    if tare || container && !crude && !recryst && !w.any(&WITH) && !w.has("gross") {
        if w.any(&["after", "transfer", "transferred", "residue"]) {
            return Some(HeaderMeaning::NotOwn(
                "the container weighed after the product was moved, not the product's mass",
            ));
        }
        let f = match (crude, recryst) {
            (true, false) => Field::CrudeTare,
            (false, true) => Field::RecoveredTare,
            _ => Field::Tare,
        };
        return Some(HeaderMeaning::Field(f));
    }
    match (crude, recryst) {
        (true, false) => Some(HeaderMeaning::Field(Field::CrudeGross)),
        (false, true) => Some(HeaderMeaning::Field(Field::RecoveredGross)),
        // a gross weighing that says not whose: left to the general rules (set aside)
        _ => None,
    }
}

/// The crude product's melting range, a repeat determination, or a mixed melting point.
fn melting(w: &Words, h: &ParsedHeader) -> Option<HeaderMeaning> {
    let temp = matches!(h.unit, Some(Unit::Temperature(_)));
    let mp = w.any(&MP_WORDS) || w.has("melting") && w.has("point") || w.class("field.mp_range");
    if !(mp || temp) || w.any(&["literature", "lit", "reference", "expected"]) {
        return None;
    }
    let (range, onset, clear) = if w.any(&MIXED) || w.class("experiment.mixed") {
        (
            Field::MixedMpRange,
            Field::MixedMpOnset,
            Field::MixedMpClear,
        )
    } else if w.any(&CRUDE) || w.class("experiment.crude") {
        (
            Field::CrudeMpRange,
            Field::CrudeMpOnset,
            Field::CrudeMpClear,
        )
    } else if w.any(&TRIAL) || w.class("experiment.trial") {
        (
            Field::MpTrialRange,
            Field::MpTrialOnset,
            Field::MpTrialClear,
        )
    } else {
        return None;
    };
    let onset_word = w.any(&ONSET_WORDS) || w.class("field.mp_onset");
    let clear_word = w.any(&CLEAR_WORDS) || w.class("field.mp_clear");
    let f = match (onset_word, clear_word) {
        (true, false) => onset,
        (false, true) => clear,
        _ => range,
    };
    Some(HeaderMeaning::Field(f))
}

/// The container a weighing names ("vial"), to pair an empty container with the weighing of
/// it with the product.
fn container_of(header: &str) -> Option<&'static str> {
    let words = super::headers::parse_header(header).words;
    CONTAINERS
        .iter()
        .copied()
        .find(|c| words.iter().any(|w| w == c))
}

/// More than one empty container for both products ("Empty vial", "Watch glass"): each is
/// paired with the gross weighing of the same container ("Vial + crystals"); one no gross
/// weighing names is left unused with a note. Mapped columns are left as they are.
pub fn pair_tares(columns: &mut [Column]) {
    let shared: Vec<usize> = (0..columns.len())
        .filter(|&i| columns[i].field == Some(Field::Tare) && !columns[i].explicit)
        .collect();
    if shared.len() < 2 {
        return;
    }
    let grosses: Vec<(Field, Option<&'static str>)> = columns
        .iter()
        .filter(|c| matches!(c.field, Some(Field::CrudeGross | Field::RecoveredGross)))
        .map(|c| {
            (
                c.field.unwrap_or(Field::CrudeGross),
                container_of(&c.header),
            )
        })
        .collect();
    for i in shared {
        let own = container_of(&columns[i].header);
        let pair = grosses
            .iter()
            .find(|(_, c)| own.is_some() && *c == own)
            .map(|(f, _)| *f);
        columns[i].field = match pair {
            Some(Field::CrudeGross) => Some(Field::CrudeTare),
            Some(_) => Some(Field::RecoveredTare),
            None => {
                columns[i].note = Some(
                    "not used: an empty container that no weighing with the product names".into(),
                );
                None
            }
        };
    }
}

/// Whether `field` (a mass) is given by a weighing by difference: a gross column and a tare
/// column for it.
pub fn by_difference(columns: &[Column], field: Field) -> Option<(&Column, &Column)> {
    let find = |f: Field| columns.iter().find(|c| c.field == Some(f));
    let (gross, tare) = match field {
        Field::CrudeMass => (Field::CrudeGross, Field::CrudeTare),
        Field::RecoveredMass => (Field::RecoveredGross, Field::RecoveredTare),
        _ => return None,
    };
    Some((find(gross)?, find(tare).or_else(|| find(Field::Tare))?))
}

/// How the experiment's columns pair up, for `check`: "crude mass = E - D", "melting range =
/// mean of trials F, G".
pub fn pairings(columns: &[Column]) -> Vec<String> {
    let mut out = Vec::new();
    for field in [Field::CrudeMass, Field::RecoveredMass] {
        if let Some((gross, tare)) = by_difference(columns, field) {
            let mut line = format!("{} = {} - {}", field.label(), gross.letter, tare.letter);
            if let Some(net) = columns.iter().find(|c| c.field == Some(field)) {
                line.push_str("; the net column ");
                line.push_str(&net.letter);
                line.push_str(" is used, checked against the difference");
            }
            out.push(line);
        }
    }
    let trials: Vec<&str> = columns
        .iter()
        .filter(|c| c.field.is_some_and(Field::repeats))
        .map(|c| c.letter.as_str())
        .collect();
    if !trials.is_empty() {
        out.push(format!(
            "melting range = mean of the trials in {}",
            trials.join(", ")
        ));
    }
    let crude: Vec<&str> = columns
        .iter()
        .filter(|c| {
            matches!(
                c.field,
                Some(Field::CrudeMpRange | Field::CrudeMpOnset | Field::CrudeMpClear)
            )
        })
        .map(|c| c.letter.as_str())
        .collect();
    if !crude.is_empty() {
        out.push(format!(
            "crude melting range in {}; the recrystallized range is the one graded",
            crude.join(", ")
        ));
    }
    out
}

/// Whether the sheet gives the recrystallized product's melting range somehow (its own
/// columns, or trials of it).
pub fn has_trials(columns: &[Column]) -> bool {
    columns.iter().any(|c| c.field.is_some_and(Field::repeats))
}

/// The repeat determinations of a row as they are read, in sheet order: ranges, and onsets and
/// clear points paired by their order.
#[derive(Default)]
pub(super) struct Trials {
    ranges: Vec<Option<(f64, f64)>>,
    onsets: Vec<Option<f64>>,
    clears: Vec<Option<f64>>,
    tare: Option<f64>,
}

impl Trials {
    /// Keeps a trial's range as read (`None` for a blank trial).
    pub(super) fn push_range(&mut self, r: Option<(f64, f64)>) {
        self.ranges.push(r);
    }

    /// Keeps a trial value or a shared tare; false for any other field.
    pub(super) fn take(&mut self, field: Field, value: Option<f64>) -> bool {
        match field {
            Field::MpTrialOnset => self.onsets.push(value),
            Field::MpTrialClear => self.clears.push(value),
            Field::Tare => self.tare = value,
            _ => return false,
        }
        true
    }

    /// The trials given (a blank one left out), and a tare weighed once for both products
    /// where no own tare was read.
    pub(super) fn finish(self, sub: &mut Submission) {
        let paired = (0..self.onsets.len().max(self.clears.len())).map(|i| {
            let o = self.onsets.get(i).copied().flatten();
            let c = self.clears.get(i).copied().flatten();
            (o.or(c), c.or(o))
        });
        sub.mp_trials = self
            .ranges
            .into_iter()
            .map(|r| r.map_or((None, None), |(o, c)| (Some(o), Some(c))))
            .chain(paired)
            .filter(|(o, c)| o.is_some() || c.is_some())
            .map(|(onset, clear)| Trial { onset, clear })
            .collect();
        if let Some(t) = self.tare {
            sub.crude_tare_g.get_or_insert(t);
            sub.recovered_tare_g.get_or_insert(t);
        }
    }
}

#[cfg(test)]
mod tests {
    use super::super::headers::parse_header;
    use super::*;

    fn field(text: &str) -> Option<HeaderMeaning> {
        classify(&parse_header(text))
    }

    /// The melting columns of the experiment in other languages, by the vocabulary's classes
    /// (the words a German, Spanish or French lab sheet uses: from memory).
    #[test]
    fn melting_marks_in_other_languages() {
        use Field::*;
        for (text, want) in [
            ("Rohprodukt Smp (°C)", CrudeMpRange),
            ("Smp Versuch 1", MpTrialRange),
            ("Smp Versuch 2, Beginn", MpTrialOnset),
            ("Mischschmelzpunkt (°C)", MixedMpRange),
            ("Punto de fusión crudo", CrudeMpRange),
            ("Punto de fusión, ensayo 2", MpTrialRange),
            ("Point de fusion du brut (°C)", CrudeMpRange),
            ("Point de fusion du mélange", MixedMpRange),
        ] {
            assert_eq!(field(text), Some(HeaderMeaning::Field(want)), "{text:?}");
        }
        // a plain melting range in any language is the general rules' (the graded range)
        assert_eq!(field("Schmelzbereich (°C)"), None);
    }

    /// Headers of the trial sheets, and spellings of the same (common practice).
    #[test]
    fn headers_of_the_whole_experiment() {
        use Field::*;
        for (text, want) in [
            ("Crude mp (°C)", CrudeMpRange),
            ("Crude m.p. onset", CrudeMpOnset),
            ("MP before recrystallization, end", CrudeMpClear),
            ("mp Trial 1", MpTrialRange),
            ("mp Trial 2", MpTrialRange),
            ("MP 1st capillary (°C)", MpTrialRange),
            ("Run B mp start", MpTrialOnset),
            ("Mixed mp (°C)", MixedMpRange),
            ("Mixture m.p. end", MixedMpClear),
            ("Unknown #", UnknownCode),
            ("Unknown no.", UnknownCode),
            ("Sample code", UnknownCode),
            ("Identified as", IdentifiedAs),
            ("Identity", IdentifiedAs),
            ("Unknown is", IdentifiedAs),
            ("Empty vial (g)", Tare),
            ("Watch glass (g)", Tare),
            ("Tare, crude (g)", CrudeTare),
            ("Vial + crystals (g)", RecoveredGross),
            ("Vial + crude (g)", CrudeGross),
            ("Watch glass and product (g)", RecoveredGross),
            ("Recryst. mass (g)", RecoveredMass),
            ("Mass after recrystallization (g)", RecoveredMass),
        ] {
            assert_eq!(field(text), Some(HeaderMeaning::Field(want)), "{text:?}");
        }
        assert!(matches!(
            field("Vial after transfer (g)"),
            Some(HeaderMeaning::NotOwn(_))
        ));
        // left to the general rules
        for text in [
            "Recryst. mp (°C)",
            "m.p. range (°C)",
            "Crude product mass (g)",
            "Recovered mass (g)",
            "Gross mass (g)",
            "Lit. m.p.",
            "Student ID",
        ] {
            assert_eq!(field(text), None, "{text:?}");
        }
    }
}
