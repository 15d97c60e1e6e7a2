//! Line plots: time histories, cross-plots, sweeps with markers, and stacked
//! channels sharing one x axis. Also the chart-drawing routine the other
//! plot kinds build on.

use std::path::Path;

use plotters::prelude::*;

use super::canvas::{FinePolyline, draw_fine, pixel_mapping};
use super::style::{
    self, AXIS_COLOUR, AXIS_TITLE_SIZE, Area, DrawError, FINE_GRID, FONT, GRID, LEGEND_SIZE,
    LINE_WIDTH, MARGIN, MARKER_RADIUS, REFERENCE, TICK_SIZE, X_LABEL_AREA, Y_LABEL_AREA,
};
use super::{Axis, PlotError, Series};

/// One curve ready to draw: its finite runs of points and its look.
pub(crate) struct Curve<'a> {
    /// Legend text.
    pub label: &'a str,
    /// Runs of finite points; the line is broken between runs.
    pub segments: Vec<Vec<(f64, f64)>>,
    /// Line and marker colour.
    pub colour: RGBColor,
    /// Line width, px.
    pub width: u32,
    /// Draw a marker at every point.
    pub markers: bool,
    /// Draw the line dashed (fits and other derived lines over data).
    pub dashed: bool,
}

impl<'a> Curve<'a> {
    /// A data curve in the `index`-th palette colour.
    pub fn from_series(series: &'a Series, index: usize, markers: bool) -> Self {
        Curve {
            label: &series.label,
            segments: style::segments(&series.x, &series.y),
            colour: style::colour(index),
            width: LINE_WIDTH,
            markers,
            dashed: false,
        }
    }
}

/// Everything one chart needs.
pub(crate) struct Chart<'a> {
    /// Title above the chart; `None` when the caller titles the whole canvas.
    pub title: Option<&'a str>,
    /// x axis title; `None` hides the x tick labels (upper stacked panels).
    pub x_label: Option<&'a str>,
    /// y axis title.
    pub y_label: &'a str,
    /// x axis range, in data units.
    pub x_range: (f64, f64),
    /// y axis range, in data units.
    pub y_range: (f64, f64),
    /// Most tick labels on the y axis.
    pub y_ticks: usize,
    /// Curves in drawing order (the last is drawn on top).
    pub curves: Vec<Curve<'a>>,
    /// Draw thin reference lines through x = 0 and y = 0.
    pub zero_lines: bool,
    /// Vertical margins, px (top, bottom).
    pub margins: (u32, u32),
    /// Draw the legend (when there is more than one curve).
    pub legend: bool,
}

/// Most tick labels on the x axis.
const X_TICKS: usize = 10;

/// Draws one chart (axes, grid, curves, legend when there is more than one
/// curve) filling `area`.
pub(crate) fn draw_chart(area: &Area<'_>, chart: &Chart<'_>) -> Result<(), DrawError> {
    let (x0, x1) = chart.x_range;
    let (y0, y1) = chart.y_range;
    let area = match chart.title {
        Some(title) => style::titled(area, title)?,
        None => area.clone(),
    };
    let mut builder = ChartBuilder::on(&area);
    builder
        .margin_top(chart.margins.0)
        .margin_bottom(chart.margins.1)
        .margin_left(MARGIN)
        .margin_right(MARGIN + 12)
        .y_label_area_size(Y_LABEL_AREA)
        .x_label_area_size(if chart.x_label.is_some() {
            X_LABEL_AREA
        } else {
            4
        });
    let mut ctx = builder.build_cartesian_2d(x0..x1, y0..y1)?;

    let x_span = x1 - x0;
    let y_span = y1 - y0;
    let x_format = |v: &f64| style::tick_label(*v, x_span, X_TICKS);
    let no_label = |_: &f64| String::new();
    let y_format = |v: &f64| style::tick_label(*v, y_span, chart.y_ticks);
    let mut mesh = ctx.configure_mesh();
    mesh.x_labels(X_TICKS)
        .y_labels(chart.y_ticks)
        .max_light_lines(4)
        .bold_line_style(GRID)
        .light_line_style(FINE_GRID)
        .axis_style(AXIS_COLOUR)
        .label_style((FONT, TICK_SIZE))
        .axis_desc_style((FONT, AXIS_TITLE_SIZE))
        .y_desc(chart.y_label)
        .y_label_formatter(&y_format);
    match chart.x_label {
        Some(label) => mesh.x_desc(label).x_label_formatter(&x_format),
        None => mesh.x_label_formatter(&no_label),
    };
    mesh.draw()?;

    // Data lines go through floating-point pixel positions (no stair steps).
    let to_px = pixel_mapping(ctx.plotting_area(), chart.x_range, chart.y_range);
    let screen = ctx.plotting_area().strip_coord_spec();
    let fine = |points: &[(f64, f64)], colour: RGBColor, width: f64, dashed: bool| FinePolyline {
        points: points.iter().map(|&p| to_px(p)).collect(),
        colour,
        width,
        dash: dashed.then_some((12.0, 6.0)),
    };

    if chart.zero_lines {
        if x0 < 0.0 && x1 > 0.0 {
            draw_fine(
                &screen,
                &fine(&[(0.0, y0), (0.0, y1)], REFERENCE, 1.0, false),
            )?;
        }
        if y0 < 0.0 && y1 > 0.0 {
            draw_fine(
                &screen,
                &fine(&[(x0, 0.0), (x1, 0.0)], REFERENCE, 1.0, false),
            )?;
        }
    }

    for curve in &chart.curves {
        let dot = curve.colour.filled();
        for segment in &curve.segments {
            // A lone point has no line to show it; give it a dot.
            if segment.len() == 1 && !curve.markers {
                ctx.draw_series(std::iter::once(Circle::new(
                    segment[0],
                    curve.width + 1,
                    dot,
                )))?;
            } else {
                draw_fine(
                    &screen,
                    &fine(segment, curve.colour, f64::from(curve.width), curve.dashed),
                )?;
            }
            if curve.markers {
                ctx.draw_series(segment.iter().map(|&p| Circle::new(p, MARKER_RADIUS, dot)))?;
            }
        }
        // The legend entry: a swatch in the curve's colour.
        let colour = curve.colour;
        ctx.draw_series(std::iter::empty::<Circle<(f64, f64), u32>>())?
            .label(curve.label)
            .legend(move |(x, y)| Rectangle::new([(x, y - 2), (x + 22, y + 2)], colour.filled()));
    }

    if chart.legend && chart.curves.len() > 1 {
        let corner = style::quietest_corner(
            chart
                .curves
                .iter()
                .flat_map(|c| c.segments.iter().map(|s| s.as_slice())),
            chart.x_range,
            chart.y_range,
            ctx.plotting_area().dim_in_pixel(),
            style::legend_size(chart.curves.iter().map(|c| c.label)),
        );
        ctx.configure_series_labels()
            .position(corner)
            .margin(10)
            .label_font((FONT, LEGEND_SIZE))
            .background_style(WHITE.mix(0.9))
            .border_style(AXIS_COLOUR.mix(0.5))
            .draw()?;
    }
    Ok(())
}

/// Range of one coordinate over the points where both x and y are finite.
fn range_of(series: &[&Series], coordinate: usize) -> Option<(f64, f64)> {
    style::finite_extent(series.iter().flat_map(|s| {
        style::finite_points(&s.x, &s.y).map(move |p| if coordinate == 0 { p.0 } else { p.1 })
    }))
    .map(style::padded)
}

fn draw_lines(
    path: &Path,
    title: &str,
    x_axis: &Axis,
    y_axis: &Axis,
    series: &[Series],
    markers: bool,
) -> Result<(), PlotError> {
    style::check_series(path, series, "series list")?;
    let all: Vec<&Series> = series.iter().collect();
    let (Some(x_range), Some(y_range)) = (range_of(&all, 0), range_of(&all, 1)) else {
        return Err(PlotError::non_finite(path, "series list"));
    };
    let chart = Chart {
        title: Some(title),
        x_label: Some(&x_axis.label),
        y_label: &y_axis.label,
        x_range,
        y_range,
        y_ticks: 10,
        curves: series
            .iter()
            .enumerate()
            .map(|(i, s)| Curve::from_series(s, i, markers))
            .collect(),
        zero_lines: false,
        margins: (MARGIN, MARGIN),
        legend: true,
    };
    style::write_svg(path, style::SIZE, |root| draw_chart(root, &chart))
}

/// Writes a line plot of one or more series to the SVG file `path`: time
/// histories (x = time) or cross-plots (any x). Axis ranges follow the finite
/// data with a 5 % margin; a constant channel is centred. A legend appears
/// when there is more than one series, in the corner the data leave free.
///
/// Canvas 900 × 600 px. Errors: [`PlotError::Empty`] for no series or a
/// series with no samples, [`PlotError::LengthMismatch`] when a series' x and
/// y differ in length, [`PlotError::NonFinite`] when no point is finite,
/// [`PlotError::Io`] when the file cannot be written.
pub fn lines(
    path: &Path,
    title: &str,
    x_axis: &Axis,
    y_axis: &Axis,
    series: &[Series],
) -> Result<(), PlotError> {
    draw_lines(path, title, x_axis, y_axis, series, false)
}

/// As [`lines`], with a marker at every sample: for sweep results and other
/// series of few points, where the reader needs to see where the samples are.
pub fn lines_with_markers(
    path: &Path,
    title: &str,
    x_axis: &Axis,
    y_axis: &Axis,
    series: &[Series],
) -> Result<(), PlotError> {
    draw_lines(path, title, x_axis, y_axis, series, true)
}

/// Writes several channels against one shared x axis (usually time) as
/// vertically stacked panels to the SVG file `path`. Each panel has its own y
/// axis and holds one or more series (legend when more than one, shown in
/// the top panel and in any panel whose series differ from it); all panels
/// share the x range, and only the bottom one carries x tick labels and the x
/// axis title.
///
/// Canvas 900 px wide, 600 px or 200 px per panel plus title, whichever is
/// taller. Errors as for [`lines`], and [`PlotError::Empty`] for no panels.
pub fn stacked(
    path: &Path,
    title: &str,
    x_axis: &Axis,
    panels: &[(Axis, Vec<Series>)],
) -> Result<(), PlotError> {
    if panels.is_empty() {
        return Err(PlotError::empty(path, "panel list"));
    }
    for (axis, series) in panels {
        style::check_series(path, series, &format!("panel \"{}\"", axis.label))?;
    }
    let all: Vec<&Series> = panels.iter().flat_map(|(_, s)| s.iter()).collect();
    let Some(x_range) = range_of(&all, 0) else {
        return Err(PlotError::non_finite(path, "panel list"));
    };
    let mut charts = Vec::with_capacity(panels.len());
    for (k, (axis, series)) in panels.iter().enumerate() {
        let own: Vec<&Series> = series.iter().collect();
        let Some(y_range) = range_of(&own, 1) else {
            return Err(PlotError::non_finite(
                path,
                format!("panel \"{}\"", axis.label),
            ));
        };
        let bottom = k + 1 == panels.len();
        // A legend that repeats the first panel's adds nothing.
        let labels = |s: &[Series]| s.iter().map(|s| s.label.clone()).collect::<Vec<_>>();
        let show_legend = k == 0 || labels(series) != labels(&panels[0].1);
        charts.push(Chart {
            title: None,
            x_label: bottom.then_some(x_axis.label.as_str()),
            y_label: &axis.label,
            x_range,
            y_range,
            y_ticks: 5,
            curves: series
                .iter()
                .enumerate()
                .map(|(i, s)| Curve::from_series(s, i, false))
                .collect(),
            zero_lines: false,
            margins: (6, 6),
            legend: show_legend,
        });
    }
    let n = panels.len() as u32;
    let title_height = 50;
    let height = (title_height + 200 * n).max(600);
    style::write_svg(path, (style::SIZE.0, height), |root| {
        let body = style::titled(root, title)?;
        let body_height = body.dim_in_pixel().1;
        let panel_height = body_height.saturating_sub(X_LABEL_AREA) / n;
        let mut rest = body;
        for (k, chart) in charts.iter().enumerate() {
            if k + 1 == charts.len() {
                draw_chart(&rest, chart)?;
                break;
            }
            let (top, below) = rest.split_vertically(panel_height);
            draw_chart(&top, chart)?;
            rest = below;
        }
        Ok(())
    })
}

#[cfg(test)]
#[path = "lines_tests.rs"]
pub(crate) mod tests;
