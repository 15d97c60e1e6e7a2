//! Write-then-rename, so a crash never leaves a half-written file under the
//! final name.

use std::fs;
use std::path::{Path, PathBuf};
use std::sync::atomic::{AtomicU64, Ordering};

use super::ResultsError;

/// Distinguishes temporary files of concurrent writers in one process.
static TEMP_COUNTER: AtomicU64 = AtomicU64::new(0);

/// The temporary name used while writing `path`:
/// `<dir>/.<file name>.tmp-<pid>-<n>`, in the same directory so the final
/// rename stays on one file system.
pub(crate) fn temp_path_for(path: &Path) -> Result<PathBuf, ResultsError> {
    let file_name = path.file_name().ok_or_else(|| ResultsError::Invalid {
        path: path.to_path_buf(),
        reason: "the path names no file".to_string(),
    })?;
    let n = TEMP_COUNTER.fetch_add(1, Ordering::Relaxed);
    let temp_name = format!(
        ".{}.tmp-{}-{}",
        file_name.to_string_lossy(),
        std::process::id(),
        n
    );
    Ok(parent_dir(path).join(temp_name))
}

/// The directory holding `path` (`.` for a bare file name).
fn parent_dir(path: &Path) -> &Path {
    match path.parent() {
        Some(dir) if !dir.as_os_str().is_empty() => dir,
        _ => Path::new("."),
    }
}

/// Refuses an output path that is a directory, or whose directory has a
/// regular file among its ancestors (so it cannot be created).
fn refuse_impossible_output(path: &Path) -> Result<(), ResultsError> {
    if path.is_dir() {
        return Err(ResultsError::Io {
            path: path.to_path_buf(),
            action: "the output path is a directory; give a file name".to_string(),
            source: std::io::Error::from(std::io::ErrorKind::IsADirectory),
        });
    }
    let dir = parent_dir(path);
    if let Some(file) = dir.ancestors().find(|d| d.is_file()) {
        return Err(ResultsError::Io {
            path: file.to_path_buf(),
            action: format!("is a file, so {} cannot be created", dir.display()),
            source: std::io::Error::from(std::io::ErrorKind::NotADirectory),
        });
    }
    Ok(())
}

/// Creates the new, empty temporary file `temp` in `dir`.
fn create_temp(dir: &Path, temp: &Path) -> Result<(), ResultsError> {
    fs::OpenOptions::new()
        .write(true)
        .create_new(true)
        .open(temp)
        .map(drop)
        .map_err(|source| ResultsError::Io {
            path: dir.to_path_buf(),
            action: "creating a file in the output directory".to_string(),
            source,
        })
}

/// Makes ready to write `path`: refuses a path that is a directory, creates
/// the parent directories and creates the (empty) temporary file beside it,
/// whose name it returns. Every problem with the path the user gave (a
/// read-only or uncreatable directory, a directory where the file should be)
/// is a [`ResultsError::Io`] naming it, of kind bad input.
pub(crate) fn prepare_output(path: &Path) -> Result<PathBuf, ResultsError> {
    refuse_impossible_output(path)?;
    let dir = parent_dir(path);
    fs::create_dir_all(dir).map_err(|source| ResultsError::Io {
        path: dir.to_path_buf(),
        action: "creating the output directory".to_string(),
        source,
    })?;
    let temp = temp_path_for(path)?;
    create_temp(dir, &temp)?;
    Ok(temp)
}

/// Checks, before a long computation, that `path` can be written, leaving
/// nothing behind: it is not a directory, no ancestor of its directory is a
/// file, and a file can be created in its directory (or, when that does not
/// exist yet, in the nearest existing ancestor, where it will be created).
///
/// ```no_run
/// yawdyn::results::check_output_path(std::path::Path::new("results/run.h5"))?;
/// # Ok::<(), yawdyn::results::ResultsError>(())
/// ```
pub fn check_output_path(path: &Path) -> Result<(), ResultsError> {
    refuse_impossible_output(path)?;
    let dir = parent_dir(path);
    let existing = dir
        .ancestors()
        .find(|d| d.is_dir())
        .unwrap_or(Path::new("."));
    let probe = temp_path_for(&existing.join("probe"))?;
    create_temp(existing, &probe)?;
    let _ = fs::remove_file(&probe);
    Ok(())
}

/// Renames the finished temporary file `temp` over `path`, after flushing it
/// to the storage device.
pub(crate) fn commit_output(temp: &Path, path: &Path) -> Result<(), ResultsError> {
    sync_file(temp)?;
    fs::rename(temp, path).map_err(|source| ResultsError::Io {
        path: path.to_path_buf(),
        action: format!("renaming {} to the final name", temp.display()),
        source,
    })
}

/// Create the parent directories of `path`, let `write` fill a temporary file
/// beside it, flush that file to disk and rename it over `path`. On any error
/// the temporary file is removed and `path` is left as it was.
pub(crate) fn write_atomically<F>(path: &Path, write: F) -> Result<(), ResultsError>
where
    F: FnOnce(&Path) -> Result<(), ResultsError>,
{
    let temp = prepare_output(path)?;
    let result = write(&temp).and_then(|()| commit_output(&temp, path));
    if result.is_err() {
        // Best effort: the temporary file may already be gone.
        let _ = fs::remove_file(&temp);
    }
    result
}

/// Flush a finished file's contents to the storage device before renaming.
fn sync_file(path: &Path) -> Result<(), ResultsError> {
    fs::File::open(path)
        .and_then(|file| file.sync_all())
        .map_err(|source| ResultsError::Io {
            path: path.to_path_buf(),
            action: "flushing the written file to disk".to_string(),
            source,
        })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn temp_path_is_hidden_sibling_and_unique() {
        let a = temp_path_for(Path::new("out/run.h5")).unwrap();
        let b = temp_path_for(Path::new("out/run.h5")).unwrap();
        assert_eq!(a.parent(), Some(Path::new("out")));
        let name = a.file_name().unwrap().to_string_lossy().into_owned();
        assert!(name.starts_with(".run.h5.tmp-"), "{name}");
        assert_ne!(a, b);
        let bare = temp_path_for(Path::new("run.h5")).unwrap();
        assert_eq!(bare.parent(), Some(Path::new(".")));
    }

    #[test]
    fn failed_write_removes_temp_and_leaves_no_final_file() {
        let dir = tempfile::tempdir().unwrap();
        let target = dir.path().join("x.csv");
        let err = write_atomically(&target, |temp| {
            fs::write(temp, "partial").unwrap();
            Err(ResultsError::Invalid {
                path: temp.to_path_buf(),
                reason: "test failure".into(),
            })
        });
        assert!(err.is_err());
        assert!(!target.exists());
        assert_eq!(fs::read_dir(dir.path()).unwrap().count(), 0);
    }

    #[test]
    fn successful_write_replaces_existing_file() {
        let dir = tempfile::tempdir().unwrap();
        let target = dir.path().join("x.csv");
        fs::write(&target, "old").unwrap();
        write_atomically(&target, |temp| {
            fs::write(temp, "new").map_err(|source| ResultsError::Io {
                path: temp.to_path_buf(),
                action: "writing".into(),
                source,
            })
        })
        .unwrap();
        assert_eq!(fs::read_to_string(&target).unwrap(), "new");
        assert_eq!(fs::read_dir(dir.path()).unwrap().count(), 1);
    }
}

#[cfg(test)]
mod output_path_tests {
    use super::*;
    use crate::error::{Classify, ErrorKind};

    #[test]
    fn a_directory_or_a_file_as_parent_is_bad_input_and_leaves_nothing() {
        let dir = tempfile::tempdir().unwrap();
        let err = check_output_path(dir.path()).unwrap_err();
        assert_eq!(err.kind(), ErrorKind::BadInput, "{err}");
        let file = dir.path().join("plain");
        fs::write(&file, "x").unwrap();
        let err = check_output_path(&file.join("out.h5")).unwrap_err();
        assert_eq!(err.kind(), ErrorKind::BadInput, "{err}");
        check_output_path(&dir.path().join("new/deeper/out.h5")).unwrap();
        assert_eq!(
            fs::read_dir(dir.path()).unwrap().count(),
            1,
            "left something behind"
        );
    }
}
