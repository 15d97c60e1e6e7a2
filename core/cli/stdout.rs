//! The command's standard output: every line printed goes through [`write`],
//! so that a closed reader (`yawdyn vehicle car.toml --json | head -c 600`)
//! ends the output quietly instead of a panic.
//!
//! When standard output is a closed pipe, the rest of the output is dropped,
//! the command finishes its work (output files are still written) and exits
//! with its usual status. Any other write error (a full disk behind `>`) is
//! reported once on standard error and the output dropped likewise.

use std::io::Write;
use std::sync::atomic::{AtomicBool, Ordering};

/// Set once standard output cannot be written any more.
static CLOSED: AtomicBool = AtomicBool::new(false);

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

/// Marks standard output closed; says why unless the reader went away.
fn close(error: &std::io::Error) {
    if !CLOSED.swap(true, Ordering::Relaxed) && error.kind() != std::io::ErrorKind::BrokenPipe {
        eprintln!(
            "warning: cannot write to standard output ({error}); the rest of the output is dropped"
        );
    }
}
