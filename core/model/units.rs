//! Drive-unit physics: the torque an engine or a motor-generator can give
//! (or, generating, take) at the current speed, and the power and fuel flows
//! that go with a torque. Shaft quantities are at the unit, wheel quantities
//! are the sum over the two wheels of its axle.
//!
//! Gearing (common practice): ω_unit = i·ω_wheel; driving, T_wheel =
//! η_d·i·T_shaft; generating, the loss runs the other way, T_shaft =
//! η_d·T_wheel/i.

use crate::params::{DriveUnit, Efficiency, Fuel, Machine, Map, MotorGenerator};

/// Largest shaft torque T in [0, `cap`] such that T·|ω| ≤ P·η(ω, T): the
/// torque an input power `power` (W) sustains through the efficiency
/// (`P_shaft = η·P_in`, e.g. fuel power through the thermal efficiency, or
/// electrical power through a motor's efficiency), N·m.
///
/// With a map: the cap itself when it satisfies the limit (one lookup, the
/// usual case); otherwise, since η is linear in T between torque breakpoints
/// at a fixed speed (bilinear interpolation), each piece is solved in closed
/// form, T = P·a/(|ω| − P·s) for η = a + s·T, and the first crossing is taken.
#[inline]
pub fn torque_from_input_power(eff: &Efficiency, speed: f64, power: f64, cap: f64) -> f64 {
    if power <= 0.0 {
        return 0.0;
    }
    let w = speed.abs();
    if w == 0.0 {
        return cap;
    }
    match eff {
        Efficiency::Constant(e) => (power * e / w).min(cap),
        Efficiency::Map(_) if cap * w <= power * eff.value(w, cap) => cap,
        Efficiency::Map(m) => first_crossing(m, w, cap, |a, s| {
            let denominator = w - power * s;
            (denominator > 0.0).then(|| power * a / denominator)
        }),
    }
}

/// Largest shaft torque T in [0, `cap`] such that T·|ω|·η(ω, T) ≤ P: the
/// torque whose shaft power, through the efficiency, gives at most `power`
/// (W) out (a generator feeding the store), N·m.
///
/// With a map: the cap when it satisfies the limit; otherwise piecewise,
/// |ω|·T·(a + s·T) = P, solved as T = 2P/(a|ω| + √(a²ω² + 4s|ω|P)) (the
/// smaller positive root, written to avoid cancellation).
#[inline]
pub fn torque_for_output_power(eff: &Efficiency, speed: f64, power: f64, cap: f64) -> f64 {
    if power <= 0.0 {
        return 0.0;
    }
    let w = speed.abs();
    if w == 0.0 {
        return cap;
    }
    match eff {
        Efficiency::Constant(e) => (power / (e * w)).min(cap),
        Efficiency::Map(_) if cap * w * eff.value(w, cap) <= power => cap,
        Efficiency::Map(m) => first_crossing(m, w, cap, |a, s| {
            let discriminant = a * a * w * w + 4.0 * s * w * power;
            let denominator = a * w + discriminant.max(0.0).sqrt();
            (discriminant >= 0.0 && denominator > 0.0).then(|| 2.0 * power / denominator)
        }),
    }
}

/// Walks the torque pieces of `map` at speed `speed` from T = 0 upwards and
/// returns the first root `root(a, s)` of the piece η = a + s·T that lies in
/// its piece, capped at `cap`. Below the first and above the last breakpoint
/// η is constant (the map is clamped).
#[inline]
fn first_crossing(map: &Map, speed: f64, cap: f64, root: impl Fn(f64, f64) -> Option<f64>) -> f64 {
    let slice = map.slice_at(speed);
    let mut lo = 0.0;
    let mut prev = (slice.breakpoint(0), slice.value(0));
    // Constant piece below the first breakpoint.
    if let Some(t) = root(prev.1, 0.0) {
        if t <= prev.0 {
            return t.min(cap);
        }
    }
    for j in 1..slice.len() {
        if lo >= cap {
            return cap;
        }
        let next = (slice.breakpoint(j), slice.value(j));
        let s = (next.1 - prev.1) / (next.0 - prev.0);
        if let Some(t) = root(prev.1 - s * prev.0, s) {
            if t >= prev.0 && t <= next.0 {
                return t.min(cap);
            }
        }
        lo = next.0;
        prev = next;
    }
    // Constant piece above the last breakpoint.
    root(prev.1, 0.0).map_or(cap, |t| t.max(lo).min(cap))
}

/// Shaft torque an engine can give at shaft speed `speed` (rad/s), N·m:
/// min(T_max(ω), P_max/|ω|, T_fuel) where T_fuel carries the fuel-flow power
/// cap ṁ_max·LHV·η_b (the engine's power from its fuel, P = ṁ·LHV·η_b;
/// Heywood, *Internal Combustion Engine Fundamentals*, ch. 2, brake
/// thermal efficiency, from memory).
#[inline]
pub fn engine_available_torque(u: &DriveUnit, fuel: Option<&Fuel>, speed: f64) -> f64 {
    let torque = u.max_torque.value(speed).min(u.max_power / speed.abs());
    match fuel {
        Some(Fuel {
            max_mass_flow: Some(flow),
            lower_heating_value,
            thermal_efficiency,
        }) => torque_from_input_power(
            thermal_efficiency,
            speed,
            flow * lower_heating_value,
            torque,
        ),
        _ => torque,
    }
}

/// Fuel mass flow of an engine giving shaft torque `torque` (N·m) at shaft
/// speed `speed` (rad/s), kg/s: ṁ = P/(LHV·η_b(ω, T)) for shaft power
/// P = T·ω > 0, none otherwise (Heywood ch. 2, from memory).
#[inline]
pub fn fuel_mass_flow(fuel: &Fuel, speed: f64, torque: f64) -> f64 {
    let power = torque * speed;
    if power > 0.0 {
        power / (fuel.lower_heating_value * fuel.thermal_efficiency.value(speed, torque))
    } else {
        0.0
    }
}

/// Shaft torque a motor-generator can give while motoring at shaft speed
/// `speed` (rad/s) with `electrical` W available at its terminals, N·m:
/// min(T_max(ω), P_max/|ω|, T_e) with T_e·|ω| = η_m(ω, T_e)·P_e.
#[inline]
pub fn motor_available_torque(
    u: &DriveUnit,
    mg: &MotorGenerator,
    speed: f64,
    electrical: f64,
) -> f64 {
    let torque = u.max_torque.value(speed).min(u.max_power / speed.abs());
    torque_from_input_power(&mg.motoring_efficiency, speed, electrical, torque)
}

/// Shaft torque magnitude a motor-generator can take while generating at
/// shaft speed `speed` (rad/s) when the terminals may accept `electrical`
/// W, N·m: min(T_gen, P_gen/|ω|, T_e) with T_e·|ω|·η_g(ω, T_e) = P_e.
#[inline]
pub fn generator_available_torque(mg: &MotorGenerator, speed: f64, electrical: f64) -> f64 {
    let torque = mg
        .max_generating_torque
        .min(mg.max_generating_power / speed.abs());
    torque_for_output_power(&mg.generating_efficiency, speed, electrical, torque)
}

/// Shaft torque of a unit giving `wheel_torque` (N·m, both wheels, negative
/// generating) through its gearing, N·m.
#[inline]
pub fn shaft_torque(u: &DriveUnit, wheel_torque: f64) -> f64 {
    if wheel_torque >= 0.0 {
        wheel_torque / (u.efficiency * u.ratio)
    } else {
        wheel_torque * u.efficiency / u.ratio
    }
}

/// Electrical power at a motor-generator's terminals, W (positive drawn from
/// the store): P_m/η_m(ω, T) when the shaft power P_m = T·ω is positive
/// (motoring), P_m·η_g(ω, T) when negative (generating) (common practice).
#[inline]
pub fn electrical_power(mg: &MotorGenerator, speed: f64, torque: f64) -> f64 {
    let mechanical = torque * speed;
    if mechanical >= 0.0 {
        mechanical / mg.motoring_efficiency.value(speed, torque)
    } else {
        mechanical * mg.generating_efficiency.value(speed, torque)
    }
}

/// The motor-generator of a unit, if it is one.
#[inline]
pub fn motor_generator(u: &DriveUnit) -> Option<&MotorGenerator> {
    match &u.machine {
        Machine::MotorGenerator(mg) => Some(mg),
        Machine::Engine(_) => None,
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn map() -> Efficiency {
        Efficiency::Map(Map {
            x: vec![0.0, 1000.0],
            y: vec![20.0, 100.0, 200.0],
            z: vec![0.80, 0.90, 0.85, 0.70, 0.95, 0.80],
        })
    }

    /// The closed-form pieces solve the defining equations: T·ω = P·η(ω, T)
    /// (input) and T·ω·η(ω, T) = P (output), checked by substitution with the
    /// map's own bilinear value, and the constant-efficiency forms P·η/ω, P/(η·ω).
    #[test]
    fn torque_for_power_solves_its_equation() {
        let eff = map();
        for speed in [50.0, 300.0, 700.0, 1500.0] {
            for power in [1e3, 2e4, 6e4, 1.2e5] {
                let t = torque_from_input_power(&eff, speed, power, f64::INFINITY);
                let residual = t * speed - power * eff.value(speed, t);
                assert!(
                    residual.abs() < 1e-9 * power,
                    "in {speed} {power}: {t} ({residual})"
                );
                let t = torque_for_output_power(&eff, speed, power, f64::INFINITY);
                let residual = t * speed * eff.value(speed, t) - power;
                assert!(
                    residual.abs() < 1e-9 * power,
                    "out {speed} {power}: {t} ({residual})"
                );
            }
        }
        let c = Efficiency::Constant(0.9);
        assert!((torque_from_input_power(&c, 200.0, 1e4, 1e9) - 45.0).abs() < 1e-12);
        assert!((torque_for_output_power(&c, 200.0, 9e3, 1e9) - 50.0).abs() < 1e-12);
        assert_eq!(torque_from_input_power(&c, 200.0, 1e4, 30.0), 30.0);
        assert_eq!(torque_from_input_power(&c, 0.0, 1e4, 30.0), 30.0);
        assert_eq!(torque_for_output_power(&eff, 0.0, 0.0, 30.0), 0.0);
        // A cap that meets the limit is returned as it is.
        assert_eq!(torque_from_input_power(&eff, 700.0, 1.2e5, 30.0), 30.0);
        assert_eq!(torque_for_output_power(&eff, 700.0, 1.2e5, 30.0), 30.0);
    }
}
