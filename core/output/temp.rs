//! The temporary file of one output: created beside the target, registered
//! so that a terminating signal removes it, renamed over the target when
//! complete, removed otherwise.

use std::fs;
use std::os::unix::fs::{OpenOptionsExt, PermissionsExt};
use std::path::{Path, PathBuf};
use std::sync::Mutex;
use std::sync::atomic::{AtomicU64, Ordering};

use super::{OutputError, parent_dir, refuse_input, resolve_output};

/// The part of a temporary file's name after `.<final name>`:
/// `.<name>.yawdyn-tmp-<pid>-<n>`.
pub const TEMP_MARK: &str = ".yawdyn-tmp-";

/// Distinguishes temporary files of concurrent writers in one process.
static TEMP_COUNTER: AtomicU64 = AtomicU64::new(0);

/// A temporary file of this process not yet renamed or removed.
struct Live {
    path: PathBuf,
    /// Kept on a terminating signal, with this text for standard error
    /// ([`TempFile::keep_on_signal`]); removed when `None`.
    keep: Option<String>,
}

/// Temporary files of this process not yet renamed or removed; a
/// terminating signal removes them, or keeps those marked to be kept
/// ([`remove_registered`]).
static LIVE: Mutex<Vec<Live>> = Mutex::new(Vec::new());

/// Removes every registered temporary file not marked to be kept (called on
/// a terminating signal); returns the notes of the kept ones, each followed
/// by its path.
pub(super) fn remove_registered() -> Vec<String> {
    let live = LIVE.lock().unwrap_or_else(|e| e.into_inner());
    let mut notes = Vec::new();
    for file in live.iter() {
        match &file.keep {
            Some(note) => notes.push(format!("{note} (unfinished file: {})", file.path.display())),
            None => {
                let _ = fs::remove_file(&file.path);
            }
        }
    }
    notes
}

fn register(path: &Path) {
    LIVE.lock().unwrap_or_else(|e| e.into_inner()).push(Live {
        path: path.to_path_buf(),
        keep: None,
    });
}

fn unregister(path: &Path) {
    LIVE.lock()
        .unwrap_or_else(|e| e.into_inner())
        .retain(|p| p.path != path);
}

/// The temporary file of an output being written. Dropped before
/// [`TempFile::commit`], it removes the file.
#[derive(Debug)]
pub struct TempFile {
    temp: PathBuf,
    target: PathBuf,
    given: PathBuf,
    done: bool,
}

impl TempFile {
    /// Resolves `path` by the rules of [`crate::output`], creates its
    /// directory, removes temporary files left there for the same target
    /// by processes that no longer run, and creates the new, empty
    /// temporary file beside the target (mode 0666 less the umask, or the
    /// mode of the file it will replace).
    pub fn create(path: &Path) -> Result<TempFile, OutputError> {
        TempFile::create_keeping(path, &[])
    }

    /// [`TempFile::create`], except that the temporary files in `keep`
    /// (unfinished outputs of dead processes that this one reads, see
    /// [`unfinished_outputs`]) are not removed.
    pub fn create_keeping(path: &Path, keep: &[PathBuf]) -> Result<TempFile, OutputError> {
        let target = resolve_output(path)?;
        let dir = parent_dir(&target);
        fs::create_dir_all(dir).map_err(OutputError::io(dir, "creating the output directory"))?;
        let name = target
            .file_name()
            .ok_or_else(|| OutputError::refused(path, "the path names no file"))?
            .to_string_lossy()
            .into_owned();
        remove_stale(dir, &name, keep);
        let n = TEMP_COUNTER.fetch_add(1, Ordering::Relaxed);
        let temp = dir.join(format!(".{name}{TEMP_MARK}{}-{n}", std::process::id()));
        register(&temp);
        let file = fs::OpenOptions::new()
            .write(true)
            .create_new(true)
            .mode(0o666)
            .open(&temp);
        let file = match file {
            Ok(file) => file,
            Err(e) => {
                unregister(&temp);
                return Err(OutputError::io(
                    dir,
                    "creating a file in the output directory",
                )(e));
            }
        };
        let made = TempFile {
            temp,
            target,
            given: path.to_path_buf(),
            done: false,
        };
        // A replaced file keeps its permissions.
        if let Ok(old) = fs::metadata(&made.target) {
            let mode = old.permissions().mode() & 0o7777;
            file.set_permissions(fs::Permissions::from_mode(mode))
                .map_err(OutputError::io(
                    &made.temp,
                    "setting the file's permissions",
                ))?;
        }
        Ok(made)
    }

    /// The temporary file to write.
    pub fn path(&self) -> &Path {
        &self.temp
    }

    /// From now on, a terminating signal (SIGINT, SIGTERM, SIGHUP) keeps
    /// this file instead of removing it and prints `note` and the file's
    /// path on standard error: for outputs whose unfinished file can be
    /// taken up again (a sweep's finished cases). Errors and drops still
    /// remove it.
    pub fn keep_on_signal(&self, note: &str) {
        let mut live = LIVE.lock().unwrap_or_else(|e| e.into_inner());
        if let Some(file) = live.iter_mut().find(|f| f.path == self.temp) {
            file.keep = Some(note.to_string());
        }
    }

    /// The file that [`TempFile::commit`] replaces (the output after
    /// following a symbolic link).
    pub fn target(&self) -> &Path {
        &self.target
    }

    /// Flushes the written temporary file to disk and renames it over the
    /// target, after checking again that the target is not one of the
    /// command's inputs (read since [`TempFile::create`]) and is still
    /// a new path or a regular file.
    pub fn commit(mut self) -> Result<(), OutputError> {
        refuse_input(&self.given, &self.target)?;
        let meta = fs::symlink_metadata(&self.target).ok();
        if let Some(meta) = meta.filter(|m| !m.is_file()) {
            return Err(OutputError::refused(&self.given, super::what_it_is(&meta)));
        }
        fs::File::open(&self.temp)
            .and_then(|file| file.sync_all())
            .map_err(OutputError::io(
                &self.temp,
                "flushing the written file to disk",
            ))?;
        fs::rename(&self.temp, &self.target).map_err(OutputError::io(
            &self.target,
            format!("renaming {} to the final name", self.temp.display()),
        ))?;
        unregister(&self.temp);
        self.done = true;
        Ok(())
    }
}

impl Drop for TempFile {
    fn drop(&mut self) {
        if !self.done {
            // Best effort: the temporary file may already be gone.
            let _ = fs::remove_file(&self.temp);
            unregister(&self.temp);
        }
    }
}

/// Creates and removes a temporary file in `dir`, to learn that outputs can
/// be created there.
pub(super) fn probe(dir: &Path) -> Result<(), OutputError> {
    let n = TEMP_COUNTER.fetch_add(1, Ordering::Relaxed);
    let probe = dir.join(format!(".probe{TEMP_MARK}{}-{n}", std::process::id()));
    fs::OpenOptions::new()
        .write(true)
        .create_new(true)
        .open(&probe)
        .map_err(OutputError::io(
            dir,
            "creating a file in the output directory",
        ))?;
    let _ = fs::remove_file(&probe);
    Ok(())
}

/// Removes from `dir` the temporary files of target `name` whose process no
/// longer runs (left by a process killed with SIGKILL, or kept on a signal),
/// including those of earlier versions (`.<name>.tmp-<pid>…`), except those
/// in `keep`.
fn remove_stale(dir: &Path, name: &str, keep: &[PathBuf]) {
    for path in stale_files(dir, name) {
        if !keep.contains(&path) {
            let _ = fs::remove_file(path);
        }
    }
}

/// The temporary files in `dir` of target `name` whose process no longer
/// runs, sorted by name.
fn stale_files(dir: &Path, name: &str) -> Vec<PathBuf> {
    let Ok(entries) = fs::read_dir(dir) else {
        return Vec::new();
    };
    let prefixes = [format!(".{name}{TEMP_MARK}"), format!(".{name}.tmp-")];
    let mut stale = Vec::new();
    for entry in entries.flatten() {
        let file_name = entry.file_name();
        let Some(file_name) = file_name.to_str() else {
            continue;
        };
        let Some(rest) = prefixes
            .iter()
            .find_map(|p| file_name.strip_prefix(p.as_str()))
        else {
            continue;
        };
        let pid = rest.split('-').next().and_then(|p| p.parse::<i32>().ok());
        let is_file = entry.file_type().is_ok_and(|t| t.is_file());
        if is_file && pid.is_some_and(|pid| pid > 0 && !process_runs(pid)) {
            stale.push(entry.path());
        }
    }
    stale.sort();
    stale
}

/// The unfinished temporary files of the output `path` (resolved by the
/// rules of [`crate::output`]) left by processes that no longer run: a
/// command killed with SIGKILL, or a sweep that kept its file on a signal.
/// The next write to `path` removes them unless it is told to keep them
/// ([`TempFile::create_keeping`]). Files of running processes are never
/// listed.
pub fn unfinished_outputs(path: &Path) -> Result<Vec<PathBuf>, OutputError> {
    let target = resolve_output(path)?;
    let Some(name) = target.file_name().and_then(|n| n.to_str()) else {
        return Ok(Vec::new());
    };
    Ok(stale_files(parent_dir(&target), name))
}

/// Whether a process with this pid exists (a process of another user counts)
/// and has not ended: a killed process whose parent has not yet collected its
/// exit status (a zombie, state `Z` in `/proc/<pid>/stat`, see proc(5)) has
/// ended.
fn process_runs(pid: i32) -> bool {
    if pid == std::process::id() as i32 {
        return true;
    }
    // SAFETY: kill with signal 0 sends nothing; it only checks the pid.
    let result = unsafe { libc::kill(pid, 0) };
    let exists = result == 0 || std::io::Error::last_os_error().raw_os_error() != Some(libc::ESRCH);
    exists && !is_zombie(pid)
}

/// Whether `/proc` says the process has ended and waits to be collected.
fn is_zombie(pid: i32) -> bool {
    // The state follows the command name in parentheses, which may itself
    // hold spaces and parentheses: read it after the last ')'.
    fs::read_to_string(format!("/proc/{pid}/stat")).is_ok_and(|stat| {
        stat.rsplit_once(')')
            .and_then(|(_, rest)| rest.split_whitespace().next())
            .is_some_and(|state| state == "Z")
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    /// A child that has exited but is not yet collected is a zombie and no
    /// longer counts as running; a running one does.
    #[test]
    fn ended_children_do_not_run() {
        let mut sleeper = std::process::Command::new("sleep")
            .arg("30")
            .spawn()
            .unwrap();
        let pid = sleeper.id() as i32;
        assert!(process_runs(pid));
        sleeper.kill().unwrap();
        // Not collected yet: wait for the kernel to mark it ended.
        let start = std::time::Instant::now();
        while !is_zombie(pid) && start.elapsed().as_secs() < 10 {
            std::thread::sleep(std::time::Duration::from_millis(5));
        }
        assert!(is_zombie(pid));
        assert!(!process_runs(pid));
        sleeper.wait().unwrap();
        assert!(!process_runs(pid), "collected");
    }
}
