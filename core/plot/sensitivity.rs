//! The sensitivity bar chart ("tornado" layout): one horizontal row per
//! parameter, most sensitive at the top, with the two one-sided elasticities
//! as bars from zero and the central estimate as a marker; one panel per
//! metric, stacked.

use std::path::Path;

use plotters::prelude::*;
use plotters::style::text_anchor::{HPos, Pos, VPos};

use super::PlotError;
use super::style::{
    self, AXIS_COLOUR, AXIS_TITLE_SIZE, FINE_GRID, FONT, GRID, LEGEND_SIZE, MARGIN, REFERENCE,
    TICK_SIZE, TITLE_SIZE, X_LABEL_AREA,
};

/// One row of a panel: a parameter's elasticities (NaN where absent).
#[derive(Debug, Clone, PartialEq)]
pub struct SensitivityBar {
    /// Row label (the parameter key).
    pub label: String,
    /// Elasticity from the step up, 1.
    pub up: f64,
    /// Elasticity from the step down, 1.
    pub down: f64,
    /// Central elasticity, 1.
    pub central: f64,
}

/// One panel: the rows of one metric, in rank order (first = top).
#[derive(Debug, Clone, PartialEq)]
pub struct SensitivityPanel {
    /// Panel title, e.g. the metric with its unit and base value.
    pub title: String,
    /// The rows, most sensitive first.
    pub bars: Vec<SensitivityBar>,
}

/// Width of the canvas, px.
const WIDTH: u32 = 900;
/// Height of one row, px.
const ROW_HEIGHT: u32 = 26;
/// Height of a panel besides its rows (title, x axis), px.
const PANEL_EXTRA: u32 = 40 + X_LABEL_AREA + 2 * MARGIN;
/// Characters of a row label before it is cut.
const MAX_LABEL: usize = 42;
/// Pixels per label character at the tick font (0.7 em, em = size/1.24²).
const LABEL_PX_PER_CHAR: f64 = 0.7 * TICK_SIZE as f64 / 1.24 / 1.24;

/// Writes the sensitivity bar chart of `panels` to the SVG file `path`:
/// elasticity on x (zero line marked), one row per parameter labelled with
/// its key, the step-up estimate as the upper bar (first palette colour),
/// the step-down estimate as the lower bar (second), the central estimate as
/// a black mark; a legend in the first panel. Rows with no finite value are
/// drawn empty. Canvas 900 px wide, 26 px per row.
///
/// Errors: [`PlotError::Empty`] without panels or rows,
/// [`PlotError::NonFinite`] when no value is finite, [`PlotError::Io`].
pub fn sensitivity_bars(
    path: &Path,
    title: &str,
    panels: &[SensitivityPanel],
) -> Result<(), PlotError> {
    if panels.is_empty() || panels.iter().any(|p| p.bars.is_empty()) {
        return Err(PlotError::empty(path, "sensitivity panels"));
    }
    let values = panels
        .iter()
        .flat_map(|p| &p.bars)
        .flat_map(|b| [b.up, b.down, b.central]);
    let Some(extent) = style::finite_extent(values.chain([0.0])) else {
        return Err(PlotError::non_finite(path, "elasticities"));
    };
    if extent == (0.0, 0.0)
        && panels
            .iter()
            .flat_map(|p| &p.bars)
            .all(|b| !(b.up.is_finite() || b.down.is_finite() || b.central.is_finite()))
    {
        return Err(PlotError::non_finite(path, "elasticities"));
    }
    let x_range = style::padded(extent);
    let label_chars = panels
        .iter()
        .flat_map(|p| &p.bars)
        .map(|b| b.label.chars().count().min(MAX_LABEL))
        .max()
        .unwrap_or(0);
    let label_area = (LABEL_PX_PER_CHAR * label_chars as f64).ceil() as u32 + 16;
    let heights: Vec<u32> = panels
        .iter()
        .map(|p| ROW_HEIGHT * p.bars.len() as u32 + PANEL_EXTRA)
        .collect();
    let total = heights.iter().sum::<u32>() + 50;
    style::write_svg(path, (WIDTH, total), |root| {
        let (head, body) = root.split_vertically(50);
        head.titled(title, (FONT, TITLE_SIZE))?;
        let mut rest = body;
        for (k, panel) in panels.iter().enumerate() {
            let (area, below) = rest.split_vertically(heights[k]);
            draw_panel(&area, panel, x_range, label_area, k == 0)?;
            rest = below;
        }
        Ok(())
    })
}

/// One panel: bars of every row and their labels.
fn draw_panel(
    area: &style::Area<'_>,
    panel: &SensitivityPanel,
    (x0, x1): (f64, f64),
    label_area: u32,
    legend: bool,
) -> Result<(), style::DrawError> {
    let rows = panel.bars.len();
    let mut chart = ChartBuilder::on(area)
        .caption(&panel.title, (FONT, AXIS_TITLE_SIZE))
        .margin(MARGIN)
        .margin_right(MARGIN + 12)
        .y_label_area_size(label_area)
        .x_label_area_size(X_LABEL_AREA)
        .build_cartesian_2d(x0..x1, -0.5..rows as f64 - 0.5)?;
    let span = x1 - x0;
    let x_format = |v: &f64| style::tick_label(*v, span, 10);
    chart
        .configure_mesh()
        .x_labels(10)
        .y_labels(0)
        .disable_y_mesh()
        .max_light_lines(4)
        .bold_line_style(GRID)
        .light_line_style(FINE_GRID)
        .axis_style(AXIS_COLOUR)
        .label_style((FONT, TICK_SIZE))
        .axis_desc_style((FONT, AXIS_TITLE_SIZE))
        .x_desc("elasticity (dm/m)/(dp/p) [1]")
        .x_label_formatter(&x_format)
        .draw()?;
    chart.draw_series(std::iter::once(PathElement::new(
        vec![(0.0, -0.5), (0.0, rows as f64 - 0.5)],
        REFERENCE.stroke_width(1),
    )))?;
    // Row k from the top sits at y = rows − 1 − k.
    let y_of = |k: usize| (rows - 1 - k) as f64;
    let up = style::colour(0);
    let down = style::colour(1);
    let bar = |k: usize, value: f64, upper: bool| {
        let y = y_of(k);
        let (a, b) = if upper { (y, y + 0.36) } else { (y - 0.36, y) };
        value.is_finite().then_some((0.0, a, value, b))
    };
    let up_bars = panel
        .bars
        .iter()
        .enumerate()
        .filter_map(|(k, b)| bar(k, b.up, true));
    chart
        .draw_series(
            up_bars.map(|(x0, y0, x1, y1)| Rectangle::new([(x0, y0), (x1, y1)], up.filled())),
        )?
        .label("step up, p(1+h)")
        .legend(move |(x, y)| Rectangle::new([(x, y - 5), (x + 18, y + 5)], up.filled()));
    let down_bars = panel
        .bars
        .iter()
        .enumerate()
        .filter_map(|(k, b)| bar(k, b.down, false));
    chart
        .draw_series(
            down_bars.map(|(x0, y0, x1, y1)| Rectangle::new([(x0, y0), (x1, y1)], down.filled())),
        )?
        .label("step down, p(1-h)")
        .legend(move |(x, y)| Rectangle::new([(x, y - 5), (x + 18, y + 5)], down.filled()));
    let marks = panel
        .bars
        .iter()
        .enumerate()
        .filter(|(_, b)| b.central.is_finite())
        .map(|(k, b)| {
            PathElement::new(
                vec![(b.central, y_of(k) - 0.45), (b.central, y_of(k) + 0.45)],
                BLACK.stroke_width(3),
            )
        });
    chart
        .draw_series(marks)?
        .label("central estimate")
        .legend(|(x, y)| {
            PathElement::new(vec![(x + 9, y - 7), (x + 9, y + 7)], BLACK.stroke_width(3))
        });
    // Row labels, right-aligned beside the plot area.
    let anchor = Pos::new(HPos::Right, VPos::Center);
    let font = (FONT, TICK_SIZE)
        .into_font()
        .color(&AXIS_COLOUR)
        .pos(anchor);
    for (k, b) in panel.bars.iter().enumerate() {
        let (px, py) = chart.backend_coord(&(x0, y_of(k)));
        let text = if b.label.chars().count() > MAX_LABEL {
            let cut: String = b.label.chars().take(MAX_LABEL - 1).collect();
            format!("{cut}…")
        } else {
            b.label.clone()
        };
        area.draw(&Text::new(
            text,
            (
                px - 8 - area.get_base_pixel().0,
                py - area.get_base_pixel().1,
            ),
            font.clone(),
        ))?;
    }
    if legend {
        chart
            .configure_series_labels()
            .position(SeriesLabelPosition::LowerRight)
            .background_style(WHITE.mix(0.9))
            .border_style(GRID)
            .label_font((FONT, LEGEND_SIZE))
            .draw()?;
    }
    Ok(())
}
