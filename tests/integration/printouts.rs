//! What a person sees on paper, checked the way a person checks it: LibreOffice prints the
//! graded workbook to PDF and Chromium prints the cohort report and a handout; the PDFs are read
//! back with pdftotext and pdfinfo (poppler-utils) for what a reader would notice: the student's
//! id on every printed page of a section sheet, no code names on the Statistics sheet, one
//! student a handout page, a report of a reasonable length with no figure split across pages.

use std::path::{Path, PathBuf};
use std::process::Command;

use crate::harness::{grade_sample, outside_program, soffice, Fixture, Record};

fn pdftotext() -> Option<&'static str> {
    let found = Command::new("pdftotext")
        .arg("-v")
        .output()
        .is_ok_and(|o| o.status.success() || !o.stderr.is_empty())
        .then_some("pdftotext");
    outside_program(found, "pdftotext", "poppler-utils")
}

fn chromium() -> Option<&'static str> {
    let found = ["chromium", "chromium-browser"].into_iter().find(|c| {
        Command::new(c)
            .arg("--version")
            .output()
            .is_ok_and(|o| o.status.success())
    });
    outside_program(found, "chromium", "Debian's chromium")
}

/// The text of every page of a PDF, in order.
fn pages(pdf: &Path) -> Vec<String> {
    let out = Command::new("pdftotext")
        .args(["-layout"])
        .arg(pdf)
        .arg("-")
        .output()
        .expect("pdftotext runs");
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let text = String::from_utf8_lossy(&out.stdout).into_owned();
    let mut p: Vec<String> = text.split('\u{c}').map(str::to_string).collect();
    if p.last().is_some_and(|l| l.trim().is_empty()) {
        p.pop();
    }
    p
}

/// Chromium's print of a page to PDF.
fn print(browser: &str, f: &Fixture, page: &Path, name: &str) -> PathBuf {
    let pdf = f.path(name);
    let out = Command::new(browser)
        .args([
            "--headless",
            "--no-sandbox",
            "--disable-gpu",
            "--no-pdf-header-footer",
            "--no-first-run",
            "--disable-background-networking",
        ])
        .arg(format!(
            "--user-data-dir={}",
            f.path("chromium-profile").display()
        ))
        .arg(format!("--print-to-pdf={}", pdf.display()))
        .arg(format!("file://{}", page.display()))
        .output()
        .expect("chromium runs");
    assert!(pdf.exists(), "{}", String::from_utf8_lossy(&out.stderr));
    pdf
}

fn graded(f: &Fixture) -> Vec<Record> {
    let run = grade_sample(f, "out", &["--timestamp", "1795000000"]);
    assert_eq!(run.code, 0, "{}", run.stderr);
    f.results("out")
}

#[test]
fn every_printed_page_of_a_section_sheet_names_its_students() {
    let (Some(office), Some(_)) = (soffice(), pdftotext()) else {
        return;
    };
    let f = Fixture::new();
    let rows = graded(&f);
    let pdf = crate::harness::convert(
        office,
        f.dir.path(),
        &f.path("out/section-01-graded.xlsx"),
        "pdf",
    );
    let ids: Vec<&str> = rows
        .iter()
        .filter(|r| r["source"].ends_with("section-01.xlsx"))
        .map(|r| r["student_id"].as_str())
        .collect();
    let all = pages(&pdf);
    // the section sheet's pages carry its name in the page header; the Statistics and
    // Provenance pages do not
    let section: Vec<&String> = all
        .iter()
        .filter(|p| p.contains("Sec 01") && p.contains("benchgrade"))
        .collect();
    assert!(
        section.len() >= 2,
        "the sheet prints on several pages: {}",
        all.len()
    );
    for (i, page) in section.iter().enumerate() {
        assert!(
            // the id column's header, wrapped onto two lines ("Student" over "#")
            page.contains("Student"),
            "page {i} repeats the id column's header"
        );
        let named = ids.iter().filter(|id| page.contains(*id)).count();
        assert!(named >= 1, "page {i} names no student:\n{page}");
    }
    // every student is on the printout, up to the flags; the long reasons and feedback are
    // left to the handouts so that no row grows tall
    for id in &ids {
        assert!(section.iter().any(|p| p.contains(id)), "{id}");
    }
    assert!(section.iter().any(|p| p.contains("Flags")));
    assert!(!section.iter().any(|p| p.contains("Feedback")));
    // a section of about twenty students prints on at most two pages across and two down
    assert!(
        ids.len() >= 20,
        "the sample section has {} students",
        ids.len()
    );
    assert!(section.len() <= 4, "{} pages", section.len());
    // at a readable size: the students' ids stand at least 7.5 pt tall on paper (an 11-pt
    // cell's text box is about 11.7 pt at full size in LibreOffice's print, hand-measured with
    // pdftotext -bbox; 7.5 pt is about 64 %, some 7 pt type)
    let boxes = Command::new("pdftotext")
        .args(["-bbox", "-f", "1", "-l", "1"])
        .arg(&pdf)
        .arg("-")
        .output()
        .expect("pdftotext runs");
    let text = String::from_utf8_lossy(&boxes.stdout);
    let heights: Vec<f64> = text
        .lines()
        .filter(|l| ids.iter().any(|id| l.contains(&format!(">{id}<"))))
        .filter_map(|l| {
            let num = |key: &str| -> Option<f64> {
                let at = l.find(key)? + key.len();
                l[at..].split('"').next()?.parse().ok()
            };
            Some(num("yMax=\"")? - num("yMin=\"")?)
        })
        .collect();
    assert!(!heights.is_empty(), "ids found on the first page");
    let least = heights.iter().copied().fold(f64::INFINITY, f64::min);
    assert!(least >= 7.5, "ids printed {least:.2} pt tall");
}

#[test]
fn the_statistics_sheet_prints_words_not_codes() {
    let (Some(office), Some(_)) = (soffice(), pdftotext()) else {
        return;
    };
    let f = Fixture::new();
    graded(&f);
    let pdf = crate::harness::convert(
        office,
        f.dir.path(),
        &f.path("out/section-02-graded.xlsx"),
        "pdf",
    );
    let stats: Vec<String> = pages(&pdf)
        .into_iter()
        .filter(|p| p.contains("Statistics, page"))
        .collect();
    assert!(!stats.is_empty(), "the Statistics sheet prints");
    let text = stats.join("\n");
    assert!(
        // headers wrap in their cells: "95 % CI," over "high"
        text.contains("Recovery (%)") && text.contains("95 % CI,"),
        "{text}"
    );
    let codes = benchgrade::model::columns::ALL
        .iter()
        .map(|c| c.name)
        .chain(benchgrade::stats::SUMMARY_COLUMNS)
        .filter(|c| c.contains('_'));
    for code in codes {
        assert!(!text.contains(code), "the code {code} is printed");
    }
    for flag in benchgrade::model::Flag::ALL {
        assert!(
            !text.contains(flag.code()),
            "the flag code {} is printed",
            flag.code()
        );
    }
}

#[test]
fn a_handout_prints_one_student_a_page() {
    let (Some(browser), Some(_)) = (chromium(), pdftotext()) else {
        return;
    };
    let f = Fixture::new();
    let rows = graded(&f);
    let students: Vec<&Record> = rows
        .iter()
        .filter(|r| r["section"] == "Sec 01" && !r["flags"].contains("duplicate-student"))
        .collect();
    let pdf = print(
        browser,
        &f,
        &f.path("out/handouts/Sec_01.html"),
        "handout.pdf",
    );
    let printed = pages(&pdf);
    assert_eq!(printed.len(), students.len(), "one page a student");
    for (page, r) in printed.iter().zip(&students) {
        assert_eq!(page.matches("Student id").count(), 1, "{page}");
        assert!(
            page.contains(&r["student_id"]),
            "{} on its own page",
            r["student_id"]
        );
        assert!(page.contains("Total") || page.contains("Excused"), "{page}");
    }
}

/// A handout page per graded student who counts, and `--skip-handouts` drops the folder on a
/// re-run (the manifest's stale-output rule) while every other output stays byte for byte.
#[test]
fn skipping_handouts_leaves_every_other_output_alone() {
    let f = Fixture::new();
    let rows = graded(&f);
    let counted = rows
        .iter()
        .filter(|r| !r["flags"].contains("duplicate-student"))
        .count();
    let handouts = f.path("out/handouts");
    let pages: usize = std::fs::read_dir(&handouts)
        .expect("handouts folder")
        .map(|e| std::fs::read_to_string(e.unwrap().path()).unwrap())
        .map(|html| html.matches("<section class=\"student\">").count())
        .sum();
    assert_eq!(pages, counted, "one page for every student who counts");
    let before = |name: &str| std::fs::read(f.path(&format!("out/{name}"))).unwrap();
    let kept = [
        "results.csv",
        "gradebook.csv",
        "cohort-report.html",
        "section-stats.csv",
    ]
    .map(|n| (n, before(n)));
    let run = grade_sample(&f, "out", &["--timestamp", "1795000000", "--skip-handouts"]);
    assert_eq!(run.code, 0, "{}", run.stderr);
    assert!(
        !handouts.exists(),
        "the previous run's handouts are removed"
    );
    for (name, bytes) in kept {
        assert!(before(name) == bytes, "{name} changed with --skip-handouts");
    }
}

/// Past the handouts' section limit the sections left without one are said, not dropped
/// silently (a trial: 405 one-student sections gave 400 files and no word).
#[test]
fn sections_past_the_handout_limit_are_named_in_a_note() {
    let f = Fixture::new();
    let limit = benchgrade::export::handouts::MAX_SECTIONS;
    let mut csv = String::from("Section,Student ID,Crude (g),Recovered (g),MP onset,MP clear\n");
    for i in 0..limit + 3 {
        csv.push_str(&format!("Group {i}x,{},2.5,1.8,121,122\n", 5000 + i));
    }
    f.write("groups.csv", csv);
    let run = f.run(&["grade", "groups.csv", "--out", "out", "--skip-workbooks"]);
    assert_eq!(run.code, 0, "{}", run.stderr);
    let files = std::fs::read_dir(f.path("out/handouts")).unwrap().count();
    assert_eq!(files, limit);
    let note = format!(
        "handouts are written for the first {limit} sections of a batch; 3 more sections (3 students, from section \"Group {limit}x\" on)"
    );
    assert!(run.stderr.contains(&note), "{}", run.stderr);
    let json = std::fs::read_to_string(f.path("out/results.json")).unwrap();
    assert!(json.contains("handouts are written for the first"));
    let quiet = f.run(&[
        "grade",
        "groups.csv",
        "--out",
        "out",
        "--skip-workbooks",
        "--skip-handouts",
    ]);
    assert!(
        !quiet.stderr.contains("handouts are written"),
        "{}",
        quiet.stderr
    );
}

#[test]
fn the_report_prints_on_a_few_pages_with_every_figure_whole() {
    let (Some(browser), Some(_)) = (chromium(), pdftotext()) else {
        return;
    };
    let f = Fixture::new();
    graded(&f);
    let page = f.path("out/cohort-report.html");
    let pdf = print(browser, &f, &page, "report.pdf");
    let printed = pages(&pdf);
    assert!(
        (2..=12).contains(&printed.len()),
        "{} pages for three sections",
        printed.len()
    );
    // each figure's title is drawn at its top and opens its caption at its bottom: a figure
    // split across pages would put the two on different pages
    let html = std::fs::read_to_string(&page).unwrap();
    let titles: Vec<&str> = html
        .split("<title>")
        .skip(2)
        .filter_map(|t| t.split("</title>").next())
        .collect();
    assert!(titles.len() >= 5, "{titles:?}");
    let flat = |s: &str| s.split_whitespace().collect::<Vec<_>>().join(" ");
    for t in titles {
        let t = flat(&t.replace("&#39;", "'").replace("&amp;", "&"));
        let on: Vec<usize> = printed
            .iter()
            .enumerate()
            .filter(|(_, p)| flat(p).contains(&t))
            .map(|(i, _)| i)
            .collect();
        assert!(!on.is_empty(), "{t} is printed");
        let both = on
            .iter()
            .any(|&i| flat(&printed[i]).matches(&t).count() >= 2);
        assert!(both, "\"{t}\" is cut across pages {on:?}");
    }
}

/// Hundreds of sections whose comparison notes list many groups still give every output (an
/// adversarial trial: a Welch note past a cell's 32,767 characters failed the cohort workbook).
#[test]
fn a_thousand_sections_give_every_output() {
    let f = Fixture::new();
    let mut csv = String::from("Section,Student ID,Crude (g),Recovered (g),MP onset,MP clear\n");
    for i in 0..1200 {
        let label =
            format!("Section {i:04} of the long-named teaching laboratory course, Tuesday evening");
        csv.push_str(&format!("{label},{},2.5,1.8,121,122\n", 5000 + i));
    }
    f.write("many.csv", csv);
    let run = f.run(&[
        "grade",
        "many.csv",
        "--out",
        "out",
        "--skip-workbooks",
        "--skip-handouts",
    ]);
    assert_eq!(run.code, 0, "{}", run.stderr);
    assert!(f.path("out/cohort-report.xlsx").exists());
    let comparisons = std::fs::read_to_string(f.path("out/section-comparison.csv")).unwrap();
    assert!(
        comparisons.contains("more groups"),
        "the note counts what it does not name"
    );
}
