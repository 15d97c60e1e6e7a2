//! `yawdyn bench`: speed of the inner loop and of a whole run.
//!
//! Measures wall time only; nothing here is asserted by tests.

use std::time::Instant;

use crate::model::{Commands, evaluate, straight_running};
use crate::params::Vehicle;
use crate::sim::{SimError, Simulation, SolverSettings};

/// Figures from one benchmark.
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize)]
pub struct BenchReport {
    /// Mean wall time of one derivative evaluation, ns.
    pub ns_per_derivative: f64,
    /// Simulated time / wall time for 10 s of constant-steer cornering at 80 km/h,
    /// 1 kHz output with every channel, integrated as one open-loop segment.
    pub real_time_factor: f64,
    /// The same run advanced in 10 ms segments, as with a 100 Hz controller.
    pub real_time_factor_ticked: f64,
    /// The open-loop run sampled at 100 Hz instead of 1 kHz (shows the share of
    /// the per-sample channel computation in the 1 kHz figure).
    pub real_time_factor_100hz_output: f64,
    /// Derivative evaluations the solver used for the run.
    pub evaluations: u64,
    /// Samples recorded.
    pub samples: usize,
    /// Lateral acceleration at the end of the run, m/s² (shows the run is meaningful).
    pub final_lat_accel: f64,
}

/// Runs the benchmark on `vehicle` with a steering-wheel angle of `steer` rad.
pub fn run(vehicle: &Vehicle, steer: f64) -> Result<BenchReport, SimError> {
    let speed = 80.0 / 3.6;
    let mut commands = Commands::neutral(vehicle);
    commands.steer_wheel_angle = steer;
    let x0 = straight_running(vehicle, speed);

    // Derivative cost: evaluate repeatedly on a state taken from the run below.
    let settings = SolverSettings::default();
    let duration = 10.0;
    let start = Instant::now();
    let mut sim = Simulation::new(vehicle, x0, settings, 1000.0)?;
    sim.advance(duration, &commands)?;
    let wall = start.elapsed().as_secs_f64();
    let start = Instant::now();
    let mut ticked = Simulation::new(vehicle, x0, settings, 1000.0)?;
    let tick: f64 = 0.01;
    let mut t: f64 = 0.0;
    while t < duration - 1e-9 {
        t = (t + tick).min(duration);
        ticked.advance(t, &commands)?;
    }
    let wall_ticked = start.elapsed().as_secs_f64();
    let start = Instant::now();
    let mut coarse = Simulation::new(vehicle, x0, settings, 100.0)?;
    coarse.advance(duration, &commands)?;
    let wall_coarse = start.elapsed().as_secs_f64();
    let state = *sim.state();
    let n = 200_000;
    let mut acc = 0.0;
    let start = Instant::now();
    let mut x = state;
    for i in 0..n {
        x[crate::model::VY] = state[crate::model::VY] + 1e-12 * (i % 7) as f64;
        let e = evaluate(vehicle, std::hint::black_box(&x), &commands);
        acc += e.derivative[crate::model::YAW_RATE];
    }
    let ns = start.elapsed().as_secs_f64() * 1e9 / n as f64;
    std::hint::black_box(acc);
    let last = sim.samples().last().map(|s| s[8]).unwrap_or(f64::NAN);
    Ok(BenchReport {
        ns_per_derivative: ns,
        real_time_factor: duration / wall,
        real_time_factor_ticked: duration / wall_ticked,
        real_time_factor_100hz_output: duration / wall_coarse,
        evaluations: sim.evaluations(),
        samples: sim.times().len(),
        final_lat_accel: last,
    })
}
