//! The exit codes are documented in one place: `yawdyn::error::EXIT_CODES`.
//! `--help` prints them from there, and the README's table must be the
//! same text. Exit code 0 is checked here too; each failing class has its
//! own file (`exit_bad_input.rs`, `exit_failed.rs`, `exit_environment.rs`).

mod common;

use common::{TempDir, repo_path};
use yawdyn::error::{exit_codes_help, exit_codes_markdown};

#[test]
fn readme_table_is_the_documented_wording() {
    let readme = std::fs::read_to_string(repo_path("README.md")).unwrap();
    let section = readme
        .split("### Exit codes")
        .nth(1)
        .expect("README has an `### Exit codes` section");
    let table: String = section
        .lines()
        .skip_while(|l| !l.starts_with('|'))
        .take_while(|l| l.starts_with('|'))
        .map(|l| format!("{l}\n"))
        .collect();
    assert_eq!(table, exit_codes_markdown());
}

#[test]
fn help_prints_the_documented_wording() {
    let dir = TempDir::new();
    let out = dir.yawdyn(["--help"]);
    out.expect_code(0);
    assert!(
        out.stdout.contains(&exit_codes_help()),
        "--help does not show the exit codes:\n{}",
        out.stdout
    );
}

#[test]
fn success_is_0() {
    let dir = TempDir::new();
    let vehicle = repo_path("scripts/vehicles/hybrid_crossover.toml");
    dir.yawdyn(["vehicle", vehicle.to_str().unwrap()])
        .expect_code(0);
}
