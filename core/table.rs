//! Plain-text aligned tables and number formatting for terminal output.
//!
//! Every yawdyn command that prints columns (run summaries, sweep tables,
//! criteria lists) goes through [`Table`], so all output lines up the same
//! way: columns separated by two spaces, a rule of dashes under the header,
//! numeric-looking cells right-aligned, everything else left-aligned.
//! [`fmt_num`] turns an `f64` into a short, readable cell.
//!
//! This module knows nothing of runs or channels; it formats strings.
//!
//! ```
//! use yawdyn::table::{Table, fmt_num};
//!
//! let mut table = Table::new(["metric", "value", "unit"]);
//! table.row(["steady_state_gain", &fmt_num(0.2871, 3), "1/s"]);
//! table.row(["response_time", &fmt_num(0.1504, 3), "s"]);
//! let text = table.render();
//! assert_eq!(
//!     text,
//!     "metric             value  unit\n\
//!      -----------------  -----  ----\n\
//!      steady_state_gain  0.287  1/s\n\
//!      response_time       0.15  s\n"
//! );
//! ```

/// Gap between columns, in spaces.
const COLUMN_GAP: usize = 2;

/// An aligned text table: a header row, a rule, then the body rows.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct Table {
    headers: Vec<String>,
    rows: Vec<Vec<String>>,
}

impl Table {
    /// A table with these column headers and no rows yet.
    pub fn new<I, S>(headers: I) -> Table
    where
        I: IntoIterator<Item = S>,
        S: Into<String>,
    {
        Table {
            headers: headers.into_iter().map(Into::into).collect(),
            rows: Vec::new(),
        }
    }

    /// Append one body row. A row shorter than the header is padded with
    /// empty cells; a longer one adds columns with empty headers.
    pub fn row<I, S>(&mut self, cells: I) -> &mut Table
    where
        I: IntoIterator<Item = S>,
        S: Into<String>,
    {
        self.rows.push(cells.into_iter().map(Into::into).collect());
        self
    }

    /// Number of body rows (the header is not counted).
    pub fn len(&self) -> usize {
        self.rows.len()
    }

    /// True when the table has no body rows.
    pub fn is_empty(&self) -> bool {
        self.rows.is_empty()
    }

    /// The table as text: header, rule, rows; every line ends in `\n` and
    /// carries no trailing spaces. Widths count Unicode scalar values.
    pub fn render(&self) -> String {
        let columns = self
            .rows
            .iter()
            .map(Vec::len)
            .chain(std::iter::once(self.headers.len()))
            .max()
            .unwrap_or(0);
        let cell =
            |row: &[String], col: usize| -> String { row.get(col).cloned().unwrap_or_default() };

        let mut widths = vec![0usize; columns];
        // A column whose non-empty body cells are all numeric gets a
        // right-aligned header, so the header sits over the digits.
        let mut numeric_column = vec![true; columns];
        let mut has_body = vec![false; columns];
        for col in 0..columns {
            widths[col] = text_width(&cell(&self.headers, col));
            for row in &self.rows {
                let text = cell(row, col);
                widths[col] = widths[col].max(text_width(&text));
                if !text.trim().is_empty() {
                    has_body[col] = true;
                    numeric_column[col] &= looks_numeric(&text);
                }
            }
        }

        let mut out = String::new();
        let header_cells: Vec<(String, bool)> = (0..columns)
            .map(|col| {
                (
                    cell(&self.headers, col),
                    has_body[col] && numeric_column[col],
                )
            })
            .collect();
        push_line(&mut out, &header_cells, &widths);
        let rule: Vec<(String, bool)> = widths.iter().map(|&w| ("-".repeat(w), false)).collect();
        push_line(&mut out, &rule, &widths);
        for row in &self.rows {
            let cells: Vec<(String, bool)> = (0..columns)
                .map(|col| {
                    let text = cell(row, col);
                    let right = looks_numeric(&text);
                    (text, right)
                })
                .collect();
            push_line(&mut out, &cells, &widths);
        }
        out
    }
}

/// Append one line of `(text, right_aligned)` cells padded to `widths`.
fn push_line(out: &mut String, cells: &[(String, bool)], widths: &[usize]) {
    let mut line = String::new();
    for (col, ((text, right), &width)) in cells.iter().zip(widths).enumerate() {
        if col > 0 {
            line.push_str(&" ".repeat(COLUMN_GAP));
        }
        let pad = " ".repeat(width.saturating_sub(text_width(text)));
        if *right {
            line.push_str(&pad);
            line.push_str(text);
        } else {
            line.push_str(text);
            line.push_str(&pad);
        }
    }
    out.push_str(line.trim_end());
    out.push('\n');
}

/// Display width used for alignment: the number of Unicode scalar values.
fn text_width(text: &str) -> usize {
    text.chars().count()
}

/// True when a cell reads as a number (`-1.5`, `2e-3`, `nan`, `inf`) or is
/// the placeholder [`MISSING`] for an absent number; such cells are
/// right-aligned.
pub fn looks_numeric(text: &str) -> bool {
    let trimmed = text.trim();
    trimmed == MISSING || (!trimmed.is_empty() && trimmed.parse::<f64>().is_ok())
}

/// Cell text for a number that is absent (e.g. a criterion without a lower
/// limit); aligned like a number.
pub const MISSING: &str = "-";

/// Format `value` with `sig` significant digits (at least 1) for a table.
///
/// - plain decimal notation for magnitudes from 1e-3 up to below 1e6,
///   trailing zeros dropped (`0.5`, `12.3`, `250`); integer digits are never
///   rounded away, so `123456` stays `123456` even with `sig = 3`;
/// - scientific notation outside that range (`1.5e-5`, `2.35e7`);
/// - `0` for both zeros (never `-0`), `nan` for NaN, `inf` / `-inf`.
///
/// ```
/// use yawdyn::table::fmt_num;
/// assert_eq!(fmt_num(9.81, 3), "9.81");
/// assert_eq!(fmt_num(-0.0, 3), "0");
/// assert_eq!(fmt_num(f64::NAN, 3), "nan");
/// assert_eq!(fmt_num(0.000_012_34, 3), "1.23e-5");
/// ```
pub fn fmt_num(value: f64, sig: usize) -> String {
    if value.is_nan() {
        return "nan".to_string();
    }
    if value.is_infinite() {
        return if value > 0.0 { "inf" } else { "-inf" }.to_string();
    }
    if value == 0.0 {
        return "0".to_string();
    }
    let sig = sig.max(1);
    // Rounding to `sig` digits first, then reading the exponent, handles
    // carries such as 9.996 -> 1.00e1.
    let scientific = format!("{:.*e}", sig - 1, value);
    let (mantissa, exponent) = match scientific.split_once('e') {
        Some((m, e)) => (m.to_string(), e.parse::<i32>().unwrap_or(0)),
        None => (scientific.clone(), 0),
    };
    let text = if (-3..6).contains(&exponent) {
        let decimals = (sig as i32 - 1 - exponent).max(0) as usize;
        trim_fraction(&format!("{value:.decimals$}"))
    } else {
        format!("{}e{}", trim_fraction(&mantissa), exponent)
    };
    if text == "-0" { "0".to_string() } else { text }
}

/// Drop trailing zeros after a decimal point, and the point itself if bare.
fn trim_fraction(text: &str) -> String {
    if text.contains('.') {
        text.trim_end_matches('0').trim_end_matches('.').to_string()
    } else {
        text.to_string()
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn render_aligns_text_left_and_numbers_right() {
        let mut table = Table::new(["name", "value"]);
        table.row(["a", "1.5"]).row(["longer_name", "-12.25"]);
        let text = table.render();
        let lines: Vec<&str> = text.lines().collect();
        assert_eq!(lines.len(), 4);
        assert_eq!(lines[0], "name          value");
        assert_eq!(lines[1], "-----------  ------");
        assert_eq!(lines[2], "a               1.5");
        assert_eq!(lines[3], "longer_name  -12.25");
    }

    #[test]
    fn render_pads_short_rows_and_widens_for_long_rows() {
        let mut table = Table::new(["a", "b"]);
        table.row(["x"]).row(["1", "2", "extra"]);
        let text = table.render();
        let lines: Vec<&str> = text.lines().collect();
        assert_eq!(lines[0], "a  b");
        assert_eq!(lines[1], "-  -  -----");
        assert_eq!(lines[2], "x");
        assert_eq!(lines[3], "1  2  extra");
    }

    #[test]
    fn render_counts_unicode_characters_not_bytes() {
        let mut table = Table::new(["µ", "v"]);
        table.row(["Straße", "x"]);
        let text = table.render();
        let lines: Vec<&str> = text.lines().collect();
        assert_eq!(lines[0], "µ       v");
        assert_eq!(lines[2], "Straße  x");
    }

    #[test]
    fn missing_placeholder_aligns_with_numbers() {
        let mut table = Table::new(["lower"]);
        table.row([MISSING]).row(["0.31"]);
        let text = table.render();
        let lines: Vec<&str> = text.lines().collect();
        assert_eq!(lines[0], "lower");
        assert_eq!(lines[2], "    -");
        assert_eq!(lines[3], " 0.31");
    }

    #[test]
    fn render_mixed_column_keeps_header_left() {
        let mut table = Table::new(["limit", "k"]);
        table.row(["none", "a"]).row(["3", "b"]);
        let text = table.render();
        let lines: Vec<&str> = text.lines().collect();
        assert_eq!(lines[0], "limit  k");
        assert_eq!(lines[2], "none   a");
        assert_eq!(lines[3], "    3  b");
    }

    #[test]
    fn empty_table_renders_header_and_rule() {
        let table = Table::new(["only"]);
        assert!(table.is_empty());
        assert_eq!(table.render(), "only\n----\n");
    }

    #[test]
    fn looks_numeric_accepts_numbers_and_nan_only() {
        for yes in ["1", "-2.5", "1e-5", "nan", "inf", "-inf", " 3 ", MISSING] {
            assert!(looks_numeric(yes), "{yes}");
        }
        for no in ["", "abc", "1.2 m", "passed", "--", "1-"] {
            assert!(!looks_numeric(no), "{no}");
        }
    }

    #[test]
    fn fmt_num_plain_range() {
        assert_eq!(fmt_num(9.81, 3), "9.81");
        assert_eq!(fmt_num(0.5, 3), "0.5");
        assert_eq!(fmt_num(2.0, 3), "2");
        assert_eq!(fmt_num(-12.345, 4), "-12.35");
        assert_eq!(fmt_num(0.001_234_5, 3), "0.00123");
        assert_eq!(fmt_num(123_456.0, 3), "123456");
        assert_eq!(fmt_num(1500.0, 2), "1500");
    }

    #[test]
    fn fmt_num_scientific_range() {
        assert_eq!(fmt_num(0.000_012_34, 3), "1.23e-5");
        assert_eq!(fmt_num(-2.5e-9, 3), "-2.5e-9");
        assert_eq!(fmt_num(2.35e7, 3), "2.35e7");
        assert_eq!(fmt_num(1.0e6, 3), "1e6");
    }

    #[test]
    fn fmt_num_rounding_carry_moves_exponent() {
        assert_eq!(fmt_num(9.996, 3), "10");
        assert_eq!(fmt_num(999_999.7, 3), "1e6");
        assert_eq!(fmt_num(0.000_999_9, 2), "0.001");
    }

    #[test]
    fn fmt_num_special_values() {
        assert_eq!(fmt_num(0.0, 3), "0");
        assert_eq!(fmt_num(-0.0, 3), "0");
        assert_eq!(fmt_num(f64::NAN, 3), "nan");
        assert_eq!(fmt_num(f64::INFINITY, 3), "inf");
        assert_eq!(fmt_num(f64::NEG_INFINITY, 3), "-inf");
        assert_eq!(fmt_num(1.23, 0), "1");
    }

    #[test]
    fn fmt_num_output_is_numeric_for_alignment() {
        for v in [0.0, -0.0, 1.5, -3.0e-8, 4.2e9, f64::NAN] {
            assert!(looks_numeric(&fmt_num(v, 3)), "{v}");
        }
    }
}
