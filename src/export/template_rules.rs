//! The data-validation rule of each entry column of an entry workbook, with its input and
//! error messages in words: a hard stop for what cannot be right (a letter in a number cell, a
//! mass of zero or less, a recovered mass above the crude mass beside it, a temperature outside
//! the apparatus's span, an onset above the clear point, a container weighing less full than
//! empty); a shaded cell, never a refusal, for what a student may really have written and the
//! grader flags anyway (a reported recovery above 100 %, a recovered mass by difference above
//! the crude one). A spreadsheet keeps one rule a cell, and a rule of the "warning" style lets a
//! letter through as well, so those are told by shading.

use rust_xlsxwriter::{
    Color, ConditionalFormatFormula, DataValidation, DataValidationErrorStyle, DataValidationRule,
    Format, Formula, Worksheet, XlsxError,
};

use super::template::{letter, FIRST_ENTRY_COL, MAX_MASS_G, SPAN_C, STATUS_WORDS};
use super::template_entries::Entry;

/// The most solvent a template accepts, in mL.
const MAX_SOLVENT_ML: f64 = 1000.0;
/// The highest reported recovery a template accepts, in %: above 100 is kept (and shaded), a
/// figure beyond this is a slip (a decimal point lost).
const MAX_REPORTED_PCT: f64 = 1000.0;

/// Where each entry is, by column letter.
pub fn column_of(entries: &[Entry], e: Entry) -> Option<String> {
    entries
        .iter()
        .position(|x| *x == e)
        .map(|i| letter(FIRST_ENTRY_COL + i as u16))
}

/// A rule with its input message and error message (a stop: the value is refused).
pub fn rule(
    input: (&str, &str),
    error: (&str, &str),
    v: DataValidation,
) -> Result<DataValidation, XlsxError> {
    v.set_input_title(input.0)?
        .set_input_message(input.1)?
        .set_error_title(error.0)?
        .set_error_message(error.1)
        .map(|v| v.set_error_style(DataValidationErrorStyle::Stop))
}

fn custom(formula: String) -> DataValidation {
    DataValidation::new().allow_custom(Formula::new(formula))
}

/// The rule of a plain number entry; `crude` is the crude mass's cell on the row, if any.
fn number_rule(e: Entry, me: &str, crude: &str) -> Result<DataValidation, XlsxError> {
    let between = |lo: f64, hi: f64| {
        DataValidation::new().allow_decimal_number(DataValidationRule::Between(lo, hi))
    };
    match e {
        Entry::CrudeMass => rule(
            ("Crude mass", "The crude product's mass in grams, as weighed (for example 2.84)."),
            ("Not a mass in grams", "Type the crude mass in grams: a number from 0.0001 to 100 (a figure in milligrams divided by 1000)."),
            between(0.0001, MAX_MASS_G),
        ),
        // more recovered than was crude is impossible (issue 24: refused as it is typed)
        Entry::RecoveredMass if !crude.is_empty() => rule(
            ("Recovered mass", "The dry recrystallized product's mass in grams; at most the crude mass."),
            ("Recovered more than crude", "The recovered mass must be a number in grams above 0, at most 100 and at most the crude mass beside it: check the weighing and that the product was dry."),
            custom(format!(
                "=AND(ISNUMBER({me}),{me}>0,{me}<={MAX_MASS_G},OR({crude}=\"\",{me}<={crude}))"
            )),
        ),
        Entry::RecoveredMass => rule(
            ("Recovered mass", "The dry recrystallized product's mass in grams."),
            ("Not a mass in grams", "Type the recovered mass in grams: a number from 0.0001 to 100 (a figure in milligrams divided by 1000)."),
            between(0.0001, MAX_MASS_G),
        ),
        Entry::Solvent => rule(
            ("Solvent volume", "The volume of solvent used, in millilitres."),
            ("Not a volume in mL", "Type the solvent volume in millilitres: a number above 0 and at most 1000."),
            custom(format!("=AND(ISNUMBER({me}),{me}>0,{me}<={MAX_SOLVENT_ML})")),
        ),
        Entry::Late => rule(
            ("Days late", "How many days after the deadline the report came in; leave empty if on time."),
            ("Not a number of days", "Type the days late as a number from 0 to 365, or leave the cell empty."),
            between(0.0, 365.0),
        ),
        _ => rule(
            ("Reported recovery", "The percent recovery the student reported (for example 72.4). A value above 100 is kept but shaded."),
            ("Not a percentage", "Type the reported recovery as a number of percent, from 0 to 1000."),
            between(0.0, MAX_REPORTED_PCT),
        ),
    }
}

/// The rule of one weighing by difference: a mass, and the full container no lighter than the
/// empty one.
fn weighing_rule(e: Entry, tare: &str, gross: &str) -> Result<DataValidation, XlsxError> {
    let (h, _) = e.header();
    let (me, other, cmp) = if matches!(e, Entry::CrudeTare | Entry::RecoveredTare) {
        (tare, gross, "<=")
    } else {
        (gross, tare, ">=")
    };
    let what = if cmp == "<=" {
        "The empty container's mass in grams, weighed before the product went in."
    } else {
        "The container with the dry product in it, in grams; at least the empty container."
    };
    rule(
        (h, what),
        ("Not a weighing", "Type a mass in grams: a number above 0 and at most 100; the container with the product may not weigh less than the empty container."),
        custom(format!(
            "=AND(ISNUMBER({me}),{me}>0,{me}<={MAX_MASS_G},OR({other}=\"\",{me}{cmp}{other}))"
        )),
    )
}

/// The rule of a temperature of a melting range: within the apparatus's span, the onset at
/// most the clear point.
fn temperature_rule(e: Entry, onset: &str, clear: &str) -> Result<DataValidation, XlsxError> {
    let (h, _) = e.header();
    let me = if e.pair().is_some_and(|(o, _)| o == e) {
        onset
    } else {
        clear
    };
    let what = if me == onset {
        "The temperature in °C at which the first drop of liquid appeared."
    } else {
        "The temperature in °C at which the last crystal melted; at least the onset."
    };
    let (lo, hi) = SPAN_C;
    rule(
        (h, what),
        ("Not a melting temperature", "Type a temperature in °C within the apparatus's span (20 to 400 °C); the onset may not be above the clear point."),
        custom(format!(
            "=AND(ISNUMBER({me}),{me}>={lo},{me}<={hi},OR({onset}=\"\",{clear}=\"\",{onset}<={clear}))"
        )),
    )
}

/// A data-validation rule with its messages on every entry cell (the unknown's code and
/// identification excepted: the answer key's lists).
pub fn validations(
    ws: &mut Worksheet,
    entries: &[Entry],
    first: u32,
    last: u32,
) -> Result<(), XlsxError> {
    let at =
        |e: Entry| column_of(entries, e).map_or_else(String::new, |c| format!("{c}{}", first + 1));
    for (i, e) in entries.iter().enumerate() {
        let col = FIRST_ENTRY_COL + i as u16;
        let v = if let Some((o, c)) = e.pair() {
            temperature_rule(*e, &at(o), &at(c))?
        } else if let Some((t, g)) = e.weighing() {
            weighing_rule(*e, &at(t), &at(g))?
        } else {
            match e {
                Entry::CrudeMass
                | Entry::RecoveredMass
                | Entry::Solvent
                | Entry::Late
                | Entry::Reported => number_rule(*e, &at(*e), &at(Entry::CrudeMass))?,
                Entry::Status => rule(
                    ("Status", "Leave empty for a student to be graded; choose W, excused, absent or exempt otherwise."),
                    ("Not a status", "Choose a status from the list, or leave the cell empty."),
                    DataValidation::new().allow_list_strings(&STATUS_WORDS)?,
                )?,
                _ => continue,
            }
        };
        ws.add_data_validation(first, col, last, col, &v)?;
    }
    Ok(())
}

/// Shades what may be real but the grader will flag: a recovered mass by difference above the
/// crude one, a reported recovery above 100 %.
pub fn soft_checks(
    ws: &mut Worksheet,
    entries: &[Entry],
    first: u32,
    last: u32,
) -> Result<(), XlsxError> {
    let at = |e: Entry| column_of(entries, e).map(|c| format!("{c}{}", first + 1));
    let amber = Format::new().set_background_color(Color::RGB(0x00F8_CBAD));
    let checks = [
        (
            Entry::RecoveredGross,
            at(Entry::CrudeTare)
                .zip(at(Entry::CrudeGross))
                .zip(at(Entry::RecoveredTare).zip(at(Entry::RecoveredGross)))
                .map(|((ct, cg), (rt, rg))| {
                    format!("=AND(COUNT({ct},{cg},{rt},{rg})=4,{rg}-{rt}>{cg}-{ct})")
                }),
        ),
        (
            Entry::Reported,
            at(Entry::Reported).map(|me| format!("=AND(ISNUMBER({me}),{me}>100)")),
        ),
    ];
    for (e, formula) in checks {
        let (Some(formula), Some(i)) = (formula, entries.iter().position(|x| *x == e)) else {
            continue;
        };
        let col = FIRST_ENTRY_COL + i as u16;
        let shade = ConditionalFormatFormula::new()
            .set_rule(formula.as_str())
            .set_format(&amber);
        ws.add_conditional_format(first, col, last, col, &shade)?;
    }
    Ok(())
}
