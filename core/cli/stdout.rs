//! The command's standard output: every line printed goes through [`write`],
//! so that a closed reader (`yawdyn vehicle car.toml --json | head -c 600`)
//! ends the output quietly instead of a panic.
//!
//! When standard output is a closed pipe, the rest of the output is dropped,
//! the command finishes its work (output files are still written) and exits
//! with its usual status. Any other write error (a full disk behind `>`)
//! drops the output likewise, and `main` reports it and exits 1 (the
//! machine got in the way).

use std::io::Write;
use std::sync::Mutex;
use std::sync::atomic::{AtomicBool, Ordering};

/// Set once standard output cannot be written any more.
static CLOSED: AtomicBool = AtomicBool::new(false);

/// The write error other than a closed pipe, if one happened.
static ERROR: Mutex<Option<String>> = Mutex::new(None);

/// The write error other than a closed pipe that ended the output, if any.
pub fn write_error() -> Option<String> {
    ERROR.lock().unwrap_or_else(|e| e.into_inner()).clone()
}

/// Writes formatted text to standard output, unless it is closed.
pub fn write(args: std::fmt::Arguments<'_>) {
    if CLOSED.load(Ordering::Relaxed) {
        return;
    }
    let mut out = std::io::stdout().lock();
    if let Err(e) = out.write_fmt(args) {
        close(&e);
    }
}

/// Writes bytes to standard output and flushes, unless it is closed.
pub fn write_bytes(bytes: &[u8]) {
    if CLOSED.load(Ordering::Relaxed) {
        return;
    }
    let mut out = std::io::stdout().lock();
    if let Err(e) = out.write_all(bytes).and_then(|()| out.flush()) {
        close(&e);
    }
}

/// Flushes standard output at the end of the command (a closed pipe is
/// not an error).
pub fn flush() {
    if CLOSED.load(Ordering::Relaxed) {
        return;
    }
    if let Err(e) = std::io::stdout().lock().flush() {
        close(&e);
    }
}

/// Marks standard output closed; keeps the error unless the reader went away.
fn close(error: &std::io::Error) {
    if !CLOSED.swap(true, Ordering::Relaxed) && error.kind() != std::io::ErrorKind::BrokenPipe {
        *ERROR.lock().unwrap_or_else(|e| e.into_inner()) =
            Some(format!("cannot write to standard output: {error}"));
    }
}
