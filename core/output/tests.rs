//! Each class of output path: what is written, what is refused, what is left.

use std::fs;
use std::os::unix::fs::PermissionsExt;

use super::*;

/// Writes `text` to `path` through the one helper.
fn write_text(path: &Path, text: &str) -> Result<(), OutputError> {
    write_atomically(path, |temp| {
        fs::write(temp, text).map_err(OutputError::io(temp, "writing"))
    })
}

fn names(dir: &Path) -> Vec<String> {
    let mut names: Vec<String> = fs::read_dir(dir)
        .unwrap()
        .map(|e| e.unwrap().file_name().to_string_lossy().into_owned())
        .collect();
    names.sort();
    names
}

fn assert_refused(result: Result<(), OutputError>, what: &str) {
    let err = result.expect_err(what);
    assert_eq!(err.kind(), ErrorKind::BadInput, "{what}: {err}");
    assert!(matches!(err, OutputError::Refused { .. }), "{what}: {err}");
}

#[test]
fn new_and_regular_files_are_written_and_replaced() {
    let dir = tempfile::tempdir().unwrap();
    let target = dir.path().join("sub/x.csv");
    write_text(&target, "old").unwrap();
    write_text(&target, "new").unwrap();
    assert_eq!(fs::read_to_string(&target).unwrap(), "new");
    assert_eq!(names(&dir.path().join("sub")), vec!["x.csv"]);
}

#[test]
fn directories_devices_fifos_and_sockets_are_refused() {
    let dir = tempfile::tempdir().unwrap();
    assert_refused(write_text(dir.path(), "x"), "directory");
    assert_refused(check_output_path(dir.path()), "directory, checked");
    assert_refused(write_text(Path::new("/dev/null"), "x"), "device");
    let fifo = dir.path().join("pipe");
    let c = std::ffi::CString::new(fifo.to_str().unwrap()).unwrap();
    // SAFETY: a valid NUL-terminated path.
    assert_eq!(unsafe { libc::mkfifo(c.as_ptr(), 0o644) }, 0);
    assert_refused(write_text(&fifo, "x"), "FIFO");
    let socket = dir.path().join("sock");
    let _listener = std::os::unix::net::UnixListener::bind(&socket).unwrap();
    assert_refused(write_text(&socket, "x"), "socket");
    assert_eq!(names(dir.path()), vec!["pipe", "sock"]);
    assert!(fs::symlink_metadata(&fifo).unwrap().file_type().is_fifo());
}

#[test]
fn a_symbolic_link_to_a_file_replaces_the_target_and_keeps_the_link() {
    let dir = tempfile::tempdir().unwrap();
    let keep = dir.path().join("keep.h5");
    fs::write(&keep, "old").unwrap();
    let link = dir.path().join("l.h5");
    std::os::unix::fs::symlink("keep.h5", &link).unwrap();
    write_text(&link, "new").unwrap();
    assert!(
        fs::symlink_metadata(&link)
            .unwrap()
            .file_type()
            .is_symlink()
    );
    assert_eq!(fs::read_to_string(&keep).unwrap(), "new");
    // A dangling link and a link to a directory are refused.
    let dangling = dir.path().join("d.h5");
    std::os::unix::fs::symlink("missing.h5", &dangling).unwrap();
    assert_refused(write_text(&dangling, "x"), "dangling link");
    let to_dir = dir.path().join("dir.h5");
    std::os::unix::fs::symlink(".", &to_dir).unwrap();
    assert_refused(write_text(&to_dir, "x"), "link to a directory");
    assert_eq!(names(dir.path()), vec!["d.h5", "dir.h5", "keep.h5", "l.h5"]);
}

#[test]
fn an_input_of_the_command_is_refused_by_inode() {
    let dir = tempfile::tempdir().unwrap();
    let script = dir.path().join("script.rhai");
    fs::write(&script, "run_for(1.0);").unwrap();
    note_input(&script);
    assert_refused(write_text(&script, "x"), "the input");
    // Another spelling, and a hard link, are the same file.
    let other = dir.path().join(".").join("script.rhai");
    assert_refused(write_text(&other, "x"), "the input by another spelling");
    let hard = dir.path().join("hard.rhai");
    fs::hard_link(&script, &hard).unwrap();
    assert_refused(write_text(&hard, "x"), "a hard link to the input");
    assert_eq!(fs::read_to_string(&script).unwrap(), "run_for(1.0);");
}

#[test]
fn the_same_file_twice_is_refused() {
    let dir = tempfile::tempdir().unwrap();
    let a = dir.path().join("x.out");
    let b = dir.path().join("sub/../x.out");
    fs::create_dir(dir.path().join("sub")).unwrap();
    assert_refused(refuse_same_output(&a, &a), "same path");
    assert_refused(refuse_same_output(&a, &b), "same file by another spelling");
    refuse_same_output(&a, &dir.path().join("y.out")).unwrap();
}

#[test]
fn new_files_get_the_usual_mode_and_replaced_files_keep_theirs() {
    let dir = tempfile::tempdir().unwrap();
    // SAFETY: umask only sets the process's file-creation mask.
    let umask = unsafe { libc::umask(0o022) };
    unsafe { libc::umask(umask) };
    let fresh = dir.path().join("fresh.h5");
    write_text(&fresh, "x").unwrap();
    let mode = fs::metadata(&fresh).unwrap().permissions().mode() & 0o777;
    assert_eq!(mode, 0o666 & !(umask as u32), "mode {mode:o}");
    let private = dir.path().join("private.h5");
    fs::write(&private, "old").unwrap();
    fs::set_permissions(&private, fs::Permissions::from_mode(0o600)).unwrap();
    write_text(&private, "new").unwrap();
    let mode = fs::metadata(&private).unwrap().permissions().mode() & 0o777;
    assert_eq!(mode, 0o600);
}

#[test]
fn temp_files_are_named_and_removed_on_error() {
    let dir = tempfile::tempdir().unwrap();
    let target = dir.path().join("x.csv");
    let mut seen = String::new();
    let err: Result<(), OutputError> = write_atomically(&target, |temp| {
        seen = temp.file_name().unwrap().to_string_lossy().into_owned();
        fs::write(temp, "partial").unwrap();
        Err(OutputError::refused(temp, "test failure"))
    });
    assert!(err.is_err());
    let prefix = format!(".x.csv{TEMP_MARK}{}-", std::process::id());
    assert!(seen.starts_with(&prefix), "{seen}");
    assert!(names(dir.path()).is_empty());
}

#[test]
fn leftovers_of_a_dead_process_are_removed_by_the_next_write() {
    let dir = tempfile::tempdir().unwrap();
    // The pid of a process that has ended.
    let mut child = std::process::Command::new("true").spawn().unwrap();
    let dead = child.id();
    child.wait().unwrap();
    let stale = dir.path().join(format!(".x.h5{TEMP_MARK}{dead}-0"));
    let old_style = dir.path().join(format!(".x.h5.tmp-{dead}-3"));
    // Ours (a running pid) and another target's are kept.
    let live = dir
        .path()
        .join(format!(".x.h5{TEMP_MARK}{}-999", std::process::id()));
    let other = dir.path().join(format!(".y.h5{TEMP_MARK}{dead}-0"));
    for p in [&stale, &old_style, &live, &other] {
        fs::write(p, "left").unwrap();
    }
    write_text(&dir.path().join("x.h5"), "x").unwrap();
    let left = names(dir.path());
    assert!(!left.contains(&stale.file_name().unwrap().to_string_lossy().into_owned()));
    assert!(
        !left.contains(
            &old_style
                .file_name()
                .unwrap()
                .to_string_lossy()
                .into_owned()
        )
    );
    assert_eq!(left.len(), 3, "{left:?}");
}

#[test]
fn a_file_as_ancestor_of_the_directory_is_refused_and_nothing_is_left() {
    let dir = tempfile::tempdir().unwrap();
    let file = dir.path().join("plain");
    fs::write(&file, "x").unwrap();
    let err = check_output_path(&file.join("out.h5")).unwrap_err();
    assert_eq!(err.kind(), ErrorKind::BadInput, "{err}");
    check_output_path(&dir.path().join("new/deeper/out.h5")).unwrap();
    assert_eq!(names(dir.path()), vec!["plain"]);
}
