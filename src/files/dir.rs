#![allow(unsafe_code)] // openat, renameat, unlinkat, mkdirat, fstatat and readdir have no safe std form
//! A folder held open as a handle, and the few things benchgrade does to names inside it:
//! open, create, rename, remove, list. Every name is one plain file name (no `/`, not `.` or
//! `..`) looked up in the folder the handle holds, never through a link: a link standing at a
//! name is refused (opening) or acted on itself (renaming, removing), so nothing done through a
//! `Dir` reaches outside its folder, however its path or a subfolder is swapped for a link
//! meanwhile. This is the only module with `unsafe` calls besides the allocator's: each is one
//! libc call on a handle this module owns and a name it has checked and NUL-terminated.

use std::ffi::{CStr, CString, OsStr, OsString};
use std::fs::{File, OpenOptions};
use std::io::{self, Read};
use std::os::fd::{AsRawFd, FromRawFd, OwnedFd};
use std::os::unix::ffi::OsStrExt;
use std::os::unix::fs::OpenOptionsExt;
use std::path::{Path, PathBuf};

/// An open folder, with the path it was opened by (for messages).
#[derive(Debug)]
pub struct Dir {
    fd: OwnedFd,
    path: PathBuf,
}

/// What stands at a name in a folder, not following a link.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Kind {
    File,
    Folder,
    Link,
    /// A pipe, a device or a socket.
    Other,
}

/// A plain file name as a C string: one component, not `.` or `..`, no NUL.
fn c_name(name: &OsStr) -> io::Result<CString> {
    let b = name.as_bytes();
    if b.is_empty() || b == b"." || b == b".." || b.contains(&b'/') {
        return Err(io::Error::new(
            io::ErrorKind::InvalidInput,
            format!("not a plain file name: {}", name.to_string_lossy()),
        ));
    }
    CString::new(b).map_err(|_| io::Error::new(io::ErrorKind::InvalidInput, "a NUL in a name"))
}

/// -1 as an `io::Error` from errno; anything else passes.
fn check(r: libc::c_int) -> io::Result<libc::c_int> {
    if r < 0 {
        Err(io::Error::last_os_error())
    } else {
        Ok(r)
    }
}

impl Dir {
    /// Opens the folder at `path` as the user named it (links in the path are followed).
    pub fn open(path: &Path) -> io::Result<Dir> {
        Dir::open_with(path, 0)
    }

    /// Opens the folder at `path`, refusing a link at its last component.
    pub fn open_no_follow(path: &Path) -> io::Result<Dir> {
        Dir::open_with(path, libc::O_NOFOLLOW)
    }

    fn open_with(path: &Path, flags: libc::c_int) -> io::Result<Dir> {
        let file = OpenOptions::new()
            .read(true)
            .custom_flags(libc::O_DIRECTORY | libc::O_CLOEXEC | flags)
            .open(path)?;
        Ok(Dir {
            fd: OwnedFd::from(file),
            path: path.to_path_buf(),
        })
    }

    /// A second handle on the same folder.
    pub fn try_clone(&self) -> io::Result<Dir> {
        Ok(Dir {
            fd: self.fd.try_clone()?,
            path: self.path.clone(),
        })
    }

    /// The path the folder was opened by, for messages.
    pub fn path(&self) -> &Path {
        &self.path
    }

    /// A name's path, for messages.
    pub fn shown(&self, name: impl AsRef<OsStr>) -> PathBuf {
        self.path.join(name.as_ref())
    }

    fn openat(&self, name: &OsStr, flags: libc::c_int, mode: libc::c_uint) -> io::Result<OwnedFd> {
        let c = c_name(name)?;
        let flags = flags | libc::O_NOFOLLOW | libc::O_CLOEXEC;
        // SAFETY: a valid folder handle we own and a NUL-terminated name; the returned handle is
        // new and owned by the OwnedFd alone.
        let fd = check(unsafe { libc::openat(self.fd.as_raw_fd(), c.as_ptr(), flags, mode) })?;
        // SAFETY: `fd` was just returned by openat and is owned by nothing else.
        Ok(unsafe { OwnedFd::from_raw_fd(fd) })
    }

    /// The subfolder `name`, refused if a link (or anything but a folder) stands there.
    pub fn sub(&self, name: impl AsRef<OsStr>) -> io::Result<Dir> {
        let name = name.as_ref();
        let fd = self.openat(name, libc::O_RDONLY | libc::O_DIRECTORY, 0)?;
        Ok(Dir {
            fd,
            path: self.shown(name),
        })
    }

    /// What stands at `name`, if anything; a link is not followed.
    pub fn kind(&self, name: impl AsRef<OsStr>) -> io::Result<Option<Kind>> {
        Ok(self
            .stat(name.as_ref())?
            .map(|st| match st.st_mode & libc::S_IFMT {
                libc::S_IFREG => Kind::File,
                libc::S_IFDIR => Kind::Folder,
                libc::S_IFLNK => Kind::Link,
                _ => Kind::Other,
            }))
    }

    /// The (device, inode) of what stands at `name`, not following a link.
    pub fn identity(&self, name: impl AsRef<OsStr>) -> io::Result<Option<(u64, u64)>> {
        #[allow(clippy::useless_conversion, clippy::unnecessary_cast)]
        Ok(self
            .stat(name.as_ref())?
            .map(|st| (st.st_dev as u64, st.st_ino as u64)))
    }

    fn stat(&self, name: &OsStr) -> io::Result<Option<libc::stat>> {
        let c = c_name(name)?;
        let mut st = std::mem::MaybeUninit::<libc::stat>::uninit();
        // SAFETY: a valid folder handle, a NUL-terminated name, and room for one stat record.
        let r = unsafe {
            libc::fstatat(
                self.fd.as_raw_fd(),
                c.as_ptr(),
                st.as_mut_ptr(),
                libc::AT_SYMLINK_NOFOLLOW,
            )
        };
        match check(r) {
            // SAFETY: fstatat filled the record when it returned 0.
            Ok(_) => Ok(Some(unsafe { st.assume_init() })),
            Err(e) if e.kind() == io::ErrorKind::NotFound => Ok(None),
            Err(e) => Err(e),
        }
    }

    /// Opens the regular file `name` to read. A link there is refused (not followed), and so is
    /// anything but a regular file (a pipe is opened without waiting for a writer, then
    /// refused), each with a message that says what stands there.
    pub fn open_file(&self, name: impl AsRef<OsStr>) -> io::Result<File> {
        let name = name.as_ref();
        let refused = |what: &str| {
            io::Error::other(format!(
                "{} is {what}, not a file benchgrade wrote; move it away",
                self.shown(name).display()
            ))
        };
        let fd = match self.openat(name, libc::O_RDONLY | libc::O_NONBLOCK, 0) {
            Err(e) if e.raw_os_error() == Some(libc::ELOOP) => return Err(refused("a link")),
            other => other?,
        };
        let file = File::from(fd);
        let meta = file.metadata()?;
        if meta.is_dir() {
            return Err(refused("a folder"));
        }
        if !meta.is_file() {
            return Err(refused("a pipe, a device or a socket"));
        }
        Ok(file)
    }

    /// Reads the regular file `name` whole, refusing one larger than `limit` bytes.
    pub fn read(&self, name: impl AsRef<OsStr>, limit: u64) -> io::Result<Vec<u8>> {
        let name = name.as_ref();
        let file = self.open_file(name)?;
        let mut bytes = Vec::new();
        file.take(limit + 1).read_to_end(&mut bytes)?;
        if bytes.len() as u64 > limit {
            return Err(io::Error::other(format!(
                "{} is larger ({} bytes or more) than any file benchgrade writes there; move it away",
                self.shown(name).display(),
                limit + 1
            )));
        }
        Ok(bytes)
    }

    /// Creates `name` as a new file to write: whatever stands there (a leftover, a planted
    /// link) is unlinked first, never followed.
    pub fn create_new(&self, name: impl AsRef<OsStr>) -> io::Result<File> {
        let name = name.as_ref();
        let flags = libc::O_WRONLY | libc::O_CREAT | libc::O_EXCL;
        let fd = match self.openat(name, flags, 0o666) {
            Err(e) if e.kind() == io::ErrorKind::AlreadyExists => {
                self.remove_file(name)?;
                self.openat(name, flags, 0o666)?
            }
            other => other?,
        };
        Ok(File::from(fd))
    }

    /// Renames `from` in this folder to `to` in `dest` (this folder or another handle),
    /// replacing what stands at `to`; a link at either name is moved or replaced, not followed.
    pub fn rename(
        &self,
        from: impl AsRef<OsStr>,
        dest: &Dir,
        to: impl AsRef<OsStr>,
    ) -> io::Result<()> {
        let (f, t) = (c_name(from.as_ref())?, c_name(to.as_ref())?);
        // SAFETY: valid folder handles and NUL-terminated names.
        check(unsafe {
            libc::renameat(
                self.fd.as_raw_fd(),
                f.as_ptr(),
                dest.fd.as_raw_fd(),
                t.as_ptr(),
            )
        })
        .map(drop)
    }

    /// Renames `from` to `to` in this folder unless something stands at `to` (an
    /// `AlreadyExists` error then): a hard link to the new name, then the old name unlinked;
    /// where the file system has no hard links, a check then a rename (under the folder's lock).
    pub fn rename_no_replace(
        &self,
        from: impl AsRef<OsStr>,
        to: impl AsRef<OsStr>,
    ) -> io::Result<()> {
        let (from, to) = (from.as_ref(), to.as_ref());
        let (f, t) = (c_name(from)?, c_name(to)?);
        let fd = self.fd.as_raw_fd();
        // SAFETY: a valid folder handle and NUL-terminated names; flags 0 does not follow links.
        match check(unsafe { libc::linkat(fd, f.as_ptr(), fd, t.as_ptr(), 0) }) {
            Ok(_) => self.remove_file(from),
            Err(e) if e.kind() == io::ErrorKind::AlreadyExists => Err(e),
            Err(_) if self.kind(to)?.is_some() => Err(io::ErrorKind::AlreadyExists.into()),
            Err(_) => self.rename(from, self, to),
        }
    }

    /// Unlinks `name` (a link itself, never what it points to); not a folder.
    pub fn remove_file(&self, name: impl AsRef<OsStr>) -> io::Result<()> {
        self.unlinkat(name.as_ref(), 0)
    }

    /// Removes the subfolder `name` if it is empty.
    pub fn remove_dir(&self, name: impl AsRef<OsStr>) -> io::Result<()> {
        self.unlinkat(name.as_ref(), libc::AT_REMOVEDIR)
    }

    fn unlinkat(&self, name: &OsStr, flags: libc::c_int) -> io::Result<()> {
        let c = c_name(name)?;
        // SAFETY: a valid folder handle and a NUL-terminated name.
        check(unsafe { libc::unlinkat(self.fd.as_raw_fd(), c.as_ptr(), flags) }).map(drop)
    }

    /// Makes the subfolder `name`.
    pub fn mkdir(&self, name: impl AsRef<OsStr>) -> io::Result<()> {
        let c = c_name(name.as_ref())?;
        // SAFETY: a valid folder handle and a NUL-terminated name.
        check(unsafe { libc::mkdirat(self.fd.as_raw_fd(), c.as_ptr(), 0o777) }).map(drop)
    }

    /// The names in the folder (not `.` and `..`), as the handle sees it.
    pub fn names(&self) -> io::Result<Vec<OsString>> {
        // fdopendir takes the handle it is given: give it a duplicate of ours
        let dup = self.fd.try_clone()?;
        let raw = std::os::fd::IntoRawFd::into_raw_fd(dup);
        // SAFETY: `raw` is an open folder handle we own; on success the stream owns it.
        let stream = unsafe { libc::fdopendir(raw) };
        if stream.is_null() {
            let e = io::Error::last_os_error();
            // SAFETY: fdopendir failed, so `raw` is still ours to close.
            drop(unsafe { OwnedFd::from_raw_fd(raw) });
            return Err(e);
        }
        // SAFETY: `stream` is a valid stream over a fresh handle, rewound to the start.
        unsafe { libc::rewinddir(stream) };
        let mut out = Vec::new();
        loop {
            // SAFETY: a valid stream; the entry it returns is read before the next call.
            let entry = unsafe { libc::readdir(stream) };
            if entry.is_null() {
                break;
            }
            // SAFETY: d_name of a valid entry is a NUL-terminated name.
            let name = unsafe { CStr::from_ptr((*entry).d_name.as_ptr()) };
            let bytes = name.to_bytes();
            if bytes != b"." && bytes != b".." {
                out.push(OsStr::from_bytes(bytes).to_os_string());
            }
        }
        // SAFETY: a valid stream, closed once (closing its handle with it).
        unsafe { libc::closedir(stream) };
        Ok(out)
    }

    /// Flushes the folder's entries (renames, removals) to disk; a failure is not an error
    /// (some file systems cannot).
    pub fn sync(&self) {
        if let Ok(fd) = self.fd.try_clone() {
            let _ = File::from(fd).sync_all();
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use std::io::Write;

    #[test]
    fn nothing_reaches_through_a_link() {
        let root = tempfile::tempdir().unwrap();
        let (inside, outside) = (root.path().join("in"), root.path().join("out"));
        std::fs::create_dir_all(inside.join("real")).unwrap();
        std::fs::create_dir(&outside).unwrap();
        std::fs::write(outside.join("keep.txt"), b"keep").unwrap();
        std::os::unix::fs::symlink(&outside, inside.join("linked")).unwrap();
        std::os::unix::fs::symlink(outside.join("keep.txt"), inside.join("keep.txt")).unwrap();
        let d = Dir::open(&inside).unwrap();
        assert!(d.sub("linked").is_err(), "a linked folder is not opened");
        assert!(d.sub("real").is_ok());
        assert!(d
            .open_file("keep.txt")
            .unwrap_err()
            .to_string()
            .contains("a link"));
        assert_eq!(d.kind("keep.txt").unwrap(), Some(Kind::Link));
        assert!(d.remove_file("../out/keep.txt").is_err(), "one name only");
        d.remove_file("keep.txt").unwrap();
        d.create_new("new.txt").unwrap().write_all(b"x").unwrap();
        d.rename_no_replace("new.txt", "real").unwrap_err();
        d.rename("new.txt", &d.sub("real").unwrap(), "moved.txt")
            .unwrap();
        assert_eq!(std::fs::read(inside.join("real/moved.txt")).unwrap(), b"x");
        assert_eq!(std::fs::read(outside.join("keep.txt")).unwrap(), b"keep");
        let mut names = d.names().unwrap();
        names.sort();
        assert_eq!(names, ["linked", "real"]);
    }

    #[test]
    fn a_pipe_or_a_big_file_is_refused_without_waiting() {
        let root = tempfile::tempdir().unwrap();
        let fifo = CString::new(root.path().join("p").as_os_str().as_bytes()).unwrap();
        // SAFETY: a NUL-terminated path.
        assert_eq!(unsafe { libc::mkfifo(fifo.as_ptr(), 0o600) }, 0);
        std::fs::write(root.path().join("big"), vec![b'x'; 100]).unwrap();
        std::fs::create_dir(root.path().join("folder")).unwrap();
        let d = Dir::open(root.path()).unwrap();
        assert!(d.read("p", 10).unwrap_err().to_string().contains("a pipe"));
        assert!(d
            .read("big", 99)
            .unwrap_err()
            .to_string()
            .contains("larger"));
        assert_eq!(d.read("big", 100).unwrap().len(), 100);
        assert!(d
            .read("folder", 10)
            .unwrap_err()
            .to_string()
            .contains("a folder"));
    }
}
