//! The tyre forces of the four wheels evaluated together, in vector lanes.
//!
//! [`TyreLanes`] holds the coefficients of four tyres (one per lane: FL, FR,
//! RL, RR) with everything that does not depend on the load or the slips
//! folded in once: the static camber, the road friction scale, the scaled
//! nominal load and its reciprocal. [`TyreLanes::forces`] then evaluates the
//! same equations as the scalar reference [`TyreModel::combined_tan`] (see its
//! documentation and that of [`TyreModel::combined`] for the equations and
//! their sources), in three passes over fixed-size arrays that the compiler
//! turns into packed vector instructions:
//!
//! 1. per wheel (4 lanes): the load dependence of both curves (one exp);
//! 2. the eight Magic Formula curves together (8 lanes: 4 longitudinal, 4
//!    lateral), each D·sin{C·atan[B·x − E·(B·x − atan B·x)]} (Pacejka, *Tire
//!    and Vehicle Dynamics*, 2nd ed., ch. 4, general form);
//! 3. per wheel: the combination (friction ellipse, or the MF weighting
//!    functions on 16 more lanes).
//!
//! Branches of the reference become selects; atan, sin, cos and exp are the
//! branch-free approximations of `tyre::approx`. Where the reference writes
//! cos(atan y), this uses the identity 1/√(1 + y²). The results equal the
//! reference's to rounding: within 1e-12 of the peak force D + |SV| of each
//! direction over a grid of slips, loads and cambers, both combined-slip
//! methods (the test `lanes_equal_the_scalar_reference`).

use std::f64::consts::FRAC_PI_2;

use super::approx::{atan, cos, exp, sin};
use super::model::{ARG_MAX, KAPPA_MAX, LOAD_MAX_FACTOR, NORM_SLIP_MAX};
use super::{CombinedSlip, TyreModel};

/// Number of tyres evaluated together.
pub const LANES: usize = 4;

/// One value per tyre.
type Lanes = [f64; LANES];
/// One value per curve: the four longitudinal curves, then the four lateral.
type Curves = [f64; 2 * LANES];

/// Four tyres ready for [`TyreLanes::forces`]: per-lane coefficients with the
/// camber, the friction scale and the nominal load folded in.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct TyreLanes {
    /// Road friction scale, 1 (a lane with friction ≤ 0 gives no force).
    friction: Lanes,
    /// Scaled nominal load Fz0', its reciprocal and the largest load evaluated, N, 1/N, N.
    fz0: Lanes,
    inv_fz0: Lanes,
    fz_max: Lanes,
    /// Shape factors C, longitudinal then lateral.
    c: Curves,
    /// pDx1, pDx2, λμx.
    dx: [Lanes; 3],
    /// pKx1, pKx2, pKx3.
    kx: [Lanes; 3],
    /// pEx1, pEx2, pEx3, pEx4.
    ex: [Lanes; 4],
    /// pHx1, pHx2.
    hx: [Lanes; 2],
    /// (pVx1, pVx2)·λμx·friction.
    vx: [Lanes; 2],
    /// pDy1, pDy2 and the camber factor (1 − pDy3·γ²)·λμy.
    dy: [Lanes; 3],
    /// pKy1·Fz0'·(1 − pKy3·|γ|) and 1/(pKy2·Fz0').
    ky: [Lanes; 2],
    /// pEy1, pEy2 and the asymmetry pEy3 + pEy4·γ.
    ey: [Lanes; 3],
    /// pHy1 + pHy3·γ and pHy2.
    hy: [Lanes; 2],
    /// (pVy1 + pVy3·γ) and (pVy2 + pVy4·γ), each ·λμy·friction.
    vy: [Lanes; 2],
    /// Weighting coefficients: rBx1, rBx2, rCx1, rEx1, rEx2, rHx1.
    rx: [Lanes; 6],
    /// rBy1, rBy2, rBy3, rCy1, rEy1, rEy2, rHy1, rHy2.
    ry: [Lanes; 8],
    /// rVy1 + rVy3·γ, rVy2, rVy4, rVy5, rVy6.
    rv: [Lanes; 5],
    /// Lanes combined by the MF weighting functions (the others by the ellipse).
    magic_formula: [bool; LANES],
}

/// The load-dependent curve factors of one evaluation, longitudinal lanes
/// then lateral (Pacejka ch. 4: y = D·sin{C·atan[B·x − E·(B·x − atan B·x)]} + SV).
#[derive(Debug, Clone, Copy, Default)]
struct CurveSet {
    b: Curves,
    d: Curves,
    k: Curves,
    e_base: Curves,
    e_asym: Curves,
    sh: Curves,
    sv: Curves,
}

/// Inputs of one evaluation after the reference's clamps.
#[derive(Debug, Clone, Copy, Default)]
struct Slips {
    kappa: Lanes,
    tan_alpha: Lanes,
    dfz: Lanes,
    valid: [bool; LANES],
}

impl TyreLanes {
    /// Four tyres with their camber angles (rad, ISO 8855 tyre axes), the road
    /// friction scale (1) and their combined-slip methods.
    pub fn new(
        tyres: [&TyreModel; LANES],
        camber: Lanes,
        friction: f64,
        methods: [CombinedSlip; LANES],
    ) -> Self {
        let m = tyres.map(TyreModel::coefficients);
        let g = camber.map(|g| g.clamp(-FRAC_PI_2, FRAC_PI_2));
        let lane = |f: &dyn Fn(usize) -> f64| -> Lanes { std::array::from_fn(f) };
        let fz0 = lane(&|i| tyres[i].nominal_load());
        let friction = [friction; LANES];
        Self {
            friction,
            fz0,
            inv_fz0: fz0.map(|f| 1.0 / f),
            fz_max: fz0.map(|f| LOAD_MAX_FACTOR * f),
            c: std::array::from_fn(|j| {
                let i = j % LANES;
                if j < LANES { m[i].p_cx1 } else { m[i].p_cy1 }
            }),
            dx: [
                lane(&|i| m[i].p_dx1),
                lane(&|i| m[i].p_dx2),
                lane(&|i| m[i].lambda_mux),
            ],
            kx: [
                lane(&|i| m[i].p_kx1),
                lane(&|i| m[i].p_kx2),
                lane(&|i| m[i].p_kx3),
            ],
            ex: [
                lane(&|i| m[i].p_ex1),
                lane(&|i| m[i].p_ex2),
                lane(&|i| m[i].p_ex3),
                lane(&|i| m[i].p_ex4),
            ],
            hx: [lane(&|i| m[i].p_hx1), lane(&|i| m[i].p_hx2)],
            vx: [
                lane(&|i| m[i].p_vx1 * m[i].lambda_mux * friction[i]),
                lane(&|i| m[i].p_vx2 * m[i].lambda_mux * friction[i]),
            ],
            dy: [
                lane(&|i| m[i].p_dy1),
                lane(&|i| m[i].p_dy2),
                lane(&|i| (1.0 - m[i].p_dy3 * g[i] * g[i]) * m[i].lambda_muy),
            ],
            ky: [
                lane(&|i| m[i].p_ky1 * fz0[i] * (1.0 - m[i].p_ky3 * g[i].abs())),
                lane(&|i| 1.0 / (m[i].p_ky2 * fz0[i])),
            ],
            ey: [
                lane(&|i| m[i].p_ey1),
                lane(&|i| m[i].p_ey2),
                lane(&|i| m[i].p_ey3 + m[i].p_ey4 * g[i]),
            ],
            hy: [
                lane(&|i| m[i].p_hy1 + m[i].p_hy3 * g[i]),
                lane(&|i| m[i].p_hy2),
            ],
            vy: [
                lane(&|i| (m[i].p_vy1 + m[i].p_vy3 * g[i]) * m[i].lambda_muy * friction[i]),
                lane(&|i| (m[i].p_vy2 + m[i].p_vy4 * g[i]) * m[i].lambda_muy * friction[i]),
            ],
            rx: [
                lane(&|i| m[i].r_bx1),
                lane(&|i| m[i].r_bx2),
                lane(&|i| m[i].r_cx1),
                lane(&|i| m[i].r_ex1),
                lane(&|i| m[i].r_ex2),
                lane(&|i| m[i].r_hx1),
            ],
            ry: [
                lane(&|i| m[i].r_by1),
                lane(&|i| m[i].r_by2),
                lane(&|i| m[i].r_by3),
                lane(&|i| m[i].r_cy1),
                lane(&|i| m[i].r_ey1),
                lane(&|i| m[i].r_ey2),
                lane(&|i| m[i].r_hy1),
                lane(&|i| m[i].r_hy2),
            ],
            rv: [
                lane(&|i| m[i].r_vy1 + m[i].r_vy3 * g[i]),
                lane(&|i| m[i].r_vy2),
                lane(&|i| m[i].r_vy4),
                lane(&|i| m[i].r_vy5),
                lane(&|i| m[i].r_vy6),
            ],
            magic_formula: methods.map(|k| k == CombinedSlip::MagicFormula),
        }
    }

    /// Longitudinal and lateral force (N, wheel axes) of each lane at slip
    /// ratio κ (1), tan of the slip angle (1) and load Fz (N): the same as
    /// [`TyreModel::combined_tan`] with each lane's camber, friction and
    /// method, to rounding.
    ///
    /// On x86-64 processors with AVX2 the same code runs compiled for it (four
    /// lanes per instruction instead of two); both builds do the same IEEE
    /// operations in the same order (no fused multiply-add), so the results are
    /// bit for bit the same (test `avx2_and_baseline_agree_bit_for_bit`).
    #[inline]
    pub fn forces(&self, kappa: &Lanes, tan_alpha: &Lanes, fz: &Lanes) -> (Lanes, Lanes) {
        #[cfg(target_arch = "x86_64")]
        if std::arch::is_x86_feature_detected!("avx2") {
            // SAFETY: the processor has AVX2 (checked just above).
            return unsafe { self.forces_avx2(kappa, tan_alpha, fz) };
        }
        self.forces_baseline(kappa, tan_alpha, fz)
    }

    /// [`forces`](Self::forces) compiled for AVX2.
    ///
    /// # Safety
    /// The processor must support AVX2.
    #[cfg(target_arch = "x86_64")]
    #[target_feature(enable = "avx2")]
    unsafe fn forces_avx2(&self, kappa: &Lanes, tan_alpha: &Lanes, fz: &Lanes) -> (Lanes, Lanes) {
        self.forces_lanes(kappa, tan_alpha, fz)
    }

    /// [`forces`](Self::forces) compiled for the baseline of the target.
    fn forces_baseline(&self, kappa: &Lanes, tan_alpha: &Lanes, fz: &Lanes) -> (Lanes, Lanes) {
        self.forces_lanes(kappa, tan_alpha, fz)
    }

    #[inline(always)]
    fn forces_lanes(&self, kappa: &Lanes, tan_alpha: &Lanes, fz: &Lanes) -> (Lanes, Lanes) {
        let (slips, curves) = self.curves(kappa, tan_alpha, fz);
        let any_mf = self.magic_formula.iter().any(|&m| m);
        let all_mf = self.magic_formula.iter().all(|&m| m);
        let (mut fx, mut fy) = ([0.0; LANES], [0.0; LANES]);
        if !all_mf {
            (fx, fy) = friction_ellipse(&curves, &slips, &self.c);
        }
        if any_mf {
            let (mx, my) = self.weighted(&curves, &slips);
            for i in 0..LANES {
                fx[i] = if self.magic_formula[i] { mx[i] } else { fx[i] };
                fy[i] = if self.magic_formula[i] { my[i] } else { fy[i] };
            }
        }
        // No load or no friction: no force.
        for i in 0..LANES {
            fx[i] = if slips.valid[i] { fx[i] } else { 0.0 };
            fy[i] = if slips.valid[i] { fy[i] } else { 0.0 };
        }
        (fx, fy)
    }

    /// The clamped inputs and the load-dependent factors of the eight curves
    /// (MF 5.2 load dependence, see [`TyreModel::combined`]).
    #[inline(always)]
    fn curves(&self, kappa: &Lanes, tan_alpha: &Lanes, fz: &Lanes) -> (Slips, CurveSet) {
        let mut s = Slips::default();
        let mut c = CurveSet::default();
        for i in 0..LANES {
            s.valid[i] = fz[i] > 0.0 && self.friction[i] > 0.0;
            let f = fz[i].min(self.fz_max[i]);
            let dfz = (f - self.fz0[i]) * self.inv_fz0[i];
            s.dfz[i] = dfz;
            s.kappa[i] = kappa[i].clamp(-KAPPA_MAX, KAPPA_MAX);
            let t = tan_alpha[i];
            s.tan_alpha[i] = if t.is_nan() {
                0.0
            } else {
                t.clamp(-1e12, 1e12)
            };
            // Longitudinal: Dx = μx·Fz, Kxκ = Fz·(pKx1 + pKx2·dfz)·exp(pKx3·dfz).
            let mu_x =
                ((self.dx[0][i] + self.dx[1][i] * dfz) * self.dx[2][i]).max(0.0) * self.friction[i];
            c.d[i] = mu_x * f;
            c.k[i] =
                (f * (self.kx[0][i] + self.kx[1][i] * dfz) * exp(self.kx[2][i] * dfz)).max(0.0);
            c.e_base[i] = self.ex[0][i] + self.ex[1][i] * dfz + self.ex[2][i] * dfz * dfz;
            c.e_asym[i] = self.ex[3][i];
            c.sh[i] = self.hx[0][i] + self.hx[1][i] * dfz;
            c.sv[i] = f * (self.vx[0][i] + self.vx[1][i] * dfz);
            // Lateral: Dy = μy·Fz, Kyα = pKy1·Fz0'·2u/(1 + u²)·(1 − pKy3·|γ|), u = Fz/(pKy2·Fz0').
            let j = LANES + i;
            let mu_y =
                ((self.dy[0][i] + self.dy[1][i] * dfz) * self.dy[2][i]).max(0.0) * self.friction[i];
            c.d[j] = mu_y * f;
            let u = f * self.ky[1][i];
            let sin_2atan = if u.is_finite() {
                2.0 * u / (1.0 + u * u)
            } else {
                0.0
            };
            c.k[j] = (self.ky[0][i] * sin_2atan).max(0.0);
            c.e_base[j] = self.ey[0][i] + self.ey[1][i] * dfz;
            c.e_asym[j] = self.ey[2][i];
            c.sh[j] = self.hy[0][i] + self.hy[1][i] * dfz;
            c.sv[j] = f * (self.vy[0][i] + self.vy[1][i] * dfz);
        }
        // B = K/(C·D), zero without a peak.
        for j in 0..2 * LANES {
            let cd = self.c[j] * c.d[j];
            c.b[j] = if cd > 0.0 {
                (c.k[j] / cd).min(ARG_MAX)
            } else {
                0.0
            };
        }
        (s, c)
    }

    /// The MF 5.2 weighting-function combination of every lane (see
    /// [`TyreModel::combined`]): the pure curves at the shifted slips, four
    /// weighting functions per wheel on 16 lanes, and SVyκ.
    #[inline(always)]
    fn weighted(&self, c: &CurveSet, s: &Slips) -> (Lanes, Lanes) {
        let x: Curves = std::array::from_fn(|j| {
            let slip = if j < LANES {
                s.kappa[j]
            } else {
                s.tan_alpha[j - LANES]
            };
            slip + c.sh[j]
        });
        let pure = shapes(&c.b, &self.c, &c.d, &c.e_base, &c.e_asym, &x);
        // Weighting inputs: [Gxα0, Gxα, Gyκ0, Gyκ] × 4 wheels.
        let (mut b, mut cc, mut e, mut at) = ([0.0; 16], [0.0; 16], [0.0; 16], [0.0; 16]);
        for i in 0..LANES {
            let (kappa, t, dfz) = (s.kappa[i], s.tan_alpha[i], s.dfz[i]);
            let [rbx1, rbx2, rcx1, rex1, rex2, rhx1] = self.rx.map(|r| r[i]);
            let [rby1, rby2, rby3, rcy1, rey1, rey2, rhy1, rhy2] = self.ry.map(|r| r[i]);
            // cos(atan y) = 1/√(1 + y²).
            let y = rbx2 * kappa;
            let bxa = rbx1 / (1.0 + y * y).sqrt();
            let exa = (rex1 + rex2 * dfz).min(1.0);
            let y = rby2 * (t - rby3);
            let byk = rby1 / (1.0 + y * y).sqrt();
            let eyk = (rey1 + rey2 * dfz).min(1.0);
            let shyk = rhy1 + rhy2 * dfz;
            let lanes = [i, LANES + i, 2 * LANES + i, 3 * LANES + i];
            for (l, (bb, ccc, ee, xx)) in lanes.into_iter().zip([
                (bxa, rcx1, exa, rhx1),
                (bxa, rcx1, exa, t + rhx1),
                (byk, rcy1, eyk, shyk),
                (byk, rcy1, eyk, kappa + shyk),
            ]) {
                (b[l], cc[l], e[l], at[l]) = (bb, ccc, ee, xx);
            }
        }
        let w = weightings(&b, &cc, &e, &at);
        let (mut fx, mut fy) = ([0.0; LANES], [0.0; LANES]);
        for i in 0..LANES {
            let (gxa0, gxa) = (w[i], w[LANES + i]);
            let (gyk0, gyk) = (w[2 * LANES + i], w[3 * LANES + i]);
            let gxa = if gxa0 > 0.0 { gxa / gxa0 } else { 0.0 };
            let gyk = if gyk0 > 0.0 { gyk / gyk0 } else { 0.0 };
            let [rvy0, rvy2, rvy4, rvy5, rvy6] = self.rv.map(|r| r[i]);
            let y = rvy4 * s.tan_alpha[i];
            let dvyk = c.d[LANES + i] * (rvy0 + rvy2 * s.dfz[i]) / (1.0 + y * y).sqrt();
            let svyk = dvyk * sin(rvy5 * atan(rvy6 * s.kappa[i]));
            fx[i] = gxa * (pure[i] + c.sv[i]);
            fy[i] = gyk * (pure[LANES + i] + c.sv[LANES + i]) + svyk;
        }
        (fx, fy)
    }
}

/// The normalised-slip friction-ellipse combination of every lane (see
/// [`TyreModel::combined`]): both curves at the equivalent slips, together.
#[inline(always)]
fn friction_ellipse(c: &CurveSet, s: &Slips, shape_factor: &Curves) -> (Lanes, Lanes) {
    // Shifted slips κx, αy and normalised slips sx, sy.
    let x: Curves = std::array::from_fn(|j| {
        let slip = if j < LANES {
            s.kappa[j]
        } else {
            s.tan_alpha[j - LANES]
        };
        slip + c.sh[j]
    });
    let norm: Curves = std::array::from_fn(|j| {
        let n = (c.k[j] * x[j] / c.d[j]).clamp(-NORM_SLIP_MAX, NORM_SLIP_MAX);
        if c.d[j] > 0.0 { n } else { 0.0 }
    });
    // Combined slip s = hypot(sx, sy), scaled by 2⁶⁰⁰ where the squares could underflow.
    let mut combined = [0.0; LANES];
    for i in 0..LANES {
        let (sx, sy) = (norm[i], norm[LANES + i]);
        let tiny = sx.abs().max(sy.abs()) <= 1e-140;
        let scale = if tiny {
            f64::from_bits(0x6570_0000_0000_0000)
        } else {
            1.0
        };
        let (a, b) = (sx * scale, sy * scale);
        let root = (a * a + b * b).sqrt();
        combined[i] = if tiny {
            root * f64::from_bits(0x1a70_0000_0000_0000)
        } else {
            root
        };
    }
    // Each curve at the slip whose normalised slip is s, with its own sign
    // (the pure curve itself where the other slip is zero).
    let mut arg = [0.0; 2 * LANES];
    for j in 0..2 * LANES {
        let (own, other) = (norm[j], norm[(j + LANES) % (2 * LANES)]);
        let equivalent = 1f64.copysign(own) * combined[j % LANES] * c.d[j] / c.k[j];
        arg[j] = if other == 0.0 { x[j] } else { equivalent };
    }
    let shape = shapes(&c.b, shape_factor, &c.d, &c.e_base, &c.e_asym, &arg);
    let mut f = [0.0; 2 * LANES];
    for j in 0..2 * LANES {
        let (own, other) = (norm[j], norm[(j + LANES) % (2 * LANES)]);
        let share = shape[j] * (own.abs() / combined[j % LANES]);
        let curve = if other == 0.0 {
            shape[j]
        } else if own == 0.0 {
            0.0
        } else {
            share
        };
        f[j] = if c.d[j] > 0.0 { curve + c.sv[j] } else { 0.0 };
    }
    // Back onto the ellipse with semi-axes D + |SV| if the shifts pushed the force outside.
    let (mut fx, mut fy) = ([0.0; LANES], [0.0; LANES]);
    for i in 0..LANES {
        let j = LANES + i;
        let (ax, ay) = (c.d[i] + c.sv[i].abs(), c.d[j] + c.sv[j].abs());
        let (ux, uy) = (f[i] / ax, f[j] / ay);
        let big = ux.abs().max(uy.abs()) >= 1e150;
        let scale = if big {
            f64::from_bits(0x1a70_0000_0000_0000)
        } else {
            1.0
        };
        let (a, b) = (ux * scale, uy * scale);
        let root = (a * a + b * b).sqrt();
        let r = if big {
            root * f64::from_bits(0x6570_0000_0000_0000)
        } else {
            root
        };
        let clip = c.d[i] > 0.0 && c.d[j] > 0.0 && r > 1.0;
        fx[i] = if clip { f[i] / r } else { f[i] };
        fy[i] = if clip { f[j] / r } else { f[j] };
    }
    (fx, fy)
}

/// y = D·sin{C·atan[B·x − E·(B·x − atan B·x)]} in every lane, with
/// E = min(E_base·(1 − E_asym·sgn x), 1) and B·x capped at ±1e12 (as the
/// reference's curve shape).
#[inline(always)]
fn shapes<const N: usize>(
    b: &[f64; N],
    c: &[f64; N],
    d: &[f64; N],
    e_base: &[f64; N],
    e_asym: &[f64; N],
    x: &[f64; N],
) -> [f64; N] {
    let mut y = [0.0; N];
    for j in 0..N {
        let e = (e_base[j] * (1.0 - e_asym[j] * 1f64.copysign(x[j]))).min(1.0);
        let bx = (b[j] * x[j]).clamp(-ARG_MAX, ARG_MAX);
        y[j] = d[j] * sin(c[j] * atan(bx - e * (bx - atan(bx))));
    }
    y
}

/// The MF weighting cos{C·atan[B·x − E·(B·x − atan B·x)]} in every lane.
#[inline(always)]
fn weightings<const N: usize>(b: &[f64; N], c: &[f64; N], e: &[f64; N], x: &[f64; N]) -> [f64; N] {
    let mut y = [0.0; N];
    for j in 0..N {
        let bx = (b[j] * x[j]).clamp(-ARG_MAX, ARG_MAX);
        y[j] = cos(c[j] * atan(bx - e[j] * (bx - atan(bx))));
    }
    y
}

#[cfg(test)]
mod tests;
