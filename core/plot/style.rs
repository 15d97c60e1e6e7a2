//! Shared look and helpers of all plots: colours, fonts, sizes, automatic
//! axis ranges, splitting data at non-finite points, legend placement and the
//! writing of the finished SVG file.

use std::path::Path;

use plotters::coord::Shift;
use plotters::prelude::*;
use plotters::style::text_anchor;

use super::canvas::{self, CanvasError, SvgCanvas};
use super::{PlotError, Series};

/// Error type of every drawing call on the canvas.
pub(crate) type DrawError = DrawingAreaErrorKind<CanvasError>;

/// The root drawing area of a plot, or any part of it.
pub(crate) type Area<'a> = DrawingArea<SvgCanvas<'a>, Shift>;

/// Canvas of the single-chart plots, px (width, height).
pub(crate) const SIZE: (u32, u32) = (900, 600);

/// Font family of all text as plotters sees it (the canvas writes the
/// embedded font's family and its fallbacks into the SVG).
pub(crate) const FONT: &str = "sans-serif";
// Font sizes as given to plotters, which writes 1/1.24 of them into the SVG
// (title 21 px, axis titles 15 px, ticks 13 px, legend 14 px).
/// Title font size.
pub(crate) const TITLE_SIZE: u32 = 26;
/// Axis title font size.
pub(crate) const AXIS_TITLE_SIZE: u32 = 19;
/// Tick label font size.
pub(crate) const TICK_SIZE: u32 = 16;
/// Legend font size.
pub(crate) const LEGEND_SIZE: u32 = 17;
/// Width of the area left of the plot holding y tick labels and title, px.
pub(crate) const Y_LABEL_AREA: u32 = 86;
/// Height of the area below the plot holding x tick labels and title, px.
pub(crate) const X_LABEL_AREA: u32 = 56;
/// Margin around each chart, px.
pub(crate) const MARGIN: u32 = 14;
/// Data line width, px.
pub(crate) const LINE_WIDTH: u32 = 2;
/// Marker radius, px.
pub(crate) const MARKER_RADIUS: u32 = 4;

/// Line colours: the Okabe–Ito colour-blind-safe palette (Okabe & Ito,
/// "Color Universal Design", 2008), without its yellow, which is too pale on
/// white. Used in this order and repeated when there are more series.
pub(crate) const PALETTE: [RGBColor; 7] = [
    RGBColor(0x00, 0x72, 0xB2), // blue
    RGBColor(0xD5, 0x5E, 0x00), // vermillion
    RGBColor(0x00, 0x9E, 0x73), // bluish green
    RGBColor(0xCC, 0x79, 0xA7), // reddish purple
    RGBColor(0xE6, 0x9F, 0x00), // orange
    RGBColor(0x56, 0xB4, 0xE9), // sky blue
    RGBColor(0x00, 0x00, 0x00), // black
];

/// Grid lines at labelled ticks.
pub(crate) const GRID: RGBColor = RGBColor(0xDD, 0xDD, 0xDD);
/// Grid lines between labelled ticks.
pub(crate) const FINE_GRID: RGBColor = RGBColor(0xF0, 0xF0, 0xF0);
/// Axis lines and frame.
pub(crate) const AXIS_COLOUR: RGBColor = RGBColor(0x44, 0x44, 0x44);
/// Reference lines (zero lines, friction circle).
pub(crate) const REFERENCE: RGBColor = RGBColor(0x77, 0x77, 0x77);

/// Colour of the `index`-th series.
pub(crate) fn colour(index: usize) -> RGBColor {
    PALETTE[index % PALETTE.len()]
}

/// Renders a drawing into memory and writes it to `path`: as PNG when the
/// file name ends in `.png` (rasterised with the embedded font at
/// [`canvas::PNG_SCALE`] pixels per SVG pixel), as SVG otherwise.
pub(crate) fn write_svg<F>(path: &Path, size: (u32, u32), draw: F) -> Result<(), PlotError>
where
    F: FnOnce(&Area<'_>) -> Result<(), DrawError>,
{
    let mut text = String::new();
    {
        let root = SvgCanvas::new(&mut text, size).into_drawing_area();
        let result = root
            .fill(&WHITE)
            .and_then(|()| draw(&root))
            .and_then(|()| root.present());
        result.map_err(|e| PlotError::Draw {
            path: path.to_path_buf(),
            message: e.to_string(),
        })?;
    }
    let bytes = if is_png(path) {
        canvas::svg_to_png(&text).map_err(|message| PlotError::Draw {
            path: path.to_path_buf(),
            message,
        })?
    } else {
        text.into_bytes()
    };
    crate::output::write_atomically(path, |temp| {
        std::fs::write(temp, bytes).map_err(|source| PlotError::Io {
            path: path.to_path_buf(),
            source,
        })
    })
}

/// Whether `path` names a PNG file (extension `.png`, any case).
pub(crate) fn is_png(path: &Path) -> bool {
    path.extension()
        .is_some_and(|e| e.eq_ignore_ascii_case("png"))
}

/// Most lines a title takes before it is shortened.
const TITLE_LINES: usize = 3;

/// Draws `title` centred at the top of `area`, wrapped to the area's width
/// less the margins (at most three lines, the last shortened with "…" if
/// still too long), and returns the area below it.
pub(crate) fn titled<'a>(area: &Area<'a>, title: &str) -> Result<Area<'a>, DrawError> {
    let px = TITLE_SIZE as f64 / 1.24;
    let (width, _) = area.dim_in_pixel();
    let usable = width.saturating_sub(2 * MARGIN) as f64;
    let lines = super::text::wrap_text(title, px, usable, TITLE_LINES);
    let line_height = (1.25 * px).round() as i32;
    let style = TextStyle::from((FONT, TITLE_SIZE))
        .color(&BLACK)
        .pos(text_anchor::Pos::new(
            text_anchor::HPos::Center,
            text_anchor::VPos::Top,
        ));
    let top = MARGIN as i32 / 2 + 4;
    for (k, line) in lines.iter().enumerate() {
        area.draw_text(
            line,
            &style,
            (width as i32 / 2, top + k as i32 * line_height),
        )?;
    }
    let used = top + lines.len() as i32 * line_height + 4;
    let (_, below) = area.split_vertically(used.max(0));
    Ok(below)
}

/// Checks that every series has samples and matching x/y lengths, and that
/// the series together hold at least one finite point.
pub(crate) fn check_series(path: &Path, series: &[Series], what: &str) -> Result<(), PlotError> {
    if series.is_empty() {
        return Err(PlotError::empty(path, what));
    }
    for s in series {
        if s.x.is_empty() {
            return Err(PlotError::empty(path, format!("series \"{}\"", s.label)));
        }
        if s.y.len() != s.x.len() {
            return Err(PlotError::mismatch(
                path,
                format!("series \"{}\": y against x", s.label),
                s.x.len(),
                s.y.len(),
            ));
        }
    }
    if series
        .iter()
        .all(|s| finite_points(&s.x, &s.y).next().is_none())
    {
        return Err(PlotError::non_finite(path, what));
    }
    Ok(())
}

/// Checks a pair of sample slices that must pair up element by element.
pub(crate) fn check_pair(
    path: &Path,
    x: &[f64],
    y: &[f64],
    x_name: &str,
    y_name: &str,
) -> Result<(), PlotError> {
    if x.is_empty() {
        return Err(PlotError::empty(path, x_name));
    }
    if y.len() != x.len() {
        return Err(PlotError::mismatch(
            path,
            format!("{y_name} against {x_name}"),
            x.len(),
            y.len(),
        ));
    }
    if finite_points(x, y).next().is_none() {
        return Err(PlotError::non_finite(path, format!("{x_name}/{y_name}")));
    }
    Ok(())
}

/// The points whose x and y are both finite.
pub(crate) fn finite_points<'a>(
    x: &'a [f64],
    y: &'a [f64],
) -> impl Iterator<Item = (f64, f64)> + 'a {
    x.iter()
        .zip(y)
        .map(|(&x, &y)| (x, y))
        .filter(|(x, y)| x.is_finite() && y.is_finite())
}

/// Runs of consecutive finite points; a non-finite x or y ends a run, so the
/// line is broken there rather than joined across the gap.
pub(crate) fn segments(x: &[f64], y: &[f64]) -> Vec<Vec<(f64, f64)>> {
    let mut out = Vec::new();
    let mut current = Vec::new();
    for (&x, &y) in x.iter().zip(y) {
        if x.is_finite() && y.is_finite() {
            current.push((x, y));
        } else if !current.is_empty() {
            out.push(std::mem::take(&mut current));
        }
    }
    if !current.is_empty() {
        out.push(current);
    }
    out
}

/// Smallest and largest finite value, or `None` when there is none.
pub(crate) fn finite_extent(values: impl IntoIterator<Item = f64>) -> Option<(f64, f64)> {
    values
        .into_iter()
        .filter(|v| v.is_finite())
        .fold(None, |acc, v| match acc {
            None => Some((v, v)),
            Some((lo, hi)) => Some((lo.min(v), hi.max(v))),
        })
}

/// Axis range covering `extent` with a margin of 5 % of the span on each
/// side. A zero span (all values equal) gets ±10 % of the value, or ±1 when
/// the value is zero, so a constant channel sits mid-plot.
pub(crate) fn padded((lo, hi): (f64, f64)) -> (f64, f64) {
    let span = hi - lo;
    if span > 1e-12 * hi.abs().max(lo.abs()) && span > f64::MIN_POSITIVE {
        let pad = 0.05 * span;
        (lo - pad, hi + pad)
    } else {
        let half = if lo == 0.0 { 1.0 } else { 0.1 * lo.abs() };
        (lo - half, hi + half)
    }
}

/// Tick label with as many decimals as the tick spacing needs. plotters
/// spaces at most `labels` ticks over `span` at a step of 1, 2 or 5 × 10^m;
/// the decimals are those of the finest such step that could be chosen
/// (the span holds at most `labels + 1` of them), so neighbouring ticks never
/// print alike.
pub(crate) fn tick_label(value: f64, span: f64, labels: usize) -> String {
    let decimals = if span > 0.0 && span.is_finite() {
        let limit = labels.max(1) as f64 + 1.0;
        let mut exponent = span.log10().floor() as i32 + 1;
        let mut finest = exponent;
        'search: for _ in 0..40 {
            for c in [5.0, 2.0, 1.0] {
                if span / (c * 10f64.powi(exponent)) > limit {
                    break 'search;
                }
                finest = exponent;
            }
            exponent -= 1;
        }
        (-finest).clamp(0, 12) as usize
    } else {
        0
    };
    let text = format!("{value:.decimals$}");
    // Avoid "-0" and "-0.00" at the origin.
    if text
        .trim_start_matches('-')
        .chars()
        .all(|c| c == '0' || c == '.')
    {
        text.trim_start_matches('-').to_string()
    } else {
        text
    }
}

/// The legend corner that covers the fewest data points. The legend box is
/// `legend_px` (width, height) plus a 10 px margin inside a plot area of
/// `plot_px` pixels; line segments are sampled between vertices so that
/// sparse lines crossing a corner count too. Ties go in the order upper
/// right, upper left, lower right, lower left.
pub(crate) fn quietest_corner<'a>(
    lines: impl IntoIterator<Item = &'a [(f64, f64)]>,
    x_range: (f64, f64),
    y_range: (f64, f64),
    plot_px: (u32, u32),
    legend_px: (u32, u32),
) -> SeriesLabelPosition {
    let fraction = |legend: u32, plot: u32| ((legend + 10) as f64 / plot.max(1) as f64).min(1.0);
    let box_w = fraction(legend_px.0, plot_px.0);
    let box_h = fraction(legend_px.1, plot_px.1);
    let mut counts = [0usize; 4]; // UR, UL, LR, LL
    let mut count = |(x, y): (f64, f64)| {
        let u = (x - x_range.0) / (x_range.1 - x_range.0);
        let v = (y - y_range.0) / (y_range.1 - y_range.0);
        let right = u >= 1.0 - box_w;
        let left = u <= box_w;
        let top = v >= 1.0 - box_h;
        let bottom = v <= box_h;
        if top && right {
            counts[0] += 1;
        }
        if top && left {
            counts[1] += 1;
        }
        if bottom && right {
            counts[2] += 1;
        }
        if bottom && left {
            counts[3] += 1;
        }
    };
    for line in lines {
        for (i, &p) in line.iter().enumerate() {
            count(p);
            if let Some(&q) = line.get(i + 1) {
                for k in 1..10 {
                    let f = k as f64 / 10.0;
                    count((p.0 + f * (q.0 - p.0), p.1 + f * (q.1 - p.1)));
                }
            }
        }
    }
    let positions = [
        SeriesLabelPosition::UpperRight,
        SeriesLabelPosition::UpperLeft,
        SeriesLabelPosition::LowerRight,
        SeriesLabelPosition::LowerLeft,
    ];
    let mut best = 0;
    for i in 1..4 {
        if counts[i] < counts[best] {
            best = i;
        }
    }
    positions[best].clone()
}

/// Size of the legend box in pixels: the widest label measured in the
/// embedded font, plus the colour swatch and padding.
pub(crate) fn legend_size<'a>(labels: impl IntoIterator<Item = &'a str>) -> (u32, u32) {
    let px = LEGEND_SIZE as f64 / 1.24;
    let mut rows = 0u32;
    let mut widest = 0.0_f64;
    for label in labels {
        rows += 1;
        widest = widest.max(super::text::text_width(label, px));
    }
    let width = widest.ceil() as u32 + 22 + 30;
    let height = rows * (px.ceil() as u32 + 8) + 12;
    (width, height)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn segments_break_at_nan() {
        let x = [0.0, 1.0, 2.0, 3.0, 4.0, 5.0];
        let y = [0.0, 1.0, f64::NAN, 3.0, 4.0, f64::INFINITY];
        let s = segments(&x, &y);
        assert_eq!(
            s,
            vec![vec![(0.0, 0.0), (1.0, 1.0)], vec![(3.0, 3.0), (4.0, 4.0)]]
        );
    }

    #[test]
    fn padded_range_handles_constant_data() {
        assert_eq!(padded((0.0, 10.0)), (-0.5, 10.5));
        let (lo, hi) = padded((2.0, 2.0));
        assert!(lo < 2.0 && hi > 2.0);
        assert_eq!(padded((0.0, 0.0)), (-1.0, 1.0));
    }

    #[test]
    fn tick_labels_follow_spacing() {
        // Span 0.84 over 10 ticks: steps of 0.1, one decimal.
        assert_eq!(tick_label(0.2, 0.84, 10), "0.2");
        // Span 8.8: steps of 1, no decimals.
        assert_eq!(tick_label(4.0, 8.8, 10), "4");
        // Span 1 over 20 ticks: steps of 0.05 are possible, two decimals.
        assert_eq!(tick_label(0.25, 1.0, 20), "0.25");
        assert_eq!(tick_label(20.0, 100.0, 10), "20");
        assert_eq!(tick_label(-0.0, 1.0, 10), "0.0");
        assert_eq!(tick_label(-0.04, 1.0, 10), "0.0");
    }

    #[test]
    fn legend_avoids_the_data() {
        // Data rising along the diagonal leaves the upper-left corner free.
        let line: Vec<(f64, f64)> = (0..=10).map(|i| (i as f64, i as f64)).collect();
        let corner = quietest_corner(
            [line.as_slice()],
            (0.0, 10.0),
            (0.0, 10.0),
            (800, 500),
            (200, 60),
        );
        assert!(matches!(corner, SeriesLabelPosition::UpperLeft));
    }
}
