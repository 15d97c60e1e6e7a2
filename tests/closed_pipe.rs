//! A closed standard output (`yawdyn … | head -c 600`) ends the output
//! quietly: no panic, the command's usual exit status, files still written.

mod common;

use std::os::fd::{FromRawFd, OwnedFd};
use std::process::{Command, Stdio};

use common::{TempDir, repo_path};

/// Runs `yawdyn args` in `dir` with standard output a pipe whose reading
/// end is already closed; returns the exit code and standard error.
fn with_closed_stdout(dir: &std::path::Path, args: &[&str]) -> (Option<i32>, String) {
    let mut fds = [0; 2];
    // SAFETY: `fds` has room for the two descriptors.
    assert_eq!(unsafe { libc::pipe(fds.as_mut_ptr()) }, 0);
    // SAFETY: both descriptors were just created and are owned here.
    let (reader, writer) = unsafe { (OwnedFd::from_raw_fd(fds[0]), OwnedFd::from_raw_fd(fds[1])) };
    drop(reader);
    let out = Command::new(env!("CARGO_BIN_EXE_yawdyn"))
        .args(args)
        .current_dir(dir)
        .stdout(Stdio::from(writer))
        .stderr(Stdio::piped())
        .output()
        .expect("run yawdyn");
    (
        out.status.code(),
        String::from_utf8_lossy(&out.stderr).into_owned(),
    )
}

#[test]
fn every_command_ends_quietly_on_a_closed_pipe() {
    let dir = TempDir::new();
    std::fs::copy(
        repo_path("scripts/vehicles/hybrid_crossover.toml"),
        dir.join("car.toml"),
    )
    .unwrap();
    dir.write(
        "short.rhai",
        "vehicle(\"car.toml\");\nstart_speed(20.0);\nsample_rate(50.0);\nrun_for(0.2);\n",
    );
    let cases: [(&[&str], i32); 8] = [
        (&["--help"], 0),
        (&["vehicle", "car.toml", "--json"], 0),
        (&["vehicle", "car.toml"], 0),
        (
            &[
                "stability",
                "car.toml",
                "--speed-kph",
                "80",
                "--lat-accel-g",
                "0.3",
            ],
            0,
        ),
        (&["run", "short.rhai", "--out", "r.h5"], 0),
        (&["check", "r.h5", "--against", "r.h5"], 0),
        (&["show", "r.h5"], 0),
        (
            &["bench", "car.toml", "--duration", "0.2", "--repeats", "1"],
            0,
        ),
    ];
    for (args, expected) in cases {
        let (code, stderr) = with_closed_stdout(dir.path(), args);
        assert_eq!(code, Some(expected), "{args:?}: {stderr}");
        assert!(!stderr.contains("panicked"), "{args:?}: {stderr}");
        assert!(!stderr.contains("Broken pipe"), "{args:?}: {stderr}");
    }
    // The run wrote its results although nobody read its summary.
    assert!(dir.join("r.h5").is_file());
}
