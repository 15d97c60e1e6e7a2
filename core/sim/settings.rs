//! Which integration method a simulation uses, and its tolerances.

use serde::{Deserialize, Serialize};

/// Integration method.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum SolverKind {
    /// Dormand–Prince 5(4), adaptive, dense output (default).
    #[default]
    Dopri5,
    /// Dormand–Prince 8(5,3), adaptive.
    Dop853,
    /// Classical fourth-order Runge–Kutta with a fixed step.
    Rk4,
    /// Additive Runge–Kutta 4(3) (ARK4(3)6L\[2\]SA), adaptive: the wheels'
    /// spin and slip equations implicit, the rest explicit.
    Ark436,
}

impl SolverKind {
    /// Lower-case name as used in files and scripts.
    pub fn name(self) -> &'static str {
        match self {
            Self::Dopri5 => "dopri5",
            Self::Dop853 => "dop853",
            Self::Rk4 => "rk4",
            Self::Ark436 => "ark436",
        }
    }

    /// Parses `dopri5`, `dop853`, `rk4` or `ark436`.
    pub fn from_name(name: &str) -> Option<Self> {
        match name {
            "dopri5" => Some(Self::Dopri5),
            "dop853" => Some(Self::Dop853),
            "rk4" => Some(Self::Rk4),
            "ark436" => Some(Self::Ark436),
            _ => None,
        }
    }
}

/// Solver settings.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct SolverSettings {
    /// Method. Default Dopri5.
    pub kind: SolverKind,
    /// Relative tolerance (adaptive methods). Default 1e-6.
    pub rtol: f64,
    /// Absolute tolerance (adaptive methods). Default 1e-6.
    pub atol: f64,
    /// Step of Rk4, s. Default 0.5 ms.
    pub fixed_step: f64,
}

impl Default for SolverSettings {
    fn default() -> Self {
        Self {
            kind: SolverKind::Dopri5,
            rtol: 1e-6,
            atol: 1e-6,
            fixed_step: 5e-4,
        }
    }
}
