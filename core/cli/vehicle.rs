//! `yawdyn vehicle FILE [--set key=value]... [--json]`: check a vehicle file
//! and print what follows from its parameters.

use std::path::PathBuf;

use yawdyn::assets::resolve_vehicle;
use yawdyn::model::linear::summarize;
use yawdyn::params::load_vehicle;
use yawdyn::table::{Table, fmt_num};

use super::{Outcome, parse_overrides};

/// Arguments of `yawdyn vehicle`.
#[derive(Debug, clap::Args)]
pub struct Args {
    /// Vehicle parameter file (TOML), or the name of a demo vehicle (`track_car`).
    file: PathBuf,
    /// Override a parameter by dotted path, e.g. `--set drive.front_share=0.3` (repeatable).
    #[arg(long = "set", value_name = "KEY=VALUE")]
    sets: Vec<String>,
    /// Print JSON instead of tables.
    #[arg(long)]
    json: bool,
}

/// Runs `yawdyn vehicle`.
pub fn run(mut args: Args) -> anyhow::Result<Outcome> {
    args.file = resolve_vehicle(&args.file)?;
    let overrides = parse_overrides(&args.sets)?;
    let vehicle = load_vehicle(&args.file, &overrides)?;
    let s = summarize(&vehicle);
    if args.json {
        println!("{}", serde_json::to_string_pretty(&s)?);
        return Ok(Outcome::Success);
    }
    let n = |v: f64| fmt_num(v, 4);
    let opt = |v: Option<f64>| v.map_or_else(|| "-".to_string(), n);
    println!("{}", s.name);
    let mut t = Table::new(["quantity", "value", "unit"]);
    t.row(["total mass", &n(s.mass_kg), "kg"]);
    t.row(["wheelbase", &n(s.wheelbase_m), "m"]);
    t.row(["CG to front axle", &n(s.cg_to_front_axle_m), "m"]);
    t.row(["CG height", &n(s.cg_height_m), "m"]);
    t.row(["yaw inertia", &n(s.yaw_inertia_kg_m2), "kg*m^2"]);
    t.row(["static front axle load", &n(s.front_axle_load_n), "N"]);
    t.row(["static rear axle load", &n(s.rear_axle_load_n), "N"]);
    t.row(["front weight fraction", &n(s.front_weight_fraction), "1"]);
    t.row([
        "front axle cornering stiffness",
        &n(s.cornering_stiffness_front_n_per_rad),
        "N/rad",
    ]);
    t.row([
        "rear axle cornering stiffness",
        &n(s.cornering_stiffness_rear_n_per_rad),
        "N/rad",
    ]);
    t.row([
        "understeer gradient (linear)",
        &n(s.understeer_gradient_deg_per_g),
        "deg/g",
    ]);
    t.row([
        "characteristic speed",
        &opt(s.characteristic_speed_kph),
        "km/h",
    ]);
    t.row(["critical speed", &opt(s.critical_speed_kph), "km/h"]);
    t.row([
        "aero balance (front share of downforce)",
        &opt(s.aero_front_fraction),
        "1",
    ]);
    t.row(["downforce at 100 km/h", &n(s.downforce_at_100_kph_n), "N"]);
    t.row(["front torque share", &n(s.front_share), "1"]);
    print!("{}", t.render());
    if !s.drive_axles.is_empty() {
        println!();
        let mut d = Table::new([
            "drive axle",
            "unit",
            "max wheel torque [N*m]",
            "max tractive force [N]",
            "grip mu*Fz [N]",
            "power-limited above [km/h]",
            "torque limit ends [km/h]",
        ]);
        for a in &s.drive_axles {
            d.row([
                a.axle.clone(),
                a.label.clone(),
                n(a.max_wheel_torque_nm),
                n(a.max_tractive_force_n),
                n(a.grip_force_n),
                n(a.power_limited_above_kph),
                n(a.torque_limit_ends_kph),
            ]);
        }
        print!("{}", d.render());
    }
    println!();
    println!(
        "Linear figures follow Gillespie, Fundamentals of Vehicle Dynamics, ch. 6, at static load;"
    );
    println!("\"power-limited above\" is the speed where eta*P/v falls below mu*Fz of the axle.");
    Ok(Outcome::Success)
}
