//! The shipped SLURM job-array example (`scripts/cluster/`) on a real
//! scheduler: a single-node SLURM (`scripts/cluster/single_node_slurm.sh`)
//! runs a small sweep as a 3-task array and the merge job; the merged file
//! must equal, byte for byte, one unsharded `yawdyn sweep` of the same grid
//! (`SOURCE_DATE_EPOCH` fixed, as in the sweep tests).
//!
//! With `YAWDYN_REQUIRE_SLURM=1` (CI: `.ci/run` installs slurm-wlm and munge)
//! the test starts the single-node SLURM itself and fails on anything
//! missing. Without it, the test runs only when a controller already answers
//! on `SLURM_CONF`, and otherwise says why it did nothing.

use std::path::{Path, PathBuf};
use std::process::{Command, Output};
use std::time::{Duration, Instant};

/// The sweep every task and the unsharded run share: 8 cases, shards of 2, 3, 3.
const VARY: &str = "drive.front_share=0:1:4 manoeuvre.lat_accel=3:5:2";
const CHANNELS: &str = "sideslip,yaw_rate";
const SHARDS: &str = "3";
const EPOCH: &str = "1764626400";
/// Longest wait for the array and the merge job.
const TIMEOUT: Duration = Duration::from_secs(600);

fn repo(relative: &str) -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR")).join(relative)
}

fn text(o: &Output) -> String {
    format!(
        "status {:?}\n--- stdout\n{}\n--- stderr\n{}",
        o.status.code(),
        String::from_utf8_lossy(&o.stdout),
        String::from_utf8_lossy(&o.stderr)
    )
}

/// A command with the test's environment: the built binary first on PATH,
/// the sweep definition, a fixed date and a private cache folder.
fn command(program: &str, work: &Path, slurm_conf: &Path) -> Command {
    let bin_dir = Path::new(env!("CARGO_BIN_EXE_yawdyn"))
        .parent()
        .expect("binary folder")
        .to_path_buf();
    let path = std::env::var_os("PATH").unwrap_or_default();
    let mut dirs = vec![bin_dir];
    dirs.extend(std::env::split_paths(&path));
    let mut c = Command::new(program);
    c.current_dir(work)
        .env("PATH", std::env::join_paths(dirs).expect("PATH"))
        .env("SLURM_CONF", slurm_conf)
        .env("SOURCE_DATE_EPOCH", EPOCH)
        .env("XDG_CACHE_HOME", work.join("cache"))
        .env("VARY", VARY)
        .env("CHANNELS", CHANNELS)
        .env_remove("SETS")
        .env_remove("SCRIPT")
        .env_remove("OUTDIR")
        .env_remove("OUT");
    c
}

/// The controller's configuration when a single-node SLURM is (made) ready,
/// or `None` (with the reason printed) when the test does not apply here.
fn slurm() -> Option<PathBuf> {
    let required = std::env::var("YAWDYN_REQUIRE_SLURM").as_deref() == Ok("1");
    if required {
        let o = Command::new("bash")
            .arg(repo("scripts/cluster/single_node_slurm.sh"))
            .arg("start")
            .output()
            .expect("run single_node_slurm.sh");
        assert!(
            o.status.success(),
            "YAWDYN_REQUIRE_SLURM=1 but the single-node SLURM did not start:\n{}",
            text(&o)
        );
        // The start script's last line names the configuration: "... SLURM_CONF=<path>".
        let out = String::from_utf8_lossy(&o.stdout).to_string();
        let conf = out
            .rsplit_once("SLURM_CONF=")
            .map(|(_, path)| PathBuf::from(path.trim()))
            .unwrap_or_else(|| panic!("no SLURM_CONF in the start script's output:\n{out}"));
        return Some(conf);
    }
    let Some(conf) = std::env::var_os("SLURM_CONF").map(PathBuf::from) else {
        eprintln!("cluster test skipped: set YAWDYN_REQUIRE_SLURM=1 (as CI does) or SLURM_CONF");
        return None;
    };
    let up = Command::new("scontrol")
        .arg("ping")
        .env("SLURM_CONF", &conf)
        .output()
        .is_ok_and(|o| String::from_utf8_lossy(&o.stdout).contains("is UP"));
    if !up {
        eprintln!(
            "cluster test skipped: no SLURM controller answers on {}",
            conf.display()
        );
        return None;
    }
    Some(conf)
}

/// Waits until neither job is queued or running; fails early when the merge
/// can never start (a shard failed).
fn wait_for(jobs: &str, work: &Path, conf: &Path) {
    let start = Instant::now();
    loop {
        let o = command("squeue", work, conf)
            .args(["-h", "-j", jobs, "-o", "%i %T %r"])
            .output()
            .expect("run squeue");
        let queue = String::from_utf8_lossy(&o.stdout).trim().to_string();
        if o.status.success() && queue.is_empty() {
            return;
        }
        assert!(
            !queue.contains("DependencyNeverSatisfied"),
            "a shard task failed, the merge can never run:\n{queue}\n{}",
            logs(work)
        );
        assert!(
            start.elapsed() < TIMEOUT,
            "jobs {jobs} still queued after {TIMEOUT:?}:\n{queue}\n{}",
            logs(work)
        );
        std::thread::sleep(Duration::from_millis(500));
    }
}

/// Every job log of the run, for failure messages.
fn logs(work: &Path) -> String {
    let mut all = String::new();
    if let Ok(entries) = std::fs::read_dir(work.join("results/slurm")) {
        for e in entries.flatten() {
            let body = std::fs::read_to_string(e.path()).unwrap_or_default();
            all.push_str(&format!("--- {}\n{body}\n", e.path().display()));
        }
    }
    all
}

/// The job-array example, submitted, run, merged: identical to one unsharded run.
#[test]
fn job_array_example_on_single_node_slurm_equals_unsharded_sweep() {
    let Some(conf) = slurm() else { return };
    let dir = tempfile::tempdir().expect("temporary folder");
    let work = dir.path();

    // Submit the array and the merge job as the example's README says.
    let o = command("bash", work, &conf)
        .arg(repo("scripts/cluster/submit_sweep.sh"))
        .args([SHARDS, "--cpus-per-task=1", "--mem=200M", "--time=00:10:00"])
        .output()
        .expect("run submit_sweep.sh");
    assert!(o.status.success(), "submit failed:\n{}", text(&o));
    let ids = String::from_utf8_lossy(&o.stdout).to_string();
    let words: Vec<&str> = ids.split_whitespace().collect();
    let [_, array, _, merge] = words[..] else {
        panic!("submit_sweep.sh printed no job ids:\n{}", text(&o))
    };
    wait_for(&format!("{array},{merge}"), work, &conf);

    // The merge job ended and wrote the merged file.
    let state = command("scontrol", work, &conf)
        .args(["show", "job", merge, "-o"])
        .output()
        .expect("run scontrol");
    let state = String::from_utf8_lossy(&state.stdout).to_string();
    assert!(
        state.contains("JobState=COMPLETED"),
        "merge job {merge} did not complete: {state}\n{}",
        logs(work)
    );
    let merged = work.join("results/power_on_exit_sweep.h5");
    assert!(merged.is_file(), "no merged file\n{}", logs(work));
    let shards = std::fs::read_dir(work.join("results/sweep_shards"))
        .expect("shard folder")
        .count();
    assert_eq!(shards, 3, "one shard file per array task");

    // The same grid in one run, in the same folder and environment.
    let mut unsharded = command(env!("CARGO_BIN_EXE_yawdyn"), work, &conf);
    unsharded.args([
        "sweep",
        "scripts/power_on_exit.rhai",
        "--channels",
        CHANNELS,
    ]);
    for v in VARY.split_whitespace() {
        unsharded.args(["--vary", v]);
    }
    let o = unsharded
        .args(["--jobs", "1", "--quiet", "--out", "unsharded.h5"])
        .output()
        .expect("run yawdyn sweep");
    assert_eq!(o.status.code(), Some(0), "unsharded sweep:\n{}", text(&o));
    let a = std::fs::read(&merged).expect("merged file");
    let b = std::fs::read(work.join("unsharded.h5")).expect("unsharded file");
    assert!(
        a == b,
        "the merged file of the SLURM job array differs from the unsharded sweep ({} vs {} bytes)",
        a.len(),
        b.len()
    );
}
