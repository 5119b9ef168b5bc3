//! One invented class kept four ways: in English with one-row headers, and in German, Spanish
//! and French with two-row (grouped) headers, decimal commas, a withdrawal word of the language
//! in the notes, a sentence about the work that excuses no one, a late entry typed below the
//! notes block, and the section and assistant named in the title rows. Each translation must
//! grade exactly as its English twin: every number, flag, score and status.
//!
//! The expectation is the English twin graded by the same binary; the English twin itself is
//! checked against hand-worked values (recovery = 100 x recovered / crude).

use approx::assert_relative_eq;
use rust_xlsxwriter::{Workbook, Worksheet};

use crate::harness::{by_id, flags, num, Fixture, Record};

/// One student: id, name, bench, crude g, recovered g, reported %, onset, clear, notes.
type Student = (
    &'static str,
    &'static str,
    u32,
    Option<f64>,
    Option<f64>,
    Option<f64>,
    Option<f64>,
    Option<f64>,
    &'static str,
);

/// The class (invented). The notes column's words are replaced per language: "W" for the
/// withdrawal word, "S" for the sentence about the work.
const CLASS: [Student; 7] = [
    (
        "3101",
        "Ada Brandt",
        1,
        Some(2.514),
        Some(1.834),
        Some(73.0),
        Some(120.5),
        Some(122.0),
        "",
    ),
    (
        "3102",
        "Ben Okoro",
        2,
        Some(3.108),
        Some(2.291),
        Some(73.7),
        Some(121.0),
        Some(122.2),
        "",
    ),
    (
        "3103",
        "Cleo Varga",
        3,
        Some(2.75),
        Some(0.745),
        Some(27.1),
        Some(119.0),
        Some(121.5),
        "",
    ),
    (
        "3104",
        "Dev Marlow",
        4,
        Some(2.9),
        Some(3.01),
        Some(103.8),
        Some(118.5),
        Some(121.0),
        "",
    ),
    (
        "3105",
        "Esi Lund",
        5,
        Some(2.6),
        Some(1.9),
        Some(73.1),
        Some(122.5),
        Some(121.9),
        "",
    ),
    ("3106", "Finn Aalto", 6, None, None, None, None, None, "W"),
    (
        "3107",
        "Gia Portas",
        7,
        Some(2.8),
        Some(0.0),
        None,
        None,
        None,
        "S",
    ),
];

/// The late entry, typed below the notes block.
const LATE: Student = (
    "3108",
    "Hugo Sand",
    8,
    Some(2.45),
    Some(1.8),
    Some(73.5),
    Some(120.8),
    Some(122.0),
    "",
);

/// How one language keeps the sheet.
struct Lang {
    file: &'static str,
    title: &'static str,
    /// Upper header row (group names; "" for none) and lower row (sub-headers; "" for none),
    /// over: id, name, bench, crude, recovered, reported %, onset, clear, notes.
    upper: [&'static str; 9],
    lower: [&'static str; 9],
    /// Group names to merge, as (first column, last column).
    merges: &'static [(u16, u16)],
    withdrawn: &'static str,
    sentence: &'static str,
    notes_heading: &'static str,
    decimal_comma: bool,
}

const ENGLISH: Lang = Lang {
    file: "en.xlsx",
    title: "Recrystallization of benzoic acid, Section 3 (TA: K. Hahn)",
    upper: [
        "Student ID",
        "Name",
        "Bench",
        "Crude mass (g)",
        "Recovered mass (g)",
        "% Recovery",
        "MP onset (°C)",
        "MP clear (°C)",
        "Notes",
    ],
    lower: [""; 9],
    merges: &[],
    withdrawn: "withdrawn",
    sentence: "dropped filter paper in sink",
    notes_heading: "Notes:",
    decimal_comma: false,
};

const LANGS: [Lang; 3] = [
    Lang {
        file: "de.xlsx",
        title: "Umkristallisation von Benzoesäure, Sektion 3 (Betreuer: K. Hahn)",
        upper: [
            "Matrikelnummer",
            "Name",
            "Platz",
            "Masse (g)",
            "",
            "Ausbeute (%)",
            "Schmelzbereich (°C)",
            "",
            "Bemerkungen",
        ],
        lower: [
            "",
            "",
            "",
            "Rohprodukt",
            "Ausbeute",
            "",
            "Beginn",
            "Ende",
            "",
        ],
        merges: &[(3, 4), (6, 7)],
        withdrawn: "abgemeldet",
        sentence: "Filterpapier ins Waschbecken fallen gelassen",
        notes_heading: "Bemerkungen:",
        decimal_comma: true,
    },
    Lang {
        file: "es.xlsx",
        title: "Recristalización del ácido benzoico, Sección 3 (Asistente: K. Hahn)",
        upper: [
            "Matrícula",
            "Nombre",
            "Mesa",
            "Masa (g)",
            "",
            "% Recuperación",
            "Punto de fusión (°C)",
            "",
            "Observaciones",
        ],
        lower: ["", "", "", "Cruda", "Recuperada", "", "Inicio", "Final", ""],
        // the group names typed once, with blank cells to their right (no merge)
        merges: &[],
        withdrawn: "baja",
        sentence: "se le cayó el papel de filtro al fregadero",
        notes_heading: "Observaciones:",
        decimal_comma: true,
    },
    Lang {
        file: "fr.xlsx",
        title: "Recristallisation de l'acide benzoïque, Section 3 (Encadrant : K. Hahn)",
        upper: [
            "Numéro étudiant",
            "Nom",
            "Paillasse",
            "Masse (g)",
            "",
            "Rendement (%)",
            "Point de fusion (°C)",
            "",
            "Remarques",
        ],
        lower: ["", "", "", "Brute", "Purifiée", "", "Début", "Fin", ""],
        merges: &[(3, 4), (6, 7)],
        withdrawn: "désinscrit",
        sentence: "a renversé le papier filtre dans l'évier",
        notes_heading: "Remarques :",
        decimal_comma: false,
    },
];

/// A number as the language writes it: with a decimal comma, as text, where it does.
fn put_number(ws: &mut Worksheet, r: u32, c: u16, v: Option<f64>, comma: bool) {
    let Some(v) = v else { return };
    if comma {
        ws.write_string(r, c, format!("{v}").replace('.', ","))
            .unwrap();
    } else {
        ws.write_number(r, c, v).unwrap();
    }
}

fn put_student(ws: &mut Worksheet, r: u32, s: &Student, lang: &Lang) {
    ws.write_string(r, 0, s.0).unwrap();
    ws.write_string(r, 1, s.1).unwrap();
    ws.write_number(r, 2, f64::from(s.2)).unwrap();
    let comma = lang.decimal_comma;
    for (c, v) in [(3, s.3), (4, s.4), (5, s.5), (6, s.6), (7, s.7)] {
        put_number(ws, r, c, v, comma);
    }
    let notes = match s.8 {
        "W" => lang.withdrawn,
        "S" => lang.sentence,
        other => other,
    };
    if !notes.is_empty() {
        ws.write_string(r, 8, notes).unwrap();
    }
}

fn write_class(wb: &mut Workbook, lang: &Lang) {
    let ws = wb.add_worksheet().set_name("Exp3").unwrap();
    ws.write_string(0, 0, lang.title).unwrap();
    let grouped = lang.lower.iter().any(|t| !t.is_empty());
    for (c, text) in lang.upper.iter().enumerate() {
        if !text.is_empty() {
            ws.write_string(2, c as u16, *text).unwrap();
        }
    }
    for (first, last) in lang.merges {
        ws.merge_range(
            2,
            *first,
            2,
            *last,
            lang.upper[*first as usize],
            &rust_xlsxwriter::Format::new(),
        )
        .unwrap();
    }
    for (c, text) in lang.lower.iter().enumerate() {
        if !text.is_empty() {
            ws.write_string(3, c as u16, *text).unwrap();
        }
    }
    let mut r = if grouped { 4 } else { 3 };
    for s in &CLASS {
        put_student(ws, r, s, lang);
        r += 1;
    }
    ws.write_string(r + 1, 0, lang.notes_heading).unwrap();
    ws.write_string(r + 2, 0, "Bench 4: thermometer replaced")
        .unwrap();
    put_student(ws, r + 3, &LATE, lang);
}

fn grade(f: &Fixture, lang: &Lang) -> (Vec<Record>, String) {
    f.xlsx(lang.file, |wb| write_class(wb, lang));
    let out = format!("out-{}", lang.file);
    let run = f.run(&["grade", lang.file, "--out", &out]);
    assert_eq!(run.code, 0, "{}: {}", lang.file, run.stderr);
    let check = f.run(&["check", lang.file]);
    (f.results(&out), check.stdout)
}

/// The columns that must agree: every number, flag, score and status benchgrade gives.
const COMPARED: [&str; 19] = [
    "student_name",
    "bench",
    "crude_mass_g",
    "recovered_mass_g",
    "mp_onset_c",
    "mp_clear_c",
    "reported_recovery_pct",
    "recovery_pct",
    "range_width_c",
    "reference_mp_c",
    "depression_c",
    "purity_mol_pct",
    "flags",
    "score",
    "max_score",
    "percent",
    "letter",
    "status",
    "assistant",
];

#[test]
fn the_english_twin_reads_as_typed() {
    let f = Fixture::new();
    let (rows, _) = grade(&f, &ENGLISH);
    assert_eq!(rows.len(), 8, "seven students and the late entry");
    // 100 x 1.834 / 2.514 = 72.951... (hand-worked)
    assert_relative_eq!(
        num(by_id(&rows, "3101"), "recovery_pct").unwrap(),
        72.951_471_758_154_34,
        epsilon = 1e-9
    );
    assert_eq!(by_id(&rows, "3106")["status"], "excused");
    // a sentence about the work excuses no one: the zero mass and the missing range are flagged
    let dropped = by_id(&rows, "3107");
    assert_eq!(dropped["status"], "graded");
    assert!(flags(dropped).contains(&"nonpositive-mass"), "{dropped:?}");
    assert_eq!(
        dropped["sheet_notes"], "dropped filter paper in sink",
        "the sheet's notes reach results.csv"
    );
    let late = by_id(&rows, "3108");
    assert!(late["notes"].contains("below the notes"), "{late:?}");
    assert!(rows.iter().all(|r| r["assistant"] == "K. Hahn"));
    assert!(rows.iter().all(|r| r["section"] == "Section 3"));
}

#[test]
fn grouped_headers_in_german_spanish_and_french_grade_as_the_english_twin() {
    let f = Fixture::new();
    let (english, _) = grade(&f, &ENGLISH);
    for lang in &LANGS {
        let (rows, check) = grade(&f, lang);
        assert_eq!(rows.len(), english.len(), "{}", lang.file);
        for e in &english {
            let id = &e["student_id"];
            let t = by_id(&rows, id);
            for col in COMPARED {
                assert_eq!(t[col], e[col], "{} student {id}: {col}", lang.file);
            }
        }
        // check shows how each grouped header was read, and the header rows
        let combined = format!("\"{} / {}\"", lang.upper[3], lang.lower[3]);
        assert!(check.contains(&combined), "{}: {check}", lang.file);
        assert!(check.contains("header rows 3-4"), "{}: {check}", lang.file);
        // the withdrawal word of the language excuses; the sentence about the work does not
        assert_eq!(by_id(&rows, "3106")["status"], "excused", "{}", lang.file);
        assert_eq!(by_id(&rows, "3107")["sheet_notes"], lang.sentence);
    }
}

/// A language benchgrade does not ship (Dutch, invented sheet): words added in a
/// `--vocabulary` file or the rubric's `[vocabulary]` table read it; an unknown class is an
/// error located in its file, and nothing is graded.
#[test]
fn a_user_adds_a_language_in_a_vocabulary_file_or_the_rubric() {
    let f = Fixture::new();
    f.write(
        "nl.csv",
        "Studentnummer,Ruwe massa (g),Teruggewonnen massa (g),Smeltpunt (°C),Opmerkingen\n\
         4101,2.514,1.834,120.5 tot 122.0,\n4102,2.6,,,uitgeschreven\n",
    );
    let words = "[field.student_id]\nnl = [\"studentnummer\"]\n[field.crude_mass]\nnl = [\"ruwe\"]\n\
                 [field.recovered_mass]\nnl = [\"teruggewonnen\"]\n[field.mp_range]\nnl = [\"smeltpunt\"]\n\
                 [field.notes]\nnl = [\"opmerkingen\"]\n[status.withdrawn]\nnl = [\"uitgeschreven\"]\n\
                 [range.separator]\nnl = [\"tot\"]\n";
    f.write("nl-words.toml", words);
    let without = f.run(&["grade", "nl.csv", "--out", "plain"]);
    assert_ne!(without.code, 0, "without the words the sheet has no table");
    let run = f.run(&[
        "grade",
        "nl.csv",
        "--vocabulary",
        "nl-words.toml",
        "--out",
        "out",
    ]);
    assert_eq!(run.code, 0, "{}", run.stderr);
    let rows = f.results("out");
    let a = by_id(&rows, "4101");
    // 100 x 1.834 / 2.514 = 72.951... (hand-worked)
    assert_relative_eq!(
        num(a, "recovery_pct").unwrap(),
        72.951_471_758_154_34,
        epsilon = 1e-9
    );
    assert_eq!(
        (num(a, "mp_onset_c"), num(a, "mp_clear_c")),
        (Some(120.5), Some(122.0))
    );
    assert_eq!(by_id(&rows, "4102")["status"], "excused");
    // the same words in the rubric
    let rubric =
        std::fs::read_to_string(crate::harness::project_root().join("rubrics/default.toml"))
            .unwrap();
    let nested = words
        .replace("[field.", "[vocabulary.field.")
        .replace("[status.", "[vocabulary.status.")
        .replace("[range.", "[vocabulary.range.");
    f.write("rubric.toml", format!("{rubric}\n{nested}"));
    let run = f.run(&[
        "grade",
        "nl.csv",
        "--rubric",
        "rubric.toml",
        "--out",
        "out2",
    ]);
    assert_eq!(run.code, 0, "{}", run.stderr);
    assert_eq!(f.results("out2").len(), 2);
    // a class that does not exist: exit code 2, the file, line and the classes to choose from
    f.write(
        "bad-words.toml",
        "# Dutch\n[field.crud_mass]\nnl = [\"ruwe\"]\n",
    );
    let run = f.run(&[
        "grade",
        "nl.csv",
        "--vocabulary",
        "bad-words.toml",
        "--out",
        "out3",
    ]);
    assert_eq!(run.code, 2, "{}", run.stderr);
    assert!(run.stderr.contains("bad-words.toml:2:"), "{}", run.stderr);
    assert!(run.stderr.contains("field.crude_mass"), "{}", run.stderr);
    assert!(!f.path("out3").join("results.csv").exists());
    // the rubric's check says the same of its [vocabulary]
    f.write(
        "bad-rubric.toml",
        format!("{rubric}\n[vocabulary.field.crud_mass]\nnl = [\"ruwe\"]\n"),
    );
    let run = f.run(&["rubric", "check", "bad-rubric.toml"]);
    assert_eq!(run.code, 2, "{}", run.stderr);
    assert!(run.stderr.contains("field.crude_mass"), "{}", run.stderr);
}

/// The same kind of class typed in LibreOffice Calc (tests/data/languages/make.py: a .fods each,
/// converted by LibreOffice to .xlsx, .ods and .xls): German, Spanish and French sheets with
/// "Mass (g)" merged over two sub-headers grade as the English twin, in every format.
#[test]
fn libreoffice_saved_classes_in_every_format_grade_as_the_english_twin() {
    let data = crate::harness::project_root().join("tests/data/languages");
    let f = Fixture::new();
    let grade_file = |name: &str| {
        let out = format!("out-{name}");
        let run = f.run(&["grade", data.join(name).to_str().unwrap(), "--out", &out]);
        assert_eq!(run.code, 0, "{name}: {}", run.stderr);
        f.results(&out)
    };
    let english = grade_file("en.xlsx");
    assert_eq!(english.len(), 8);
    // 100 x 1.834 / 2.514 = 72.951... (hand-worked)
    assert_relative_eq!(
        num(by_id(&english, "5101"), "recovery_pct").unwrap(),
        72.951_471_758_154_34,
        epsilon = 1e-9
    );
    assert_eq!(by_id(&english, "5106")["status"], "excused");
    assert_eq!(by_id(&english, "5107")["status"], "graded");
    for lang in ["en", "de", "es", "fr"] {
        for ext in ["xlsx", "ods", "xls"] {
            let name = format!("{lang}.{ext}");
            let rows = grade_file(&name);
            assert_eq!(rows.len(), english.len(), "{name}");
            for e in &english {
                let id = &e["student_id"];
                let t = by_id(&rows, id);
                for col in COMPARED {
                    assert_eq!(t[col], e[col], "{name} student {id}: {col}");
                }
            }
        }
    }
}

/// The sheet's notes are the assistants': handouts print them only when the rubric says they
/// are for the students.
#[test]
fn handouts_print_the_sheet_notes_only_when_the_rubric_says_so() {
    let f = Fixture::new();
    f.xlsx(ENGLISH.file, |wb| write_class(wb, &ENGLISH));
    let rubric =
        std::fs::read_to_string(crate::harness::project_root().join("rubrics/default.toml"))
            .unwrap();
    let to_students = rubric.replacen("[grading]\n", "[grading]\nnotes_to_students = true\n", 1);
    assert_ne!(to_students, rubric);
    f.write("to-students.toml", to_students);
    let handout = |out: &str| -> String {
        let dir = f.path(out).join("handouts");
        std::fs::read_dir(&dir)
            .unwrap()
            .map(|e| std::fs::read_to_string(e.unwrap().path()).unwrap())
            .collect()
    };
    let run = f.run(&["grade", ENGLISH.file, "--out", "kept"]);
    assert_eq!(run.code, 0, "{}", run.stderr);
    assert!(!handout("kept").contains("dropped filter paper in sink"));
    let run = f.run(&[
        "grade",
        ENGLISH.file,
        "--rubric",
        "to-students.toml",
        "--out",
        "shown",
    ]);
    assert_eq!(run.code, 0, "{}", run.stderr);
    let page = handout("shown");
    assert!(page.contains("Notes from your assistant"), "{page}");
    assert!(page.contains("dropped filter paper in sink"));
}

/// A merged group name over three columns, the middle one without a sub-header: the workbook's
/// merged cells say "End" stands under "Melting range (°C)" too (an .xlsx keeps them; without
/// them the blank would end the group).
#[test]
fn a_merged_group_name_stands_over_all_its_columns() {
    let f = Fixture::new();
    f.xlsx("merged.xlsx", |wb| {
        let ws = wb.add_worksheet().set_name("Sec 9").unwrap();
        for (c, h) in ["ID", "Crude mass (g)", "Recovered mass (g)"]
            .iter()
            .enumerate()
        {
            ws.write_string(0, c as u16, *h).unwrap();
        }
        ws.merge_range(
            0,
            3,
            0,
            5,
            "Melting range (°C)",
            &rust_xlsxwriter::Format::new(),
        )
        .unwrap();
        ws.write_string(1, 3, "Start").unwrap();
        ws.write_string(1, 5, "End").unwrap();
        for (r, (id, crude, rec, on, cl)) in [
            ("m1", 3.0, 2.1, 120.5, 122.0),
            ("m2", 2.8, 2.0, 121.0, 122.1),
        ]
        .iter()
        .enumerate()
        {
            let r = r as u32 + 2;
            ws.write_string(r, 0, *id).unwrap();
            ws.write_number(r, 1, *crude).unwrap();
            ws.write_number(r, 2, *rec).unwrap();
            ws.write_number(r, 3, *on).unwrap();
            ws.write_number(r, 5, *cl).unwrap();
        }
    });
    let run = f.run(&["grade", "merged.xlsx", "--out", "out"]);
    assert_eq!(run.code, 0, "{}", run.stderr);
    let rows = f.results("out");
    assert_eq!(rows.len(), 2, "the sub-header row is not a student");
    let m1 = by_id(&rows, "m1");
    assert_eq!(
        (num(m1, "mp_onset_c"), num(m1, "mp_clear_c")),
        (Some(120.5), Some(122.0))
    );
    assert!(!flags(m1).contains(&"single-reading"), "{m1:?}");
}
