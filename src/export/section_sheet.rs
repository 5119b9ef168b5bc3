//! One section's sheet of a graded workbook, laid out to be read on screen and handed back on
//! paper: the assistant's title rows above the table; the student's id and name first and
//! repeated on every printed page; the student's other original columns; the recomputed values;
//! each criterion's points headed by its label and id (the id an override names); the total,
//! letter, flags, reasons and the student's feedback, wrapped. Columns are sized to what they
//! hold (within bounds) as rows stream past, and the sheet prints landscape, fitted to at most
//! a few pages across.

use rust_xlsxwriter::{Format, FormatAlign, Note, Worksheet, XlsxError};

use super::workbook::{fit_cell, Formats};
use crate::ingest::cells::Cell;
use crate::ingest::SheetHead;
use crate::model::columns::{self, Column, Outputs};
use crate::model::{Graded, Severity};

/// Cell notes per section sheet. The writer keeps notes in memory whatever its mode (we
/// measured at about 20 kB each), so beyond this many the "Reasons" column alone carries the
/// explanation (it always does).
pub const NOTES_PER_SHEET: usize = 100;

/// Column widths, in characters: the least and most a column is given.
const NARROWEST: usize = 6;
const WIDEST_ORIGINAL: usize = 22;
/// The widest a recomputed or points column is made.
const WIDEST_ADDED: usize = 14;
/// The flags, reasons and feedback columns, which wrap.
const FLAGS_WIDTH: f64 = 22.0;
const REASONS_WIDTH: f64 = 40.0;
const FEEDBACK_WIDTH: f64 = 70.0;
/// The height of one line of text, in points, and the most lines a header takes.
const LINE_POINTS: f64 = 13.0;
const HEADER_LINES: usize = 6;
/// About how many characters of column width a landscape page holds at full size.
const PAGE_CHARS: usize = 150;
/// Most pages across a sheet is fitted to: a 20-student section prints on at most two pages
/// across and two down at a readable size.
const MAX_PAGES_ACROSS: usize = 2;

/// The recomputed columns after the original ones: the registry's workbook columns.
pub(super) fn computed() -> impl Iterator<Item = &'static Column> {
    columns::carried_by(Outputs::WORKBOOK)
}

/// How many recomputed columns follow the original ones at most.
pub(super) fn computed_count() -> usize {
    computed().count()
}

/// The recomputed columns of a sheet whose rows are like `s`.
fn computed_for(s: &crate::ingest::Submission) -> Vec<&'static Column> {
    computed().filter(|c| c.in_sheet_of(s)).collect()
}

/// The columns after the criteria's points.
const CLOSING: [&str; 6] = ["Total", "Max", "Letter", "Flags", "Reasons", "Feedback"];

/// How many columns a sheet adds to the student's own.
pub(super) fn added_columns(criteria: usize) -> usize {
    computed_count() + criteria + CLOSING.len()
}

/// A section sheet being written.
pub(super) struct SectionSheet {
    pub(super) index: usize,
    pub(super) name: String,
    /// The original columns shown, in the order shown: the id and name first.
    order: Vec<usize>,
    identity: usize,
    /// The sheet row of the header, and the next row to write.
    pub(super) header_row: u32,
    pub(super) next_row: u32,
    /// The widest text seen in each column, in characters.
    widths: Vec<usize>,
    pub(super) notes: usize,
    /// Students past the last row a sheet holds, left to results.csv.
    pub(super) past_last_row: usize,
    /// The recomputed columns this sheet carries.
    computed: Vec<&'static Column>,
}

/// Students a sheet sizes the rows of for their wrapped text (far more than a printout holds).
const SIZED_ROWS: u32 = 5_000;

/// The last row a worksheet holds (0-based): 1,048,576 rows.
const LAST_ROW: u32 = 1_048_575;

impl SectionSheet {
    /// How many original columns the sheet shows.
    pub(super) fn originals(&self) -> usize {
        self.order.len()
    }

    /// Where the recomputed columns start.
    pub(super) fn computed_start(&self) -> u16 {
        self.order.len() as u16
    }

    fn last_column(&self) -> u16 {
        (self.widths.len() - 1) as u16
    }

    fn widen(&mut self, col: usize, chars: usize) {
        if let Some(w) = self.widths.get_mut(col) {
            *w = (*w).max(chars);
        }
    }
}

/// The original columns in the order a sheet shows them: the id and name columns first, the
/// rest as they were; at most `room` of them.
fn order(head: &SheetHead, room: usize) -> Vec<usize> {
    let rest = (0..head.headers.len()).filter(|i| !head.identity.contains(i));
    head.identity
        .iter()
        .copied()
        .chain(rest)
        .take(room)
        .collect()
}

/// The header texts of a sheet: the original columns shown, the recomputed ones, each
/// criterion as "Label pts (id)", and the closing columns.
fn header_texts(
    head: &SheetHead,
    order: &[usize],
    computed: &[&Column],
    criteria: &[(String, String)],
) -> Vec<String> {
    let mut h: Vec<String> = order.iter().map(|&i| head.headers[i].clone()).collect();
    h.extend(computed.iter().map(|c| c.header()));
    h.extend(
        criteria
            .iter()
            .map(|(label, id)| format!("{label} pts ({id})")),
    );
    h.extend(CLOSING.map(String::from));
    h
}

/// Starts a section sheet in `ws` for rows like `first` (its sheet's headers and columns): the title rows, the header, the number formats by column,
/// the frozen panes and the print setup.
pub(super) fn start(
    ws: &mut Worksheet,
    index: usize,
    name: String,
    first: &crate::ingest::Submission,
    criteria: &[(String, String)],
    room: usize,
    f: &Formats,
) -> Result<SectionSheet, XlsxError> {
    let head = &*first.original_headers.clone().unwrap_or_default();
    let order = order(head, room);
    let computed = computed_for(first);
    let header = header_texts(head, &order, &computed, criteria);
    let mut r = 0;
    for (i, t) in head.title.iter().enumerate() {
        let format = if i == 0 { &f.title } else { &f.plain };
        ws.write_string_with_format(r, 0, fit_cell(t), format)?;
        r += 1;
    }
    if r > 0 {
        r += 1;
    }
    let widths = header_widths(&header);
    let lines = header
        .iter()
        .zip(&widths)
        .enumerate()
        .map(|(c, (h, w))| words_lines(h, shown_width(*w, c < order.len())))
        .max()
        .unwrap_or(1)
        .min(HEADER_LINES);
    ws.set_row_height(r, LINE_POINTS * lines as f64 + 2.0)?;
    for (c, h) in header.iter().enumerate() {
        ws.write_string_with_format(r, c as u16, fit_cell(h), &f.header)?;
    }
    let base = order.len() as u16;
    for c in 0..base {
        ws.set_column_format(c, &f.top)?;
    }
    for (i, c) in computed.iter().enumerate() {
        ws.set_column_format(base + i as u16, f.number(c, None))?;
    }
    let total = base + (computed.len() + criteria.len()) as u16;
    // the points top-aligned like every other value of the row
    for c in base + computed.len() as u16..total {
        ws.set_column_format(c, &f.top)?;
    }
    ws.set_column_format(total, &f.bold)?;
    ws.set_column_format(total + 1, &f.top)?;
    ws.set_column_format(total + 2, &f.top)?;
    // the flags wrap; the reasons and the feedback stay on one line (on screen the cell shows
    // them whole when selected; on paper the handouts carry them), so no row grows tall
    let last = header.len() as u16 - 1;
    ws.set_column_format(last - 2, &f.wrap)?;
    for c in last - 1..=last {
        ws.set_column_format(c, &f.top)?;
    }
    ws.set_freeze_panes(r + 1, 0)?;
    let sheet = SectionSheet {
        index,
        name,
        identity: head.identity.iter().filter(|&&i| i < room).count(),
        order,
        header_row: r,
        next_row: r + 1,
        widths,
        notes: 0,
        past_last_row: 0,
        computed,
    };
    print_setup(ws, &sheet)?;
    Ok(sheet)
}

/// The width each header asks of its column: a header wraps onto three lines, but whole
/// words fit (narrow columns keep a section's printout to two pages across).
fn header_widths(header: &[String]) -> Vec<usize> {
    header
        .iter()
        .map(|h| {
            let longest = h.split(' ').map(|w| w.chars().count()).max().unwrap_or(0);
            longest.max(h.chars().count().div_ceil(3) + 1)
        })
        .collect()
}

/// The least width a column asking `wanted` characters is given when the sheet is finished
/// (its cells can only widen it), by which its header is wrapped.
fn shown_width(wanted: usize, original: bool) -> f64 {
    let widest = if original {
        WIDEST_ORIGINAL
    } else {
        WIDEST_ADDED
    };
    wanted.clamp(NARROWEST, widest) as f64 + 1.0
}

/// How many lines `text` takes wrapped at word boundaries in a column `width` characters wide,
/// counting a bold header's characters as a little wider than the width unit (the width of a
/// digit in the default font).
fn words_lines(text: &str, width: f64) -> usize {
    let per_line = ((width - 1.0) * 0.9).max(1.0) as usize;
    let mut lines = 1;
    let mut used = 0;
    for word in text.split_whitespace() {
        let n = word.chars().count();
        if used == 0 {
            used = n;
        } else if used + 1 + n <= per_line {
            used += 1 + n;
        } else {
            lines += 1 + (n.saturating_sub(1)) / per_line;
            used = n % per_line.max(1);
        }
    }
    lines
}

/// About how many lines `text` wraps onto in a column `width` characters wide.
fn lines_in(text: &str, width: f64) -> usize {
    let per_line = (width * 1.1).max(1.0) as usize;
    text.split('\n')
        .map(|l| l.chars().count().div_ceil(per_line).max(1))
        .sum()
}

/// Landscape, the header row and the id and name columns on every page, page numbers.
fn print_setup(ws: &mut Worksheet, sheet: &SectionSheet) -> Result<(), XlsxError> {
    ws.set_landscape();
    // a block of students' pages side by side, then the next block
    ws.set_page_order(false);
    ws.set_repeat_rows(sheet.header_row, sheet.header_row)?;
    if sheet.identity > 0 {
        ws.set_repeat_columns(0, sheet.identity as u16 - 1)?;
    }
    ws.set_print_gridlines(true);
    let name = sheet.name.replace('&', "&&");
    ws.set_header(format!("&L{name}&Rbenchgrade"));
    ws.set_footer("&CPage &P of &N");
    ws.set_margins(0.4, 0.4, 0.6, 0.6, 0.3, 0.3);
    Ok(())
}

/// Sizes the columns to what they hold, adds the filter, and fits the sheet to at most a few
/// pages across.
pub(super) fn finish(ws: &mut Worksheet, sheet: &SectionSheet) -> Result<(), XlsxError> {
    let last = sheet.last_column();
    let mut total = 0.0;
    for (c, &w) in sheet.widths.iter().enumerate() {
        let c = c as u16;
        let width = if c == last {
            FEEDBACK_WIDTH
        } else if c + 1 == last {
            REASONS_WIDTH
        } else if c + 2 == last {
            FLAGS_WIDTH
        } else if usize::from(c) < sheet.originals() {
            w.clamp(NARROWEST, WIDEST_ORIGINAL) as f64 + 1.0
        } else {
            w.clamp(NARROWEST, WIDEST_ADDED) as f64 + 1.0
        };
        total += width;
        ws.set_column_width(c, width)?;
    }
    let last_row = sheet.next_row.saturating_sub(1).max(sheet.header_row + 1);
    ws.autofilter(sheet.header_row, 0, last_row, last)?;
    // the printout stops at the flags: the reasons and the feedback are long text that would
    // make every printed row tall; the handouts print them a student a page
    ws.set_print_area(0, 0, last_row, last - 2)?;
    let printed = total - FEEDBACK_WIDTH - REASONS_WIDTH;
    let across = (printed as usize)
        .div_ceil(PAGE_CHARS)
        .clamp(1, MAX_PAGES_ACROSS);
    ws.set_print_fit_to_pages(across as u16, 0);
    Ok(())
}

/// The number format of a percent cell copied from a student's sheet.
fn percent_format() -> &'static Format {
    static PERCENT: std::sync::OnceLock<Format> = std::sync::OnceLock::new();
    PERCENT.get_or_init(|| Format::new().set_num_format("0.0#%"))
}

/// A number copied from a student's sheet as a sheet's General format shows it: at most ten
/// significant digits (common practice: spreadsheet programs show about ten in General), so a
/// formula's result such as 0.7289999999999999 is copied as the 0.729 the student saw.
fn shown_digits(v: f64) -> f64 {
    if !v.is_finite() {
        return v;
    }
    // the shortest text that reads back as `v` already has at most ten significant digits for
    // nearly every typed number; then rounding to ten changes nothing (`v` lies far within half
    // a unit of the tenth digit of it), and the exact ten-digit expansion can be skipped
    let mut shortest = ryu::Buffer::new();
    if significant_digits(shortest.format_finite(v)) <= 10 {
        return v;
    }
    let text = format!("{:.*e}", 9, v);
    text.parse().unwrap_or(v)
}

/// The significant digits of a number as ryu writes it ("0.00729" 3, "1.5e20" 2, "1200.0" 2).
fn significant_digits(text: &str) -> usize {
    let mantissa = text.split(['e', 'E']).next().unwrap_or(text);
    let digits: Vec<u8> = mantissa.bytes().filter(u8::is_ascii_digit).collect();
    let first = digits.iter().position(|d| *d != b'0');
    let last = digits.iter().rposition(|d| *d != b'0');
    match (first, last) {
        (Some(a), Some(b)) => b - a + 1,
        _ => 0,
    }
}

/// Writes a cell as the student's sheet held it (long text wrapped); the characters it shows.
fn write_cell(
    ws: &mut Worksheet,
    (row, col): (u32, u16),
    cell: &Cell,
    f: &Formats,
) -> Result<usize, XlsxError> {
    match cell {
        Cell::Number(v) if v.is_finite() => {
            ws.write_number(row, col, shown_digits(*v))?;
        }
        Cell::Text(t) if t.chars().count() > WIDEST_ORIGINAL => {
            ws.write_string_with_format(row, col, fit_cell(t), &f.wrap)?;
        }
        Cell::Text(t) | Cell::Error(t) | Cell::Date(t) => {
            ws.write_string(row, col, fit_cell(t))?;
        }
        Cell::Bool(b) => {
            ws.write_boolean(row, col, *b)?;
        }
        // as the student's sheet showed it: a percentage
        Cell::Percent(v) if v.is_finite() => {
            ws.write_number_with_format(row, col, *v, percent_format())?;
        }
        _ => return Ok(0),
    }
    Ok(cell.as_text().map_or(0, |t| t.chars().count()))
}

/// Appends one student's row.
pub(super) fn write_row(
    ws: &mut Worksheet,
    sheet: &mut SectionSheet,
    g: &Graded,
    f: &Formats,
) -> Result<(), XlsxError> {
    let r = sheet.next_row;
    if r > LAST_ROW {
        sheet.past_last_row += 1;
        return Ok(());
    }
    sheet.next_row += 1;
    let s = &g.assessed.submission;
    // rust_xlsxwriter keeps every row's height in memory even in constant-memory mode: past
    // the rows anyone prints, rows keep the default height so that memory stays bounded
    if r - sheet.header_row <= SIZED_ROWS {
        let lines = row_lines(sheet, g);
        if lines > 1 {
            ws.set_row_height(r, LINE_POINTS * lines as f64 + 2.0)?;
        }
    }
    for c in 0..sheet.order.len() {
        if let Some(cell) = s.original.get(sheet.order[c]) {
            let shown = write_cell(ws, (r, c as u16), cell, f)?;
            sheet.widen(c, shown);
        }
    }
    let mut c = sheet.computed_start();
    write_computed(ws, r, c, &sheet.computed, g, f)?;
    c += sheet.computed.len() as u16;
    for cs in &g.score.criteria {
        ws.write_number(r, c, cs.points)?;
        c += 1;
    }
    if g.score.criteria.is_empty() {
        c += (sheet.widths.len() - usize::from(c) - CLOSING.len()) as u16;
    }
    ws.write_number(r, c + 1, g.score.max)?;
    let feedback = c + 5;
    ws.write_string_with_format(r, feedback, fit_cell(&g.score.feedback), &f.top)?;
    if let Some(why) = &g.assessed.excused {
        // no score, no letter: the reason where the flags would be
        ws.write_string(r, c + 2, "excused")?;
        ws.write_string_with_format(r, c + 4, fit_cell(&format!("excused: {why}")), &f.top)?;
        return Ok(());
    }
    ws.write_number(r, c, g.score.total)?; // bold by its column's format
    if let Some(l) = &g.score.letter {
        ws.write_string(r, c + 2, l)?;
    }
    write_flags(ws, sheet, r, c + 3, g, f)
}

/// How many lines the row's wrapped text needs: the flags and any long original text (the
/// reasons and the feedback stay on one line) (a spreadsheet program does not grow a row for wrapped text written by
/// another program, so the height is set).
fn row_lines(sheet: &SectionSheet, g: &Graded) -> usize {
    let a = &g.assessed;
    let flags: usize = a.flags.iter().map(|(f, _)| f.code().len() + 4).sum();
    let originals = sheet
        .order
        .iter()
        .filter_map(|&i| a.submission.original.get(i))
        .filter_map(Cell::as_text)
        .map(|t| lines_in(&t, WIDEST_ORIGINAL as f64))
        .max()
        .unwrap_or(1);
    let text = |n: usize, width: f64| n.div_ceil((width * 1.1) as usize).max(1);
    [text(flags, FLAGS_WIDTH), originals]
        .into_iter()
        .max()
        .unwrap_or(1)
}

/// The recomputed values from column `base` on, each shaded by the worst flag about it; an
/// empty value is left unshaded (the flag's reason says why it is empty).
fn write_computed(
    ws: &mut Worksheet,
    r: u32,
    base: u16,
    computed: &[&'static Column],
    g: &Graded,
    f: &Formats,
) -> Result<(), XlsxError> {
    let flags = &g.assessed.flags;
    let row = g.row();
    for (i, column) in computed.iter().enumerate() {
        let mut severity = None;
        for (flag, _) in flags.iter().filter(|(fl, _)| column.shaded_by.contains(fl)) {
            if severity != Some(Severity::Impossible) {
                severity = Some(flag.severity());
            }
        }
        let col = base + i as u16;
        match (column.number(row).filter(|x| x.is_finite()), severity) {
            (Some(x), None) => ws.write_number(r, col, x)?,
            (Some(x), sev) => ws.write_number_with_format(r, col, x, f.number(column, sev))?,
            (None, _) => ws,
        };
    }
    Ok(())
}

/// The flags column (each code with its marker, shaded by the worst) at `col`, the reasons
/// beside it, and a note with the reasons while the sheet has notes to spare.
fn write_flags(
    ws: &mut Worksheet,
    sheet: &mut SectionSheet,
    r: u32,
    col: u16,
    g: &Graded,
    f: &Formats,
) -> Result<(), XlsxError> {
    let a = &g.assessed;
    if a.flags.is_empty() {
        return Ok(());
    }
    let worst = if a.is_impossible() {
        Severity::Impossible
    } else {
        Severity::Suspicious
    };
    let marked: Vec<String> = a
        .flags
        .iter()
        .map(|(fl, _)| format!("{} {}", fl.severity().marker(), fl.code()))
        .collect();
    let flags = marked.join("; ");
    sheet.widen(usize::from(col), flags.chars().count().min(30));
    let fill = &f.text[super::workbook::fill_index(Some(worst))];
    ws.write_string_with_format(r, col, fit_cell(&flags), fill)?;
    let text: Vec<String> = a
        .flags
        .iter()
        .map(|(fl, n)| format!("{}: {n}", fl.code()))
        .collect();
    ws.write_string_with_format(r, col + 1, fit_cell(&text.join("; ")), &f.top)?;
    if sheet.notes < NOTES_PER_SHEET {
        sheet.notes += 1;
        let note = Note::new(fit_cell(&text.join("\n"))).set_author("benchgrade");
        ws.insert_note(r, col, &note)?;
    }
    Ok(())
}

/// A wrapped, top-aligned text format.
pub(super) fn wrap_format() -> Format {
    Format::new().set_text_wrap().set_align(FormatAlign::Top)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn copied_numbers_keep_the_digits_a_sheet_shows() {
        // hand-worked: a formula's 1.87 / 2.565 shown in General is 0.729044834 (ten digits);
        // a result off by floating-point noise is copied as the number the student saw
        assert_eq!(shown_digits(0.728_999_999_999_999_9), 0.729);
        assert_eq!(shown_digits(2.31), 2.31);
        assert_eq!(shown_digits(1.87 / 2.565), 0.729_044_834_3);
        assert_eq!(shown_digits(-0.1 - 0.2), -0.3);
        assert_eq!(shown_digits(0.0), 0.0);
        assert_eq!(shown_digits(123_456.789_012_34), 123_456.789_0);
    }

    proptest::proptest! {
        /// The shortcut for numbers of at most ten significant digits gives what the exact
        /// ten-digit rounding gives (Rust's own `{:.9e}` formatting is the reference).
        #[test]
        fn the_shortcut_agrees_with_the_exact_rounding(
            bits in proptest::num::f64::NORMAL | proptest::num::f64::SUBNORMAL,
            typed in -1_000_000_000i64..1_000_000_000,
            places in 0i32..8,
        ) {
            let exact = |v: f64| format!("{:.*e}", 9, v).parse::<f64>().unwrap_or(v);
            proptest::prop_assert_eq!(shown_digits(bits).to_bits(), exact(bits).to_bits());
            let v = typed as f64 / 10f64.powi(places);
            proptest::prop_assert_eq!(shown_digits(v).to_bits(), exact(v).to_bits());
        }
    }

    /// Hand-counted: leading zeros and the zeros that only place the point are not significant
    /// (common practice).
    #[test]
    fn significant_digits_are_counted_without_leading_or_trailing_zeros() {
        assert_eq!(significant_digits("0.00729"), 3);
        assert_eq!(significant_digits("1.5e20"), 2);
        assert_eq!(significant_digits("1200.0"), 2);
        assert_eq!(significant_digits("0.0"), 0);
        assert_eq!(significant_digits("-123456789.01"), 11);
    }

    #[test]
    fn headers_wrap_at_words() {
        // hand-counted: "Agreement with the literature value pts (depression)" in a column
        // 15 wide (12 characters a line): Agreement / with the / literature / value pts /
        // (depression)
        let h = "Agreement with the literature value pts (depression)";
        assert_eq!(words_lines(h, 15.0), 5);
        assert_eq!(words_lines("Total", 8.0), 1);
    }
}
