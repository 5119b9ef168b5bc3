//! The workspace folder the page works in, and the only files it writes: `inputs/` (uploaded
//! spreadsheets, names sanitised), `columns.toml`, `overrides.csv`, `corrections.csv` and the
//! roster (`roster.EXT`). `graded/` is written by the grading run alone, `templates/` by
//! `benchgrade template` run for the page, `rubric.toml` only by hand. The server runs inside
//! the folder, so the run is exactly `benchgrade grade inputs --columns columns.toml
//! --overrides overrides.csv [--roster roster.EXT] [--corrections corrections.csv] --out
//! graded` run there, and every file is named as that command names it.

use std::io::{Read as _, Write as _};
use std::path::{Path, PathBuf};
use std::sync::atomic::{AtomicU64, Ordering};
use std::time::SystemTime;

use crate::config::Options;
use crate::files::dir::{Dir, Kind};
use crate::ingest::discover::EXTENSIONS;

pub const INPUTS: &str = "inputs";
pub const COLUMNS: &str = "columns.toml";
pub const OVERRIDES: &str = "overrides.csv";
pub const RUBRIC: &str = "rubric.toml";
pub const GRADED: &str = "graded";
pub const CORRECTIONS: &str = "corrections.csv";
/// The roster's name without its extension: `roster.csv`, `roster.xlsx`, ...
pub const ROSTER_STEM: &str = "roster";
/// Where `benchgrade template` writes the entry workbooks for the page.
pub const TEMPLATES: &str = "templates";

/// The header a new corrections file starts with: the columns the command line reads.
pub const CORRECTIONS_HEADER: &str = "student_id,section,field,value,reason,grader\n";

/// The header a new overrides file starts with: the columns the command line reads.
pub const OVERRIDES_HEADER: &str = "student_id,section,criterion,points,adjust,reason,grader\n";

const COLUMNS_START: &str = "# Column mappings for the sheets in inputs/, as for `benchgrade grade --columns`.\n# The workspace page writes this file; edits made by hand are picked up.\n[columns]\n";

/// The workspace, with the server's working directory inside it.
#[derive(Clone, Debug)]
pub struct Workspace {
    /// The folder as the user named it, for messages.
    pub shown: PathBuf,
}

/// An input file: its name relative to `inputs/` (with `/` between folders) and size.
#[derive(Clone, Debug, PartialEq, Eq, serde::Serialize)]
pub struct InputFile {
    pub name: String,
    pub size: u64,
}

/// What the workspace's files look like now: changed when a file is added, removed or
/// written, by the page or by hand.
#[derive(Clone, Debug, Default, PartialEq, Eq)]
pub struct Fingerprint(Vec<(String, u64, Option<SystemTime>)>);

impl Workspace {
    /// Creates the layout where it is missing; never replaces a file that is there.
    pub fn create_layout(shown: &Path) -> std::io::Result<Workspace> {
        std::fs::create_dir_all(INPUTS)?;
        for (name, start) in [(COLUMNS, COLUMNS_START), (OVERRIDES, OVERRIDES_HEADER)] {
            if std::fs::symlink_metadata(name).is_err() {
                write_atomically(Path::new(name), start.as_bytes())?;
            }
        }
        crate::files::sweep_stale_partials(Path::new(INPUTS));
        crate::files::sweep_stale_partials(Path::new("."));
        Ok(Workspace {
            shown: shown.to_path_buf(),
        })
    }

    /// The options of `benchgrade grade inputs --columns columns.toml --overrides
    /// overrides.csv --out graded` (with `--rubric rubric.toml`, `--roster roster.EXT` and
    /// `--corrections corrections.csv` when there are such files).
    pub fn options(&self) -> Options {
        let present = |name: &str| Path::new(name).is_file().then(|| PathBuf::from(name));
        Options {
            inputs: vec![PathBuf::from(INPUTS)],
            out: Some(PathBuf::from(GRADED)),
            rubric: present(RUBRIC),
            columns: present(COLUMNS),
            overrides: present(OVERRIDES),
            roster: roster_file().map(PathBuf::from),
            corrections: present(CORRECTIONS),
            ..Options::default()
        }
    }

    /// Every file under `inputs/` a run would look at, sorted; hidden files left out.
    pub fn inputs(&self) -> Vec<InputFile> {
        let mut out = Vec::new();
        walk(Path::new(INPUTS), "", &mut out, 0);
        out.sort_by(|a, b| a.name.cmp(&b.name));
        out
    }

    pub fn fingerprint(&self) -> Fingerprint {
        let mut seen: Vec<(String, u64, Option<SystemTime>)> = self
            .inputs()
            .into_iter()
            .map(|f| {
                let modified = modified(&Path::new(INPUTS).join(&f.name));
                (f.name, f.size, modified)
            })
            .collect();
        let roster = roster_file().unwrap_or_else(|| ROSTER_STEM.to_string());
        for name in [COLUMNS, OVERRIDES, RUBRIC, CORRECTIONS, roster.as_str()] {
            let meta = std::fs::metadata(name).ok();
            let size = meta.as_ref().map_or(u64::MAX, std::fs::Metadata::len);
            seen.push((name.to_string(), size, modified(Path::new(name))));
        }
        Fingerprint(seen)
    }

    /// Removes the input named as `inputs()` names it: a relative path of plain names (no
    /// `..`, nothing hidden). Each folder of the name is opened without following a link, so a
    /// linked folder inside inputs/ is refused rather than reached through, and the file is
    /// unlinked through its folder's handle (a link standing there is removed itself, never
    /// what it points to).
    pub fn remove_input(&self, name: &str) -> Result<(), Refused> {
        let parts: Vec<&str> = name.split('/').collect();
        let plain = parts
            .iter()
            .all(|p| !p.is_empty() && !p.starts_with('.') && *p != "..");
        let (Some((file, folders)), true) = (parts.split_last(), plain) else {
            return Err(Refused::Missing);
        };
        let mut d = Dir::open_no_follow(Path::new(INPUTS)).map_err(|e| refused(INPUTS, e))?;
        for (i, folder) in folders.iter().enumerate() {
            let shown = parts[..=i].join("/");
            if d.kind(folder).map_err(Refused::Io)? == Some(Kind::Link) {
                return Err(Refused::Linked(format!("{INPUTS}/{shown}")));
            }
            d = d.sub(folder).map_err(|e| refused(&shown, e))?;
        }
        match d.kind(file).map_err(Refused::Io)? {
            None | Some(Kind::Folder) => Err(Refused::Missing),
            Some(_) => d.remove_file(file).map_err(Refused::Io),
        }
    }

    /// The entry workbooks in `templates/`, sorted (the folder opened without following a
    /// link).
    pub fn templates(&self) -> Vec<InputFile> {
        let Ok(d) = Dir::open_no_follow(Path::new(TEMPLATES)) else {
            return Vec::new();
        };
        let mut out = visible_files(&d, "");
        out.sort_by(|a, b| a.name.cmp(&b.name));
        out
    }

    /// The bytes of an entry workbook by its name, if `templates/` holds it, read through the
    /// folder's handle.
    pub fn read_template(&self, name: &str) -> Option<std::io::Result<Vec<u8>>> {
        if !self.templates().iter().any(|o| o.name == name) {
            return None;
        }
        let read = || {
            let mut bytes = Vec::new();
            Dir::open_no_follow(Path::new(TEMPLATES))?
                .open_file(name)?
                .read_to_end(&mut bytes)?;
            Ok(bytes)
        };
        Some(read())
    }

    /// Stores an uploaded roster as `roster.EXT` (whole or not at all), then removes a roster
    /// of another type, so that the workspace holds one; the name stored.
    pub fn store_roster(&self, ext: &str, bytes: &[u8]) -> std::io::Result<String> {
        let name = format!("{ROSTER_STEM}.{}", ext.to_ascii_lowercase());
        write_atomically(Path::new(&name), bytes)?;
        for other in roster_files() {
            if other != name {
                remove_plain(&other)?;
            }
        }
        Ok(name)
    }

    /// Removes the roster; false when there was none.
    pub fn remove_roster(&self) -> std::io::Result<bool> {
        let found = roster_files();
        for name in &found {
            remove_plain(name)?;
        }
        Ok(!found.is_empty())
    }

    /// The files of `graded/` a person may want, sorted: every visible regular file. The
    /// folder and its handouts folder are opened without following a link: a linked
    /// `graded/` or `graded/handouts` shows nothing.
    pub fn outputs(&self) -> Vec<InputFile> {
        let Ok(graded) = Dir::open_no_follow(Path::new(GRADED)) else {
            return Vec::new();
        };
        let mut out = visible_files(&graded, "");
        // the handouts, one file a section, named "handouts/<section>.html"
        let handouts = crate::export::handouts::FOLDER;
        if let Ok(h) = graded.sub(handouts) {
            out.extend(visible_files(&h, &format!("{handouts}/")));
        }
        out.sort_by(|a, b| a.name.cmp(&b.name));
        out
    }

    /// The bytes of an output by its name, if `graded/` holds it, read through the folders'
    /// handles (no link followed).
    pub fn read_output(&self, name: &str) -> Option<std::io::Result<Vec<u8>>> {
        if !self.outputs().iter().any(|o| o.name == name) {
            return None;
        }
        let read = || {
            let graded = Dir::open_no_follow(Path::new(GRADED))?;
            let (folder, file) = match name.split_once('/') {
                Some((sub, file)) => (graded.sub(sub)?, file),
                None => (graded, name),
            };
            let mut bytes = Vec::new();
            folder.open_file(file)?.read_to_end(&mut bytes)?;
            Ok(bytes)
        };
        Some(read())
    }
}

/// The workspace's rosters, `roster.EXT` for each type benchgrade reads, that are regular
/// files (a link at the name is not one), in the order of `EXTENSIONS`.
fn roster_files() -> Vec<String> {
    EXTENSIONS
        .iter()
        .map(|e| format!("{ROSTER_STEM}.{e}"))
        .filter(|n| std::fs::symlink_metadata(n).is_ok_and(|m| m.is_file()))
        .collect()
}

/// The roster the runs use: the first of `roster_files`.
pub fn roster_file() -> Option<String> {
    roster_files().into_iter().next()
}

/// Removes a plain file of the workspace folder through the folder's handle (a link at the
/// name is removed itself, never what it points to).
fn remove_plain(name: &str) -> std::io::Result<()> {
    Dir::open_no_follow(Path::new("."))?.remove_file(name)
}

/// Why an input was not removed.
#[derive(Debug)]
pub enum Refused {
    /// No such file in inputs/.
    Missing,
    /// A folder of its name is a link (named, from the workspace).
    Linked(String),
    Io(std::io::Error),
}

impl std::fmt::Display for Refused {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        match self {
            Refused::Missing => write!(f, "no such file in inputs/"),
            Refused::Linked(folder) => write!(
                f,
                "{folder} is a link to a folder elsewhere; the page removes only files inside the workspace (remove it there yourself)"
            ),
            Refused::Io(e) => write!(f, "cannot remove it: {e}"),
        }
    }
}

/// A folder of an input's name that could not be opened: missing, or a link.
fn refused(shown: &str, e: std::io::Error) -> Refused {
    match e.raw_os_error() {
        Some(libc::ELOOP) => Refused::Linked(format!("{INPUTS}/{shown}")),
        Some(libc::ENOENT | libc::ENOTDIR) => Refused::Missing,
        _ => Refused::Io(e),
    }
}

/// The visible regular files of a folder (no hidden ones, no folders, no links), named with
/// `prefix`.
fn visible_files(d: &Dir, prefix: &str) -> Vec<InputFile> {
    let Ok(names) = d.names() else {
        return Vec::new();
    };
    names
        .into_iter()
        .filter_map(|n| n.into_string().ok())
        .filter(|n| !n.starts_with('.') && d.kind(n).ok().flatten() == Some(Kind::File))
        .filter_map(|name| {
            let size = d.open_file(&name).ok()?.metadata().ok()?.len();
            Some(InputFile {
                name: format!("{prefix}{name}"),
                size,
            })
        })
        .collect()
}

fn modified(path: &Path) -> Option<SystemTime> {
    std::fs::metadata(path).and_then(|m| m.modified()).ok()
}

/// Files below `dir` (a few folders deep, as a course's folder of sections is), named from
/// `inputs/`.
fn walk(dir: &Path, prefix: &str, out: &mut Vec<InputFile>, depth: usize) {
    let Ok(entries) = std::fs::read_dir(dir) else {
        return;
    };
    for e in entries.flatten() {
        let Ok(name) = e.file_name().into_string() else {
            continue;
        };
        if name.starts_with('.') || name.starts_with("~$") {
            continue;
        }
        let rel = format!("{prefix}{name}");
        match e.metadata() {
            Ok(m) if m.is_dir() && depth < 4 => {
                walk(&e.path(), &format!("{rel}/"), out, depth + 1);
            }
            Ok(m) if m.is_file() => out.push(InputFile {
                name: rel,
                size: m.len(),
            }),
            _ => {}
        }
    }
}

/// Why an uploaded file's name cannot be stored.
#[derive(Clone, Debug, PartialEq, Eq)]
pub enum BadName {
    /// No name left once the folders and odd characters are taken out.
    Empty,
    /// Not a type the command line reads; the extension as given.
    NotSpreadsheet(String),
}

impl std::fmt::Display for BadName {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        let types = EXTENSIONS.map(|e| format!(".{e}")).join(" ");
        match self {
            BadName::Empty => write!(f, "the file has no usable name"),
            BadName::NotSpreadsheet(ext) if ext.is_empty() => {
                write!(
                    f,
                    "not a spreadsheet: the name has no extension; benchgrade reads {types}"
                )
            }
            BadName::NotSpreadsheet(ext) => write!(
                f,
                "not a spreadsheet benchgrade reads (.{ext}); it reads {types}"
            ),
        }
    }
}

/// The name an upload is stored under in `inputs/`: its last part only (a name such as
/// `../../x.csv` or `C:\class\x.csv` becomes `x.csv`), characters other than letters, digits,
/// spaces and `. - _ ( ) [ ] , + #` replaced by `_`, no leading dot, at most 120 characters
/// and `MAX_NAME_BYTES` bytes (cut on a character boundary, the extension kept: a file system
/// holds 255 bytes a name, and a temporary file's name adds to it), and one of the extensions
/// the command line reads.
pub fn sanitise_name(given: &str) -> Result<String, BadName> {
    let last = given.rsplit(['/', '\\']).next().unwrap_or("");
    let cleaned: String = last
        .chars()
        .map(|c| {
            let kept = c.is_alphanumeric() || " .-_()[],+#".contains(c);
            if kept && !c.is_control() {
                c
            } else {
                '_'
            }
        })
        .collect();
    let trimmed = cleaned
        .trim()
        .trim_start_matches(['.', ' '])
        .trim_end_matches(['.', ' ']);
    let name = capped(trimmed);
    let Some((stem, ext)) = name.rsplit_once('.') else {
        return Err(if name.is_empty() {
            BadName::Empty
        } else {
            BadName::NotSpreadsheet(String::new())
        });
    };
    if !EXTENSIONS.contains(&ext.to_ascii_lowercase().as_str()) {
        return Err(BadName::NotSpreadsheet(ext.to_string()));
    }
    if stem.trim_matches(['_', ' ']).is_empty() {
        return Err(BadName::Empty);
    }
    Ok(name)
}

/// The most bytes an upload's stored name may take.
pub const MAX_NAME_BYTES: usize = 180;

/// `name` cut to 120 characters and `MAX_NAME_BYTES` bytes, the stem cut on a character
/// boundary and the extension kept.
fn capped(name: &str) -> String {
    if name.chars().count() <= 120 && name.len() <= MAX_NAME_BYTES {
        return name.to_string();
    }
    let (stem, ext) = name.rsplit_once('.').unwrap_or((name, ""));
    let keep_chars = 119usize.saturating_sub(ext.chars().count());
    let keep_bytes = (MAX_NAME_BYTES - 1).saturating_sub(ext.len());
    let mut end = 0;
    for (n, (i, c)) in stem.char_indices().enumerate() {
        if n >= keep_chars || i + c.len_utf8() > keep_bytes {
            break;
        }
        end = i + c.len_utf8();
    }
    format!("{}.{ext}", &stem[..end])
}

static TEMPORARY: AtomicU64 = AtomicU64::new(0);

/// A new temporary file's path in `dir`: hidden (no run reads it) and named
/// `.NAME.N.PID.partial`, so that a dead server's leftovers are swept.
pub fn temporary_path(dir: &Path, name: &str) -> PathBuf {
    let n = TEMPORARY.fetch_add(1, Ordering::Relaxed);
    dir.join(format!(".{name}.{n}.{}.partial", std::process::id()))
}

/// Writes `path` whole or not at all: a temporary file beside it, flushed to disk, renamed.
pub fn write_atomically(path: &Path, bytes: &[u8]) -> std::io::Result<()> {
    let dir = path
        .parent()
        .filter(|p| !p.as_os_str().is_empty())
        .unwrap_or(Path::new("."));
    let name = path.file_name().and_then(|n| n.to_str()).unwrap_or("file");
    let tmp = temporary_path(dir, name);
    let result = (|| {
        let mut f = crate::files::create_new(&tmp)?;
        f.write_all(bytes)?;
        f.sync_all()?;
        std::fs::rename(&tmp, path)
    })();
    if result.is_err() {
        let _ = std::fs::remove_file(&tmp);
    }
    result
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn names_are_kept_inside_inputs() {
        assert_eq!(sanitise_name("../../x.csv").unwrap(), "x.csv");
        assert_eq!(
            sanitise_name("C:\\class\\Sec 01.xlsx").unwrap(),
            "Sec 01.xlsx"
        );
        assert_eq!(sanitise_name("../").unwrap_err(), BadName::Empty);
        assert_eq!(sanitise_name("<>.csv").unwrap_err(), BadName::Empty);
        assert_eq!(sanitise_name(".hidden.ods").unwrap(), "hidden.ods");
        assert_eq!(sanitise_name("a\u{1b}[2Jb.TSV").unwrap(), "a_[2Jb.TSV");
        assert_eq!(
            sanitise_name("report.pdf").unwrap_err(),
            BadName::NotSpreadsheet("pdf".into())
        );
        assert_eq!(
            sanitise_name("notes").unwrap_err(),
            BadName::NotSpreadsheet(String::new())
        );
        let long = format!("{}.xlsx", "a".repeat(300));
        let kept = sanitise_name(&long).unwrap();
        assert!(
            kept.rsplit_once('.').is_some_and(|(_, e)| e == "xlsx") && kept.chars().count() == 120,
            "{kept}"
        );
        // 200 CJK characters are 600 bytes in UTF-8, past a file system's 255 a name
        let cjk = format!("{}.csv", "実験報告".repeat(50));
        let kept = sanitise_name(&cjk).unwrap();
        assert!(
            kept.len() <= MAX_NAME_BYTES && kept.rsplit_once('.').is_some_and(|(_, e)| e == "csv"),
            "{kept}"
        );
        assert!(kept.starts_with("実験報告実験報告"), "{kept}");
        assert_eq!(
            kept.len(),
            4 + 3 * 58,
            "58 whole characters of 3 bytes fit before .csv"
        );
    }
}
