//! Reading an answer key for unknowns: a CSV/TSV or any workbook (its "key" sheet, else its
//! first) with a code column and a compound column, handed on as plain (code, compound) pairs.
//! Which compound is which is the assessment's business (`assess::unknowns`).

use std::path::Path;

use super::cells::RawSheet;
use super::workbook;

/// What a key header names.
#[derive(Clone, Copy, PartialEq)]
enum Role {
    Code,
    Compound,
}

fn role(text: &str) -> Option<Role> {
    let t = text.to_lowercase();
    let words: Vec<&str> = t
        .split(|c: char| !c.is_alphanumeric())
        .filter(|w| !w.is_empty())
        .collect();
    let has = |w: &str| words.contains(&w);
    // a class sheet's columns, never a key's
    if has("student") || has("name") || has("mass") || has("mp") || has("melting") {
        return None;
    }
    if has("compound")
        || has("identity")
        || has("answer")
        || has("substance")
        || has("chemical")
        || has("is")
    {
        Some(Role::Compound)
    } else if has("code")
        || has("unknown")
        || has("sample")
        || has("number")
        || has("no")
        || has("id")
        || t.contains('#')
    {
        Some(Role::Code)
    } else {
        None
    }
}

/// The pairs of a sheet whose header (within its first 20 rows) has a code and a compound
/// column; `None` when it has no such header.
pub fn from_sheet(sheet: &RawSheet) -> Option<Vec<(String, String)>> {
    for (pos, row) in sheet.rows.iter().take(20).enumerate() {
        let mut code = None;
        let mut compound = None;
        for (c, cell) in row.non_empty() {
            match cell.as_text().as_deref().and_then(role) {
                Some(Role::Code) if code.is_none() => code = Some(c),
                Some(Role::Compound) if compound.is_none() => compound = Some(c),
                _ => {}
            }
        }
        let (Some(code), Some(compound)) = (code, compound) else {
            continue;
        };
        let pairs = sheet.rows[pos + 1..]
            .iter()
            .filter_map(|r| {
                let a = r.get(code).as_text()?;
                let b = r.get(compound).as_text()?;
                (!a.trim().is_empty() && !b.trim().is_empty())
                    .then(|| (a.trim().to_string(), b.trim().to_string()))
            })
            .collect();
        return Some(pairs);
    }
    None
}

/// Whether a sheet looks like an answer key: a code and a compound column, and no more than a
/// few columns (a class sheet names students and masses as well).
pub fn looks_like_a_key(sheet: &RawSheet) -> bool {
    let narrow = sheet
        .rows
        .iter()
        .take(20)
        .all(|r| r.non_empty().count() <= 4);
    narrow && from_sheet(sheet).is_some_and(|p| !p.is_empty())
}

/// Reads a key file: its pairs, or why it cannot be used.
pub fn load(path: &Path) -> Result<Vec<(String, String)>, String> {
    let source = path.display().to_string();
    let (sheet, _) = workbook::read_side_sheet(path, "key")?;
    from_sheet(&sheet).ok_or_else(|| {
        format!("{source}: no answer key found: give it a code column (\"Unknown\", \"Code\") and a compound column (\"Compound\")")
    })
}

/// A file whose name says it is an answer key ("answer-key.csv", "unknowns_key.xlsx").
pub fn is_key_file(path: &Path) -> bool {
    path.file_stem().and_then(|s| s.to_str()).is_some_and(|s| {
        s.to_lowercase()
            .split(|c: char| !c.is_alphanumeric())
            .any(|w| w == "key" || w == "answerkey" || w == "answers")
    })
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::ingest::delimited;

    #[test]
    fn a_key_is_read_by_its_headers() {
        let d = delimited::read_delimited(
            b"Answer key, Exp 3\nUnknown #,Compound\nU-1,acetanilide\nU-2, benzoic acid \n,\n",
            false,
        )
        .unwrap();
        let pairs = from_sheet(&d.sheet).unwrap();
        assert_eq!(
            pairs,
            vec![
                ("U-1".to_string(), "acetanilide".to_string()),
                ("U-2".to_string(), "benzoic acid".to_string())
            ]
        );
        assert!(looks_like_a_key(&d.sheet));
        // a narrow class sheet is no key
        let d = delimited::read_delimited(
            b"Student ID,Compound,Crude (g)\ns1,benzoic acid,2.0\n",
            false,
        )
        .unwrap();
        assert!(!looks_like_a_key(&d.sheet));
        assert!(is_key_file(Path::new("in/answer-key.csv")));
        assert!(is_key_file(Path::new("Unknowns KEY.xlsx")));
        assert!(!is_key_file(Path::new("keyboard.csv")));
    }
}
