//! The `[drive]` group: the drive units on each axle (engines and
//! motor-generators), their differentials, how a drive request is split
//! between the axles, and the energy store (`[drive.store]`, in `store.rs`).

use serde::{Deserialize, Serialize};

use super::chassis::{FRONT, REAR};
use super::checks::Checks;
use super::store::{EnergyStore, StoreFile};
use super::tables::{Curve, Efficiency, EfficiencyMapFile, TorqueCurveFile};

/// Drive units on each axle, how a drive request is split between them, and
/// the energy store, as in the file.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct DriveFile {
    /// Share of the drive request sent to the front axle: 0 = all rear, 1 = all front.
    pub front_share: f64,
    /// Send the torque one axle's unit cannot give to the other axle's unit
    /// (so that a full drive request delivers all available torque). Default false:
    /// the front share is kept and an axle's unmet share is lost.
    #[serde(default)]
    pub spare_torque_to_other_axle: bool,
    /// Drive unit on the front axle, if any.
    #[serde(default)]
    pub front: Option<DriveUnitFile>,
    /// Drive unit on the rear axle, if any.
    #[serde(default)]
    pub rear: Option<DriveUnitFile>,
    /// Energy store of the motor-generators (required with a motor-generator).
    #[serde(default)]
    pub store: Option<StoreFile>,
}

/// What a drive unit is.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum UnitKind {
    /// A combustion engine: drives only; optionally under a fuel-flow limit.
    #[default]
    Engine,
    /// An electric motor-generator on the energy store: drives and generates.
    MotorGenerator,
}

/// One drive unit (an engine or a motor-generator with its gearing) and its
/// differential, as in the file. Speeds of tables in rpm; everything else SI.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct DriveUnitFile {
    /// What it is, for reports (e.g. "engine", "front motor-generator"). Default empty.
    #[serde(default)]
    pub label: String,
    /// `engine` (default) or `motor_generator`.
    #[serde(default)]
    pub kind: UnitKind,
    /// Maximum drive torque at the unit's shaft, N·m (or give `max_torque_table`).
    #[serde(default)]
    pub max_torque: Option<f64>,
    /// Maximum drive power at the shaft, W. Drive torque is at most max_power / shaft speed.
    pub max_power: f64,
    /// Overall reduction from the unit to the wheels (unit speed / wheel speed), 1.
    pub ratio: f64,
    /// Efficiency of the gearing between unit and wheels, 0 < η ≤ 1. Default 1.
    #[serde(default = "one")]
    pub efficiency: f64,
    /// Motor-generator: maximum generating torque at the shaft, N·m. Default `max_torque`.
    #[serde(default)]
    pub max_generating_torque: Option<f64>,
    /// Motor-generator: maximum generating power at the shaft, W. Default `max_power`.
    #[serde(default)]
    pub max_generating_power: Option<f64>,
    /// Motor-generator: efficiency shaft ← terminals while motoring, 1 (or give the table).
    #[serde(default)]
    pub motoring_efficiency: Option<f64>,
    /// Motor-generator: efficiency shaft → terminals while generating, 1 (or give the table).
    #[serde(default)]
    pub generating_efficiency: Option<f64>,
    /// Maximum drive torque against shaft speed, instead of `max_torque`.
    #[serde(default)]
    pub max_torque_table: Option<TorqueCurveFile>,
    /// Engine: fuel and the optional fuel-flow limit.
    #[serde(default)]
    pub fuel: Option<FuelFile>,
    /// Motor-generator: motoring efficiency against shaft speed and torque.
    #[serde(default)]
    pub motoring_efficiency_table: Option<EfficiencyMapFile>,
    /// Motor-generator: generating efficiency against shaft speed and torque magnitude.
    #[serde(default)]
    pub generating_efficiency_table: Option<EfficiencyMapFile>,
    /// The axle differential. Default open.
    #[serde(default)]
    pub differential: DifferentialFile,
}

/// An engine's fuel, as in the file.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct FuelFile {
    /// Lower heating value of the fuel, J/kg (petrol about 43e6).
    pub lower_heating_value: f64,
    /// Largest fuel mass flow, kg/s (1 kg/h = 1/3600 kg/s); none = no fuel-flow limit.
    #[serde(default)]
    pub max_mass_flow: Option<f64>,
    /// Brake thermal efficiency, shaft power / fuel power, 1 (or give the table).
    #[serde(default)]
    pub thermal_efficiency: Option<f64>,
    /// Brake thermal efficiency against engine speed and torque.
    #[serde(default)]
    pub thermal_efficiency_table: Option<EfficiencyMapFile>,
}

fn one() -> f64 {
    1.0
}

/// Kind of axle differential.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum DifferentialKind {
    /// Equal torque to both wheels.
    #[default]
    Open,
    /// Both wheels turn at (nearly) the same speed.
    Locked,
    /// Locking torque up to preload + locking × |input torque|.
    LimitedSlip,
}

/// Axle differential, as in the file.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct DifferentialFile {
    /// Kind: `open` (default), `locked` or `limited_slip`.
    #[serde(default)]
    pub kind: DifferentialKind,
    /// Limited-slip preload torque, N·m. Default 0.
    #[serde(default)]
    pub preload: f64,
    /// Limited-slip torque-sensing locking coefficient, 1 (locking torque per N·m input). Default 0.
    #[serde(default)]
    pub locking: f64,
    /// Viscous coupling that stands in for stiction while locked, N·m·s/rad. Default 500.
    #[serde(default = "default_coupling")]
    pub coupling_damping: f64,
}

fn default_coupling() -> f64 {
    500.0
}

impl Default for DifferentialFile {
    fn default() -> Self {
        Self {
            kind: DifferentialKind::Open,
            preload: 0.0,
            locking: 0.0,
            coupling_damping: default_coupling(),
        }
    }
}

/// A checked axle differential.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Differential {
    /// Kind.
    pub kind: DifferentialKind,
    /// Limited-slip preload, N·m (≥ 0).
    pub preload: f64,
    /// Limited-slip torque-sensing locking coefficient, 1 (≥ 0).
    pub locking: f64,
    /// Viscous stand-in for stiction while locked, N·m·s/rad (≥ 0).
    pub coupling_damping: f64,
}

/// A maximum torque: a constant or a curve against shaft speed (rad/s).
#[derive(Debug, Clone, PartialEq)]
pub enum TorqueLimit {
    /// The same torque at every speed, N·m.
    Constant(f64),
    /// Torque against shaft speed, linear between breakpoints, clamped outside.
    Curve(Curve),
}

impl TorqueLimit {
    /// Torque at shaft speed `speed` (rad/s, sign ignored), N·m.
    #[inline]
    pub fn value(&self, speed: f64) -> f64 {
        match self {
            TorqueLimit::Constant(t) => *t,
            TorqueLimit::Curve(c) => c.value(speed.abs()),
        }
    }

    /// The largest torque at any speed, N·m.
    pub fn max_value(&self) -> f64 {
        match self {
            TorqueLimit::Constant(t) => *t,
            TorqueLimit::Curve(c) => c.max_value(),
        }
    }
}

/// An engine's fuel: heating value, thermal efficiency, optional flow limit.
#[derive(Debug, Clone, PartialEq)]
pub struct Fuel {
    /// Lower heating value, J/kg (> 0).
    pub lower_heating_value: f64,
    /// Largest fuel mass flow, kg/s (> 0); `None` = no fuel-flow limit.
    pub max_mass_flow: Option<f64>,
    /// Brake thermal efficiency against engine speed and torque, 1.
    pub thermal_efficiency: Efficiency,
}

/// A motor-generator's generating limits and efficiencies.
#[derive(Debug, Clone, PartialEq)]
pub struct MotorGenerator {
    /// Largest generating torque at the shaft, N·m (≥ 0).
    pub max_generating_torque: f64,
    /// Largest generating power at the shaft, W (≥ 0).
    pub max_generating_power: f64,
    /// Efficiency terminals → shaft while motoring, 1.
    pub motoring_efficiency: Efficiency,
    /// Efficiency shaft → terminals while generating, 1.
    pub generating_efficiency: Efficiency,
}

/// What drives the unit's shaft.
#[derive(Debug, Clone, PartialEq)]
pub enum Machine {
    /// A combustion engine, with its fuel when given.
    Engine(Option<Fuel>),
    /// A motor-generator on the energy store.
    MotorGenerator(MotorGenerator),
}

/// A checked drive unit with its gearing and differential.
#[derive(Debug, Clone, PartialEq)]
pub struct DriveUnit {
    /// Label from the file, for reports.
    pub label: String,
    /// Engine or motor-generator, with what belongs to its kind.
    pub machine: Machine,
    /// Maximum drive torque at the shaft, N·m, against shaft speed.
    pub max_torque: TorqueLimit,
    /// Maximum drive power at the shaft, W (> 0).
    pub max_power: f64,
    /// Reduction ratio unit → wheels i, 1 (> 0).
    pub ratio: f64,
    /// Efficiency of the gearing η_d, 1 (0 < η ≤ 1).
    pub efficiency: f64,
    /// The axle differential.
    pub differential: Differential,
}

impl DriveUnit {
    /// The kind of unit.
    pub fn kind(&self) -> UnitKind {
        match self.machine {
            Machine::Engine(_) => UnitKind::Engine,
            Machine::MotorGenerator(_) => UnitKind::MotorGenerator,
        }
    }
}

/// The checked powertrain: units per axle, the default torque split and the energy store.
#[derive(Debug, Clone, PartialEq)]
pub struct Powertrain {
    /// Default front share of the drive request, 1 (0..1).
    pub front_share: f64,
    /// Default for sending an axle's unmet drive torque to the other axle.
    pub spare_torque_to_other_axle: bool,
    /// Drive units [front, rear]; at least one is present.
    pub units: [Option<DriveUnit>; 2],
    /// The energy store; present exactly when a motor-generator is.
    pub store: Option<EnergyStore>,
}

impl Powertrain {
    /// Checks `[drive]` (units, store, and that they fit together) and builds the group.
    pub(crate) fn build(d: &DriveFile, checks: &mut Checks) -> Self {
        checks.within("drive.front_share", d.front_share, 0.0, 1.0);
        if d.front.is_none() && d.rear.is_none() {
            checks.push(
                "drive",
                "needs a drive unit on at least one axle ([drive.front] or [drive.rear])",
            );
        }
        let mut units = [None, None];
        for (axle, name, unit) in [(FRONT, "front", &d.front), (REAR, "rear", &d.rear)] {
            units[axle] = unit
                .as_ref()
                .map(|u| DriveUnit::build(&format!("drive.{name}"), u, checks));
        }
        let generators: Vec<&str> = [(FRONT, "front"), (REAR, "rear")]
            .into_iter()
            .filter(|(axle, _)| {
                units[*axle]
                    .as_ref()
                    .is_some_and(|u: &DriveUnit| u.kind() == UnitKind::MotorGenerator)
            })
            .map(|(_, name)| name)
            .collect();
        match (&d.store, generators.first()) {
            (None, Some(name)) => checks.push(
                format!("drive.{name}.kind"),
                "a motor_generator needs an energy store: add [drive.store]",
            ),
            (Some(_), None) => checks.push(
                "drive.store",
                "an energy store needs a unit of kind = \"motor_generator\" to connect to",
            ),
            _ => {}
        }
        Self {
            front_share: d.front_share,
            spare_torque_to_other_axle: d.spare_torque_to_other_axle,
            units,
            store: d.store.as_ref().map(|s| EnergyStore::build(s, checks)),
        }
    }
}

impl DriveUnit {
    /// Checks `[drive.<axle>]` (key paths under `path`) and builds the unit.
    fn build(path: &str, u: &DriveUnitFile, checks: &mut Checks) -> Self {
        checks.positive(&format!("{path}.max_power"), u.max_power);
        checks.positive(&format!("{path}.ratio"), u.ratio);
        checks.fraction(&format!("{path}.efficiency"), u.efficiency);
        let max_torque = match (u.max_torque, &u.max_torque_table) {
            (Some(t), None) => {
                checks.positive(&format!("{path}.max_torque"), t);
                TorqueLimit::Constant(t)
            }
            (None, Some(c)) => TorqueLimit::Curve(Curve::build_torque(
                &format!("{path}.max_torque_table"),
                c,
                checks,
            )),
            (Some(_), Some(_)) => {
                checks.push(
                    format!("{path}.max_torque_table"),
                    "give `max_torque` or `max_torque_table`, not both",
                );
                TorqueLimit::Constant(0.0)
            }
            (None, None) => {
                checks.push(
                    format!("{path}.max_torque"),
                    "missing key `max_torque` (or give `max_torque_table`)",
                );
                TorqueLimit::Constant(0.0)
            }
        };
        let machine = match u.kind {
            UnitKind::Engine => Machine::Engine(engine_fuel(path, u, checks)),
            UnitKind::MotorGenerator => {
                Machine::MotorGenerator(motor_generator(path, u, max_torque.max_value(), checks))
            }
        };
        Self {
            label: u.label.clone(),
            machine,
            max_torque,
            max_power: u.max_power,
            ratio: u.ratio,
            efficiency: u.efficiency,
            differential: Differential::build(
                &format!("{path}.differential"),
                &u.differential,
                checks,
            ),
        }
    }
}

/// Checks the engine-only keys of a unit and builds its fuel.
fn engine_fuel(path: &str, u: &DriveUnitFile, checks: &mut Checks) -> Option<Fuel> {
    for (key, given) in [
        ("max_generating_torque", u.max_generating_torque.is_some()),
        ("max_generating_power", u.max_generating_power.is_some()),
        ("motoring_efficiency", u.motoring_efficiency.is_some()),
        ("generating_efficiency", u.generating_efficiency.is_some()),
        (
            "motoring_efficiency_table",
            u.motoring_efficiency_table.is_some(),
        ),
        (
            "generating_efficiency_table",
            u.generating_efficiency_table.is_some(),
        ),
    ] {
        if given {
            checks.push(
                format!("{path}.{key}"),
                "applies to kind = \"motor_generator\" only (this unit is an engine)",
            );
        }
    }
    let f = u.fuel.as_ref()?;
    let fp = format!("{path}.fuel");
    checks.positive(&format!("{fp}.lower_heating_value"), f.lower_heating_value);
    if let Some(m) = f.max_mass_flow {
        checks.positive(&format!("{fp}.max_mass_flow"), m);
    }
    let thermal_efficiency = Efficiency::build(
        &fp,
        "thermal_efficiency",
        f.thermal_efficiency,
        f.thermal_efficiency_table.as_ref(),
        None,
        checks,
    );
    Some(Fuel {
        lower_heating_value: f.lower_heating_value,
        max_mass_flow: f.max_mass_flow,
        thermal_efficiency,
    })
}

/// Checks the motor-generator keys of a unit and builds them.
fn motor_generator(
    path: &str,
    u: &DriveUnitFile,
    max_torque: f64,
    checks: &mut Checks,
) -> MotorGenerator {
    if u.fuel.is_some() {
        checks.push(
            format!("{path}.fuel"),
            "applies to kind = \"engine\" only (this unit is a motor_generator)",
        );
    }
    let max_generating_torque = u.max_generating_torque.unwrap_or(max_torque);
    let max_generating_power = u.max_generating_power.unwrap_or(u.max_power);
    checks.non_negative(
        &format!("{path}.max_generating_torque"),
        max_generating_torque,
    );
    checks.non_negative(
        &format!("{path}.max_generating_power"),
        max_generating_power,
    );
    let efficiency =
        |key: &str, constant, table: &Option<EfficiencyMapFile>, checks: &mut Checks| {
            Efficiency::build(path, key, constant, table.as_ref(), None, checks)
        };
    MotorGenerator {
        max_generating_torque,
        max_generating_power,
        motoring_efficiency: efficiency(
            "motoring_efficiency",
            u.motoring_efficiency,
            &u.motoring_efficiency_table,
            checks,
        ),
        generating_efficiency: efficiency(
            "generating_efficiency",
            u.generating_efficiency,
            &u.generating_efficiency_table,
            checks,
        ),
    }
}

impl Differential {
    /// Checks a `differential` table and builds it.
    fn build(path: &str, d: &DifferentialFile, checks: &mut Checks) -> Self {
        checks.non_negative(&format!("{path}.preload"), d.preload);
        checks.non_negative(&format!("{path}.locking"), d.locking);
        checks.non_negative(&format!("{path}.coupling_damping"), d.coupling_damping);
        Self {
            kind: d.kind,
            preload: d.preload,
            locking: d.locking,
            coupling_damping: d.coupling_damping,
        }
    }
}
