//! The Magic Formula coefficient table of one tyre, as read from the vehicle
//! file (`[tyre.front.magic_formula]`), and its physical plausibility check.
//!
//! Coefficient names are the published MF 5.2 names (Pacejka, *Tire and
//! Vehicle Dynamics*, 2nd ed. 2006, ch. 4, from memory for the exact equation
//! numbers). Normalised load increment `dfz = (Fz − Fz0')/Fz0'` with
//! `Fz0' = lambda_fz0·Fz0`.

use serde::{Deserialize, Serialize};

/// Magic Formula 5.2 coefficients of one tyre (the `magic_formula` table).
///
/// Sign convention: a positive slip angle α gives a positive (leftward,
/// ISO 8855 y) lateral force, so `pKy1` and `pDy1` are positive here. Some
/// published data sets use the opposite lateral sign and carry a negative
/// `pKy1`; such sets need the sign of their lateral stiffness flipped (from
/// memory).
///
/// Required keys: `nominal_load_n`, `pCx1`, `pDx1`, `pKx1`, `pCy1`, `pDy1`,
/// `pKy1`, `pKy2`. Everything else defaults to 0 (no shift, no curvature, no
/// load or camber variation), except the scaling factors (default 1.0) and the
/// combined-slip weighting factors `rBx1`, `rCx1`, `rBy1`, `rCy1`, which default
/// to published-typical magnitudes recalled from memory.
///
/// ```
/// use yawdyn::tyre::MagicFormulaCoefficients;
/// let mf: MagicFormulaCoefficients = toml::from_str(
///     "nominal_load_n = 4500.0\npCx1 = 1.6\npDx1 = 1.0\npKx1 = 20.0\n\
///      pCy1 = 1.3\npDy1 = 0.95\npKy1 = 17.0\npKy2 = 1.8\n",
/// ).unwrap();
/// assert!(mf.check().is_empty());
/// ```
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct MagicFormulaCoefficients {
    /// Nominal (rated) wheel load Fz0 at which the coefficients were fitted (N); must be > 0.
    pub nominal_load_n: f64,
    /// Scale λFz0 on the nominal load (-); default 1.0; must be > 0.
    #[serde(default = "one")]
    pub lambda_fz0: f64,
    /// Scale λμx on the longitudinal peak friction (-); default 1.0; must be > 0.
    #[serde(default = "one")]
    pub lambda_mux: f64,
    /// Scale λμy on the lateral peak friction (-); default 1.0; must be > 0.
    #[serde(default = "one")]
    pub lambda_muy: f64,
    /// Shape factor Cx of the pure longitudinal curve (-). Needs 1 ≤ Cx < 2; typical 1.5–1.7.
    #[serde(rename = "pCx1")]
    pub p_cx1: f64,
    /// Longitudinal peak friction coefficient μx at nominal load (-), before `lambda_mux` and road friction.
    #[serde(rename = "pDx1")]
    pub p_dx1: f64,
    /// Variation of μx with normalised load increment dfz (-); negative gives load sensitivity (μ falls as load rises). Default 0.
    #[serde(rename = "pDx2", default)]
    pub p_dx2: f64,
    /// Longitudinal curvature factor Ex at nominal load (-); must be ≤ 1. Default 0.
    #[serde(rename = "pEx1", default)]
    pub p_ex1: f64,
    /// Variation of Ex with dfz (-). Default 0.
    #[serde(rename = "pEx2", default)]
    pub p_ex2: f64,
    /// Variation of Ex with dfz² (-). Default 0.
    #[serde(rename = "pEx3", default)]
    pub p_ex3: f64,
    /// Asymmetry of Ex between driving and braking: Ex·(1 − pEx4·sgn κ) (-). Default 0.
    #[serde(rename = "pEx4", default)]
    pub p_ex4: f64,
    /// Longitudinal slip stiffness at nominal load divided by load, Kxκ/Fz (N per unit slip per N, i.e. -); must be > 0; typical 15–30.
    #[serde(rename = "pKx1")]
    pub p_kx1: f64,
    /// Variation of Kxκ/Fz with dfz (-). Default 0.
    #[serde(rename = "pKx2", default)]
    pub p_kx2: f64,
    /// Exponential variation of Kxκ with dfz: factor exp(pKx3·dfz) (-). Default 0.
    #[serde(rename = "pKx3", default)]
    pub p_kx3: f64,
    /// Horizontal shift SHx of the longitudinal curve at nominal load (slip ratio, -). Default 0.
    #[serde(rename = "pHx1", default)]
    pub p_hx1: f64,
    /// Variation of SHx with dfz (slip ratio, -). Default 0.
    #[serde(rename = "pHx2", default)]
    pub p_hx2: f64,
    /// Vertical shift SVx/Fz of the longitudinal curve at nominal load (-). Default 0.
    #[serde(rename = "pVx1", default)]
    pub p_vx1: f64,
    /// Variation of SVx/Fz with dfz (-). Default 0.
    #[serde(rename = "pVx2", default)]
    pub p_vx2: f64,
    /// Shape factor Cy of the pure lateral curve (-). Needs 1 ≤ Cy < 2; typical 1.2–1.5.
    #[serde(rename = "pCy1")]
    pub p_cy1: f64,
    /// Lateral peak friction coefficient μy at nominal load and zero camber (-), before `lambda_muy` and road friction.
    #[serde(rename = "pDy1")]
    pub p_dy1: f64,
    /// Variation of μy with dfz (-); negative gives load sensitivity. Default 0.
    #[serde(rename = "pDy2", default)]
    pub p_dy2: f64,
    /// Variation of μy with camber squared: factor (1 − pDy3·γ²) (1/rad²). Default 0.
    #[serde(rename = "pDy3", default)]
    pub p_dy3: f64,
    /// Lateral curvature factor Ey at nominal load (-); must be ≤ 1. Default 0.
    #[serde(rename = "pEy1", default)]
    pub p_ey1: f64,
    /// Variation of Ey with dfz (-). Default 0.
    #[serde(rename = "pEy2", default)]
    pub p_ey2: f64,
    /// Asymmetry of Ey with the sign of slip angle: Ey·(1 − (pEy3 + pEy4·γ)·sgn α) (-). Default 0.
    #[serde(rename = "pEy3", default)]
    pub p_ey3: f64,
    /// Variation of the Ey asymmetry with camber (1/rad). Default 0.
    #[serde(rename = "pEy4", default)]
    pub p_ey4: f64,
    /// Maximum cornering stiffness divided by nominal load, max Kyα/Fz0 (1/rad); must be > 0 in this crate's sign convention (positive α gives positive Fy); typical 12–35.
    #[serde(rename = "pKy1")]
    pub p_ky1: f64,
    /// Load at which the cornering stiffness peaks, as a multiple of the nominal load (-); must be > 0; typical 1.5–3.
    #[serde(rename = "pKy2")]
    pub p_ky2: f64,
    /// Variation of cornering stiffness with |camber|: factor (1 − pKy3·|γ|) (1/rad). Default 0.
    #[serde(rename = "pKy3", default)]
    pub p_ky3: f64,
    /// Horizontal shift SHy of the lateral curve at nominal load (on tan α, -). Default 0.
    #[serde(rename = "pHy1", default)]
    pub p_hy1: f64,
    /// Variation of SHy with dfz (-). Default 0.
    #[serde(rename = "pHy2", default)]
    pub p_hy2: f64,
    /// Variation of SHy with camber (1/rad, i.e. per rad of camber). Default 0.
    #[serde(rename = "pHy3", default)]
    pub p_hy3: f64,
    /// Vertical shift SVy/Fz of the lateral curve at nominal load (-). Default 0.
    #[serde(rename = "pVy1", default)]
    pub p_vy1: f64,
    /// Variation of SVy/Fz with dfz (-). Default 0.
    #[serde(rename = "pVy2", default)]
    pub p_vy2: f64,
    /// Camber thrust: variation of SVy/Fz with camber (1/rad). Default 0.
    #[serde(rename = "pVy3", default)]
    pub p_vy3: f64,
    /// Variation of the camber thrust term with dfz (1/rad). Default 0.
    #[serde(rename = "pVy4", default)]
    pub p_vy4: f64,
    /// Combined slip: stiffness factor of the weighting Gxα on slip angle (-, acts on tan α). Default 12.0, a published-typical magnitude recalled from memory (Pacejka's example tyre, ch. 4).
    #[serde(rename = "rBx1", default = "default_r_bx1")]
    pub r_bx1: f64,
    /// Combined slip: reduction of the Gxα stiffness with slip ratio, Bxα = rBx1·cos(atan(rBx2·κ)) (-). Default 0.
    #[serde(rename = "rBx2", default)]
    pub r_bx2: f64,
    /// Combined slip: shape factor of Gxα (-); needs 0 < rCx1 ≤ 1 so that Gxα never turns negative. Default 1.0 (published-typical, from memory).
    #[serde(rename = "rCx1", default = "default_r_cx1")]
    pub r_cx1: f64,
    /// Combined slip: curvature factor of Gxα at nominal load (-); must be ≤ 1. Default 0.
    #[serde(rename = "rEx1", default)]
    pub r_ex1: f64,
    /// Combined slip: variation of the Gxα curvature with dfz (-). Default 0.
    #[serde(rename = "rEx2", default)]
    pub r_ex2: f64,
    /// Combined slip: horizontal shift of Gxα (on tan α, -). Default 0.
    #[serde(rename = "rHx1", default)]
    pub r_hx1: f64,
    /// Combined slip: stiffness factor of the weighting Gyκ on slip ratio (-). Default 10.0, a published-typical magnitude recalled from memory (Pacejka's example tyre, ch. 4).
    #[serde(rename = "rBy1", default = "default_r_by1")]
    pub r_by1: f64,
    /// Combined slip: reduction of the Gyκ stiffness with slip angle, Byκ = rBy1·cos(atan(rBy2·(tan α − rBy3))) (-). Default 0.
    #[serde(rename = "rBy2", default)]
    pub r_by2: f64,
    /// Combined slip: slip-angle shift inside the Byκ reduction (on tan α, -). Default 0.
    #[serde(rename = "rBy3", default)]
    pub r_by3: f64,
    /// Combined slip: shape factor of Gyκ (-); needs 0 < rCy1 ≤ 1 so that Gyκ never turns negative. Default 1.0 (published-typical, from memory).
    #[serde(rename = "rCy1", default = "default_r_cy1")]
    pub r_cy1: f64,
    /// Combined slip: curvature factor of Gyκ at nominal load (-); must be ≤ 1. Default 0.
    #[serde(rename = "rEy1", default)]
    pub r_ey1: f64,
    /// Combined slip: variation of the Gyκ curvature with dfz (-). Default 0.
    #[serde(rename = "rEy2", default)]
    pub r_ey2: f64,
    /// Combined slip: horizontal shift of Gyκ at nominal load (slip ratio, -). Default 0.
    #[serde(rename = "rHy1", default)]
    pub r_hy1: f64,
    /// Combined slip: variation of the Gyκ shift with dfz (slip ratio, -). Default 0.
    #[serde(rename = "rHy2", default)]
    pub r_hy2: f64,
    /// Combined slip: κ-induced lateral force ('ply-steer under drive') amplitude DVyκ/(μy·Fz) at nominal load (-). Default 0.
    #[serde(rename = "rVy1", default)]
    pub r_vy1: f64,
    /// Combined slip: variation of DVyκ/(μy·Fz) with dfz (-). Default 0.
    #[serde(rename = "rVy2", default)]
    pub r_vy2: f64,
    /// Combined slip: variation of DVyκ/(μy·Fz) with camber (1/rad). Default 0.
    #[serde(rename = "rVy3", default)]
    pub r_vy3: f64,
    /// Combined slip: fade of DVyκ with slip angle, factor cos(atan(rVy4·tan α)) (-). Default 0.
    #[serde(rename = "rVy4", default)]
    pub r_vy4: f64,
    /// Combined slip: shape of SVyκ = DVyκ·sin(rVy5·atan(rVy6·κ)) (-). Default 0.
    #[serde(rename = "rVy5", default)]
    pub r_vy5: f64,
    /// Combined slip: stiffness of SVyκ on slip ratio (-). Default 0.
    #[serde(rename = "rVy6", default)]
    pub r_vy6: f64,
}

fn one() -> f64 {
    1.0
}
fn default_r_bx1() -> f64 {
    12.0
}
fn default_r_cx1() -> f64 {
    1.0
}
fn default_r_by1() -> f64 {
    10.0
}
fn default_r_cy1() -> f64 {
    1.0
}

impl MagicFormulaCoefficients {
    /// Every coefficient with its TOML key, in declaration order.
    pub fn entries(&self) -> [(&'static str, f64); 56] {
        [
            ("nominal_load_n", self.nominal_load_n),
            ("lambda_fz0", self.lambda_fz0),
            ("lambda_mux", self.lambda_mux),
            ("lambda_muy", self.lambda_muy),
            ("pCx1", self.p_cx1),
            ("pDx1", self.p_dx1),
            ("pDx2", self.p_dx2),
            ("pEx1", self.p_ex1),
            ("pEx2", self.p_ex2),
            ("pEx3", self.p_ex3),
            ("pEx4", self.p_ex4),
            ("pKx1", self.p_kx1),
            ("pKx2", self.p_kx2),
            ("pKx3", self.p_kx3),
            ("pHx1", self.p_hx1),
            ("pHx2", self.p_hx2),
            ("pVx1", self.p_vx1),
            ("pVx2", self.p_vx2),
            ("pCy1", self.p_cy1),
            ("pDy1", self.p_dy1),
            ("pDy2", self.p_dy2),
            ("pDy3", self.p_dy3),
            ("pEy1", self.p_ey1),
            ("pEy2", self.p_ey2),
            ("pEy3", self.p_ey3),
            ("pEy4", self.p_ey4),
            ("pKy1", self.p_ky1),
            ("pKy2", self.p_ky2),
            ("pKy3", self.p_ky3),
            ("pHy1", self.p_hy1),
            ("pHy2", self.p_hy2),
            ("pHy3", self.p_hy3),
            ("pVy1", self.p_vy1),
            ("pVy2", self.p_vy2),
            ("pVy3", self.p_vy3),
            ("pVy4", self.p_vy4),
            ("rBx1", self.r_bx1),
            ("rBx2", self.r_bx2),
            ("rCx1", self.r_cx1),
            ("rEx1", self.r_ex1),
            ("rEx2", self.r_ex2),
            ("rHx1", self.r_hx1),
            ("rBy1", self.r_by1),
            ("rBy2", self.r_by2),
            ("rBy3", self.r_by3),
            ("rCy1", self.r_cy1),
            ("rEy1", self.r_ey1),
            ("rEy2", self.r_ey2),
            ("rHy1", self.r_hy1),
            ("rHy2", self.r_hy2),
            ("rVy1", self.r_vy1),
            ("rVy2", self.r_vy2),
            ("rVy3", self.r_vy3),
            ("rVy4", self.r_vy4),
            ("rVy5", self.r_vy5),
            ("rVy6", self.r_vy6),
        ]
    }

    /// One [`CoefficientIssue`] per physically impossible value, named by its
    /// coefficient key (e.g. `pCx1`); the caller places it in the file.
    ///
    /// Rules (the Magic Formula identities are from Pacejka, *Tire and Vehicle
    /// Dynamics*, ch. 4: peak D for C ≥ 1, large-slip value D·sin(C·π/2)):
    /// - every value finite;
    /// - `nominal_load_n` > 0, every `lambda_*` > 0;
    /// - pure-slip shape factors `pCx1`, `pCy1` in [1, 2): below 1 the curve
    ///   rises monotonically and never reaches its peak D; at 2 or above the
    ///   large-slip value D·sin(C·π/2) is ≤ 0, i.e. the force reverses;
    /// - peak factors `pDx1`, `pDy1` > 0 (friction at nominal load);
    /// - stiffness `pKx1`, `pKy1`, `pKy2` > 0 and weighting stiffness `rBx1`,
    ///   `rBy1` > 0 (a slip in one direction must cost force in the other);
    /// - curvature at nominal load ≤ 1 (`pEx1`, `pEy1`, `rEx1`, `rEy1`) and
    ///   including the sign asymmetry (`pEx4`, `pEy3`): for E > 1 the curve
    ///   argument B·x − E·(B·x − atan B·x) turns back and the force is no
    ///   longer a single-valued rise to the peak;
    /// - combined-slip shape factors `rCx1`, `rCy1` in (0, 1]: the weighting
    ///   G = cos(C·atan(…)) has atan(…) up to π/2, so C > 1 lets G turn
    ///   negative at large slip, i.e. braking at a large slip angle would push
    ///   the car forward.
    pub fn check(&self) -> Vec<CoefficientIssue> {
        let mut issues = Vec::new();
        for (key, value) in self.entries() {
            if !value.is_finite() {
                issues.push(CoefficientIssue {
                    key: key.to_string(),
                    message: format!("must be a finite number, got {value}"),
                });
            }
        }
        let mut flag = |key: &str, value: f64, ok: bool, rule: &str| {
            if value.is_finite() && !ok {
                issues.push(CoefficientIssue {
                    key: key.to_string(),
                    message: format!("{rule}, got {value}"),
                });
            }
        };
        flag(
            "nominal_load_n",
            self.nominal_load_n,
            self.nominal_load_n > 0.0,
            "nominal load must be > 0 N",
        );
        for (key, value) in [
            ("lambda_fz0", self.lambda_fz0),
            ("lambda_mux", self.lambda_mux),
            ("lambda_muy", self.lambda_muy),
        ] {
            flag(key, value, value > 0.0, "scale factor must be > 0");
        }
        for (key, value) in [("pCx1", self.p_cx1), ("pCy1", self.p_cy1)] {
            flag(
                key,
                value,
                (1.0..2.0).contains(&value),
                "shape factor C must satisfy 1 <= C < 2 (below 1 the peak D is never \
                 reached; from 2 up the large-slip force D*sin(C*pi/2) reverses sign)",
            );
        }
        for (key, value) in [("pDx1", self.p_dx1), ("pDy1", self.p_dy1)] {
            flag(key, value, value > 0.0, "peak friction factor must be > 0");
        }
        for (key, value) in [
            ("pKx1", self.p_kx1),
            ("pKy1", self.p_ky1),
            ("pKy2", self.p_ky2),
            ("rBx1", self.r_bx1),
            ("rBy1", self.r_by1),
        ] {
            flag(
                key,
                value,
                value > 0.0,
                "stiffness factor must be > 0 (positive slip angle gives positive lateral \
                 force in this convention)",
            );
        }
        for (key, value) in [
            ("pEx1", self.p_ex1),
            ("pEy1", self.p_ey1),
            ("rEx1", self.r_ex1),
            ("rEy1", self.r_ey1),
        ] {
            flag(
                key,
                value,
                value <= 1.0,
                "curvature factor E must be <= 1 (above 1 the curve folds back)",
            );
        }
        // Asymmetry: E·(1 ∓ asym) at nominal load for both slip signs.
        for (key, base, asym) in [
            ("pEx4", self.p_ex1, self.p_ex4),
            ("pEy3", self.p_ey1, self.p_ey3),
        ] {
            if base <= 1.0 && base.is_finite() {
                let worst = (base * (1.0 + asym)).max(base * (1.0 - asym));
                flag(
                    key,
                    asym,
                    worst <= 1.0,
                    "sign asymmetry makes the curvature factor E exceed 1 for one slip sign",
                );
            }
        }
        for (key, value) in [("rCx1", self.r_cx1), ("rCy1", self.r_cy1)] {
            flag(
                key,
                value,
                value > 0.0 && value <= 1.0,
                "combined-slip shape factor must satisfy 0 < C <= 1 (above 1 the weighting \
                 cos(C*atan(..)) turns negative and the force reverses at large slip)",
            );
        }
        issues
    }
}

/// A physically impossible Magic Formula coefficient.
#[derive(Debug, Clone, PartialEq)]
pub struct CoefficientIssue {
    /// The coefficient's key in the table, e.g. `pCx1`.
    pub key: String,
    /// What is wrong, with the value.
    pub message: String,
}

#[cfg(test)]
mod tests {
    use super::*;

    const PATH: &str = "tyre.front.magic_formula";

    fn valid() -> MagicFormulaCoefficients {
        toml::from_str(
            "nominal_load_n = 4500.0\npCx1 = 1.6\npDx1 = 1.0\npDx2 = -0.05\npKx1 = 20.0\n\
             pEx1 = 0.3\npEx4 = 0.5\npCy1 = 1.3\npDy1 = 0.95\npEy1 = -0.5\npEy3 = 0.2\n\
             pKy1 = 17.0\npKy2 = 1.8\n",
        )
        .expect("valid set parses")
    }

    fn paths(mf: &MagicFormulaCoefficients) -> Vec<String> {
        mf.check()
            .into_iter()
            .map(|i| format!("{PATH}.{}", i.key))
            .collect()
    }

    /// Schema: published MF 5.2 key names, defaults as documented, unknown and
    /// missing keys rejected.
    #[test]
    fn toml_keys_and_defaults() {
        let mf = valid();
        assert_eq!(mf.p_cx1, 1.6);
        assert_eq!(mf.p_ey3, 0.2);
        assert_eq!(
            (mf.lambda_fz0, mf.lambda_mux, mf.lambda_muy),
            (1.0, 1.0, 1.0)
        );
        assert_eq!(
            (mf.r_bx1, mf.r_cx1, mf.r_by1, mf.r_cy1),
            (12.0, 1.0, 10.0, 1.0)
        );
        assert_eq!((mf.p_hy3, mf.r_vy6), (0.0, 0.0));
        // Round trip through TOML keeps every value.
        let text = toml::to_string(&mf).unwrap();
        assert!(text.contains("pKy2 = 1.8"), "{text}");
        let back: MagicFormulaCoefficients = toml::from_str(&text).unwrap();
        assert_eq!(back, mf);
        // Unknown key (a typo) is an error, naming the key.
        let err =
            toml::from_str::<MagicFormulaCoefficients>(&format!("{text}pKy9 = 1.0\n")).unwrap_err();
        assert!(err.to_string().contains("pKy9"), "{err}");
        // A required key missing is an error, naming the key.
        let without: String = text
            .lines()
            .filter(|l| !l.starts_with("pKy1 "))
            .map(|l| format!("{l}\n"))
            .collect();
        let err = toml::from_str::<MagicFormulaCoefficients>(&without).unwrap_err();
        assert!(err.to_string().contains("pKy1"), "{err}");
    }

    #[test]
    fn valid_set_has_no_issues() {
        assert!(paths(&valid()).is_empty());
    }

    /// Each class of impossible value is flagged once, at its own key path.
    /// Ranges: Pacejka ch. 4 identities (peak D for C ≥ 1, large-slip value
    /// D·sin(C·π/2)), see `check`.
    #[test]
    fn check_flags_each_class_at_its_key() {
        type Edit = fn(&mut MagicFormulaCoefficients);
        let cases: [(&str, Edit); 22] = [
            ("nominal_load_n", |m| m.nominal_load_n = 0.0),
            ("nominal_load_n", |m| m.nominal_load_n = -4500.0),
            ("lambda_fz0", |m| m.lambda_fz0 = 0.0),
            ("lambda_mux", |m| m.lambda_mux = -1.0),
            ("lambda_muy", |m| m.lambda_muy = 0.0),
            ("pCx1", |m| m.p_cx1 = 0.9),
            ("pCx1", |m| m.p_cx1 = 2.0),
            ("pCy1", |m| m.p_cy1 = 2.5),
            ("pDx1", |m| m.p_dx1 = 0.0),
            ("pDy1", |m| m.p_dy1 = -0.9),
            ("pKx1", |m| m.p_kx1 = 0.0),
            ("pKy1", |m| m.p_ky1 = -17.0),
            ("pKy2", |m| m.p_ky2 = 0.0),
            ("rBx1", |m| m.r_bx1 = 0.0),
            ("rBy1", |m| m.r_by1 = -3.0),
            ("pEx1", |m| m.p_ex1 = 1.2),
            ("pEy1", |m| m.p_ey1 = 1.01),
            ("rEy1", |m| m.r_ey1 = 2.0),
            ("pEx4", |m| m.p_ex4 = 3.0),
            ("rCx1", |m| m.r_cx1 = 1.2),
            ("rCy1", |m| m.r_cy1 = 0.0),
            ("pHy3", |m| m.p_hy3 = f64::NAN),
        ];
        for (key, edit) in cases {
            let mut mf = valid();
            edit(&mut mf);
            assert_eq!(paths(&mf), vec![format!("{PATH}.{key}")], "{key}");
        }
        // Non-finite values in checked fields are reported once, as non-finite.
        let mut mf = valid();
        mf.p_cx1 = f64::INFINITY;
        mf.nominal_load_n = f64::NEG_INFINITY;
        let issues = mf.check();
        assert_eq!(issues.len(), 2, "{issues:?}");
        assert!(issues.iter().all(|i| i.message.contains("finite")));
        // Boundary values that are allowed.
        let mut mf = valid();
        mf.p_cx1 = 1.0;
        mf.p_ex1 = 1.0;
        mf.p_ex4 = 0.0;
        mf.r_cy1 = 1.0;
        assert!(paths(&mf).is_empty());
    }
}
