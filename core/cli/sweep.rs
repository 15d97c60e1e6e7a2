//! `yawdyn sweep SCRIPT --vary key=start:stop:count ...`: one manoeuvre over a
//! full-factorial grid of vehicle parameters, in parallel, into one sweep
//! file (layout: [`yawdyn::sweep`]).

use std::path::{Path, PathBuf};

use anyhow::Context;
use serde_json::{Value, json};
use yawdyn::assets::{resolve_script, resolve_vehicle};
use yawdyn::params::{Override, ParamError, read_text_file};
use yawdyn::results::RunRecord;
use yawdyn::script::{
    Limits, MANOEUVRE_PREFIX, MAX_SCRIPT_FILE_BYTES, RunOptions, ScriptError, check_manoeuvre_keys,
    manoeuvre_parameter_units, run_script,
};
use yawdyn::sweep::{
    CaseStatus, Grid, Resume, Shard, SweepOptions, SweepReport, SweepSpec, VaryAxis,
    find_unfinished, resume_sweep,
};
use yawdyn::table::{Table, fmt_num};

use super::progress::{Progress, Unit};
use super::run::BudgetArgs;
use super::{Outcome, bad_input, parse_overrides};

/// Rows of the summary table printed before it is cut short.
const MAX_ROWS: usize = 20;
/// Metric columns printed before the rest are left to the file.
const MAX_METRICS: usize = 6;
/// Characters of a case message printed in the table.
const MAX_MESSAGE: usize = 60;

/// Arguments of `yawdyn sweep`.
#[derive(Debug, clap::Args)]
pub struct Args {
    /// Manoeuvre script (.rhai), or the name of a shipped script (`power_on_exit`).
    script: PathBuf,
    /// Varied parameter: dotted vehicle key (or `manoeuvre.<name>`), first value, last value, number
    /// of values (≥ 1), e.g. `drive.front_share=0:1:11`. Repeatable; the grid
    /// is full factorial with the first --vary varying slowest.
    #[arg(long = "vary", value_name = "KEY=START:STOP:COUNT")]
    vary: Vec<String>,
    /// Vehicle file replacing the script's own, or the name of a demo vehicle.
    #[arg(long)]
    vehicle: Option<PathBuf>,
    /// Override a vehicle parameter (or a `manoeuvre.<name>` parameter) in every
    /// case (repeatable; a --vary of the same key wins).
    #[arg(long = "set", value_name = "KEY=VALUE")]
    sets: Vec<String>,
    /// Worker threads (default: the available parallelism).
    #[arg(long)]
    jobs: Option<usize>,
    /// Sweep file to write. Default: results/<script name>_sweep.h5
    /// (results/<script name>_sweep_shard<K>of<N>.h5 with --shard).
    #[arg(long)]
    out: Option<PathBuf>,
    /// Run only the K-th (1-based) of N contiguous slices of the case list.
    #[arg(long, value_name = "K/N")]
    shard: Option<String>,
    /// Channels to store per case, comma-separated (default: all).
    #[arg(long, value_delimiter = ',', value_name = "A,B,...")]
    channels: Option<Vec<String>>,
    /// Take up the finished cases of a stopped sweep to the same --out (its
    /// unfinished file, kept on Ctrl-C, SIGTERM or SIGHUP and left by a
    /// SIGKILL) and run only the others. Every option must equal the
    /// stopped sweep's (exit 2 naming what differs). Without an unfinished
    /// file, every case runs.
    #[arg(long)]
    resume: bool,
    /// No progress bar or progress lines.
    #[arg(long)]
    quiet: bool,
    /// Print a JSON summary (status counts, grid with units, metric ranges,
    /// output file, times) instead of the table; no progress.
    #[arg(long)]
    json: bool,
    /// Budgets of each case.
    #[command(flatten)]
    budgets: BudgetArgs,
}

/// The checked form of [`Args`].
struct Config {
    spec: SweepSpec,
    script: PathBuf,
    vehicle: Option<PathBuf>,
    shard: Shard,
    jobs: usize,
    out: PathBuf,
    resume: bool,
    quiet: bool,
    json: bool,
    limits: Limits,
}

/// Most worker threads `--jobs` accepts.
const MAX_JOBS: usize = 1024;

/// Runs `yawdyn sweep`.
pub fn run(mut args: Args) -> anyhow::Result<Outcome> {
    args.script = resolve_script(&args.script)?;
    args.vehicle = args.vehicle.map(|v| resolve_vehicle(&v)).transpose()?;
    let mut config = check(args)?;
    // Every manoeuvre.* key is a parameter the script reads (bad input before any case).
    let keys = config.spec.grid.keys();
    let sets = config.spec.base_overrides.iter().map(|o| o.path.as_str());
    let text = &config.spec.script_text;
    check_manoeuvre_keys(
        text,
        &config.script,
        keys.iter().map(String::as_str).chain(sets),
    )?;
    // The script and vehicle are inputs that no output may replace.
    yawdyn::output::note_input(&config.script);
    if let Some(vehicle) = &config.vehicle {
        yawdyn::output::note_input(vehicle);
    }
    super::check_outputs(&[config.out.as_path()])?;
    // Units of the manoeuvre parameters, from `param(name, default, unit)`.
    let units = manoeuvre_parameter_units(text, &config.script)?;
    for axis in &mut config.spec.grid.axes {
        if let Some(name) = axis.key.strip_prefix(MANOEUVRE_PREFIX)
            && let Some((_, unit)) = units.iter().find(|(n, _)| n == name)
        {
            axis.unit = unit.clone();
        }
    }
    let vehicle = preflight(&config)?;
    // The vehicle file the cases start from: --vehicle, else the script's own.
    if let Some(path) = config.vehicle.clone().or(vehicle) {
        config.spec.vehicle_toml = yawdyn::params::read_vehicle_file(&path)
            .with_context(|| format!("cannot read vehicle file {}", path.display()))?;
    }
    let runner = script_case_runner(&config.script, config.vehicle.as_deref(), config.limits);
    // The stopped sweep to take up, checked before any case runs.
    let unfinished = if config.resume {
        let found = find_unfinished(&config.out)?;
        match &found {
            Some(from) => from.check_matches(&config.spec, config.shard)?,
            None => eprintln!(
                "sweep: no unfinished sweep to {} to take up; running every case",
                config.out.display()
            ),
        }
        found
    } else {
        None
    };

    let range = config.shard.range(config.spec.grid.len());
    let progress = case_progress("sweep", range.len(), config.quiet || config.json);
    if let Some(from) = &unfinished {
        progress.resume_at(from.cases as u64);
    }
    let tick = || progress.inc();
    let options = SweepOptions {
        jobs: config.jobs,
        shard: config.shard,
        progress: Some(&tick),
    };
    let note = format!(
        "sweep: stopped; its finished cases are kept. To go on, run: {}",
        resume_command()
    );
    let resume = Resume {
        from: unfinished.as_ref(),
        note_on_signal: Some(&note),
    };
    let report = resume_sweep(&config.spec, &options, &runner, &config.out, &resume)?;
    progress.finish();
    if config.json {
        outln!(
            "{}",
            serde_json::to_string_pretty(&report_json(&config, &report))?
        );
    } else {
        print_report(&config, &report);
    }
    Ok(if report.failed() == 0 {
        Outcome::Success
    } else {
        Outcome::Failed
    })
}

/// This command as typed, with `--resume` (added when missing), quoted for
/// a POSIX shell where needed.
fn resume_command() -> String {
    let mut words: Vec<String> = std::env::args().collect();
    if !words.iter().skip(1).any(|w| w == "--resume") {
        words.push("--resume".to_string());
    }
    let quoted: Vec<String> = words.iter().map(|w| shell_word(w)).collect();
    quoted.join(" ")
}

/// `word` as one word of a POSIX shell: unchanged when it holds only
/// characters no shell treats specially, else in single quotes.
fn shell_word(word: &str) -> String {
    let plain = |c: char| c.is_ascii_alphanumeric() || "_-./=:,+@%".contains(c);
    if !word.is_empty() && word.chars().all(plain) {
        word.to_string()
    } else {
        format!("'{}'", word.replace('\'', "'\\''"))
    }
}

/// The progress of commands that run cases on the sweep engine: hidden with
/// `quiet`, a bar on a terminal, plain lines otherwise.
pub(super) fn case_progress(label: &'static str, cases: usize, quiet: bool) -> Progress {
    Progress::new(
        label,
        Unit::Items("cases"),
        cases as u64,
        quiet,
        "{elapsed_precise} [{bar:40}] {pos}/{len} cases, eta {eta}",
    )
}

/// Validates the raw options into a [`Config`] (bad input names the option).
fn check(args: Args) -> anyhow::Result<Config> {
    if args.vary.is_empty() {
        return Err(bad_input("give at least one --vary KEY=START:STOP:COUNT"));
    }
    let axes = args
        .vary
        .iter()
        .map(|text| VaryAxis::parse(text))
        .collect::<Result<Vec<_>, _>>()?;
    let grid = Grid::new(axes)?;
    let base_overrides = parse_overrides(&args.sets)?;
    let shard = match &args.shard {
        Some(text) => Shard::parse(text)?,
        None => Shard::WHOLE,
    };
    let jobs = match args.jobs {
        Some(0) => return Err(bad_input("--jobs 0: need at least one worker thread")),
        Some(n) if n > MAX_JOBS => {
            return Err(bad_input(format!(
                "--jobs {n}: at most {MAX_JOBS} worker threads (more only compete for the processors)"
            )));
        }
        Some(n) => n,
        None => std::thread::available_parallelism().map_or(1, |n| n.get()),
    };
    let channels = match args.channels {
        Some(list) => {
            let list: Vec<String> = list.iter().map(|c| c.trim().to_string()).collect();
            if list.iter().any(String::is_empty) {
                return Err(bad_input("--channels: empty channel name in the list"));
            }
            Some(list)
        }
        None => None,
    };
    let limits = args.budgets.limits()?;
    let script_text = read_text_file(&args.script, None, MAX_SCRIPT_FILE_BYTES)
        .with_context(|| format!("cannot read script {}", args.script.display()))?;
    if let Some(vehicle) = &args.vehicle
        && !vehicle.is_file()
    {
        return Err(bad_input(format!(
            "--vehicle {}: no such file",
            vehicle.display()
        )));
    }
    let stem = args.script.file_stem().map_or_else(
        || "script".to_string(),
        |s| s.to_string_lossy().into_owned(),
    );
    let out = args.out.unwrap_or_else(|| {
        let name = if shard == Shard::WHOLE {
            format!("{stem}_sweep.h5")
        } else {
            format!("{stem}_sweep_shard{}of{}.h5", shard.index, shard.count)
        };
        Path::new("results").join(name)
    });
    let spec = SweepSpec {
        script_path: args.script.display().to_string(),
        script_text,
        vehicle_path: args
            .vehicle
            .as_ref()
            .map_or_else(String::new, |v| v.display().to_string()),
        vehicle_toml: String::new(),
        base_overrides,
        grid,
        channels,
    };
    Ok(Config {
        spec,
        script: args.script,
        vehicle: args.vehicle,
        shard,
        jobs,
        out,
        resume: args.resume,
        quiet: args.quiet,
        json: args.json,
        limits,
    })
}

/// The case runner of the command line: the manoeuvre script runner
/// ([`run_script`]) with the case's overrides.
pub(super) fn script_case_runner<'a>(
    script: &'a Path,
    vehicle: Option<&'a Path>,
    limits: Limits,
) -> impl Fn(&[Override]) -> Result<RunRecord, String> + Sync + 'a {
    move |overrides| {
        let options = RunOptions {
            vehicle: vehicle.map(Path::to_path_buf),
            overrides: overrides.to_vec(),
            progress: None,
            limits,
        };
        run_script(script, &options).map_err(|e| with_causes(&e))
    }
}

/// An error and its chain of causes as one message (`error: cause: cause`).
fn with_causes(e: &dyn std::error::Error) -> String {
    let mut text = e.to_string();
    let mut source = e.source();
    while let Some(cause) = source {
        text.push_str(": ");
        text.push_str(&cause.to_string());
        source = cause.source();
    }
    text
}

/// Catches input errors common to every case before the sweep starts, so
/// they give exit code 2 and no file: the script must parse and run, and the
/// varied and `--set` keys must exist. Runs the first case of the shard once
/// on this thread (its result is discarded; the sweep runs it again) and
/// checks the channel selection against its output. Returns the vehicle
/// file that case used, when it ran.
fn preflight(config: &Config) -> anyhow::Result<Option<PathBuf>> {
    let range = config.shard.range(config.spec.grid.len());
    if range.is_empty() {
        return Ok(None);
    }
    let mut overrides = config.spec.base_overrides.clone();
    overrides.extend(config.spec.grid.overrides(range.start));
    let options = RunOptions {
        vehicle: config.vehicle.clone(),
        overrides,
        progress: None,
        limits: config.limits,
    };
    match run_script(&config.script, &options) {
        Ok(record) => {
            if let Some(wanted) = &config.spec.channels {
                for name in wanted {
                    if record.channel(name).is_none() {
                        let known: Vec<&str> =
                            record.channels.iter().map(|c| c.name.as_str()).collect();
                        return Err(bad_input(format!(
                            "--channels: the run has no channel `{name}`; it has: {}",
                            known.join(", ")
                        )));
                    }
                }
            }
            let vehicle = PathBuf::from(&record.provenance.vehicle_path);
            Ok(vehicle.is_file().then_some(vehicle))
        }
        Err(
            e @ (ScriptError::Read { .. }
            | ScriptError::Syntax { .. }
            | ScriptError::Vehicle {
                source: ParamError::Read { .. },
            }),
        ) => Err(e.into()),
        Err(ScriptError::Vehicle {
            source: ParamError::Invalid { issues, .. },
        }) if issues.iter().any(|i| is_key_problem(config, i)) => {
            let lines: Vec<String> = issues
                .iter()
                .filter(|i| is_key_problem(config, i))
                .map(|i| {
                    let option = if config.spec.grid.keys().contains(&i.path) {
                        "--vary"
                    } else if config.spec.base_overrides.iter().any(|o| o.path == i.path) {
                        "--set"
                    } else {
                        "vehicle file:"
                    };
                    let message = i
                        .message
                        .strip_prefix("(override `")
                        .and_then(|m| m.split_once("`) "))
                        .map_or(i.message.as_str(), |(_, rest)| rest);
                    format!("{option} {}: {message}", i.path)
                })
                .collect();
            Err(bad_input(lines.join("\n")))
        }
        // Anything else may depend on the case's values: the sweep records it per case.
        Err(_) => Ok(None),
    }
}

/// A parameter problem that every case shares: an unknown key anywhere, or a
/// varied key that does not take a number.
fn is_key_problem(config: &Config, issue: &yawdyn::params::ParamIssue) -> bool {
    issue.message.contains("unknown key")
        || (issue.message.contains("wrong type") && config.spec.grid.keys().contains(&issue.path))
}

/// The JSON summary of a sweep (`--json`): `out`, `cases`, `shard` (`[K,
/// N]`), `case_total`, `jobs`, `status_counts`, `failed` (cases not
/// completed and passed), `grid` (`{key, unit, start, stop, count}`),
/// `metrics` (`{name, units, min, max, cases}`), `wall_time_s`,
/// `writer_cpu_s`, `resumed` (cases taken from a stopped sweep's
/// unfinished file, not run again). Non-finite numbers are null.
fn report_json(config: &Config, report: &SweepReport) -> Value {
    let number = |x: f64| serde_json::Number::from_f64(x).map_or(Value::Null, Value::Number);
    let s = &report.summary;
    let count = |status: CaseStatus| s.status.iter().filter(|&&x| x == status).count();
    let statuses = [
        CaseStatus::Completed,
        CaseStatus::CriteriaFailed,
        CaseStatus::Failed,
        CaseStatus::Error,
    ];
    let counts: serde_json::Map<String, Value> = statuses
        .iter()
        .map(|&st| (st.name().to_string(), json!(count(st))))
        .collect();
    let metrics: Vec<Value> = s
        .metrics
        .iter()
        .map(|m| {
            let finite = m.values.iter().copied().filter(|v| v.is_finite());
            let lo = finite.clone().fold(f64::NAN, f64::min);
            let hi = finite.clone().fold(f64::NAN, f64::max);
            json!({"name": m.name, "units": m.unit, "min": number(lo), "max": number(hi),
                   "cases": finite.count()})
        })
        .collect();
    let grid: Vec<Value> = config
        .spec
        .grid
        .axes
        .iter()
        .map(|a| {
            json!({"key": a.key, "unit": a.unit, "start": number(a.start),
                   "stop": number(a.stop), "count": a.count})
        })
        .collect();
    json!({
        "out": report.out.display().to_string(),
        "cases": s.len(),
        "shard": [config.shard.index, config.shard.count],
        "case_total": config.spec.grid.len(),
        "jobs": config.jobs,
        "status_counts": counts,
        "failed": report.failed(),
        "grid": grid,
        "metrics": metrics,
        "wall_time_s": number(report.wall_time_s),
        "writer_cpu_s": number(report.writer_cpu_s),
        "resumed": report.resumed,
    })
}

/// Prints the summary table (parameters × metrics × status) and the totals.
fn print_report(config: &Config, report: &SweepReport) {
    let s = &report.summary;
    let metrics = &s.metrics[..s.metrics.len().min(MAX_METRICS)];
    let mut headers = vec!["case".to_string()];
    headers.extend(s.parameters.iter().map(|(k, _)| k.clone()));
    headers.extend(metrics.iter().map(|m| {
        if m.unit.is_empty() {
            m.name.clone()
        } else {
            format!("{} [{}]", m.name, m.unit)
        }
    }));
    headers.push("status".into());
    let with_message = s.message[..s.len().min(MAX_ROWS)]
        .iter()
        .any(|m| !m.is_empty());
    if with_message {
        headers.push("message".into());
    }
    let mut table = Table::new(headers);
    for row in 0..s.len().min(MAX_ROWS) {
        let mut cells = vec![s.case_index[row].to_string()];
        cells.extend(s.parameters.iter().map(|(_, v)| fmt_num(v[row], 4)));
        cells.extend(metrics.iter().map(|m| fmt_num(m.values[row], 4)));
        cells.push(s.status[row].name().to_string());
        let message = &s.message[row];
        if !with_message {
            table.row(cells);
            continue;
        }
        cells.push(if message.chars().count() > MAX_MESSAGE {
            let cut: String = message.chars().take(MAX_MESSAGE - 1).collect();
            format!("{}…", cut.replace('\n', " "))
        } else {
            message.replace('\n', " ")
        });
        table.row(cells);
    }
    out!("{}", table.render());
    if s.len() > MAX_ROWS {
        outln!(
            "... {} more cases not shown (all are in /summary of {})",
            s.len() - MAX_ROWS,
            report.out.display()
        );
    }
    if s.metrics.len() > MAX_METRICS {
        outln!(
            "... {} more metrics not shown",
            s.metrics.len() - MAX_METRICS
        );
    }
    let count = |status: CaseStatus| s.status.iter().filter(|&&x| x == status).count();
    outln!(
        "cases: {} (shard {} of {} in the grid), completed: {}, criteria failed: {}, run failed: {}, error: {}",
        s.len(),
        config.shard,
        config.spec.grid.len(),
        count(CaseStatus::Completed),
        count(CaseStatus::CriteriaFailed),
        count(CaseStatus::Failed),
        count(CaseStatus::Error)
    );
    if report.resumed > 0 {
        outln!(
            "resumed: {} cases taken from the stopped sweep, {} run now",
            report.resumed,
            s.len() - report.resumed
        );
    }
    outln!(
        "wall time: {} s on {} threads (writing {} s CPU); written to {}",
        fmt_num(report.wall_time_s, 3),
        config.jobs,
        fmt_num(report.writer_cpu_s, 3),
        report.out.display()
    );
}
