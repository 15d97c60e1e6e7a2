//! Maps of one quantity over a two-parameter grid (stability maps, sweep
//! results): coloured cells, a colour bar, and an optional mark on chosen
//! cells such as the unstable ones.

use std::path::Path;

use plotters::prelude::*;

use super::style::{
    self, AXIS_COLOUR, AXIS_TITLE_SIZE, FONT, LEGEND_SIZE, MARGIN, TICK_SIZE, X_LABEL_AREA,
    Y_LABEL_AREA,
};
use super::{Axis, PlotError};

/// Values on a grid, with what to call them and which cells to mark.
#[derive(Debug, Clone, Copy)]
pub struct HeatMap<'a> {
    /// Title (with unit) of the x axis.
    pub x_axis: &'a Axis,
    /// Title (with unit) of the y axis.
    pub y_axis: &'a Axis,
    /// Cell centres along x, in the x axis unit; finite, strictly increasing.
    pub x: &'a [f64],
    /// Cell centres along y, in the y axis unit; finite, strictly increasing.
    pub y: &'a [f64],
    /// Values: `z[j][i]` belongs to the cell at (`x[i]`, `y[j]`). One row per
    /// y value, each row as long as `x`. Non-finite values are drawn as grey
    /// "no data" cells.
    pub z: &'a [Vec<f64>],
    /// Title (with unit) of the colour bar, e.g. "yaw damping ratio \[1\]".
    pub z_label: &'a str,
    /// Cells to mark, in the same layout as `z` (`highlight[j][i]`), or `None`.
    pub highlight: Option<&'a [Vec<bool>]>,
    /// Legend text saying what the mark means, e.g. "unstable". Used only
    /// when `highlight` is given.
    pub highlight_label: &'a str,
    /// Legend text for the grey cells of non-finite values, e.g. "no data"
    /// or "no trim". Shown only when such cells exist.
    pub missing_label: &'a str,
}

/// Fill of cells without a finite value.
const NO_DATA: RGBColor = RGBColor(0xC8, 0xC8, 0xC8);

/// Colour of the scaled value `t` (0 = lowest, 1 = highest): the viridis
/// colour map (van der Walt & Smith, matplotlib, 2015), perceptually uniform
/// and readable with colour-vision deficiency; nine stops, interpolated
/// linearly in sRGB (stop values from memory).
pub(crate) fn viridis(t: f64) -> RGBColor {
    const STOPS: [(u8, u8, u8); 9] = [
        (0x44, 0x01, 0x54),
        (0x47, 0x2D, 0x7B),
        (0x3B, 0x52, 0x8B),
        (0x2C, 0x72, 0x8E),
        (0x21, 0x91, 0x8C),
        (0x28, 0xAE, 0x80),
        (0x5E, 0xC9, 0x62),
        (0xAD, 0xDC, 0x30),
        (0xFD, 0xE7, 0x25),
    ];
    let t = if t.is_finite() {
        t.clamp(0.0, 1.0)
    } else {
        0.0
    };
    let scaled = t * (STOPS.len() - 1) as f64;
    let k = (scaled.floor() as usize).min(STOPS.len() - 2);
    let f = scaled - k as f64;
    let mix = |a: u8, b: u8| (a as f64 + f * (b as f64 - a as f64)).round() as u8;
    let (a, b) = (STOPS[k], STOPS[k + 1]);
    RGBColor(mix(a.0, b.0), mix(a.1, b.1), mix(a.2, b.2))
}

/// Cell edges around strictly increasing centres: midway between
/// neighbours, and half a spacing beyond the outer centres. A single centre
/// gets a cell one unit wide.
fn edges(centres: &[f64]) -> Vec<f64> {
    let n = centres.len();
    if n == 1 {
        return vec![centres[0] - 0.5, centres[0] + 0.5];
    }
    let mut out = Vec::with_capacity(n + 1);
    out.push(centres[0] - 0.5 * (centres[1] - centres[0]));
    out.extend(centres.windows(2).map(|w| 0.5 * (w[0] + w[1])));
    out.push(centres[n - 1] + 0.5 * (centres[n - 1] - centres[n - 2]));
    out
}

fn check_grid(path: &Path, name: &str, centres: &[f64]) -> Result<(), PlotError> {
    if centres.is_empty() {
        return Err(PlotError::empty(path, name));
    }
    if let Some(bad) = centres.iter().find(|v| !v.is_finite()) {
        return Err(PlotError::invalid(
            path,
            format!("{name} grid values must be finite, found {bad}"),
        ));
    }
    if let Some(w) = centres.windows(2).find(|w| w[1] <= w[0]) {
        return Err(PlotError::invalid(
            path,
            format!(
                "{name} grid values must be strictly increasing, found {} then {}",
                w[0], w[1]
            ),
        ));
    }
    Ok(())
}

fn check_shape<T>(
    path: &Path,
    name: &str,
    rows: &[Vec<T>],
    nx: usize,
    ny: usize,
) -> Result<(), PlotError> {
    if rows.len() != ny {
        return Err(PlotError::mismatch(
            path,
            format!("{name} rows against y values"),
            ny,
            rows.len(),
        ));
    }
    for (j, row) in rows.iter().enumerate() {
        if row.len() != nx {
            return Err(PlotError::mismatch(
                path,
                format!("{name} row {j} against x values"),
                nx,
                row.len(),
            ));
        }
    }
    Ok(())
}

/// Writes a heat map to the SVG file `path`: each grid cell filled with the
/// colour of its value, a colour bar titled `map.z_label` on the right, and
/// the cells flagged in `map.highlight` hatched and the marked region
/// outlined, with a legend
/// entry `map.highlight_label` above the map (plus a "no data" entry when
/// some values are not finite).
///
/// Canvas 900 × 600 px. Errors: [`PlotError::Empty`] for an empty grid,
/// [`PlotError::InvalidValue`] for grid values that are not finite or not
/// strictly increasing, [`PlotError::LengthMismatch`] when `z` or
/// `highlight` do not match the grid, [`PlotError::NonFinite`] when no value
/// of `z` is finite, and [`PlotError::Io`].
///
/// ```no_run
/// use std::path::Path;
/// use yawdyn::plot::{heat_map, Axis, HeatMap};
///
/// let speed = [20.0, 30.0, 40.0];
/// let steer = [1.0, 2.0];
/// let damping = vec![vec![0.8, 0.6, 0.3], vec![0.7, 0.2, -0.1]];
/// let unstable: Vec<Vec<bool>> =
///     damping.iter().map(|row| row.iter().map(|&d| d < 0.0).collect()).collect();
/// heat_map(Path::new("map.svg"), "Yaw damping", &HeatMap {
///     x_axis: &Axis::new("speed [m/s]"),
///     y_axis: &Axis::new("steer angle [deg]"),
///     x: &speed,
///     y: &steer,
///     z: &damping,
///     z_label: "damping ratio [1]",
///     highlight: Some(&unstable),
///     highlight_label: "unstable",
///     missing_label: "no data",
/// })?;
/// # Ok::<(), yawdyn::plot::PlotError>(())
/// ```
pub fn heat_map(path: &Path, title: &str, map: &HeatMap<'_>) -> Result<(), PlotError> {
    check_grid(path, "x", map.x)?;
    check_grid(path, "y", map.y)?;
    let (nx, ny) = (map.x.len(), map.y.len());
    check_shape(path, "z", map.z, nx, ny)?;
    if let Some(marks) = map.highlight {
        check_shape(path, "highlight", marks, nx, ny)?;
    }
    let Some(z_extent) = style::finite_extent(map.z.iter().flatten().copied()) else {
        return Err(PlotError::non_finite(path, "z"));
    };
    let (z_lo, z_hi) = if z_extent.1 > z_extent.0 {
        z_extent
    } else {
        style::padded(z_extent)
    };
    let scale = |z: f64| (z - z_lo) / (z_hi - z_lo);
    let any_missing = map.z.iter().flatten().any(|v| !v.is_finite());
    let xe = edges(map.x);
    let ye = edges(map.y);
    let (x0, x1) = (xe[0], xe[nx]);
    let (y0, y1) = (ye[0], ye[ny]);

    style::write_svg(path, style::SIZE, |root| {
        let mut body = style::titled(root, title)?;
        let legend_row = if map.highlight.is_some() || any_missing {
            let (row, rest) = body.split_vertically(28);
            body = rest;
            Some(row)
        } else {
            None
        };
        let bar_width = 140;
        let (map_area, bar_area) = body.split_horizontally(body.dim_in_pixel().0 - bar_width);

        // The map.
        let mut ctx = ChartBuilder::on(&map_area)
            .margin(MARGIN)
            .margin_right(MARGIN + 12)
            .x_label_area_size(X_LABEL_AREA)
            .y_label_area_size(Y_LABEL_AREA)
            .build_cartesian_2d(x0..x1, y0..y1)?;
        let x_format = |v: &f64| style::tick_label(*v, x1 - x0, 10);
        let y_format = |v: &f64| style::tick_label(*v, y1 - y0, 10);
        ctx.configure_mesh()
            .disable_mesh()
            .x_labels(10)
            .y_labels(10)
            .axis_style(AXIS_COLOUR)
            .label_style((FONT, TICK_SIZE))
            .axis_desc_style((FONT, AXIS_TITLE_SIZE))
            .x_desc(map.x_axis.label.as_str())
            .y_desc(map.y_axis.label.as_str())
            .x_label_formatter(&x_format)
            .y_label_formatter(&y_format)
            .draw()?;
        let mut cells = Vec::with_capacity(nx * ny);
        for (j, row) in map.z.iter().enumerate() {
            for (i, &z) in row.iter().enumerate() {
                let fill = if z.is_finite() {
                    viridis(scale(z))
                } else {
                    NO_DATA
                };
                cells.push(Rectangle::new(
                    [(xe[i], ye[j]), (xe[i + 1], ye[j + 1])],
                    fill.filled(),
                ));
            }
        }
        ctx.draw_series(cells)?;
        if let Some(marks) = map.highlight {
            let marked = |i: usize, j: usize| marks[j][i];
            for (j, row) in marks.iter().enumerate() {
                for (i, _) in row.iter().enumerate().filter(|(_, m)| **m) {
                    let (a, b) = ((xe[i], ye[j]), (xe[i + 1], ye[j + 1]));
                    // Hatch: white under black, so it reads on dark and light fills.
                    for style in [WHITE.stroke_width(3), BLACK.stroke_width(1)] {
                        ctx.draw_series(std::iter::once(PathElement::new(vec![a, b], style)))?;
                    }
                    // Outline the marked region: the sides facing unmarked
                    // cells or the edge of the map.
                    let mut sides = Vec::new();
                    if i == 0 || !marked(i - 1, j) {
                        sides.push(vec![(a.0, a.1), (a.0, b.1)]);
                    }
                    if i + 1 == nx || !marked(i + 1, j) {
                        sides.push(vec![(b.0, a.1), (b.0, b.1)]);
                    }
                    if j == 0 || !marked(i, j - 1) {
                        sides.push(vec![(a.0, a.1), (b.0, a.1)]);
                    }
                    if j + 1 == ny || !marked(i, j + 1) {
                        sides.push(vec![(a.0, b.1), (b.0, b.1)]);
                    }
                    ctx.draw_series(
                        sides
                            .into_iter()
                            .map(|side| PathElement::new(side, BLACK.stroke_width(2))),
                    )?;
                }
            }
        }
        ctx.draw_series(std::iter::once(Rectangle::new(
            [(x0, y0), (x1, y1)],
            AXIS_COLOUR.stroke_width(1),
        )))?;

        // The colour bar, aligned with the map's plot area.
        let mut bar = ChartBuilder::on(&bar_area)
            .margin_top(MARGIN)
            .margin_bottom(MARGIN)
            .margin_left(4)
            .margin_right(4)
            .x_label_area_size(X_LABEL_AREA)
            .right_y_label_area_size(84)
            .build_cartesian_2d(0.0..1.0, z_lo..z_hi)?;
        let z_format = |v: &f64| style::tick_label(*v, z_hi - z_lo, 8);
        bar.configure_mesh()
            .disable_mesh()
            .disable_x_axis()
            .y_labels(8)
            .axis_style(AXIS_COLOUR)
            .label_style((FONT, TICK_SIZE))
            .axis_desc_style((FONT, AXIS_TITLE_SIZE))
            .y_desc(map.z_label)
            .y_label_formatter(&z_format)
            .draw()?;
        let steps = 100;
        bar.draw_series((0..steps).map(|k| {
            let lo = z_lo + (z_hi - z_lo) * k as f64 / steps as f64;
            let hi = z_lo + (z_hi - z_lo) * (k + 1) as f64 / steps as f64;
            let t = (k as f64 + 0.5) / steps as f64;
            Rectangle::new([(0.0, lo), (1.0, hi)], viridis(t).filled())
        }))?;
        bar.draw_series(std::iter::once(Rectangle::new(
            [(0.0, z_lo), (1.0, z_hi)],
            AXIS_COLOUR.stroke_width(1),
        )))?;

        // Legend of the marks, above the map's plot area.
        if let Some(row) = legend_row {
            let text = TextStyle::from((FONT, LEGEND_SIZE)).color(&BLACK);
            let mut x = (MARGIN + Y_LABEL_AREA) as i32;
            let (top, bottom) = (6, 22);
            let entry = |x: &mut i32, fill: RGBColor, hatch: bool, label: &str| {
                let (a, b) = ((*x, top), (*x + 22, bottom));
                row.draw(&Rectangle::new([a, b], fill.filled()))?;
                if hatch {
                    for style in [WHITE.stroke_width(3), BLACK.stroke_width(1)] {
                        row.draw(&PathElement::new(vec![(a.0, b.1), (b.0, a.1)], style))?;
                    }
                }
                let frame = if hatch { 2 } else { 1 };
                row.draw(&Rectangle::new([a, b], BLACK.stroke_width(frame)))?;
                row.draw_text(label, &text, (*x + 30, top))?;
                // Width of the label as the layout engine estimates it.
                let width = row.estimate_text_size(label, &text)?.0 as i32;
                *x += 30 + width + 30;
                Ok::<(), style::DrawError>(())
            };
            if map.highlight.is_some() {
                entry(&mut x, viridis(0.5), true, map.highlight_label)?;
            }
            if any_missing {
                entry(&mut x, NO_DATA, false, map.missing_label)?;
            }
        }
        Ok(())
    })
}

#[cfg(test)]
mod tests {
    use super::super::lines::tests::polylines_in;
    use super::*;

    /// Grid centres x and y, values z and marks.
    type Grid = (Vec<f64>, Vec<f64>, Vec<Vec<f64>>, Vec<Vec<bool>>);

    /// Invented stability-like map: z falls with x and y and turns negative
    /// in one corner; negative cells are the marked ones.
    fn grid() -> Grid {
        let x: Vec<f64> = (0..8).map(|i| 10.0 + 5.0 * i as f64).collect();
        let y: Vec<f64> = (0..5).map(|j| 0.5 * j as f64).collect();
        let z: Vec<Vec<f64>> = y
            .iter()
            .map(|&y| x.iter().map(|&x| 1.0 - x / 40.0 - 0.3 * y).collect())
            .collect();
        let marks = z
            .iter()
            .map(|r| r.iter().map(|&v| v < 0.0).collect())
            .collect();
        (x, y, z, marks)
    }

    fn cells_and_bar(svg: &str) -> usize {
        svg.lines()
            .filter(|l| l.starts_with("<rect") && !l.contains("fill=\"none\""))
            .count()
    }

    #[test]
    fn heat_map_draws_cells_bar_and_marks() {
        let dir = tempfile::tempdir().unwrap();
        let path = dir.path().join("map.svg");
        let (x, y, z, marks) = grid();
        let marked = marks.iter().flatten().filter(|m| **m).count();
        assert!(marked > 0 && marked < 40);
        let (xa, ya) = (Axis::new("speed [m/s]"), Axis::new("steer angle [deg]"));
        let map = HeatMap {
            x_axis: &xa,
            y_axis: &ya,
            x: &x,
            y: &y,
            z: &z,
            z_label: "yaw damping ratio [1]",
            highlight: Some(&marks),
            highlight_label: "unstable",
            missing_label: "no data",
        };
        heat_map(&path, "Stability map", &map).unwrap();
        let svg = std::fs::read_to_string(&path).unwrap();
        assert!(svg.starts_with("<svg"));
        for text in [
            "Stability map",
            "speed [m/s]",
            "steer angle [deg]",
            "yaw damping ratio [1]",
            "unstable",
        ] {
            assert!(svg.contains(text), "missing text {text:?}");
        }
        assert!(!svg.contains("no data"));
        // Background + 40 cells + 100 colour-bar steps + 1 legend swatch.
        assert_eq!(cells_and_bar(&svg), 1 + 40 + 100 + 1);
        // One hatch line (white under black) per marked cell and on the legend
        // swatch; the region outline adds black lines only.
        assert_eq!(polylines_in(&svg, RGBColor(255, 255, 255)), marked + 1);
        assert!(
            polylines_in(&svg, RGBColor(0, 0, 0)) > marked + 1,
            "outline drawn"
        );

        // Without marks: no legend row, no crosses.
        let plain = HeatMap {
            highlight: None,
            ..map
        };
        heat_map(&path, "Stability map", &plain).unwrap();
        let svg = std::fs::read_to_string(&path).unwrap();
        assert_eq!(cells_and_bar(&svg), 1 + 40 + 100);
        assert_eq!(polylines_in(&svg, RGBColor(0, 0, 0)), 0);
        assert!(!svg.contains("unstable"));
    }

    #[test]
    fn outline_follows_the_marked_region() {
        let dir = tempfile::tempdir().unwrap();
        let path = dir.path().join("outline.svg");
        let (xa, ya) = (Axis::new("a [m]"), Axis::new("b [m]"));
        let z = vec![vec![0.0, 1.0, 2.0]; 3];
        let count = |marks: &[Vec<bool>]| {
            let map = HeatMap {
                x_axis: &xa,
                y_axis: &ya,
                x: &[1.0, 2.0, 3.0],
                y: &[1.0, 2.0, 3.0],
                z: &z,
                z_label: "c [1]",
                highlight: Some(marks),
                highlight_label: "marked",
                missing_label: "no data",
            };
            heat_map(&path, "Outline", &map).unwrap();
            let svg = std::fs::read_to_string(&path).unwrap();
            (
                polylines_in(&svg, RGBColor(0, 0, 0)),
                polylines_in(&svg, RGBColor(255, 255, 255)),
            )
        };
        let f = false;
        // Centre cell alone: 4 sides + 1 hatch, + 1 hatch on the legend swatch.
        let centre = [vec![f, f, f], vec![f, true, f], vec![f, f, f]];
        assert_eq!(count(&centre), (4 + 1 + 1, 1 + 1));
        // Two neighbours share a side: 6 sides + 2 hatches + legend hatch.
        let pair = [vec![f, f, f], vec![f, true, true], vec![f, f, f]];
        assert_eq!(count(&pair), (6 + 2 + 1, 2 + 1));
        // Whole map: only the 12 outer sides + 9 hatches + legend hatch.
        let all = [vec![true; 3], vec![true; 3], vec![true; 3]];
        assert_eq!(count(&all), (12 + 9 + 1, 9 + 1));
    }

    #[test]
    fn heat_map_shows_missing_values() {
        let dir = tempfile::tempdir().unwrap();
        let path = dir.path().join("nan.svg");
        let (x, y, mut z, _) = grid();
        z[2][3] = f64::NAN;
        let (xa, ya) = (Axis::new("a [m]"), Axis::new("b [m]"));
        let map = HeatMap {
            x_axis: &xa,
            y_axis: &ya,
            x: &x,
            y: &y,
            z: &z,
            z_label: "c [1]",
            highlight: None,
            highlight_label: "",
            missing_label: "no data",
        };
        heat_map(&path, "Gap", &map).unwrap();
        let svg = std::fs::read_to_string(&path).unwrap();
        assert!(svg.contains("no data"));
        assert!(svg.contains("fill=\"#C8C8C8\""));
    }

    #[test]
    fn heat_map_rejects_bad_input() {
        let dir = tempfile::tempdir().unwrap();
        let path = dir.path().join("bad.svg");
        let (x, y, z, marks) = grid();
        let (xa, ya) = (Axis::new("a [m]"), Axis::new("b [m]"));
        let good = HeatMap {
            x_axis: &xa,
            y_axis: &ya,
            x: &x,
            y: &y,
            z: &z,
            z_label: "c [1]",
            highlight: Some(&marks),
            highlight_label: "marked",
            missing_label: "no data",
        };
        let empty = HeatMap { x: &[], ..good };
        assert!(matches!(
            heat_map(&path, "t", &empty),
            Err(PlotError::Empty { .. })
        ));
        let short_rows = HeatMap { z: &z[..4], ..good };
        assert!(matches!(
            heat_map(&path, "t", &short_rows),
            Err(PlotError::LengthMismatch {
                expected: 5,
                found: 4,
                ..
            })
        ));
        let mut ragged = z.clone();
        ragged[1].pop();
        let ragged_map = HeatMap { z: &ragged, ..good };
        assert!(matches!(
            heat_map(&path, "t", &ragged_map),
            Err(PlotError::LengthMismatch { .. })
        ));
        let few_marks = HeatMap {
            highlight: Some(&marks[..2]),
            ..good
        };
        assert!(matches!(
            heat_map(&path, "t", &few_marks),
            Err(PlotError::LengthMismatch { .. })
        ));
        let unordered = [10.0, 5.0, 20.0, 25.0, 30.0, 35.0, 40.0, 45.0];
        let unordered_map = HeatMap {
            x: &unordered,
            ..good
        };
        assert!(matches!(
            heat_map(&path, "t", &unordered_map),
            Err(PlotError::InvalidValue { .. })
        ));
        let all_nan: Vec<Vec<f64>> = z.iter().map(|r| vec![f64::NAN; r.len()]).collect();
        let nan_map = HeatMap {
            z: &all_nan,
            ..good
        };
        assert!(matches!(
            heat_map(&path, "t", &nan_map),
            Err(PlotError::NonFinite { .. })
        ));
        assert!(!path.exists());
    }

    #[test]
    fn single_cell_and_constant_map_draw() {
        let dir = tempfile::tempdir().unwrap();
        let path = dir.path().join("one.svg");
        let (xa, ya) = (Axis::new("a [m]"), Axis::new("b [m]"));
        let z = vec![vec![3.0]];
        let map = HeatMap {
            x_axis: &xa,
            y_axis: &ya,
            x: &[1.0],
            y: &[2.0],
            z: &z,
            z_label: "c [1]",
            highlight: None,
            highlight_label: "",
            missing_label: "no data",
        };
        heat_map(&path, "One", &map).unwrap();
        assert!(std::fs::read_to_string(&path).unwrap().starts_with("<svg"));
    }

    #[test]
    fn viridis_ends_and_middle() {
        // Stop values of the viridis map (from memory): dark purple to yellow.
        assert_eq!(viridis(0.0), RGBColor(0x44, 0x01, 0x54));
        assert_eq!(viridis(1.0), RGBColor(0xFD, 0xE7, 0x25));
        assert_eq!(viridis(0.5), RGBColor(0x21, 0x91, 0x8C));
        assert_eq!(viridis(f64::NAN), viridis(0.0));
    }
}
