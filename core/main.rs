//! The `yawdyn` command: parse arguments, run, map the outcome to an exit code.
//!
//! Exit codes: see `yawdyn::error::EXIT_CODES` (0 success; 1 a run, criterion
//! or check failed, or the machine got in the way; 2 bad input). An error's
//! code comes from the first classified error in its chain.

mod cli;

use std::process::ExitCode;

/// Counts memory per thread for the script memory budget (see
/// `yawdyn::script::CountingAllocator`).
#[global_allocator]
static ALLOCATOR: yawdyn::script::CountingAllocator = yawdyn::script::CountingAllocator;

fn main() -> ExitCode {
    // Before any other thread starts: SIGINT, SIGTERM and SIGHUP remove the
    // temporary files of unfinished outputs.
    yawdyn::output::install_signal_cleanup();
    // Every file a command reads is one of its inputs: no output replaces it.
    yawdyn::output::record_reads_as_inputs();
    let outcome = cli::run();
    cli::stdout::flush();
    // Standard output that failed (not a closed pipe): the machine got in
    // the way, exit 1 unless the command already failed worse.
    let write_error = cli::stdout::write_error();
    if let Some(message) = &write_error {
        eprintln!("error: {message}");
    }
    match outcome {
        Ok(cli::Outcome::Success) if write_error.is_some() => ExitCode::from(1),
        Ok(cli::Outcome::Success) => ExitCode::from(0),
        Ok(cli::Outcome::Failed) => ExitCode::from(1),
        Err(err) => {
            eprintln!("error: {err}");
            // A cause already spelled out in the line above is not repeated.
            let mut above = err.to_string();
            for cause in err.chain().skip(1) {
                let text = cause.to_string();
                if !above.contains(&text) {
                    eprintln!("  caused by: {text}");
                }
                above = text;
            }
            ExitCode::from(cli::exit_code(&err))
        }
    }
}
