//! `yawdyn run SCRIPT [--vehicle FILE] [--set key=value]... [--out FILE.h5]
//! [--csv FILE] [--quiet] [--json] [--max-operations N] [--max-wall SECONDS]
//! [--max-memory MIB]`: run a manoeuvre script, print a summary and write
//! the results file.

use std::path::{Path, PathBuf};
use std::time::Instant;

use anyhow::Context;
use yawdyn::assets::{resolve_script, resolve_vehicle};
use yawdyn::results::{self, RunRecord, RunStatus};
use yawdyn::script::budget::MIB;
use yawdyn::script::{
    DEFAULT_MAX_OPERATIONS, DEFAULT_MAX_SAMPLE_BYTES, DEFAULT_MAX_WALL_S, Limits, RunOptions,
    run_script,
};
use yawdyn::table::{Table, fmt_num};

use super::progress::{Progress, Unit};
use super::{Outcome, bad_input, parse_overrides};

/// The budgets of one run (`run` and each case of `sweep`).
#[derive(Debug, Clone, clap::Args)]
pub struct BudgetArgs {
    /// Script operations one run may use: top level, every controller call
    /// and evaluate(ch) together. A run that needs more stops as failed.
    #[arg(long, value_name = "N", default_value_t = DEFAULT_MAX_OPERATIONS)]
    max_operations: u64,
    /// Wall-clock seconds one run may take. A run that takes longer stops as
    /// failed (exit 1); the samples so far are written, status `failed`.
    #[arg(long, value_name = "SECONDS", default_value_t = DEFAULT_MAX_WALL_S)]
    max_wall: f64,
    /// Memory the recorded samples of one run may take, MiB (samples ×
    /// (channels + 1) × 8 bytes), checked before each phase for its planned end.
    #[arg(long, value_name = "MIB", default_value_t = DEFAULT_MAX_SAMPLE_BYTES / MIB)]
    max_memory: u64,
}

impl BudgetArgs {
    /// The checked limits (bad input names the option).
    pub fn limits(&self) -> anyhow::Result<Limits> {
        let limits = Limits {
            max_operations: self.max_operations,
            max_wall_s: self.max_wall,
            max_sample_bytes: self.max_memory.saturating_mul(MIB),
            ..Limits::default()
        };
        limits
            .check()
            .map_err(|e| bad_input(format!("--max-operations/--max-wall/--max-memory: {e}")))?;
        Ok(limits)
    }
}

/// Arguments of `yawdyn run`.
#[derive(Debug, clap::Args)]
#[command(
    after_help = "The results file is written whenever the run produced data, also when it failed \
(status `failed`), including when a budget (--max-operations, --max-wall, --max-memory) was spent."
)]
pub struct Args {
    /// Manoeuvre script (Rhai), e.g. scripts/step_steer.rhai, or the name of a
    /// shipped script (`step_steer`), found wherever yawdyn runs.
    script: PathBuf,
    /// Vehicle parameter file (TOML) to use instead of the script's own, or the
    /// name of a demo vehicle (`track_car`).
    #[arg(long, value_name = "FILE")]
    vehicle: Option<PathBuf>,
    /// Override a vehicle parameter by dotted path, e.g. `--set drive.front_share=0.3`
    /// (repeatable; applied after the script's own `set` calls), or a manoeuvre
    /// parameter the script reads with `param`, e.g. `--set manoeuvre.exit_torque=3000`.
    #[arg(long = "set", value_name = "KEY=VALUE")]
    sets: Vec<String>,
    /// Results file (HDF5). Default: results/<script name>.h5 in the current directory.
    #[arg(long, value_name = "FILE.h5")]
    out: Option<PathBuf>,
    /// Also write the channels as CSV (header row of names, then a row of units).
    #[arg(long, value_name = "FILE")]
    csv: Option<PathBuf>,
    /// No progress bar and no summary (errors are still printed).
    #[arg(long)]
    quiet: bool,
    /// Print the summary as JSON (as `yawdyn show --json`, with
    /// `results_file`, `csv_file`, `wall_time_s` and `passed`); no progress.
    #[arg(long)]
    json: bool,
    #[command(flatten)]
    budgets: BudgetArgs,
}

/// Runs `yawdyn run`.
pub fn run(mut args: Args) -> anyhow::Result<Outcome> {
    args.script = resolve_script(&args.script)?;
    args.vehicle = args.vehicle.map(|v| resolve_vehicle(&v)).transpose()?;
    let overrides = parse_overrides(&args.sets)?;
    let limits = args.budgets.limits()?;
    let out = args
        .out
        .clone()
        .unwrap_or_else(|| default_out(&args.script));
    // The script and vehicle are inputs that no output may replace.
    yawdyn::output::note_input(&args.script);
    if let Some(vehicle) = &args.vehicle {
        yawdyn::output::note_input(vehicle);
    }
    let outputs: Vec<&std::path::Path> = std::iter::once(out.as_path())
        .chain(args.csv.as_deref())
        .collect();
    super::check_outputs(&outputs)?;
    let hidden = args.quiet || args.json;
    let progress = std::rc::Rc::new(Progress::new(
        "run",
        Unit::SimulatedMs,
        0,
        hidden,
        "{bar:40} {msg} sim {pos} ms / {len} ms, {elapsed} wall",
    ));
    let shown = progress.clone();
    let options = RunOptions {
        vehicle: args.vehicle.clone(),
        overrides,
        progress: (!hidden).then(|| {
            Box::new(move |t: f64, end: f64| {
                let end_ms = if end.is_finite() {
                    (end * 1000.0) as u64
                } else {
                    0
                };
                if end_ms > shown.total() {
                    shown.set_total(end_ms);
                }
                shown.set_position((t * 1000.0) as u64);
            }) as Box<dyn Fn(f64, f64)>
        }),
        limits,
    };
    let started = Instant::now();
    let result = run_script(&args.script, &options);
    let wall = started.elapsed().as_secs_f64();
    progress.finish();
    let record = result?;
    results::write_hdf5(&record, &out)
        .with_context(|| format!("cannot write results file {}", out.display()))?;
    if let Some(csv) = &args.csv {
        results::write_csv(&record, csv)
            .with_context(|| format!("cannot write CSV file {}", csv.display()))?;
    }
    if args.json {
        let mut value = results::summary_json(&record);
        value["results_file"] = serde_json::json!(out.display().to_string());
        value["csv_file"] = serde_json::json!(args.csv.as_ref().map(|c| c.display().to_string()));
        value["wall_time_s"] = serde_json::json!(wall);
        value["passed"] = serde_json::json!(record.passed());
        outln!("{}", serde_json::to_string_pretty(&value)?);
    } else if !args.quiet {
        out!("{}", summary(&record, wall, &out));
    }
    if let RunStatus::Failed { message, time_s } = &record.status {
        eprintln!(
            "error: the run failed at t = {} s: {message}\n  (results kept in {}, status `failed`)",
            fmt_num(*time_s, 4),
            out.display()
        );
    }
    Ok(if record.passed() {
        Outcome::Success
    } else {
        Outcome::Failed
    })
}

/// `results/<script stem>.h5`.
fn default_out(script: &Path) -> PathBuf {
    let stem = script
        .file_stem()
        .map(|s| s.to_string_lossy().into_owned())
        .unwrap_or_else(|| "run".into());
    Path::new("results").join(format!("{stem}.h5"))
}

/// The printed summary: status, durations, metrics and criteria.
fn summary(record: &RunRecord, wall: f64, out: &Path) -> String {
    let n = |v: f64| fmt_num(v, 4);
    let sim = record.duration_s();
    let mut t = Table::new(["item", "value"]);
    let status = match &record.status {
        RunStatus::Completed => "completed".to_string(),
        RunStatus::Failed { message, time_s } => {
            format!("FAILED at t = {} s: {message}", n(*time_s))
        }
    };
    t.row(["status", &status]);
    t.row(["simulated", &format!("{} s", n(sim))]);
    t.row(["wall time", &format!("{} s", n(wall))]);
    t.row([
        "real-time factor",
        &n(if wall > 0.0 { sim / wall } else { f64::NAN }),
    ]);
    t.row(["results file", &out.display().to_string()]);
    let mut text = t.render();
    if !record.metrics.is_empty() {
        let mut m = Table::new(["metric", "value", "unit"]);
        for metric in &record.metrics {
            m.row([metric.name.as_str(), &n(metric.value), metric.unit.as_str()]);
        }
        text.push('\n');
        text.push_str(&m.render());
    }
    if !record.criteria.is_empty() {
        let limit = |v: Option<f64>| v.map_or_else(|| "-".to_string(), n);
        let mut c = Table::new(["criterion", "value", "lower", "upper", "result"]);
        for crit in &record.criteria {
            c.row([
                crit.name.as_str(),
                &n(crit.value),
                &limit(crit.lower),
                &limit(crit.upper),
                if crit.passed { "PASS" } else { "FAIL" },
            ]);
        }
        text.push('\n');
        text.push_str(&c.render());
    }
    // Notes the script kept (e.g. why a metric is NaN).
    let notes: Vec<String> = record
        .provenance
        .extra
        .iter()
        .filter_map(|(k, v)| k.strip_prefix("note.").map(|k| format!("note {k}: {v}\n")))
        .collect();
    if !notes.is_empty() {
        text.push('\n');
        text.push_str(&notes.concat());
    }
    text
}
