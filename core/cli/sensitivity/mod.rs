//! `yawdyn sensitivity [SCRIPT] --metric NAME ...`: rank vehicle parameters
//! by the elasticity of a script metric, a vehicle figure or a stability
//! figure (method: [`yawdyn::sensitivity`]). The perturbed cases run on the
//! sweep engine ([`yawdyn::sweep::run_cases`]) with the sweep's script case
//! runner.

use std::path::{Path, PathBuf};
use std::time::Instant;

use anyhow::Context;
use serde::Serialize;
use yawdyn::assets::{resolve_script, resolve_vehicle};
use yawdyn::params::{GRAVITY, Override, load_vehicle_text, read_text_file, read_vehicle_file};
use yawdyn::plot::{SensitivityBar, SensitivityPanel, sensitivity_bars};
use yawdyn::results::{RunRecord, RunStatus};
use yawdyn::script::{Limits, MAX_SCRIPT_FILE_BYTES, RunOptions, run_script};
use yawdyn::sensitivity::{
    CaseOutcome, DEFAULT_STEP, FileInfo, OperatingPoint, Plan, Quantity, Ranking, SensitivityError,
    Skipped, evaluate, quantity_case, rank, vehicle_parameters, write_sensitivity,
};
use yawdyn::sweep::{CaseList, Shard, SweepOptions, run_cases};
use yawdyn::table::{Table, fmt_num};

use super::run::BudgetArgs;

mod report;
use super::sweep::{case_progress, script_case_runner};
use super::{Outcome, bad_input, parse_overrides};
use report::{draw, print_json, print_tables};

/// Arguments of `yawdyn sensitivity`.
#[derive(Debug, clap::Args)]
pub struct Args {
    /// Manoeuvre script (.rhai) or the name of a shipped script, for script
    /// metrics; leave out for `vehicle.*` and `stability.*` quantities.
    script: Option<PathBuf>,
    /// Metric to rank by (repeatable or comma-separated): a metric of the
    /// script's `evaluate(ch)`, `vehicle.<field>` (a figure of `yawdyn
    /// vehicle --json`, e.g. `vehicle.understeer_gradient_deg_per_g`) or
    /// `stability.<name>` at --speed-kph/--lat-accel-g (e.g.
    /// `stability.yaw_damping_ratio`).
    #[arg(
        long = "metric",
        value_delimiter = ',',
        value_name = "NAME",
        required = true
    )]
    metrics: Vec<String>,
    /// Vehicle file or demo vehicle name: replaces the script's own; needed
    /// for quantities without a script.
    #[arg(long)]
    vehicle: Option<PathBuf>,
    /// Override a vehicle (or `manoeuvre.<name>`) parameter in every case,
    /// base case included (repeatable).
    #[arg(long = "set", value_name = "KEY=VALUE")]
    sets: Vec<String>,
    /// Parameters to perturb, dotted keys, comma-separated (default: every
    /// numeric key of the resolved vehicle file).
    #[arg(long, value_delimiter = ',', value_name = "A,B,...")]
    params: Option<Vec<String>>,
    /// Relative step h: each parameter runs at p*(1+h) and p*(1-h).
    #[arg(long, default_value_t = DEFAULT_STEP)]
    step: f64,
    /// Speed of the operating point of stability quantities, km/h.
    #[arg(long)]
    speed_kph: Option<f64>,
    /// Lateral acceleration of the operating point of stability quantities, g.
    #[arg(long, allow_hyphen_values = true)]
    lat_accel_g: Option<f64>,
    /// Worker threads (default: the available parallelism).
    #[arg(long)]
    jobs: Option<usize>,
    /// Rows per metric in the table and the plot (0: all).
    #[arg(long, default_value_t = 20)]
    top: usize,
    /// Write the ranking to this HDF5 file.
    #[arg(long, value_name = "FILE.h5")]
    out: Option<PathBuf>,
    /// Draw the ranking as a bar chart to this SVG file.
    #[arg(long, value_name = "FILE.svg")]
    plot: Option<PathBuf>,
    /// Print JSON instead of tables.
    #[arg(long)]
    json: bool,
    /// No progress bar.
    #[arg(long)]
    quiet: bool,
    /// Budgets of each script run.
    #[command(flatten)]
    budgets: BudgetArgs,
}

/// What the cases compute.
enum Source {
    /// Script metrics: the script and its run budgets.
    Script { path: PathBuf, limits: Limits },
    /// Quantities of the vehicle file (text read once).
    Quantities {
        text: String,
        path: PathBuf,
        quantities: Vec<Quantity>,
        point: Option<OperatingPoint>,
    },
}

/// The checked form of [`Args`].
struct Config {
    source: Source,
    metrics: Vec<String>,
    vehicle: Option<PathBuf>,
    base_overrides: Vec<Override>,
    params: Option<Vec<String>>,
    step: f64,
    jobs: usize,
    top: usize,
    out: Option<PathBuf>,
    plot: Option<PathBuf>,
    json: bool,
    quiet: bool,
}

/// The JSON document of `--json`.
#[derive(Serialize)]
struct Report<'a> {
    step: f64,
    script: Option<String>,
    vehicle: Option<String>,
    overrides: Vec<String>,
    operating_point: Option<PointJson>,
    parameters: usize,
    cases: usize,
    failed_cases: usize,
    rankings: Vec<RankingJson<'a>>,
    skipped: &'a [Skipped],
}

/// The operating point in the units of the options.
#[derive(Serialize)]
struct PointJson {
    speed_kph: f64,
    lat_accel_g: f64,
}

/// One ranking, estimates in rank order.
#[derive(Serialize)]
struct RankingJson<'a> {
    metric: &'a str,
    unit: &'a str,
    base: f64,
    estimates: Vec<&'a yawdyn::sensitivity::Estimate>,
    failures: &'a [yawdyn::sensitivity::Failure],
}

/// Runs `yawdyn sensitivity`.
pub fn run(mut args: Args) -> anyhow::Result<Outcome> {
    args.script = args.script.map(|s| resolve_script(&s)).transpose()?;
    args.vehicle = args.vehicle.map(|v| resolve_vehicle(&v)).transpose()?;
    let config = check(args)?;
    for path in config.out.iter().chain(&config.plot) {
        yawdyn::results::check_output_path(path)?;
    }
    let started = Instant::now();
    // The base case on this thread: its errors keep their kind, and it gives
    // the metrics' names, units, base values and the resolved parameters.
    let base = run_base(&config)?;
    let mut bases = Vec::with_capacity(config.metrics.len());
    for name in &config.metrics {
        bases.push(base_metric(&base, name)?);
    }
    let candidates = vehicle_parameters(&base.provenance.vehicle_toml)?;
    let plan = Plan::new(
        &candidates,
        config.params.as_deref(),
        config.base_overrides.clone(),
        config.step,
    )?;

    // The perturbed cases, in parallel on the sweep engine.
    let outcomes = run_plan(&config, &plan)?;
    let rankings: Vec<Ranking> = bases
        .iter()
        .map(|(name, unit, value)| rank(name, unit, *value, &plan, &outcomes))
        .collect();
    let case_status: Vec<Result<(), String>> = outcomes
        .iter()
        .map(|o| o.result.as_ref().map(|_| ()).map_err(Clone::clone))
        .collect();
    let failed_cases = case_status.iter().filter(|s| s.is_err()).count();

    if let Some(path) = &config.out {
        let info = file_info(&config, &base, case_status.clone())?;
        write_sensitivity(path, &plan, &rankings, &info)?;
    }
    if let Some(path) = &config.plot {
        draw(path, &config, &plan, &rankings)?;
    }
    if config.json {
        print_json(&config, &plan, &rankings, failed_cases)?;
    } else {
        print_tables(&config, &plan, &rankings, failed_cases);
    }
    // Timing goes to standard error: standard output depends on the inputs only.
    eprintln!(
        "{} cases in {} s on {} threads",
        plan.len() + 1,
        fmt_num(started.elapsed().as_secs_f64(), 3),
        config.jobs
    );
    Ok(if failed_cases == 0 {
        Outcome::Success
    } else {
        Outcome::Failed
    })
}

/// Validates the raw options into a [`Config`] (bad input names the option).
fn check(args: Args) -> anyhow::Result<Config> {
    let metrics: Vec<String> = args.metrics.iter().map(|m| m.trim().to_string()).collect();
    if metrics.iter().any(String::is_empty) {
        return Err(bad_input("--metric: empty name in the list"));
    }
    let mut quantities = Vec::new();
    let mut script_metrics = Vec::new();
    for name in &metrics {
        match Quantity::parse(name) {
            Some(Ok(q)) => quantities.push(q),
            Some(Err(reason)) => {
                return Err(SensitivityError::UnknownMetric {
                    name: name.clone(),
                    reason,
                }
                .into());
            }
            None => script_metrics.push(name.clone()),
        }
    }
    if !quantities.is_empty() && !script_metrics.is_empty() {
        return Err(bad_input(format!(
            "--metric: `{}` is a script metric and `{}` a vehicle or stability quantity; rank them in separate runs",
            script_metrics[0],
            quantities[0].name()
        )));
    }
    let needs_point = quantities.iter().any(Quantity::needs_operating_point);
    let point = match (args.speed_kph, args.lat_accel_g) {
        (Some(v), Some(a)) if needs_point => {
            if !(v.is_finite() && v > 0.0 && a.is_finite()) {
                return Err(bad_input(
                    "--speed-kph must be a positive number and --lat-accel-g finite",
                ));
            }
            Some(OperatingPoint {
                speed: v / 3.6,
                lat_accel: a * GRAVITY,
            })
        }
        (None, _) | (_, None) if needs_point => {
            return Err(bad_input(
                "stability quantities need the operating point: give --speed-kph and --lat-accel-g",
            ));
        }
        (None, None) => None,
        _ => {
            return Err(bad_input(
                "--speed-kph and --lat-accel-g apply to stability.* metrics only",
            ));
        }
    };
    let source = match (&args.script, quantities.is_empty()) {
        (Some(script), true) => Source::Script {
            path: script.clone(),
            limits: args.budgets.limits()?,
        },
        (None, true) => {
            return Err(bad_input(format!(
                "--metric {}: a script metric needs a script (or use vehicle.* / stability.* quantities with --vehicle)",
                script_metrics[0]
            )));
        }
        (Some(_), false) => {
            return Err(bad_input(
                "vehicle.* and stability.* quantities need no script: give --vehicle instead",
            ));
        }
        (None, false) => {
            let Some(path) = args.vehicle.clone() else {
                return Err(bad_input(
                    "vehicle.* and stability.* quantities need --vehicle FILE",
                ));
            };
            let text = read_vehicle_file(&path)?;
            Source::Quantities {
                text,
                path,
                quantities,
                point,
            }
        }
    };
    let jobs = match args.jobs {
        Some(0) => return Err(bad_input("--jobs 0: need at least one worker thread")),
        Some(n) => n,
        None => std::thread::available_parallelism().map_or(1, |n| n.get()),
    };
    if !(args.step > 0.0 && args.step <= yawdyn::sensitivity::MAX_STEP) {
        return Err(SensitivityError::Step(args.step).into());
    }
    if let Some(vehicle) = &args.vehicle
        && !vehicle.is_file()
    {
        return Err(bad_input(format!(
            "--vehicle {}: no such file",
            vehicle.display()
        )));
    }
    let params = args
        .params
        .map(|list| list.iter().map(|p| p.trim().to_string()).collect());
    Ok(Config {
        source,
        metrics,
        vehicle: args.vehicle,
        base_overrides: parse_overrides(&args.sets)?,
        params,
        step: args.step,
        jobs,
        top: args.top,
        out: args.out,
        plot: args.plot,
        json: args.json,
        quiet: args.quiet,
    })
}

/// Runs the base case (no perturbation) on this thread; its errors keep
/// their kind (a script that does not parse, an invalid `--set`: exit 2).
fn run_base(config: &Config) -> anyhow::Result<RunRecord> {
    match &config.source {
        Source::Script { path, limits } => {
            let options = RunOptions {
                vehicle: config.vehicle.clone(),
                overrides: config.base_overrides.clone(),
                progress: None,
                limits: *limits,
            };
            let record = run_script(path, &options)?;
            if let RunStatus::Failed { message, .. } = &record.status {
                return Err(SensitivityError::BaseFailed(message.clone()).into());
            }
            Ok(record)
        }
        Source::Quantities {
            text,
            path,
            quantities,
            point,
        } => {
            // Typed errors of the vehicle file first; then the quantities.
            let vehicle = load_vehicle_text(text, path, &config.base_overrides)?;
            evaluate(&vehicle, quantities, *point).map_err(SensitivityError::BaseFailed)?;
            quantity_case(text, path, &config.base_overrides, quantities, *point)
                .map_err(|m| SensitivityError::BaseFailed(m).into())
        }
    }
}

/// Name, unit and value of metric `name` in the base case: unknown names
/// are bad input, a metric without a finite value a failed base case.
fn base_metric(base: &RunRecord, name: &str) -> Result<(String, String, f64), SensitivityError> {
    let Some(metric) = base.metrics.iter().find(|m| m.name == name) else {
        let known: Vec<&str> = base.metrics.iter().map(|m| m.name.as_str()).collect();
        let reason = if known.is_empty() {
            "the script reports no metrics".to_string()
        } else {
            format!(
                "not a metric of the script; it reports: {}",
                known.join(", ")
            )
        };
        return Err(SensitivityError::UnknownMetric {
            name: name.to_string(),
            reason,
        });
    };
    if !metric.value.is_finite() {
        return Err(SensitivityError::BaseFailed(format!(
            "metric `{name}` is {} in the base case",
            metric.value
        )));
    }
    Ok((metric.name.clone(), metric.unit.clone(), metric.value))
}

/// Runs every case of `plan` on the sweep engine and returns their
/// outcomes in case order.
fn run_plan(config: &Config, plan: &Plan) -> anyhow::Result<Vec<CaseOutcome>> {
    let progress = case_progress("sensitivity", plan.len(), config.quiet);
    let tick = || progress.inc();
    let options = SweepOptions {
        jobs: config.jobs,
        shard: Shard::WHOLE,
        progress: Some(&tick),
    };
    let mut outcomes = Vec::with_capacity(plan.len());
    let mut collect = |case: yawdyn::sweep::SweepCase| {
        outcomes.push(CaseOutcome::of_case(&case));
        Ok(())
    };
    match &config.source {
        Source::Script { path, limits } => {
            let runner = script_case_runner(path, config.vehicle.as_deref(), *limits);
            run_cases(plan, 0..plan.len(), &options, &runner, &mut collect)?;
        }
        Source::Quantities {
            text,
            path,
            quantities,
            point,
        } => {
            let runner =
                |overrides: &[Override]| quantity_case(text, path, overrides, quantities, *point);
            run_cases(plan, 0..plan.len(), &options, &runner, &mut collect)?;
        }
    }
    progress.finish();
    Ok(outcomes)
}

/// Provenance of the HDF5 file.
fn file_info(
    config: &Config,
    base: &RunRecord,
    case_status: Vec<Result<(), String>>,
) -> anyhow::Result<FileInfo> {
    let (script_path, script_text, point) = match &config.source {
        Source::Script { path, .. } => (
            path.display().to_string(),
            read_text_file(path, None, MAX_SCRIPT_FILE_BYTES)
                .with_context(|| format!("cannot read script {}", path.display()))?,
            None,
        ),
        Source::Quantities { point, .. } => (String::new(), String::new(), *point),
    };
    Ok(FileInfo {
        script_path,
        script_text,
        vehicle_path: config
            .vehicle
            .as_ref()
            .map_or_else(String::new, |v| v.display().to_string()),
        vehicle_toml: base.provenance.vehicle_toml.clone(),
        point,
        case_status,
    })
}
