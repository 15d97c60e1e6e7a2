//! Steady-state stability of the full nonlinear vehicle: trim at a steady
//! cornering condition, numerical linearisation about it, eigenvalues and
//! modes named by participation, and stability maps over two parameters.
//!
//! It owns the trim solver ([`trim`]) on the shared equilibrium solver
//! ([`solve`], also used by [`crate::quasi_static`]), the linearisation
//! ([`linear`]) and the map file ([`map`]); it uses the model's derivative unchanged and does not
//! integrate in time. All quantities SI (eigenvalues in 1/s).

pub mod linear;
pub mod map;
pub mod solve;
pub mod trim;

use nalgebra::Complex;
use serde::Serialize;

use crate::model::{VX, YAW_RATE};
use crate::params::Vehicle;

pub use linear::{
    LINEAR_STATES, StateGroup, default_relative_step, eigenvalues, participation, state_matrix,
};
pub use map::{
    CONDITION_ORDER, FixedCondition, MapAxis, MapError, MapPoint, MapProvenance, StabilityMap,
    read_map, write_map,
};
pub use solve::{derivative_scale, newton, typical_unknown};
pub use trim::{Trim, TrimSettings, TrimTarget, find_trim, retrim};

/// An eigenvalue is unstable when its real part exceeds this, 1/s.
///
/// Chosen well above the noise of the central-difference Jacobian (about
/// 1e-6 1/s on the demo vehicles) and well below any physically relevant
/// divergence (doubling time ≈ 690 s). Common practice, no source.
pub const UNSTABLE_REAL_PART: f64 = 1e-3;

/// A mode is named after its two leading state groups ("tyre lag + wheel
/// spin") when the second holds at least this participation share, 1.
pub const COUPLED_SHARE: f64 = 0.3;

/// Errors of the stability analysis.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum StabilityError {
    /// A target quantity is out of range.
    #[error("{name} = {value} is not valid: expected {expected}")]
    InvalidTarget {
        /// Quantity name.
        name: &'static str,
        /// Value given (SI).
        value: f64,
        /// What is allowed.
        expected: &'static str,
    },
    /// The torque split sends no torque to an axle with a drive unit.
    #[error("front share {front_share} sends no torque to a driven axle")]
    NoDrive {
        /// Front share given, 1.
        front_share: f64,
    },
    /// No steady state exists (or the solver found none) at the requested lateral acceleration.
    #[error("{}", no_trim_message(*requested_lat_accel, *long_accel, *largest_lat_accel))]
    NoTrim {
        /// Requested lateral acceleration, m/s².
        requested_lat_accel: f64,
        /// Requested longitudinal acceleration, m/s².
        long_accel: f64,
        /// Largest lateral acceleration reached by continuation, m/s²; `None`
        /// when not even straight running at the requested ax could be trimmed.
        largest_lat_accel: Option<f64>,
    },
}

fn no_trim_message(requested: f64, ax: f64, largest: Option<f64>) -> String {
    let g = crate::params::GRAVITY;
    match largest {
        Some(l) => format!(
            "no steady state at lateral acceleration {:.3} g (ax {:.3} g): the largest reachable is {:.3} g",
            requested / g,
            ax / g,
            l / g
        ),
        None => format!(
            "no steady state even at zero lateral acceleration with ax {:.3} g (drive torque or power, or brake capacity, insufficient; or beyond the grip)",
            ax / g
        ),
    }
}

impl StabilityError {
    /// True when the error is the caller's input (not a property of the vehicle).
    pub fn is_bad_input(&self) -> bool {
        !matches!(self, StabilityError::NoTrim { .. })
    }
}

impl crate::error::Classify for StabilityError {
    /// No trim is a property of the vehicle (the analysis failed); an
    /// invalid target or a split that drives no axle is bad input.
    fn kind(&self) -> crate::error::ErrorKind {
        match self {
            StabilityError::NoTrim { .. } => crate::error::ErrorKind::Failed,
            _ => crate::error::ErrorKind::BadInput,
        }
    }
}

/// One eigenvalue, 1/s.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct Eigenvalue {
    /// Real part, 1/s.
    pub re: f64,
    /// Imaginary part, rad/s.
    pub im: f64,
}

/// One mode: a real eigenvalue or a complex-conjugate pair (listed once, im > 0).
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Mode {
    /// Name of the dominant state group, e.g. "yaw/sideslip", or of the two
    /// leading groups joined by " + " when the second has ≥ [`COUPLED_SHARE`].
    pub name: String,
    /// The eigenvalue (for a pair the one with im > 0), 1/s.
    pub eigenvalue: Eigenvalue,
    /// True for a complex pair.
    pub oscillatory: bool,
    /// Undamped natural frequency |λ|/2π, Hz; `None` for a real mode.
    pub frequency_hz: Option<f64>,
    /// Damping ratio −Re λ/|λ|, 1; `None` for a real mode.
    pub damping_ratio: Option<f64>,
    /// Time constant −1/Re λ, s (negative = divergent).
    pub time_constant_s: f64,
    /// Participation share of each state group (sums to 1), in [`StateGroup::ALL`] order.
    pub participation: Vec<(String, f64)>,
}

/// The yaw/sideslip mode as a second-order system s² + 2ζωₙs + ωₙ² with the
/// two eigenvalues most made of vy and yaw rate.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct YawMode {
    /// The two eigenvalues, 1/s.
    pub eigenvalues: [Eigenvalue; 2],
    /// ωₙ/2π with ωₙ² = λ₁λ₂, Hz; NaN when λ₁λ₂ < 0 (a saddle: divergent).
    pub frequency_hz: f64,
    /// ζ = −(λ₁ + λ₂)/(2ωₙ), 1 (> 1 for two real roots); NaN when λ₁λ₂ < 0.
    pub damping_ratio: f64,
}

/// Everything the stability analysis gives at one operating point.
#[derive(Debug, Clone)]
pub struct StabilityReport {
    /// The trim.
    pub trim: Trim,
    /// State matrix (order [`LINEAR_STATES`]).
    pub state_matrix: nalgebra::DMatrix<f64>,
    /// All 20 eigenvalues, sorted by real part descending.
    pub eigenvalues: Vec<Eigenvalue>,
    /// Modes (pairs once), in eigenvalue order.
    pub modes: Vec<Mode>,
    /// The yaw/sideslip mode, `None` if no two modes could be found.
    pub yaw_mode: Option<YawMode>,
    /// Largest real part, 1/s.
    pub max_real_part: f64,
    /// True when every real part is ≤ [`UNSTABLE_REAL_PART`].
    pub stable: bool,
    /// Local understeer gradient d(δ_sw/ratio)/d(ay) − L/V², rad/(m/s²)
    /// (ISO 4138 / SAE J670 definition at constant speed); `None` when the
    /// neighbouring trims failed.
    pub understeer_gradient: Option<f64>,
}

impl StabilityReport {
    /// Understeer gradient in deg/g.
    pub fn understeer_gradient_deg_per_g(&self) -> Option<f64> {
        self.understeer_gradient
            .map(|k| k.to_degrees() * crate::params::GRAVITY)
    }
}

/// Step in ay for the understeer-gradient finite difference, m/s².
pub const UNDERSTEER_STEP: f64 = 0.1;

/// Trims, linearises and analyses one operating point.
pub fn analyse(
    vehicle: &Vehicle,
    target: &TrimTarget,
    settings: &TrimSettings,
) -> Result<StabilityReport, StabilityError> {
    let trim = find_trim(vehicle, target, settings)?;
    Ok(analyse_trim(vehicle, trim, settings))
}

/// Linearises and analyses a trim already found.
pub fn analyse_trim(vehicle: &Vehicle, trim: Trim, settings: &TrimSettings) -> StabilityReport {
    let a = state_matrix(
        vehicle,
        &trim.state,
        &trim.commands,
        default_relative_step(),
    );
    let ev = eigenvalues(&a);
    let modes = modes(&a, &ev);
    let yaw_mode = yaw_mode(&modes);
    let max_real_part = ev.iter().map(|l| l.re).fold(f64::NEG_INFINITY, f64::max);
    let stable = ev
        .iter()
        .all(|l| l.re.is_finite() && l.re <= UNSTABLE_REAL_PART);
    let understeer_gradient = understeer_gradient(vehicle, &trim, settings);
    StabilityReport {
        trim,
        state_matrix: a,
        eigenvalues: ev
            .iter()
            .map(|l| Eigenvalue { re: l.re, im: l.im })
            .collect(),
        modes,
        yaw_mode,
        max_real_part,
        stable,
        understeer_gradient,
    }
}

fn group_shares(p: &[f64]) -> Vec<(StateGroup, f64)> {
    StateGroup::ALL
        .iter()
        .map(|&g| {
            let share = LINEAR_STATES
                .iter()
                .zip(p)
                .filter(|(i, _)| StateGroup::of_state(**i) == g)
                .map(|(_, v)| v)
                .sum();
            (g, share)
        })
        .collect()
}

/// Builds the mode list: pairs once (im > 0), each named by its dominant group.
fn modes(a: &nalgebra::DMatrix<f64>, ev: &[Complex<f64>]) -> Vec<Mode> {
    let mut out = Vec::new();
    for &l in ev {
        let pair_tol = 1e-9 * (1.0 + l.norm());
        if l.im < -pair_tol {
            continue; // the conjugate is listed
        }
        let oscillatory = l.im > pair_tol;
        let p = participation(a, l);
        let shares = group_shares(&p);
        let mut ranked = shares.clone();
        ranked.sort_by(|p, q| q.1.total_cmp(&p.1));
        let name = if ranked[1].1 >= COUPLED_SHARE {
            format!("{} + {}", ranked[0].0.name(), ranked[1].0.name())
        } else {
            ranked[0].0.name().to_string()
        };
        let mag = l.norm();
        out.push(Mode {
            name,
            eigenvalue: Eigenvalue {
                re: l.re,
                im: if oscillatory { l.im } else { 0.0 },
            },
            oscillatory,
            frequency_hz: oscillatory.then(|| mag / (2.0 * std::f64::consts::PI)),
            damping_ratio: oscillatory.then(|| -l.re / mag),
            time_constant_s: -1.0 / l.re,
            participation: shares
                .iter()
                .map(|(g, s)| (g.name().to_string(), *s))
                .collect(),
        });
    }
    out
}

fn yaw_share(m: &Mode) -> f64 {
    m.participation
        .iter()
        .find(|(n, _)| n == StateGroup::YawSideslip.name())
        .map_or(0.0, |(_, s)| *s)
}

/// The yaw/sideslip mode, chosen by participation of vy and yaw rate: either
/// the complex pair with the largest share (score 2·share) or the two real
/// modes with the largest shares (score s₁ + s₂, only when s₂ ≥
/// [`COUPLED_SHARE`]), whichever scores higher. Near the critical speed of
/// an oversteering car the divergent real root can merge with the
/// longitudinal root into a slow complex pair; this rule then reports that pair.
fn yaw_mode(modes: &[Mode]) -> Option<YawMode> {
    let pair = modes
        .iter()
        .filter(|m| m.oscillatory)
        .max_by(|p, q| yaw_share(p).total_cmp(&yaw_share(q)))
        .map(|m| (2.0 * yaw_share(m), m));
    let mut real: Vec<&Mode> = modes.iter().filter(|m| !m.oscillatory).collect();
    real.sort_by(|p, q| yaw_share(q).total_cmp(&yaw_share(p)));
    let two_real = (real.len() >= 2 && yaw_share(real[1]) >= COUPLED_SHARE)
        .then(|| (yaw_share(real[0]) + yaw_share(real[1]), real[0], real[1]));
    let (l1, l2) = match (pair, two_real) {
        (Some((ps, m)), rs) if rs.is_none_or(|(s, _, _)| ps >= s) => {
            let l = Complex::new(m.eigenvalue.re, m.eigenvalue.im);
            (l, l.conj())
        }
        (_, Some((_, a, b))) => (
            Complex::new(a.eigenvalue.re, 0.0),
            Complex::new(b.eigenvalue.re, 0.0),
        ),
        _ => return None,
    };
    let product = (l1 * l2).re;
    let sum = (l1 + l2).re;
    let (frequency_hz, damping_ratio) = if product > 0.0 {
        let wn = product.sqrt();
        (wn / (2.0 * std::f64::consts::PI), -sum / (2.0 * wn))
    } else {
        (f64::NAN, f64::NAN)
    };
    Some(YawMode {
        eigenvalues: [
            Eigenvalue {
                re: l1.re,
                im: l1.im,
            },
            Eigenvalue {
                re: l2.re,
                im: l2.im,
            },
        ],
        frequency_hz,
        damping_ratio,
    })
}

/// Local understeer gradient by a finite difference of neighbouring trims at
/// the same speed: K = d(δ_sw/ratio)/d(ay) − L/V² (ISO 4138, SAE J670
/// definition: steering-wheel angle over overall ratio minus the Ackermann
/// gradient; at constant speed L/R = L·ay/V²). Central when both neighbours
/// trim, one-sided otherwise. rad/(m/s²).
fn understeer_gradient(vehicle: &Vehicle, trim: &Trim, settings: &TrimSettings) -> Option<f64> {
    let ay = trim.target.lat_accel;
    let up = retrim(vehicle, trim, ay + UNDERSTEER_STEP, settings);
    let down = retrim(vehicle, trim, ay - UNDERSTEER_STEP, settings);
    let delta = |t: &Trim| t.road_wheel_angle(vehicle);
    let slope = match (&up, &down) {
        (Some(u), Some(d)) => (delta(u) - delta(d)) / (2.0 * UNDERSTEER_STEP),
        (Some(u), None) => (delta(u) - delta(trim)) / UNDERSTEER_STEP,
        (None, Some(d)) => (delta(trim) - delta(d)) / UNDERSTEER_STEP,
        (None, None) => return None,
    };
    let v = trim.state[VX];
    Some(slope - vehicle.chassis.wheelbase / (v * v))
}

/// Convenience: yaw rate and sideslip of a trim, (rad/s, rad).
pub fn yaw_rate_and_sideslip(trim: &Trim) -> (f64, f64) {
    (trim.state[YAW_RATE], trim.sideslip())
}
