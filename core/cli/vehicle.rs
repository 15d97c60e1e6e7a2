//! `yawdyn vehicle FILE [--set key=value]... [--json]`: check a vehicle file
//! and print what follows from its parameters.

use std::path::PathBuf;

use yawdyn::assets::resolve_vehicle;
use yawdyn::model::linear::summarize;
use yawdyn::params::{UnitKind, load_vehicle};
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
        outln!("{}", serde_json::to_string_pretty(&s)?);
        return Ok(Outcome::Success);
    }
    let n = |v: f64| fmt_num(v, 4);
    let opt = |v: Option<f64>| v.map_or_else(|| "-".to_string(), n);
    outln!("{}", s.name);
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
    out!("{}", t.render());
    if !s.drive_axles.is_empty() {
        outln!();
        out!("{}", drive_table(&s).render());
    }
    if let Some(store) = &s.store {
        outln!();
        out!("{}", store_table(store).render());
    }
    outln!();
    outln!(
        "Linear figures follow Gillespie, Fundamentals of Vehicle Dynamics, ch. 6, at static load;"
    );
    outln!(
        "\"power-limited above\" is the speed where eta*P/v (with the fuel-flow and store limits) falls below mu*Fz;"
    );
    outln!(
        "\"torque limit ends\" is the speed above which power, fuel flow or the store limits the unit."
    );
    if s.drive_axles.len() == 2 {
        outln!(
            "Spare torque of one axle goes to the other: {} (drive.spare_torque_to_other_axle).",
            if s.spare_torque_to_other_axle {
                "yes"
            } else {
                "no"
            }
        );
    }
    Ok(Outcome::Success)
}

/// One row per drive unit: kind, limits, fuel-flow power cap, and the speeds
/// where its axle becomes power-limited.
fn drive_table(s: &yawdyn::model::linear::VehicleSummary) -> Table {
    let n = |v: f64| fmt_num(v, 4);
    let opt = |v: Option<f64>| v.map_or_else(|| "-".to_string(), n);
    let kw = |v: Option<f64>| opt(v.map(|p| p / 1e3));
    let mut d = Table::new([
        "drive axle",
        "unit",
        "kind",
        "max torque [N*m]",
        "max power [kW]",
        "fuel-flow cap [kW]",
        "generating [N*m / kW]",
        "max wheel torque [N*m]",
        "grip mu*Fz [N]",
        "torque limit ends [km/h]",
        "power-limited above [km/h]",
    ]);
    for a in &s.drive_axles {
        let kind = match a.kind {
            UnitKind::Engine => "engine",
            UnitKind::MotorGenerator => "motor-generator",
        };
        let generating = match (a.max_generating_torque_nm, a.max_generating_power_w) {
            (Some(t), Some(p)) => format!("{} / {}", n(t), n(p / 1e3)),
            _ => "-".to_string(),
        };
        d.row([
            a.axle.clone(),
            a.label.clone(),
            kind.to_string(),
            n(a.max_shaft_torque_nm),
            n(a.max_power_w / 1e3),
            kw(a.fuel_power_cap_w),
            generating,
            n(a.max_wheel_torque_nm),
            n(a.grip_force_n),
            opt(a.torque_limit_ends_kph),
            opt(a.power_limited_above_kph),
        ]);
    }
    d
}

/// The energy store: energy, state-of-charge limits, power limits, and the
/// energy that can be deployed and harvested from the initial state of charge.
fn store_table(store: &yawdyn::model::linear::StoreSummary) -> Table {
    let n = |v: f64| fmt_num(v, 4);
    let mut t = Table::new(["energy store", "value", "unit"]);
    t.row(["usable energy", &n(store.usable_energy_j / 3.6e6), "kWh"]);
    t.row(["initial state of charge", &n(store.initial_soc), "1"]);
    t.row([
        "state of charge limits",
        &format!("{} .. {}", n(store.min_soc), n(store.max_soc)),
        "1",
    ]);
    t.row([
        "max discharge / charge power",
        &format!(
            "{} / {}",
            n(store.max_discharge_power_w / 1e3),
            n(store.max_charge_power_w / 1e3)
        ),
        "kW",
    ]);
    t.row([
        "deployable from initial state of charge",
        &n(store.deployable_energy_j / 1e3),
        "kJ",
    ]);
    t.row([
        "harvestable to full",
        &n(store.harvestable_energy_j / 1e3),
        "kJ",
    ]);
    t
}
