//! Removing temporary output files when the command is interrupted.
//!
//! SIGINT, SIGTERM and SIGHUP are blocked in every thread and taken by one
//! thread with `sigwait` (POSIX.1-2017, `sigwait`), which removes the
//! registered temporary files (or keeps those marked with
//! [`TempFile::keep_on_signal`](super::TempFile::keep_on_signal), saying so
//! on standard error) and ends the process with 128 + the signal
//! number (the status a shell reports for a command ended by that signal).
//! No code runs inside an asynchronous signal handler.

use std::io::Write;
use std::thread;

use super::temp::remove_registered;

/// The signals after which temporary files are removed.
const SIGNALS: [libc::c_int; 3] = [libc::SIGINT, libc::SIGTERM, libc::SIGHUP];

/// Takes SIGINT, SIGTERM and SIGHUP for the whole process: on any of them,
/// the temporary files of unfinished outputs are removed and the process
/// exits with status 128 + signal (130, 143, 129). Call it at the start of
/// `main`, before any other thread starts (threads inherit the blocked
/// signals). When the signal thread cannot start, the signals keep their
/// default action.
pub fn install_signal_cleanup() {
    // SAFETY: sigset_t is plain data; sigemptyset initialises it.
    let mut set: libc::sigset_t = unsafe { std::mem::zeroed() };
    // SAFETY: `set` is a valid sigset_t; the signals are valid numbers.
    unsafe {
        libc::sigemptyset(&mut set);
        for signal in SIGNALS {
            libc::sigaddset(&mut set, signal);
        }
        if libc::pthread_sigmask(libc::SIG_BLOCK, &set, std::ptr::null_mut()) != 0 {
            return;
        }
    }
    let waiter = thread::Builder::new()
        .name("signal-cleanup".into())
        .spawn(move || {
            loop {
                let mut signal: libc::c_int = 0;
                // SAFETY: `set` is initialised; `signal` is a valid out pointer.
                if unsafe { libc::sigwait(&set, &mut signal) } == 0 {
                    for note in remove_registered() {
                        tell(&note);
                    }
                    // SAFETY: ends the process without running exit handlers
                    // (the HDF5 library's may not run while another thread
                    // is inside it).
                    unsafe { libc::_exit(128 + signal) };
                }
            }
        });
    if waiter.is_err() {
        // SAFETY: as above; gives the signals back their default action.
        unsafe {
            libc::pthread_sigmask(libc::SIG_UNBLOCK, &set, std::ptr::null_mut());
        }
    }
}

/// One line on standard error (a closed stream is ignored).
fn tell(note: &str) {
    let _ = writeln!(std::io::stderr(), "{note}");
}
