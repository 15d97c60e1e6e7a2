//! The SVG canvas every plot draws on and the rasteriser that turns the SVG
//! into PNG (the font and text measurement are in `text.rs`).
//!
//! plotters hands its backends integer pixel coordinates. That is fine for
//! axes, ticks and text, but a data line drawn from rounded vertices shows
//! stair steps. [`SvgCanvas`] is a plotters drawing backend that writes SVG
//! itself and also accepts [`FinePolyline`], a line whose vertices are
//! floating-point pixel positions computed from the data (see
//! [`pixel_mapping`]), so curves stay smooth at any zoom.
//!
//! Text is measured with the advance widths of the embedded font (Liberation
//! Sans Regular, SIL Open Font License 1.1; `assets/fonts/`), so titles and
//! legends are laid out for the width they really take. The SVG names that
//! font first (metric-compatible fallbacks after it); the PNG renderer uses
//! the embedded copy, so a PNG looks the same on every machine.

use std::fmt::Write as _;

use plotters::coord::Shift;
use plotters::element::{Drawable, PointCollection};
use plotters::prelude::*;
use plotters_backend::text_anchor::{HPos, VPos};
use plotters_backend::{
    BackendColor, BackendCoord, BackendStyle, BackendTextStyle, DrawingErrorKind, FontStyle,
    FontTransform,
};

use super::text::{FONT_DATA, FONT_FAMILY, line_height, text_width};

/// `font-family` written into the SVG: the embedded font, then fonts with the
/// same advance widths, then any sans-serif face.
const SVG_FONT_FAMILY: &str = "Liberation Sans, Arial, Helvetica, sans-serif";

/// plotters' font sizes are 1.24 times the size written into the SVG (as its
/// own SVG backend does); the canvas keeps that so the sizes in `style` keep
/// their meaning.
const PLOTTERS_FONT_SCALE: f64 = 1.24;

/// Drawing error of the canvas (it writes to memory and never fails itself).
#[derive(Debug)]
pub(crate) struct CanvasError;

impl std::fmt::Display for CanvasError {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.write_str("SVG canvas error")
    }
}

impl std::error::Error for CanvasError {}

/// A plotters drawing backend that writes SVG into a string, with
/// floating-point data lines ([`FinePolyline`]) and text measured in the
/// embedded font.
pub(crate) struct SvgCanvas<'a> {
    out: &'a mut String,
    size: (u32, u32),
    finished: bool,
}

fn colour_attr(c: BackendColor) -> String {
    format!("#{:02X}{:02X}{:02X}", c.rgb.0, c.rgb.1, c.rgb.2)
}

fn escape(text: &str) -> String {
    let mut s = String::with_capacity(text.len());
    for c in text.chars() {
        match c {
            '<' => s.push_str("&lt;"),
            '>' => s.push_str("&gt;"),
            '&' => s.push_str("&amp;"),
            '"' => s.push_str("&quot;"),
            '\'' => s.push_str("&apos;"),
            c => s.push(c),
        }
    }
    s
}

/// Whole-pixel vertices as an SVG `points` attribute value ("x,y x,y ...").
fn points_attr(path: impl IntoIterator<Item = BackendCoord>) -> String {
    let mut points = String::new();
    for (x, y) in path {
        let _ = write!(points, "{x},{y} ");
    }
    points.truncate(points.trim_end().len());
    points
}

/// A pixel coordinate with two decimals (a hundredth of a pixel is below
/// anything a screen or printer shows), trailing zeros dropped.
fn num(v: f64) -> String {
    let s = format!("{v:.2}");
    let s = s.trim_end_matches('0').trim_end_matches('.');
    if s == "-0" { "0".into() } else { s.into() }
}

impl<'a> SvgCanvas<'a> {
    /// A canvas of `size` px writing into `out` (cleared first).
    pub(crate) fn new(out: &'a mut String, size: (u32, u32)) -> Self {
        out.clear();
        let _ = writeln!(
            out,
            "<svg width=\"{w}\" height=\"{h}\" viewBox=\"0 0 {w} {h}\" xmlns=\"http://www.w3.org/2000/svg\">",
            w = size.0,
            h = size.1
        );
        SvgCanvas {
            out,
            size,
            finished: false,
        }
    }

    /// Writes a polyline through floating-point pixel positions.
    fn fine_polyline(&mut self, line: &FinePolyline) {
        if line.points.is_empty() {
            return;
        }
        let dash = line
            .dash
            .map(|(on, off)| format!(" stroke-dasharray=\"{},{}\"", num(on), num(off)))
            .unwrap_or_default();
        let mut points = String::new();
        for (x, y) in &line.points {
            let _ = write!(points, "{},{} ", num(*x), num(*y));
        }
        let _ = writeln!(
            self.out,
            "<polyline fill=\"none\" opacity=\"1\" stroke=\"#{:02X}{:02X}{:02X}\" stroke-width=\"{}\" \
             stroke-linejoin=\"round\" stroke-linecap=\"round\"{dash} points=\"{}\"/>",
            line.colour.0,
            line.colour.1,
            line.colour.2,
            num(line.width),
            points.trim_end()
        );
    }
}

impl DrawingBackend for SvgCanvas<'_> {
    type ErrorType = CanvasError;

    fn get_size(&self) -> (u32, u32) {
        self.size
    }

    fn ensure_prepared(&mut self) -> Result<(), DrawingErrorKind<CanvasError>> {
        Ok(())
    }

    fn present(&mut self) -> Result<(), DrawingErrorKind<CanvasError>> {
        if !self.finished {
            self.out.push_str("</svg>\n");
            self.finished = true;
        }
        Ok(())
    }

    fn draw_pixel(
        &mut self,
        point: BackendCoord,
        color: BackendColor,
    ) -> Result<(), DrawingErrorKind<CanvasError>> {
        if color.alpha > 0.0 {
            let _ = writeln!(
                self.out,
                "<rect x=\"{}\" y=\"{}\" width=\"1\" height=\"1\" stroke=\"none\" opacity=\"{}\" fill=\"{}\"/>",
                point.0,
                point.1,
                color.alpha,
                colour_attr(color)
            );
        }
        Ok(())
    }

    fn draw_line<S: BackendStyle>(
        &mut self,
        from: BackendCoord,
        to: BackendCoord,
        style: &S,
    ) -> Result<(), DrawingErrorKind<CanvasError>> {
        let c = style.color();
        if c.alpha > 0.0 {
            let _ = writeln!(
                self.out,
                "<line opacity=\"{}\" stroke=\"{}\" stroke-width=\"{}\" x1=\"{}\" y1=\"{}\" x2=\"{}\" y2=\"{}\"/>",
                c.alpha,
                colour_attr(c),
                style.stroke_width(),
                from.0,
                from.1,
                to.0,
                to.1
            );
        }
        Ok(())
    }

    fn draw_rect<S: BackendStyle>(
        &mut self,
        upper_left: BackendCoord,
        bottom_right: BackendCoord,
        style: &S,
        fill: bool,
    ) -> Result<(), DrawingErrorKind<CanvasError>> {
        let c = style.color();
        if c.alpha > 0.0 {
            let (fill, stroke) = if fill {
                (colour_attr(c), "none".to_string())
            } else {
                ("none".to_string(), colour_attr(c))
            };
            let _ = writeln!(
                self.out,
                "<rect x=\"{}\" y=\"{}\" width=\"{}\" height=\"{}\" opacity=\"{}\" fill=\"{fill}\" stroke=\"{stroke}\"/>",
                upper_left.0,
                upper_left.1,
                bottom_right.0 - upper_left.0,
                bottom_right.1 - upper_left.1,
                c.alpha
            );
        }
        Ok(())
    }

    fn draw_path<S: BackendStyle, I: IntoIterator<Item = BackendCoord>>(
        &mut self,
        path: I,
        style: &S,
    ) -> Result<(), DrawingErrorKind<CanvasError>> {
        let c = style.color();
        if c.alpha > 0.0 {
            let points = points_attr(path);
            let _ = writeln!(
                self.out,
                "<polyline fill=\"none\" opacity=\"{}\" stroke=\"{}\" stroke-width=\"{}\" points=\"{}\"/>",
                c.alpha,
                colour_attr(c),
                style.stroke_width(),
                points
            );
        }
        Ok(())
    }

    fn fill_polygon<S: BackendStyle, I: IntoIterator<Item = BackendCoord>>(
        &mut self,
        path: I,
        style: &S,
    ) -> Result<(), DrawingErrorKind<CanvasError>> {
        let c = style.color();
        if c.alpha > 0.0 {
            let points = points_attr(path);
            let _ = writeln!(
                self.out,
                "<polygon opacity=\"{}\" fill=\"{}\" points=\"{}\"/>",
                c.alpha,
                colour_attr(c),
                points
            );
        }
        Ok(())
    }

    fn draw_circle<S: BackendStyle>(
        &mut self,
        center: BackendCoord,
        radius: u32,
        style: &S,
        fill: bool,
    ) -> Result<(), DrawingErrorKind<CanvasError>> {
        let c = style.color();
        if c.alpha > 0.0 {
            let (stroke, fill) = if fill {
                ("none".to_string(), colour_attr(c))
            } else {
                (colour_attr(c), "none".to_string())
            };
            let _ = writeln!(
                self.out,
                "<circle cx=\"{}\" cy=\"{}\" r=\"{radius}\" opacity=\"{}\" fill=\"{fill}\" stroke=\"{stroke}\" stroke-width=\"{}\"/>",
                center.0,
                center.1,
                c.alpha,
                style.stroke_width()
            );
        }
        Ok(())
    }

    fn draw_text<S: BackendTextStyle>(
        &mut self,
        text: &str,
        style: &S,
        pos: BackendCoord,
    ) -> Result<(), DrawingErrorKind<CanvasError>> {
        let c = style.color();
        if c.alpha == 0.0 {
            return Ok(());
        }
        let anchor = match style.anchor().h_pos {
            HPos::Left => "start",
            HPos::Right => "end",
            HPos::Center => "middle",
        };
        let dy = match style.anchor().v_pos {
            VPos::Top => "0.76em",
            VPos::Center => "0.5ex",
            VPos::Bottom => "-0.5ex",
        };
        let weight = match style.style() {
            FontStyle::Bold => " font-weight=\"bold\"".to_string(),
            FontStyle::Normal => String::new(),
            other => format!(" font-style=\"{}\"", other.as_str()),
        };
        let (x, y) = pos;
        let rotate = match style.transform() {
            FontTransform::Rotate90 => format!(" transform=\"rotate(90, {x}, {y})\""),
            FontTransform::Rotate180 => format!(" transform=\"rotate(180, {x}, {y})\""),
            FontTransform::Rotate270 => format!(" transform=\"rotate(270, {x}, {y})\""),
            _ => String::new(),
        };
        let _ = writeln!(
            self.out,
            "<text x=\"{x}\" y=\"{y}\" dy=\"{dy}\" text-anchor=\"{anchor}\" font-family=\"{SVG_FONT_FAMILY}\" \
             font-size=\"{}\" opacity=\"{}\" fill=\"{}\"{weight}{rotate}>\n{}\n</text>",
            num(style.size() / PLOTTERS_FONT_SCALE),
            c.alpha,
            colour_attr(c),
            escape(text)
        );
        Ok(())
    }

    fn estimate_text_size<S: BackendTextStyle>(
        &self,
        text: &str,
        style: &S,
    ) -> Result<(u32, u32), DrawingErrorKind<CanvasError>> {
        let px = style.size() / PLOTTERS_FONT_SCALE;
        Ok((
            text_width(text, px).ceil() as u32,
            line_height(px).ceil() as u32,
        ))
    }

    fn blit_bitmap(
        &mut self,
        _pos: BackendCoord,
        _size: (u32, u32),
        _src: &[u8],
    ) -> Result<(), DrawingErrorKind<CanvasError>> {
        Err(DrawingErrorKind::DrawingError(CanvasError))
    }
}

impl Drop for SvgCanvas<'_> {
    fn drop(&mut self) {
        let _ = self.present();
    }
}

/// A data line with floating-point pixel vertices, drawn by [`SvgCanvas`]
/// exactly where the data put it (no rounding to whole pixels).
pub(crate) struct FinePolyline {
    /// Vertices in canvas pixels.
    pub points: Vec<(f64, f64)>,
    /// Line colour.
    pub colour: RGBColor,
    /// Line width, px.
    pub width: f64,
    /// Dash and gap lengths, px, for a dashed line.
    pub dash: Option<(f64, f64)>,
}

impl<'a> PointCollection<'a, BackendCoord> for &'a FinePolyline {
    type Point = BackendCoord;
    type IntoIter = std::iter::Once<BackendCoord>;
    fn point_iter(self) -> Self::IntoIter {
        // The canvas ignores plotters' (rounded) positions; one point keeps
        // the element well-formed.
        std::iter::once((0, 0))
    }
}

impl Drawable<SvgCanvas<'_>> for FinePolyline {
    fn draw<I: Iterator<Item = BackendCoord>>(
        &self,
        _pos: I,
        backend: &mut SvgCanvas<'_>,
        _parent_dim: (u32, u32),
    ) -> Result<(), DrawingErrorKind<CanvasError>> {
        backend.fine_polyline(self);
        Ok(())
    }
}

/// The map from data coordinates to canvas pixels of a chart's plotting
/// area, as floating-point numbers: the same linear map plotters uses for
/// the axes (it puts the range ends on the same pixels), without rounding.
pub(crate) fn pixel_mapping(
    area: &DrawingArea<
        SvgCanvas<'_>,
        plotters::coord::cartesian::Cartesian2d<
            plotters::coord::types::RangedCoordf64,
            plotters::coord::types::RangedCoordf64,
        >,
    >,
    x_range: (f64, f64),
    y_range: (f64, f64),
) -> impl Fn((f64, f64)) -> (f64, f64) + use<> {
    let a = area.map_coordinate(&(x_range.0, y_range.0));
    let b = area.map_coordinate(&(x_range.1, y_range.1));
    let (ax, ay, bx, by) = (
        f64::from(a.0),
        f64::from(a.1),
        f64::from(b.0),
        f64::from(b.1),
    );
    let sx = (bx - ax) / (x_range.1 - x_range.0);
    let sy = (by - ay) / (y_range.1 - y_range.0);
    let (x0, y0) = (x_range.0, y_range.0);
    move |(x, y)| (ax + (x - x0) * sx, ay + (y - y0) * sy)
}

/// Draws `line` on any area of the canvas (its vertices are absolute pixels).
pub(crate) fn draw_fine(
    area: &DrawingArea<SvgCanvas<'_>, Shift>,
    line: &FinePolyline,
) -> Result<(), DrawingAreaErrorKind<CanvasError>> {
    area.draw(line)
}

/// Scale of PNG output: PNG pixels per SVG pixel (a 900 × 600 plot becomes
/// 1800 × 1200 pixels, sharp in a printed report).
pub const PNG_SCALE: f32 = 2.0;

/// Rasterises an SVG document written by this module to PNG bytes, at
/// [`PNG_SCALE`] pixels per SVG pixel, with text set in the embedded font
/// (no system font is read). Errors are messages of the SVG parser or the
/// PNG encoder.
pub fn svg_to_png(svg: &str) -> Result<Vec<u8>, String> {
    let mut options = resvg::usvg::Options::default();
    {
        let fonts = options.fontdb_mut();
        fonts.load_font_data(FONT_DATA.to_vec());
        fonts.set_sans_serif_family(FONT_FAMILY);
    }
    options.font_family = FONT_FAMILY.to_string();
    let tree = resvg::usvg::Tree::from_str(svg, &options).map_err(|e| e.to_string())?;
    let size = tree
        .size()
        .to_int_size()
        .scale_by(PNG_SCALE)
        .ok_or("empty image")?;
    let mut pixmap =
        resvg::tiny_skia::Pixmap::new(size.width(), size.height()).ok_or("image too large")?;
    pixmap.fill(resvg::tiny_skia::Color::WHITE);
    resvg::render(
        &tree,
        resvg::tiny_skia::Transform::from_scale(PNG_SCALE, PNG_SCALE),
        &mut pixmap.as_mut(),
    );
    pixmap.encode_png().map_err(|e| e.to_string())
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn coordinates_keep_two_decimals() {
        assert_eq!(num(12.345_6), "12.35");
        assert_eq!(num(3.0), "3");
        assert_eq!(num(-0.001), "0");
        assert_eq!(num(2.5), "2.5");
    }
}
