//! `yawdyn merge OUT.h5 SHARD.h5... [--json]`: joins the shard files of one sweep into
//! the file an unsharded run gives.

use std::path::PathBuf;

use yawdyn::sweep::{CaseStatus, merge_sweeps};
use yawdyn::table::fmt_num;

use super::Outcome;

/// Arguments of `yawdyn merge`.
#[derive(Debug, clap::Args)]
pub struct Args {
    /// Merged sweep file to write.
    out: PathBuf,
    /// Shard files written by `yawdyn sweep --shard K/N`, in any order.
    #[arg(required = true)]
    shards: Vec<PathBuf>,
    /// Print a JSON summary (`out`, `shards`, `cases`, `status_counts`,
    /// `wall_time_s`, `writer_cpu_s`) instead of the text line.
    #[arg(long)]
    json: bool,
}

/// Runs `yawdyn merge`. Exit 0 when the merge was written (whatever the
/// cases' statuses; `yawdyn sweep` reported those), 2 when the shards do not
/// belong together, do not cover the sweep exactly once, or are not sweep
/// files of this layout version.
pub fn run(args: Args) -> anyhow::Result<Outcome> {
    // The shards are inputs that the output may not replace.
    for shard in &args.shards {
        yawdyn::output::note_input(shard);
    }
    super::check_outputs(&[args.out.as_path()])?;
    let report = merge_sweeps(&args.out, &args.shards)?;
    let s = &report.summary;
    let not_completed = s
        .status
        .iter()
        .filter(|&&x| x != CaseStatus::Completed)
        .count();
    if args.json {
        let statuses = [
            CaseStatus::Completed,
            CaseStatus::CriteriaFailed,
            CaseStatus::Failed,
            CaseStatus::Error,
        ];
        let counts: serde_json::Map<String, serde_json::Value> = statuses
            .iter()
            .map(|&st| {
                let n = s.status.iter().filter(|&&x| x == st).count();
                (st.name().to_string(), serde_json::json!(n))
            })
            .collect();
        let value = serde_json::json!({
            "out": report.out.display().to_string(),
            "shards": args.shards.iter().map(|p| p.display().to_string()).collect::<Vec<_>>(),
            "cases": s.len(),
            "status_counts": counts,
            "wall_time_s": report.wall_time_s,
            "writer_cpu_s": report.writer_cpu_s,
        });
        outln!("{}", serde_json::to_string_pretty(&value)?);
        return Ok(Outcome::Success);
    }
    outln!(
        "merged {} cases from {} shard files into {} ({} not completed) in {} s \
         (reading and writing {} s CPU)",
        s.len(),
        args.shards.len(),
        report.out.display(),
        not_completed,
        fmt_num(report.wall_time_s, 3),
        fmt_num(report.writer_cpu_s, 3)
    );
    Ok(Outcome::Success)
}
