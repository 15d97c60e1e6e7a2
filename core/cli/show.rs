//! `yawdyn show FILE [--json]`: print the summary of a results file.

use std::path::PathBuf;

use anyhow::Context;
use yawdyn::results::{read_hdf5, summary_json, summary_text};

use super::{Outcome, bad_input};

/// Arguments of `yawdyn show`.
#[derive(Debug, clap::Args)]
pub struct Args {
    /// Results file (HDF5) written by `yawdyn run`.
    file: PathBuf,
    /// Print JSON (status, provenance, metrics, criteria) instead of text.
    #[arg(long)]
    json: bool,
}

/// Runs `yawdyn show`.
pub fn run(args: Args) -> anyhow::Result<Outcome> {
    if !args.file.exists() {
        return Err(bad_input(format!("no such file: {}", args.file.display())));
    }
    let record = read_hdf5(&args.file)
        .with_context(|| format!("cannot read results file {}", args.file.display()))?;
    let text = if args.json {
        format!(
            "{}\n",
            serde_json::to_string_pretty(&summary_json(&record))?
        )
    } else {
        summary_text(&record)
    };
    super::stdout::write_bytes(text.as_bytes());
    Ok(Outcome::Success)
}
