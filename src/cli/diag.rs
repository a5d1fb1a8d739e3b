//! Diagnostics on standard error that can never take the run down, and the
//! state of the standard streams at start-up.
//!
//! `eprintln!` panics when standard error cannot be written (`2>/dev/full`,
//! a closed pipe); a diagnostic that fails here is dropped instead, so it
//! changes nothing about the results or the exit status. Text from the
//! user (file names, cells) is echoed with control characters escaped, so
//! an input cannot move the cursor, rewrite a line or ring the terminal.

use std::io::Write;
use std::sync::atomic::{AtomicBool, Ordering};

static STDOUT_CLOSED: AtomicBool = AtomicBool::new(false);

/// Writes `text` and a newline to standard error, escaping control
/// characters; a failed write is ignored.
pub fn line(text: &str) {
    let mut err = std::io::stderr().lock();
    let mut bytes = escape(text).into_bytes();
    bytes.push(b'\n');
    let _ = err.write_all(&bytes).and_then(|_| err.flush());
}

/// `text` with every control character (ESC, CR, NUL, newline, ...) written
/// as an escape (`\x1b`, `\r`, `\0`, `\n`) so that it stays on one line and
/// inert on a terminal.
pub fn escape(text: &str) -> String {
    if !text.chars().any(char::is_control) {
        return text.to_string();
    }
    let mut out = String::with_capacity(text.len() + 8);
    for c in text.chars() {
        match c {
            '\n' => out.push_str("\\n"),
            '\r' => out.push_str("\\r"),
            '\t' => out.push_str("\\t"),
            '\0' => out.push_str("\\0"),
            c if (c as u32) < 0x100 && c.is_control() => {
                out.push_str(&format!("\\x{:02x}", c as u32))
            }
            c if c.is_control() => out.push_str(&format!("\\u{{{:x}}}", c as u32)),
            c => out.push(c),
        }
    }
    out
}

/// Checks at start-up whether standard output was closed when the
/// process started (`>&-`). Rust's runtime re-opens a closed standard
/// descriptor on `/dev/null` before `main` (so no file opened later takes
/// its number), which would make every write to it succeed and the output
/// vanish; that re-opened descriptor is told apart from a user's
/// `>/dev/null` by its access mode: the runtime opens it read-write, a
/// shell redirection opens it write-only. (So `1<>/dev/null` counts as
/// closed.) [`stdout_closed`] then makes writing to it an error.
pub fn check_standard_streams() {
    #[cfg(unix)]
    {
        use std::os::unix::fs::{FileTypeExt, MetadataExt};
        // SAFETY: fcntl(F_GETFL) only queries the descriptor's flags.
        let flags = unsafe { libc::fcntl(1, libc::F_GETFL) };
        let closed = if flags == -1 {
            true
        } else if flags & libc::O_ACCMODE == libc::O_RDWR {
            let null = std::fs::metadata("/dev/null").ok();
            let out = std::fs::metadata("/proc/self/fd/1").ok();
            match (null, out) {
                (Some(n), Some(o)) => o.file_type().is_char_device() && o.rdev() == n.rdev(),
                _ => false,
            }
        } else {
            false
        };
        STDOUT_CLOSED.store(closed, Ordering::Relaxed);
    }
}

/// Whether standard output was closed when the process started.
pub fn stdout_closed() -> bool {
    STDOUT_CLOSED.load(Ordering::Relaxed)
}
