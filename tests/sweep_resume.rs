//! `sweep --resume` through the binary: a sweep stopped by SIGKILL or
//! SIGINT part-way is taken up from its unfinished file, runs only the
//! cases that file lacks and writes the same bytes as an uninterrupted
//! sweep; a resume with other options is refused (exit 2) and keeps the
//! file; a resume with nothing to take up runs every case.

mod common;

use std::fs;
use std::io::{BufRead, BufReader, Read};
use std::path::{Path, PathBuf};
use std::process::{Child, ChildStderr, Command, Stdio};
use std::sync::OnceLock;

use common::{TempDir, repo_path};
use yawdyn::sweep::read_sweep;

/// Cases of the test sweep: enough that a stop after a few blocks of 64
/// leaves most of them to run.
const CASES: usize = 800;

/// The creation stamp of every file (so that files can be compared byte
/// for byte).
const EPOCH: &str = "1764626400";

/// A run of a fraction of a second on a copy of the invented demo crossover.
fn setup(dir: &TempDir) {
    fs::copy(
        repo_path("scripts/vehicles/hybrid_crossover.toml"),
        dir.join("car.toml"),
    )
    .unwrap();
    dir.write(
        "short.rhai",
        "vehicle(\"car.toml\");\nstart_speed(20.0);\nsample_rate(50.0);\nsteer(step(0.0, deg(30), 0.05, deg(300)));\nrun_for(0.2);\n",
    );
}

/// The sweep's arguments writing `out`, then `extra`.
fn args(out: &str, extra: &[&str]) -> Vec<String> {
    let vary = format!("road.friction=0.5:1.0:{CASES}");
    let mut a = vec!["sweep", "short.rhai", "--vary", vary.as_str(), "--out", out];
    a.extend_from_slice(extra);
    a.into_iter().map(String::from).collect()
}

/// The binary with the fixed creation stamp and a progress line per case.
fn command(dir: &Path, args: &[String]) -> Command {
    let mut c = Command::new(env!("CARGO_BIN_EXE_yawdyn"));
    c.args(args)
        .current_dir(dir)
        .env("SOURCE_DATE_EPOCH", EPOCH)
        .env("YAWDYN_PROGRESS_INTERVAL", "0");
    c
}

/// Runs the sweep to the end; returns exit code, stdout and stderr.
fn run(dir: &Path, args: &[String]) -> (i32, String, String) {
    let o = command(dir, args).output().unwrap();
    (
        o.status.code().unwrap_or(-1),
        String::from_utf8_lossy(&o.stdout).into_owned(),
        String::from_utf8_lossy(&o.stderr).into_owned(),
    )
}

/// The bytes of an uninterrupted sweep, made once for all tests.
fn uninterrupted() -> &'static [u8] {
    static FULL: OnceLock<Vec<u8>> = OnceLock::new();
    FULL.get_or_init(|| {
        let dir = TempDir::new();
        setup(&dir);
        let (code, _, err) = run(dir.path(), &args("full.h5", &["--quiet", "--jobs", "2"]));
        assert_eq!(code, 0, "{err}");
        fs::read(dir.join("full.h5")).unwrap()
    })
}

/// Starts the sweep with `--jobs 1` and waits until its progress lines
/// report at least `cases` finished cases. Returns the child and the rest
/// of its standard error (the caller stops the child and waits for it).
#[allow(clippy::zombie_processes)]
fn start_and_wait(dir: &Path, out: &str, cases: usize) -> (Child, BufReader<ChildStderr>) {
    let mut child = command(dir, &args(out, &["--jobs", "1"]))
        .stdout(Stdio::null())
        .stderr(Stdio::piped())
        .spawn()
        .unwrap();
    let mut lines = BufReader::new(child.stderr.take().unwrap());
    let mut line = String::new();
    loop {
        line.clear();
        if lines.read_line(&mut line).unwrap() == 0 {
            let status = child.wait().unwrap();
            panic!("the sweep ended ({status}) before {cases} cases");
        }
        let done = line
            .strip_prefix("sweep: ")
            .and_then(|rest| rest.split('/').next())
            .and_then(|n| n.parse::<usize>().ok());
        if done.is_some_and(|n| n >= cases) {
            return (child, lines);
        }
    }
}

/// The hidden temporary files in `dir`.
fn temp_files(dir: &Path) -> Vec<PathBuf> {
    fs::read_dir(dir)
        .unwrap()
        .map(|e| e.unwrap().path())
        .filter(|p| p.to_string_lossy().contains(".yawdyn-tmp-"))
        .collect()
}

/// The `resumed` count of a `--json` report.
fn resumed(json: &str) -> usize {
    let v: serde_json::Value = serde_json::from_str(json).unwrap();
    v["resumed"].as_u64().expect("resumed in the JSON report") as usize
}

/// Takes up the stopped sweep to `out` (with `jobs` threads) and checks
/// the file against the uninterrupted one; returns the cases resumed.
fn resume_and_compare(dir: &TempDir, out: &str, jobs: &str) -> usize {
    let (code, stdout, err) = run(
        dir.path(),
        &args(out, &["--resume", "--json", "--jobs", jobs]),
    );
    assert_eq!(code, 0, "{err}");
    let n = resumed(&stdout);
    // Whole blocks of 64 cases were kept, and fewer than all.
    assert!((64..CASES).contains(&n) && n % 64 == 0, "{n} cases resumed");
    let full = uninterrupted();
    let written = fs::read(dir.join(out)).unwrap();
    if written != full {
        let dir2 = TempDir::new();
        fs::write(dir2.join("full.h5"), full).unwrap();
        let a = read_sweep(&dir.join(out)).unwrap();
        let b = read_sweep(&dir2.join("full.h5")).unwrap();
        assert_eq!(a.summary, b.summary, "summaries differ");
        panic!("the resumed file's bytes differ from the uninterrupted sweep's");
    }
    assert!(
        temp_files(dir.path()).is_empty(),
        "{:?}",
        temp_files(dir.path())
    );
    n
}

/// SIGKILL after at least two blocks: the unfinished file stays, cannot be
/// read as a finished sweep, is refused for a sweep with other options, and
/// `--resume` takes up its cases and writes the uninterrupted file.
#[test]
fn a_killed_sweep_resumes_to_the_uninterrupted_file() {
    let dir = TempDir::new();
    setup(&dir);
    let (mut child, _) = start_and_wait(dir.path(), "s.h5", 140);
    child.kill().unwrap();
    child.wait().unwrap();
    let left = temp_files(dir.path());
    assert_eq!(left.len(), 1, "{left:?}");
    assert!(!dir.join("s.h5").exists());
    let err = read_sweep(&left[0]).unwrap_err().to_string();
    assert!(
        err.contains("unfinished") && err.contains("--resume"),
        "{err}"
    );
    // Other options: exit 2 naming the option, the unfinished file kept.
    for (extra, named) in [
        (&["--set", "chassis.mass=1900"][..], "--set"),
        (&["--channels", "yaw_rate"][..], "--channels"),
    ] {
        let mut a = args("s.h5", &["--resume", "--quiet"]);
        a.extend(extra.iter().map(|s| s.to_string()));
        let (code, _, err) = run(dir.path(), &a);
        assert_eq!(code, 2, "{extra:?}: {err}");
        assert!(
            err.contains(named) && err.contains("cannot resume"),
            "{err}"
        );
        assert_eq!(temp_files(dir.path()), left);
    }
    let other_grid = vec![
        "sweep".to_string(),
        "short.rhai".into(),
        "--vary".into(),
        format!("road.friction=0.5:1.0:{}", CASES + 1),
        "--out".into(),
        "s.h5".into(),
        "--resume".into(),
        "--quiet".into(),
    ];
    let (code, _, err) = run(dir.path(), &other_grid);
    assert_eq!(code, 2, "{err}");
    assert!(err.contains("--vary"), "{err}");
    assert_eq!(temp_files(dir.path()), left);
    // A finished sample changed after the stop: the checksum refuses it.
    let time_at = |value: Option<f64>| {
        let file = hdf5::File::open_rw(&left[0]).unwrap();
        let ds = file.dataset("time").unwrap();
        let old: f64 = ds.read_slice_1d::<f64, _>(1..2).unwrap()[0];
        if let Some(v) = value {
            ds.write_slice(&[v], 1..2).unwrap();
        }
        old
    };
    let original = time_at(Some(0.5));
    let (code, _, err) = run(dir.path(), &args("s.h5", &["--resume", "--quiet"]));
    assert_eq!(code, 2, "{err}");
    assert!(err.contains("do not read back"), "{err}");
    assert_eq!(temp_files(dir.path()), left);
    assert!(!dir.join("s.h5").exists());
    time_at(Some(original));
    // The same options: only the missing cases run.
    let n = resume_and_compare(&dir, "s.h5", "1");
    assert!(n >= 128, "{n} cases resumed");
}

/// SIGINT after at least one block: exit 130, the unfinished file kept and
/// the command to go on printed; the resume (on two threads) writes the
/// uninterrupted file and reports the resumed cases in its progress.
#[test]
fn an_interrupted_sweep_keeps_its_cases_and_resumes() {
    let dir = TempDir::new();
    setup(&dir);
    let (child, mut rest) = start_and_wait(dir.path(), "s.h5", 70);
    // SAFETY: sends a signal to our own child.
    unsafe { libc::kill(child.id() as i32, libc::SIGINT) };
    let mut tail = String::new();
    rest.read_to_string(&mut tail).unwrap();
    let mut child = child;
    let status = child.wait().unwrap();
    assert_eq!(status.code(), Some(130), "{status:?}\n{tail}");
    assert!(tail.contains("--resume") && tail.contains("kept"), "{tail}");
    assert_eq!(temp_files(dir.path()).len(), 1);
    // Progress lines count the cases taken over.
    let (code, _, err) = run(dir.path(), &args("s.h5", &["--resume", "--jobs", "2"]));
    assert_eq!(code, 0, "{err}");
    assert!(err.contains("resumed)"), "{err}");
    let full = uninterrupted();
    assert_eq!(fs::read(dir.join("s.h5")).unwrap(), full);
    assert!(temp_files(dir.path()).is_empty());
    // Stopped again and taken up with the JSON report.
    fs::remove_file(dir.join("s.h5")).unwrap();
    let (child, _) = start_and_wait(dir.path(), "s.h5", 70);
    // SAFETY: as above.
    unsafe { libc::kill(child.id() as i32, libc::SIGTERM) };
    let mut child = child;
    assert_eq!(child.wait().unwrap().code(), Some(143));
    resume_and_compare(&dir, "s.h5", "2");
}

/// `--resume` with nothing to take up runs every case and says so; a plain
/// sweep removes an unfinished file and starts again.
#[test]
fn resume_without_an_unfinished_file_runs_every_case() {
    let dir = TempDir::new();
    setup(&dir);
    let small = |extra: &[&str]| {
        let mut a: Vec<String> = [
            "sweep",
            "short.rhai",
            "--vary",
            "road.friction=0.5:1.0:3",
            "--out",
            "small.h5",
            "--json",
        ]
        .iter()
        .map(|s| s.to_string())
        .collect();
        a.extend(extra.iter().map(|s| s.to_string()));
        a
    };
    let (code, stdout, err) = run(dir.path(), &small(&["--resume"]));
    assert_eq!(code, 0, "{err}");
    assert!(err.contains("running every case"), "{err}");
    assert_eq!(resumed(&stdout), 0);
    // A killed sweep to s.h5, then a plain sweep there: fresh, no leftover.
    let (mut child, _) = start_and_wait(dir.path(), "s.h5", 70);
    child.kill().unwrap();
    child.wait().unwrap();
    assert_eq!(temp_files(dir.path()).len(), 1);
    let (code, stdout, err) = run(dir.path(), &args("s.h5", &["--json", "--jobs", "2"]));
    assert_eq!(code, 0, "{err}");
    assert_eq!(resumed(&stdout), 0);
    assert!(temp_files(dir.path()).is_empty());
    assert_eq!(fs::read(dir.join("s.h5")).unwrap(), uninterrupted());
}
