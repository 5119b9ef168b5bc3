//! Which graded workbook each row goes to, and where that workbook is saved. The workbook
//! thread plans with it to lay rows out; the grading thread plans the same way, cheaply, so that
//! it can refuse a workbook that would overwrite an input as soon as the last row is graded,
//! without waiting for the workbook thread to catch up.

use std::collections::HashMap;
use std::path::{Path, PathBuf};

use super::workbook::file_stem;

/// The graded workbooks planned so far, in the order their first rows came.
#[derive(Debug)]
pub struct BookPlan {
    out_dir: PathBuf,
    split_sections: bool,
    by_key: HashMap<String, usize>,
    stems: Vec<String>,
    paths: Vec<PathBuf>,
    /// (source, section, workbook) of the previous row.
    last: Option<(String, String, usize)>,
}

impl BookPlan {
    /// One workbook per input file, or per file and section with `split_sections`.
    pub fn new(out_dir: &Path, split_sections: bool) -> BookPlan {
        BookPlan {
            out_dir: out_dir.to_path_buf(),
            split_sections,
            by_key: HashMap::new(),
            stems: Vec::new(),
            paths: Vec::new(),
            last: None,
        }
    }

    /// The workbook of a row from `source` in `section`, and whether this row opened it.
    pub fn book(&mut self, source: &str, section: &str) -> (usize, bool) {
        if let Some((src, sec, i)) = &self.last {
            if src == source && (!self.split_sections || sec == section) {
                return (*i, false);
            }
        }
        let (i, new) = self.lookup(source, section);
        self.last = Some((source.to_string(), section.to_string(), i));
        (i, new)
    }

    fn lookup(&mut self, source: &str, section: &str) -> (usize, bool) {
        let key = if self.split_sections {
            format!("{source}\u{0}{section}")
        } else {
            source.to_string()
        };
        if let Some(&i) = self.by_key.get(&key) {
            return (i, false);
        }
        let source_stem = Path::new(source)
            .file_stem()
            .and_then(|x| x.to_str())
            .unwrap_or("graded");
        let wanted = if self.split_sections {
            format!("{source_stem}-{section}")
        } else {
            source_stem.to_string()
        };
        let mut stem = file_stem(&wanted);
        let mut n = 2;
        while self.stems.contains(&stem) {
            stem = format!("{}-{n}", file_stem(&wanted));
            n += 1;
        }
        self.paths
            .push(self.out_dir.join(format!("{stem}-graded.xlsx")));
        self.stems.push(stem);
        self.by_key.insert(key, self.paths.len() - 1);
        (self.paths.len() - 1, true)
    }

    /// Every workbook's path, in the order planned.
    pub fn paths(&self) -> &[PathBuf] {
        &self.paths
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn one_workbook_per_file_or_per_file_and_section() {
        let mut p = BookPlan::new(Path::new("out"), false);
        assert_eq!(p.book("a/s1.xlsx", "A"), (0, true));
        assert_eq!(p.book("a/s1.xlsx", "B"), (0, false));
        assert_eq!(p.book("b/s1.xlsx", "A"), (1, true));
        assert_eq!(p.book("a/s1.xlsx", "A"), (0, false));
        assert_eq!(
            p.paths(),
            [
                PathBuf::from("out/s1-graded.xlsx"),
                PathBuf::from("out/s1-2-graded.xlsx")
            ]
        );
        let mut split = BookPlan::new(Path::new("out"), true);
        assert_eq!(split.book("s1.xlsx", "A"), (0, true));
        assert_eq!(split.book("s1.xlsx", "B"), (1, true));
        assert_eq!(split.book("s1.xlsx", "A"), (0, false));
        assert_eq!(split.paths()[1], PathBuf::from("out/s1-B-graded.xlsx"));
    }
}
