//! Tables in vehicle files: a curve against speed (e.g. an engine's torque
//! curve) and a map against speed and torque (e.g. an efficiency map), as
//! written in the file and as checked. Interpolation is linear (bilinear for
//! maps) and clamped at the ends: outside its breakpoints a table holds its
//! edge value.

use serde::{Deserialize, Serialize};

use super::checks::Checks;

/// Revolutions per minute to radians per second (2π/60).
pub const RPM: f64 = std::f64::consts::PI / 30.0;

/// A torque curve against speed, as in the file.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct TorqueCurveFile {
    /// Shaft speeds, rpm (strictly increasing, ≥ 0, at least two).
    pub speed_rpm: Vec<f64>,
    /// Torque at each speed, N·m (≥ 0).
    pub torque: Vec<f64>,
}

/// An efficiency map against shaft speed and shaft torque, as in the file.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct EfficiencyMapFile {
    /// Shaft speeds, rpm (strictly increasing, ≥ 0, at least two).
    pub speed_rpm: Vec<f64>,
    /// Shaft torque magnitudes, N·m (strictly increasing, ≥ 0, at least two).
    pub torque: Vec<f64>,
    /// Efficiency, one row per speed with one value per torque, each in (0, 1].
    pub efficiency: Vec<Vec<f64>>,
}

/// A checked curve y(x): breakpoints in SI, linear between them, clamped outside.
#[derive(Debug, Clone, PartialEq)]
pub struct Curve {
    /// Breakpoints, strictly increasing (speeds in rad/s).
    pub x: Vec<f64>,
    /// Values at the breakpoints.
    pub y: Vec<f64>,
}

/// A checked map z(x, y): bilinear between breakpoints, clamped outside.
#[derive(Debug, Clone, PartialEq)]
pub struct Map {
    /// First-axis breakpoints, strictly increasing (speeds in rad/s).
    pub x: Vec<f64>,
    /// Second-axis breakpoints, strictly increasing (torques in N·m).
    pub y: Vec<f64>,
    /// Values, row-major: `z[i * y.len() + j]` at (`x[i]`, `y[j]`).
    pub z: Vec<f64>,
}

/// A map seen along its second axis at a fixed first-axis value.
#[derive(Debug, Clone, Copy)]
pub struct MapSlice<'a> {
    map: &'a Map,
    row: usize,
    weight: f64,
}

impl MapSlice<'_> {
    /// Number of second-axis breakpoints.
    #[inline]
    pub fn len(&self) -> usize {
        self.map.y.len()
    }

    /// Always false: a map has at least two breakpoints per axis.
    #[inline]
    pub fn is_empty(&self) -> bool {
        self.map.y.is_empty()
    }

    /// The `j`-th second-axis breakpoint.
    #[inline]
    pub fn breakpoint(&self, j: usize) -> f64 {
        self.map.y[j]
    }

    /// The value at the `j`-th second-axis breakpoint (linear in the first axis).
    #[inline]
    pub fn value(&self, j: usize) -> f64 {
        let n = self.map.y.len();
        let z0 = self.map.z[self.row * n + j];
        z0 + self.weight * (self.map.z[(self.row + 1) * n + j] - z0)
    }
}

/// Where `v` falls among `breaks`: (lower index i, weight w of breaks[i + 1]),
/// clamped to the first and last interval with w in [0, 1].
#[inline]
fn locate(breaks: &[f64], v: f64) -> (usize, f64) {
    let n = breaks.len();
    if v <= breaks[0] {
        return (0, 0.0);
    }
    if v >= breaks[n - 1] {
        return (n - 2, 1.0);
    }
    let mut i = 0;
    while breaks[i + 1] < v {
        i += 1;
    }
    (i, (v - breaks[i]) / (breaks[i + 1] - breaks[i]))
}

impl Curve {
    /// y at `x`, linear between breakpoints and clamped outside.
    #[inline]
    pub fn value(&self, x: f64) -> f64 {
        let (i, w) = locate(&self.x, x);
        self.y[i] + w * (self.y[i + 1] - self.y[i])
    }

    /// The largest value, for reports.
    pub fn max_value(&self) -> f64 {
        self.y.iter().copied().fold(f64::NEG_INFINITY, f64::max)
    }

    /// Checks a torque curve at `path` and builds it with speeds in rad/s.
    pub(crate) fn build_torque(path: &str, f: &TorqueCurveFile, checks: &mut Checks) -> Self {
        breakpoints(&format!("{path}.speed_rpm"), &f.speed_rpm, checks);
        if f.torque.len() != f.speed_rpm.len() {
            checks.push(
                format!("{path}.torque"),
                format!(
                    "needs one value per speed: {} speeds, {} torques",
                    f.speed_rpm.len(),
                    f.torque.len()
                ),
            );
        }
        if let Some(t) = f.torque.iter().find(|t| !(t.is_finite() && **t >= 0.0)) {
            checks.push(
                format!("{path}.torque"),
                format!("every torque must be zero or positive, got {t}"),
            );
        }
        Self {
            x: f.speed_rpm.iter().map(|s| s * RPM).collect(),
            y: f.torque.clone(),
        }
    }
}

impl Map {
    /// z at (`x`, `y`), bilinear between breakpoints and clamped outside.
    #[inline]
    pub fn value(&self, x: f64, y: f64) -> f64 {
        let (i, wx) = locate(&self.x, x);
        let (j, wy) = locate(&self.y, y);
        let n = self.y.len();
        let row = |k: usize| {
            let z0 = self.z[k * n + j];
            z0 + wy * (self.z[k * n + j + 1] - z0)
        };
        let (a, b) = (row(i), row(i + 1));
        a + wx * (b - a)
    }

    /// The map along its second axis at first-axis value `x` (clamped).
    #[inline]
    pub fn slice_at(&self, x: f64) -> MapSlice<'_> {
        let (row, weight) = locate(&self.x, x);
        MapSlice {
            map: self,
            row,
            weight,
        }
    }

    /// The largest value, for reports.
    pub fn max_value(&self) -> f64 {
        self.z.iter().copied().fold(f64::NEG_INFINITY, f64::max)
    }

    /// Checks an efficiency map at `path` and builds it with speeds in rad/s.
    pub(crate) fn build_efficiency(path: &str, f: &EfficiencyMapFile, checks: &mut Checks) -> Self {
        breakpoints(&format!("{path}.speed_rpm"), &f.speed_rpm, checks);
        breakpoints(&format!("{path}.torque"), &f.torque, checks);
        let rows_ok = f.efficiency.len() == f.speed_rpm.len()
            && f.efficiency.iter().all(|r| r.len() == f.torque.len());
        if !rows_ok {
            checks.push(
                format!("{path}.efficiency"),
                format!(
                    "needs {} rows (one per speed) of {} values (one per torque)",
                    f.speed_rpm.len(),
                    f.torque.len()
                ),
            );
        }
        if let Some(e) = f
            .efficiency
            .iter()
            .flatten()
            .find(|e| !(e.is_finite() && **e > 0.0 && **e <= 1.0))
        {
            checks.push(
                format!("{path}.efficiency"),
                format!("every efficiency must lie in (0, 1], got {e}"),
            );
        }
        Self {
            x: f.speed_rpm.iter().map(|s| s * RPM).collect(),
            y: f.torque.clone(),
            z: f.efficiency.iter().flatten().copied().collect(),
        }
    }
}

/// Breakpoints must be finite, ≥ 0, strictly increasing, at least two.
fn breakpoints(path: &str, b: &[f64], checks: &mut Checks) {
    if b.len() < 2 {
        checks.push(
            path,
            format!("needs at least two breakpoints, got {}", b.len()),
        );
    } else if !b.iter().all(|v| v.is_finite() && *v >= 0.0) {
        checks.push(path, "breakpoints must be finite and ≥ 0");
    } else if b.windows(2).any(|w| w[1] <= w[0]) {
        checks.push(path, "breakpoints must be strictly increasing");
    }
}

/// An efficiency: a constant or a map against shaft speed (rad/s) and
/// shaft torque magnitude (N·m).
#[derive(Debug, Clone, PartialEq)]
pub enum Efficiency {
    /// The same efficiency everywhere, 1 (0 < η ≤ 1).
    Constant(f64),
    /// Bilinear in (|speed|, |torque|), clamped at the map's edges.
    Map(Map),
}

impl Efficiency {
    /// η at shaft speed `speed` (rad/s) and shaft torque `torque` (N·m); signs ignored.
    #[inline]
    pub fn value(&self, speed: f64, torque: f64) -> f64 {
        match self {
            Efficiency::Constant(e) => *e,
            Efficiency::Map(m) => m.value(speed.abs(), torque.abs()),
        }
    }

    /// The largest efficiency, for reports.
    pub fn max_value(&self) -> f64 {
        match self {
            Efficiency::Constant(e) => *e,
            Efficiency::Map(m) => m.max_value(),
        }
    }

    /// Checks the pair `<key>` (a constant) / `<key>_table` (a map) under
    /// `path`: exactly one must be given when `required`; `default` otherwise.
    pub(crate) fn build(
        path: &str,
        key: &str,
        constant: Option<f64>,
        table: Option<&EfficiencyMapFile>,
        default: Option<f64>,
        checks: &mut Checks,
    ) -> Self {
        match (constant, table) {
            (Some(_), Some(_)) => {
                checks.push(
                    format!("{path}.{key}_table"),
                    format!("give `{key}` or `{key}_table`, not both"),
                );
                Efficiency::Constant(1.0)
            }
            (Some(e), None) => {
                checks.fraction(&format!("{path}.{key}"), e);
                Efficiency::Constant(e)
            }
            (None, Some(t)) => Efficiency::Map(Map::build_efficiency(
                &format!("{path}.{key}_table"),
                t,
                checks,
            )),
            (None, None) => match default {
                Some(e) => Efficiency::Constant(e),
                None => {
                    checks.push(
                        format!("{path}.{key}"),
                        format!("missing key `{key}` (or give `{key}_table`)"),
                    );
                    Efficiency::Constant(1.0)
                }
            },
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn map() -> Map {
        Map {
            x: vec![0.0, 100.0],
            y: vec![0.0, 10.0, 20.0],
            z: vec![0.5, 0.6, 0.7, 0.8, 0.9, 1.0],
        }
    }

    /// Linear and bilinear interpolation (common practice), clamped at the edges.
    #[test]
    fn interpolation_is_linear_and_clamped() {
        let c = Curve {
            x: vec![1.0, 2.0, 4.0],
            y: vec![10.0, 20.0, 0.0],
        };
        assert_eq!(c.value(0.0), 10.0);
        assert_eq!(c.value(1.5), 15.0);
        assert_eq!(c.value(3.0), 10.0);
        assert_eq!(c.value(9.0), 0.0);
        let m = map();
        assert!((m.value(50.0, 5.0) - 0.70).abs() < 1e-12);
        assert!((m.value(-5.0, 25.0) - 0.7).abs() < 1e-12);
        assert!((m.value(200.0, 15.0) - 0.95).abs() < 1e-12);
    }
}
