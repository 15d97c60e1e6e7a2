//! Output files: which paths a command may write, and how every output is
//! written.
//!
//! Every file yawdyn writes (results HDF5 and CSV, sweep and merged sweep
//! files, stability maps, quasi-static files, SVG plots, tyre tables, the
//! baseline of `check --update`) goes through [`write_atomically`] or a
//! [`TempFile`]. The rules, the same for all of them:
//!
//! - **What may be replaced.** The final path is a new path or an existing
//!   regular file. A directory, a device, a FIFO or a socket is refused
//!   before anything is computed (bad input, exit code 2), and so is a file
//!   that the same command reads (the script, the vehicle file, a baseline,
//!   a shard, a results file): the same device and inode, whatever the
//!   spelling of the path ([`note_input`] records each input as it is read).
//! - **Symbolic links are followed.** A link to a regular file replaces the
//!   target and keeps the link; a link whose target is missing or is not a
//!   regular file is refused.
//! - **Write, then rename.** The file is written under a temporary name in
//!   the target's directory, `.<name>.yawdyn-tmp-<pid>-<n>`, flushed to disk
//!   and renamed over the target, so the final name holds either the old
//!   file or the complete new one.
//! - **Permissions.** A new file gets the usual mode (0666 less the umask,
//!   0644 with the common umask 022); a replaced file keeps its mode.
//! - **No leftovers.** The temporary file is removed on any error, and on
//!   SIGINT, SIGTERM and SIGHUP ([`install_signal_cleanup`]; the command
//!   then exits with 128 + the signal number). One left by a process killed
//!   with SIGKILL is removed by the next write to the same final path, once
//!   no process with its pid runs.
//! - **Unfinished sweeps are kept.** A sweep marks its temporary file with
//!   [`TempFile::keep_on_signal`] once it holds finished cases: a signal
//!   then keeps it (and says so on standard error) so that `sweep --resume`
//!   can take the cases up ([`unfinished_outputs`] lists such files,
//!   [`TempFile::create_keeping`] leaves them in place while they are
//!   read). Any other write to the same path removes them as above.
//!
//! Errors are [`OutputError`]s: a refused or unusable path is bad input,
//! a failure while writing (disk full) is the environment.

mod signals;
mod temp;

use std::os::unix::fs::{FileTypeExt, MetadataExt};
use std::path::{Path, PathBuf};
use std::sync::Mutex;

use thiserror::Error;

use crate::error::{Classify, ErrorKind, io_kind};

pub use signals::install_signal_cleanup;
pub use temp::{TEMP_MARK, TempFile, unfinished_outputs};

/// Why an output path cannot be written.
#[derive(Debug, Error)]
pub enum OutputError {
    /// The path is not something yawdyn replaces (a directory, a device, one
    /// of the command's inputs, …).
    #[error("{}: refused as an output: {reason}", path.display())]
    Refused {
        /// The output path as given.
        path: PathBuf,
        /// Why, e.g. `it is a FIFO (named pipe); give a new path or a regular file`.
        reason: String,
    },
    /// A file-system operation failed (creating the directory or the
    /// temporary file, flushing, renaming).
    #[error("{}: {action}", path.display())]
    Io {
        /// The file or directory concerned.
        path: PathBuf,
        /// What was being done, e.g. `creating the output directory`.
        action: String,
        /// The operating-system error.
        #[source]
        source: std::io::Error,
    },
}

impl Classify for OutputError {
    /// A refused path is bad input; file-system errors by their cause
    /// ([`io_kind`]: a missing or read-only directory is bad input, a full
    /// disk is the environment).
    fn kind(&self) -> ErrorKind {
        match self {
            OutputError::Refused { .. } => ErrorKind::BadInput,
            OutputError::Io { source, .. } => io_kind(source),
        }
    }
}

impl OutputError {
    fn refused(path: &Path, reason: impl Into<String>) -> Self {
        OutputError::Refused {
            path: path.to_path_buf(),
            reason: reason.into(),
        }
    }

    fn io(path: &Path, action: impl Into<String>) -> impl FnOnce(std::io::Error) -> Self {
        let path = path.to_path_buf();
        let action = action.into();
        move |source| OutputError::Io {
            path,
            action,
            source,
        }
    }
}

/// One file read by this process: its device and inode, and its path as given.
#[derive(Debug, Clone)]
struct Input {
    dev: u64,
    ino: u64,
    path: PathBuf,
}

/// The files this process has read (see [`note_input`]).
static INPUTS: Mutex<Vec<Input>> = Mutex::new(Vec::new());

/// Records `path` as an input of this command, so that no output replaces
/// it. With [`record_reads_as_inputs`] the readers call it for every file
/// they open (scripts, vehicle files, results, sweep and map files); a path that cannot be looked at is not
/// recorded (its reader reports the problem).
pub fn note_input(path: &Path) {
    if let Ok(meta) = std::fs::metadata(path) {
        let mut inputs = INPUTS.lock().unwrap_or_else(|e| e.into_inner());
        if !inputs
            .iter()
            .any(|i| i.dev == meta.dev() && i.ino == meta.ino() && i.path == path)
        {
            inputs.push(Input {
                dev: meta.dev(),
                ino: meta.ino(),
                path: path.to_path_buf(),
            });
        }
    }
}

/// Whether the library's readers record what they read (see [`note_read`]).
static RECORD_READS: std::sync::atomic::AtomicBool = std::sync::atomic::AtomicBool::new(false);

/// Makes every file the library's readers open an input of this process
/// that no output may replace. The command-line program turns it on at its
/// start; a program that uses the library (and may well read a file, change
/// it and write it back) leaves it off and notes its inputs itself with
/// [`note_input`].
pub fn record_reads_as_inputs() {
    RECORD_READS.store(true, std::sync::atomic::Ordering::Relaxed);
}

/// Called by the library's readers for each file they open: [`note_input`]
/// when [`record_reads_as_inputs`] was called, else nothing.
pub(crate) fn note_read(path: &Path) {
    if RECORD_READS.load(std::sync::atomic::Ordering::Relaxed) {
        note_input(path);
    }
}

/// The input with device and inode of `meta`, if one was recorded and its
/// path still names that file (an input removed since, whose inode the
/// system gave to a new file, is not that file).
fn input_like(meta: &std::fs::Metadata) -> Option<PathBuf> {
    let inputs = INPUTS.lock().unwrap_or_else(|e| e.into_inner());
    inputs
        .iter()
        .filter(|i| i.dev == meta.dev() && i.ino == meta.ino())
        .find(|i| {
            std::fs::metadata(&i.path).is_ok_and(|now| now.dev() == i.dev && now.ino() == i.ino)
        })
        .map(|i| i.path.clone())
}

/// What a non-regular file is, for messages.
fn what_it_is(meta: &std::fs::Metadata) -> &'static str {
    let t = meta.file_type();
    if t.is_dir() {
        "it is a directory; give a file name"
    } else if t.is_char_device() || t.is_block_device() {
        "it is a device; give a new path or a regular file"
    } else if t.is_fifo() {
        "it is a FIFO (named pipe); give a new path or a regular file"
    } else if t.is_socket() {
        "it is a socket; give a new path or a regular file"
    } else {
        "it is not a regular file; give a new path or a regular file"
    }
}

/// The directory holding `path` (`.` for a bare file name).
pub(crate) fn parent_dir(path: &Path) -> &Path {
    match path.parent() {
        Some(dir) if !dir.as_os_str().is_empty() => dir,
        _ => Path::new("."),
    }
}

/// The file that will be replaced or created when writing to `path`,
/// after the rules of this module: `path` itself when it is new or a regular
/// file, the target of a symbolic link to a regular file; every other case
/// refused. Also refuses a path whose directory has a regular file among its
/// ancestors (it cannot be created) and a path that is one of the inputs.
pub fn resolve_output(path: &Path) -> Result<PathBuf, OutputError> {
    if path.file_name().is_none() {
        return Err(OutputError::refused(path, "the path names no file"));
    }
    let target = match std::fs::symlink_metadata(path) {
        Err(e) if e.kind() == std::io::ErrorKind::NotFound => path.to_path_buf(),
        Err(e) => return Err(OutputError::io(path, "looking at the output path")(e)),
        Ok(meta) if meta.file_type().is_symlink() => match std::fs::metadata(path) {
            Ok(target) if target.is_file() => std::fs::canonicalize(path)
                .map_err(OutputError::io(path, "following the symbolic link"))?,
            Ok(target) => {
                return Err(OutputError::refused(
                    path,
                    format!(
                        "a symbolic link whose target is not a regular file ({})",
                        what_it_is(&target)
                    ),
                ));
            }
            Err(_) => {
                return Err(OutputError::refused(
                    path,
                    "a symbolic link whose target does not exist; give the target's path",
                ));
            }
        },
        Ok(meta) if !meta.is_file() => {
            return Err(OutputError::refused(path, what_it_is(&meta)));
        }
        Ok(_) => path.to_path_buf(),
    };
    refuse_input(path, &target)?;
    let dir = parent_dir(&target);
    if let Some(file) = dir.ancestors().find(|d| d.is_file()) {
        return Err(OutputError::Io {
            path: file.to_path_buf(),
            action: format!("is a file, so {} cannot be created", dir.display()),
            source: std::io::Error::from(std::io::ErrorKind::NotADirectory),
        });
    }
    Ok(target)
}

/// Refuses `target` (the resolved form of `path`) when it is one of the
/// recorded inputs.
fn refuse_input(path: &Path, target: &Path) -> Result<(), OutputError> {
    let input = std::fs::metadata(target).ok().and_then(|m| input_like(&m));
    if let Some(input) = input {
        let same = if input == path {
            String::new()
        } else {
            format!(" ({})", input.display())
        };
        return Err(OutputError::refused(
            path,
            format!("it is one of this command's input files{same}; give another output path"),
        ));
    }
    Ok(())
}

/// Checks, before a long computation, that `path` can be written, leaving
/// nothing behind: the rules of this module hold, and a file can be created
/// in its directory (or, when that does not exist yet, in the nearest
/// existing ancestor, where it will be created).
///
/// ```no_run
/// yawdyn::output::check_output_path(std::path::Path::new("results/run.h5"))?;
/// # Ok::<(), yawdyn::output::OutputError>(())
/// ```
pub fn check_output_path(path: &Path) -> Result<(), OutputError> {
    let target = resolve_output(path)?;
    let dir = parent_dir(&target);
    let existing = dir
        .ancestors()
        .find(|d| d.is_dir())
        .unwrap_or(Path::new("."));
    temp::probe(existing)
}

/// Checks, before a command writes files into the directory `dir` (`tyre
/// --out DIR`), that it is a directory (symbolic links followed) or a new
/// path that can be created as one. A regular file, a device, a FIFO, a
/// socket or a link to a missing target is refused; the files written
/// inside follow the rules of this module ([`check_output_path`]).
///
/// ```no_run
/// yawdyn::output::check_output_dir(std::path::Path::new("results/tyres"))?;
/// # Ok::<(), yawdyn::output::OutputError>(())
/// ```
pub fn check_output_dir(dir: &Path) -> Result<(), OutputError> {
    match std::fs::metadata(dir) {
        Ok(meta) if meta.is_dir() => Ok(()),
        Ok(meta) => {
            let what = if meta.is_file() {
                "it is a file"
            } else {
                what_it_is(&meta).split(';').next().unwrap_or_default()
            };
            Err(OutputError::refused(
                dir,
                format!("{what}; give a directory (new or existing)"),
            ))
        }
        Err(e) if e.kind() == std::io::ErrorKind::NotFound => {
            if std::fs::symlink_metadata(dir).is_ok() {
                return Err(OutputError::refused(
                    dir,
                    "a symbolic link whose target does not exist; give the target's path",
                ));
            }
            match dir.ancestors().skip(1).find(|d| d.is_file()) {
                Some(file) => Err(OutputError::Io {
                    path: file.to_path_buf(),
                    action: format!("is a file, so {} cannot be created", dir.display()),
                    source: std::io::Error::from(std::io::ErrorKind::NotADirectory),
                }),
                None => Ok(()),
            }
        }
        Err(e) => Err(OutputError::io(dir, "looking at the output directory")(e)),
    }
}

/// Refuses two outputs of one command that are the same file (`--csv X
/// --out X`): both are resolved by the rules of this module and compared as
/// paths of their canonical directories and, when the file exists, by
/// device and inode.
pub fn refuse_same_output(first: &Path, second: &Path) -> Result<(), OutputError> {
    let a = resolve_output(first)?;
    let b = resolve_output(second)?;
    let canonical = |p: &Path| {
        let dir = std::fs::canonicalize(parent_dir(p)).unwrap_or_else(|_| parent_dir(p).into());
        dir.join(p.file_name().unwrap_or_default())
    };
    let same_file = match (std::fs::metadata(&a), std::fs::metadata(&b)) {
        (Ok(x), Ok(y)) => x.dev() == y.dev() && x.ino() == y.ino(),
        _ => false,
    };
    if same_file || canonical(&a) == canonical(&b) {
        return Err(OutputError::refused(
            second,
            format!(
                "the same file as the output {}; give two different paths",
                first.display()
            ),
        ));
    }
    Ok(())
}

/// Lets `write` fill a temporary file beside the output (see the module
/// documentation), flushes it to disk and renames it over the resolved
/// output. On any error the temporary file is removed and the output is left
/// as it was.
pub fn write_atomically<E, F>(path: &Path, write: F) -> Result<(), E>
where
    E: From<OutputError>,
    F: FnOnce(&Path) -> Result<(), E>,
{
    let temp = TempFile::create(path)?;
    write(temp.path())?;
    temp.commit()?;
    Ok(())
}

#[cfg(test)]
mod tests;
