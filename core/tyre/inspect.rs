//! Tyre inspection: the curves and key figures of one tyre, computed with the
//! scalar reference force function ([`TyreModel::combined_tan`], with the same
//! camber, road friction and combined-slip method as the vehicle model, whose
//! vector lanes equal it to rounding: [`super::TyreLanes`]).
//!
//! - Fx against slip ratio at zero slip angle, and Fy against slip angle at
//!   zero slip ratio, at several loads (pure slip; exactly the pure-slip
//!   curves at zero camber);
//! - the combined-slip envelope: Fy against Fx for fixed slip angles while
//!   the slip ratio sweeps from braking to driving, for both combined-slip
//!   methods;
//! - peak friction (the largest force over load on the positive-slip side)
//!   and the slip where it occurs, and the slip and cornering stiffnesses
//!   (slopes at zero slip), against load;
//! - key figures at the tyre's nominal load and at a reference load (the
//!   static wheel load, when the caller gives it).
//!
//! Peaks are found by a scan of [`PEAK_SCAN_POINTS`] points followed by a
//! golden-section search (Press et al., *Numerical Recipes*, 3rd ed., §10.2,
//! from memory); stiffnesses by a central difference with step
//! [`STIFFNESS_STEP`]. Pure functions of numbers; no I/O.

use std::f64::consts::FRAC_PI_2;

use serde::Serialize;

use super::{CombinedSlip, TyreModel};
use crate::error::{Classify, ErrorKind};

/// Points of the scan that brackets a peak before the golden-section search.
pub const PEAK_SCAN_POINTS: usize = 2000;
/// Golden-section iterations (the bracket shrinks by 0.618 each), 1.
pub const GOLDEN_ITERATIONS: usize = 60;
/// Step of the central difference for the stiffnesses, slip ratio or tan α.
pub const STIFFNESS_STEP: f64 = 1e-6;

/// The tyre and how it is run, as the vehicle model runs it.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct TyreSetup {
    /// The force model.
    pub model: TyreModel,
    /// Camber angle, rad (ISO 8855; the left wheel's static camber).
    pub camber: f64,
    /// Road friction scale, 1.
    pub friction: f64,
    /// The combined-slip method the vehicle uses on this axle.
    pub method: CombinedSlip,
}

impl TyreSetup {
    /// The force (Fx, Fy) in N at slip ratio `kappa`, tan of the slip angle
    /// `tan_alpha` and load `fz` (N), with combined-slip method `method`: the
    /// call the vehicle model makes for a left wheel.
    pub fn force(&self, kappa: f64, tan_alpha: f64, fz: f64, method: CombinedSlip) -> (f64, f64) {
        let f = self
            .model
            .combined_tan(kappa, tan_alpha, self.camber, fz, self.friction, method);
        (f.fx, f.fy)
    }
}

/// What to compute.
#[derive(Debug, Clone, PartialEq)]
pub struct InspectSettings {
    /// Loads of the pure-slip curves, N.
    pub loads: Vec<f64>,
    /// Slip-ratio range of the longitudinal curves, ±, 1. Default 0.3.
    pub slip_ratio_max: f64,
    /// Slip-angle range of the lateral curves, ±, rad. Default 15°.
    pub slip_angle_max: f64,
    /// Points per curve. Default 121.
    pub points: usize,
    /// Load of the combined-slip envelopes, N.
    pub combined_load: f64,
    /// Slip angles of the combined-slip envelopes, rad.
    pub combined_slip_angles: Vec<f64>,
    /// Slip-ratio range of the combined-slip envelopes, ±, 1. Default 1.0.
    pub combined_slip_ratio_max: f64,
    /// Loads of the load-dependence curves, N.
    pub load_sweep: Vec<f64>,
    /// Reference load of the key figures besides the nominal load (e.g. the
    /// static wheel load), N.
    pub reference_load: Option<f64>,
    /// Largest slip searched for the peaks: slip ratio, 1. Default 1.0.
    pub peak_slip_ratio_max: f64,
    /// Largest slip angle searched for the peaks, rad. Default 30°.
    pub peak_slip_angle_max: f64,
}

impl InspectSettings {
    /// Defaults around a load `load` (N): curves at 0.5, 1, 1.5 and 2 times
    /// it, combined envelopes at it for slip angles 1°, 2°, 4° and 8°, load
    /// dependence from 0.1 to 2.5 times it in 49 steps.
    pub fn around(load: f64) -> Self {
        Self {
            loads: [0.5, 1.0, 1.5, 2.0].iter().map(|k| k * load).collect(),
            slip_ratio_max: 0.3,
            slip_angle_max: 15f64.to_radians(),
            points: 121,
            combined_load: load,
            combined_slip_angles: [1.0f64, 2.0, 4.0, 8.0]
                .iter()
                .map(|d| d.to_radians())
                .collect(),
            combined_slip_ratio_max: 1.0,
            load_sweep: (0..=48).map(|k| load * (0.1 + 0.05 * k as f64)).collect(),
            reference_load: Some(load),
            peak_slip_ratio_max: 1.0,
            peak_slip_angle_max: 30f64.to_radians(),
        }
    }

    /// Checks the settings: positive finite loads and ranges, at least 3 points.
    pub fn validate(&self) -> Result<(), InspectError> {
        let bad = |name: &'static str, value: f64| Err(InspectError::Invalid { name, value });
        let positive = |v: f64| v.is_finite() && v > 0.0;
        for &l in self
            .loads
            .iter()
            .chain(&self.load_sweep)
            .chain(&[self.combined_load])
            .chain(self.reference_load.iter())
        {
            if !positive(l) {
                return bad("load", l);
            }
        }
        for (name, v) in [
            ("slip_ratio_max", self.slip_ratio_max),
            ("slip_angle_max", self.slip_angle_max),
            ("combined_slip_ratio_max", self.combined_slip_ratio_max),
            ("peak_slip_ratio_max", self.peak_slip_ratio_max),
            ("peak_slip_angle_max", self.peak_slip_angle_max),
        ] {
            if !positive(v) {
                return bad(name, v);
            }
        }
        for &a in &self.combined_slip_angles {
            if !(a.is_finite() && a.abs() < FRAC_PI_2) {
                return bad("combined slip angle", a);
            }
        }
        if self.slip_angle_max >= FRAC_PI_2 || self.peak_slip_angle_max >= FRAC_PI_2 {
            return bad("slip angle range", self.slip_angle_max);
        }
        if self.points < 3 {
            return bad("points", self.points as f64);
        }
        if self.loads.is_empty() || self.load_sweep.is_empty() {
            return bad("number of loads", 0.0);
        }
        Ok(())
    }
}

/// Errors of the tyre inspection.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum InspectError {
    /// A setting is out of range.
    #[error(
        "tyre inspection: {name} = {value} is not valid (loads and ranges must be finite and positive, slip angles below 90 deg, at least 3 points)"
    )]
    Invalid {
        /// Which setting.
        name: &'static str,
        /// Value given (SI).
        value: f64,
    },
}

impl Classify for InspectError {
    fn kind(&self) -> ErrorKind {
        ErrorKind::BadInput
    }
}

/// One pure-slip curve at one load.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct SlipCurve {
    /// Wheel load, N.
    pub load: f64,
    /// Slip ratio (1) or slip angle (rad).
    pub slip: Vec<f64>,
    /// Fx or Fy, N.
    pub force: Vec<f64>,
}

/// One combined-slip envelope: fixed slip angle, slip ratio swept.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct CombinedCurve {
    /// Combined-slip method.
    pub method: CombinedSlip,
    /// Slip angle, rad.
    pub slip_angle: f64,
    /// Wheel load, N.
    pub load: f64,
    /// Slip ratio, 1.
    pub slip_ratio: Vec<f64>,
    /// Fx, N.
    pub fx: Vec<f64>,
    /// Fy, N.
    pub fy: Vec<f64>,
}

/// Peak friction and stiffness at one load.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct LoadFigures {
    /// Wheel load, N.
    pub load: f64,
    /// Largest Fx/Fz for driving slip (κ > 0) at zero slip angle, 1.
    pub peak_mu_x: f64,
    /// Slip ratio of that peak, 1.
    pub slip_ratio_at_peak: f64,
    /// Largest Fy/Fz for positive slip angle at zero slip ratio, 1.
    pub peak_mu_y: f64,
    /// Slip angle of that peak, rad.
    pub slip_angle_at_peak: f64,
    /// Longitudinal slip stiffness ∂Fx/∂κ at zero slip, N (per unit slip ratio).
    pub slip_stiffness: f64,
    /// Cornering stiffness ∂Fy/∂α at zero slip, N/rad.
    pub cornering_stiffness: f64,
}

/// Everything the inspection gives.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Inspection {
    /// Fx against slip ratio, one per load.
    pub longitudinal: Vec<SlipCurve>,
    /// Fy against slip angle, one per load.
    pub lateral: Vec<SlipCurve>,
    /// Combined-slip envelopes: every slip angle for the friction ellipse,
    /// then every slip angle for the Magic Formula weighting.
    pub combined: Vec<CombinedCurve>,
    /// Peak friction and stiffness against load.
    pub load_dependence: Vec<LoadFigures>,
    /// Key figures at the tyre's nominal load Fz0'.
    pub at_nominal_load: LoadFigures,
    /// Key figures at the reference load, when given.
    pub at_reference_load: Option<LoadFigures>,
}

/// `n` evenly spaced values from `lo` to `hi`.
fn spaced(lo: f64, hi: f64, n: usize) -> Vec<f64> {
    (0..n)
        .map(|k| lo + (hi - lo) * k as f64 / (n - 1) as f64)
        .collect()
}

/// The x in [0, `hi`] where `f` is largest: scan, then golden section
/// around the best scan point. Returns (x, f(x)).
pub fn peak_of(f: impl Fn(f64) -> f64, hi: f64) -> (f64, f64) {
    let n = PEAK_SCAN_POINTS;
    let xs = spaced(0.0, hi, n + 1);
    let best = (0..=n)
        .max_by(|&a, &b| f(xs[a]).total_cmp(&f(xs[b])))
        .unwrap_or(0);
    let (mut lo, mut up) = (xs[best.saturating_sub(1)], xs[(best + 1).min(n)]);
    let ratio = 0.5 * (5f64.sqrt() - 1.0);
    let (mut c, mut d) = (up - ratio * (up - lo), lo + ratio * (up - lo));
    let (mut fc, mut fd) = (f(c), f(d));
    for _ in 0..GOLDEN_ITERATIONS {
        if fc >= fd {
            up = d;
            (d, fd) = (c, fc);
            c = up - ratio * (up - lo);
            fc = f(c);
        } else {
            lo = c;
            (c, fc) = (d, fd);
            d = lo + ratio * (up - lo);
            fd = f(d);
        }
    }
    // The best of the refined point and the scan point (a peak on the scan's edge).
    let refined = if fc >= fd { (c, fc) } else { (d, fd) };
    let scanned = (xs[best], f(xs[best]));
    if refined.1 >= scanned.1 {
        refined
    } else {
        scanned
    }
}

/// Peak friction and stiffness of `tyre` at load `fz` (N).
pub fn load_figures(tyre: &TyreSetup, fz: f64, settings: &InspectSettings) -> LoadFigures {
    let m = tyre.method;
    let (kx, fx_peak) = peak_of(
        |k| tyre.force(k, 0.0, fz, m).0,
        settings.peak_slip_ratio_max,
    );
    let (ay, fy_peak) = peak_of(
        |a| tyre.force(0.0, a.tan(), fz, m).1,
        settings.peak_slip_angle_max,
    );
    let h = STIFFNESS_STEP;
    let slip_stiffness = (tyre.force(h, 0.0, fz, m).0 - tyre.force(-h, 0.0, fz, m).0) / (2.0 * h);
    // d/dα at α = 0 equals d/d(tan α) there.
    let cornering_stiffness =
        (tyre.force(0.0, h, fz, m).1 - tyre.force(0.0, -h, fz, m).1) / (2.0 * h);
    LoadFigures {
        load: fz,
        peak_mu_x: fx_peak / fz,
        slip_ratio_at_peak: kx,
        peak_mu_y: fy_peak / fz,
        slip_angle_at_peak: ay,
        slip_stiffness,
        cornering_stiffness,
    }
}

/// Runs the inspection of `tyre`.
///
/// ```
/// use yawdyn::tyre::{CombinedSlip, MagicFormulaCoefficients, TyreModel};
/// use yawdyn::tyre::inspect::{InspectSettings, TyreSetup, inspect};
/// let mf: MagicFormulaCoefficients = toml::from_str(
///     "nominal_load_n = 4500.0\npCx1 = 1.6\npDx1 = 1.0\npKx1 = 20.0\n\
///      pCy1 = 1.3\npDy1 = 0.95\npKy1 = 17.0\npKy2 = 1.8\n",
/// ).unwrap();
/// let tyre = TyreSetup { model: TyreModel::new(&mf), camber: 0.0, friction: 1.0,
///                        method: CombinedSlip::FrictionEllipse };
/// let report = inspect(&tyre, &InspectSettings::around(4500.0)).unwrap();
/// assert!((report.at_nominal_load.peak_mu_y - 0.95).abs() < 1e-9);
/// ```
pub fn inspect(tyre: &TyreSetup, settings: &InspectSettings) -> Result<Inspection, InspectError> {
    settings.validate()?;
    let n = settings.points;
    let m = tyre.method;
    // Pure-slip curves at each load.
    let kappas = spaced(-settings.slip_ratio_max, settings.slip_ratio_max, n);
    let alphas = spaced(-settings.slip_angle_max, settings.slip_angle_max, n);
    let longitudinal = settings
        .loads
        .iter()
        .map(|&fz| SlipCurve {
            load: fz,
            slip: kappas.clone(),
            force: kappas
                .iter()
                .map(|&k| tyre.force(k, 0.0, fz, m).0)
                .collect(),
        })
        .collect();
    let lateral = settings
        .loads
        .iter()
        .map(|&fz| SlipCurve {
            load: fz,
            slip: alphas.clone(),
            force: alphas
                .iter()
                .map(|&a| tyre.force(0.0, a.tan(), fz, m).1)
                .collect(),
        })
        .collect();
    // Combined-slip envelopes for both methods.
    let sweep = spaced(
        -settings.combined_slip_ratio_max,
        settings.combined_slip_ratio_max,
        n,
    );
    let fz = settings.combined_load;
    let combined = [CombinedSlip::FrictionEllipse, CombinedSlip::MagicFormula]
        .iter()
        .flat_map(|&method| {
            let sweep = &sweep;
            settings.combined_slip_angles.iter().map(move |&alpha| {
                let forces: Vec<(f64, f64)> = sweep
                    .iter()
                    .map(|&k| tyre.force(k, alpha.tan(), fz, method))
                    .collect();
                CombinedCurve {
                    method,
                    slip_angle: alpha,
                    load: fz,
                    slip_ratio: sweep.clone(),
                    fx: forces.iter().map(|f| f.0).collect(),
                    fy: forces.iter().map(|f| f.1).collect(),
                }
            })
        })
        .collect();
    // Peak friction and stiffness against load, and the key figures.
    let load_dependence = settings
        .load_sweep
        .iter()
        .map(|&fz| load_figures(tyre, fz, settings))
        .collect();
    Ok(Inspection {
        longitudinal,
        lateral,
        combined,
        load_dependence,
        at_nominal_load: load_figures(tyre, tyre.model.nominal_load(), settings),
        at_reference_load: settings
            .reference_load
            .map(|fz| load_figures(tyre, fz, settings)),
    })
}

impl Inspection {
    /// The curves as CSV text: a header row, a units row, then one row per
    /// point: `curve` (`longitudinal`, `lateral`, `combined`), `method`,
    /// `load`, `slip_angle`, `slip_ratio`, `fx`, `fy`. Numbers in Rust's
    /// shortest round-trip form.
    pub fn curves_csv(&self, method: CombinedSlip) -> String {
        let name = |m: CombinedSlip| match m {
            CombinedSlip::FrictionEllipse => "friction_ellipse",
            CombinedSlip::MagicFormula => "magic_formula",
        };
        let mut out =
            String::from("curve,method,load,slip_angle,slip_ratio,fx,fy\n,,N,rad,1,N,N\n");
        let mut row = |curve: &str, m: &str, fz: f64, alpha: f64, kappa: f64, fx: f64, fy: f64| {
            out.push_str(&format!("{curve},{m},{fz},{alpha},{kappa},{fx},{fy}\n"));
        };
        for c in &self.longitudinal {
            for (k, f) in c.slip.iter().zip(&c.force) {
                row("longitudinal", name(method), c.load, 0.0, *k, *f, f64::NAN);
            }
        }
        for c in &self.lateral {
            for (a, f) in c.slip.iter().zip(&c.force) {
                row("lateral", name(method), c.load, *a, 0.0, f64::NAN, *f);
            }
        }
        for c in &self.combined {
            for i in 0..c.slip_ratio.len() {
                row(
                    "combined",
                    name(c.method),
                    c.load,
                    c.slip_angle,
                    c.slip_ratio[i],
                    c.fx[i],
                    c.fy[i],
                );
            }
        }
        out
    }

    /// The load dependence as CSV text: header, units, one row per load.
    pub fn load_csv(&self) -> String {
        let mut out = String::from(
            "load,peak_mu_x,slip_ratio_at_peak,peak_mu_y,slip_angle_at_peak,slip_stiffness,cornering_stiffness\n\
             N,1,1,1,rad,N,N/rad\n",
        );
        for f in &self.load_dependence {
            out.push_str(&format!(
                "{},{},{},{},{},{},{}\n",
                f.load,
                f.peak_mu_x,
                f.slip_ratio_at_peak,
                f.peak_mu_y,
                f.slip_angle_at_peak,
                f.slip_stiffness,
                f.cornering_stiffness
            ));
        }
        out
    }
}

#[cfg(test)]
mod test;
