//! Output files that never clobber and never leave a partial file behind.
//!
//! This is the one library module that touches the file system. An
//! [`AtomicFile`] writes into a temporary file beside the target (same
//! directory, so the final rename stays on one file system) and renames it
//! into place on [`AtomicFile::commit`]. Dropped without a commit (an error
//! part-way, a panic), it deletes the temporary file. A process killed
//! outright leaves at most a hidden `.NAME.*.tmp` beside the target, never a
//! partial file under the final name.

use crate::error::Error;
use std::fs::File;
use std::io::Write;
use std::path::{Path, PathBuf};

/// Where the bytes go: a temporary file renamed into place, or, for an
/// existing device or pipe (e.g. `/dev/null`, a FIFO), the target itself:
/// those hold no data that could be clobbered or left partial.
#[derive(Debug)]
enum Sink {
    Temp(tempfile::NamedTempFile),
    Direct(File),
}

/// A file being written under a temporary name.
#[derive(Debug)]
pub struct AtomicFile {
    sink: Sink,
    path: PathBuf,
    force: bool,
    flag: &'static str,
}

/// The path a write to `path` should replace: a symbolic link is followed
/// (to its target, even a dangling one) so that the link itself survives.
fn resolve_links(path: &Path) -> PathBuf {
    let mut p = path.to_path_buf();
    for _ in 0..40 {
        match std::fs::symlink_metadata(&p) {
            Ok(m) if m.file_type().is_symlink() => match std::fs::read_link(&p) {
                Ok(target) => {
                    p = if target.is_absolute() {
                        target
                    } else {
                        p.parent().unwrap_or(Path::new(".")).join(target)
                    };
                }
                Err(_) => break,
            },
            _ => break,
        }
    }
    p
}

impl AtomicFile {
    /// Starts writing `path` (given for `flag`, e.g. `--out`). Without
    /// `force`, an existing file is an error before anything is written.
    ///
    /// # Errors
    /// [`Error::Usage`] naming the flag and the path when the file exists
    /// (without `force`), is a directory, or its directory cannot take a
    /// temporary file.
    pub fn create(path: &Path, force: bool, flag: &'static str) -> Result<AtomicFile, Error> {
        let shown = path.display();
        let target = resolve_links(path);
        if let Ok(meta) = std::fs::metadata(&target) {
            if !meta.is_file() && !meta.is_dir() {
                // A device or pipe: write straight into it.
                let file = std::fs::OpenOptions::new()
                    .write(true)
                    .open(&target)
                    .map_err(|e| Error::Usage(format!("cannot write {flag} '{shown}': {e}")))?;
                return Ok(AtomicFile {
                    sink: Sink::Direct(file),
                    path: path.to_path_buf(),
                    force,
                    flag,
                });
            }
        }
        let path = target.as_path();
        if path.is_dir() {
            return Err(Error::Usage(format!(
                "{flag} '{shown}' is a directory: expected a file name"
            )));
        }
        if !force && path.exists() {
            return Err(Error::Usage(format!(
                "{flag} '{shown}' already exists: give --force to replace it"
            )));
        }
        let dir = match path.parent() {
            Some(d) if !d.as_os_str().is_empty() => d.to_path_buf(),
            _ => PathBuf::from("."),
        };
        let name = path
            .file_name()
            .map(|n| n.to_string_lossy().into_owned())
            .unwrap_or_else(|| "output".into());
        let prefix = format!(".{name}.");
        let mut builder = tempfile::Builder::new();
        builder.prefix(&prefix).suffix(".tmp");
        // Temporary files are private (0600) by default; the result is an
        // ordinary file, so ask for 0666 and let the umask decide, as for
        // any file the user creates.
        #[cfg(unix)]
        {
            use std::os::unix::fs::PermissionsExt;
            builder.permissions(std::fs::Permissions::from_mode(0o666));
        }
        let temp = builder.tempfile_in(&dir).map_err(|e| {
            Error::Usage(format!(
                "cannot write {flag} '{shown}': cannot create a file in '{}': {e}",
                dir.display()
            ))
        })?;
        Ok(AtomicFile {
            sink: Sink::Temp(temp),
            path: path.to_path_buf(),
            force,
            flag,
        })
    }

    /// The final path.
    pub fn path(&self) -> &Path {
        &self.path
    }

    /// The temporary file's path (for tests and messages); the target itself
    /// for a device or pipe.
    pub fn temp_path(&self) -> &Path {
        match &self.sink {
            Sink::Temp(t) => t.path(),
            Sink::Direct(_) => &self.path,
        }
    }

    /// The file to write into.
    pub fn file(&mut self) -> &mut File {
        match &mut self.sink {
            Sink::Temp(t) => t.as_file_mut(),
            Sink::Direct(f) => f,
        }
    }

    /// Flushes and renames the temporary file to the final name. Without
    /// `force` the rename refuses to replace a file that appeared meanwhile.
    ///
    /// # Errors
    /// [`Error::Usage`] naming the flag and path when flushing or renaming fails.
    pub fn commit(mut self) -> Result<(), Error> {
        let shown = self.path.display().to_string();
        let flag = self.flag;
        self.file()
            .flush()
            .map_err(|e| Error::Usage(format!("cannot write {flag} '{shown}': {e}")))?;
        let temp = match self.sink {
            Sink::Direct(_) => return Ok(()),
            Sink::Temp(t) => t,
        };
        let result = if self.force {
            temp.persist(&self.path).map(|_| ())
        } else {
            temp.persist_noclobber(&self.path).map(|_| ())
        };
        result.map_err(|e| {
            if e.error.kind() == std::io::ErrorKind::AlreadyExists {
                Error::Usage(format!(
                    "{flag} '{shown}' already exists: give --force to replace it"
                ))
            } else {
                Error::Usage(format!("cannot write {flag} '{shown}': {}", e.error))
            }
        })
    }
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
