//! `yawdyn check RESULT --against BASELINE [--rtol R] [--atol A] [--update]
//! [--json] [--junit FILE]`: regression check of a results file against a
//! baseline results file; `yawdyn check --all DIR [--junit FILE]` reruns
//! every baseline in a folder and checks each against its rerun.
//!
//! Exit 0 when everything is within tolerance (or after `--update`), 1 when
//! anything is outside it or the run status differs (with `--all`: also when
//! a baseline could not be rerun), 2 when a file cannot be read as a yawdyn
//! results file or an option is bad. The comparison rule is documented in
//! [`yawdyn::check`].

use std::path::{Path, PathBuf};
use std::time::Instant;

use anyhow::Context;
use yawdyn::assets::resolve_script;
use yawdyn::check::junit::{JunitCase, JunitOutcome, junit_xml, write_junit};
use yawdyn::check::{
    Alignment, Comparison, Deviation, Tolerance, compare, compare_files, update_baseline,
};
use yawdyn::params::Override;
use yawdyn::results::{RunRecord, read_hdf5};
use yawdyn::script::{RunOptions, run_script};
use yawdyn::table::{Table, fmt_num};

use super::{Outcome, bad_input};

/// Rows of the deviation table printed when everything passes.
const SHOW_PASSING: usize = 5;
/// Most failing rows printed (all are in `--json`).
const SHOW_FAILING: usize = 20;

/// Arguments of `yawdyn check`.
#[derive(Debug, clap::Args)]
pub struct Args {
    /// Results file to check (HDF5, from `yawdyn run`).
    #[arg(required_unless_present = "all")]
    result: Option<PathBuf>,
    /// Baseline results file to compare against.
    #[arg(long, value_name = "BASELINE", required_unless_present = "all")]
    against: Option<PathBuf>,
    /// Rerun every baseline (`*.h5` results file) in this folder: its script
    /// (from the file's provenance, or the shipped script of that name) with
    /// its overrides and manoeuvre parameters, then check the rerun against
    /// the baseline.
    #[arg(long, value_name = "DIR", conflicts_with_all = ["result", "against", "update"])]
    all: Option<PathBuf>,
    /// Also write a JUnit XML report (one test case per check) to this file.
    #[arg(long, value_name = "FILE.xml")]
    junit: Option<PathBuf>,
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
    if let Some(junit) = &args.junit {
        yawdyn::results::check_output_path(junit)?;
    }
    if let Some(dir) = &args.all {
        return check_all(dir, tolerance, &args);
    }
    let (Some(result), Some(against)) = (&args.result, &args.against) else {
        return Err(bad_input("give RESULT --against BASELINE, or --all DIR"));
    };
    if args.update {
        update_baseline(result, against)?;
        outln!(
            "baseline {} replaced by {}",
            against.display(),
            result.display()
        );
        return Ok(Outcome::Success);
    }
    let started = Instant::now();
    let cmp = compare_files(result, against, tolerance)?;
    if let Some(junit) = &args.junit {
        let name = against
            .file_stem()
            .map_or_else(String::new, |s| s.to_string_lossy().into_owned());
        let case = junit_case(&name, against, started, &cmp);
        let suite = against.display().to_string();
        write_junit(
            junit,
            &junit_xml(&suite, &yawdyn::sweep::utc_now(), &[case]),
        )?;
    }
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

/// The JUnit test case of one comparison.
fn junit_case(name: &str, baseline: &Path, started: Instant, cmp: &Comparison) -> JunitCase {
    let text = report(cmp);
    JunitCase {
        name: name.to_string(),
        classname: baseline.display().to_string(),
        time_s: started.elapsed().as_secs_f64(),
        outcome: if cmp.passed() {
            JunitOutcome::Passed
        } else {
            JunitOutcome::Failed(text.lines().last().unwrap_or("FAIL").to_string())
        },
        output: text,
    }
}

/// The baselines of `dir`: its `*.h5` files, sorted by name.
fn baselines_in(dir: &Path) -> anyhow::Result<Vec<PathBuf>> {
    let entries = std::fs::read_dir(dir)
        .with_context(|| format!("--all {}: cannot list the folder", dir.display()))?;
    let mut files: Vec<PathBuf> = entries
        .filter_map(|e| e.ok().map(|e| e.path()))
        .filter(|p| p.is_file() && p.extension().is_some_and(|x| x == "h5"))
        .collect();
    files.sort();
    if files.is_empty() {
        return Err(bad_input(format!(
            "--all {}: no baseline (*.h5) in the folder",
            dir.display()
        )));
    }
    Ok(files)
}

/// Reruns the run a baseline records: its script (the provenance's
/// `script_path`, else the shipped script named like the file), its
/// overrides and its manoeuvre parameters (`param.<name>` in the
/// provenance's extra values).
fn rerun(baseline: &Path) -> anyhow::Result<(RunRecord, RunRecord)> {
    let base = read_hdf5(baseline)
        .with_context(|| format!("cannot read baseline {}", baseline.display()))?;
    let prov = &base.provenance;
    let stem = baseline
        .file_stem()
        .map_or_else(String::new, |s| s.to_string_lossy().into_owned());
    let script = resolve_script(Path::new(&prov.script_path))
        .or_else(|_| resolve_script(Path::new(&stem)))
        .with_context(|| format!("no script {} (nor a shipped {stem})", prov.script_path))?;
    let mut overrides = prov
        .overrides
        .iter()
        .map(|text| Override::parse(text).with_context(|| format!("override {text}")))
        .collect::<anyhow::Result<Vec<_>>>()?;
    for (key, value) in &prov.extra {
        if let Some(name) = key.strip_prefix("param.") {
            let text = format!("{}{name}={value}", yawdyn::script::MANOEUVRE_PREFIX);
            overrides.push(Override::parse(&text).with_context(|| format!("parameter {text}"))?);
        }
    }
    let options = RunOptions {
        vehicle: None,
        overrides,
        progress: None,
        limits: yawdyn::script::Limits::default(),
    };
    let record =
        run_script(&script, &options).with_context(|| format!("rerunning {}", script.display()))?;
    Ok((record, base))
}

/// `check --all DIR`: every baseline rerun and checked, a table, the JUnit
/// report when asked; exit 1 when any check failed or could not be done.
fn check_all(dir: &Path, tolerance: Tolerance, args: &Args) -> anyhow::Result<Outcome> {
    tolerance.validate().map_err(bad_input)?;
    let baselines = baselines_in(dir)?;
    let mut cases = Vec::with_capacity(baselines.len());
    let mut table = Table::new([
        "baseline", "verdict", "items", "outside", "time [s]", "note",
    ]);
    let mut results = Vec::new();
    for baseline in &baselines {
        let started = Instant::now();
        let name = baseline
            .file_stem()
            .map_or_else(String::new, |s| s.to_string_lossy().into_owned());
        let case = match rerun(baseline) {
            Ok((record, base)) => {
                let cmp = compare(&record, &base, tolerance);
                let failing = cmp.failures().count();
                let case = junit_case(&name, baseline, started, &cmp);
                let note = match &case.outcome {
                    JunitOutcome::Failed(m) => m.clone(),
                    _ => String::new(),
                };
                table.row([
                    name.clone(),
                    if cmp.passed() { "PASS" } else { "FAIL" }.to_string(),
                    cmp.deviations.len().to_string(),
                    failing.to_string(),
                    fmt_num(case.time_s, 3),
                    note,
                ]);
                let mut value = serde_json::to_value(&cmp)?;
                value["passed"] = serde_json::Value::Bool(cmp.passed());
                value["baseline"] = serde_json::json!(baseline.display().to_string());
                results.push(value);
                case
            }
            Err(e) => {
                let message = format!("{e:#}");
                table.row([
                    name.clone(),
                    "ERROR".to_string(),
                    "-".to_string(),
                    "-".to_string(),
                    fmt_num(started.elapsed().as_secs_f64(), 3),
                    message.clone(),
                ]);
                results.push(serde_json::json!({
                    "baseline": baseline.display().to_string(),
                    "passed": false,
                    "error": message,
                }));
                JunitCase {
                    name,
                    classname: baseline.display().to_string(),
                    time_s: started.elapsed().as_secs_f64(),
                    outcome: JunitOutcome::Error(message.clone()),
                    output: message,
                }
            }
        };
        cases.push(case);
    }
    let passed = cases
        .iter()
        .filter(|c| c.outcome == JunitOutcome::Passed)
        .count();
    if let Some(junit) = &args.junit {
        let xml = junit_xml(
            &dir.display().to_string(),
            &yawdyn::sweep::utc_now(),
            &cases,
        );
        write_junit(junit, &xml)?;
    }
    if args.json {
        let value = serde_json::json!({
            "folder": dir.display().to_string(),
            "checked": cases.len(),
            "passed": passed,
            "results": results,
        });
        outln!("{}", serde_json::to_string_pretty(&value)?);
    } else {
        outln!(
            "rule: |result - baseline| <= atol + rtol*|baseline|, rtol {}, atol {}",
            tolerance.rtol,
            tolerance.atol
        );
        out!("{}", table.render());
        outln!(
            "{}: {passed} of {} baselines in {} reproduced within tolerance",
            if passed == cases.len() {
                "PASS"
            } else {
                "FAIL"
            },
            cases.len(),
            dir.display()
        );
    }
    Ok(if passed == cases.len() {
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
