//! Shared helpers for integration tests: run the real `yawdyn` binary in a
//! temporary directory and look at what it did.
#![allow(dead_code)]

use std::path::{Path, PathBuf};
use std::process::Command;
use std::time::{Duration, Instant};

/// Overrides that remove what the linear single-track model lacks: toe,
/// camber, Ackermann, aero, rolling resistance (for checks against
/// Gillespie ch. 6 / Rajamani ch. 2 closed forms).
pub const LINEARISE: [&str; 9] = [
    "steering.toe_front_deg=0.0",
    "steering.toe_rear_deg=0.0",
    "steering.ackermann=0.0",
    "tyre.front.camber_deg=0.0",
    "tyre.rear.camber_deg=0.0",
    "aero.drag_area=0.0",
    "aero.downforce_area=0.0",
    "tyre.front.rolling_resistance=0.0",
    "tyre.rear.rolling_resistance=0.0",
];

/// `text` after a line that loads the demo crossover from `vehicles/`.
pub fn with_vehicle(text: &str) -> String {
    format!("vehicle(\"vehicles/hybrid_crossover.toml\");\n{text}")
}

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

    /// Copies the demo crossover into `vehicles/` (a script reads only
    /// vehicle files inside its folder).
    pub fn add_demo_vehicle(&self) {
        let vehicle = std::fs::read_to_string(repo_path("scripts/vehicles/hybrid_crossover.toml"));
        self.write("vehicles/hybrid_crossover.toml", &vehicle.unwrap());
    }

    /// Writes `with_vehicle(text)` as `name` with the demo crossover beside
    /// it, and returns its path.
    pub fn write_with_vehicle(&self, name: &str, text: &str) -> PathBuf {
        self.add_demo_vehicle();
        self.write(name, &with_vehicle(text))
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

/// A steer ramp at 80 km/h under the speed controller on the invented demo
/// crossover: a real model run written as a results file, for tests of the
/// commands that read results files (`check`, `plot`). The manoeuvre is coded
/// here; `script_path` only labels the provenance.
#[derive(Debug, Clone)]
pub struct SteerRamp<'a> {
    /// Vehicle overrides (`key=value`).
    pub overrides: &'a [&'a str],
    /// Steering-wheel rate from t = 0.5 s, deg/s.
    pub rate_deg_s: f64,
    /// Simulated time, s.
    pub duration: f64,
    /// Output sample rate, Hz.
    pub sample_rate: f64,
    /// Script path stored in the provenance.
    pub script_path: &'a str,
}

impl SteerRamp<'_> {
    /// Runs the manoeuvre and writes `dir/name`; returns the path.
    pub fn write(&self, dir: &Path, name: &str) -> PathBuf {
        use yawdyn::manoeuvre::SpeedController;
        use yawdyn::model::{Commands, VX, VY, straight_running};
        use yawdyn::params::{Override, load_vehicle};
        use yawdyn::results::{Provenance, write_hdf5};
        use yawdyn::sim::{Simulation, SolverSettings};

        let overrides: Vec<Override> = self
            .overrides
            .iter()
            .map(|o| Override::parse(o).expect("override"))
            .collect();
        let vehicle_path = repo_path("scripts/vehicles/hybrid_crossover.toml");
        let vehicle = load_vehicle(&vehicle_path, &overrides).expect("vehicle");
        let speed = 80.0 / 3.6;
        let mut sim = Simulation::new(
            &vehicle,
            straight_running(&vehicle, speed),
            SolverSettings::default(),
            self.sample_rate,
        )
        .expect("simulation");
        let mut controller = SpeedController::default();
        let tick = 0.01;
        let mut commands = Commands::neutral(&vehicle);
        let ticks = (self.duration / tick).round() as usize;
        for k in 0..ticks {
            let t = k as f64 * tick;
            let v = sim.state()[VX].hypot(sim.state()[VY]);
            let (drive, brake) = controller.update(speed, v, tick);
            commands.drive_request = drive;
            commands.brake_request = brake;
            commands.steer_wheel_angle = (self.rate_deg_s * (t - 0.5).max(0.0)).to_radians();
            sim.advance((k + 1) as f64 * tick, &commands).expect("run");
        }
        let provenance = Provenance {
            yawdyn_version: "test".into(),
            script_path: self.script_path.into(),
            vehicle_path: vehicle_path.display().to_string(),
            vehicle_toml: vehicle.to_toml(),
            overrides: overrides.iter().map(Override::to_text).collect(),
            solver: "dopri5".into(),
            rtol: 1e-6,
            atol: 1e-6,
            sample_rate_hz: self.sample_rate,
            tick_rate_hz: 100.0,
            ..Provenance::default()
        };
        let path = dir.join(name);
        write_hdf5(&sim.into_record(provenance), &path).expect("write");
        path
    }
}

/// Runs the real binary in `dir`, returning the raw process output.
pub fn yawdyn_raw(dir: &Path, args: &[&str]) -> std::process::Output {
    Command::new(env!("CARGO_BIN_EXE_yawdyn"))
        .current_dir(dir)
        .args(args)
        .output()
        .expect("run yawdyn")
}

/// Standard output and standard error of a raw output, as one text.
pub fn text(out: &std::process::Output) -> String {
    format!(
        "{}{}",
        String::from_utf8_lossy(&out.stdout),
        String::from_utf8_lossy(&out.stderr)
    )
}

/// The samples of channel `name` of a run (panics naming it when absent).
pub fn channel<'a>(r: &'a yawdyn::results::RunRecord, name: &str) -> &'a [f64] {
    &r.channel(name)
        .unwrap_or_else(|| panic!("no channel {name}"))
        .data
}

/// The value of metric `name` of a run (panics naming it when absent).
pub fn metric(r: &yawdyn::results::RunRecord, name: &str) -> f64 {
    r.metrics
        .iter()
        .find(|m| m.name == name)
        .unwrap_or_else(|| panic!("no metric {name}"))
        .value
}

/// A number kept in a run's provenance (`phase.<name>`, `value.<name>`).
pub fn extra(r: &yawdyn::results::RunRecord, key: &str) -> f64 {
    r.provenance
        .extra
        .iter()
        .find(|(k, _)| k == key)
        .and_then(|(_, v)| v.parse().ok())
        .unwrap_or_else(|| panic!("no provenance item {key}"))
}
