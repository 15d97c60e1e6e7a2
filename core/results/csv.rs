//! CSV export of a run's channels.

use std::fs;
use std::io::{BufWriter, Write};
use std::path::Path;

use super::{ResultsError, RunRecord};
use crate::output::write_atomically;

/// Write the channels of `record` to `path` as CSV: a row of names starting
/// with `time`, a row of units starting with `s`, then one row per sample.
///
/// Numbers use Rust's `Display` for `f64`, which is the shortest text that
/// reads back to the same bits. Text cells containing a comma, quote or line
/// break are quoted (RFC 4180). Written atomically like
/// [`write_hdf5`](super::write_hdf5); parent directories are created.
pub fn write_csv(record: &RunRecord, path: &Path) -> Result<(), ResultsError> {
    record.validate().map_err(|reason| ResultsError::Invalid {
        path: path.to_path_buf(),
        reason,
    })?;
    write_atomically(path, |temp| {
        let io_error = |source| ResultsError::Io {
            path: path.to_path_buf(),
            action: format!("writing CSV to {}", temp.display()),
            source,
        };
        let file = fs::File::create(temp).map_err(io_error)?;
        let mut out = BufWriter::new(file);
        write_rows(record, &mut out).map_err(io_error)?;
        out.flush().map_err(io_error)
    })
}

/// The CSV body, header rows first.
fn write_rows(record: &RunRecord, out: &mut impl Write) -> std::io::Result<()> {
    let names = std::iter::once("time").chain(record.channels.iter().map(|c| c.name.as_str()));
    write_text_row(out, names)?;
    let units = std::iter::once("s").chain(record.channels.iter().map(|c| c.unit.as_str()));
    write_text_row(out, units)?;
    for (i, t) in record.time.iter().enumerate() {
        write!(out, "{t}")?;
        for channel in &record.channels {
            write!(out, ",{}", channel.data[i])?;
        }
        out.write_all(b"\n")?;
    }
    Ok(())
}

fn write_text_row<'a>(
    out: &mut impl Write,
    cells: impl Iterator<Item = &'a str>,
) -> std::io::Result<()> {
    let line: Vec<String> = cells.map(quote).collect();
    writeln!(out, "{}", line.join(","))
}

/// Quotes a text cell when it would otherwise break the CSV structure
/// (RFC 4180, section 2: fields with commas, quotes or line breaks are
/// enclosed in double quotes, a quote doubled).
pub(crate) fn quote(text: &str) -> String {
    if text.contains([',', '"', '\n', '\r']) {
        format!("\"{}\"", text.replace('"', "\"\""))
    } else {
        text.to_string()
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn quote_only_when_needed() {
        assert_eq!(quote("rad/s"), "rad/s");
        assert_eq!(quote("a,b"), "\"a,b\"");
        assert_eq!(quote("say \"x\""), "\"say \"\"x\"\"\"");
    }

    #[test]
    fn display_of_f64_reads_back_bit_identical() {
        for v in [
            0.1,
            1.0 / 3.0,
            -2.5e-300,
            6.02214076e23,
            f64::MIN_POSITIVE,
            -0.0,
        ] {
            let back: f64 = format!("{v}").parse().unwrap();
            assert_eq!(back.to_bits(), v.to_bits(), "{v}");
        }
    }
}
