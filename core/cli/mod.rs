//! Command-line interface: raw clap arguments, dispatched to one module per
//! subcommand. Each subcommand validates its input into library types before
//! any work starts.

/// `println!` through [`stdout::write`]: a closed pipe ends output quietly.
macro_rules! outln {
    () => {
        $crate::cli::stdout::write(format_args!("\n"))
    };
    ($($arg:tt)*) => {
        $crate::cli::stdout::write(format_args!("{}\n", format_args!($($arg)*)))
    };
}

/// `print!` through [`stdout::write`]: a closed pipe ends output quietly.
macro_rules! out {
    ($($arg:tt)*) => {
        $crate::cli::stdout::write(format_args!($($arg)*))
    };
}

mod bench;
mod check;
mod completions;
mod export;
mod gg_envelope;
mod merge;
mod plot;
mod progress;
mod run;
mod sensitivity;
mod show;
mod stability;
pub mod stdout;
mod sweep;
mod tyre;
mod values;
mod vehicle;
mod yaw_moment;

use anyhow::Context;
use clap::{CommandFactory, FromArgMatches, Parser, Subcommand};
use yawdyn::error::{Classify, ErrorKind, io_kind};

/// How a command ended when it did not fail on bad input.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Outcome {
    /// Exit code 0.
    Success,
    /// Exit code 1: a run, criterion or check failed (the output says which).
    Failed,
}

/// An input problem found by the command line itself (an option missing or
/// out of range, options that do not fit together): bad input, exit code 2.
/// Errors of the library are passed on as they are, never turned into this.
#[derive(Debug)]
pub struct BadInput(pub String);

impl std::fmt::Display for BadInput {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.write_str(&self.0)
    }
}

impl std::error::Error for BadInput {}

impl Classify for BadInput {
    fn kind(&self) -> ErrorKind {
        ErrorKind::BadInput
    }
}

/// An input problem found by the command line itself (see [`BadInput`]).
pub fn bad_input(message: impl Into<String>) -> anyhow::Error {
    anyhow::Error::new(BadInput(message.into()))
}

/// Exit code of an error: that of the first error in its chain (outermost
/// first) whose kind is known ([`kind_of`]); 1 when none is.
pub fn exit_code(err: &anyhow::Error) -> u8 {
    err.chain()
        .find_map(kind_of)
        .unwrap_or(ErrorKind::Environment)
        .exit_code()
}

/// The kind of one error of a chain, when it is one of the library's
/// classified errors, the command line's own [`BadInput`], a script error or
/// a file-system error ([`io_kind`]).
fn kind_of(cause: &(dyn std::error::Error + 'static)) -> Option<ErrorKind> {
    type Classifier = fn(&(dyn std::error::Error + 'static)) -> Option<ErrorKind>;
    const CLASSIFIERS: &[Classifier] = &[
        as_kind::<BadInput>,
        as_kind::<yawdyn::params::ParamError>,
        as_kind::<yawdyn::params::ParamIssue>,
        as_kind::<yawdyn::results::ResultsError>,
        as_kind::<yawdyn::output::OutputError>,
        as_kind::<yawdyn::sim::SimError>,
        as_kind::<yawdyn::sweep::SweepError>,
        as_kind::<yawdyn::check::CheckError>,
        as_kind::<yawdyn::stability::StabilityError>,
        as_kind::<yawdyn::stability::map::MapError>,
        as_kind::<yawdyn::plot::PlotError>,
        as_kind::<yawdyn::plot::figures::FigureError>,
        as_kind::<yawdyn::analysis::AnalysisError>,
        as_kind::<yawdyn::manoeuvre::SignalError>,
        as_kind::<yawdyn::manoeuvre::driver::DriverError>,
        as_kind::<yawdyn::script::ScriptError>,
        as_kind::<yawdyn::quasi_static::QuasiStaticError>,
        as_kind::<yawdyn::sensitivity::SensitivityError>,
        as_kind::<yawdyn::tyre::inspect::InspectError>,
        as_kind::<yawdyn::assets::AssetError>,
        as_kind::<yawdyn::files::FileError>,
        |e| e.downcast_ref::<std::io::Error>().map(io_kind),
    ];
    CLASSIFIERS.iter().find_map(|classify| classify(cause))
}

/// The kind of `cause` when it is an `E`.
fn as_kind<E: Classify + std::error::Error + 'static>(
    cause: &(dyn std::error::Error + 'static),
) -> Option<ErrorKind> {
    cause.downcast_ref::<E>().map(Classify::kind)
}

/// yawdyn — vehicle-handling simulation for chassis and vehicle-dynamics engineers.
#[derive(Debug, Parser)]
#[command(
    name = "yawdyn",
    version = version(),
    about,
    long_about = None,
    after_help = yawdyn::error::exit_codes_help()
)]
pub struct Cli {
    #[command(subcommand)]
    command: Command,
}

fn version() -> &'static str {
    concat!(
        env!("CARGO_PKG_VERSION"),
        " (",
        env!("YAWDYN_GIT_REVISION"),
        ")"
    )
}

/// `yawdyn --version` (long): version, commit, build date, target and the
/// version of the HDF5 library in use (read from the library at run time).
fn long_version() -> String {
    let (major, minor, micro) = hdf5::library_version();
    let linkage = if cfg!(feature = "static-hdf5") {
        "static, built in"
    } else {
        "shared library"
    };
    format!(
        "{}\ncommit:     {}\nbuild date: {}\ntarget:     {}\nHDF5:       {major}.{minor}.{micro} ({linkage})",
        env!("CARGO_PKG_VERSION"),
        env!("YAWDYN_GIT_REVISION"),
        env!("YAWDYN_BUILD_DATE"),
        env!("YAWDYN_TARGET"),
    )
}

#[derive(Debug, Subcommand)]
enum Command {
    /// Check a vehicle file and print its derived quantities.
    Vehicle(vehicle::Args),
    /// Measure model speed: ns per derivative evaluation, real-time factor.
    Bench(bench::Args),
    /// Compare a results file with a baseline results file (regression check).
    Check(check::Args),
    /// Plot a results, sweep or stability-map file as SVG.
    Plot(plot::Args),
    /// Trim in steady cornering, linearise and report eigenvalues, modes and stability (or a map with --vary).
    Stability(stability::Args),
    /// Run a manoeuvre script and write the results file (HDF5).
    Run(run::Args),
    /// Print the summary of a results, sweep or stability-map file.
    Show(show::Args),
    /// Write a results, sweep or stability-map file as a CSV table (to a file or standard output).
    Export(export::Args),
    /// Run a script over a grid of vehicle parameters, in parallel, into one sweep file.
    ///
    /// Exits 1 when any case did not complete and pass (the file is written).
    Sweep(sweep::Args),
    /// Join the shard files of one sweep into the file an unsharded run gives.
    Merge(merge::Args),
    /// Print a shell completion script (bash, zsh, fish, elvish, powershell).
    Completions(completions::CompletionsArgs),
    /// Print the manual page (roff), e.g. `yawdyn manpage > yawdyn.1`.
    Manpage(completions::ManpageArgs),
    /// Yaw-moment diagram (moment method) at one speed: residual yaw moment
    /// over a grid of sideslip and steer, trim limit and limit balance.
    ///
    /// Exit codes: 0 success; 1 no trim or no limit found; 2 bad input.
    YawMoment(yaw_moment::Args),
    /// g-g-V envelope: the largest quasi-steady accelerations with zero yaw moment at each speed.
    ///
    /// Exit codes: 0 success; 1 a direction could not be solved; 2 bad input.
    GgEnvelope(gg_envelope::Args),
    /// Inspect the tyres of a vehicle file: curves, peak friction, stiffness against load.
    Tyre(tyre::Args),
    /// Rank vehicle parameters by the elasticity of a metric: each parameter
    /// stepped up and down by a relative step, the cases run in parallel.
    ///
    /// Exit codes: 0 success; 1 the base case or a perturbation failed (the
    /// ranking is still printed and written); 2 bad input.
    Sensitivity(sensitivity::Args),
}

/// Parses the command line and runs the subcommand.
pub fn run() -> anyhow::Result<Outcome> {
    let mut command = Cli::command();
    // The long version asks the HDF5 library for its version: only when wanted.
    if std::env::args_os().any(|a| a == "--version") {
        command = command.long_version(long_version());
    }
    let parsed = command
        .try_get_matches()
        .and_then(|mut matches| Cli::from_arg_matches_mut(&mut matches));
    let cli = match parsed {
        Ok(cli) => cli,
        Err(e) => {
            // --help and --version are successes; everything else is bad input.
            if matches!(
                e.kind(),
                clap::error::ErrorKind::DisplayHelp | clap::error::ErrorKind::DisplayVersion
            ) {
                out!("{e}");
                return Ok(Outcome::Success);
            }
            eprint!("{e}");
            std::process::exit(2);
        }
    };
    match cli.command {
        Command::Vehicle(args) => vehicle::run(args),
        Command::Bench(args) => bench::run(args),
        Command::Check(args) => check::run(args),
        Command::Plot(args) => plot::run(args),
        Command::Stability(args) => stability::run(args),
        Command::Run(args) => run::run(args),
        Command::Show(args) => show::run(args),
        Command::Export(args) => export::run(args),
        Command::Sweep(args) => sweep::run(args),
        Command::Merge(args) => merge::run(args),
        Command::Completions(args) => completions::run_completions(args),
        Command::Manpage(args) => completions::run_manpage(args),
        Command::YawMoment(args) => yaw_moment::run(args),
        Command::GgEnvelope(args) => gg_envelope::run(args),
        Command::Tyre(args) => tyre::run(args),
        Command::Sensitivity(args) => sensitivity::run(args),
    }
}

/// Checks the output paths of a command before its work starts: each by the
/// rules of [`yawdyn::output`] (never a directory, device, FIFO, socket or
/// one of the command's inputs read so far), and no two the same file.
pub fn check_outputs(outputs: &[&std::path::Path]) -> anyhow::Result<()> {
    for (i, out) in outputs.iter().enumerate() {
        yawdyn::output::check_output_path(out)?;
        for earlier in &outputs[..i] {
            yawdyn::output::refuse_same_output(earlier, out)?;
        }
    }
    Ok(())
}

/// Parses `--set key=value` options into overrides (bad input on error).
pub fn parse_overrides(sets: &[String]) -> anyhow::Result<Vec<yawdyn::params::Override>> {
    sets.iter()
        .map(|s| yawdyn::params::Override::parse(s).with_context(|| format!("--set {s}")))
        .collect()
}
