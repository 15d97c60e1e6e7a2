//! Parameter-sensitivity ranking: which vehicle parameters move a result.
//!
//! This module owns the perturbation plan ([`Plan`]: every numeric key of the
//! resolved vehicle file, or a chosen list, each stepped up and down by a
//! relative step), the finite-difference estimates and the ranking
//! ([`rank`]), the quantities that need no script ([`Quantity`]: derived
//! vehicle figures and stability figures at an operating point) and the
//! HDF5 file ([`write_sensitivity`]). It does not run cases itself: the
//! plan is a [`CaseList`](crate::sweep::CaseList) for the sweep engine
//! ([`crate::sweep::run_cases`]), which runs the perturbed cases in parallel
//! with the caller's case runner and hands them back in case order.
//!
//! # Method
//!
//! For a metric m (a script metric or a [`Quantity`]) at the base
//! parameters p₀ (value m₀) and each parameter p with p₀ ≠ 0, two cases run
//! with p = p₀·(1 + h) (up) and p = p₀·(1 − h) (down), every other
//! parameter held at its base value; h is the relative step (`--step`,
//! default [`DEFAULT_STEP`]). The elasticity (normalised sensitivity,
//! relative change of the metric per relative change of the parameter,
//! e = (∂m/∂p)·(p₀/m₀)) is estimated three ways from the values actually
//! run, p₊ and p₋ (finite differences: Press et al., *Numerical Recipes*,
//! 3rd ed., §5.7):
//!
//! - central: e = ((m₊ − m₋)/m₀) / ((p₊ − p₋)/p₀), error O(h²);
//! - up: e₊ = ((m₊ − m₀)/m₀) / ((p₊ − p₀)/p₀), error O(h);
//! - down: e₋ = ((m₀ − m₋)/m₀) / ((p₀ − p₋)/p₀), error O(h);
//! - asymmetry a = (e₊ − e₋)/(|e₊| + |e₋|), in [−1, 1]: 0 where the metric
//!   is locally linear in p, far from 0 where it curves within ±h (or where
//!   the metric is noisy at that step).
//!
//! The derivative ∂m/∂p ≈ (m₊ − m₋)/(p₊ − p₋) is given too, in metric units
//! per parameter unit; it stays defined when m₀ = 0 (then every elasticity
//! is NaN). Parameters are ranked by |e| (central; the one-sided estimate
//! that exists when one perturbation failed; none: at the end), ties in
//! parameter order.
//!
//! A parameter whose base value is zero has no relative step and is
//! skipped (listed with the reason); so are integer-valued keys (counts,
//! not continuous quantities). Strings, booleans and tables of values
//! (curves, maps) are not parameters. A perturbation whose case fails (the
//! run stopped, the value is out of the parameter's range, the trim was not
//! found, the metric was not reported) leaves its estimates NaN and is
//! listed; it never stops the ranking.
//!
//! The keys are those of the vehicle file (dotted paths, as `--set` takes
//! them): perturbing one holds the others as the file gives them, e.g.
//! `chassis.wheelbase` with `chassis.cg_to_front_axle` held moves the rear
//! axle only.

mod file;
mod plan;
mod quantity;
mod rank;

#[cfg(test)]
mod tests;

use thiserror::Error;

use crate::error::{Classify, ErrorKind};
use crate::results::ResultsError;

pub use file::{FORMAT_NAME, FORMAT_VERSION, FileInfo, write_sensitivity};
pub use plan::{Direction, Parameter, Plan, Skipped, vehicle_parameters};
pub use quantity::{OperatingPoint, Quantity, evaluate, quantity_case, quantity_names};
pub use rank::{CaseOutcome, Estimate, Failure, Ranking, rank};

/// Default relative step h of `--step`, 1 (1 %): small enough that the
/// central estimate's O(h²) error is about 1e-4 of the elasticity for smooth
/// metrics, large enough that a metric computed to six digits (the
/// integrator's rtol 1e-6) still changes by far more than its noise.
/// Common practice, no source.
pub const DEFAULT_STEP: f64 = 0.01;

/// Largest relative step accepted, 1.
pub const MAX_STEP: f64 = 0.5;

/// What went wrong in a sensitivity ranking (before or after the cases ran;
/// failed perturbations are results, not errors).
#[derive(Debug, Error)]
pub enum SensitivityError {
    /// The relative step is not in (0, [`MAX_STEP`]].
    #[error("--step {0}: the relative step must be greater than 0 and at most {MAX_STEP}")]
    Step(f64),
    /// A `--params` name is not a numeric key of the vehicle file.
    #[error("--params {key}: {reason}")]
    UnknownParameter {
        /// The name as given.
        key: String,
        /// Why, with the closest known keys.
        reason: String,
    },
    /// A `--metric` name is not a metric of the script or a known quantity.
    #[error("--metric {name}: {reason}")]
    UnknownMetric {
        /// The name as given.
        name: String,
        /// Why, with the names that exist.
        reason: String,
    },
    /// No parameter is left to perturb (all skipped).
    #[error("no parameter to perturb: {0}")]
    NothingToPerturb(String),
    /// The resolved vehicle parameters could not be read back.
    #[error("the resolved vehicle parameters are not readable TOML: {0}")]
    VehicleText(String),
    /// The base case (no perturbation) did not give the metric.
    #[error("the base case failed: {0}")]
    BaseFailed(String),
    /// Writing the HDF5 file failed.
    #[error("writing the sensitivity file")]
    File(#[source] ResultsError),
}

impl Classify for SensitivityError {
    /// Names and steps are bad input; a failed base case is a failed run;
    /// file errors by their cause.
    fn kind(&self) -> ErrorKind {
        match self {
            Self::Step(_)
            | Self::UnknownParameter { .. }
            | Self::UnknownMetric { .. }
            | Self::NothingToPerturb(_) => ErrorKind::BadInput,
            Self::VehicleText(_) | Self::BaseFailed(_) => ErrorKind::Failed,
            Self::File(source) => source.kind(),
        }
    }
}
