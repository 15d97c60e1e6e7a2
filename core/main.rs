//! The `yawdyn` command: parse arguments, run, map the outcome to an exit code.
//!
//! Exit codes: 0 success; 1 a run, criterion or check failed; 2 bad input
//! (options, vehicle file, script).

mod cli;

use std::process::ExitCode;

/// Counts memory per thread for the script memory budget (see
/// `yawdyn::script::CountingAllocator`).
#[global_allocator]
static ALLOCATOR: yawdyn::script::CountingAllocator = yawdyn::script::CountingAllocator;

fn main() -> ExitCode {
    match cli::run() {
        Ok(cli::Outcome::Success) => ExitCode::from(0),
        Ok(cli::Outcome::Failed) => ExitCode::from(1),
        Err(err) => {
            eprintln!("error: {err}");
            for cause in err.chain().skip(1) {
                eprintln!("  caused by: {cause}");
            }
            ExitCode::from(cli::exit_code(&err))
        }
    }
}
