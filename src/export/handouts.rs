//! DIR/handouts/<section>.html: what a grader prints and hands back, one student a printed page.
//! Each page names the course and experiment, the student and their id, the values they
//! reported and what benchgrade recomputed, each criterion's points, the flags in words, any
//! override, the feedback, and the total and letter. Self-contained (inline style, no script,
//! nothing loaded), every text escaped. Written on the text writer thread as rows stream past,
//! a section's page after page into its own temporary file.
//!
//! No "Handouts" sheet is added to the graded workbook: a worksheet prints a student a page only
//! with a page break and a layout of its own for every student, which the section sheet (one row
//! a student, its Feedback column holding the same sentences) cannot also be.

use crate::numtext::Fast;
use std::collections::BTreeMap;
use std::fmt::Write as _;
use std::io::Write as _;
use std::path::{Path, PathBuf};

use super::atomic::{AtomicFile, Stage};
use super::html::{escape, escape_into};
use super::workbook::file_stem;
use crate::error::WriteError;
use crate::fields::Field;
use crate::files::partial_path;
use crate::model::columns;
use crate::model::{Flag, Graded, Severity};

/// The folder under the output folder that holds the handouts.
pub const FOLDER: &str = "handouts";

/// Most sections that get a handout file (each is an open file while the batch streams).
pub const MAX_SECTIONS: usize = 400;

const STYLE: &str = "body{font:9pt/1.3 'DejaVu Sans',Arial,sans-serif;color:#111;margin:0}h1,p,li{overflow-wrap:anywhere}td{overflow-wrap:break-word}\
.student{padding:0;max-width:185mm}\
.student+.student{break-before:page;page-break-before:always}\
h1{font-size:14pt;margin:0 0 1mm}h2{font-size:10.5pt;margin:3.5mm 0 1mm}\
.course{color:#444;margin:0 0 2mm}.id{margin:0}\
.pair{display:grid;grid-template-columns:1.15fr 1fr;gap:5mm}\
table{border-collapse:collapse;width:100%}th,td{border:1px solid #999;padding:0.7mm 1.6mm;text-align:left;vertical-align:top}\
th{background:#e8edf1}td.n{text-align:right;font-variant-numeric:tabular-nums}\
ul{margin:0;padding-left:5mm}li{margin:0.5mm 0}\
.total{font-size:12pt;font-weight:bold;margin-top:3mm}\
.mark{font-weight:bold}.code{color:#555}\
@page{margin:12mm}@media screen{.student{padding:8mm;border-bottom:2px solid #ccc}}";

/// The handouts of a batch: one open file a section.
pub struct Handouts {
    /// The output folder, where the pages' temporary files wait.
    out_dir: PathBuf,
    dir: PathBuf,
    title: String,
    /// The title, escaped once for every page.
    title_html: String,
    stage: Stage,
    files: BTreeMap<String, AtomicFile>,
    stems: BTreeMap<String, String>,
    page: String,
    /// Print the sheet's notes on each page.
    sheet_notes: bool,
}

/// The labels of the values a handout shows, escaped once.
fn value_labels() -> &'static [String; 11] {
    static LABELS: std::sync::OnceLock<[String; 11]> = std::sync::OnceLock::new();
    LABELS.get_or_init(|| {
        [
            columns::CRUDE_MASS_G.header(),
            columns::RECOVERED_MASS_G.header(),
            columns::SOLVENT_VOLUME_ML.header(),
            "Melting onset (°C)".into(),
            "Clear point (°C)".into(),
            "Recovery (%)".into(),
            columns::RANGE_WIDTH_C.header(),
            columns::REFERENCE_MP_C.header(),
            columns::DEPRESSION_C.header(),
            columns::PURITY_MOL_PCT.header(),
            columns::MAX_RECOVERY_PCT.header(),
        ]
        .map(|l| escape(&l))
    })
}

/// The values a handout shows, in `value_labels` order: (what the student reported, what was
/// used or recomputed, decimals).
fn values(g: &Graded) -> [(Option<f64>, Option<f64>, u8); 11] {
    let a = &g.assessed;
    let s = &a.submission;
    let width = columns::RANGE_WIDTH_C
        .number(g.row())
        .filter(|v| v.is_finite());
    [
        (s.crude_mass_g, None, 3),
        (s.recovered_mass_g, None, 3),
        (s.solvent_volume_ml, None, 1),
        (s.mp_onset_c, a.mp_onset_c, 1),
        (s.mp_clear_c, a.mp_clear_c, 1),
        (s.reported_recovery_pct, a.recovery_pct, 1),
        (None, width, 1),
        (None, a.reference_mp_c, 1),
        (None, a.depression_c, 1),
        (None, a.purity_mol_pct, 1),
        (None, a.max_recovery_pct, 1),
    ]
}

/// One more row of the values table: a label, what was written, what was used.
fn text_row(out: &mut String, label: &str, reported: &str, used: &str) {
    out.push_str("<tr><td>");
    escape_into(out, label);
    out.push_str("</td><td class=\"n\">");
    escape_into(out, reported);
    out.push_str("</td><td class=\"n\">");
    escape_into(out, used);
    out.push_str("</td></tr>");
}

fn range_text(o: Option<f64>, c: Option<f64>) -> String {
    match (o, c) {
        (Some(o), Some(c)) if o == c => format!("{:.1}", Fast(c)),
        (Some(o), Some(c)) => format!("{:.1}-{:.1}", Fast(o), Fast(c)),
        (o, c) => o.or(c).map_or(String::new(), |v| format!("{:.1}", Fast(v))),
    }
}

fn num(v: Option<f64>, decimals: usize) -> String {
    v.filter(|v| v.is_finite())
        .map_or(String::new(), |v| format!("{:.decimals$}", Fast(v)))
}

/// The rest of the experiment, where the sheet records it: weighings by difference, the crude
/// range against the recrystallized one, the trials, the unknown and the mixed melting point.
fn workup_rows(out: &mut String, g: &Graded) {
    let a = &g.assessed;
    let s = &a.submission;
    let w = &a.workup;
    for (what, tare, gross) in [
        ("Crude", s.crude_tare_g, s.crude_gross_g),
        ("Recovered", s.recovered_tare_g, s.recovered_gross_g),
    ] {
        if let (Some(t), Some(gr)) = (tare, gross) {
            let label = format!("{what}: container with product - empty (g)");
            text_row(
                out,
                &label,
                &format!("{gr:.3} - {t:.3}"),
                &num(Some(gr - t), 3),
            );
        }
    }
    if w.crude_mp_clear_c.is_some() {
        let range = range_text(w.crude_mp_onset_c, w.crude_mp_clear_c);
        text_row(
            out,
            "Crude melting range (°C)",
            &range,
            &num(w.crude_range_width_c, 1),
        );
        text_row(out, "Melting point rise (°C)", "", &num(w.mp_rise_c, 1));
        text_row(
            out,
            "Range narrowing (°C)",
            "",
            &num(w.range_narrowing_c, 1),
        );
    }
    if s.mp_trials.len() > 1 || w.mp_trials.is_some() {
        for (i, t) in s.mp_trials.iter().enumerate() {
            let label = format!("Trial {} (°C)", i + 1);
            text_row(out, &label, &range_text(t.onset, t.clear), "");
        }
        text_row(out, "Trials' spread (°C)", "", &num(w.trial_spread_c, 1));
    }
    unknown_rows(out, g);
}

/// The unknown's code, the identification and the mixed melting point, where there are any.
fn unknown_rows(out: &mut String, g: &Graded) {
    let (s, w) = (&g.assessed.submission, &g.assessed.workup);
    if let Some(code) = &s.unknown_code {
        text_row(out, "Unknown", code, "");
    }
    if let Some(word) = w.identification {
        let named = w.identified_as.as_deref().unwrap_or("");
        let used = match (word, w.identity.as_deref()) {
            ("wrong" | "none", Some(truth)) => format!("{word} (it was {truth})"),
            _ => word.to_string(),
        };
        text_row(out, "Identified as", named, &used);
    }
    if w.mixed_mp_clear_c.is_some() {
        let range = range_text(w.mixed_mp_onset_c, w.mixed_mp_clear_c);
        let used = num(w.mixed_depression_c, 1);
        text_row(
            out,
            "Mixed melting range (°C); below the sample",
            &range,
            &used,
        );
    }
}

/// Appends a value to `decimals` places; nothing where there is none.
fn push_cell(out: &mut String, v: Option<f64>, decimals: u8) {
    if let Some(v) = v.filter(|v| v.is_finite()) {
        let _ = write!(out, "{:.*}", usize::from(decimals), Fast(v));
    }
}

impl Handouts {
    pub fn new(out_dir: &Path, title: &str, stage: &Stage) -> Handouts {
        Handouts {
            out_dir: out_dir.to_path_buf(),
            dir: out_dir.join(FOLDER),
            title: title.to_string(),
            title_html: escape(title),
            stage: stage.clone(),
            files: BTreeMap::new(),
            stems: BTreeMap::new(),
            page: String::with_capacity(8 << 10),
            sheet_notes: false,
        }
    }

    /// Prints the sheet's notes on each student's page (`[grading] notes_to_students`).
    pub fn with_sheet_notes(mut self, yes: bool) -> Handouts {
        self.sheet_notes = yes;
        self
    }

    /// The section's file, opened with the page's head on first use; `None` past the limit.
    /// Pages of students whose sheet could not be graded go to a file of their own
    /// (`<section>-not-graded.html`), never among graded pages.
    fn file(
        &mut self,
        section: &str,
        ungraded: bool,
    ) -> Result<Option<&mut AtomicFile>, WriteError> {
        let key = if ungraded {
            format!("{section}\u{0}not graded")
        } else {
            section.to_string()
        };
        if !self.files.contains_key(&key) {
            if self.files.len() >= MAX_SECTIONS {
                return Ok(None);
            }
            let base = if ungraded {
                format!("{}-not-graded", file_stem(section))
            } else {
                file_stem(section)
            };
            let mut stem = base.clone();
            let mut k = 2;
            while self.stems.contains_key(&stem.to_lowercase()) {
                stem = format!("{base}-{k}");
                k += 1;
            }
            self.stems.insert(stem.to_lowercase(), section.to_string());
            let path = self.dir.join(format!("{stem}.html"));
            // the folder is made only when the pages are published: a run that fails or is
            // killed leaves no empty handouts/ behind
            let tmp = partial_path(&self.out_dir, Path::new(&format!("{FOLDER}-{stem}.html")));
            let mut f = AtomicFile::create_at(&path, tmp, &self.stage)?;
            let head = format!(
                "<!DOCTYPE html><html lang=\"en\"><head><meta charset=\"utf-8\"><meta http-equiv=\"Content-Security-Policy\" content=\"default-src 'none'; style-src 'unsafe-inline'\"><title>{} — {}</title><style>{STYLE}</style></head><body>",
                escape(&self.title),
                escape(section)
            );
            f.write_all(head.as_bytes()).map_err(|e| f.error(e))?;
            self.files.insert(key.clone(), f);
        }
        Ok(self.files.get_mut(&key))
    }

    /// Adds a student's page; a repeated submission that does not count gets none.
    pub fn row(&mut self, g: &Graded) -> Result<(), WriteError> {
        if g.assessed.has(Flag::DuplicateStudent) || g.assessed.submission.no_submission {
            return Ok(());
        }
        let mut page = std::mem::take(&mut self.page);
        page.clear();
        let lacks = g.assessed.submission.sheet_lacks();
        if lacks.is_empty() {
            write_page(&mut page, &self.title_html, g);
            if self.sheet_notes {
                sheet_notes(&mut page, g);
            }
        } else {
            write_ungraded_page(&mut page, &self.title_html, g, &lacks);
        }
        let section = g.assessed.submission.section.clone();
        if let Some(f) = self.file(&section, !lacks.is_empty())? {
            f.write_all(page.as_bytes()).map_err(|e| f.error(e))?;
        }
        self.page = page;
        Ok(())
    }

    /// Closes every page and stages the files.
    pub fn finish(self) -> Result<(), WriteError> {
        for (_, mut f) in self.files {
            f.write_all(b"</body></html>\n").map_err(|e| f.error(e))?;
            f.commit()?;
        }
        Ok(())
    }
}

/// The page of a student whose sheet has no column for a field grading needs: no points, no
/// flags, no feedback (each would blame the student for the sheet), but what was missing and
/// what happens next.
fn write_ungraded_page(out: &mut String, title_html: &str, g: &Graded, lacks: &[Field]) {
    page_head(out, title_html, g);
    out.push_str("<p class=\"total\">Not graded</p><p>");
    let what: Vec<&str> = lacks.iter().map(|f| f.label()).collect();
    let _ = write!(
        out,
        "The sheet this report was read from has no column for the {}, so it could not be graded. \
         This is not a mark against your work: your teaching assistant will add the missing \
         column (or map it) and grade the sheet again.",
        escape(&what.join(", the "))
    );
    out.push_str("</p></section>");
}

/// The sheet's notes about the student, inside the page's section (before its end tag).
fn sheet_notes(page: &mut String, g: &Graded) {
    let Some(notes) = g.assessed.submission.remarks.as_deref() else {
        return;
    };
    let Some(end) = page.rfind("</section>") else {
        return;
    };
    let mut block = String::from("<h2>Notes from your assistant</h2><p>");
    escape_into(&mut block, notes);
    block.push_str("</p>");
    page.insert_str(end, &block);
}

/// A page's opening: the course and section, the student's name and id.
fn page_head(out: &mut String, title_html: &str, g: &Graded) {
    let s = &g.assessed.submission;
    out.push_str("<section class=\"student\"><p class=\"course\">");
    out.push_str(title_html);
    out.push_str(" · section ");
    escape_into(out, &s.section);
    out.push_str("</p><h1>");
    escape_into(out, &shown_name(s.student_name.as_deref()));
    out.push_str("</h1><p class=\"id\">Student id ");
    escape_into(out, s.student_id.as_deref().unwrap_or("(no id)"));
    out.push_str("</p>");
}

/// One student's printed page, under the title (already escaped).
fn write_page(out: &mut String, title_html: &str, g: &Graded) {
    let a = &g.assessed;
    page_head(out, title_html, g);
    if let Some(why) = &a.excused {
        out.push_str("<p class=\"total\">Excused: not graded</p><p>");
        escape_into(out, why);
        out.push_str("</p></section>");
        return;
    }
    out.push_str("<div class=\"pair\"><div><h2>Your values</h2><table><thead><tr><th>Quantity</th><th>Reported</th><th>Used or recomputed</th></tr></thead><tbody>");
    for (label, (reported, used, d)) in value_labels().iter().zip(values(g)) {
        out.push_str("<tr><td>");
        out.push_str(label);
        out.push_str("</td><td class=\"n\">");
        push_cell(out, reported, d);
        out.push_str("</td><td class=\"n\">");
        push_cell(out, used, d);
        out.push_str("</td></tr>");
    }
    workup_rows(out, g);
    out.push_str("</tbody></table></div><div>");
    // the points, then the flags and changes beside the values table, where the page has room
    points(out, g);
    flags_and_overrides(out, g);
    out.push_str("</div></div>");
    out.push_str("<h2>Feedback</h2><ul>");
    // the total closes the page in large type
    for sentence in g
        .score
        .feedback
        .split("; ")
        .filter(|x| !x.starts_with("Total "))
    {
        out.push_str("<li>");
        escape_into(out, sentence);
        out.push_str("</li>");
    }
    let _ = write!(
        out,
        "</ul><p class=\"total\">Total {} of {}",
        crate::numtext::points(g.score.total),
        crate::numtext::points(g.score.max)
    );
    if let Some(l) = g.score.letter.as_deref() {
        out.push_str(" — ");
        escape_into(out, l);
    }
    out.push_str("</p></section>");
}

/// The name as the page shows it: no name is said, and text far longer than any name is cut
/// with a mark so that the student's page stays one page.
fn shown_name(name: Option<&str>) -> std::borrow::Cow<'_, str> {
    const LONGEST: usize = 80;
    match name {
        None => "(no name)".into(),
        Some(n) if n.chars().count() > LONGEST => {
            format!("{}…", n.chars().take(LONGEST).collect::<String>()).into()
        }
        Some(n) => n.into(),
    }
}

fn points(out: &mut String, g: &Graded) {
    out.push_str("<h2>Points</h2><table><thead><tr><th>Criterion</th><th>Points</th><th>Of</th></tr></thead><tbody>");
    for c in &g.score.criteria {
        out.push_str("<tr><td>");
        escape_into(out, &c.label);
        let _ = write!(
            out,
            "</td><td class=\"n\">{}</td><td class=\"n\">{}</td></tr>",
            crate::numtext::points(c.points),
            crate::numtext::points(c.max)
        );
    }
    out.push_str("</tbody></table>");
}

fn flags_and_overrides(out: &mut String, g: &Graded) {
    let a = &g.assessed;
    if !a.flags.is_empty() {
        out.push_str("<h2>What was flagged</h2><ul>");
        // the reason, with what the flag did to the points, is in the feedback below
        for (f, _) in &a.flags {
            let kind = match f.severity() {
                Severity::Impossible => "! cannot be right",
                Severity::Suspicious => "? looks wrong",
            };
            let _ = write!(out, "<li><span class=\"mark\">{kind}</span>: ");
            escape_into(out, f.meaning());
            let _ = write!(out, " <span class=\"code\">({})</span></li>", f.code());
        }
        out.push_str("</ul>");
    }
    if !g.score.overrides.is_empty() {
        out.push_str("<h2>Changed by a grader</h2><ul>");
        for o in &g.score.overrides {
            out.push_str("<li>");
            escape_into(out, o);
            out.push_str("</li>");
        }
        out.push_str("</ul>");
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::ingest::Submission;
    use crate::model::{Assessed, Score};

    #[test]
    fn student_text_is_escaped_and_the_page_has_no_script() {
        let g = Graded {
            assessed: Assessed {
                submission: Submission {
                    student_name: Some("<img src=x onerror=alert(1)>".into()),
                    student_id: Some("s&1".into()),
                    section: "Sec <b>".into(),
                    ..Submission::default()
                },
                flags: vec![(Flag::RangeInverted, "onset <125> above".into())],
                ..Assessed::default()
            },
            score: Score {
                feedback: "Recovery: <script>".into(),
                ..Score::default()
            },
        };
        let mut page = String::new();
        write_page(&mut page, &escape("CHEM <x>"), &g);
        assert!(!page.contains("<img") && !page.contains("<script") && !page.contains("<b>"));
        assert!(page.contains("&lt;img src=x onerror=alert(1)&gt;"));
        assert!(page.contains("s&amp;1") && page.contains("Recovery: &lt;script&gt;"));
        assert!(page.contains("CHEM &lt;x&gt;") && page.contains("Sec &lt;b&gt;"));
        assert_eq!(shown_name(Some(&"é".repeat(500))).chars().count(), 81);
        assert_eq!(shown_name(Some("Ana Lima")), "Ana Lima");
    }
}
