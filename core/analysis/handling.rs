//! ISO 4138 steady-state circular driving, constant-radius method: the
//! understeer gradient from a handling diagram, and the least-squares line
//! fit it rests on.
//!
//! Definition (SAE J670 / ISO 4138, as in the project's reference notes): the
//! understeer gradient is the slope of (steering-wheel angle / overall
//! steering ratio) against lateral acceleration, minus the Ackermann steer
//! gradient d(L/R)/d(ay). On a constant radius L/R does not change, so the
//! Ackermann gradient is zero and the understeer gradient is the slope
//! itself. This module does not drive the car round the circle.

use super::bicycle::STANDARD_GRAVITY;

/// Least-squares straight line y = slope·x + intercept.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct LineFit {
    /// Slope, units of y per unit of x.
    pub slope: f64,
    /// Intercept at x = 0, units of y.
    pub intercept: f64,
    /// Coefficient of determination R² (1 = perfect fit; 1.0 when y is
    /// constant and fitted exactly).
    pub r_squared: f64,
    /// Number of points used.
    pub count: usize,
}

/// Ordinary least-squares line through (x, y) pairs (normal equations in
/// centred form). `None` for fewer than two points, different lengths,
/// non-finite data, or all x equal.
pub fn fit_line(x: &[f64], y: &[f64]) -> Option<LineFit> {
    if x.len() != y.len() || x.len() < 2 {
        return None;
    }
    if x.iter().chain(y).any(|v| !v.is_finite()) {
        return None;
    }
    let n = x.len() as f64;
    let mean_x = x.iter().sum::<f64>() / n;
    let mean_y = y.iter().sum::<f64>() / n;
    let (mut sxx, mut sxy, mut syy) = (0.0, 0.0, 0.0);
    for (xi, yi) in x.iter().zip(y) {
        let (dx, dy) = (xi - mean_x, yi - mean_y);
        sxx += dx * dx;
        sxy += dx * dy;
        syy += dy * dy;
    }
    if sxx <= 0.0 {
        return None;
    }
    let slope = sxy / sxx;
    let intercept = mean_y - slope * mean_x;
    let ss_res: f64 = x
        .iter()
        .zip(y)
        .map(|(xi, yi)| {
            let r = yi - (slope * xi + intercept);
            r * r
        })
        .sum();
    let r_squared = if syy > 0.0 { 1.0 - ss_res / syy } else { 1.0 };
    Some(LineFit {
        slope,
        intercept,
        r_squared,
        count: x.len(),
    })
}

/// Result of the constant-radius understeer-gradient evaluation.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct UndersteerFit {
    /// Line fit of road-wheel angle (steering-wheel angle / overall ratio,
    /// rad) against lateral acceleration (m/s²).
    pub fit: LineFit,
    /// Ackermann steer gradient d(L/R)/d(ay), rad/(m/s²); zero on a constant
    /// radius.
    pub ackermann_gradient: f64,
    /// Understeer gradient, rad/(m/s²): fit slope − Ackermann gradient.
    pub gradient: f64,
    /// Understeer gradient, deg/g (× 180/π × g).
    pub gradient_deg_per_g: f64,
    /// Ackermann road-wheel angle L/R, rad, to compare with the fit intercept.
    pub ackermann_angle: f64,
}

/// Understeer gradient from a constant-radius test (ISO 4138, SAE J670
/// definition).
///
/// `lat_accel` (m/s²) and `steer_wheel_angle` (rad) are steady-state points
/// from one turn direction; `steering_ratio` is the overall steering ratio
/// (steering-wheel angle per road-wheel angle, > 0); `wheelbase` (m) and
/// `radius` (m, sign = turn direction) give the Ackermann angle; only points
/// with |ay| ≤ `lat_accel_max` (m/s²) enter the fit (the linear range).
/// `None` on bad parameters, mismatched or non-finite data or fewer than
/// three usable points.
pub fn understeer_gradient(
    lat_accel: &[f64],
    steer_wheel_angle: &[f64],
    steering_ratio: f64,
    wheelbase: f64,
    radius: f64,
    lat_accel_max: f64,
) -> Option<UndersteerFit> {
    let positive = |v: f64| v.is_finite() && v > 0.0;
    let valid = positive(steering_ratio)
        && positive(wheelbase)
        && positive(lat_accel_max)
        && radius.is_finite()
        && radius != 0.0
        && lat_accel.len() == steer_wheel_angle.len();
    if !valid {
        return None;
    }
    let mut ay = Vec::with_capacity(lat_accel.len());
    let mut delta = Vec::with_capacity(lat_accel.len());
    for (&a, &sw) in lat_accel.iter().zip(steer_wheel_angle) {
        if a.abs() <= lat_accel_max {
            ay.push(a);
            delta.push(sw / steering_ratio);
        }
    }
    if ay.len() < 3 {
        return None;
    }
    let fit = fit_line(&ay, &delta)?;
    // L/R is the same at every point of a constant-radius test.
    let ackermann_gradient = 0.0;
    let gradient = fit.slope - ackermann_gradient;
    Some(UndersteerFit {
        fit,
        ackermann_gradient,
        gradient,
        gradient_deg_per_g: gradient.to_degrees() * STANDARD_GRAVITY,
        ackermann_angle: wheelbase / radius,
    })
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;

    const L: f64 = 2.7;
    const R: f64 = 100.0;
    const RATIO: f64 = 16.0;

    #[test]
    fn line_fit_recovers_exact_line() {
        let x: Vec<f64> = (0..20).map(|i| i as f64 * 0.3 - 1.0).collect();
        let y: Vec<f64> = x.iter().map(|v| 2.5 * v - 0.75).collect();
        let f = fit_line(&x, &y).unwrap();
        assert_relative_eq!(f.slope, 2.5, max_relative = 1e-12);
        assert_relative_eq!(f.intercept, -0.75, max_relative = 1e-12);
        assert_relative_eq!(f.r_squared, 1.0, epsilon = 1e-12);
        assert_eq!(fit_line(&[1.0, 1.0], &[0.0, 2.0]), None);
        assert_eq!(fit_line(&[1.0], &[0.0]), None);
        assert_eq!(fit_line(&[1.0, f64::NAN], &[0.0, 1.0]), None);
    }

    #[test]
    fn linear_handling_diagram_gives_its_slope() {
        // Gillespie ch. 6 steady steer δ = L/R + K·ay, δsw = i·δ.
        let k = 0.0035; // rad/(m/s²), invented
        let ay: Vec<f64> = (1..=16).map(|i| 0.5 * i as f64).collect();
        let sw: Vec<f64> = ay.iter().map(|a| RATIO * (L / R + k * a)).collect();
        let u = understeer_gradient(&ay, &sw, RATIO, L, R, 4.0).unwrap();
        assert_eq!(u.fit.count, 8);
        assert_relative_eq!(u.gradient, k, max_relative = 1e-10);
        assert_relative_eq!(u.fit.intercept, L / R, max_relative = 1e-10);
        assert_relative_eq!(u.ackermann_angle, L / R);
        assert_relative_eq!(
            u.gradient_deg_per_g,
            k.to_degrees() * 9.806_65,
            max_relative = 1e-12
        );
        // Right turn: ay < 0, δ < 0, radius < 0 — same gradient.
        let ay_r: Vec<f64> = ay.iter().map(|a| -a).collect();
        let sw_r: Vec<f64> = sw.iter().map(|s| -s).collect();
        let r = understeer_gradient(&ay_r, &sw_r, RATIO, L, -R, 4.0).unwrap();
        assert_relative_eq!(r.gradient, k, max_relative = 1e-10);
    }

    #[test]
    fn quadratic_diagram_slope_equals_exact_least_squares_value() {
        // For y = c·x² on x points symmetric about their mean m, the least-
        // squares slope is exactly 2·c·m = c·(x_min + x_max): cov(x, x²) =
        // 2m·var(x) + E[(x − m)³] and the third central moment vanishes.
        let (k, c) = (0.002, 0.0004);
        let ay: Vec<f64> = (1..=16).map(|i| 0.5 * i as f64).collect(); // 0.5..8
        let sw: Vec<f64> = ay
            .iter()
            .map(|a| RATIO * (L / R + k * a + c * a * a))
            .collect();
        let u = understeer_gradient(&ay, &sw, RATIO, L, R, 4.0).unwrap(); // 0.5..4
        assert_relative_eq!(u.gradient, k + c * (0.5 + 4.0), max_relative = 1e-9);
        // Curvature shows as imperfect fit (value printed for the record).
        println!("quadratic handling diagram: R² = {:.6}", u.fit.r_squared);
        assert!(u.fit.r_squared < 0.9999 && u.fit.r_squared > 0.9);
        // Using all points up to 8 m/s² gives the larger, curved-range slope.
        let all = understeer_gradient(&ay, &sw, RATIO, L, R, 8.0).unwrap();
        assert_relative_eq!(all.gradient, k + c * (0.5 + 8.0), max_relative = 1e-9);
    }

    #[test]
    fn rejects_bad_input() {
        let ay = [1.0, 2.0, 3.0];
        let sw = [0.1, 0.2, 0.3];
        assert!(understeer_gradient(&ay, &sw, 0.0, L, R, 4.0).is_none());
        assert!(understeer_gradient(&ay, &sw, RATIO, L, 0.0, 4.0).is_none());
        assert!(understeer_gradient(&ay, &sw[..2], RATIO, L, R, 4.0).is_none());
        assert!(understeer_gradient(&ay, &sw, RATIO, L, R, 2.5).is_none()); // 2 points
    }
}
