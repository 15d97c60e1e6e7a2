//! The g-g-V envelope: at a forward speed, the boundary of the quasi-steady
//! accelerations (a_x, a_y) the vehicle can hold with zero yaw moment (common
//! practice in lap-time simulation).
//!
//! Each boundary point lies on a ray (a_x, a_y) = ρ·(cos θ, sin θ) in the
//! acceleration plane (θ = 0 full acceleration, 90° left turn, 180° braking,
//! 270° right turn). Along the ray the trim of
//! [`super::equilibrium`] — [`Lateral::TrimAtLatAccel`] with
//! [`Longitudinal::Accel`]: zero yaw moment, v̇x = a_x, body-axis a_y — is
//! followed by continuation in ρ until it no longer exists; the last ρ solved
//! is the boundary to within [`EnvelopeSettings::resolution`]. Everything the
//! model holds acts: load transfer through roll and pitch, aero at this speed,
//! combined slip, the drive units' torque and power limits with the torque
//! split, the brake system's torque with its bias. Drive torque is sent when
//! the car needs positive force, the brakes when it needs negative force
//! (drag alone may decelerate it more than a small a_x < 0 asks).
//!
//! a_x here is v̇x at constant yaw rate, as in `yawdyn stability`; a_y is the
//! body-axis lateral acceleration, r = a_y/V.

use std::f64::consts::TAU;

use super::equilibrium::{
    Condition, Lateral, Longitudinal, MarchSettings, Point, Problem, SolveSettings, march_to_limit,
};
use super::{QuasiStaticError, check_grid};
use crate::params::{GRAVITY, Vehicle};

/// Share of an axle's available torque, or of the brake torque, above which
/// a boundary point counts as limited by it (the boundary is found to within
/// [`EnvelopeSettings::resolution`], so the last point is a little short of
/// the cap), 1.
pub const CAP_SHARE: f64 = 0.995;

/// Settings of the envelope.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct EnvelopeSettings {
    /// Newton settings of every point.
    pub solve: SolveSettings,
    /// Number of ray directions, evenly spaced from θ = 0. Default 72 (5°).
    pub directions: usize,
    /// Resolution of the boundary along each ray, m/s². Default 0.01.
    pub resolution: f64,
    /// First (and largest) continuation step along a ray, m/s². Default 2.0.
    pub step: f64,
    /// Largest |a| followed, m/s². Default 6 g.
    pub ceiling: f64,
}

impl Default for EnvelopeSettings {
    fn default() -> Self {
        Self {
            solve: SolveSettings::default(),
            directions: 72,
            resolution: 0.01,
            step: 2.0,
            ceiling: 6.0 * GRAVITY,
        }
    }
}

/// What bounds a boundary point.
#[derive(Debug, Clone, Copy, PartialEq, Eq, serde::Serialize)]
#[serde(rename_all = "snake_case")]
pub enum LimitKind {
    /// The tyres: the trim folds (no more force at zero yaw moment).
    Grip,
    /// A drive unit's torque or power at this speed.
    Drive,
    /// The brake system's torque.
    Brake,
    /// The search ceiling [`EnvelopeSettings::ceiling`] (no limit found below it).
    Ceiling,
    /// Not even a small step along the ray could be solved.
    Unsolved,
}

impl LimitKind {
    /// Code stored in files: 0 unsolved, 1 grip, 2 drive, 3 brake, 4 ceiling.
    pub fn code(self) -> u8 {
        match self {
            Self::Unsolved => 0,
            Self::Grip => 1,
            Self::Drive => 2,
            Self::Brake => 3,
            Self::Ceiling => 4,
        }
    }
}

/// One boundary point.
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize)]
pub struct EnvelopePoint {
    /// Ray direction θ from +a_x towards +a_y, rad.
    pub direction: f64,
    /// v̇x at the boundary, m/s².
    pub long_accel: f64,
    /// Lateral acceleration at the boundary, m/s².
    pub lat_accel: f64,
    /// Road-wheel steer, rad.
    pub steer: f64,
    /// Sideslip, rad.
    pub sideslip: f64,
    /// Delivered drive torque at the wheels, N·m.
    pub drive_torque: f64,
    /// Brake torque, N·m.
    pub brake_torque: f64,
    /// What bounds it.
    pub limit: LimitKind,
}

/// The envelope at one speed.
#[derive(Debug, Clone, PartialEq)]
pub struct Envelope {
    /// Forward speed, m/s.
    pub speed: f64,
    /// Front share of the drive torque, 1.
    pub front_share: f64,
    /// One boundary point per direction, in direction order.
    pub points: Vec<EnvelopePoint>,
}

/// The ray directions θ_k = 2π·k/n, rad.
pub fn envelope_directions(n: usize) -> Vec<f64> {
    (0..n).map(|k| TAU * k as f64 / n as f64).collect()
}

/// Computes the envelope of `vehicle` at forward speed `speed` (m/s) with the
/// drive torque split `front_share`.
///
/// Errors: bad settings ([`QuasiStaticError::InvalidInput`]);
/// [`QuasiStaticError::NoStart`] when straight running at constant speed
/// cannot be trimmed.
///
/// ```no_run
/// # fn demo(vehicle: &yawdyn::params::Vehicle) -> Result<(), yawdyn::quasi_static::QuasiStaticError> {
/// use yawdyn::quasi_static::{EnvelopeSettings, envelope_at_speed};
/// let e = envelope_at_speed(vehicle, 30.0, vehicle.powertrain.front_share, &EnvelopeSettings::default())?;
/// let widest = e.points.iter().map(|p| p.lat_accel).fold(0.0, f64::max);
/// println!("largest lateral acceleration {widest} m/s^2");
/// # Ok(()) }
/// ```
pub fn envelope_at_speed(
    vehicle: &Vehicle,
    speed: f64,
    front_share: f64,
    settings: &EnvelopeSettings,
) -> Result<Envelope, QuasiStaticError> {
    for (name, value) in [
        ("resolution", settings.resolution),
        ("step", settings.step),
        ("ceiling", settings.ceiling),
    ] {
        if !(value.is_finite() && value > 0.0) {
            return Err(QuasiStaticError::InvalidInput {
                name,
                value,
                expected: "finite and > 0",
            });
        }
    }
    if settings.directions < 3 {
        return Err(QuasiStaticError::InvalidInput {
            name: "directions",
            value: settings.directions as f64,
            expected: "at least 3",
        });
    }
    let directions = envelope_directions(settings.directions);
    check_grid("directions", &directions)?;
    let problem = |ax: f64, ay: f64| {
        let condition = Condition {
            speed,
            front_share,
            longitudinal: Longitudinal::Accel(ax),
        };
        Problem::new(
            vehicle,
            condition,
            Lateral::TrimAtLatAccel { lat_accel: ay },
        )
    };
    // Straight running at constant speed: the common start of every ray.
    let origin_problem = problem(0.0, 0.0);
    Condition {
        speed,
        front_share,
        longitudinal: Longitudinal::Accel(0.0),
    }
    .validate(vehicle)?;
    let origin = origin_problem
        .solve(&origin_problem.straight_seed(), &settings.solve)
        .ok_or_else(|| QuasiStaticError::NoStart {
            what: format!("constant speed {:.1} km/h", speed * 3.6),
        })?;
    let march = MarchSettings {
        max_step: settings.step,
        min_step: settings.resolution,
        growth: 1.5,
    };
    let points = directions
        .iter()
        .map(|&theta| {
            let (c, s) = (theta.cos(), theta.sin());
            let (rho, p) = march_to_limit(
                |rho, guess| problem(rho * c, rho * s).solve(guess, &settings.solve),
                0.0,
                origin.clone(),
                settings.ceiling,
                &march,
            );
            boundary_point(theta, rho, &p, settings)
        })
        .collect();
    Ok(Envelope {
        speed,
        front_share,
        points,
    })
}

/// The boundary point of direction `theta` reached at `rho` with point `p`.
fn boundary_point(theta: f64, rho: f64, p: &Point, settings: &EnvelopeSettings) -> EnvelopePoint {
    let limit = if rho <= 0.0 {
        LimitKind::Unsolved
    } else if rho >= settings.ceiling {
        LimitKind::Ceiling
    } else if p.drive_usage >= CAP_SHARE {
        LimitKind::Drive
    } else if p.brake_usage >= CAP_SHARE {
        LimitKind::Brake
    } else {
        LimitKind::Grip
    };
    EnvelopePoint {
        direction: theta,
        long_accel: p.long_accel,
        lat_accel: p.lat_accel,
        steer: p.steer,
        sideslip: p.sideslip,
        drive_torque: p.drive_torque,
        brake_torque: p.brake_torque,
        limit,
    }
}
