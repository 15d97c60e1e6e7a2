//! `yawdyn bench [VEHICLE] [--json]`: speed of the model. Figures are wall-clock
//! measurements on this machine, for information; nothing asserts them.

use std::path::PathBuf;

use yawdyn::assets::resolve_vehicle;
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
    /// Steering-wheel angle for the constant-steer run, deg.
    #[arg(long, default_value_t = 30.0)]
    steer_deg: f64,
    /// Override a vehicle parameter (repeatable).
    #[arg(long = "set", value_name = "KEY=VALUE")]
    sets: Vec<String>,
    /// Print JSON.
    #[arg(long)]
    json: bool,
}

/// Runs `yawdyn bench`.
pub fn run(mut args: Args) -> anyhow::Result<Outcome> {
    args.vehicle = resolve_vehicle(&args.vehicle)?;
    let overrides = parse_overrides(&args.sets)?;
    let vehicle = load_vehicle(&args.vehicle, &overrides)?;
    let report = yawdyn::bench::run(&vehicle, args.steer_deg.to_radians())?;
    if args.json {
        println!("{}", serde_json::to_string_pretty(&report)?);
        return Ok(Outcome::Success);
    }
    let mut t = Table::new(["measure", "value", "unit"]);
    t.row([
        "derivative evaluation",
        &fmt_num(report.ns_per_derivative, 4),
        "ns",
    ]);
    t.row([
        "real-time factor, open loop (one segment)",
        &fmt_num(report.real_time_factor, 4),
        "1",
    ]);
    t.row([
        "real-time factor, 100 Hz controller ticks",
        &fmt_num(report.real_time_factor_ticked, 4),
        "1",
    ]);
    t.row([
        "derivative evaluations (open loop)",
        &report.evaluations.to_string(),
        "1",
    ]);
    t.row(["samples (1 kHz)", &report.samples.to_string(), "1"]);
    t.row([
        "final lateral acceleration",
        &fmt_num(report.final_lat_accel, 4),
        "m/s^2",
    ]);
    println!(
        "10 s constant-steer cornering at 80 km/h, {} deg steering-wheel angle",
        args.steer_deg
    );
    print!("{}", t.render());
    Ok(Outcome::Success)
}
