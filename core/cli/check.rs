//! `yawdyn check RESULT --against BASELINE [--rtol R] [--atol A] [--update] [--json]`:
//! regression check of a results file against a baseline results file.
//!
//! Exit 0 when everything is within tolerance (or after `--update`), 1 when
//! anything is outside it or the run status differs, 2 when a file cannot be
//! read as a yawdyn results file or an option is bad. The comparison rule is
//! documented in [`yawdyn::check`].

use std::path::PathBuf;

use yawdyn::check::{Alignment, Comparison, Deviation, Tolerance, compare_files, update_baseline};
use yawdyn::table::{Table, fmt_num};

use super::Outcome;

/// Rows of the deviation table printed when everything passes.
const SHOW_PASSING: usize = 5;
/// Most failing rows printed (all are in `--json`).
const SHOW_FAILING: usize = 20;

/// Arguments of `yawdyn check`.
#[derive(Debug, clap::Args)]
pub struct Args {
    /// Results file to check (HDF5, from `yawdyn run`).
    result: PathBuf,
    /// Baseline results file to compare against.
    #[arg(long, value_name = "BASELINE")]
    against: PathBuf,
    /// Relative tolerance: a sample passes when |result − baseline| ≤ atol + rtol·|baseline|.
    #[arg(long, default_value_t = Tolerance::default().rtol)]
    rtol: f64,
    /// Absolute tolerance, in each channel's unit.
    #[arg(long, default_value_t = Tolerance::default().atol)]
    atol: f64,
    /// Replace the baseline with the result (atomic copy) and exit 0.
    #[arg(long)]
    update: bool,
    /// Print the comparison as JSON instead of a table.
    #[arg(long)]
    json: bool,
}

/// Runs `yawdyn check`.
pub fn run(args: Args) -> anyhow::Result<Outcome> {
    let tolerance = Tolerance {
        rtol: args.rtol,
        atol: args.atol,
    };
    if args.update {
        update_baseline(&args.result, &args.against)?;
        outln!(
            "baseline {} replaced by {}",
            args.against.display(),
            args.result.display()
        );
        return Ok(Outcome::Success);
    }
    let cmp = compare_files(&args.result, &args.against, tolerance)?;
    if args.json {
        let mut value = serde_json::to_value(&cmp)?;
        value["passed"] = serde_json::Value::Bool(cmp.passed());
        outln!("{}", serde_json::to_string_pretty(&value)?);
    } else {
        out!("{}", report(&cmp));
    }
    Ok(if cmp.passed() {
        Outcome::Success
    } else {
        Outcome::Failed
    })
}

fn row(d: &Deviation) -> Vec<String> {
    let n = |v: f64| fmt_num(v, 4);
    let what = match d.kind {
        yawdyn::check::ItemKind::Channel => "channel",
        yawdyn::check::ItemKind::Metric => "metric",
        yawdyn::check::ItemKind::Time => "time",
    };
    vec![
        format!("{} {}", what, d.name),
        d.unit.clone(),
        n(d.max_abs_deviation),
        d.time_s.map_or_else(|| "-".to_string(), n),
        n(d.baseline),
        n(d.result),
        n(d.allowed),
        format!("{}/{}", d.failed_samples, d.samples),
        if d.passed {
            "ok".to_string()
        } else {
            d.note.clone().unwrap_or_else(|| "FAIL".to_string())
        },
    ]
}

/// The text report: notes, the worst deviations as a table, a verdict line.
///
/// Per item the table gives the largest absolute deviation over all samples,
/// and the worst sample (largest deviation relative to its allowance) with
/// its time, baseline value, result value and allowed deviation.
fn report(cmp: &Comparison) -> String {
    let mut out = String::new();
    let t = cmp.tolerance;
    out.push_str(&format!(
        "rule: |result - baseline| <= atol + rtol*|baseline|, rtol {}, atol {}\n",
        t.rtol, t.atol
    ));
    match &cmp.alignment {
        Alignment::Identical => {}
        Alignment::Interpolated {
            start_s,
            end_s,
            samples,
            skipped,
        } => out.push_str(&format!(
            "time vectors differ: result interpolated onto the baseline times over \
             {start_s} .. {end_s} s ({samples} samples compared, {skipped} baseline samples outside)\n"
        )),
        Alignment::NoOverlap => {
            out.push_str("time ranges do not overlap: no channel could be compared\n")
        }
    }
    if !cmp.status_matches() {
        out.push_str(&format!(
            "status differs: result {}, baseline {}\n",
            cmp.result_status, cmp.baseline_status
        ));
    }
    for (label, list) in [
        ("channels missing from the result", &cmp.missing_channels),
        ("channels not in the baseline", &cmp.extra_channels),
        ("metrics missing from the result", &cmp.missing_metrics),
        ("metrics not in the baseline", &cmp.extra_metrics),
    ] {
        if !list.is_empty() {
            out.push_str(&format!("{label}: {}\n", list.join(", ")));
        }
    }
    let failing = cmp.failures().count();
    let shown: Vec<&Deviation> = if failing > 0 {
        cmp.failures().take(SHOW_FAILING).collect()
    } else {
        cmp.deviations.iter().take(SHOW_PASSING).collect()
    };
    if !shown.is_empty() {
        let mut table = Table::new([
            "item",
            "unit",
            "max abs deviation",
            "worst at [s]",
            "baseline",
            "result",
            "allowed",
            "failed samples",
            "verdict",
        ]);
        for d in &shown {
            table.row(row(d));
        }
        out.push_str(if failing > 0 {
            "worst deviations (outside tolerance):\n"
        } else {
            "largest deviations:\n"
        });
        out.push_str(&table.render());
        if failing > shown.len() {
            out.push_str(&format!(
                "... and {} more outside tolerance (all in --json)\n",
                failing - shown.len()
            ));
        }
        if failing > 0 {
            let names: Vec<&str> = cmp.failures().map(|d| d.name.as_str()).collect();
            out.push_str(&format!(
                "outside tolerance ({failing}): {}\n",
                names.join(", ")
            ));
        }
    }
    let differences = failing
        + cmp.missing_channels.len()
        + cmp.extra_channels.len()
        + cmp.missing_metrics.len()
        + cmp.extra_metrics.len()
        + usize::from(!cmp.status_matches())
        + usize::from(cmp.alignment == Alignment::NoOverlap);
    if cmp.passed() {
        out.push_str(&format!(
            "PASS: {} items within tolerance\n",
            cmp.deviations.len()
        ));
    } else {
        out.push_str(&format!(
            "FAIL: {differences} difference(s) from the baseline ({failing} of {} items outside tolerance)\n",
            cmp.deviations.len()
        ));
    }
    out
}
