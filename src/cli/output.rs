//! Output files that never clobber and never leave a partial file behind.
//!
//! This is the one library module that touches the file system. An
//! [`AtomicFile`] writes into a temporary file beside the target (same
//! directory, so the final rename stays on one file system) and renames it
//! into place on [`AtomicFile::commit`] (or, for several files that belong
//! together, [`commit_all`]). Dropped without a commit (an error part-way, a
//! panic), it deletes the temporary file. Every temporary file is listed in a
//! process-wide register so that a signal handler can delete it
//! ([`cleanup_then`]); only a kill that cannot be caught (SIGKILL, a power
//! cut) can leave a hidden `.NAME.*.tmp` beside the target, never a partial
//! file under the final name.
//!
//! Destinations (the rules, also in the README):
//! - the destination is identified by its resolved path: symbolic links
//!   followed, `..` and links in the directory part resolved, so two flags
//!   naming one file through different spellings are caught by comparing
//!   [`AtomicFile::path`];
//! - a symbolic link is followed only when it belongs to the user running
//!   the tool; a link owned by anyone else is refused (a link planted in a
//!   shared directory cannot redirect a privileged run);
//! - a dangling link is never followed: nothing is created through it;
//! - with `--force` an existing file is replaced by a new file that keeps
//!   the old one's permission bits (and its owner and group where the run
//!   may set them);
//! - an existing device or pipe (e.g. `/dev/null`) is written directly.

use burnout::Error;
use std::fs::File;
use std::io::Write;
use std::path::{Path, PathBuf};
use std::sync::{Mutex, MutexGuard};

/// Temporary files that exist now (created, not yet renamed or removed).
static PENDING: Mutex<Vec<PathBuf>> = Mutex::new(Vec::new());

fn pending() -> MutexGuard<'static, Vec<PathBuf>> {
    PENDING.lock().unwrap_or_else(|e| e.into_inner())
}

fn forget(list: &mut Vec<PathBuf>, path: &Path) {
    if let Some(i) = list.iter().position(|p| p == path) {
        list.swap_remove(i);
    }
}

/// Removes every temporary file this process has not yet renamed or
/// removed, then runs `then` while still holding the register, so no new
/// temporary file can appear and no rename can happen before `then` ends
/// (a signal handler passes a function that ends the process).
pub fn cleanup_then<F: FnOnce()>(then: F) {
    let mut list = pending();
    for p in list.drain(..) {
        let _ = std::fs::remove_file(&p);
    }
    then();
}

/// Longest file-name component most file systems accept, bytes.
const NAME_MAX: usize = 255;
/// Bytes a temporary name adds around the target's name: `.` before it,
/// and `.` + 6 random characters + `.tmp` after it.
const TEMP_EXTRA: usize = 1 + 1 + 6 + 4;
/// Bytes a backup name adds: `.`, `.`, up to 6 digits, `-N.bak.tmp`.
const BACKUP_EXTRA: usize = 1 + 1 + 6 + 11;
/// Most symbolic links followed before a destination counts as a loop.
const MAX_LINKS: usize = 40;

/// Where the bytes go: a temporary file renamed into place, or, for an
/// existing device or pipe (e.g. `/dev/null`, a FIFO), the target itself:
/// those hold no data that could be clobbered or left partial.
#[derive(Debug)]
enum Sink {
    Temp(Option<tempfile::NamedTempFile>),
    Direct(File),
}

/// A file being written under a temporary name.
#[derive(Debug)]
pub struct AtomicFile {
    sink: Sink,
    /// The resolved destination.
    path: PathBuf,
    /// The destination as the user wrote it (for messages).
    shown: String,
    force: bool,
    flag: &'static str,
}

#[cfg(unix)]
fn effective_uid() -> u32 {
    // SAFETY: geteuid has no preconditions and cannot fail.
    unsafe { libc::geteuid() }
}

/// The destination a write to `path` should replace: links followed (only
/// links of the running user, never a dangling one), the directory part
/// resolved. Returns the resolved path and whether the user's path was a
/// link.
fn resolve(path: &Path, flag: &str) -> Result<PathBuf, Error> {
    let shown = path.display();
    let mut p = path.to_path_buf();
    let mut hops = 0;
    loop {
        let meta = match std::fs::symlink_metadata(&p) {
            Ok(m) => m,
            Err(e) if e.kind() == std::io::ErrorKind::NotFound => {
                if hops > 0 {
                    return Err(Error::Usage(format!(
                        "{flag} '{shown}' is a symbolic link to '{}', which does not exist: \
                         refusing to create a file through a dangling link (remove the link or name the file itself)",
                        p.display()
                    )));
                }
                break;
            }
            Err(e) => {
                return Err(Error::Io(format!("cannot write {flag} '{shown}': {e}")));
            }
        };
        if !meta.file_type().is_symlink() {
            break;
        }
        hops += 1;
        if hops > MAX_LINKS {
            return Err(Error::Usage(format!(
                "{flag} '{shown}' is a loop of symbolic links: expected a file name"
            )));
        }
        #[cfg(unix)]
        {
            use std::os::unix::fs::MetadataExt;
            let me = effective_uid();
            if meta.uid() != me {
                return Err(Error::Usage(format!(
                    "{flag} '{shown}' is (or goes through) a symbolic link '{}' owned by another user (uid {}): \
                     refusing to follow it (name the file itself)",
                    p.display(),
                    meta.uid()
                )));
            }
        }
        let target = std::fs::read_link(&p)
            .map_err(|e| Error::Io(format!("cannot write {flag} '{shown}': {e}")))?;
        p = if target.is_absolute() {
            target
        } else {
            p.parent().unwrap_or(Path::new(".")).join(target)
        };
    }
    // The directory part, resolved (`..`, links), and the last name as is.
    let name = match p.file_name() {
        Some(n) if !p.as_os_str().to_string_lossy().ends_with('/') => n.to_os_string(),
        _ => {
            return Err(Error::Usage(format!(
                "{flag} '{shown}' is a directory: expected a file name"
            )))
        }
    };
    let dir = match p.parent() {
        Some(d) if !d.as_os_str().is_empty() => d.to_path_buf(),
        _ => PathBuf::from("."),
    };
    let dir = std::fs::canonicalize(&dir).map_err(|e| {
        Error::Io(format!(
            "cannot write {flag} '{shown}': directory '{}': {e}",
            dir.display()
        ))
    })?;
    Ok(dir.join(name))
}

/// The resolved path of an existing input file (for comparing it with an
/// output's [`AtomicFile::path`]); `None` if it cannot be resolved.
pub fn resolved_input(path: &Path) -> Option<PathBuf> {
    std::fs::canonicalize(path).ok()
}

/// A temporary-file prefix for `name` that keeps the whole temporary name
/// within [`NAME_MAX`] bytes: a long name is cut (at a character boundary).
fn temp_prefix(name: &str, extra: usize) -> String {
    let room = NAME_MAX - extra;
    let mut end = name.len().min(room);
    while !name.is_char_boundary(end) {
        end -= 1;
    }
    format!(".{}.", &name[..end])
}

impl AtomicFile {
    /// Starts writing `path` (given for `flag`, e.g. `--out`). Without
    /// `force`, an existing file is an error before anything is written.
    ///
    /// # Errors
    /// [`Error::Usage`] naming the flag and the path when the file exists
    /// (without `force`), is a directory, is a dangling symbolic link, a
    /// link of another user or a loop of links, or its directory cannot
    /// take a temporary file.
    pub fn create(path: &Path, force: bool, flag: &'static str) -> Result<AtomicFile, Error> {
        let shown = path.display().to_string();
        let target = resolve(path, flag)?;
        let existing = std::fs::metadata(&target).ok();
        if let Some(meta) = &existing {
            if meta.is_dir() {
                return Err(Error::Usage(format!(
                    "{flag} '{shown}' is a directory: expected a file name"
                )));
            }
            if !meta.is_file() {
                // A device or pipe: write straight into it.
                let file = std::fs::OpenOptions::new()
                    .write(true)
                    .open(&target)
                    .map_err(|e| Error::Io(format!("cannot write {flag} '{shown}': {e}")))?;
                return Ok(AtomicFile {
                    sink: Sink::Direct(file),
                    path: target,
                    shown,
                    force,
                    flag,
                });
            }
            if !force {
                return Err(Error::Usage(format!(
                    "{flag} '{shown}' already exists: give --force to replace it"
                )));
            }
        }
        let dir = target.parent().unwrap_or(Path::new(".")).to_path_buf();
        let name = target
            .file_name()
            .map(|n| n.to_string_lossy().into_owned())
            .unwrap_or_else(|| "output".into());
        let prefix = temp_prefix(&name, TEMP_EXTRA);
        let mut builder = tempfile::Builder::new();
        builder.prefix(&prefix).suffix(".tmp");
        // Temporary files are private (0600) by default; a new result is an
        // ordinary file, so ask for 0666 and let the umask decide, as for
        // any file the user creates. A replaced file's bits are kept below.
        #[cfg(unix)]
        {
            use std::os::unix::fs::PermissionsExt;
            builder.permissions(std::fs::Permissions::from_mode(0o666));
        }
        let mut list = pending();
        let temp = builder.tempfile_in(&dir).map_err(|e| {
            Error::Io(format!(
                "cannot write {flag} '{shown}': cannot create a file in '{}': {e}",
                dir.display()
            ))
        })?;
        list.push(temp.path().to_path_buf());
        drop(list);
        #[cfg(unix)]
        if let Some(meta) = &existing {
            use std::os::unix::fs::{MetadataExt, PermissionsExt};
            // Owner and group first (changing them may clear set-id bits),
            // then the mode. Only a privileged run may give a file away, so
            // a failed chown is not an error: the file is the user's own.
            let _ = std::os::unix::fs::fchown(temp.as_file(), Some(meta.uid()), Some(meta.gid()));
            let _ = temp
                .as_file()
                .set_permissions(std::fs::Permissions::from_mode(meta.mode() & 0o7777));
        }
        Ok(AtomicFile {
            sink: Sink::Temp(Some(temp)),
            path: target,
            shown,
            force,
            flag,
        })
    }

    /// The final path, resolved (links followed, `..` resolved): two files
    /// with equal paths are one file.
    pub fn path(&self) -> &Path {
        &self.path
    }

    /// The file to write into.
    pub fn file(&mut self) -> &mut File {
        match &mut self.sink {
            Sink::Temp(Some(t)) => t.as_file_mut(),
            Sink::Temp(None) => unreachable!("temporary file used after commit"),
            Sink::Direct(f) => f,
        }
    }

    fn write_error(&self, e: impl std::fmt::Display) -> Error {
        Error::Io(format!("cannot write {} '{}': {e}", self.flag, self.shown))
    }

    fn flush(&mut self) -> Result<(), Error> {
        let r = self.file().flush();
        r.map_err(|e| self.write_error(e))
    }

    /// Renames the temporary file into place (already flushed).
    fn rename(&mut self) -> Result<(), Error> {
        let mut list = pending();
        let Sink::Temp(slot) = &mut self.sink else {
            return Ok(());
        };
        let Some(temp) = slot.take() else {
            return Ok(());
        };
        let temp_path = temp.path().to_path_buf();
        let result = if self.force {
            temp.persist(&self.path).map(|_| ())
        } else {
            temp.persist_noclobber(&self.path).map(|_| ())
        };
        // On failure the error owns the temporary file and removes it.
        forget(&mut list, &temp_path);
        drop(list);
        result.map_err(|e| {
            if e.error.kind() == std::io::ErrorKind::AlreadyExists {
                Error::Usage(format!(
                    "{} '{}' already exists: give --force to replace it",
                    self.flag, self.shown
                ))
            } else {
                self.write_error(&e.error)
            }
        })
    }

    /// Flushes and renames the temporary file to the final name. Without
    /// `force` the rename refuses to replace a file that appeared meanwhile.
    ///
    /// # Errors
    /// [`Error::Usage`] naming the flag and path when flushing or renaming fails.
    pub fn commit(mut self) -> Result<(), Error> {
        self.flush()?;
        self.rename()
    }
}

impl Drop for AtomicFile {
    fn drop(&mut self) {
        if let Sink::Temp(slot) = &mut self.sink {
            if let Some(temp) = slot.take() {
                let mut list = pending();
                let path = temp.path().to_path_buf();
                drop(temp); // removes the file
                forget(&mut list, &path);
            }
        }
    }
}

/// Commits several files that belong together: all of them, or (when one
/// fails) none. Every file is flushed before any is renamed; if a rename
/// fails, the files already renamed are undone (a new file removed, a
/// replaced file restored from a hard-linked copy taken just before).
///
/// # Errors
/// The first file's error, as [`AtomicFile::commit`].
pub fn commit_all(mut files: Vec<AtomicFile>) -> Result<(), Error> {
    for f in files.iter_mut() {
        f.flush()?;
    }
    // (destination, copy of what it replaced)
    let mut done: Vec<(PathBuf, Option<PathBuf>)> = Vec::new();
    let mut failure = None;
    for f in files.iter_mut() {
        let backup = if matches!(f.sink, Sink::Temp(_)) && f.path.is_file() {
            backup_of(&f.path)
        } else {
            None
        };
        let direct = matches!(f.sink, Sink::Direct(_));
        match f.rename() {
            Ok(()) if direct => {}
            Ok(()) => done.push((f.path.clone(), backup)),
            Err(e) => {
                if let Some(b) = backup {
                    remove_registered(&b);
                }
                failure = Some(e);
                break;
            }
        }
    }
    let Some(e) = failure else {
        for (_, b) in done {
            if let Some(b) = b {
                remove_registered(&b);
            }
        }
        return Ok(());
    };
    for (path, backup) in done.into_iter().rev() {
        let mut list = pending();
        match backup {
            Some(b) => {
                let _ = std::fs::rename(&b, &path);
                forget(&mut list, &b);
            }
            None => {
                let _ = std::fs::remove_file(&path);
            }
        }
    }
    Err(e)
}

/// A hard link to `path` under a hidden name beside it (registered for
/// signal cleanup); `None` where hard links are not possible.
fn backup_of(path: &Path) -> Option<PathBuf> {
    let dir = path.parent()?;
    let name = path.file_name()?.to_string_lossy().into_owned();
    let mut list = pending();
    for i in 0..16u32 {
        let candidate = dir.join(format!(
            "{}{}-{i}.bak.tmp",
            temp_prefix(&name, BACKUP_EXTRA),
            std::process::id() % 1_000_000
        ));
        match std::fs::hard_link(path, &candidate) {
            Ok(()) => {
                list.push(candidate.clone());
                return Some(candidate);
            }
            Err(e) if e.kind() == std::io::ErrorKind::AlreadyExists => continue,
            Err(_) => return None,
        }
    }
    None
}

fn remove_registered(path: &Path) {
    let mut list = pending();
    let _ = std::fs::remove_file(path);
    forget(&mut list, path);
}

#[cfg(test)]
mod tests {
    use super::*;
    use std::io::BufWriter;

    /// A writer that accepts `left` bytes and then fails, like a full disk.
    struct FailAfter<W> {
        inner: W,
        left: usize,
    }

    impl<W: Write> Write for FailAfter<W> {
        fn write(&mut self, buf: &[u8]) -> std::io::Result<usize> {
            if self.left == 0 {
                return Err(std::io::Error::other("device full (test)"));
            }
            let n = buf.len().min(self.left);
            self.left -= n;
            self.inner.write(&buf[..n])
        }
        fn flush(&mut self) -> std::io::Result<()> {
            self.inner.flush()
        }
    }

    fn write_then_maybe_commit(path: &Path, fail_after: usize, force: bool) -> Result<(), String> {
        let mut f = AtomicFile::create(path, force, "--out").map_err(|e| e.to_string())?;
        let result = {
            let mut w = BufWriter::new(FailAfter {
                inner: f.file(),
                left: fail_after,
            });
            (0..10_000)
                .try_for_each(|i| writeln!(w, "row {i}"))
                .and_then(|_| w.flush())
        };
        match result {
            Ok(()) => f.commit().map_err(|e| e.to_string()),
            Err(e) => Err(e.to_string()), // dropped: the temporary file goes
        }
    }

    fn names_in(dir: &Path) -> Vec<String> {
        let mut v: Vec<String> = std::fs::read_dir(dir)
            .unwrap()
            .map(|e| e.unwrap().file_name().to_string_lossy().into_owned())
            .collect();
        v.sort();
        v
    }

    #[test]
    fn failed_write_leaves_no_file_under_the_final_name_nor_a_temporary() {
        let dir = tempfile::tempdir().unwrap();
        let path = dir.path().join("table.csv");
        let e = write_then_maybe_commit(&path, 5_000, false).unwrap_err();
        assert!(e.contains("device full"), "{e}");
        assert!(!path.exists());
        assert!(
            names_in(dir.path()).is_empty(),
            "{:?}",
            names_in(dir.path())
        );
    }

    #[test]
    fn successful_write_appears_whole_under_the_final_name() {
        let dir = tempfile::tempdir().unwrap();
        let path = dir.path().join("table.csv");
        write_then_maybe_commit(&path, usize::MAX, false).unwrap();
        let text = std::fs::read_to_string(&path).unwrap();
        assert_eq!(text.lines().count(), 10_000);
        assert_eq!(names_in(dir.path()), vec!["table.csv".to_string()]);
    }

    #[test]
    fn existing_file_is_kept_without_force_and_replaced_with_it() {
        let dir = tempfile::tempdir().unwrap();
        let path = dir.path().join("table.csv");
        std::fs::write(&path, "precious\n").unwrap();
        let e = AtomicFile::create(&path, false, "--out")
            .unwrap_err()
            .to_string();
        assert_eq!(
            e,
            format!(
                "--out '{}' already exists: give --force to replace it",
                path.display()
            )
        );
        assert_eq!(std::fs::read_to_string(&path).unwrap(), "precious\n");
        write_then_maybe_commit(&path, usize::MAX, true).unwrap();
        assert!(std::fs::read_to_string(&path)
            .unwrap()
            .starts_with("row 0\n"));
    }

    #[test]
    fn file_appearing_during_the_run_is_not_clobbered() {
        let dir = tempfile::tempdir().unwrap();
        let path = dir.path().join("late.csv");
        let mut f = AtomicFile::create(&path, false, "--out").unwrap();
        writeln!(f.file(), "new").unwrap();
        std::fs::write(&path, "someone else's\n").unwrap();
        let e = f.commit().unwrap_err().to_string();
        assert!(e.contains("already exists"), "{e}");
        assert_eq!(std::fs::read_to_string(&path).unwrap(), "someone else's\n");
    }

    #[test]
    fn directory_as_output_is_rejected() {
        let dir = tempfile::tempdir().unwrap();
        let e = AtomicFile::create(dir.path(), true, "--plot")
            .unwrap_err()
            .to_string();
        assert!(
            e.starts_with("--plot '") && e.contains("is a directory"),
            "{e}"
        );
    }

    #[cfg(unix)]
    #[test]
    fn forced_write_through_a_symlink_keeps_the_link_and_replaces_its_target() {
        let dir = tempfile::tempdir().unwrap();
        let real = dir.path().join("real.csv");
        let link = dir.path().join("link.csv");
        std::fs::write(&real, b"old").unwrap();
        std::os::unix::fs::symlink(&real, &link).unwrap();
        let mut f = AtomicFile::create(&link, true, "--out").unwrap();
        f.file().write_all(b"new").unwrap();
        f.commit().unwrap();
        assert!(std::fs::symlink_metadata(&link)
            .unwrap()
            .file_type()
            .is_symlink());
        assert_eq!(std::fs::read(&real).unwrap(), b"new");
    }

    #[cfg(unix)]
    #[test]
    fn device_is_written_directly_without_force() {
        let mut f = AtomicFile::create(Path::new("/dev/null"), false, "--out").unwrap();
        f.file().write_all(b"discarded").unwrap();
        f.commit().unwrap();
        use std::os::unix::fs::FileTypeExt;
        assert!(std::fs::metadata("/dev/null")
            .unwrap()
            .file_type()
            .is_char_device());
    }
}
