//! `yawdyn bench`: speed of the inner loop and of whole runs.
//!
//! Every run is repeated and the repeats are interleaved (A, B, C, …, A, B,
//! C, …) so that a machine whose speed drifts slows every run alike; each time
//! is given as min and median, as wall time and as the CPU time of the
//! measuring thread. Evaluation counts are exact and do not vary between
//! repeats. Nothing here is asserted by tests: figures are for information.

use std::time::Instant;

use serde::Serialize;

use crate::manoeuvre::SpeedController;
use crate::model::{
    Commands, Evaluation, Prepared, SteerAngles, VX, VY, YAW_RATE, evaluate_prepared_into,
    straight_running,
};
use crate::params::Vehicle;
use crate::sim::{InputSource, SimError, Simulation, SolverKind, SolverSettings};

/// What to run.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct BenchOptions {
    /// Steering-wheel angle of the constant-steer runs, rad.
    pub steer: f64,
    /// Simulated time of each run, s. Default 10 s.
    pub duration: f64,
    /// Repeats of each measurement. Default 5.
    pub repeats: usize,
}

impl Default for BenchOptions {
    fn default() -> Self {
        Self {
            steer: 30f64.to_radians(),
            duration: 10.0,
            repeats: 5,
        }
    }
}

/// Min and median of repeated measurements.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct Spread {
    /// Smallest value.
    pub min: f64,
    /// Median (mean of the middle two for an even count).
    pub median: f64,
}

impl Spread {
    fn of(values: &mut [f64]) -> Self {
        values.sort_by(f64::total_cmp);
        let n = values.len();
        let median = if n == 0 {
            f64::NAN
        } else if n % 2 == 1 {
            values[n / 2]
        } else {
            0.5 * (values[n / 2 - 1] + values[n / 2])
        };
        Self {
            min: values.first().copied().unwrap_or(f64::NAN),
            median,
        }
    }
}

/// A rate from repeated timings: best (from the shortest time) and median.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct Rate {
    /// From the shortest time.
    pub best: f64,
    /// From the median time.
    pub median: f64,
}

impl Rate {
    /// `amount` per unit of the timed quantity.
    fn of(amount: f64, time: Spread) -> Self {
        Self {
            best: amount / time.min,
            median: amount / time.median,
        }
    }
}

/// Figures of one timed run.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct RunFigures {
    /// Short name, e.g. `open_loop_1khz`.
    pub name: &'static str,
    /// What the run does.
    pub description: &'static str,
    /// Wall time of one run, s.
    pub wall_s: Spread,
    /// CPU time of one run (measuring thread), s; NaN where not available.
    pub cpu_s: Spread,
    /// Simulated time / wall time.
    pub real_time_factor: Rate,
    /// Simulated time / CPU time.
    pub real_time_factor_cpu: Rate,
    /// Derivative evaluations the solver made.
    pub evaluations: u64,
    /// The same per simulated second, 1/s.
    pub evaluations_per_second: f64,
    /// Model evaluations made only for output samples.
    pub output_evaluations: u64,
    /// Samples recorded.
    pub samples: usize,
}

/// Figures from one benchmark.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct BenchReport {
    /// Simulated time of each run, s.
    pub duration_s: f64,
    /// Repeats of each measurement.
    pub repeats: usize,
    /// Wall time of one derivative evaluation (prepared vehicle, steering
    /// held), ns.
    pub ns_per_derivative: Spread,
    /// CPU time of the same, ns.
    pub ns_per_derivative_cpu: Spread,
    /// The timed runs.
    pub runs: Vec<RunFigures>,
    /// Evaluations of the closed-loop ticked run / its replay as one segment.
    pub closed_loop_evaluation_ratio: f64,
    /// Largest |yaw-rate difference| of the closed-loop ticked run against
    /// the same run at rtol = atol = 1e-10, rad/s.
    pub closed_loop_yaw_rate_error: f64,
    /// Largest |yaw-rate difference| of the open-loop 1 kHz run against the
    /// same run at rtol = atol = 1e-10, rad/s.
    pub open_loop_yaw_rate_error: f64,
    /// The same for the open-loop runs with `ark436` at the default
    /// tolerance and at 1e-5, rad/s.
    pub ark436_yaw_rate_error: f64,
    /// See `ark436_yaw_rate_error`.
    pub ark436_loose_yaw_rate_error: f64,
    /// Lateral acceleration at the end of the open-loop run, m/s² (shows the
    /// run is meaningful).
    pub final_lat_accel: f64,
}

/// CPU time of the calling thread, s (NaN where the platform gives none).
fn thread_cpu_time() -> f64 {
    #[cfg(unix)]
    {
        let mut ts = libc::timespec {
            tv_sec: 0,
            tv_nsec: 0,
        };
        // SAFETY: clock_gettime writes one timespec through a valid pointer.
        let rc = unsafe { libc::clock_gettime(libc::CLOCK_THREAD_CPUTIME_ID, &mut ts) };
        if rc == 0 {
            return ts.tv_sec as f64 + 1e-9 * ts.tv_nsec as f64;
        }
    }
    f64::NAN
}

/// Wall and CPU time of `f`, s.
fn timed<T>(f: impl FnOnce() -> T) -> (T, f64, f64) {
    let (wall, cpu) = (Instant::now(), thread_cpu_time());
    let out = f();
    (out, wall.elapsed().as_secs_f64(), thread_cpu_time() - cpu)
}

/// Commands recorded at every tick, replayed as one function of time (held
/// from each tick to the next).
struct Replay {
    ticks: Vec<(f64, Commands)>,
}

impl InputSource for Replay {
    fn commands(&self, t: f64) -> Commands {
        let i = self.ticks.partition_point(|(tk, _)| *tk <= t);
        self.ticks[i.saturating_sub(1)].1
    }
}

/// One of the benchmark's runs on a fresh simulation.
#[derive(Debug, Clone, Copy, PartialEq)]
enum Scenario {
    /// Constant commands, one `advance` call.
    OpenLoop { rate: f64, exact_outputs: bool },
    /// As `OpenLoop` at 1 kHz with the additive solver (`ark436`) at
    /// rtol = atol = `tolerance`.
    OpenLoopArk { tolerance: f64 },
    /// Constant commands, one `advance` per 10 ms tick; with the additive
    /// solver at rtol = atol = `ark` when given.
    Ticked { ark: Option<f64> },
    /// A PI speed hold at every 10 ms tick (commands change every tick).
    ClosedLoop,
    /// The closed-loop run's commands replayed as one segment.
    Replay,
}

/// Controller tick of the ticked runs, s.
const TICK: f64 = 0.01;

struct Bench<'a> {
    vehicle: &'a Vehicle,
    options: BenchOptions,
    commands: Commands,
}

impl Bench<'_> {
    fn new_sim(&self, rate: f64, settings: SolverSettings) -> Result<Simulation, SimError> {
        let x0 = straight_running(self.vehicle, 80.0 / 3.6);
        Simulation::new(self.vehicle, x0, settings, rate)
    }

    /// Runs a scenario; the closed-loop run also returns its commands per tick.
    fn run(
        &self,
        scenario: Scenario,
        settings: SolverSettings,
        replay: &Replay,
    ) -> Result<(Simulation, Vec<(f64, Commands)>), SimError> {
        let end = self.options.duration;
        let ticks = (end / TICK).round() as usize;
        let mut log = Vec::new();
        let sim = match scenario {
            Scenario::OpenLoop {
                rate,
                exact_outputs,
            } => {
                let mut sim = self.new_sim(rate, settings)?;
                sim.set_output_interpolation(!exact_outputs);
                sim.advance(end, &self.commands)?;
                sim
            }
            Scenario::OpenLoopArk { tolerance } => {
                let mut sim = self.new_sim(1000.0, additive(settings, tolerance))?;
                sim.advance(end, &self.commands)?;
                sim
            }
            Scenario::Ticked { ark } => {
                let settings = ark.map_or(settings, |tolerance| additive(settings, tolerance));
                let mut sim = self.new_sim(1000.0, settings)?;
                // The sample memory of the whole run at once, as the script
                // runner reserves it when a phase begins.
                sim.reserve_samples_until(end);
                for k in 1..=ticks {
                    sim.advance(k as f64 * TICK, &self.commands)?;
                }
                sim
            }
            Scenario::ClosedLoop => {
                let mut sim = self.new_sim(1000.0, settings)?;
                // As in the ticked run (the script runner's reservation).
                sim.reserve_samples_until(end);
                let mut hold = SpeedController::default();
                let target = sim.state()[VX];
                for k in 1..=ticks {
                    let speed = sim.state()[VX].hypot(sim.state()[VY]);
                    let (drive, brake) = hold.update(target, speed, TICK);
                    let c = Commands {
                        drive_request: drive,
                        brake_request: brake,
                        ..self.commands
                    };
                    log.push((sim.time(), c));
                    sim.advance(k as f64 * TICK, &c)?;
                }
                sim
            }
            Scenario::Replay => {
                let mut sim = self.new_sim(1000.0, settings)?;
                sim.advance(end, replay)?;
                sim
            }
        };
        Ok((sim, log))
    }
}

/// `settings` with the additive solver at rtol = atol = `tolerance`.
fn additive(settings: SolverSettings, tolerance: f64) -> SolverSettings {
    SolverSettings {
        kind: SolverKind::Ark436,
        rtol: tolerance,
        atol: tolerance,
        ..settings
    }
}

/// The timed runs: name, description, scenario.
const RUNS: [(&str, &str, Scenario); 9] = [
    (
        "open_loop_1khz",
        "constant steer, one segment, 1 kHz output",
        Scenario::OpenLoop {
            rate: 1000.0,
            exact_outputs: false,
        },
    ),
    (
        "ticked_1khz",
        "constant steer, 100 Hz ticks (commands unchanged), 1 kHz output",
        Scenario::Ticked { ark: None },
    ),
    (
        "closed_loop_1khz",
        "constant steer, PI speed hold at 100 Hz ticks, 1 kHz output",
        Scenario::ClosedLoop,
    ),
    (
        "replay_1khz",
        "the closed-loop run's commands replayed as one segment, 1 kHz output",
        Scenario::Replay,
    ),
    (
        "open_loop_100hz",
        "constant steer, one segment, 100 Hz output",
        Scenario::OpenLoop {
            rate: 100.0,
            exact_outputs: false,
        },
    ),
    (
        "open_loop_1khz_exact",
        "as open_loop_1khz with the model evaluated at every sample",
        Scenario::OpenLoop {
            rate: 1000.0,
            exact_outputs: true,
        },
    ),
    (
        "open_loop_1khz_ark436",
        "as open_loop_1khz with the additive solver ark436 (wheels implicit)",
        Scenario::OpenLoopArk { tolerance: 1e-6 },
    ),
    (
        "open_loop_1khz_ark436_1e-5",
        "as open_loop_1khz_ark436 at rtol = atol = 1e-5",
        Scenario::OpenLoopArk { tolerance: 1e-5 },
    ),
    (
        "ticked_1khz_ark436_1e-5",
        "as ticked_1khz with the additive solver ark436 at rtol = atol = 1e-5",
        Scenario::Ticked { ark: Some(1e-5) },
    ),
];

/// Runs the benchmark on `vehicle`: 10 s (by default) of constant-steer
/// cornering from 80 km/h with the default solver settings.
pub fn run(vehicle: &Vehicle, options: BenchOptions) -> Result<BenchReport, SimError> {
    let mut commands = Commands::neutral(vehicle);
    commands.steer_wheel_angle = options.steer;
    let bench = Bench {
        vehicle,
        options,
        commands,
    };
    let settings = SolverSettings::default();
    // The closed-loop commands to replay, and its accuracy against a tight run.
    let (closed, log) = bench.run(Scenario::ClosedLoop, settings, &Replay { ticks: vec![] })?;
    let replay = Replay { ticks: log };
    let tight = SolverSettings {
        rtol: 1e-10,
        atol: 1e-10,
        ..settings
    };
    let (reference, _) = bench.run(Scenario::ClosedLoop, tight, &replay)?;
    let yaw_rate_error = max_difference(&closed, &reference, "yaw_rate");
    let (replayed, _) = bench.run(Scenario::Replay, settings, &replay)?;
    let closed_loop_evaluation_ratio = closed.evaluations() as f64 / replayed.evaluations() as f64;
    // Interleaved repeats of every run, and of the derivative loop.
    let mut wall = vec![Vec::new(); RUNS.len()];
    let mut cpu = vec![Vec::new(); RUNS.len()];
    let (mut ns, mut ns_cpu) = (Vec::new(), Vec::new());
    let mut last: Vec<Option<Simulation>> = RUNS.iter().map(|_| None).collect();
    for _ in 0..options.repeats.max(1) {
        for (i, (_, _, scenario)) in RUNS.iter().enumerate() {
            let (result, w, c) = timed(|| bench.run(*scenario, settings, &replay));
            wall[i].push(w);
            cpu[i].push(c);
            last[i] = Some(result?.0);
        }
        let (wall, cpu) = ns_per_derivative(&bench, closed.state());
        ns.push(wall);
        ns_cpu.push(cpu);
    }
    let runs = RUNS
        .iter()
        .zip(last)
        .enumerate()
        .filter_map(|(i, ((name, description, _), sim))| {
            let sim = sim?;
            let (wall_s, cpu_s) = (Spread::of(&mut wall[i]), Spread::of(&mut cpu[i]));
            Some(RunFigures {
                name,
                description,
                wall_s,
                cpu_s,
                real_time_factor: Rate::of(options.duration, wall_s),
                real_time_factor_cpu: Rate::of(options.duration, cpu_s),
                evaluations: sim.evaluations(),
                evaluations_per_second: sim.evaluations() as f64 / options.duration,
                output_evaluations: sim.output_evaluations(),
                samples: sim.times().len(),
            })
        })
        .collect();
    let (open, _) = bench.run(RUNS[0].2, settings, &replay)?;
    let (open_reference, _) = bench.run(RUNS[0].2, tight, &replay)?;
    let ark_error = |scenario| -> Result<f64, SimError> {
        let (sim, _) = bench.run(scenario, settings, &replay)?;
        Ok(max_difference(&sim, &open_reference, "yaw_rate"))
    };
    let final_lat_accel = open
        .channel("ay")
        .and_then(|c| c.last().copied())
        .unwrap_or(f64::NAN);
    Ok(BenchReport {
        duration_s: options.duration,
        repeats: options.repeats.max(1),
        ns_per_derivative: Spread::of(&mut ns),
        ns_per_derivative_cpu: Spread::of(&mut ns_cpu),
        runs,
        closed_loop_evaluation_ratio,
        closed_loop_yaw_rate_error: yaw_rate_error,
        open_loop_yaw_rate_error: max_difference(&open, &open_reference, "yaw_rate"),
        ark436_yaw_rate_error: ark_error(Scenario::OpenLoopArk { tolerance: 1e-6 })?,
        ark436_loose_yaw_rate_error: ark_error(Scenario::OpenLoopArk { tolerance: 1e-5 })?,
        final_lat_accel,
    })
}

/// Mean wall and CPU time of one derivative evaluation near `state`, ns:
/// the inner loop as the solver calls it (vehicle prepared once, steering
/// angles of the held command computed once, evaluated in place).
fn ns_per_derivative(bench: &Bench, state: &crate::model::State) -> (f64, f64) {
    let n = 50_000;
    let prepared = Prepared::new(bench.vehicle);
    let steer = SteerAngles::new(bench.vehicle, bench.commands.steer_wheel_angle);
    let mut x = *state;
    let mut e = Evaluation::default();
    let (acc, wall, cpu) = timed(|| {
        let mut acc = 0.0;
        for i in 0..n {
            x[VY] = state[VY] + 1e-12 * (i % 7) as f64;
            evaluate_prepared_into(
                bench.vehicle,
                &prepared,
                &steer,
                std::hint::black_box(&x),
                &bench.commands,
                &mut e,
            );
            acc += e.derivative[YAW_RATE];
        }
        acc
    });
    std::hint::black_box(acc);
    (wall * 1e9 / n as f64, cpu * 1e9 / n as f64)
}

/// Largest |difference| of a channel between two runs sampled alike.
fn max_difference(a: &Simulation, b: &Simulation, name: &str) -> f64 {
    match (a.channel(name), b.channel(name)) {
        (Some(x), Some(y)) => x
            .iter()
            .zip(y)
            .map(|(p, q)| (p - q).abs())
            .fold(0.0, f64::max),
        _ => f64::NAN,
    }
}
