//! Exit code 1 when the machine gets in the way of valid input: here a full
//! device as standard output (Linux's `/dev/full` fails every write with
//! "no space left on device").

mod common;

#[cfg(target_os = "linux")]
#[test]
fn a_full_output_device_is_1() {
    use std::process::{Command, Stdio};
    let dir = common::TempDir::new();
    let script = dir.write(
        "probe.rhai",
        "// Exit-code test manoeuvre: straight running.\n\
         sample_rate(50);\nstart_speed(20.0);\nrun_for(0.2);\n",
    );
    let vehicle = common::repo_path("scripts/vehicles/hybrid_crossover.toml");
    let results = dir.join("probe.h5");
    dir.yawdyn([
        "run",
        script.to_str().unwrap(),
        "--vehicle",
        vehicle.to_str().unwrap(),
        "--quiet",
        "--out",
        results.to_str().unwrap(),
    ])
    .expect_code(0);
    let full = std::fs::OpenOptions::new()
        .write(true)
        .open("/dev/full")
        .expect("open /dev/full");
    let out = Command::new(env!("CARGO_BIN_EXE_yawdyn"))
        .args(["show", results.to_str().unwrap()])
        .stdout(Stdio::from(full))
        .stderr(Stdio::piped())
        .output()
        .expect("run the yawdyn binary");
    let stderr = String::from_utf8_lossy(&out.stderr);
    assert_eq!(out.status.code(), Some(1), "{stderr}");
    assert!(stderr.to_lowercase().contains("space"), "{stderr}");
}
