//! Plots particular to vehicle handling: the steady-state handling diagram
//! (road-wheel angle against lateral acceleration, ISO 4138 style) and the
//! friction-usage plot of longitudinal against lateral acceleration.

use std::path::Path;

use super::lines::{Chart, Curve, draw_chart};
use super::style::{self, LINE_WIDTH, MARGIN, REFERENCE, X_LABEL_AREA, Y_LABEL_AREA};
use super::{PlotError, Series};

/// Up to this many samples the handling diagram marks every sample.
const MARK_UP_TO: usize = 60;

/// Writes a handling diagram to the SVG file `path`: a steer angle (deg) on
/// y, titled `y_label` (e.g. "road-wheel angle \[deg\]"), against lateral
/// acceleration (g) on x, from a steady-state run such as a constant-radius
/// or slow steer-ramp run (ISO 4138). The samples, labelled "simulation",
/// are joined by a line, with markers when there are few of them (60 or
/// fewer).
///
/// `fit`, when given, is `(slope, intercept, ay_max)` of a straight line
/// fitted to the linear range: slope in deg/g, intercept in deg, and the
/// lateral acceleration in g up to which the fit holds. For road-wheel steer
/// angle at constant radius the slope is the understeer gradient K, from
/// δ = 57.3·L/R + K·a_y (Gillespie, "Fundamentals of Vehicle Dynamics",
/// ch. 6); for steering-wheel angle divide by the overall steering ratio
/// first (ISO 4138). The caller decides; the label always says "understeer
/// gradient". The line is drawn from 0 to `ay_max` and
/// its legend entry reads e.g. "linear fit: understeer gradient 2.31 deg/g".
///
/// Canvas 900 × 600 px; both axes include zero. Errors: [`PlotError::Empty`],
/// [`PlotError::LengthMismatch`], [`PlotError::NonFinite`] for the samples,
/// [`PlotError::InvalidValue`] when a fit value is not finite, and
/// [`PlotError::Io`].
pub fn handling_diagram(
    path: &Path,
    title: &str,
    y_label: &str,
    lat_accel_g: &[f64],
    steer_deg: &[f64],
    fit: Option<(f64, f64, f64)>,
) -> Result<(), PlotError> {
    style::check_pair(
        path,
        lat_accel_g,
        steer_deg,
        "lateral acceleration",
        "steer angle",
    )?;
    if let Some((slope, intercept, ay_max)) = fit
        && !(slope.is_finite() && intercept.is_finite() && ay_max.is_finite())
    {
        return Err(PlotError::invalid(
            path,
            format!(
                "linear fit must be finite: slope {slope} deg/g, intercept {intercept} deg, \
                 ay max {ay_max} g"
            ),
        ));
    }
    let fit_line = fit.map(|(slope, intercept, ay_max)| {
        vec![(0.0, intercept), (ay_max, intercept + slope * ay_max)]
    });

    let points = style::finite_points(lat_accel_g, steer_deg);
    let fit_points = fit_line.iter().flatten().copied();
    let all: Vec<(f64, f64)> = points.chain(fit_points).chain([(0.0, 0.0)]).collect();
    let (Some(x_extent), Some(y_extent)) = (
        style::finite_extent(all.iter().map(|p| p.0)),
        style::finite_extent(all.iter().map(|p| p.1)),
    ) else {
        return Err(PlotError::non_finite(
            path,
            "lateral acceleration/steer angle",
        ));
    };

    let mut curves = vec![Curve {
        label: "simulation",
        segments: style::segments(lat_accel_g, steer_deg),
        colour: style::colour(0),
        width: LINE_WIDTH,
        markers: lat_accel_g.len() <= MARK_UP_TO,
        dashed: false,
    }];
    let fit_label;
    if let (Some((slope, _, _)), Some(line)) = (fit, fit_line) {
        fit_label = format!("linear fit: understeer gradient {slope:.2} deg/g");
        curves.push(Curve {
            label: &fit_label,
            segments: vec![line],
            colour: style::colour(1),
            width: LINE_WIDTH,
            markers: false,
            dashed: true,
        });
    }
    let chart = Chart {
        title: Some(title),
        x_label: Some("lateral acceleration [g]"),
        y_label,
        x_range: style::padded(x_extent),
        y_range: style::padded(y_extent),
        y_ticks: 10,
        curves,
        zero_lines: false,
        margins: (MARGIN, MARGIN),
        legend: true,
    };
    style::write_svg(path, style::SIZE, |root| draw_chart(root, &chart))
}

/// Writes a friction-usage ("g-g") plot to the SVG file `path`: lateral
/// acceleration (g) on x, longitudinal acceleration (g) on y, both from the
/// same samples, on equal scales (a circle looks round) centred on zero.
///
/// `reference_mu`, when given, draws a reference circle of that radius in g:
/// the resultant-acceleration limit |a| ≤ μ·g of a vehicle whose tyres all
/// work at friction coefficient μ (friction circle; common practice).
///
/// Canvas 760 × 700 px. Errors: [`PlotError::Empty`],
/// [`PlotError::LengthMismatch`], [`PlotError::NonFinite`],
/// [`PlotError::InvalidValue`] when μ is not finite and positive, and
/// [`PlotError::Io`].
pub fn gg(
    path: &Path,
    title: &str,
    ax_g: &[f64],
    ay_g: &[f64],
    reference_mu: Option<f64>,
) -> Result<(), PlotError> {
    style::check_pair(
        path,
        ay_g,
        ax_g,
        "lateral acceleration",
        "longitudinal acceleration",
    )?;
    if let Some(mu) = reference_mu
        && !(mu.is_finite() && mu > 0.0)
    {
        return Err(PlotError::invalid(
            path,
            format!("reference friction coefficient must be finite and positive, got {mu}"),
        ));
    }
    let reach = style::finite_points(ay_g, ax_g)
        .map(|(y, x)| y.abs().max(x.abs()))
        .chain(reference_mu)
        .fold(0.0_f64, f64::max);
    let half = if reach > 0.0 { 1.1 * reach } else { 1.0 };

    let data = Series::new("acceleration", ay_g.to_vec(), ax_g.to_vec());
    let mut curves = Vec::new();
    let circle_label;
    if let Some(mu) = reference_mu {
        circle_label = format!("friction circle \u{3bc} = {mu:.2}");
        let circle = (0..=360)
            .map(|k| {
                let angle = (k as f64).to_radians();
                (mu * angle.cos(), mu * angle.sin())
            })
            .collect();
        curves.push(Curve {
            label: &circle_label,
            segments: vec![circle],
            colour: REFERENCE,
            width: 1,
            markers: false,
            dashed: false,
        });
    }
    curves.push(Curve::from_series(&data, 0, false));
    // Draw the data on top of the reference, but list it first in the legend.
    curves.reverse();
    let chart = Chart {
        title: None,
        x_label: Some("lateral acceleration [g]"),
        y_label: "longitudinal acceleration [g]",
        x_range: (-half, half),
        y_range: (-half, half),
        y_ticks: 10,
        curves,
        zero_lines: true,
        margins: (MARGIN, MARGIN),
        legend: true,
    };
    write_square(path, (760, 700), title, &chart)
}

/// Writes `chart` under `title` on a canvas of `size` px with a square plot
/// area, so that equal x and y ranges give equal scales (a circle looks round).
pub(crate) fn write_square(
    path: &Path,
    size: (u32, u32),
    title: &str,
    chart: &Chart<'_>,
) -> Result<(), PlotError> {
    style::write_svg(path, size, |root| {
        let body = style::titled(root, title)?;
        let (w, h) = body.dim_in_pixel();
        // Chart area chosen so that the plot area inside it is square.
        let side_x = MARGIN + (MARGIN + 12) + Y_LABEL_AREA;
        let side_y = 2 * MARGIN + X_LABEL_AREA;
        let plot = w.saturating_sub(side_x).min(h.saturating_sub(side_y));
        let left = w.saturating_sub(plot + side_x) / 2;
        let square = body.shrink((left, 0), (plot + side_x, plot + side_y));
        draw_chart(&square, chart)
    })
}

#[cfg(test)]
mod tests {
    use super::super::lines::tests::polylines_in;
    use super::*;

    #[test]
    fn handling_diagram_shows_gradient_and_fit() {
        let dir = tempfile::tempdir().unwrap();
        let path = dir.path().join("handling.svg");
        // Invented data: linear to 0.4 g, then rising faster.
        let ay: Vec<f64> = (0..=80).map(|i| i as f64 * 0.01).collect();
        let steer: Vec<f64> = ay
            .iter()
            .map(|&a| 1.2 + 2.31 * a + 8.0 * (a - 0.4).max(0.0).powi(2))
            .collect();
        handling_diagram(
            &path,
            "Constant radius 40 m",
            "road-wheel angle [deg]",
            &ay,
            &steer,
            Some((2.31, 1.2, 0.4)),
        )
        .unwrap();
        let svg = std::fs::read_to_string(&path).unwrap();
        assert!(svg.starts_with("<svg"));
        for text in [
            "Constant radius 40 m",
            "lateral acceleration [g]",
            "road-wheel angle [deg]",
            "simulation",
            "understeer gradient 2.31 deg/g",
        ] {
            assert!(svg.contains(text), "missing text {text:?}");
        }
        assert_eq!(polylines_in(&svg, style::colour(0)), 1, "data line");
        assert_eq!(polylines_in(&svg, style::colour(1)), 1, "fit line");
        assert!(svg.contains("stroke-dasharray=\"12,6\""), "fit line dashed");
        assert!(!svg.contains("test data"));
        assert_eq!(svg.matches("<circle").count(), 0, "81 samples: no markers");

        let few = handling_diagram(
            &path,
            "Few",
            "road-wheel angle [deg]",
            &ay[..10],
            &steer[..10],
            None,
        );
        assert!(few.is_ok());
        let svg = std::fs::read_to_string(&path).unwrap();
        assert_eq!(svg.matches("<circle").count(), 10);
        assert_eq!(polylines_in(&svg, style::colour(1)), 0, "no fit given");
    }

    #[test]
    fn handling_diagram_rejects_bad_input() {
        let dir = tempfile::tempdir().unwrap();
        let path = dir.path().join("bad.svg");
        assert!(matches!(
            handling_diagram(&path, "t", "road-wheel angle [deg]", &[], &[], None),
            Err(PlotError::Empty { .. })
        ));
        assert!(matches!(
            handling_diagram(
                &path,
                "t",
                "road-wheel angle [deg]",
                &[0.1, 0.2],
                &[1.0],
                None
            ),
            Err(PlotError::LengthMismatch { .. })
        ));
        assert!(matches!(
            handling_diagram(
                &path,
                "t",
                "road-wheel angle [deg]",
                &[f64::NAN],
                &[1.0],
                None
            ),
            Err(PlotError::NonFinite { .. })
        ));
        assert!(matches!(
            handling_diagram(
                &path,
                "t",
                "road-wheel angle [deg]",
                &[0.1],
                &[1.0],
                Some((f64::NAN, 0.0, 0.5))
            ),
            Err(PlotError::InvalidValue { .. })
        ));
        // NaN samples are skipped, not fatal.
        let ay = [0.1, f64::NAN, 0.3, 0.4];
        let steer = [1.0, 2.0, f64::NAN, 4.0];
        assert!(
            handling_diagram(
                &path,
                "t",
                "road-wheel angle [deg]",
                &ay,
                &steer,
                Some((2.0, 0.5, 0.4))
            )
            .is_ok()
        );
    }

    #[test]
    fn gg_plot_is_square_with_reference_circle() {
        let dir = tempfile::tempdir().unwrap();
        let path = dir.path().join("gg.svg");
        // Invented trace: braking into a turn, then accelerating out.
        let n = 200;
        let phase: Vec<f64> = (0..n)
            .map(|i| i as f64 / (n - 1) as f64 * std::f64::consts::PI)
            .collect();
        let ax: Vec<f64> = phase.iter().map(|p| -0.8 * p.cos()).collect();
        let ay: Vec<f64> = phase.iter().map(|p| 0.9 * p.sin()).collect();
        gg(&path, "Friction usage, lap", &ax, &ay, Some(1.0)).unwrap();
        let svg = std::fs::read_to_string(&path).unwrap();
        assert!(svg.starts_with("<svg"));
        for text in [
            "Friction usage, lap",
            "lateral acceleration [g]",
            "longitudinal acceleration [g]",
            "\u{3bc} = 1.00",
        ] {
            assert!(svg.contains(text), "missing text {text:?}");
        }
        assert_eq!(polylines_in(&svg, style::colour(0)), 1, "data trace");
        // Circle plus the two zero lines share the reference colour.
        assert_eq!(polylines_in(&svg, REFERENCE), 3);

        gg(&path, "No reference", &ax, &ay, None).unwrap();
        let svg = std::fs::read_to_string(&path).unwrap();
        assert_eq!(polylines_in(&svg, REFERENCE), 2, "zero lines only");
        assert!(!svg.contains("friction circle"));
    }

    #[test]
    fn gg_plot_has_equal_scales() {
        // The plot area is square and both ranges equal, so one g spans the
        // same number of pixels on both axes: the circle's horizontal and
        // vertical extents in the SVG agree to within a pixel.
        let dir = tempfile::tempdir().unwrap();
        let path = dir.path().join("gg_square.svg");
        gg(&path, "Equal scales", &[0.2, -0.5], &[0.3, 0.1], Some(0.8)).unwrap();
        let svg = std::fs::read_to_string(&path).unwrap();
        let stroke = format!(
            "stroke=\"#{:02X}{:02X}{:02X}\"",
            REFERENCE.0, REFERENCE.1, REFERENCE.2
        );
        let circle = svg
            .lines()
            .filter(|l| l.starts_with("<polyline") && l.contains(&stroke))
            .max_by_key(|l| l.len())
            .unwrap();
        let points = circle.split("points=\"").nth(1).unwrap();
        let coords: Vec<(f64, f64)> = points
            .split_whitespace()
            .filter_map(|p| {
                let (x, y) = p.trim_end_matches("\"/>").split_once(',')?;
                Some((x.parse().ok()?, y.parse().ok()?))
            })
            .collect();
        assert!(coords.len() > 300);
        let extent = |v: Vec<f64>| {
            v.iter().copied().fold(f64::MIN, f64::max) - v.iter().copied().fold(f64::MAX, f64::min)
        };
        let width = extent(coords.iter().map(|c| c.0).collect());
        let height = extent(coords.iter().map(|c| c.1).collect());
        assert!(
            (width - height).abs() <= 1.0,
            "width {width} px, height {height} px"
        );
    }

    #[test]
    fn gg_rejects_bad_input() {
        let dir = tempfile::tempdir().unwrap();
        let path = dir.path().join("bad.svg");
        assert!(matches!(
            gg(&path, "t", &[], &[], None),
            Err(PlotError::Empty { .. })
        ));
        assert!(matches!(
            gg(&path, "t", &[0.1], &[0.1, 0.2], None),
            Err(PlotError::LengthMismatch { .. })
        ));
        assert!(matches!(
            gg(&path, "t", &[f64::NAN], &[f64::INFINITY], None),
            Err(PlotError::NonFinite { .. })
        ));
        assert!(matches!(
            gg(&path, "t", &[0.1], &[0.1], Some(-1.0)),
            Err(PlotError::InvalidValue { .. })
        ));
        assert!(
            gg(
                &path,
                "t",
                &[0.1, f64::NAN, 0.2],
                &[0.0, 0.3, f64::NAN],
                Some(1.0)
            )
            .is_ok()
        );
    }
}
