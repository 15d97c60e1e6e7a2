//! CSV tables of results, sweep and stability-map files (layout: the
//! module documentation of [`crate::files`]).

use std::io::{BufWriter, Write};
use std::path::Path;

use super::{FileError, FileKind, file_kind};
use crate::results::{ResultsError, quote_csv_cell as quote, read_hdf5, write_atomically};
use crate::stability::{StabilityMap, read_map};
use crate::sweep::{SweepFile, for_each_case, read_sweep};

/// Which table of a sweep file to write.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum SweepTable {
    /// One row per case: status, parameters, metrics, criteria.
    #[default]
    Summary,
    /// One row per sample of each case, with the case and its parameters.
    Channels,
}

/// What to export.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct ExportOptions {
    /// The table of a sweep file (ignored for other kinds).
    pub sweep_table: SweepTable,
    /// Channels to write (results file, sweep channels table), in this
    /// order; `None` = every stored channel.
    pub channels: Option<Vec<String>>,
    /// Cases of a sweep to write (global indices), in file order; `None` =
    /// all.
    pub cases: Option<Vec<usize>>,
    /// Write the row of units under the names.
    pub unit_row: bool,
}

impl Default for ExportOptions {
    fn default() -> Self {
        ExportOptions {
            sweep_table: SweepTable::Summary,
            channels: None,
            cases: None,
            unit_row: true,
        }
    }
}

/// Parses a case list such as `0,3,10-12` (ranges inclusive) into indices.
///
/// ```
/// assert_eq!(yawdyn::files::parse_case_list("0,3,10-12").unwrap(), vec![0, 3, 10, 11, 12]);
/// assert!(yawdyn::files::parse_case_list("3-1").is_err());
/// ```
pub fn parse_case_list(text: &str) -> Result<Vec<usize>, FileError> {
    let bad = |part: &str| {
        FileError::Option(format!(
            "--cases {text}: `{part}` is not a case index or range A-B (e.g. 0,3,10-12)"
        ))
    };
    let mut cases = Vec::new();
    for part in text.split(',').map(str::trim) {
        let (first, last) = match part.split_once('-') {
            Some((a, b)) => (a.trim(), b.trim()),
            None => (part, part),
        };
        let first: usize = first.parse().map_err(|_| bad(part))?;
        let last: usize = last.parse().map_err(|_| bad(part))?;
        if last < first {
            return Err(bad(part));
        }
        cases.extend(first..=last);
    }
    Ok(cases)
}

/// Writes the CSV table of the file at `input` to `out`; returns the kind
/// of file it was.
pub fn export_csv(
    input: &Path,
    options: &ExportOptions,
    out: &mut dyn Write,
) -> Result<FileKind, FileError> {
    let kind = file_kind(input)?;
    match kind {
        FileKind::Results => {
            let record = read_hdf5(input)?;
            let mut table = Csv::new(out, options.unit_row);
            let channels = select(
                options.channels.as_deref(),
                &record
                    .channels
                    .iter()
                    .map(|c| c.name.as_str())
                    .collect::<Vec<_>>(),
                input,
            )?;
            let chosen: Vec<_> = channels.iter().map(|&k| &record.channels[k]).collect();
            let names = std::iter::once("time").chain(chosen.iter().map(|c| c.name.as_str()));
            let units = std::iter::once("s").chain(chosen.iter().map(|c| c.unit.as_str()));
            table.head(names, units)?;
            for (i, t) in record.time.iter().enumerate() {
                table.row(std::iter::once(*t).chain(chosen.iter().map(|c| c.data[i])))?;
            }
            table.finish()?;
        }
        FileKind::Sweep => {
            let sweep = read_sweep(input)?;
            let rows = case_rows(&sweep, options.cases.as_deref())?;
            match options.sweep_table {
                SweepTable::Summary => sweep_summary(&sweep, &rows, options, out)?,
                SweepTable::Channels => sweep_channels(&sweep, &rows, options, out)?,
            }
        }
        FileKind::StabilityMap => map_points(&read_map(input)?, options, out)?,
    }
    Ok(kind)
}

/// Writes the CSV table of `input` to the file `path`, atomically (under a
/// temporary name, renamed when complete); returns the kind of file read.
pub fn export_csv_to_file(
    input: &Path,
    options: &ExportOptions,
    path: &Path,
) -> Result<FileKind, FileError> {
    let mut kind = None;
    let mut failure = None;
    let written = write_atomically(path, |temp| {
        let io_error = |source| ResultsError::Io {
            path: path.to_path_buf(),
            action: format!("writing CSV to {}", temp.display()),
            source,
        };
        let mut file = std::fs::File::create(temp).map_err(io_error)?;
        match export_csv(input, options, &mut file) {
            Ok(k) => {
                kind = Some(k);
                file.sync_all().map_err(io_error)
            }
            Err(e) => {
                failure = Some(e);
                Err(ResultsError::Invalid {
                    path: path.to_path_buf(),
                    reason: "not written".to_string(),
                })
            }
        }
    });
    if let Some(e) = failure {
        return Err(e);
    }
    written?;
    kind.ok_or_else(|| FileError::Option("nothing exported".to_string()))
}

/// Indices into `names` of the `wanted` names in their order (all when
/// `None`); an unknown name is an option error listing the known ones.
fn select(wanted: Option<&[String]>, names: &[&str], file: &Path) -> Result<Vec<usize>, FileError> {
    let Some(wanted) = wanted else {
        return Ok((0..names.len()).collect());
    };
    wanted
        .iter()
        .map(|w| {
            names.iter().position(|n| n == w).ok_or_else(|| {
                FileError::Option(format!(
                    "--channels: {} stores no channel `{w}`; it has: {}",
                    file.display(),
                    names.join(", ")
                ))
            })
        })
        .collect()
}

/// Summary rows of the wanted cases, in file order.
fn case_rows(sweep: &SweepFile, cases: Option<&[usize]>) -> Result<Vec<usize>, FileError> {
    let s = &sweep.summary;
    let Some(cases) = cases else {
        return Ok((0..s.len()).collect());
    };
    let mut rows = Vec::with_capacity(cases.len());
    for &case in cases {
        let row = s.row_of(case).ok_or_else(|| {
            FileError::Option(format!(
                "--cases: {} holds no case {case} (it holds cases {}..{})",
                sweep.path.display(),
                s.case_index.first().copied().unwrap_or(0),
                s.case_index.last().map_or(0, |c| c + 1)
            ))
        })?;
        rows.push(row);
    }
    rows.sort_unstable();
    rows.dedup();
    Ok(rows)
}

/// The sweep's summary table.
fn sweep_summary(
    sweep: &SweepFile,
    rows: &[usize],
    options: &ExportOptions,
    out: &mut dyn Write,
) -> Result<(), FileError> {
    let s = &sweep.summary;
    let axes = &sweep.spec.grid.axes;
    let mut names = vec!["case".to_string(), "status".to_string()];
    let mut units = vec![String::new(), String::new()];
    names.extend(axes.iter().map(|a| a.key.clone()));
    units.extend(axes.iter().map(|a| a.unit.clone()));
    names.extend(s.metrics.iter().map(|m| m.name.clone()));
    units.extend(s.metrics.iter().map(|m| m.unit.clone()));
    names.extend(s.criteria.iter().map(|c| format!("{}.passed", c.name)));
    units.extend(s.criteria.iter().map(|_| String::new()));
    names.extend(["failure_time_s".to_string(), "message".to_string()]);
    units.extend(["s".to_string(), String::new()]);
    let mut table = Csv::new(out, options.unit_row);
    table.head(
        names.iter().map(String::as_str),
        units.iter().map(String::as_str),
    )?;
    for &row in rows {
        let mut cells = vec![s.case_index[row].to_string(), s.status[row].name().into()];
        cells.extend(s.parameters.iter().map(|(_, v)| v[row].to_string()));
        cells.extend(s.metrics.iter().map(|m| m.values[row].to_string()));
        cells.extend(s.criteria.iter().map(|c| c.passed[row].to_string()));
        cells.push(s.failure_time_s[row].to_string());
        cells.push(quote(&s.message[row]));
        table.cells(&cells)?;
    }
    table.finish()
}

/// The sweep's channels, tidy: one row per sample of each wanted case.
fn sweep_channels(
    sweep: &SweepFile,
    rows: &[usize],
    options: &ExportOptions,
    out: &mut dyn Write,
) -> Result<(), FileError> {
    let stored = sweep.channel_names();
    let stored_units = sweep.channel_units();
    let chosen = select(options.channels.as_deref(), &stored, &sweep.path)?;
    let axes = &sweep.spec.grid.axes;
    let names = std::iter::once("case")
        .chain(axes.iter().map(|a| a.key.as_str()))
        .chain(std::iter::once("time"))
        .chain(chosen.iter().map(|&k| stored[k]));
    let units = std::iter::once("")
        .chain(axes.iter().map(|a| a.unit.as_str()))
        .chain(std::iter::once("s"))
        .chain(chosen.iter().map(|&k| stored_units[k]));
    let mut table = Csv::new(out, options.unit_row);
    table.head(names, units)?;
    let wanted: Vec<usize> = rows.iter().map(|&r| sweep.summary.case_index[r]).collect();
    let mut failure = None;
    for_each_case(sweep, |case| {
        if failure.is_some() || !wanted.contains(&case.index) || case.channels.is_empty() {
            return Ok(());
        }
        for (i, t) in case.time.iter().enumerate() {
            let cells = std::iter::once(case.index as f64)
                .chain(case.parameters.iter().copied())
                .chain(std::iter::once(*t))
                .chain(chosen.iter().map(|&k| case.channels[k].data[i]));
            if let Err(e) = table.row(cells) {
                failure = Some(e);
                break;
            }
        }
        Ok(())
    })?;
    if let Some(e) = failure {
        return Err(e);
    }
    table.finish()
}

/// The map's points, one row per grid point, axis 0 fastest.
fn map_points(
    map: &StabilityMap,
    options: &ExportOptions,
    out: &mut dyn Write,
) -> Result<(), FileError> {
    const QUANTITIES: [(&str, &str); 6] = [
        ("trim_found", "1"),
        ("stable", "1"),
        ("yaw_damping_ratio", "1"),
        ("yaw_frequency_hz", "Hz"),
        ("max_real_part", "1/s"),
        ("lat_accel", "m/s^2"),
    ];
    let fixed = &map.provenance.fixed;
    let names = map
        .axes
        .iter()
        .map(|a| a.key.as_str())
        .chain(fixed.iter().map(|c| c.key.as_str()))
        .chain(QUANTITIES.iter().map(|(n, _)| *n));
    let units = map
        .axes
        .iter()
        .map(|a| a.unit.as_str())
        .chain(fixed.iter().map(|c| c.unit.as_str()))
        .chain(QUANTITIES.iter().map(|(_, u)| *u));
    let mut table = Csv::new(out, options.unit_row);
    table.head(names, units)?;
    let [_, n0] = map.shape();
    for (k, p) in map.points.iter().enumerate() {
        let at = [k % n0, k / n0];
        let cells = map
            .axes
            .iter()
            .zip(at)
            .map(|(a, i)| a.values[i])
            .chain(fixed.iter().map(|c| c.value))
            .chain([
                f64::from(u8::from(p.trim_found)),
                f64::from(u8::from(p.stable)),
                p.yaw_damping_ratio,
                p.yaw_frequency_hz,
                p.max_real_part,
                p.lat_accel,
            ]);
        table.row(cells)?;
    }
    table.finish()
}

/// A CSV table being written.
struct Csv<'a> {
    out: BufWriter<&'a mut dyn Write>,
    unit_row: bool,
}

impl<'a> Csv<'a> {
    fn new(out: &'a mut dyn Write, unit_row: bool) -> Self {
        Csv {
            out: BufWriter::new(out),
            unit_row,
        }
    }

    /// The row of names and, when wanted, the row of units.
    fn head<'s>(
        &mut self,
        names: impl Iterator<Item = &'s str>,
        units: impl Iterator<Item = &'s str>,
    ) -> Result<(), FileError> {
        let names: Vec<String> = names.map(quote).collect();
        self.cells(&names)?;
        if self.unit_row {
            let units: Vec<String> = units.map(quote).collect();
            self.cells(&units)?;
        }
        Ok(())
    }

    /// One row of numbers.
    fn row(&mut self, values: impl Iterator<Item = f64>) -> Result<(), FileError> {
        let mut first = true;
        for v in values {
            let sep = if first { "" } else { "," };
            write!(self.out, "{sep}{v}").map_err(FileError::Write)?;
            first = false;
        }
        self.out.write_all(b"\n").map_err(FileError::Write)
    }

    /// One row of cells already quoted.
    fn cells(&mut self, cells: &[String]) -> Result<(), FileError> {
        writeln!(self.out, "{}", cells.join(",")).map_err(FileError::Write)
    }

    fn finish(mut self) -> Result<(), FileError> {
        self.out.flush().map_err(FileError::Write)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn case_lists_take_single_indices_and_ranges() {
        assert_eq!(parse_case_list("5").unwrap(), vec![5]);
        assert_eq!(parse_case_list("1-3, 7").unwrap(), vec![1, 2, 3, 7]);
        assert!(parse_case_list("a").is_err());
        assert!(parse_case_list("").is_err());
    }

    #[test]
    fn text_cells_are_quoted_only_when_needed() {
        assert_eq!(quote("m/s^2"), "m/s^2");
        assert_eq!(quote("a, b"), "\"a, b\"");
        assert_eq!(quote("x\"y"), "\"x\"\"y\"");
    }
}
