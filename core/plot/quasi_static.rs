//! Plots of the quasi-static methods: the yaw-moment diagram (yaw-moment
//! coefficient against lateral acceleration, lines of constant sideslip and
//! of constant steer, the trim line marked) and the g-g-V envelope (one
//! closed curve per speed on equal scales).

use std::path::Path;

use super::lines::{Chart, Curve, draw_chart};
use super::style::{self, LINE_WIDTH, MARGIN};
use super::vehicle::write_square;
use super::{PlotError, Series};

/// The data of one yaw-moment diagram, in plot units (lateral acceleration
/// in g, yaw-moment coefficient C_N = N/(m·g·L)).
#[derive(Debug, Clone, PartialEq)]
pub struct YawMomentFigure {
    /// One line per sideslip value: points (a_y, C_N) along the steer grid.
    pub sideslip_lines: Vec<Series>,
    /// One line per steer value: points (a_y, C_N) along the sideslip grid.
    pub steer_lines: Vec<Series>,
    /// Legend text of the sideslip lines, e.g. "constant sideslip, -8 to 8 deg".
    pub sideslip_label: String,
    /// Legend text of the steer lines.
    pub steer_label: String,
    /// Trim points (a_y, 0), drawn as markers on the line C_N = 0.
    pub trim: Vec<f64>,
    /// The trim limit a_y, g (marked on C_N = 0).
    pub trim_limit: Option<f64>,
    /// The limit point (a_y, C_N): largest lateral acceleration.
    pub limit: Option<(f64, f64)>,
}

/// Writes a yaw-moment diagram to the SVG file `path` (the moment method's
/// plot, Milliken & Milliken, *Race Car Vehicle Dynamics*, ch. 8; layout our
/// own): lateral acceleration (g) on x, yaw-moment coefficient C_N on y,
/// a thin line per constant sideslip (first palette colour) and per constant
/// steer (second), trim points as markers on C_N = 0, the trim limit and the
/// limit point marked and given in the legend.
///
/// Canvas 900 × 600 px. Errors: [`PlotError::Empty`] without lines,
/// [`PlotError::LengthMismatch`], [`PlotError::NonFinite`] when no point is
/// finite, [`PlotError::Io`].
pub fn yaw_moment_diagram(
    path: &Path,
    title: &str,
    figure: &YawMomentFigure,
) -> Result<(), PlotError> {
    let lines: Vec<&Series> = figure
        .sideslip_lines
        .iter()
        .chain(&figure.steer_lines)
        .collect();
    if lines.is_empty() {
        return Err(PlotError::empty(path, "yaw-moment lines"));
    }
    for s in &lines {
        if s.x.len() != s.y.len() {
            return Err(PlotError::mismatch(
                path,
                format!("line \"{}\": y against x", s.label),
                s.x.len(),
                s.y.len(),
            ));
        }
    }
    let points = || lines.iter().flat_map(|s| style::finite_points(&s.x, &s.y));
    let marks = figure
        .trim
        .iter()
        .chain(&figure.trim_limit)
        .map(|&x| (x, 0.0))
        .chain(figure.limit);
    let (Some(x_extent), Some(y_extent)) = (
        style::finite_extent(points().map(|p| p.0).chain(marks.clone().map(|p| p.0))),
        style::finite_extent(points().map(|p| p.1).chain(marks.map(|p| p.1))),
    ) else {
        return Err(PlotError::non_finite(path, "yaw-moment lines"));
    };
    let net = |series: &[Series], index: usize, label| Curve {
        label,
        segments: series
            .iter()
            .flat_map(|s| style::segments(&s.x, &s.y))
            .collect(),
        colour: style::colour(index),
        width: 1,
        markers: false,
        dashed: false,
    };
    let mut curves = vec![
        net(&figure.sideslip_lines, 0, &figure.sideslip_label),
        net(&figure.steer_lines, 1, &figure.steer_label),
    ];
    let trim_label = "trim (N = 0)";
    if !figure.trim.is_empty() {
        curves.push(Curve {
            label: trim_label,
            segments: vec![figure.trim.iter().map(|&x| (x, 0.0)).collect()],
            colour: style::colour(2),
            width: LINE_WIDTH,
            markers: true,
            dashed: false,
        });
    }
    let limit_label;
    if let Some(ay) = figure.trim_limit {
        limit_label = format!("trim limit {ay:.3} g");
        curves.push(Curve {
            label: &limit_label,
            segments: vec![vec![(ay, 0.0)]],
            colour: style::colour(3),
            width: LINE_WIDTH,
            markers: true,
            dashed: false,
        });
    }
    let balance_label;
    if let Some((ay, cn)) = figure.limit {
        balance_label = format!("limit {ay:.3} g, C_N {cn:+.4}");
        curves.push(Curve {
            label: &balance_label,
            segments: vec![vec![(ay, cn)]],
            colour: style::colour(5),
            width: LINE_WIDTH,
            markers: true,
            dashed: false,
        });
    }
    let chart = Chart {
        title: Some(title),
        x_label: Some("lateral acceleration [g]"),
        y_label: "yaw-moment coefficient N/(m*g*L) [1]",
        x_range: style::padded(x_extent),
        y_range: style::padded(y_extent),
        y_ticks: 10,
        curves,
        zero_lines: true,
        margins: (MARGIN, MARGIN),
        legend: true,
    };
    style::write_svg(path, style::SIZE, |root| draw_chart(root, &chart))
}

/// Writes a g-g-V envelope to the SVG file `path`: lateral acceleration (g)
/// on x, longitudinal acceleration (g) on y, on equal scales centred on zero,
/// one closed curve per series (the plot joins the last point to the first);
/// the label of each series names its speed.
///
/// Canvas 760 × 700 px. Errors: [`PlotError::Empty`],
/// [`PlotError::LengthMismatch`], [`PlotError::NonFinite`], [`PlotError::Io`].
pub fn gg_envelope(path: &Path, title: &str, curves: &[Series]) -> Result<(), PlotError> {
    style::check_series(path, curves, "envelope list")?;
    let reach = curves
        .iter()
        .flat_map(|s| style::finite_points(&s.x, &s.y))
        .map(|(x, y)| x.abs().max(y.abs()))
        .fold(0.0_f64, f64::max);
    if reach == 0.0
        && curves
            .iter()
            .all(|s| style::finite_points(&s.x, &s.y).count() == 0)
    {
        return Err(PlotError::non_finite(path, "envelope list"));
    }
    let half = if reach > 0.0 { 1.1 * reach } else { 1.0 };
    let closed: Vec<Series> = curves
        .iter()
        .map(|s| {
            let mut c = s.clone();
            if let (Some(&x), Some(&y)) = (s.x.first(), s.y.first()) {
                c.x.push(x);
                c.y.push(y);
            }
            c
        })
        .collect();
    let chart = Chart {
        title: None,
        x_label: Some("lateral acceleration [g]"),
        y_label: "longitudinal acceleration [g]",
        x_range: (-half, half),
        y_range: (-half, half),
        y_ticks: 10,
        curves: closed
            .iter()
            .enumerate()
            .map(|(i, s)| Curve::from_series(s, i, false))
            .collect(),
        zero_lines: true,
        margins: (MARGIN, MARGIN),
        legend: true,
    };
    write_square(path, (760, 700), title, &chart)
}

#[cfg(test)]
mod tests {
    use super::super::lines::tests::polylines_in;
    use super::super::style::REFERENCE;
    use super::*;

    fn figure() -> YawMomentFigure {
        // Invented linear net: a_y = 0.1·δ − 0.2·β, C_N = 0.02·δ + 0.03·β.
        let values: Vec<f64> = (-3..=3).map(f64::from).collect();
        let line = |label: String, pts: Vec<(f64, f64)>| {
            Series::new(
                label,
                pts.iter().map(|p| p.0).collect(),
                pts.iter().map(|p| p.1).collect(),
            )
        };
        let at = |b: f64, d: f64| (0.1 * d - 0.2 * b, 0.02 * d + 0.03 * b);
        YawMomentFigure {
            sideslip_lines: values
                .iter()
                .map(|&b| line(format!("{b}"), values.iter().map(|&d| at(b, d)).collect()))
                .collect(),
            steer_lines: values
                .iter()
                .map(|&d| line(format!("{d}"), values.iter().map(|&b| at(b, d)).collect()))
                .collect(),
            sideslip_label: "constant sideslip".into(),
            steer_label: "constant steer".into(),
            trim: vec![-0.2, 0.0, 0.2],
            trim_limit: Some(0.25),
            limit: Some((0.9, -0.05)),
        }
    }

    #[test]
    fn yaw_moment_diagram_draws_both_nets_and_marks() {
        let dir = tempfile::tempdir().unwrap();
        let path = dir.path().join("ymd.svg");
        yaw_moment_diagram(&path, "Yaw moment, 80 km/h", &figure()).unwrap();
        let svg = std::fs::read_to_string(&path).unwrap();
        for text in [
            "Yaw moment, 80 km/h",
            "lateral acceleration [g]",
            "constant sideslip",
            "constant steer",
            "trim (N = 0)",
            "trim limit 0.250 g",
            "limit 0.900 g, C_N -0.0500",
        ] {
            assert!(svg.contains(text), "missing {text:?}");
        }
        assert_eq!(polylines_in(&svg, style::colour(0)), 7, "sideslip lines");
        assert_eq!(polylines_in(&svg, style::colour(1)), 7, "steer lines");
        assert_eq!(polylines_in(&svg, REFERENCE), 2, "zero lines");
    }

    #[test]
    fn envelope_curves_are_closed_and_square() {
        let dir = tempfile::tempdir().unwrap();
        let path = dir.path().join("gg.svg");
        let ring = |r: f64| {
            let t: Vec<f64> = (0..12).map(|k| f64::from(k) * 30f64.to_radians()).collect();
            Series::new(
                format!("{r}"),
                t.iter().map(|a| r * a.sin()).collect(),
                t.iter().map(|a| r * a.cos()).collect(),
            )
        };
        gg_envelope(&path, "Envelope", &[ring(1.0), ring(1.4)]).unwrap();
        let svg = std::fs::read_to_string(&path).unwrap();
        assert_eq!(polylines_in(&svg, style::colour(0)), 1);
        assert_eq!(polylines_in(&svg, style::colour(1)), 1);
        // 12 points plus the closing one.
        let line = svg
            .lines()
            .find(|l| l.starts_with("<polyline") && l.contains("#0072B2"))
            .unwrap();
        let coords = line
            .split("points=\"")
            .nth(1)
            .unwrap()
            .split_whitespace()
            .filter(|p| p.trim_end_matches("\"/>").split_once(',').is_some())
            .count();
        assert_eq!(coords, 13);
        assert!(matches!(
            gg_envelope(&path, "t", &[]),
            Err(PlotError::Empty { .. })
        ));
    }
}
