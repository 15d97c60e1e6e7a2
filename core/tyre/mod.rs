//! TEMPORARY stand-in with the agreed API; replaced by the real tyre module on merge.
#![allow(missing_docs)]
use crate::params::ParamIssue;
use serde::{Deserialize, Serialize};

#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum CombinedSlip {
    #[default]
    FrictionEllipse,
    MagicFormula,
}

#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct MagicFormulaCoefficients {
    pub nominal_load_n: f64,
    #[serde(rename = "pDx1")]
    pub p_dx1: f64,
    #[serde(rename = "pDy1")]
    pub p_dy1: f64,
    #[serde(rename = "pKy1")]
    pub p_ky1: f64,
    #[serde(rename = "pKx1")]
    pub p_kx1: f64,
}

impl MagicFormulaCoefficients {
    pub fn check(&self, _path: &str, _issues: &mut Vec<ParamIssue>) {}
}

#[derive(Debug, Clone, Copy)]
pub struct TyreForce {
    pub fx: f64,
    pub fy: f64,
}

#[derive(Debug, Clone, Copy)]
pub struct TyreModel {
    c: MagicCopy,
}
#[derive(Debug, Clone, Copy)]
struct MagicCopy {
    fz0: f64,
    dx: f64,
    dy: f64,
    ky: f64,
    kx: f64,
}

impl TyreModel {
    pub fn new(m: &MagicFormulaCoefficients) -> Self {
        Self { c: MagicCopy { fz0: m.nominal_load_n, dx: m.p_dx1, dy: m.p_dy1, ky: m.p_ky1, kx: m.p_kx1 } }
    }
    pub fn pure_longitudinal(&self, kappa: f64, fz: f64, friction: f64) -> f64 {
        let d = self.c.dx * friction * fz.max(0.0);
        let k = self.c.kx * fz.max(0.0);
        let b = k / (1.6 * d).max(1e-9);
        d * (1.6 * (b * kappa).atan()).sin()
    }
    pub fn pure_lateral(&self, alpha: f64, fz: f64, _gamma: f64, friction: f64) -> f64 {
        let d = self.c.dy * friction * fz.max(0.0);
        let k = self.cornering_stiffness(fz);
        let b = k / (1.3 * d).max(1e-9);
        d * (1.3 * (b * alpha).atan()).sin()
    }
    pub fn combined(&self, kappa: f64, alpha: f64, gamma: f64, fz: f64, friction: f64, _m: CombinedSlip) -> TyreForce {
        TyreForce { fx: self.pure_longitudinal(kappa, fz, friction), fy: self.pure_lateral(alpha, fz, gamma, friction) }
    }
    pub fn cornering_stiffness(&self, fz: f64) -> f64 {
        self.c.ky * self.c.fz0 * (2.0 * (fz.max(0.0) / (2.0 * self.c.fz0)).atan()).sin()
    }
    pub fn slip_stiffness(&self, fz: f64) -> f64 {
        self.c.kx * fz.max(0.0)
    }
    pub fn peak_friction(&self, _fz: f64, friction: f64) -> (f64, f64) {
        (self.c.dx * friction, self.c.dy * friction)
    }
}
