//! `yawdyn export FILE [--out FILE.csv] [--table summary|channels]
//! [--channels A,B] [--cases LIST] [--no-unit-row]`: a CSV table of a
//! results, sweep or stability-map file (tables: [`yawdyn::files`]).

use std::path::PathBuf;

use anyhow::Context;
use yawdyn::files::{
    ExportOptions, FileError, SweepTable, export_csv, export_csv_to_file, parse_case_list,
};

use super::{Outcome, bad_input};

/// Arguments of `yawdyn export`.
#[derive(Debug, clap::Args)]
#[command(after_help = "Tables (row 1 names, row 2 units unless --no-unit-row):
  results file   one row per sample: time, channels
  sweep file     --table summary (default): one row per case: case, status, varied parameters,
                 metrics, <criterion>.passed (1/0/-1), failure_time_s, message
                 --table channels: one row per sample of each case: case, varied parameters,
                 time, channels (tidy; group by `case`)
  stability map  one row per grid point (axis 0 fastest): axes, fixed conditions, trim_found,
                 stable, yaw_damping_ratio, yaw_frequency_hz, max_real_part, lat_accel")]
pub struct Args {
    /// Results, sweep or stability-map file (HDF5) written by yawdyn.
    file: PathBuf,
    /// CSV file to write (written under a temporary name, then renamed).
    /// Default: standard output.
    #[arg(long, short, value_name = "FILE.csv")]
    out: Option<PathBuf>,
    /// Table of a sweep file: `summary` (one row per case) or `channels`
    /// (one row per sample of each case).
    #[arg(long, value_enum, default_value_t = TableArg::Summary)]
    table: TableArg,
    /// Channels to write (results file, sweep channels table), comma-separated,
    /// in this order. Default: all stored.
    #[arg(long, value_delimiter = ',', value_name = "A,B,...")]
    channels: Option<Vec<String>>,
    /// Cases of a sweep to write, e.g. `0,3,10-12`. Default: all.
    #[arg(long, value_name = "LIST")]
    cases: Option<String>,
    /// Leave out the row of units under the names.
    #[arg(long)]
    no_unit_row: bool,
}

/// `--table`.
#[derive(Debug, Clone, Copy, PartialEq, Eq, clap::ValueEnum)]
enum TableArg {
    /// One row per case.
    Summary,
    /// One row per sample of each case.
    Channels,
}

/// Runs `yawdyn export`.
pub fn run(args: Args) -> anyhow::Result<Outcome> {
    if !args.file.exists() {
        return Err(bad_input(format!("no such file: {}", args.file.display())));
    }
    let options = ExportOptions {
        sweep_table: match args.table {
            TableArg::Summary => SweepTable::Summary,
            TableArg::Channels => SweepTable::Channels,
        },
        channels: args
            .channels
            .map(|list| list.iter().map(|c| c.trim().to_string()).collect()),
        cases: args.cases.as_deref().map(parse_case_list).transpose()?,
        unit_row: !args.no_unit_row,
    };
    let context = || format!("cannot export {}", args.file.display());
    match &args.out {
        Some(out) => {
            yawdyn::results::check_output_path(out)?;
            export_csv_to_file(&args.file, &options, out).with_context(context)?;
        }
        None => {
            let stdout = std::io::stdout();
            let mut lock = stdout.lock();
            match export_csv(&args.file, &options, &mut lock) {
                // A closed pipe (`yawdyn export f.h5 | head`) is not an error.
                Err(FileError::Write(e)) if e.kind() == std::io::ErrorKind::BrokenPipe => {}
                other => {
                    other.with_context(context)?;
                }
            }
        }
    }
    Ok(Outcome::Success)
}
