//! Engineering plots written as SVG (or PNG) files.
//!
//! This module owns the drawing of result plots: time histories and
//! cross-plots ([`lines`], [`lines_with_markers`]), stacked channels sharing a
//! time axis ([`stacked`]), the steady-state handling diagram
//! ([`handling_diagram`]), the friction-usage ("g-g") plot ([`gg`]) and
//! stability maps ([`heat_map`]) and sensitivity rankings
//! ([`sensitivity_bars`]). It takes plain data in (numbers, labels)
//! and writes one file per call; it knows nothing of the vehicle model,
//! the results file or the analysis that produced the numbers, except in
//! [`figures`], which turns a results record into plot data.
//!
//! The look is our own: white background, light grid, colour-blind-friendly
//! line colours (the Okabe–Ito palette, Okabe & Ito, "Color Universal Design",
//! 2008), axis labels with units, a legend whenever a plot has more than one
//! series, and a title.
//!
//! Bad input never panics: empty data, lengths that do not match and data
//! with no finite value return a [`PlotError`]. Non-finite points (NaN, ±∞)
//! are skipped and break the line at that point.
//!
//! # Output format
//!
//! SVG, drawn on a plotters backend of our own (`canvas.rs`): data lines through
//! floating-point pixel positions (no stair steps), text as SVG `<text>` in
//! the embedded Liberation Sans (SIL Open Font License 1.1) with
//! metric-compatible fallbacks, and text widths measured with that font, so
//! titles wrap to the canvas (at most three lines, then shortened with
//! "…") and legends get the room they need. A path ending in `.png` gives a
//! PNG instead: the same SVG rasterised by resvg with the embedded font at
//! [`PNG_SCALE`] pixels per SVG pixel, so it looks the same on every
//! machine ([`svg_to_png`] converts any SVG the module wrote).
//!
//! # Example
//!
//! ```no_run
//! use std::path::Path;
//! use yawdyn::plot::{lines, Axis, Series};
//!
//! let t: Vec<f64> = (0..100).map(|i| i as f64 * 0.01).collect();
//! let yaw_rate = Series::new("yaw rate", t.clone(), t.iter().map(|t| t.sin()).collect());
//! lines(
//!     Path::new("yaw_rate.svg"),
//!     "Step steer, 80 km/h",
//!     &Axis::new("time [s]"),
//!     &Axis::new("yaw rate [deg/s]"),
//!     &[yaw_rate],
//! )?;
//! # Ok::<(), yawdyn::plot::PlotError>(())
//! ```

mod canvas;
pub mod figures;
mod heat_map;
mod lines;
mod quasi_static;
mod sensitivity;
mod style;
mod text;
mod vehicle;

use std::path::{Path, PathBuf};

pub use canvas::{PNG_SCALE, svg_to_png};
pub use text::{shorten, text_width, wrap_text};

/// Whether `path` names a PNG file (extension `.png`, any case): the plot
/// functions write PNG to such a path and SVG to any other.
pub fn is_png_path(path: &Path) -> bool {
    style::is_png(path)
}
pub use heat_map::{HeatMap, heat_map};
pub use lines::{lines, lines_with_markers, stacked};
pub use quasi_static::{YawMomentFigure, gg_envelope, yaw_moment_diagram};
pub use sensitivity::{SensitivityBar, SensitivityPanel, sensitivity_bars};
pub use vehicle::{gg, handling_diagram};

/// One named curve: paired x and y samples in the units of the plot's axes.
#[derive(Debug, Clone, PartialEq)]
pub struct Series {
    /// Name shown in the legend, e.g. "front left".
    pub label: String,
    /// Abscissa samples, in the unit of the x axis.
    pub x: Vec<f64>,
    /// Ordinate samples, in the unit of the y axis; same length as `x`.
    pub y: Vec<f64>,
}

impl Series {
    /// A series from a label and its samples.
    pub fn new(label: impl Into<String>, x: Vec<f64>, y: Vec<f64>) -> Self {
        Series {
            label: label.into(),
            x,
            y,
        }
    }
}

/// Description of one plot axis.
#[derive(Debug, Clone, PartialEq)]
pub struct Axis {
    /// Axis title with its unit in brackets, e.g. `"lateral acceleration [g]"`.
    pub label: String,
}

impl Axis {
    /// An axis with the given title (include the unit, e.g. `"time [s]"`).
    pub fn new(label: impl Into<String>) -> Self {
        Axis {
            label: label.into(),
        }
    }
}

/// Why a plot could not be written.
#[derive(Debug, thiserror::Error)]
pub enum PlotError {
    /// The SVG file could not be written.
    #[error("cannot write plot file {path}: {source}")]
    Io {
        /// File that was being written.
        path: PathBuf,
        /// Underlying I/O error.
        #[source]
        source: std::io::Error,
    },
    /// The output path is refused or cannot be written (see [`crate::output`]).
    #[error(transparent)]
    Output(#[from] crate::output::OutputError),
    /// The drawing library refused to draw (not expected for in-memory SVG).
    #[error("plot {path}: drawing failed: {message}")]
    Draw {
        /// File that was being drawn.
        path: PathBuf,
        /// Message from the drawing library.
        message: String,
    },
    /// A plot or a series had no samples at all.
    #[error("plot {path}: no data in {what}")]
    Empty {
        /// File that was to be drawn.
        path: PathBuf,
        /// Which input was empty, e.g. `series "front left"`.
        what: String,
    },
    /// Every sample was NaN or infinite, so there is nothing to draw.
    #[error("plot {path}: {what} has no finite values")]
    NonFinite {
        /// File that was to be drawn.
        path: PathBuf,
        /// Which input had no finite value.
        what: String,
    },
    /// Two inputs that must pair up element by element have different lengths.
    #[error("plot {path}: {what}: expected {expected} values, found {found}")]
    LengthMismatch {
        /// File that was to be drawn.
        path: PathBuf,
        /// Which inputs disagree, e.g. `series "rear": y against x`.
        what: String,
        /// Length required (that of the reference input).
        expected: usize,
        /// Length found.
        found: usize,
    },
    /// A parameter or grid coordinate is unusable (non-finite, negative where
    /// it must be positive, or grid coordinates not strictly increasing).
    #[error("plot {path}: {what}")]
    InvalidValue {
        /// File that was to be drawn.
        path: PathBuf,
        /// What is wrong, in words.
        what: String,
    },
}

impl crate::error::Classify for PlotError {
    /// The plot file by its file-system cause (a missing or read-only
    /// directory, a directory as the file: bad input); data that cannot be
    /// drawn is bad input; a refusal of the drawing library is a failure.
    fn kind(&self) -> crate::error::ErrorKind {
        use crate::error::ErrorKind;
        match self {
            PlotError::Io { source, .. } => crate::error::io_kind(source),
            PlotError::Output(e) => e.kind(),
            PlotError::Draw { .. } => ErrorKind::Failed,
            PlotError::Empty { .. }
            | PlotError::NonFinite { .. }
            | PlotError::LengthMismatch { .. }
            | PlotError::InvalidValue { .. } => ErrorKind::BadInput,
        }
    }
}

impl PlotError {
    pub(crate) fn empty(path: &Path, what: impl Into<String>) -> Self {
        PlotError::Empty {
            path: path.to_path_buf(),
            what: what.into(),
        }
    }

    pub(crate) fn non_finite(path: &Path, what: impl Into<String>) -> Self {
        PlotError::NonFinite {
            path: path.to_path_buf(),
            what: what.into(),
        }
    }

    pub(crate) fn mismatch(
        path: &Path,
        what: impl Into<String>,
        expected: usize,
        found: usize,
    ) -> Self {
        PlotError::LengthMismatch {
            path: path.to_path_buf(),
            what: what.into(),
            expected,
            found,
        }
    }

    pub(crate) fn invalid(path: &Path, what: impl Into<String>) -> Self {
        PlotError::InvalidValue {
            path: path.to_path_buf(),
            what: what.into(),
        }
    }
}
