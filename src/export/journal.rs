//! The output folder's two state files and what they drive. `.benchgrade-manifest` records
//! each output the last run made current, with the SHA-256 of its content; `.benchgrade-journal`
//! names a publication in progress: the temporary files to rename into place (with their
//! hashes) and the previous outputs to remove. Both are read as every state file is read:
//! through a handle of the output folder, a regular file only (a link, a pipe, a device or a
//! folder at the name is refused, named in the message), with a size bound.
//!
//! Everything the journal renames or removes is a plain name in the output folder or its
//! `handouts/` folder, looked up through folder handles that follow no link (`files::dir`), so
//! no line of a journal, planted or not, reaches outside the folder; a `handouts` that is a link
//! is refused. An output is removed only if the manifest records it and its content still
//! hashes to what benchgrade wrote, and never if it is one of the run's inputs; an output
//! changed by hand since (or a file benchgrade did not write standing where an output goes) is
//! set aside under a new name (`NAME.edited.EXT`, `NAME.kept.EXT`), never overwritten or
//! removed, with a note.

use std::collections::BTreeMap;
use std::fmt::Write as _;
use std::io::{self, Read, Write as _};
use std::path::PathBuf;

use sha2::{Digest, Sha256};

use crate::files::dir::{Dir, Kind};

/// The journal of a publication in progress.
pub const JOURNAL: &str = ".benchgrade-journal";
/// What the folder holds from the last run: one output a line, with its hash.
pub const MANIFEST: &str = ".benchgrade-manifest";
/// The one subfolder outputs go to.
pub const HANDOUTS: &str = super::handouts::FOLDER;

const JOURNAL_HEAD: &str = "benchgrade journal 2\n";
/// A journal an earlier version wrote (no hashes).
const JOURNAL_V1: &str = "benchgrade journal 1\n";
const MANIFEST_HEAD: &str = "benchgrade manifest 2\n";
/// No state file benchgrade writes comes near this (a line an output).
const STATE_LIMIT: u64 = 32 << 20;

/// (device, inode) of each input, so that none is ever replaced or removed.
pub type Inputs = Vec<(u64, u64)>;

/// The identities of `paths` (following links, as the run read them).
pub fn identities(paths: &[PathBuf]) -> Inputs {
    use std::os::unix::fs::MetadataExt;
    paths
        .iter()
        .filter_map(|p| std::fs::metadata(p).ok())
        .map(|m| (m.dev(), m.ino()))
        .collect()
}

/// A name as the journal and the manifest give it: "results.csv" or "handouts/sec-01.html".
#[derive(Clone, Copy)]
struct Place<'a> {
    in_handouts: bool,
    file: &'a str,
}

fn place(name: &str) -> Option<Place<'_>> {
    let (in_handouts, file) = match name.split_once('/') {
        Some((HANDOUTS, file)) => (true, file),
        Some(_) => return None,
        None => (false, name),
    };
    let plain = !file.is_empty() && !file.contains(['/', '\\', '\0']) && file != "..";
    plain.then_some(Place { in_handouts, file })
}

/// An output's name: plain and not hidden.
fn output(name: &str) -> Option<Place<'_>> {
    place(name).filter(|p| !p.file.starts_with('.'))
}

/// A temporary file's name: hidden, `.partial`.
fn temporary(name: &str) -> Option<Place<'_>> {
    place(name).filter(|p| p.file.starts_with('.') && p.file.ends_with(".partial"))
}

/// The output folder and, once needed, its handouts folder.
struct Folders<'a> {
    top: &'a Dir,
    handouts: Option<Dir>,
}

impl<'a> Folders<'a> {
    fn new(top: &'a Dir) -> Folders<'a> {
        Folders {
            top,
            handouts: None,
        }
    }

    /// The folder a name is in; `None` for a handouts folder that is not there (made when
    /// `make`).
    fn get(&mut self, p: Place, make: bool) -> io::Result<Option<&Dir>> {
        if !p.in_handouts {
            return Ok(Some(self.top));
        }
        if self.handouts.is_none() {
            match handouts_kind(self.top)? {
                None if make => self.top.mkdir(HANDOUTS)?,
                None => return Ok(None),
                Some(_) => {}
            }
            self.handouts = Some(self.top.sub(HANDOUTS)?);
        }
        Ok(self.handouts.as_ref())
    }
}

/// What stands at `DIR/handouts`: nothing or a folder; anything else (a link above all) is an
/// error that says what to do.
pub fn handouts_kind(top: &Dir) -> io::Result<Option<Kind>> {
    let kind = top.kind(HANDOUTS)?;
    let what = match kind {
        None | Some(Kind::Folder) => return Ok(kind),
        Some(Kind::Link) => "a link",
        Some(_) => "not a folder",
    };
    Err(io::Error::other(format!(
        "{} is {what}; benchgrade writes only inside its output folder: remove it (or choose another --out folder)",
        top.shown(HANDOUTS).display()
    )))
}

/// What a name holds now.
enum Content {
    Missing,
    /// A link, a folder, a pipe: nothing benchgrade wrote.
    NotAFile,
    Hash(String),
}

/// The SHA-256 of a file's content, read through the folder's handle, as lowercase hex.
fn content(d: &Dir, file: &str) -> io::Result<Content> {
    match d.kind(file)? {
        None => Ok(Content::Missing),
        Some(Kind::File) => Ok(Content::Hash(hash_reader(&mut d.open_file(file)?)?)),
        Some(_) => Ok(Content::NotAFile),
    }
}

/// The SHA-256 of everything `r` yields, as lowercase hex.
pub fn hash_reader(r: &mut impl Read) -> io::Result<String> {
    let mut hash = Sha256::new();
    let mut buf = vec![0u8; 1 << 16];
    loop {
        match r.read(&mut buf)? {
            0 => break,
            n => hash.update(&buf[..n]),
        }
    }
    Ok(super::provenance::hex(&hash.finalize()))
}

/// A finished temporary file to make current: its name, its output's, its content's hash.
pub struct Put {
    pub tmp: String,
    pub name: String,
    pub hash: String,
}

/// The manifest: each output's name and (unless an earlier version wrote it) hash.
type Manifest = BTreeMap<String, Option<String>>;

/// Reads the manifest (none: empty). Anything but a regular file there is an error naming it.
pub fn read_manifest(d: &Dir) -> io::Result<Manifest> {
    if d.kind(MANIFEST)?.is_none() {
        return Ok(Manifest::new());
    }
    let text = String::from_utf8_lossy(&d.read(MANIFEST, STATE_LIMIT)?).into_owned();
    let hashed = text.starts_with(MANIFEST_HEAD);
    let mut out = Manifest::new();
    for line in text.lines().skip(usize::from(hashed)) {
        let (hash, name) = match line.split_once('\t') {
            Some((h, n)) if hashed && h.len() == 64 => (Some(h.to_string()), n),
            _ if !hashed => (None, line),
            _ => continue,
        };
        if output(name).is_some() {
            out.insert(name.to_string(), hash);
        }
    }
    Ok(out)
}

/// Makes the temporary files `puts` (named as in `d`) current
/// and removes the previous run's outputs this one did not write again; notes on what was set
/// aside or left in place. An error once the journal is in place says the folder is partly
/// replaced and that the next run completes it.
pub fn publish(d: &Dir, puts: &[Put], inputs: &Inputs) -> io::Result<Vec<String>> {
    let old = read_manifest(d)?;
    let mut journal = String::from(JOURNAL_HEAD);
    for Put { tmp, name, hash } in puts {
        let _ = writeln!(journal, "put\t{tmp}\t{name}\t{hash}");
    }
    for (name, hash) in &old {
        if let (Some(h), false) = (hash, puts.iter().any(|p| p.name == *name)) {
            let _ = writeln!(journal, "drop\t{name}\t{h}");
        }
    }
    journal.push_str("end\n");
    write_small(d, JOURNAL, &journal)?;
    d.sync();
    apply(d, &journal, &old, inputs).map_err(|e| {
        io::Error::new(
            e.kind(),
            format!("{e}; the outputs are partly replaced: the next run into this folder completes them"),
        )
    })
}

/// Completes a publication a killed run left half done: call under the folder's lock, before
/// anything else touches the folder. A journal without its end line was never in place and is
/// removed. `None` when there was no journal; else the notes of what was set aside.
pub fn recover(d: &Dir, inputs: &Inputs) -> io::Result<Option<Vec<String>>> {
    if d.kind(JOURNAL)?.is_none() {
        return Ok(None);
    }
    let bytes = d.read(JOURNAL, STATE_LIMIT)?;
    let journal = String::from_utf8(bytes).unwrap_or_default();
    let known = journal.starts_with(JOURNAL_HEAD) || journal.starts_with(JOURNAL_V1);
    if known && journal.ends_with("end\n") {
        let old = read_manifest(d)?;
        return apply(d, &journal, &old, inputs).map(Some);
    }
    d.remove_file(JOURNAL)?;
    Ok(Some(Vec::new()))
}

/// What carrying out a journal found worth saying, and the new manifest.
struct Applied {
    manifest: String,
    notes: Vec<String>,
    dropped_handouts: bool,
}

/// Carries out a complete journal: every temporary file still there renamed into place, every
/// stale output still as benchgrade wrote it removed, the manifest written, the journal removed.
fn apply(d: &Dir, journal: &str, old: &Manifest, inputs: &Inputs) -> io::Result<Vec<String>> {
    let mut folders = Folders::new(d);
    let mut done = Applied {
        manifest: String::from(MANIFEST_HEAD),
        notes: Vec::new(),
        dropped_handouts: false,
    };
    for line in journal.lines() {
        match line.split('\t').collect::<Vec<_>>().as_slice() {
            ["put", tmp, name, rest @ ..] => {
                put(
                    &mut folders,
                    (tmp, name, rest.first()),
                    old,
                    inputs,
                    &mut done,
                )?;
            }
            ["drop", name, rest @ ..] => {
                drop_stale(&mut folders, name, rest.first(), old, inputs, &mut done)?;
            }
            _ => {}
        }
    }
    if done.dropped_handouts {
        // a handouts folder an earlier run made goes once it is empty
        let _ = d.remove_dir(HANDOUTS);
    }
    write_small(d, MANIFEST, &done.manifest)?;
    d.remove_file(JOURNAL)?;
    d.sync();
    Ok(done.notes)
}

/// One `put` line: the temporary file renamed over its output (a changed output, or a file
/// benchgrade did not write, set aside first; an input never replaced).
fn put(
    folders: &mut Folders,
    (tmp, name, hash): (&str, &str, Option<&&str>),
    old: &Manifest,
    inputs: &Inputs,
    done: &mut Applied,
) -> io::Result<()> {
    let (Some(t), Some(n)) = (temporary(tmp), output(name)) else {
        return Ok(());
    };
    let Some(src) = folders.get(t, false)?.map(Dir::try_clone).transpose()? else {
        return Ok(());
    };
    match src.kind(t.file)? {
        Some(Kind::File) => {}
        // already renamed by the run that wrote the journal, or never a file of ours
        None => return record(folders, n, name, hash.copied(), done),
        Some(_) => return Ok(()),
    }
    let dst = folders
        .get(n, true)?
        .ok_or_else(|| io::Error::other("no folder"))?;
    if let Some(id) = dst.identity(n.file)? {
        if inputs.contains(&id) {
            let _ = src.remove_file(t.file);
            done.notes.push(format!(
                "{} is one of the inputs; it was left as it is, not replaced",
                dst.shown(n.file).display()
            ));
            return Ok(());
        }
        let recorded = old.get(name);
        let ours = match (recorded, content(dst, n.file)?) {
            (Some(None), _) => true,
            (Some(Some(h)), Content::Hash(now)) => *h == now,
            _ => false,
        };
        if !ours {
            let marker = if recorded.is_some() { "edited" } else { "kept" };
            let aside = set_aside(dst, n.file, marker)?;
            done.notes
                .push(aside_note(dst, n.file, &aside, recorded.is_some()));
        }
    }
    src.rename(t.file, dst, n.file)?;
    record(folders, n, name, hash.copied(), done)
}

/// Adds an output to the new manifest, with its hash (computed now for an old journal's line).
fn record(
    folders: &mut Folders,
    n: Place,
    name: &str,
    hash: Option<&str>,
    done: &mut Applied,
) -> io::Result<()> {
    let hash = match hash {
        Some(h) => h.to_string(),
        None => match folders
            .get(n, false)?
            .map(|f| content(f, n.file))
            .transpose()?
        {
            Some(Content::Hash(h)) => h,
            _ => return Ok(()),
        },
    };
    let _ = writeln!(done.manifest, "{hash}\t{name}");
    Ok(())
}

/// One `drop` line: a previous output removed if the manifest records it and it still holds
/// what benchgrade wrote; set aside if it was changed since.
fn drop_stale(
    folders: &mut Folders,
    name: &str,
    hash: Option<&&str>,
    old: &Manifest,
    inputs: &Inputs,
    done: &mut Applied,
) -> io::Result<()> {
    let Some(n) = output(name) else {
        return Ok(());
    };
    let Some(folder) = folders.get(n, false)? else {
        return Ok(());
    };
    let recorded = match old.get(name) {
        Some(Some(h)) if hash.is_none_or(|j| *j == h) => h,
        Some(None) if folder.kind(n.file)?.is_some() => {
            done.notes.push(format!(
                "{} was left in place: an earlier version of benchgrade wrote it without a hash, so it cannot tell whether it was changed since; remove it yourself if it is not wanted",
                folder.shown(n.file).display()
            ));
            return Ok(());
        }
        _ => return Ok(()),
    };
    if folder
        .identity(n.file)?
        .is_some_and(|id| inputs.contains(&id))
    {
        return Ok(());
    }
    match content(folder, n.file)? {
        Content::Hash(now) if now == *recorded => {
            match folder.remove_file(n.file) {
                Err(e) if e.kind() != io::ErrorKind::NotFound => return Err(e),
                _ => {}
            }
            done.dropped_handouts |= n.in_handouts;
        }
        Content::Hash(_) => {
            let aside = set_aside(folder, n.file, "edited")?;
            done.notes.push(aside_note(folder, n.file, &aside, true));
        }
        Content::Missing | Content::NotAFile => {}
    }
    Ok(())
}

fn aside_note(d: &Dir, file: &str, aside: &str, edited: bool) -> String {
    let why = if edited {
        "was changed after benchgrade wrote it"
    } else {
        "was not written by benchgrade"
    };
    format!(
        "{} {why}; it is kept, renamed {aside}",
        d.shown(file).display()
    )
}

/// Renames `file` to a name of its own that nothing holds yet: `NAME.MARKER.EXT`, then
/// `NAME.MARKER-2.EXT` and on; never over another file.
fn set_aside(d: &Dir, file: &str, marker: &str) -> io::Result<String> {
    let (stem, ext) = match file.rsplit_once('.') {
        Some((s, e)) if !s.is_empty() => (s, format!(".{e}")),
        _ => (file, String::new()),
    };
    for k in 1..1000 {
        let tag = if k == 1 {
            marker.to_string()
        } else {
            format!("{marker}-{k}")
        };
        let aside = format!("{stem}.{tag}{ext}");
        match d.rename_no_replace(file, &aside) {
            Ok(()) => return Ok(aside),
            Err(e) if e.kind() == io::ErrorKind::AlreadyExists => {}
            Err(e) => return Err(e),
        }
    }
    Err(io::Error::other(format!(
        "{}: no free name to set it aside under",
        d.shown(file).display()
    )))
}

/// Writes a small state file through a temporary file in the folder, then renames it into
/// place (over a link there, never through it).
fn write_small(d: &Dir, name: &str, text: &str) -> io::Result<()> {
    let tmp = format!(".{name}.{}.partial", std::process::id());
    let mut f = d.create_new(&tmp)?;
    f.write_all(text.as_bytes())?;
    f.sync_all()?;
    d.rename(&tmp, d, name)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn names_are_plain_and_inside_the_folder_or_its_handouts() {
        assert!(output("results.csv").is_some());
        assert!(output("handouts/S1.html").is_some_and(|p| p.in_handouts));
        for bad in [
            "../x.csv",
            "sub/x.csv",
            "handouts/../x",
            "handouts/a/b",
            "",
            ".hidden",
            "a\\b",
        ] {
            assert!(output(bad).is_none(), "{bad}");
        }
        assert!(temporary(".a.csv.7.partial").is_some());
        assert!(temporary("a.csv").is_none());
    }

    #[test]
    fn a_file_is_set_aside_under_a_free_name_and_never_over_another() {
        let dir = tempfile::tempdir().unwrap();
        let d = Dir::open(dir.path()).unwrap();
        std::fs::write(dir.path().join("s1-graded.edited.xlsx"), b"first").unwrap();
        std::fs::write(dir.path().join("s1-graded.xlsx"), b"second").unwrap();
        assert_eq!(
            set_aside(&d, "s1-graded.xlsx", "edited").unwrap(),
            "s1-graded.edited-2.xlsx"
        );
        let read = |n: &str| std::fs::read(dir.path().join(n)).unwrap();
        assert_eq!(read("s1-graded.edited.xlsx"), b"first");
        assert_eq!(read("s1-graded.edited-2.xlsx"), b"second");
        assert!(!dir.path().join("s1-graded.xlsx").exists());
    }
}
