//! Exit code 2, bad input, through the binary: wrong options, unreadable or
//! wrong input files, and output paths that cannot be written. Each case
//! checks that the message names what is wrong and, for output paths, that
//! nothing ran and nothing was written.

mod common;

use common::{TempDir, repo_path};

/// A short straight run at 20 m/s (the vehicle comes from `--vehicle`).
const SCRIPT: &str = "// Exit-code test manoeuvre: straight running.\n\
sample_rate(50);\nstart_speed(20.0);\nrun_for(0.2);\n";

fn vehicle() -> String {
    repo_path("scripts/vehicles/hybrid_crossover.toml")
        .to_str()
        .unwrap()
        .to_string()
}

/// Runs `args` in `dir`, expects exit 2 and `needle` in the error output.
fn expect_bad_input(dir: &TempDir, args: &[&str], needle: &str) {
    let out = dir.yawdyn(args);
    out.expect_code(2);
    assert!(
        out.stderr.contains(needle),
        "{args:?}: expected {needle:?} in:\n{}",
        out.stderr
    );
}

#[test]
fn wrong_options_are_bad_input() {
    let dir = TempDir::new();
    let script = dir.write("probe.rhai", SCRIPT);
    let s = script.to_str().unwrap();
    let v = vehicle();
    expect_bad_input(&dir, &["run", "--nope", s], "--nope");
    expect_bad_input(&dir, &["run", s, "--set", "nokey"], "--set nokey");
    expect_bad_input(
        &dir,
        &["stability", &v, "--speed-kph=-5", "--lat-accel-g", "0.3"],
        "speed",
    );
    expect_bad_input(
        &dir,
        &["check", s, "--against", s, "--rtol=-1"],
        "tolerance",
    );
}

#[test]
fn unreadable_or_wrong_input_files_are_bad_input() {
    let dir = TempDir::new();
    let script = dir.write("probe.rhai", SCRIPT);
    let s = script.to_str().unwrap();
    let v = vehicle();
    expect_bad_input(&dir, &["run", "missing.rhai"], "missing.rhai");
    let broken = dir.write("broken.rhai", "run_for(;\n");
    expect_bad_input(&dir, &["run", broken.to_str().unwrap()], "broken.rhai");
    let typo = dir.write("typo.toml", "[chassis]\nmas = 1500.0\n");
    expect_bad_input(&dir, &["vehicle", typo.to_str().unwrap()], "mas");
    expect_bad_input(
        &dir,
        &[
            "stability",
            "missing.toml",
            "--speed-kph",
            "80",
            "--lat-accel-g",
            "0.3",
        ],
        "missing.toml",
    );
    // A script is not a results file; a results file has no such channel.
    expect_bad_input(&dir, &["show", s], "probe.rhai");
    expect_bad_input(&dir, &["check", s, "--against", s], "probe.rhai");
    let out = dir.join("run.h5");
    dir.yawdyn([
        "run",
        s,
        "--vehicle",
        &v,
        "--quiet",
        "--out",
        out.to_str().unwrap(),
    ])
    .expect_code(0);
    let r = out.to_str().unwrap();
    expect_bad_input(&dir, &["check", r, "--against", "missing.h5"], "missing.h5");
    expect_bad_input(&dir, &["plot", r, "--channels", "yaw_rat"], "yaw_rat");
    expect_bad_input(&dir, &["merge", "m.h5", r], "not a yawdyn sweep file");
}

#[test]
fn output_paths_that_cannot_be_written_are_bad_input_before_any_work() {
    let dir = TempDir::new();
    let script = dir.write("probe.rhai", SCRIPT);
    let s = script.to_str().unwrap();
    let v = vehicle();
    let plain = dir.write("plain.txt", "a file, not a directory\n");
    let folder = dir.join("folder");
    std::fs::create_dir(&folder).unwrap();
    let under_file = plain.join("out.h5");
    for out in [folder.to_str().unwrap(), under_file.to_str().unwrap()] {
        expect_bad_input(&dir, &["run", s, "--vehicle", &v, "--out", out], "");
        expect_bad_input(&dir, &["run", s, "--vehicle", &v, "--csv", out], "");
        let sweep = [
            "sweep",
            s,
            "--vehicle",
            &v,
            "--vary",
            "drive.front_share=0:1:2",
            "--out",
            out,
        ];
        let o = dir.yawdyn(sweep);
        o.expect_code(2);
        assert!(!o.stdout.contains("cases:"), "the sweep ran: {}", o.stdout);
    }
    expect_bad_input(
        &dir,
        &["run", s, "--vehicle", &v, "--out", "folder"],
        "is a directory",
    );
    expect_bad_input(
        &dir,
        &["run", s, "--out", under_file.to_str().unwrap()],
        "plain.txt",
    );
    // Nothing was written anywhere, and no temporary file was left.
    let mut names: Vec<String> = std::fs::read_dir(dir.path())
        .unwrap()
        .map(|e| e.unwrap().file_name().to_string_lossy().into_owned())
        .collect();
    names.sort();
    assert_eq!(names, vec!["folder", "plain.txt", "probe.rhai"]);
    assert_eq!(std::fs::read_dir(&folder).unwrap().count(), 0);
}

#[cfg(target_os = "linux")]
#[test]
fn a_directory_nobody_may_write_is_bad_input() {
    use std::os::unix::fs::PermissionsExt;
    let dir = TempDir::new();
    let script = dir.write("probe.rhai", SCRIPT);
    let s = script.to_str().unwrap();
    let v = vehicle();
    // /proc takes no new files, whoever asks (root included).
    expect_bad_input(
        &dir,
        &["run", s, "--vehicle", &v, "--out", "/proc/probe.h5"],
        "/proc",
    );
    // A read-only directory: refused unless this user may write anyway (root).
    let locked = dir.join("locked");
    std::fs::create_dir(&locked).unwrap();
    std::fs::set_permissions(&locked, std::fs::Permissions::from_mode(0o555)).unwrap();
    let probe_allowed = std::fs::write(locked.join("probe"), "").is_ok();
    if probe_allowed {
        eprintln!(
            "note: this user may write to a mode-0555 directory (root); read-only case not checked"
        );
    } else {
        let out = locked.join("run.h5");
        expect_bad_input(
            &dir,
            &["run", s, "--vehicle", &v, "--out", out.to_str().unwrap()],
            "locked",
        );
    }
    std::fs::set_permissions(&locked, std::fs::Permissions::from_mode(0o755)).unwrap();
}
