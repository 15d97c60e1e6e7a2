//! The yaw-moment diagram (the moment method of Milliken & Milliken, *Race
//! Car Vehicle Dynamics*, SAE 1995, ch. 8): at one forward speed, for a grid
//! of body sideslip β and road-wheel steer δ, the quasi-static point of
//! [`super::equilibrium`] with the yaw moment N left over, drawn as N (or
//! C_N = N/(m·g·L)) against lateral acceleration a_y with lines of constant β
//! and of constant δ.
//!
//! Derived figures, for the turn direction the steer grid covers most (left,
//! a_y > 0, for a symmetric grid):
//! - the trim line N = 0 at each grid steer, with the stability derivative
//!   ∂N/∂β and the control derivative ∂N/∂δ at each trim point (central
//!   differences of the same quasi-static solve), and ∂a_y/∂β, ∂a_y/∂δ;
//! - the trim limit: the largest a_y with N = 0, followed from the trim line
//!   by continuation in a_y (the steady-state trim limit of `yawdyn
//!   stability`, to within [`DiagramSettings::limit_resolution`]);
//! - the limit point: the largest a_y of the whole diagram within the grid's
//!   β and δ range (found on the grid, then refined by a compass search), and
//!   the residual moment there, the limit balance, signed so that positive is
//!   an oversteer (turn-in) moment.
//!
//! Sign conventions (ISO 8855): β = atan(vy/vx) positive when the velocity
//! points left of the nose; N positive nose-left; δ positive left. In a
//! single-track model with axle cornering stiffnesses Cf, Cr, slip angles
//! α_f = δ − β − a·r/V and α_r = −β + b·r/V (Gillespie, *Fundamentals of
//! Vehicle Dynamics*, ch. 6), so the directionally stable derivative ∂N/∂β
//! = b·Cr − a·Cf (at fixed r) is positive here.
//!
//! Grids are stored row by row: index `j·n_sideslip + i` for steer `j` and
//! sideslip `i`.

use rayon::prelude::*;

use super::equilibrium::{
    Condition, Lateral, MarchSettings, Point, Problem, Seed, SolveSettings, extrapolate,
    march_to_limit,
};
use super::{QuasiStaticError, chassis, check_grid};
use crate::params::{GRAVITY, Vehicle};

/// Settings of the diagram and its derived figures.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct DiagramSettings {
    /// Newton settings of every point.
    pub solve: SolveSettings,
    /// Halvings of a grid step allowed when a point does not solve from its
    /// neighbour directly. Default 4 (down to 1/16 of the step).
    pub substep_depth: u32,
    /// Halvings of the step when an unsolved point is retried from a solved
    /// neighbour after the walk. Default 2.
    pub fill_depth: u32,
    /// Step of the central differences for the derivatives at trim points, rad. Default 1e-4.
    pub derivative_step: f64,
    /// Resolution of the trim limit, m/s². Default 0.005 (the stability trim's).
    pub limit_resolution: f64,
    /// First (and largest) continuation step of the trim limit, m/s². Default 0.5.
    pub limit_step: f64,
    /// Largest lateral acceleration the trim limit is followed to, m/s². Default 5 g.
    pub lat_accel_ceiling: f64,
    /// Compass-search halvings of the limit point, from half a grid step. Default 6.
    pub limit_refinements: u32,
}

impl Default for DiagramSettings {
    fn default() -> Self {
        Self {
            solve: SolveSettings::default(),
            substep_depth: 4,
            fill_depth: 2,
            derivative_step: 1e-4,
            limit_resolution: 0.005,
            limit_step: 0.5,
            lat_accel_ceiling: 5.0 * GRAVITY,
            limit_refinements: 6,
        }
    }
}

/// A point of the trim line (N = 0) with the derivatives there.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct TrimPoint {
    /// Lateral acceleration, m/s².
    pub lat_accel: f64,
    /// Road-wheel steer, rad.
    pub steer: f64,
    /// Sideslip, rad.
    pub sideslip: f64,
    /// Static directional stability ∂N/∂β at constant δ, N·m/rad (positive = stable, see the module doc).
    pub yaw_moment_per_sideslip: f64,
    /// Control moment ∂N/∂δ at constant β, N·m/rad.
    pub yaw_moment_per_steer: f64,
    /// ∂a_y/∂β at constant δ, m/s² per rad.
    pub lat_accel_per_sideslip: f64,
    /// ∂a_y/∂δ at constant β, m/s² per rad.
    pub lat_accel_per_steer: f64,
}

/// The trim limit: the largest lateral acceleration with zero yaw moment.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct TrimLimit {
    /// Lateral acceleration, m/s² (signed: negative for right turns).
    pub lat_accel: f64,
    /// Road-wheel steer, rad.
    pub steer: f64,
    /// Sideslip, rad.
    pub sideslip: f64,
}

/// The point of largest lateral acceleration of the diagram.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct LimitPoint {
    /// Lateral acceleration, m/s² (signed).
    pub lat_accel: f64,
    /// Residual yaw moment there, N·m (ISO sign, positive nose-left).
    pub yaw_moment: f64,
    /// Limit balance: the yaw moment signed by the turn direction, N·m
    /// (positive = oversteer moment, negative = understeer).
    pub balance: f64,
    /// Road-wheel steer, rad.
    pub steer: f64,
    /// Sideslip, rad.
    pub sideslip: f64,
    /// True when the limit lies on the edge of the grid's β or δ range (a
    /// wider grid may find more).
    pub on_grid_edge: bool,
}

/// One yaw-moment diagram and its derived figures.
#[derive(Debug, Clone)]
pub struct YawMomentDiagram {
    /// The fixed conditions.
    pub condition: Condition,
    /// Sideslip grid, rad (strictly increasing).
    pub sideslip: Vec<f64>,
    /// Road-wheel steer grid, rad (strictly increasing).
    pub steer: Vec<f64>,
    /// Lateral acceleration per grid point, m/s² (NaN where not solved).
    pub lat_accel: Vec<f64>,
    /// Residual yaw moment per grid point, N·m.
    pub yaw_moment: Vec<f64>,
    /// v̇x per grid point, m/s².
    pub long_accel: Vec<f64>,
    /// Yaw rate a_y/V per grid point, rad/s.
    pub yaw_rate: Vec<f64>,
    /// Delivered drive torque at the wheels per grid point, N·m.
    pub drive_torque: Vec<f64>,
    /// Brake torque per grid point, N·m.
    pub brake_torque: Vec<f64>,
    /// Whether each grid point was solved.
    pub solved: Vec<bool>,
    /// Turn direction of the derived figures: +1 left (a_y > 0), −1 right.
    pub turn: f64,
    /// Trim points, one per grid steer where N changes sign along the row, by steer.
    pub trim: Vec<TrimPoint>,
    /// The trim limit, `None` when no trim was found.
    pub trim_limit: Option<TrimLimit>,
    /// The limit point, `None` when no grid point was solved.
    pub limit: Option<LimitPoint>,
    /// m·g·L, N·m (C_N = N / this).
    pub moment_reference: f64,
}

impl YawMomentDiagram {
    /// Number of grid points solved.
    pub fn solved_count(&self) -> usize {
        self.solved.iter().filter(|s| **s).count()
    }

    /// Limit balance as a coefficient C_N = balance/(m·g·L), 1.
    pub fn limit_balance_coefficient(&self) -> Option<f64> {
        self.limit.map(|l| l.balance / self.moment_reference)
    }
}

/// Computes the yaw-moment diagram of `vehicle` at `condition` over the grids
/// `sideslip` and `steer` (rad, strictly increasing), and its derived figures.
///
/// Points are found by stepping out from the grid point nearest β = δ = 0,
/// first along the steer column, then along each steer row (rows in parallel,
/// each from its own column point), then by retrying unsolved points from
/// solved neighbours; the result does not depend on the thread count. A
/// point that does not solve is left as NaN: no equilibrium was found there
/// (typically a driven wheel that cannot react its torque and spins up).
///
/// Errors: bad grids or condition ([`QuasiStaticError::InvalidInput`],
/// [`QuasiStaticError::InvalidGrid`]); [`QuasiStaticError::NoStart`] when the
/// grid point nearest zero cannot be solved.
///
/// ```no_run
/// # fn demo(vehicle: &yawdyn::params::Vehicle) -> Result<(), yawdyn::quasi_static::QuasiStaticError> {
/// use yawdyn::quasi_static::{Condition, DiagramSettings, Longitudinal, yaw_moment_diagram};
/// let condition = Condition { speed: 25.0, front_share: vehicle.powertrain.front_share,
///                             longitudinal: Longitudinal::FreeRolling };
/// let grid: Vec<f64> = (-10..=10).map(|k| (0.8 * k as f64).to_radians()).collect();
/// let d = yaw_moment_diagram(vehicle, &condition, &grid, &grid, &DiagramSettings::default())?;
/// println!("trim limit {:?} m/s^2", d.trim_limit.map(|t| t.lat_accel));
/// # Ok(()) }
/// ```
pub fn yaw_moment_diagram(
    vehicle: &Vehicle,
    condition: &Condition,
    sideslip: &[f64],
    steer: &[f64],
    settings: &DiagramSettings,
) -> Result<YawMomentDiagram, QuasiStaticError> {
    condition.validate(vehicle)?;
    check_grid("sideslip grid", sideslip)?;
    check_grid("steer grid", steer)?;
    let base = Problem::new(vehicle, *condition, Lateral::Trim { steer: 0.0 });
    let points = grid_points(&base, sideslip, steer, settings)?;
    let turn = if steer[steer.len() - 1] >= -steer[0] {
        1.0
    } else {
        -1.0
    };
    let trims = trim_line(&base, sideslip, steer, &points, turn, settings);
    let trim_limit = trim_limit(&base, &trims, turn, settings);
    let limit = limit_point(&base, sideslip, steer, &points, turn, settings);
    let field = |f: fn(&Point) -> f64| -> Vec<f64> {
        points
            .iter()
            .map(|p| p.as_ref().map_or(f64::NAN, f))
            .collect()
    };
    Ok(YawMomentDiagram {
        condition: *condition,
        sideslip: sideslip.to_vec(),
        steer: steer.to_vec(),
        lat_accel: field(|p| p.lat_accel),
        yaw_moment: field(|p| p.yaw_moment),
        long_accel: field(|p| p.long_accel),
        yaw_rate: field(|p| p.state[crate::model::YAW_RATE]),
        drive_torque: field(|p| p.drive_torque),
        brake_torque: field(|p| p.brake_torque),
        solved: points.iter().map(Option::is_some).collect(),
        turn,
        trim: trims.iter().map(|(t, _)| *t).collect(),
        trim_limit,
        limit,
        moment_reference: chassis(vehicle).moment_reference(),
    })
}

/// Index of the value nearest zero.
fn nearest_zero(values: &[f64]) -> usize {
    (0..values.len())
        .min_by(|&a, &b| values[a].abs().total_cmp(&values[b].abs()))
        .unwrap_or(0)
}

/// Solves the grid point (β, δ) = `to`, starting from `from` at `from_at`,
/// first from `guess`, then by halving the step up to `depth` times.
fn reach(
    base: &Problem<'_>,
    from: &Point,
    from_at: (f64, f64),
    to: (f64, f64),
    guess: &Seed,
    settings: &DiagramSettings,
    depth: u32,
) -> Option<Point> {
    let problem = base.with_lateral(Lateral::Given {
        sideslip: to.0,
        steer: to.1,
    });
    if let Some(p) = problem.solve(guess, &settings.solve) {
        return Some(p);
    }
    if depth == 0 {
        return None;
    }
    let mid = (0.5 * (from_at.0 + to.0), 0.5 * (from_at.1 + to.1));
    let half = reach(base, from, from_at, mid, &from.seed, settings, depth - 1)?;
    let next_guess = extrapolate(&from.seed, &half.seed, 1.0);
    reach(base, &half, mid, to, &next_guess, settings, depth - 1)
}

/// Steps along a line of grid points `order` (indices into `at`), starting
/// from the solved point `start` at `at[order[0]]`. Stops a direction after
/// two failures in a row; unsolved points stay `None`.
fn walk(
    base: &Problem<'_>,
    start: &Point,
    at: &dyn Fn(usize) -> (f64, f64),
    order: &[usize],
    out: &mut [Option<Point>],
    settings: &DiagramSettings,
) {
    let mut last: (Point, (f64, f64)) = (start.clone(), at(order[0]));
    let mut before: Option<Seed> = None;
    let mut failures = 0;
    for &k in &order[1..] {
        let to = at(k);
        let guess = match &before {
            Some(b) => extrapolate(b, &last.0.seed, 1.0),
            None => last.0.seed.clone(),
        };
        match reach(
            base,
            &last.0,
            last.1,
            to,
            &guess,
            settings,
            settings.substep_depth,
        ) {
            Some(p) => {
                out[k] = Some(p.clone());
                before = Some(std::mem::replace(&mut last, (p, to)).0.seed);
                failures = 0;
            }
            None => {
                before = None;
                failures += 1;
                if failures >= 2 {
                    break;
                }
            }
        }
    }
}

/// Solves every grid point (row-major, steer rows).
fn grid_points(
    base: &Problem<'_>,
    sideslip: &[f64],
    steer: &[f64],
    settings: &DiagramSettings,
) -> Result<Vec<Option<Point>>, QuasiStaticError> {
    let (nb, nd) = (sideslip.len(), steer.len());
    let (i0, j0) = (nearest_zero(sideslip), nearest_zero(steer));
    let origin = base.with_lateral(Lateral::Given {
        sideslip: sideslip[i0],
        steer: steer[j0],
    });
    let start = origin
        .solve(&origin.straight_seed(), &settings.solve)
        .ok_or_else(|| QuasiStaticError::NoStart {
            what: format!(
                "sideslip {:.3} deg, steer {:.3} deg",
                sideslip[i0].to_degrees(),
                steer[j0].to_degrees()
            ),
        })?;
    // The column through i0: up and down the steer grid.
    let mut column: Vec<Option<Point>> = vec![None; nd];
    column[j0] = Some(start.clone());
    let at_column = |j: usize| (sideslip[i0], steer[j]);
    let up: Vec<usize> = (j0..nd).collect();
    let down: Vec<usize> = (0..=j0).rev().collect();
    walk(base, &start, &at_column, &up, &mut column, settings);
    walk(base, &start, &at_column, &down, &mut column, settings);
    // Each row from its column point, rows in parallel.
    let rows: Vec<Vec<Option<Point>>> = (0..nd)
        .into_par_iter()
        .map(|j| {
            let mut row: Vec<Option<Point>> = vec![None; nb];
            if let Some(seed) = &column[j] {
                row[i0] = Some(seed.clone());
                let at_row = |i: usize| (sideslip[i], steer[j]);
                let right: Vec<usize> = (i0..nb).collect();
                let left: Vec<usize> = (0..=i0).rev().collect();
                walk(base, seed, &at_row, &right, &mut row, settings);
                walk(base, seed, &at_row, &left, &mut row, settings);
            }
            row
        })
        .collect();
    let mut points: Vec<Option<Point>> = rows.into_iter().flatten().collect();
    fill_holes(base, sideslip, steer, &mut points, settings);
    Ok(points)
}

/// Grid neighbours of point `k` (left, right, below, above) on an
/// `nb` × `nd` grid.
fn neighbours(k: usize, nb: usize, nd: usize) -> impl Iterator<Item = usize> {
    let (i, j) = (k % nb, k / nb);
    [
        (i > 0).then(|| k - 1),
        (i + 1 < nb).then_some(k + 1),
        (j > 0).then(|| k - nb),
        (j + 1 < nd).then_some(k + nb),
    ]
    .into_iter()
    .flatten()
}

/// Retries unsolved points from their solved neighbours (any direction,
/// [`DiagramSettings::fill_depth`] halvings), pass after pass, each pass only
/// at points next to one solved in the pass before. Each pass reads the grid
/// as the previous pass left it, so the result does not depend on threads.
fn fill_holes(
    base: &Problem<'_>,
    sideslip: &[f64],
    steer: &[f64],
    points: &mut [Option<Point>],
    settings: &DiagramSettings,
) {
    let (nb, nd) = (sideslip.len(), steer.len());
    let at = |k: usize| (sideslip[k % nb], steer[k / nb]);
    let mut frontier: Vec<usize> = (0..points.len())
        .filter(|&k| points[k].is_none() && neighbours(k, nb, nd).any(|n| points[n].is_some()))
        .collect();
    while !frontier.is_empty() {
        let grid: &[Option<Point>] = points;
        let found: Vec<(usize, Point)> = frontier
            .par_iter()
            .filter_map(|&k| {
                neighbours(k, nb, nd).find_map(|n| {
                    let from = grid[n].as_ref()?;
                    reach(
                        base,
                        from,
                        at(n),
                        at(k),
                        &from.seed,
                        settings,
                        settings.fill_depth,
                    )
                    .map(|p| (k, p))
                })
            })
            .collect();
        let mut next: Vec<usize> = Vec::new();
        for (k, p) in found {
            points[k] = Some(p);
            next.extend(neighbours(k, nb, nd));
        }
        next.sort_unstable();
        next.dedup();
        next.retain(|&k| points[k].is_none());
        frontier = next;
    }
}

/// The trim point of each steer row on the turn side (and the straight row):
/// the sign change of N along the row nearest β = 0, solved exactly.
fn trim_line(
    base: &Problem<'_>,
    sideslip: &[f64],
    steer: &[f64],
    points: &[Option<Point>],
    turn: f64,
    settings: &DiagramSettings,
) -> Vec<(TrimPoint, Point)> {
    let nb = sideslip.len();
    let rows: Vec<usize> = (0..steer.len())
        .filter(|&j| turn * steer[j] >= 0.0)
        .collect();
    let mut out: Vec<(TrimPoint, Point)> = rows
        .par_iter()
        .filter_map(|&j| {
            let row = &points[j * nb..(j + 1) * nb];
            let bracket = (0..nb.saturating_sub(1))
                .filter_map(|i| {
                    let (a, b) = (row[i].as_ref()?, row[i + 1].as_ref()?);
                    (a.yaw_moment * b.yaw_moment <= 0.0 && a.yaw_moment != b.yaw_moment)
                        .then_some((i, a, b))
                })
                .min_by(|x, y| {
                    let mid = |i: usize| (sideslip[i] + sideslip[i + 1]).abs();
                    mid(x.0).total_cmp(&mid(y.0))
                })?;
            let (_, a, b) = bracket;
            let w = a.yaw_moment / (a.yaw_moment - b.yaw_moment);
            let guess = &a.seed + (&b.seed - &a.seed) * w;
            let trim = base
                .with_lateral(Lateral::Trim { steer: steer[j] })
                .solve(&guess, &settings.solve)?;
            Some((derivatives(base, &trim, settings)?, trim))
        })
        .collect();
    out.sort_by(|x, y| x.0.steer.total_cmp(&y.0.steer));
    out
}

/// Central differences of N and a_y in β and δ about a trim point.
fn derivatives(base: &Problem<'_>, trim: &Point, settings: &DiagramSettings) -> Option<TrimPoint> {
    let h = settings.derivative_step;
    let at = |db: f64, dd: f64| {
        base.with_lateral(Lateral::Given {
            sideslip: trim.sideslip + db,
            steer: trim.steer + dd,
        })
        .solve(&trim.seed, &settings.solve)
    };
    let (bp, bm) = (at(h, 0.0)?, at(-h, 0.0)?);
    let (dp, dm) = (at(0.0, h)?, at(0.0, -h)?);
    let diff = |p: &Point, m: &Point, f: fn(&Point) -> f64| (f(p) - f(m)) / (2.0 * h);
    Some(TrimPoint {
        lat_accel: trim.lat_accel,
        steer: trim.steer,
        sideslip: trim.sideslip,
        yaw_moment_per_sideslip: diff(&bp, &bm, |p| p.yaw_moment),
        yaw_moment_per_steer: diff(&dp, &dm, |p| p.yaw_moment),
        lat_accel_per_sideslip: diff(&bp, &bm, |p| p.lat_accel),
        lat_accel_per_steer: diff(&dp, &dm, |p| p.lat_accel),
    })
}

/// Follows the trim (N = 0) in a_y from the trim point of largest turn·a_y
/// (or from straight running when the grid had none) to its limit.
fn trim_limit(
    base: &Problem<'_>,
    trims: &[(TrimPoint, Point)],
    turn: f64,
    settings: &DiagramSettings,
) -> Option<TrimLimit> {
    let at = |ay: f64| base.with_lateral(Lateral::TrimAtLatAccel { lat_accel: ay });
    let start = match trims
        .iter()
        .max_by(|x, y| (turn * x.1.lat_accel).total_cmp(&(turn * y.1.lat_accel)))
    {
        Some((_, p)) => at(p.lat_accel).solve(&p.seed, &settings.solve)?,
        None => {
            let straight = at(0.0);
            straight.solve(&straight.straight_seed(), &settings.solve)?
        }
    };
    let march = MarchSettings {
        max_step: settings.limit_step,
        min_step: settings.limit_resolution,
        growth: 1.5,
    };
    let s0 = turn * start.lat_accel;
    let (_, p) = march_to_limit(
        |s, guess| at(turn * s).solve(guess, &settings.solve),
        s0,
        start,
        settings.lat_accel_ceiling.max(s0),
        &march,
    );
    Some(TrimLimit {
        lat_accel: p.lat_accel,
        steer: p.steer,
        sideslip: p.sideslip,
    })
}

/// The largest turn·a_y of the grid, refined by a compass search in (β, δ)
/// within the grid's range (step halving from half a grid step).
fn limit_point(
    base: &Problem<'_>,
    sideslip: &[f64],
    steer: &[f64],
    points: &[Option<Point>],
    turn: f64,
    settings: &DiagramSettings,
) -> Option<LimitPoint> {
    let mut best = points
        .iter()
        .flatten()
        .max_by(|x, y| (turn * x.lat_accel).total_cmp(&(turn * y.lat_accel)))?
        .clone();
    let (b_lo, b_hi) = (sideslip[0], sideslip[sideslip.len() - 1]);
    let (d_lo, d_hi) = (steer[0], steer[steer.len() - 1]);
    let spacing = |v: &[f64]| {
        if v.len() > 1 {
            (v[v.len() - 1] - v[0]) / (v.len() - 1) as f64
        } else {
            0.0
        }
    };
    let (mut sb, mut sd) = (0.5 * spacing(sideslip), 0.5 * spacing(steer));
    for _ in 0..settings.limit_refinements {
        loop {
            let moves = [(sb, 0.0), (-sb, 0.0), (0.0, sd), (0.0, -sd)];
            let candidate = moves
                .iter()
                .filter(|(db, dd)| *db != 0.0 || *dd != 0.0)
                .filter_map(|&(db, dd)| {
                    let (b, d) = (best.sideslip + db, best.steer + dd);
                    if b < b_lo || b > b_hi || d < d_lo || d > d_hi {
                        return None;
                    }
                    base.with_lateral(Lateral::Given {
                        sideslip: b,
                        steer: d,
                    })
                    .solve(&best.seed, &settings.solve)
                })
                .max_by(|x, y| (turn * x.lat_accel).total_cmp(&(turn * y.lat_accel)));
            match candidate {
                Some(c) if turn * c.lat_accel > turn * best.lat_accel => best = c,
                _ => break,
            }
        }
        sb *= 0.5;
        sd *= 0.5;
    }
    let edge = |v: f64, lo: f64, hi: f64| (v - lo).abs() < 1e-12 || (v - hi).abs() < 1e-12;
    Some(LimitPoint {
        lat_accel: best.lat_accel,
        yaw_moment: best.yaw_moment,
        balance: turn * best.yaw_moment,
        steer: best.steer,
        sideslip: best.sideslip,
        on_grid_edge: edge(best.sideslip, b_lo, b_hi) || edge(best.steer, d_lo, d_hi),
    })
}
