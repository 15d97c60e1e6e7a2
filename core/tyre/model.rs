//! The Magic Formula 5.2 force evaluation: pure longitudinal, pure lateral and
//! combined slip.

use std::f64::consts::FRAC_PI_2;

use serde::{Deserialize, Serialize};

use super::MagicFormulaCoefficients;

/// Largest |B·x| fed to the curve (-). Beyond it atan(B·x) equals π/2 to
/// 1e-12, so the cap changes nothing physical; it keeps E·(B·x − atan B·x)
/// finite for any finite slip.
pub(super) const ARG_MAX: f64 = 1e12;
/// Largest |normalised slip| in the friction-ellipse method (-); far into
/// full sliding. Keeps the hypot and ratios finite when μ·Fz is tiny.
pub(super) const NORM_SLIP_MAX: f64 = 1e150;
/// Largest |slip ratio| considered (-). The curves are flat long before.
pub(super) const KAPPA_MAX: f64 = 1e6;
/// Loads above this multiple of the nominal load are evaluated at it; this
/// only keeps the load polynomials finite, no tyre is run there.
pub(super) const LOAD_MAX_FACTOR: f64 = 100.0;

/// How longitudinal and lateral slip are combined.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum CombinedSlip {
    /// Normalised combined slip on a friction ellipse (the default): see
    /// [`TyreModel::combined`].
    #[default]
    FrictionEllipse,
    /// The MF 5.2 weighting functions Gxα, Gyκ and the κ-induced side force
    /// SVyκ (Pacejka, *Tire and Vehicle Dynamics*, ch. 4, from memory).
    MagicFormula,
}

/// Tyre force at the contact patch in the wheel's ISO 8855 axes.
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub struct TyreForce {
    /// Longitudinal force Fx (N), positive forward (driving).
    pub fx: f64,
    /// Lateral force Fy (N), positive to the left.
    pub fy: f64,
}

/// One Magic Formula curve y(x) = D·sin{C·atan[B·x − E·(B·x − atan B·x)]}
/// at a given load, without its vertical shift (Pacejka ch. 4, general form).
#[derive(Debug, Clone, Copy)]
struct Curve {
    /// Stiffness factor B (-).
    b: f64,
    /// Shape factor C (-).
    c: f64,
    /// Peak factor D (N).
    d: f64,
    /// Curvature factor E before the sign asymmetry (-).
    e_base: f64,
    /// Sign asymmetry a in E·(1 − a·sgn x) (-).
    e_asym: f64,
    /// Slope at the origin K = B·C·D (N per unit of x).
    k: f64,
    /// Horizontal shift SH (unit of x).
    sh: f64,
    /// Vertical shift SV (N).
    sv: f64,
}

impl Curve {
    /// y at the already shifted slip `x` (no vertical shift).
    #[inline]
    fn shape(&self, x: f64) -> f64 {
        let e = (self.e_base * (1.0 - self.e_asym * x.signum())).min(1.0);
        let bx = (self.b * x).clamp(-ARG_MAX, ARG_MAX);
        self.d * (self.c * (bx - e * (bx - bx.atan())).atan()).sin()
    }
}

/// B = K/(C·D), zero when there is no peak force (Pacejka ch. 4).
#[inline]
fn stiffness_factor(k: f64, c: f64, d: f64) -> f64 {
    let cd = c * d;
    if cd > 0.0 { (k / cd).min(ARG_MAX) } else { 0.0 }
}

/// MF weighting cos{C·atan[B·x − E·(B·x − atan B·x)]} (Pacejka ch. 4,
/// combined slip, from memory).
#[inline]
fn weighting(b: f64, c: f64, e: f64, x: f64) -> f64 {
    let bx = (b * x).clamp(-ARG_MAX, ARG_MAX);
    (c * (bx - e * (bx - bx.atan())).atan()).cos()
}

/// A tyre ready to evaluate: checked Magic Formula coefficients.
///
/// Inputs of every method:
/// - `fz`: wheel load (N), ≥ 0 in contact; `fz ≤ 0` gives zero force;
/// - `kappa`: longitudinal slip ratio (-), positive when driving;
/// - `alpha`: slip angle (rad), tan α = −Vcy/|Vcx| with Vc the contact-patch
///   velocity in wheel axes (ISO 8855, y left), so a positive α gives a
///   positive (leftward) lateral force; clamped to [−π/2, π/2];
/// - `gamma`: camber angle (rad), ISO 8855 sign; clamped to [−π/2, π/2];
/// - `friction`: road friction scale (-), 1.0 nominal, multiplying μx and μy.
///   It scales the peak factors D (and the vertical shifts) and therefore
///   B = K/(C·D), so the slip and cornering stiffnesses K are unchanged:
///   a wet road saturates earlier, not softer (common practice). `friction ≤ 0`
///   gives zero force.
///
/// Every result is finite for finite inputs.
///
/// ```
/// use yawdyn::tyre::{CombinedSlip, MagicFormulaCoefficients, TyreModel};
/// let mf: MagicFormulaCoefficients = toml::from_str(
///     "nominal_load_n = 4500.0\npCx1 = 1.6\npDx1 = 1.0\npKx1 = 20.0\n\
///      pCy1 = 1.3\npDy1 = 0.95\npKy1 = 17.0\npKy2 = 1.8\n",
/// ).unwrap();
/// let tyre = TyreModel::new(&mf);
/// let f = tyre.combined(0.02, 0.03, 0.0, 4500.0, 1.0, CombinedSlip::FrictionEllipse);
/// assert!(f.fx > 0.0 && f.fy > 0.0);
/// ```
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct TyreModel {
    /// The coefficients, all plain f64.
    mf: MagicFormulaCoefficients,
    /// Scaled nominal load Fz0' = λFz0·Fz0 (N).
    nominal_load: f64,
}

impl TyreModel {
    /// Build from coefficients that passed [`MagicFormulaCoefficients::check`]
    /// without issues. Unchecked coefficients still give finite forces for
    /// finite inputs, but not meaningful ones.
    pub fn new(mf: &MagicFormulaCoefficients) -> TyreModel {
        TyreModel {
            mf: *mf,
            nominal_load: mf.lambda_fz0 * mf.nominal_load_n,
        }
    }

    /// The coefficients (checked or not, as given to [`TyreModel::new`]).
    pub fn coefficients(&self) -> &MagicFormulaCoefficients {
        &self.mf
    }

    /// The scaled nominal load Fz0' = λFz0·Fz0 the load dependence refers to, N.
    pub fn nominal_load(&self) -> f64 {
        self.nominal_load
    }

    /// Load clamped to the evaluated range and its normalised increment
    /// dfz = (Fz − Fz0')/Fz0' (Pacejka ch. 4, from memory).
    #[inline]
    fn load(&self, fz: f64) -> (f64, f64) {
        let fz = fz.min(LOAD_MAX_FACTOR * self.nominal_load);
        (fz, (fz - self.nominal_load) / self.nominal_load)
    }

    /// μx = (pDx1 + pDx2·dfz)·λμx·friction, floored at 0 (MF 5.2, from memory).
    #[inline]
    fn mu_x(&self, dfz: f64, friction: f64) -> f64 {
        ((self.mf.p_dx1 + self.mf.p_dx2 * dfz) * self.mf.lambda_mux).max(0.0) * friction
    }

    /// μy = (pDy1 + pDy2·dfz)·(1 − pDy3·γ²)·λμy·friction, floored at 0 (MF 5.2,
    /// from memory).
    #[inline]
    fn mu_y(&self, dfz: f64, gamma: f64, friction: f64) -> f64 {
        let m = &self.mf;
        ((m.p_dy1 + m.p_dy2 * dfz) * (1.0 - m.p_dy3 * gamma * gamma) * m.lambda_muy).max(0.0)
            * friction
    }

    /// Kxκ = Fz·(pKx1 + pKx2·dfz)·exp(pKx3·dfz), floored at 0 (MF 5.2;
    /// Pacejka, *Tire and Vehicle Dynamics*, 2nd ed., ch. 4, from memory).
    #[inline]
    fn kx(&self, fz: f64, dfz: f64) -> f64 {
        let m = &self.mf;
        (fz * (m.p_kx1 + m.p_kx2 * dfz) * (m.p_kx3 * dfz).exp()).max(0.0)
    }

    /// Kyα = pKy1·Fz0'·sin(2·atan(Fz/(pKy2·Fz0')))·(1 − pKy3·|γ|), floored
    /// at 0 (MF 5.2; Pacejka, *Tire and Vehicle Dynamics*, 2nd ed., ch. 4,
    /// from memory). Evaluated with the identity
    /// sin(2·atan u) = 2u/(1 + u²), which saves two transcendental calls.
    #[inline]
    fn ky(&self, fz: f64, gamma: f64) -> f64 {
        let m = &self.mf;
        let fz0 = self.nominal_load;
        let u = fz / (m.p_ky2 * fz0);
        let sin_2atan = if u.is_finite() {
            2.0 * u / (1.0 + u * u)
        } else {
            0.0
        };
        (m.p_ky1 * fz0 * sin_2atan * (1.0 - m.p_ky3 * gamma.abs())).max(0.0)
    }

    /// Pure longitudinal curve at load `fz` > 0 (MF 5.2; Pacejka, *Tire and
    /// Vehicle Dynamics*, 2nd ed., ch. 4, from memory): Cx = pCx1, Dx = μx·Fz,
    /// Ex = (pEx1 + pEx2·dfz + pEx3·dfz²)·(1 − pEx4·sgn κx), Bx = Kxκ/(Cx·Dx),
    /// SHx = pHx1 + pHx2·dfz, SVx = Fz·(pVx1 + pVx2·dfz)·λμx·friction.
    #[inline]
    fn longitudinal_curve(&self, fz: f64, dfz: f64, friction: f64) -> Curve {
        let m = &self.mf;
        let d = self.mu_x(dfz, friction) * fz;
        let k = self.kx(fz, dfz);
        Curve {
            b: stiffness_factor(k, m.p_cx1, d),
            c: m.p_cx1,
            d,
            e_base: m.p_ex1 + m.p_ex2 * dfz + m.p_ex3 * dfz * dfz,
            e_asym: m.p_ex4,
            k,
            sh: m.p_hx1 + m.p_hx2 * dfz,
            sv: fz * (m.p_vx1 + m.p_vx2 * dfz) * m.lambda_mux * friction,
        }
    }

    /// Pure lateral curve at load `fz` > 0 and camber `gamma` (MF 5.2;
    /// Pacejka, *Tire and Vehicle Dynamics*, 2nd ed., ch. 4, from memory):
    /// Cy = pCy1, Dy = μy·Fz,
    /// Ey = (pEy1 + pEy2·dfz)·(1 − (pEy3 + pEy4·γ)·sgn αy), By = Kyα/(Cy·Dy),
    /// SHy = pHy1 + pHy2·dfz + pHy3·γ,
    /// SVy = Fz·[(pVy1 + pVy2·dfz) + (pVy3 + pVy4·dfz)·γ]·λμy·friction.
    /// The slip variable is αy = tan α + SHy (Pacejka's α* = tan α).
    #[inline]
    fn lateral_curve(&self, fz: f64, dfz: f64, gamma: f64, friction: f64) -> Curve {
        let m = &self.mf;
        let d = self.mu_y(dfz, gamma, friction) * fz;
        let k = self.ky(fz, gamma);
        Curve {
            b: stiffness_factor(k, m.p_cy1, d),
            c: m.p_cy1,
            d,
            e_base: m.p_ey1 + m.p_ey2 * dfz,
            e_asym: m.p_ey3 + m.p_ey4 * gamma,
            k,
            sh: m.p_hy1 + m.p_hy2 * dfz + m.p_hy3 * gamma,
            sv: fz
                * ((m.p_vy1 + m.p_vy2 * dfz) + (m.p_vy3 + m.p_vy4 * dfz) * gamma)
                * m.lambda_muy
                * friction,
        }
    }

    /// Pure longitudinal force Fx0 (N) at slip ratio `kappa` (-), load `fz` (N)
    /// and road friction scale `friction` (-):
    /// Fx0 = Dx·sin{Cx·atan[Bx·κx − Ex·(Bx·κx − atan(Bx·κx))]} + SVx,
    /// κx = κ + SHx (Pacejka, *Tire and Vehicle Dynamics*, ch. 4, MF 5.2 form
    /// from memory).
    #[inline]
    pub fn pure_longitudinal(&self, kappa: f64, fz: f64, friction: f64) -> f64 {
        if !(fz > 0.0 && friction > 0.0) {
            return 0.0;
        }
        let (fz, dfz) = self.load(fz);
        let curve = self.longitudinal_curve(fz, dfz, friction);
        curve.shape(kappa.clamp(-KAPPA_MAX, KAPPA_MAX) + curve.sh) + curve.sv
    }

    /// Pure lateral force Fy0 (N) at slip angle `alpha` (rad), load `fz` (N),
    /// camber `gamma` (rad) and friction scale `friction` (-):
    /// Fy0 = Dy·sin{Cy·atan[By·αy − Ey·(By·αy − atan(By·αy))]} + SVy,
    /// αy = tan α + SHy, camber terms pDy3, pEy4, pKy3, pHy3, pVy3, pVy4 included
    /// (Pacejka ch. 4, MF 5.2 form from memory).
    #[inline]
    pub fn pure_lateral(&self, alpha: f64, fz: f64, gamma: f64, friction: f64) -> f64 {
        if !(fz > 0.0 && friction > 0.0) {
            return 0.0;
        }
        let (fz, dfz) = self.load(fz);
        let gamma = gamma.clamp(-FRAC_PI_2, FRAC_PI_2);
        let curve = self.lateral_curve(fz, dfz, gamma, friction);
        curve.shape(alpha.clamp(-FRAC_PI_2, FRAC_PI_2).tan() + curve.sh) + curve.sv
    }

    /// Cornering stiffness Kyα at zero camber (N/rad) at load `fz` (N):
    /// pKy1·Fz0'·sin(2·atan(Fz/(pKy2·Fz0'))) (MF 5.2, from memory). Independent
    /// of road friction. Zero for `fz ≤ 0`.
    #[inline]
    pub fn cornering_stiffness(&self, fz: f64) -> f64 {
        if fz.is_nan() || fz <= 0.0 {
            return 0.0;
        }
        let (fz, _) = self.load(fz);
        self.ky(fz, 0.0)
    }

    /// Longitudinal slip stiffness Kxκ (N per unit slip ratio) at load `fz`
    /// (N): Fz·(pKx1 + pKx2·dfz)·exp(pKx3·dfz) (MF 5.2, from memory).
    /// Independent of road friction. Zero for `fz ≤ 0`.
    #[inline]
    pub fn slip_stiffness(&self, fz: f64) -> f64 {
        if fz.is_nan() || fz <= 0.0 {
            return 0.0;
        }
        let (fz, dfz) = self.load(fz);
        self.kx(fz, dfz)
    }

    /// Peak friction coefficients (μx, μy) (-) at load `fz` (N), zero camber,
    /// including the road friction scale: μx = (pDx1 + pDx2·dfz)·λμx·friction,
    /// μy = (pDy1 + pDy2·dfz)·λμy·friction (MF 5.2, from memory). These are the
    /// peak factors D/Fz; with C ≥ 1 and no shifts they are the peak of the
    /// pure-slip curves. Zero for `fz ≤ 0` or `friction ≤ 0`.
    #[inline]
    pub fn peak_friction(&self, fz: f64, friction: f64) -> (f64, f64) {
        if !(fz > 0.0 && friction > 0.0) {
            return (0.0, 0.0);
        }
        let (_, dfz) = self.load(fz);
        (self.mu_x(dfz, friction), self.mu_y(dfz, 0.0, friction))
    }

    /// Combined-slip force (N) at slip ratio `kappa` (-), slip angle `alpha`
    /// (rad), camber `gamma` (rad), load `fz` (N) and friction scale `friction`.
    ///
    /// [`CombinedSlip::FrictionEllipse`], normalised combined slip (the
    /// similarity idea of Pacejka, *Tire and Vehicle Dynamics*, ch. 4 combined
    /// slip; close to Brach & Brach, SAE 2000-01-0357 — both from memory):
    /// with the shifted slips κx = κ + SHx, αy = tan α + SHy,
    /// - sx = Kxκ·κx/(μx·Fz), sy = Kyα·αy/(μy·Fz), s = hypot(sx, sy);
    /// - each curve is evaluated at the slip whose normalised slip is s with
    ///   the sign of its own component (κx_eq = sgn(sx)·s·μx·Fz/Kxκ, likewise
    ///   αy_eq), then weighted by its share of the combined slip:
    ///   Fx = Dx·f(κx_eq)·|sx|/s + SVx, Fy = Dy·f(αy_eq)·|sy|/s + SVy;
    /// - when the other shifted slip is zero (s = |sx| or s = |sy|) this is the
    ///   pure curve exactly;
    /// - finally, if the shifts push the force beyond the ellipse with
    ///   semi-axes Dx + |SVx|, Dy + |SVy| (Dx = μx·Fz, Dy = μy·Fz), it is scaled
    ///   back onto it. The vertical shifts (camber thrust, conicity) are in the
    ///   semi-axes because the pure curves themselves reach D + |SV|; without
    ///   vertical shifts the ellipse is the friction ellipse Dx, Dy. The
    ///   pure-slip results stay exact as long as the other direction's vertical
    ///   shift is zero.
    ///
    /// [`CombinedSlip::MagicFormula`], MF 5.2 weighting (Pacejka ch. 4, from
    /// memory): Fx = Gxα·Fx0 and Fy = Gyκ·Fy0 + SVyκ with
    /// - Gxα = cos{rCx1·atan[Bxα·αS − Exα·(Bxα·αS − atan(Bxα·αS))]}/Gxα0,
    ///   Bxα = rBx1·cos(atan(rBx2·κ)), Exα = rEx1 + rEx2·dfz, αS = tan α + rHx1,
    ///   Gxα0 the same at αS = rHx1;
    /// - Gyκ likewise with Byκ = rBy1·cos(atan(rBy2·(tan α − rBy3))),
    ///   Cyκ = rCy1, Eyκ = rEy1 + rEy2·dfz, κS = κ + rHy1 + rHy2·dfz;
    /// - SVyκ = μy·Fz·(rVy1 + rVy2·dfz + rVy3·γ)·cos(atan(rVy4·tan α))·
    ///   sin(rVy5·atan(rVy6·κ)).
    ///
    /// This method follows the fitted weighting and is not clamped to the
    /// ellipse.
    #[inline]
    pub fn combined(
        &self,
        kappa: f64,
        alpha: f64,
        gamma: f64,
        fz: f64,
        friction: f64,
        method: CombinedSlip,
    ) -> TyreForce {
        let tan_alpha = alpha.clamp(-FRAC_PI_2, FRAC_PI_2).tan();
        self.combined_tan(kappa, tan_alpha, gamma, fz, friction, method)
    }

    /// [`TyreModel::combined`] with the slip angle given as tan α (-), the
    /// form the vehicle model's relaxation states carry; saves a tan/atan pair.
    #[inline]
    pub fn combined_tan(
        &self,
        kappa: f64,
        tan_alpha: f64,
        gamma: f64,
        fz: f64,
        friction: f64,
        method: CombinedSlip,
    ) -> TyreForce {
        if !(fz > 0.0 && friction > 0.0) {
            return TyreForce::default();
        }
        let (fz, dfz) = self.load(fz);
        let kappa = kappa.clamp(-KAPPA_MAX, KAPPA_MAX);
        let gamma = gamma.clamp(-FRAC_PI_2, FRAC_PI_2);
        let tan_alpha = if tan_alpha.is_nan() {
            0.0
        } else {
            tan_alpha.clamp(-1e12, 1e12)
        };
        let long = self.longitudinal_curve(fz, dfz, friction);
        let lat = self.lateral_curve(fz, dfz, gamma, friction);
        match method {
            CombinedSlip::FrictionEllipse => {
                Self::friction_ellipse(&long, &lat, kappa + long.sh, tan_alpha + lat.sh)
            }
            CombinedSlip::MagicFormula => {
                let m = &self.mf;
                let fx0 = long.shape(kappa + long.sh) + long.sv;
                let fy0 = lat.shape(tan_alpha + lat.sh) + lat.sv;

                let bxa = m.r_bx1 * (m.r_bx2 * kappa).atan().cos();
                let exa = (m.r_ex1 + m.r_ex2 * dfz).min(1.0);
                let gxa0 = weighting(bxa, m.r_cx1, exa, m.r_hx1);
                let gxa = weighting(bxa, m.r_cx1, exa, tan_alpha + m.r_hx1);
                let gxa = if gxa0 > 0.0 { gxa / gxa0 } else { 0.0 };

                let byk = m.r_by1 * (m.r_by2 * (tan_alpha - m.r_by3)).atan().cos();
                let eyk = (m.r_ey1 + m.r_ey2 * dfz).min(1.0);
                let shyk = m.r_hy1 + m.r_hy2 * dfz;
                let gyk0 = weighting(byk, m.r_cy1, eyk, shyk);
                let gyk = weighting(byk, m.r_cy1, eyk, kappa + shyk);
                let gyk = if gyk0 > 0.0 { gyk / gyk0 } else { 0.0 };

                let dvyk = lat.d
                    * (m.r_vy1 + m.r_vy2 * dfz + m.r_vy3 * gamma)
                    * (m.r_vy4 * tan_alpha).atan().cos();
                let svyk = dvyk * (m.r_vy5 * (m.r_vy6 * kappa).atan()).sin();
                TyreForce {
                    fx: gxa * fx0,
                    fy: gyk * fy0 + svyk,
                }
            }
        }
    }

    /// The normalised-slip friction-ellipse combination; `x`, `y` are the
    /// shifted slips κx and αy. See [`TyreModel::combined`].
    #[inline]
    fn friction_ellipse(long: &Curve, lat: &Curve, x: f64, y: f64) -> TyreForce {
        let norm = |c: &Curve, slip: f64| {
            if c.d > 0.0 {
                (c.k * slip / c.d).clamp(-NORM_SLIP_MAX, NORM_SLIP_MAX)
            } else {
                0.0
            }
        };
        let sx = norm(long, x);
        let sy = norm(lat, y);
        // Plain root in the normal range (cheap); hypot where the squares
        // could underflow (sx, sy are clamped, so they cannot overflow).
        let s = if sx.abs().max(sy.abs()) > 1e-140 {
            (sx * sx + sy * sy).sqrt()
        } else {
            sx.hypot(sy)
        };
        let fx_curve = if sy == 0.0 {
            long.shape(x)
        } else if sx == 0.0 {
            0.0
        } else {
            long.shape(sx.signum() * s * long.d / long.k) * (sx.abs() / s)
        };
        let fy_curve = if sx == 0.0 {
            lat.shape(y)
        } else if sy == 0.0 {
            0.0
        } else {
            lat.shape(sy.signum() * s * lat.d / lat.k) * (sy.abs() / s)
        };
        let mut fx = if long.d > 0.0 {
            fx_curve + long.sv
        } else {
            0.0
        };
        let mut fy = if lat.d > 0.0 { fy_curve + lat.sv } else { 0.0 };
        // Back onto the ellipse if the shifts pushed the force outside. The
        // semi-axes include the vertical shifts, the largest force each pure
        // curve can give, so a pure-slip result is never cut.
        let (ax, ay) = (long.d + long.sv.abs(), lat.d + lat.sv.abs());
        if long.d > 0.0 && lat.d > 0.0 {
            let (ux, uy) = (fx / ax, fy / ay);
            // Plain root in the normal range (cheap), hypot where squares could overflow.
            let r = if ux.abs() < 1e150 && uy.abs() < 1e150 {
                (ux * ux + uy * uy).sqrt()
            } else {
                ux.hypot(uy)
            };
            if r > 1.0 {
                fx /= r;
                fy /= r;
            }
        }
        TyreForce { fx, fy }
    }
}

#[cfg(test)]
mod tests;
