//! The energy store: how much power it may give or take now, and how its
//! stored energy changes with the power at its terminals.

use crate::params::EnergyStore;

/// Power the store may give and take at its terminals now, W (both ≥ 0).
#[derive(Debug, Clone, Copy, Default, PartialEq)]
pub struct StoreLimits {
    /// Largest discharging power, W.
    pub discharge: f64,
    /// Largest charging power, W.
    pub charge: f64,
}

/// State of charge for stored energy `energy` (J), 1.
#[inline]
pub fn state_of_charge(s: &EnergyStore, energy: f64) -> f64 {
    energy / s.usable_energy
}

/// Power limits at stored energy `energy` (J): the rated charge and
/// discharge powers, each faded linearly to zero over the last `limit_fade`
/// of state of charge before its limit, so that an empty store gives no
/// power and a full one takes none, and the state of charge approaches a
/// limit smoothly instead of switching at it (no chatter; common practice in
/// battery management: power derating near the state-of-charge limits).
#[inline]
pub fn store_limits(s: &EnergyStore, energy: f64) -> StoreLimits {
    let soc = state_of_charge(s, energy);
    let low = ((soc - s.min_soc) / s.limit_fade).clamp(0.0, 1.0);
    let high = ((s.max_soc - soc) / s.limit_fade).clamp(0.0, 1.0);
    StoreLimits {
        discharge: s.max_discharge_power * low,
        charge: s.max_charge_power * high,
    }
}

/// Rate of change of the stored energy, W, for terminal power `terminal` (W,
/// positive discharging): −P/η_dis while discharging, −P·η_ch while charging
/// (common practice: the store loses more than it gives and keeps less than
/// it takes).
#[inline]
pub fn energy_rate(s: &EnergyStore, terminal: f64) -> f64 {
    if terminal >= 0.0 {
        -terminal / s.discharge_efficiency
    } else {
        -terminal * s.charge_efficiency
    }
}
