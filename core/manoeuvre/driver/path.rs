//! Reference paths: straight line, circle and the ISO 3888-1 double lane
//! change, with arc length, heading and curvature along them.

use std::f64::consts::PI;

use super::{DriverError, check};
use crate::manoeuvre::TurnDirection;

/// A point of a reference path.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct PathPoint {
    /// Arc length along the path, m.
    pub s: f64,
    /// Position x, m.
    pub x: f64,
    /// Position y, m.
    pub y: f64,
    /// Path heading, rad.
    pub heading: f64,
    /// Signed path curvature, 1/m (positive turning left).
    pub curvature: f64,
    /// Signed distance of the query point from the path, m, positive when the
    /// query point lies to the left of the path direction; 0.0 for points
    /// returned by [`Path::point_at`].
    pub cross_track_error: f64,
}

/// Lengths of the ISO 3888-1 double-lane-change sections, m (entry lane,
/// lane change, side lane, lane change back, exit lane).
pub const DOUBLE_LANE_CHANGE_SECTIONS: [f64; 5] = [15.0, 30.0, 25.0, 25.0, 15.0];
/// ISO 3888-1 lateral offset of the side lane, m.
pub const DOUBLE_LANE_CHANGE_OFFSET: f64 = 3.5;
/// Station spacing of the arc-length table of the double lane change, m.
const ARC_TABLE_STEP: f64 = 0.05;

/// Centre line of the ISO 3888-1 double lane change in its own frame
/// (ξ along the entry direction from the start of section 1, η to the left).
///
/// Sections 15, 30, 25, 25, 15 m with lateral offset 3.5 m (ISO 3888-1, from
/// the project's reference notes). The centre line is η = 0 in the entry
/// and exit lanes, η = offset in the side lane, and half-cosine transitions
/// η = offset·(1 − cos(π·u))/2 across the two lane-change sections (our own
/// choice, common practice): continuous slope, curvature steps of
/// offset·π²/(2·ℓ²) at the section ends (0.019 1/m for ℓ = 30 m,
/// 0.028 1/m for ℓ = 25 m). The 3.5 m offset is taken between lane centres.
/// Before ξ = 0 and after the exit lane the path continues straight.
#[derive(Debug, Clone, PartialEq)]
pub struct DoubleLaneChange {
    origin_x: f64,
    origin_y: f64,
    heading: f64,
    offset: f64,
    /// Arc length at stations ξ_i = i·ARC_TABLE_STEP over the course.
    arc: Vec<f64>,
}

impl DoubleLaneChange {
    /// Course starting at (`x`, `y`) (m) heading `heading` (rad), side lane
    /// `offset` m to the left (negative = right; ISO 3888-1: 3.5 m).
    pub fn new(x: f64, y: f64, heading: f64, offset: f64) -> Result<Self, DriverError> {
        let item = "double lane change";
        check(item, "x", x, true, "finite")?;
        check(item, "y", y, true, "finite")?;
        check(item, "heading", heading, true, "finite")?;
        check(item, "offset", offset, true, "finite")?;
        let mut course = Self {
            origin_x: x,
            origin_y: y,
            heading,
            offset,
            arc: Vec::new(),
        };
        let n = (Self::course_length() / ARC_TABLE_STEP).round() as usize;
        let mut arc = Vec::with_capacity(n + 1);
        arc.push(0.0);
        for i in 0..n {
            // Simpson's rule for ∫ sqrt(1 + η'²) dξ over one cell.
            let (a, b) = (i as f64 * ARC_TABLE_STEP, (i + 1) as f64 * ARC_TABLE_STEP);
            let g = |xi: f64| (1.0 + course.shape(xi).1.powi(2)).sqrt();
            let cell = (b - a) / 6.0 * (g(a) + 4.0 * g(0.5 * (a + b)) + g(b));
            arc.push(arc[i] + cell);
        }
        course.arc = arc;
        Ok(course)
    }

    /// Total length of the five sections along ξ, m (110 m).
    pub fn course_length() -> f64 {
        DOUBLE_LANE_CHANGE_SECTIONS.iter().sum()
    }

    /// Centre-line arc length of the five sections, m.
    pub fn arc_length(&self) -> f64 {
        self.arc.last().copied().unwrap_or(0.0)
    }

    /// (η, dη/dξ, d²η/dξ²) of the centre line at station ξ (m).
    fn shape(&self, xi: f64) -> (f64, f64, f64) {
        let [l1, l2, l3, l4, _] = DOUBLE_LANE_CHANGE_SECTIONS;
        let h = self.offset;
        let up = |x0: f64, len: f64, rising: bool| {
            let u = (xi - x0) / len;
            let (s, c) = (PI * u).sin_cos();
            let sign = if rising { 1.0 } else { -1.0 };
            let base = if rising { 0.0 } else { h };
            (
                base + sign * h * 0.5 * (1.0 - c),
                sign * h * 0.5 * PI / len * s,
                sign * h * 0.5 * (PI / len).powi(2) * c,
            )
        };
        if xi <= l1 {
            (0.0, 0.0, 0.0)
        } else if xi < l1 + l2 {
            up(l1, l2, true)
        } else if xi <= l1 + l2 + l3 {
            (h, 0.0, 0.0)
        } else if xi < l1 + l2 + l3 + l4 {
            up(l1 + l2 + l3, l4, false)
        } else {
            (0.0, 0.0, 0.0)
        }
    }

    fn arc_at_station(&self, xi: f64) -> f64 {
        let end = Self::course_length();
        if xi <= 0.0 || self.arc.len() < 2 {
            return xi;
        }
        if xi >= end {
            return self.arc_length() + (xi - end);
        }
        let f = xi / ARC_TABLE_STEP;
        let i = (f.floor() as usize).min(self.arc.len() - 2);
        let w = f - i as f64;
        self.arc[i] + w * (self.arc[i + 1] - self.arc[i])
    }

    fn station_at_arc(&self, s: f64) -> f64 {
        let end = Self::course_length();
        if s <= 0.0 || self.arc.len() < 2 {
            return s;
        }
        if s >= self.arc_length() {
            return end + (s - self.arc_length());
        }
        let i = self
            .arc
            .partition_point(|&a| a <= s)
            .clamp(1, self.arc.len() - 1);
        let (a0, a1) = (self.arc[i - 1], self.arc[i]);
        ((i - 1) as f64 + (s - a0) / (a1 - a0)) * ARC_TABLE_STEP
    }

    fn to_local(&self, x: f64, y: f64) -> (f64, f64) {
        let (sin, cos) = self.heading.sin_cos();
        let (dx, dy) = (x - self.origin_x, y - self.origin_y);
        (cos * dx + sin * dy, -sin * dx + cos * dy)
    }

    fn point_at_station(&self, xi: f64, cross_track_error: f64) -> PathPoint {
        let (eta, d1, d2) = self.shape(xi);
        let (sin, cos) = self.heading.sin_cos();
        PathPoint {
            s: self.arc_at_station(xi),
            x: self.origin_x + cos * xi - sin * eta,
            y: self.origin_y + sin * xi + cos * eta,
            heading: self.heading + d1.atan(),
            curvature: d2 / (1.0 + d1 * d1).powf(1.5),
            cross_track_error,
        }
    }

    fn closest(&self, x: f64, y: f64) -> PathPoint {
        let (px, py) = self.to_local(x, y);
        // Newton on g(ξ) = (ξ − ξp) + (η(ξ) − ηp)·η'(ξ) = 0, from ξ = ξp.
        let mut xi = px;
        for _ in 0..8 {
            let (eta, d1, d2) = self.shape(xi);
            let g = (xi - px) + (eta - py) * d1;
            let dg = 1.0 + d1 * d1 + (eta - py) * d2;
            if dg <= 0.0 {
                break;
            }
            let step = g / dg;
            xi -= step;
            if step.abs() < 1e-12 {
                break;
            }
        }
        let (eta, d1, _) = self.shape(xi);
        let norm = (1.0 + d1 * d1).sqrt();
        // Left normal of the local tangent (1, η')/norm is (−η', 1)/norm.
        let e = (-(px - xi) * d1 + (py - eta)) / norm;
        self.point_at_station(xi, e)
    }
}

/// Reference path for [`PathFollower`](super::PathFollower).
#[derive(Debug, Clone, PartialEq)]
pub enum Path {
    /// Straight line through (`x`, `y`) (m) with `heading` (rad); s = 0 at
    /// that point.
    Straight {
        /// Point on the line, x, m.
        x: f64,
        /// Point on the line, y, m.
        y: f64,
        /// Direction of travel, rad.
        heading: f64,
    },
    /// Circle of `radius` (m, > 0) about (`centre_x`, `centre_y`), travelled
    /// anticlockwise (`Left`, centre on the left) or clockwise (`Right`);
    /// s = 0 at the point due +x of the centre.
    Circle {
        /// Centre x, m.
        centre_x: f64,
        /// Centre y, m.
        centre_y: f64,
        /// Radius, m.
        radius: f64,
        /// Direction of travel.
        direction: TurnDirection,
    },
    /// ISO 3888-1 double lane change.
    DoubleLaneChange(DoubleLaneChange),
}

impl Path {
    /// Straight line; all inputs finite.
    pub fn straight(x: f64, y: f64, heading: f64) -> Result<Self, DriverError> {
        Ok(Path::Straight {
            x: check("straight path", "x", x, true, "finite")?,
            y: check("straight path", "y", y, true, "finite")?,
            heading: check("straight path", "heading", heading, true, "finite")?,
        })
    }

    /// Circle; `radius` finite and > 0.
    pub fn circle(
        centre_x: f64,
        centre_y: f64,
        radius: f64,
        direction: TurnDirection,
    ) -> Result<Self, DriverError> {
        Ok(Path::Circle {
            centre_x: check("circle path", "centre_x", centre_x, true, "finite")?,
            centre_y: check("circle path", "centre_y", centre_y, true, "finite")?,
            radius: check(
                "circle path",
                "radius",
                radius,
                radius > 0.0,
                "finite and > 0",
            )?,
            direction,
        })
    }

    /// ISO 3888-1 double lane change, see [`DoubleLaneChange::new`].
    pub fn double_lane_change(
        x: f64,
        y: f64,
        heading: f64,
        offset: f64,
    ) -> Result<Self, DriverError> {
        Ok(Path::DoubleLaneChange(DoubleLaneChange::new(
            x, y, heading, offset,
        )?))
    }

    /// Point of the path at arc length `s` (m).
    pub fn point_at(&self, s: f64) -> PathPoint {
        match self {
            Path::Straight { x, y, heading } => {
                let (sin, cos) = heading.sin_cos();
                PathPoint {
                    s,
                    x: x + cos * s,
                    y: y + sin * s,
                    heading: *heading,
                    curvature: 0.0,
                    cross_track_error: 0.0,
                }
            }
            Path::Circle {
                centre_x,
                centre_y,
                radius,
                direction,
            } => {
                let sign = direction.sign();
                let theta = sign * s / radius;
                let (sin, cos) = theta.sin_cos();
                PathPoint {
                    s,
                    x: centre_x + radius * cos,
                    y: centre_y + radius * sin,
                    heading: theta + sign * 0.5 * PI,
                    curvature: sign / radius,
                    cross_track_error: 0.0,
                }
            }
            Path::DoubleLaneChange(course) => {
                let mut p = course.point_at_station(course.station_at_arc(s), 0.0);
                p.s = s;
                p
            }
        }
    }

    /// Closest point of the path to (`x`, `y`) (m), with the signed
    /// cross-track error (positive when (`x`, `y`) lies left of the path).
    /// On a circle s is taken in (−π·R, π·R].
    pub fn closest(&self, x: f64, y: f64) -> PathPoint {
        match self {
            Path::Straight {
                x: x0,
                y: y0,
                heading,
            } => {
                let (sin, cos) = heading.sin_cos();
                let (dx, dy) = (x - x0, y - y0);
                let mut p = self.point_at(cos * dx + sin * dy);
                p.cross_track_error = -sin * dx + cos * dy;
                p
            }
            Path::Circle {
                centre_x,
                centre_y,
                radius,
                direction,
            } => {
                let sign = direction.sign();
                let (dx, dy) = (x - centre_x, y - centre_y);
                let theta = dy.atan2(dx);
                let mut p = self.point_at(sign * radius * theta);
                // Centre on the left of a left-hand circle: inside is left.
                p.cross_track_error = sign * (radius - dx.hypot(dy));
                p
            }
            Path::DoubleLaneChange(course) => course.closest(x, y),
        }
    }

    /// The point `distance` (m) of arc length ahead of the point of the path
    /// closest to (`x`, `y`).
    pub fn point_ahead(&self, x: f64, y: f64, distance: f64) -> PathPoint {
        self.point_at(self.closest(x, y).s + distance)
    }
}
