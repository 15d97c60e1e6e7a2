//! Range checks shared by the parameter groups. Each check pushes a
//! [`ParamIssue`] that names the key path and the rule broken; the line is
//! filled in later from the file text.

use super::issue::ParamIssue;

/// A number as written in messages: exponent notation when very large or
/// small (1.7e308, not 309 digits).
pub(crate) fn short(value: f64) -> String {
    let size = value.abs();
    if value.is_finite() && size != 0.0 && !(1e-3..1e7).contains(&size) {
        format!("{value:e}")
    } else {
        format!("{value}")
    }
}

/// The problems found so far in one vehicle file.
pub(crate) struct Checks<'a> {
    issues: &'a mut Vec<ParamIssue>,
}

impl<'a> Checks<'a> {
    /// Checks that push into `issues`.
    pub(crate) fn new(issues: &'a mut Vec<ParamIssue>) -> Self {
        Self { issues }
    }

    /// A problem at `path`.
    pub(crate) fn push(&mut self, path: impl Into<String>, message: impl Into<String>) {
        self.issues.push(ParamIssue::new(path, message));
    }

    /// `value` must be finite and > 0.
    pub(crate) fn positive(&mut self, path: &str, value: f64) {
        if !(value.is_finite() && value > 0.0) {
            self.push(path, format!("must be positive, got {value}"));
        }
    }

    /// `value` must be finite and ≥ 0.
    pub(crate) fn non_negative(&mut self, path: &str, value: f64) {
        if !(value.is_finite() && value >= 0.0) {
            self.push(path, format!("must be zero or positive, got {value}"));
        }
    }

    /// `value` must be finite and lie in [lo, hi].
    pub(crate) fn within(&mut self, path: &str, value: f64, lo: f64, hi: f64) {
        if !(value.is_finite() && value >= lo && value <= hi) {
            self.push(path, format!("must lie in [{lo}, {hi}], got {value}"));
        }
    }

    /// `value` must be finite and lie in the physically plausible range
    /// [lo, hi] (in `unit`); the message gives the range.
    pub(crate) fn plausible(&mut self, path: &str, value: f64, (lo, hi): (f64, f64), unit: &str) {
        if !(value.is_finite() && value >= lo && value <= hi) {
            self.push(
                path,
                format!(
                    "{} {unit} is outside the plausible range [{}, {}] {unit}",
                    short(value),
                    short(lo),
                    short(hi)
                ),
            );
        }
    }

    /// `value` must be finite and lie in (0, 1] (an efficiency or a fraction that cannot be zero).
    pub(crate) fn fraction(&mut self, path: &str, value: f64) {
        if !(value.is_finite() && value > 0.0 && value <= 1.0) {
            self.push(path, format!("must lie in (0, 1], got {value}"));
        }
    }

    /// `value` must be finite.
    pub(crate) fn finite(&mut self, path: &str, value: f64) {
        if !value.is_finite() {
            self.push(path, "must be finite");
        }
    }
}
