//! The `[drive.store]` group: the energy store that feeds and takes the
//! motor-generators' electrical power.

use serde::{Deserialize, Serialize};

use super::checks::Checks;

/// The energy store, as in the file.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct StoreFile {
    /// Usable energy between state of charge 0 and 1, J (1 kWh = 3.6e6 J).
    pub usable_energy: f64,
    /// State of charge at the start of a run, 1 (between `min_soc` and `max_soc`).
    pub initial_soc: f64,
    /// Lowest state of charge the store may be drawn to, 1. Default 0.
    #[serde(default)]
    pub min_soc: f64,
    /// Highest state of charge the store may be charged to, 1. Default 1.
    #[serde(default = "one")]
    pub max_soc: f64,
    /// Largest power the store takes at its terminals while charging, W.
    pub max_charge_power: f64,
    /// Largest power the store gives at its terminals while discharging, W.
    pub max_discharge_power: f64,
    /// Charging efficiency, terminals → stored energy, 1 (0 < η ≤ 1). Default 1.
    #[serde(default = "one")]
    pub charge_efficiency: f64,
    /// Discharging efficiency, stored energy → terminals, 1 (0 < η ≤ 1). Default 1.
    #[serde(default = "one")]
    pub discharge_efficiency: f64,
    /// Band of state of charge next to each limit over which the allowed
    /// power fades linearly to zero, 1. Default 0.02.
    #[serde(default = "default_fade")]
    pub limit_fade: f64,
}

fn one() -> f64 {
    1.0
}

fn default_fade() -> f64 {
    0.02
}

/// The checked energy store. SI units.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct EnergyStore {
    /// Usable energy E_u between state of charge 0 and 1, J (> 0).
    pub usable_energy: f64,
    /// State of charge at the start of a run, 1.
    pub initial_soc: f64,
    /// Lowest state of charge, 1 (0 ≤ min < max ≤ 1).
    pub min_soc: f64,
    /// Highest state of charge, 1.
    pub max_soc: f64,
    /// Largest charging power at the terminals, W (≥ 0).
    pub max_charge_power: f64,
    /// Largest discharging power at the terminals, W (≥ 0).
    pub max_discharge_power: f64,
    /// Charging efficiency terminals → store, 1 (0 < η ≤ 1).
    pub charge_efficiency: f64,
    /// Discharging efficiency store → terminals, 1 (0 < η ≤ 1).
    pub discharge_efficiency: f64,
    /// State-of-charge band next to each limit over which the allowed power fades to zero, 1 (> 0).
    pub limit_fade: f64,
}

impl EnergyStore {
    /// Checks `[drive.store]` and builds the store.
    pub(crate) fn build(s: &StoreFile, checks: &mut Checks) -> Self {
        let p = "drive.store";
        checks.positive(&format!("{p}.usable_energy"), s.usable_energy);
        checks.within(&format!("{p}.min_soc"), s.min_soc, 0.0, 1.0);
        checks.within(&format!("{p}.max_soc"), s.max_soc, 0.0, 1.0);
        if s.min_soc >= s.max_soc {
            checks.push(
                format!("{p}.max_soc"),
                format!("must exceed min_soc = {}, got {}", s.min_soc, s.max_soc),
            );
        } else {
            checks.within(
                &format!("{p}.initial_soc"),
                s.initial_soc,
                s.min_soc,
                s.max_soc,
            );
            let half = 0.5 * (s.max_soc - s.min_soc);
            if !(s.limit_fade.is_finite() && s.limit_fade > 0.0 && s.limit_fade <= half) {
                checks.push(
                    format!("{p}.limit_fade"),
                    format!(
                        "must lie in (0, {half}] (half the usable band of state of charge), got {}",
                        s.limit_fade
                    ),
                );
            }
        }
        checks.non_negative(&format!("{p}.max_charge_power"), s.max_charge_power);
        checks.non_negative(&format!("{p}.max_discharge_power"), s.max_discharge_power);
        checks.fraction(&format!("{p}.charge_efficiency"), s.charge_efficiency);
        checks.fraction(&format!("{p}.discharge_efficiency"), s.discharge_efficiency);
        Self {
            usable_energy: s.usable_energy,
            initial_soc: s.initial_soc,
            min_soc: s.min_soc,
            max_soc: s.max_soc,
            max_charge_power: s.max_charge_power,
            max_discharge_power: s.max_discharge_power,
            charge_efficiency: s.charge_efficiency,
            discharge_efficiency: s.discharge_efficiency,
            limit_fade: s.limit_fade,
        }
    }

    /// Stored energy at the start of a run, J: initial state of charge × usable energy.
    pub fn initial_energy(&self) -> f64 {
        self.initial_soc * self.usable_energy
    }
}
