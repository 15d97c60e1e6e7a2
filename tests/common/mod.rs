//! Shared helpers for integration tests: run the real `yawdyn` binary in a
//! temporary directory and look at what it did.
#![allow(dead_code)]

use std::path::{Path, PathBuf};
use std::process::Command;
use std::time::{Duration, Instant};

/// The repository root (where Cargo.toml is).
pub fn repo_root() -> PathBuf {
    PathBuf::from(env!("CARGO_MANIFEST_DIR"))
}

/// A path inside the repository, e.g. `repo_path("scripts/step_steer.rhai")`.
pub fn repo_path(relative: &str) -> PathBuf {
    repo_root().join(relative)
}

/// What one invocation of the binary did.
#[derive(Debug)]
pub struct Output {
    /// Exit code (-1 if killed by a signal).
    pub code: i32,
    /// Standard output as text.
    pub stdout: String,
    /// Standard error as text.
    pub stderr: String,
    /// Wall time of the whole process.
    pub wall: Duration,
}

impl Output {
    /// Panics with both streams shown unless the exit code is `expected`.
    pub fn expect_code(&self, expected: i32) -> &Self {
        assert_eq!(
            self.code, expected,
            "exit code {} (expected {expected})\n--- stdout\n{}\n--- stderr\n{}",
            self.code, self.stdout, self.stderr
        );
        self
    }
}

/// A temporary working directory for one test.
pub struct TempDir {
    dir: tempfile::TempDir,
}

impl TempDir {
    /// A new empty directory (removed when dropped).
    pub fn new() -> Self {
        Self {
            dir: tempfile::tempdir().expect("create a temporary directory"),
        }
    }

    /// The directory.
    pub fn path(&self) -> &Path {
        self.dir.path()
    }

    /// A path inside the directory.
    pub fn join(&self, name: &str) -> PathBuf {
        self.dir.path().join(name)
    }

    /// Writes a file inside the directory and returns its path.
    pub fn write(&self, name: &str, text: &str) -> PathBuf {
        let path = self.join(name);
        if let Some(parent) = path.parent() {
            std::fs::create_dir_all(parent).expect("create parent directory");
        }
        std::fs::write(&path, text).expect("write test file");
        path
    }

    /// Runs `yawdyn ARGS...` with this directory as the working directory.
    pub fn yawdyn<I, S>(&self, args: I) -> Output
    where
        I: IntoIterator<Item = S>,
        S: AsRef<std::ffi::OsStr>,
    {
        yawdyn_in(self.path(), args)
    }
}

impl Default for TempDir {
    fn default() -> Self {
        Self::new()
    }
}

/// Runs the real binary in `dir` with `args`.
pub fn yawdyn_in<I, S>(dir: &Path, args: I) -> Output
where
    I: IntoIterator<Item = S>,
    S: AsRef<std::ffi::OsStr>,
{
    let start = Instant::now();
    let out = Command::new(env!("CARGO_BIN_EXE_yawdyn"))
        .args(args)
        .current_dir(dir)
        .output()
        .expect("run the yawdyn binary");
    Output {
        code: out.status.code().unwrap_or(-1),
        stdout: String::from_utf8_lossy(&out.stdout).into_owned(),
        stderr: String::from_utf8_lossy(&out.stderr).into_owned(),
        wall: start.elapsed(),
    }
}
