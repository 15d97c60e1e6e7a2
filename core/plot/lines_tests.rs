//! Tests of the line plots.

use super::*;

/// `<polyline` elements drawn in `colour` (plotters writes "#RRGGBB").
pub(crate) fn polylines_in(svg: &str, colour: RGBColor) -> usize {
    let stroke = format!(
        "stroke=\"#{:02X}{:02X}{:02X}\"",
        colour.0, colour.1, colour.2
    );
    svg.lines()
        .filter(|l| l.starts_with("<polyline") && l.contains(&stroke))
        .count()
}

fn time_series(label: &str, n: usize, f: impl Fn(f64) -> f64) -> Series {
    let t: Vec<f64> = (0..n).map(|i| i as f64 * 0.01).collect();
    let y = t.iter().map(|&t| f(t)).collect();
    Series::new(label, t, y)
}

#[test]
fn lines_writes_titled_svg_with_one_path_per_series() {
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("lines.svg");
    let series = [
        time_series("front axle", 200, |t| (3.0 * t).sin()),
        time_series("rear axle", 200, |t| 0.8 * (3.0 * t).sin()),
        time_series("body", 200, |t| 0.1 * t),
    ];
    lines(
        &path,
        "Slip angles, sine steer",
        &Axis::new("time [s]"),
        &Axis::new("slip angle [deg]"),
        &series,
    )
    .unwrap();
    let svg = std::fs::read_to_string(&path).unwrap();
    assert!(svg.starts_with("<svg"));
    for text in [
        "Slip angles, sine steer",
        "time [s]",
        "slip angle [deg]",
        "front axle",
        "rear axle",
        "body",
    ] {
        assert!(svg.contains(text), "missing text {text:?}");
    }
    assert!(svg.contains("\nfront axle\n"), "legend entry");
    for i in 0..3 {
        assert_eq!(polylines_in(&svg, style::colour(i)), 1, "series {i}");
    }
}

#[test]
fn same_input_writes_identical_files() {
    let dir = tempfile::tempdir().unwrap();
    let (a, b) = (dir.path().join("a.svg"), dir.path().join("b.svg"));
    let series = [
        time_series("left", 100, |t| (7.0 * t).sin()),
        time_series("right", 100, |t| (7.0 * t).cos()),
    ];
    let (x, y) = (Axis::new("time [s]"), Axis::new("wheel speed [rad/s]"));
    lines(&a, "Wheel speeds", &x, &y, &series).unwrap();
    lines(&b, "Wheel speeds", &x, &y, &series).unwrap();
    assert_eq!(std::fs::read(&a).unwrap(), std::fs::read(&b).unwrap());
}

#[test]
fn single_series_has_no_legend() {
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("one.svg");
    let series = [time_series("yaw rate", 50, |t| t * t)];
    lines(
        &path,
        "Yaw rate",
        &Axis::new("time [s]"),
        &Axis::new("yaw rate [deg/s]"),
        &series,
    )
    .unwrap();
    let svg = std::fs::read_to_string(&path).unwrap();
    assert_eq!(polylines_in(&svg, style::colour(0)), 1);
    // plotters writes each text on its own line; only a legend would
    // write the bare series label.
    assert!(!svg.contains("\nyaw rate\n"));
}

#[test]
fn nan_breaks_the_line_without_panic() {
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("nan.svg");
    let mut s = time_series("roll angle", 100, |t| t);
    s.y[40] = f64::NAN;
    s.x[70] = f64::INFINITY;
    lines(
        &path,
        "Roll",
        &Axis::new("time [s]"),
        &Axis::new("roll angle [deg]"),
        &[s],
    )
    .unwrap();
    let svg = std::fs::read_to_string(&path).unwrap();
    assert_eq!(polylines_in(&svg, style::colour(0)), 3);
}

#[test]
fn constant_channel_plots() {
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("flat.svg");
    let s = time_series("speed", 20, |_| 22.2);
    lines(
        &path,
        "Speed",
        &Axis::new("time [s]"),
        &Axis::new("speed [m/s]"),
        &[s],
    )
    .unwrap();
    let svg = std::fs::read_to_string(&path).unwrap();
    assert_eq!(polylines_in(&svg, style::colour(0)), 1);
    // The flat line sits in the middle of the 600 px canvas, not on an edge.
    let stroke = "stroke=\"#0072B2\"";
    let line = svg
        .lines()
        .find(|l| l.starts_with("<polyline") && l.contains(stroke))
        .unwrap();
    let heights: Vec<f64> = line
        .split("points=\"")
        .nth(1)
        .unwrap()
        .split_whitespace()
        .filter_map(|p| p.split(',').nth(1)?.trim_end_matches("\"/>").parse().ok())
        .collect();
    assert_eq!(heights.len(), 20);
    assert!(heights.iter().all(|&h| h == heights[0]));
    assert!(
        (250.0..350.0).contains(&heights[0]),
        "line at {} px",
        heights[0]
    );
}

#[test]
fn markers_are_drawn_at_every_point() {
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("sweep.svg");
    let a = Series::new(
        "40 km/h",
        vec![0.0, 1.0, 2.0, 3.0],
        vec![0.0, 0.5, 0.9, 1.2],
    );
    let b = Series::new(
        "80 km/h",
        vec![0.0, 1.0, 2.0, 3.0],
        vec![0.0, 0.7, 1.3, 1.7],
    );
    lines_with_markers(
        &path,
        "Steady-state yaw gain",
        &Axis::new("steer angle [deg]"),
        &Axis::new("yaw rate [deg/s]"),
        &[a, b],
    )
    .unwrap();
    let svg = std::fs::read_to_string(&path).unwrap();
    assert_eq!(polylines_in(&svg, style::colour(0)), 1);
    assert_eq!(polylines_in(&svg, style::colour(1)), 1);
    assert_eq!(svg.matches("<circle").count(), 8);
}

#[test]
fn bad_input_gives_the_right_error() {
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("bad.svg");
    let (x, y) = (Axis::new("x [m]"), Axis::new("y [m]"));
    assert!(matches!(
        lines(&path, "t", &x, &y, &[]),
        Err(PlotError::Empty { .. })
    ));
    let empty = Series::new("e", vec![], vec![]);
    assert!(matches!(
        lines(&path, "t", &x, &y, &[empty]),
        Err(PlotError::Empty { .. })
    ));
    let short = Series::new("s", vec![0.0, 1.0, 2.0], vec![0.0, 1.0]);
    assert!(matches!(
        lines(&path, "t", &x, &y, &[short]),
        Err(PlotError::LengthMismatch {
            expected: 3,
            found: 2,
            ..
        })
    ));
    let nan = Series::new("n", vec![0.0, 1.0], vec![f64::NAN, f64::NAN]);
    assert!(matches!(
        lines(&path, "t", &x, &y, &[nan]),
        Err(PlotError::NonFinite { .. })
    ));
    assert!(!path.exists(), "no file is written on bad input");
    // A directory that cannot be created: a file stands in its way.
    std::fs::write(dir.path().join("file"), "x").unwrap();
    let blocked = dir.path().join("file/dir/plot.svg");
    let ok = Series::new("ok", vec![0.0, 1.0], vec![0.0, 1.0]);
    assert!(matches!(
        lines(&blocked, "t", &x, &y, &[ok]),
        Err(PlotError::Output(_))
    ));
}

#[test]
fn stacked_panels_share_the_x_axis() {
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("stacked.svg");
    let panels = vec![
        (
            Axis::new("steer angle [deg]"),
            vec![time_series("hand wheel", 300, |t| 30.0 * t.sin())],
        ),
        (
            Axis::new("yaw rate [deg/s]"),
            vec![
                time_series("model", 300, |t| 10.0 * t.sin()),
                time_series("reference", 300, |t| 9.0 * t.sin()),
            ],
        ),
        (
            Axis::new("lateral acceleration [g]"),
            vec![time_series("cg", 300, |t| 0.5 * t.sin())],
        ),
    ];
    stacked(
        &path,
        "Sine steer, 100 km/h",
        &Axis::new("time [s]"),
        &panels,
    )
    .unwrap();
    let svg = std::fs::read_to_string(&path).unwrap();
    assert!(svg.starts_with("<svg"));
    for text in [
        "Sine steer, 100 km/h",
        "time [s]",
        "steer angle [deg]",
        "yaw rate [deg/s]",
        "lateral acceleration [g]",
        "reference",
    ] {
        assert!(svg.contains(text), "missing text {text:?}");
    }
    // First colour: one line in each panel; second colour: middle panel only.
    assert_eq!(polylines_in(&svg, style::colour(0)), 3);
    assert_eq!(polylines_in(&svg, style::colour(1)), 1);
    // The x axis title appears once, under the bottom panel.
    assert_eq!(svg.matches("time [s]").count(), 1);

    assert!(matches!(
        stacked(&path, "t", &Axis::new("time [s]"), &[]),
        Err(PlotError::Empty { .. })
    ));
    let bad = vec![(
        Axis::new("a [m]"),
        vec![Series::new("s", vec![0.0], vec![0.0, 1.0])],
    )];
    assert!(matches!(
        stacked(&path, "t", &Axis::new("time [s]"), &bad),
        Err(PlotError::LengthMismatch { .. })
    ));
}
