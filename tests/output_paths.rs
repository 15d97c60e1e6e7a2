//! Output paths through the binary: what each command refuses (exit 2, the
//! file left as it was), symbolic links followed to their target, the
//! usual permissions, and temporary files removed on SIGTERM and after a
//! SIGKILL.

mod common;

use std::fs;
use std::os::unix::fs::{FileTypeExt, PermissionsExt};
use std::path::Path;
use std::process::{Command, Stdio};
use std::time::{Duration, Instant};

use common::{TempDir, repo_path};

/// A run of a fraction of a second, with its vehicle beside it.
fn short_script(dir: &TempDir) -> std::path::PathBuf {
    fs::copy(
        repo_path("scripts/vehicles/hybrid_crossover.toml"),
        dir.join("car.toml"),
    )
    .unwrap();
    dir.write(
        "short.rhai",
        "vehicle(\"car.toml\");\nstart_speed(20.0);\nsample_rate(50.0);\nrun_for(0.2);\n",
    )
}

fn make_fifo(path: &Path) {
    let c = std::ffi::CString::new(path.to_str().unwrap()).unwrap();
    // SAFETY: a valid NUL-terminated path.
    assert_eq!(unsafe { libc::mkfifo(c.as_ptr(), 0o644) }, 0);
}

/// Names of the hidden temporary files in `dir`.
fn temp_files(dir: &Path) -> Vec<String> {
    fs::read_dir(dir)
        .unwrap()
        .map(|e| e.unwrap().file_name().to_string_lossy().into_owned())
        .filter(|n| n.contains(".yawdyn-tmp-") || n.contains(".tmp-"))
        .collect()
}

#[test]
fn run_refuses_its_own_inputs_special_files_and_one_file_twice() {
    let dir = TempDir::new();
    let script = short_script(&dir);
    let script_text = fs::read_to_string(&script).unwrap();
    let vehicle_text = fs::read_to_string(dir.join("car.toml")).unwrap();
    make_fifo(&dir.join("fifo.h5"));
    let cases: [&[&str]; 7] = [
        &["run", "short.rhai", "--out", "short.rhai"],
        &["run", "short.rhai", "--out", "./short.rhai"],
        &[
            "run",
            "short.rhai",
            "--vehicle",
            "car.toml",
            "--out",
            "car.toml",
        ],
        &["run", "short.rhai", "--out", "fifo.h5"],
        &["run", "short.rhai", "--out", "."],
        &["run", "short.rhai", "--out", "x.h5", "--csv", "x.h5"],
        &["run", "short.rhai", "--out", "/dev/null"],
    ];
    for args in cases {
        let out = dir.yawdyn(args);
        out.expect_code(2);
        assert!(
            out.stderr.contains("refused as an output"),
            "{args:?}: {}",
            out.stderr
        );
    }
    assert_eq!(fs::read_to_string(&script).unwrap(), script_text);
    assert_eq!(
        fs::read_to_string(dir.join("car.toml")).unwrap(),
        vehicle_text
    );
    assert!(
        fs::metadata(dir.join("fifo.h5"))
            .unwrap()
            .file_type()
            .is_fifo()
    );
    assert!(!dir.join("x.h5").exists());
    assert!(temp_files(dir.path()).is_empty());
}

/// The vehicle named inside the script is known only once the script runs:
/// the output is refused when it is committed, and the vehicle kept.
#[test]
fn run_refuses_the_vehicle_its_script_reads() {
    let dir = TempDir::new();
    short_script(&dir);
    let before = fs::read_to_string(dir.join("car.toml")).unwrap();
    let out = dir.yawdyn(["run", "short.rhai", "--out", "car.toml", "--quiet"]);
    out.expect_code(2);
    assert!(out.stderr.contains("input files"), "{}", out.stderr);
    assert_eq!(fs::read_to_string(dir.join("car.toml")).unwrap(), before);
    assert!(temp_files(dir.path()).is_empty());
}

#[test]
fn a_symbolic_link_is_followed_and_a_new_file_gets_the_usual_mode() {
    let dir = TempDir::new();
    short_script(&dir);
    fs::write(dir.join("keep.h5"), "old").unwrap();
    std::os::unix::fs::symlink("keep.h5", dir.join("l.h5")).unwrap();
    dir.yawdyn(["run", "short.rhai", "--out", "l.h5", "--quiet"])
        .expect_code(0);
    assert!(
        fs::symlink_metadata(dir.join("l.h5"))
            .unwrap()
            .file_type()
            .is_symlink()
    );
    assert!(
        fs::read(dir.join("keep.h5"))
            .unwrap()
            .starts_with(b"\x89HDF")
    );
    // A dangling link is refused.
    std::os::unix::fs::symlink("nowhere.h5", dir.join("d.h5")).unwrap();
    dir.yawdyn(["run", "short.rhai", "--out", "d.h5", "--quiet"])
        .expect_code(2);
    // New files: 0666 less the umask the test runs under.
    // SAFETY: umask only reads and resets the file-creation mask.
    let umask = unsafe {
        let m = libc::umask(0o022);
        libc::umask(m);
        m
    } as u32;
    dir.yawdyn([
        "run",
        "short.rhai",
        "--out",
        "new.h5",
        "--csv",
        "new.csv",
        "--quiet",
    ])
    .expect_code(0);
    for name in ["new.h5", "new.csv"] {
        let mode = fs::metadata(dir.join(name)).unwrap().permissions().mode() & 0o777;
        assert_eq!(mode, 0o666 & !umask, "{name}: {mode:o}");
    }
}

#[test]
fn check_update_and_plot_refuse_their_inputs() {
    let dir = TempDir::new();
    short_script(&dir);
    dir.yawdyn(["run", "short.rhai", "--out", "a.h5", "--quiet"])
        .expect_code(0);
    let before = fs::read(dir.join("a.h5")).unwrap();
    dir.yawdyn(["check", "a.h5", "--against", "a.h5", "--update"])
        .expect_code(2);
    dir.yawdyn(["plot", "a.h5", "--out", "a.h5"]).expect_code(2);
    assert_eq!(fs::read(dir.join("a.h5")).unwrap(), before);
    // An update to another path is written.
    dir.yawdyn(["check", "a.h5", "--against", "b.h5", "--update"])
        .expect_code(0);
    assert_eq!(fs::read(dir.join("b.h5")).unwrap(), before);
    assert!(temp_files(dir.path()).is_empty());
}

/// Waits until `dir` holds a temporary file, or the time is up.
fn wait_for_temp(dir: &Path, limit: Duration) -> bool {
    let start = Instant::now();
    while start.elapsed() < limit {
        if !temp_files(dir).is_empty() {
            return true;
        }
        std::thread::sleep(Duration::from_millis(20));
    }
    false
}

/// A sweep killed before it wrote its first block of cases: SIGTERM,
/// SIGINT and SIGHUP remove its temporary file and exit 128 + the signal (a
/// sweep with finished cases keeps it: `tests/sweep_resume.rs`); a SIGKILL
/// leaves it, and the next run on the same path removes it.
#[test]
fn signals_remove_temporary_files_and_leftovers_of_a_kill_are_cleaned() {
    let dir = TempDir::new();
    short_script(&dir);
    let script = dir.write(
        "long.rhai",
        "vehicle(\"car.toml\");\nstart_speed(20.0);\nrun_for(30.0);\n",
    );
    let sweep = |dir: &TempDir| {
        Command::new(env!("CARGO_BIN_EXE_yawdyn"))
            .args(["sweep", script.to_str().unwrap(), "--quiet", "--jobs", "1"])
            .args(["--vary", "road.friction=0.5:1.0:50", "--out", "s.h5"])
            .current_dir(dir.path())
            .stdout(Stdio::null())
            .stderr(Stdio::null())
            .spawn()
            .unwrap()
    };
    for (signal, code) in [
        (libc::SIGTERM, 143),
        (libc::SIGINT, 130),
        (libc::SIGHUP, 129),
    ] {
        let mut child = sweep(&dir);
        assert!(wait_for_temp(dir.path(), Duration::from_secs(60)));
        // SAFETY: sends a signal to our own child.
        unsafe { libc::kill(child.id() as i32, signal) };
        let status = child.wait().unwrap();
        assert_eq!(status.code(), Some(code), "signal {signal}: {status:?}");
        assert!(
            temp_files(dir.path()).is_empty(),
            "{:?}",
            temp_files(dir.path())
        );
        assert!(!dir.join("s.h5").exists());
    }
    let mut child = sweep(&dir);
    assert!(wait_for_temp(dir.path(), Duration::from_secs(60)));
    child.kill().unwrap();
    child.wait().unwrap();
    assert_eq!(temp_files(dir.path()).len(), 1);
    // The next write to the same path removes the dead process's file.
    dir.yawdyn(["run", "short.rhai", "--quiet", "--out", "s.h5"])
        .expect_code(0);
    assert!(
        temp_files(dir.path()).is_empty(),
        "{:?}",
        temp_files(dir.path())
    );
}

/// A sweep far too large, or with absurdly many threads, is refused at once
/// (exit 2) instead of starting.
#[test]
fn sweep_size_and_threads_are_capped() {
    let dir = TempDir::new();
    short_script(&dir);
    for args in [
        &["--vary", "drive.front_share=0:1:1000000000"][..],
        &["--vary", "road.friction=0.5:1:3", "--jobs", "1000000"][..],
    ] {
        let out = dir.yawdyn(["sweep", "short.rhai"].iter().chain(args));
        out.expect_code(2);
        assert!(
            out.stderr.contains("10000000") || out.stderr.contains("at most 1024"),
            "{}",
            out.stderr
        );
    }
    assert!(temp_files(dir.path()).is_empty());
}

/// `merge`, `yaw-moment` and `gg-envelope` write through the same rules: a
/// shard, the vehicle file or a FIFO as the output is refused (exit 2) and
/// left as it was, with no temporary file behind.
#[test]
fn merge_and_quasi_static_commands_refuse_their_inputs_and_special_files() {
    let dir = TempDir::new();
    short_script(&dir);
    for (k, shard) in ["1/2", "2/2"].iter().enumerate() {
        let out = dir.yawdyn([
            "sweep",
            "short.rhai",
            "--vary",
            "chassis.mass=1700:1800:2",
            "--shard",
            shard,
            "--out",
            &format!("s{}.h5", k + 1),
            "--quiet",
        ]);
        out.expect_code(0);
    }
    let shard = fs::read(dir.join("s1.h5")).unwrap();
    let vehicle = fs::read(dir.join("car.toml")).unwrap();
    make_fifo(&dir.join("fifo.h5"));
    let cases: [&[&str]; 4] = [
        &["merge", "s1.h5", "s1.h5", "s2.h5"],
        &["merge", "fifo.h5", "s1.h5", "s2.h5"],
        &[
            "yaw-moment",
            "car.toml",
            "--speed-kph",
            "60",
            "--out",
            "car.toml",
        ],
        &[
            "gg-envelope",
            "car.toml",
            "--speed-kph",
            "60",
            "--out",
            "fifo.h5",
        ],
    ];
    for args in cases {
        let out = dir.yawdyn(args);
        out.expect_code(2);
        assert!(
            out.stderr.contains("refused as an output"),
            "{args:?}: {}",
            out.stderr
        );
    }
    assert_eq!(fs::read(dir.join("s1.h5")).unwrap(), shard);
    assert_eq!(fs::read(dir.join("car.toml")).unwrap(), vehicle);
    assert!(
        fs::metadata(dir.join("fifo.h5"))
            .unwrap()
            .file_type()
            .is_fifo()
    );
    assert!(temp_files(dir.path()).is_empty());
    // The same merge to a new path works.
    dir.yawdyn(["merge", "all.h5", "s1.h5", "s2.h5"])
        .expect_code(0);
}

/// `tyre` writes a folder of CSV files (and one of SVG plots) through the
/// same rules: a FIFO, a link to a device or to the vehicle file among its
/// files, or a device, FIFO or file named as the folder, is refused (exit
/// 2) before anything is written; a link to a regular file replaces the
/// target and stays a link; an existing file of one of its names is
/// replaced and keeps its mode, other files are left alone; no temporary
/// file remains.
#[test]
fn tyre_writes_its_folder_through_the_output_rules() {
    let dir = TempDir::new();
    short_script(&dir);
    let vehicle = fs::read(dir.join("car.toml")).unwrap();
    let tyre = |out: &str| dir.yawdyn(["tyre", "car.toml", "--axle", "front", "--out", out]);
    fs::create_dir(dir.join("out")).unwrap();
    let curves = dir.join("out/tyre_front_curves.csv");
    let load = dir.join("out/tyre_front_load.csv");
    let refused = |out: &str, case: &str| {
        let o = tyre(out);
        o.expect_code(2);
        assert!(
            o.stderr.contains("refused as an output"),
            "{case}: {}",
            o.stderr
        );
        // Nothing written: the other file of the folder does not exist.
        assert!(!load.exists(), "{case}");
        assert!(temp_files(&dir.join("out")).is_empty(), "{case}");
    };
    make_fifo(&curves);
    refused("out", "a FIFO in the folder");
    assert!(fs::metadata(&curves).unwrap().file_type().is_fifo());
    fs::remove_file(&curves).unwrap();
    std::os::unix::fs::symlink("/dev/null", &curves).unwrap();
    refused("out", "a link to a device");
    fs::remove_file(&curves).unwrap();
    std::os::unix::fs::symlink("../car.toml", &curves).unwrap();
    refused("out", "a link to the vehicle file");
    fs::remove_file(&curves).unwrap();
    fs::hard_link(dir.join("car.toml"), &curves).unwrap();
    refused("out", "a hard link to the vehicle file");
    fs::remove_file(&curves).unwrap();
    assert_eq!(fs::read(dir.join("car.toml")).unwrap(), vehicle);
    // The folder itself: a device, a FIFO, a regular file.
    make_fifo(&dir.join("fifo"));
    fs::write(dir.join("plain"), "keep").unwrap();
    for out in ["/dev/null", "fifo", "plain", "car.toml"] {
        let o = tyre(out);
        o.expect_code(2);
        assert!(o.stderr.contains("give a directory"), "{out}: {}", o.stderr);
    }
    assert!(
        fs::metadata(dir.join("fifo"))
            .unwrap()
            .file_type()
            .is_fifo()
    );
    assert_eq!(fs::read_to_string(dir.join("plain")).unwrap(), "keep");
    assert_eq!(fs::read(dir.join("car.toml")).unwrap(), vehicle);
    // A link to a regular file is followed; an existing file is replaced
    // and keeps its mode; another file in the folder is left alone.
    fs::write(dir.join("keep.csv"), "old").unwrap();
    std::os::unix::fs::symlink("../keep.csv", &load).unwrap();
    fs::write(&curves, "old").unwrap();
    fs::set_permissions(&curves, fs::Permissions::from_mode(0o600)).unwrap();
    fs::write(dir.join("out/notes.txt"), "mine").unwrap();
    tyre("out").expect_code(0);
    assert!(
        fs::symlink_metadata(&load)
            .unwrap()
            .file_type()
            .is_symlink()
    );
    let kept = fs::read_to_string(dir.join("keep.csv")).unwrap();
    assert!(kept.lines().count() > 2 && kept.contains(','), "{kept}");
    let replaced = fs::read_to_string(&curves).unwrap();
    assert!(replaced.lines().count() > 2 && replaced.contains(','));
    let mode = fs::metadata(&curves).unwrap().permissions().mode() & 0o777;
    assert_eq!(mode, 0o600);
    assert_eq!(
        fs::read_to_string(dir.join("out/notes.txt")).unwrap(),
        "mine"
    );
    assert!(temp_files(&dir.join("out")).is_empty());
    assert!(temp_files(dir.path()).is_empty());
    // A new folder is created; `--plot` follows the same rules.
    tyre("new/deeper").expect_code(0);
    assert!(dir.join("new/deeper/tyre_front_load.csv").is_file());
    make_fifo(&dir.join("out/tyre_front_lateral.svg"));
    let o = dir.yawdyn(["tyre", "car.toml", "--axle", "front", "--plot", "out"]);
    o.expect_code(2);
    assert!(!dir.join("out/tyre_front_longitudinal.svg").exists());
    assert!(temp_files(&dir.join("out")).is_empty());
}
