//! `yawdyn show FILE [--json]`: print the summary of a results, sweep or
//! stability-map file (the kind is read from the file's root `format`
//! attribute).

use std::path::PathBuf;

use anyhow::Context;
use yawdyn::files::{show_json, show_text};

use super::{Outcome, bad_input};

/// Arguments of `yawdyn show`.
#[derive(Debug, clap::Args)]
pub struct Args {
    /// Results, sweep or stability-map file (HDF5) written by yawdyn.
    file: PathBuf,
    /// Print JSON instead of text (key `format` names the kind of file).
    #[arg(long)]
    json: bool,
}

/// Runs `yawdyn show`.
pub fn run(args: Args) -> anyhow::Result<Outcome> {
    if !args.file.exists() {
        return Err(bad_input(format!("no such file: {}", args.file.display())));
    }
    let context = || format!("cannot read {}", args.file.display());
    let text = if args.json {
        format!(
            "{}\n",
            serde_json::to_string_pretty(&show_json(&args.file).with_context(context)?)?
        )
    } else {
        show_text(&args.file).with_context(context)?
    };
    super::stdout::write_bytes(text.as_bytes());
    Ok(Outcome::Success)
}
