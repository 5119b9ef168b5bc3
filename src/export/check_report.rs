//! The report `benchgrade check` prints: how each sheet's headers were understood, then the
//! flagged rows grouped by file and section. Colour only on a terminal, never with NO_COLOR.
//! Student names are left out; the id is enough to find the row.

use std::fmt::Write as _;

use crate::ingest::{Problem, SheetReport};
use crate::model::Graded;
use crate::model::Tally;
use crate::model::{Assessed, Flag, Severity};

/// Text from a spreadsheet made safe for a terminal: control characters (an escape sequence
/// could recolour or clear the screen) and the invisible characters that reorder text are shown
/// as `\x1b`-style escapes. Everything the binary prints passes through it.
pub fn printable(text: &str) -> std::borrow::Cow<'_, str> {
    let unsafe_char = |c: char| {
        c.is_control()
            || matches!(c, '\u{200b}'..='\u{200f}' | '\u{202a}'..='\u{202e}' | '\u{2066}'..='\u{2069}')
    };
    if !text.chars().any(unsafe_char) {
        return text.into();
    }
    let mut out = String::with_capacity(text.len() + 8);
    for c in text.chars() {
        if unsafe_char(c) {
            let n = u32::from(c);
            if n < 0x100 {
                let _ = write!(out, "\\x{n:02x}");
            } else {
                let _ = write!(out, "\\u{{{n:04x}}}");
            }
        } else {
            out.push(c);
        }
    }
    out.into()
}

/// Terminal styling, or none.
#[derive(Clone, Copy)]
pub struct Style {
    pub color: bool,
}

impl Style {
    fn paint(self, code: &str, text: &str) -> String {
        if self.color {
            format!("\x1b[{code}m{text}\x1b[0m")
        } else {
            text.to_string()
        }
    }
    fn bold(self, t: &str) -> String {
        self.paint("1", t)
    }
    fn impossible(self, t: &str) -> String {
        self.paint("31", t)
    }
    fn suspicious(self, t: &str) -> String {
        self.paint("33", t)
    }
    fn dim(self, t: &str) -> String {
        self.paint("2", t)
    }
}

fn sheet_title(source: &str, sheet: Option<&String>) -> String {
    match sheet {
        Some(s) => format!("{} [{}]", printable(source), printable(s)),
        None => printable(source).into_owned(),
    }
}

/// The unit a numeric column was read in, and where it came from.
fn unit_note(c: &crate::ingest::table::Column) -> String {
    use crate::ingest::table::UnitSource;
    let Some(f) = c.field.filter(|f| f.is_numeric() || f.is_range()) else {
        return String::new();
    };
    match (c.unit, c.unit_source) {
        (Some(u), Some(UnitSource::UnitsRow)) => format!(", in {} (units row)", u.symbol()),
        (Some(u), _) => format!(", in {} (header)", u.symbol()),
        (None, _) => format!(
            ", in {} unless a cell says otherwise",
            f.quantity().base_unit()
        ),
    }
}

/// How the headers of every sheet were mapped.
pub fn layouts(sheets: &[SheetReport], style: Style) -> String {
    let mut out = String::new();
    let _ = writeln!(out, "{}", style.bold("Columns"));
    for s in sheets {
        let mut extra = String::new();
        if s.decimal_comma {
            extra.push_str(", decimal commas");
        }
        if let Some(enc) = &s.encoding {
            let _ = write!(extra, ", {enc}");
        }
        let rows = match s.layout.sub_header_row {
            Some(sub) => format!(
                "header rows {}-{sub} (group names over sub-headers)",
                s.layout.header_row
            ),
            None => format!("header row {}", s.layout.header_row),
        };
        let _ = writeln!(
            out,
            "  {}: {rows}, {} student rows{}",
            sheet_title(&s.source, s.sheet.as_ref()),
            s.students,
            extra
        );
        if let Some(r) = s.layout.units_row {
            let _ = writeln!(out, "    units row {r} (not a submission)");
        }
        if let Some(m) = crate::ingest::unnamed_message(&s.unnamed) {
            let _ = writeln!(out, "    {m}");
        }
        below_the_block(&mut out, s);
        columns(&mut out, s, style);
        text_values(&mut out, s);
        for p in &s.layout.pairings {
            let _ = writeln!(out, "    {p}");
        }
    }
    out
}

/// Each column of a sheet, with the field it was read as (or why not), its unit and source.
fn columns(out: &mut String, s: &SheetReport, style: Style) {
    for c in &s.layout.columns {
        let target = match (c.field, &c.note) {
            (Some(f), _) => {
                let mapped = if c.explicit { " (mapped)" } else { "" };
                let commas = if c.decimal == Some(crate::ingest::values::Decimal::Comma)
                    && !s.decimal_comma
                {
                    ", decimal commas (as its cells show)"
                } else {
                    ""
                };
                format!("{}{mapped}{}{commas}", f.label(), unit_note(c))
            }
            (None, Some(note)) => style.dim(&printable(note)),
            (None, None) => style.dim("not used"),
        };
        let _ = writeln!(
            out,
            "    {:>3}  {:<32} -> {}",
            c.letter,
            format!("\"{}\"", printable(&c.header)),
            target
        );
    }
}

/// The rows below the notes or summary block: late entries read as students, and the rest
/// passed over, by row.
fn below_the_block(out: &mut String, s: &SheetReport) {
    let Some(block) = s.block else { return };
    if !s.late.is_empty() {
        let _ = writeln!(
            out,
            "    {} {} stand{} below the notes or summary block at row {block} and {} like {} (an id or name, and a mass or melting entry): read as {}, with a note",
            if s.late.len() == 1 { "row" } else { "rows" },
            crate::ingest::row_list(&s.late),
            if s.late.len() == 1 { "s" } else { "" },
            if s.late.len() == 1 { "looks" } else { "look" },
            if s.late.len() == 1 { "a student" } else { "students" },
            if s.late.len() == 1 { "one" } else { "students" },
        );
    }
    if !s.passed.is_empty() {
        let _ = writeln!(
            out,
            "    {} {} below the notes or summary block at row {block}: passed over, not {}",
            if s.passed.len() == 1 { "row" } else { "rows" },
            crate::ingest::row_list(&s.passed),
            if s.passed.len() == 1 {
                "a student"
            } else {
                "students"
            }
        );
    }
}

/// The values read from text that is not a plain number, each beside its text.
fn text_values(out: &mut String, s: &SheetReport) {
    if s.text_values.is_empty() {
        return;
    }
    let _ = writeln!(out, "    values read from text:");
    for v in &s.text_values {
        let _ = writeln!(
            out,
            "      {:<10} \"{}\" -> {}",
            printable(&v.cell),
            printable(&v.text),
            v.read
        );
    }
    if s.text_values_more > 0 {
        let _ = writeln!(out, "      and {} more", s.text_values_more);
    }
}

/// Flagged and excused rows grouped by file, then section, in input order.
pub fn flagged(rows: &[Graded], style: Style) -> String {
    let mut out = String::new();
    let _ = writeln!(out, "{}", style.bold("Flagged rows"));
    let mut groups: Vec<(&str, &str, Vec<&Assessed>)> = Vec::new();
    for a in rows
        .iter()
        .map(|g| &g.assessed)
        .filter(|a| !a.flags.is_empty() || a.excused.is_some())
    {
        let key = (a.submission.source.as_str(), a.submission.section.as_str());
        match groups.iter_mut().find(|g| (g.0, g.1) == key) {
            Some(g) => g.2.push(a),
            None => groups.push((key.0, key.1, vec![a])),
        }
    }
    if groups.is_empty() {
        let _ = writeln!(out, "  none");
    }
    let mut last_file = "";
    for (file, section, members) in groups {
        if file != last_file {
            let _ = writeln!(out, "  {}", style.bold(&printable(file)));
            last_file = file;
        }
        let _ = writeln!(out, "    section {}", printable(section));
        for a in members {
            let id = printable(a.submission.student_id.as_deref().unwrap_or("(no id)"));
            if let Some(why) = &a.excused {
                let who = format!("row {:<5} {:<12}", a.submission.row, id);
                let _ = writeln!(out, "      {who} - excused, not graded: {}", printable(why));
            }
            for (i, (flag, note)) in a.flags.iter().enumerate() {
                let mark = flag.severity().marker();
                let code = match flag.severity() {
                    Severity::Impossible => style.impossible(flag.code()),
                    Severity::Suspicious => style.suspicious(flag.code()),
                };
                let who = if i == 0 {
                    format!("row {:<5} {:<12}", a.submission.row, id)
                } else {
                    " ".repeat(22)
                };
                let _ = writeln!(out, "      {who} {mark} {code}: {}", printable(note));
            }
        }
    }
    out
}

/// What each flag code raised in the batch means, in the order of the flag table.
pub fn legend(rows: &[Graded], style: Style) -> String {
    let mut out = String::new();
    let _ = writeln!(out, "{}", style.bold("Flags raised, and what they mean"));
    let raised: Vec<Flag> = Flag::ALL
        .into_iter()
        .filter(|f| rows.iter().any(|g| g.assessed.has(*f)))
        .collect();
    if raised.is_empty() {
        let _ = writeln!(out, "  none");
    }
    for f in raised {
        let s = f.severity();
        let _ = writeln!(
            out,
            "  {:<24} {} {}: {}",
            f.code(),
            s.marker(),
            s.word(),
            f.meaning()
        );
    }
    out
}

/// Totals and the problems, one line each.
pub fn summary(tally: &Tally, problems: &[Problem], files: usize) -> String {
    let clean = tally.rows - tally.impossible - tally.suspicious - tally.excused;
    let excused = match tally.excused {
        0 => String::new(),
        n => format!(", {n} excused (-)"),
    };
    let mut out = format!(
        "{} from {}: {} with impossible entries (!), {} suspicious only (?), {} clean{excused}\n",
        crate::numtext::count(tally.rows, "submission", "submissions"),
        crate::numtext::count(files, "file", "files"),
        tally.impossible,
        tally.suspicious,
        clean
    );
    for p in problems {
        let kind = if p.fatal { "error:" } else { "note:" };
        let _ = writeln!(out, "{kind} {}", printable(&p.to_string()));
    }
    out
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn escape_sequences_are_shown_not_sent() {
        assert_eq!(printable("Sec 01"), "Sec 01");
        assert_eq!(
            printable("\u{1b}[2J\u{1b}]0;pwned\u{7}"),
            "\\x1b[2J\\x1b]0;pwned\\x07"
        );
        assert_eq!(printable("a\nb\u{202e}c"), "a\\x0ab\\u{202e}c");
    }
}
