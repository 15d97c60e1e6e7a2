//! `yawdyn bench [VEHICLE] [--json]`: speed of the model. Figures are
//! wall-clock and CPU-time measurements on this machine, for information;
//! nothing asserts them.

use std::path::PathBuf;

use yawdyn::assets::resolve_vehicle;
use yawdyn::bench::{BenchOptions, Rate, Spread};
use yawdyn::params::load_vehicle;
use yawdyn::table::{Table, fmt_num};

use super::{Outcome, parse_overrides};

/// Arguments of `yawdyn bench`.
#[derive(Debug, clap::Args)]
pub struct Args {
    /// Vehicle file, or the name of a demo vehicle. Default: the demo hybrid
    /// crossover (shipped inside yawdyn, so bench runs from any folder).
    #[arg(default_value = "hybrid_crossover")]
    vehicle: PathBuf,
    /// Steering-wheel angle for the constant-steer runs, deg.
    #[arg(long, default_value_t = 30.0)]
    steer_deg: f64,
    /// Simulated time of each run, s.
    #[arg(long, default_value_t = 10.0)]
    duration: f64,
    /// Repeats of each measurement (interleaved; min and median are given).
    #[arg(long, default_value_t = 5)]
    repeats: usize,
    /// Override a vehicle parameter (repeatable).
    #[arg(long = "set", value_name = "KEY=VALUE")]
    sets: Vec<String>,
    /// Print JSON.
    #[arg(long)]
    json: bool,
}

fn ms(s: Spread) -> String {
    format!(
        "{} / {}",
        fmt_num(1e3 * s.min, 3),
        fmt_num(1e3 * s.median, 3)
    )
}

fn rate(r: Rate) -> String {
    format!("{} / {}", fmt_num(r.best, 4), fmt_num(r.median, 4))
}

fn ns(s: Spread) -> String {
    format!("{} / {}", fmt_num(s.min, 4), fmt_num(s.median, 4))
}

/// Runs `yawdyn bench`.
pub fn run(mut args: Args) -> anyhow::Result<Outcome> {
    if !(args.duration.is_finite() && args.duration > 0.0) {
        return Err(super::bad_input(
            "--duration must be a positive number of seconds",
        ));
    }
    args.vehicle = resolve_vehicle(&args.vehicle)?;
    let overrides = parse_overrides(&args.sets)?;
    let vehicle = load_vehicle(&args.vehicle, &overrides)?;
    let options = BenchOptions {
        steer: args.steer_deg.to_radians(),
        duration: args.duration,
        repeats: args.repeats.max(1),
    };
    let report = yawdyn::bench::run(&vehicle, options)?;
    if args.json {
        outln!("{}", serde_json::to_string_pretty(&report)?);
        return Ok(Outcome::Success);
    }
    outln!(
        "{} s of cornering from 80 km/h, {} deg steering-wheel angle; {} interleaved repeats",
        report.duration_s,
        args.steer_deg,
        report.repeats
    );
    let mut t = Table::new([
        "run",
        "wall ms min / median",
        "CPU ms min / median",
        "real-time factor (wall) best / median",
        "real-time factor (CPU) best / median",
        "evaluations",
        "evaluations per s",
        "output evaluations",
        "samples",
    ]);
    for r in &report.runs {
        t.row([
            r.name,
            &ms(r.wall_s),
            &ms(r.cpu_s),
            &rate(r.real_time_factor),
            &rate(r.real_time_factor_cpu),
            &r.evaluations.to_string(),
            &fmt_num(r.evaluations_per_second, 4),
            &r.output_evaluations.to_string(),
            &r.samples.to_string(),
        ]);
    }
    out!("{}", t.render());
    for r in &report.runs {
        outln!("  {}: {}", r.name, r.description);
    }
    let mut t = Table::new(["measure", "value", "unit"]);
    t.row([
        "derivative evaluation (wall), min / median",
        &ns(report.ns_per_derivative),
        "ns",
    ]);
    t.row([
        "derivative evaluation (CPU), min / median",
        &ns(report.ns_per_derivative_cpu),
        "ns",
    ]);
    t.row([
        "closed-loop evaluations / replay as one segment",
        &fmt_num(report.closed_loop_evaluation_ratio, 4),
        "1",
    ]);
    let yaw_rate_errors = [
        ("closed-loop", report.closed_loop_yaw_rate_error),
        ("open-loop", report.open_loop_yaw_rate_error),
        ("open-loop, ark436", report.ark436_yaw_rate_error),
        (
            "open-loop, ark436 at 1e-5",
            report.ark436_loose_yaw_rate_error,
        ),
    ];
    for (run, error) in yaw_rate_errors {
        let label = format!("{run} yaw-rate error against rtol 1e-10");
        t.row([label.as_str(), &fmt_num(error, 3), "rad/s"]);
    }
    t.row([
        "final lateral acceleration (open loop)",
        &fmt_num(report.final_lat_accel, 4),
        "m/s^2",
    ]);
    out!("{}", t.render());
    Ok(Outcome::Success)
}
