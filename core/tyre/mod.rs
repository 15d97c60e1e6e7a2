//! Tyre forces at the contact patch: the Pacejka Magic Formula (MF 5.2
//! coefficient set) for pure longitudinal and pure lateral slip, and their
//! combination by a friction ellipse (default) or the MF weighting functions.
//!
//! This module owns the map from given slips (slip ratio κ, slip angle α),
//! camber γ, wheel load Fz and road friction scale to the forces Fx, Fy in the
//! wheel's ISO 8855 axes (x forward, y left), and the coefficient table read
//! from the vehicle file with its plausibility check. It does not compute the
//! slips from the wheel and body velocities, apply relaxation lengths, or
//! integrate wheel spin: those live in the vehicle model. It allocates nothing
//! and does no I/O, so it can be called inside the ODE right-hand side. It
//! imports nothing from the rest of the crate: the parameter files build on
//! it, not the other way round.
//!
//! [`TyreLanes`] evaluates four tyres together in vector lanes for the
//! vehicle model's inner loop, with branch-free approximations of atan, sin,
//! cos and exp (`approx.rs`); the scalar [`TyreModel`] is the reference it is
//! tested against.
//!
//! [`inspect`] draws curves and key figures of one tyre from the same force
//! function (tyre inspection).
//!
//! Source for the equations: Pacejka, *Tire and Vehicle Dynamics* (2nd ed.
//! 2006), ch. 4; the MF 5.2 details are written from memory (see each doc
//! comment).

mod approx;
mod coefficients;
pub mod inspect;
pub mod lanes;
mod model;

pub use coefficients::{CoefficientIssue, MagicFormulaCoefficients};
pub use lanes::TyreLanes;
pub use model::{CombinedSlip, TyreForce, TyreModel};
