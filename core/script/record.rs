//! The record of a script run: the runner's channels with the provenance of
//! the setup and the log's metrics, criteria and values.

use std::path::Path;

use super::error::ScriptPosition;
use super::log::RunLog;
use super::setup::{RunConfig, Setup};
use crate::results::{Provenance, RunRecord, RunStatus};
use crate::sim::SolverKind;

/// Something that failed after the simulation had run (e.g. an error in
/// `evaluate`): the record is kept and marked failed.
#[derive(Debug, Clone, PartialEq)]
pub struct LateFailure {
    /// Where in the script.
    pub at: ScriptPosition,
    /// What failed.
    pub message: String,
}

/// The script a record came from.
#[derive(Debug, Clone, Copy)]
pub struct ScriptSource<'a> {
    /// The script file, as given.
    pub path: &'a Path,
    /// Its full text.
    pub text: &'a str,
}

/// Completes the runner's record (see [`Runner::into_record`](super::runner::Runner::into_record)):
/// metrics, criteria and provenance from the setup and the log, and status
/// `failed` for a late failure (time: the end of the record).
pub fn finish(
    mut record: RunRecord,
    config: &RunConfig,
    setup: &Setup,
    log: RunLog,
    source: ScriptSource<'_>,
    late: Option<LateFailure>,
) -> RunRecord {
    if let Some(late) = late {
        record.status = RunStatus::Failed {
            message: format!("{}: {}", late.at, late.message),
            time_s: record.time.last().copied().unwrap_or(0.0),
        };
    }
    record.provenance = provenance(config, setup, &log, source);
    record.metrics = log.metrics;
    record.criteria = log.criteria;
    record
}

/// Provenance: the script, the vehicle as resolved, the solver and rates,
/// and the free-form entries in order — `phase.<name>`, `value.<name>`,
/// `start_speed`, `param.<name>`, `note.<name>`.
fn provenance(
    config: &RunConfig,
    setup: &Setup,
    log: &RunLog,
    source: ScriptSource<'_>,
) -> Provenance {
    let mut extra: Vec<(String, String)> = Vec::new();
    extra.extend(
        log.phases
            .iter()
            .map(|(name, t)| (format!("phase.{name}"), format!("{t}"))),
    );
    extra.extend(
        log.remembered
            .iter()
            .map(|(name, v)| (format!("value.{name}"), format!("{v}"))),
    );
    extra.push(("start_speed".into(), format!("{}", config.start_speed)));
    extra.extend(
        setup
            .parameters_read()
            .iter()
            .map(|(name, v)| (format!("param.{name}"), format!("{v}"))),
    );
    extra.extend(
        log.notes
            .iter()
            .map(|(name, text)| (format!("note.{name}"), text.clone())),
    );
    let solver = config.solver;
    Provenance {
        yawdyn_version: version_text(),
        created_utc: now_utc(),
        script_path: source.path.display().to_string(),
        script_text: source.text.to_string(),
        vehicle_path: config.vehicle_path.display().to_string(),
        vehicle_toml: config.vehicle.to_toml(),
        overrides: config.overrides.iter().map(|o| o.to_text()).collect(),
        solver: solver.kind.name().to_string(),
        rtol: solver.rtol,
        atol: solver.atol,
        fixed_step_s: if solver.kind == SolverKind::Rk4 {
            solver.fixed_step
        } else {
            0.0
        },
        sample_rate_hz: config.sample_rate_hz,
        tick_rate_hz: config.tick_rate_hz,
        extra,
    }
}

/// Civil date of a count of days since 1970-01-01 (proleptic Gregorian):
/// (year, month 1..12, day 1..31). Algorithm "civil_from_days" from
/// H. Hinnant, *chrono-Compatible Low-Level Date Algorithms* (2013), written
/// here from its description.
fn civil_from_days(days: i64) -> (i64, u32, u32) {
    let z = days + 719_468;
    let era = z.div_euclid(146_097);
    let doe = z.rem_euclid(146_097); // [0, 146096]
    let yoe = (doe - doe / 1460 + doe / 36_524 - doe / 146_096) / 365; // [0, 399]
    let doy = doe - (365 * yoe + yoe / 4 - yoe / 100); // [0, 365]
    let mp = (5 * doy + 2) / 153; // [0, 11], March = 0
    let day = (doy - (153 * mp + 2) / 5 + 1) as u32;
    let month = if mp < 10 { mp + 3 } else { mp - 9 } as u32;
    let year = yoe + era * 400 + i64::from(month <= 2);
    (year, month, day)
}

/// ISO 8601 UTC text (`YYYY-MM-DDThh:mm:ssZ`) of seconds since the Unix epoch.
fn iso8601_utc(unix_seconds: i64) -> String {
    let days = unix_seconds.div_euclid(86_400);
    let secs = unix_seconds.rem_euclid(86_400);
    let (y, m, d) = civil_from_days(days);
    format!(
        "{y:04}-{m:02}-{d:02}T{:02}:{:02}:{:02}Z",
        secs / 3600,
        (secs / 60) % 60,
        secs % 60
    )
}

/// The current time as ISO 8601 UTC.
fn now_utc() -> String {
    let secs = std::time::SystemTime::now()
        .duration_since(std::time::UNIX_EPOCH)
        .map(|d| d.as_secs() as i64)
        .unwrap_or(0);
    iso8601_utc(secs)
}

/// yawdyn version with the git revision, e.g. `0.1.0 (abc1234)`.
fn version_text() -> String {
    format!(
        "{} ({})",
        env!("CARGO_PKG_VERSION"),
        env!("YAWDYN_GIT_REVISION")
    )
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Known dates: the Unix epoch, the last day of a leap February, and the
    /// start of 2000 (946684800 s, a well-known constant).
    #[test]
    fn iso8601_of_known_instants() {
        assert_eq!(iso8601_utc(0), "1970-01-01T00:00:00Z");
        assert_eq!(iso8601_utc(946_684_800), "2000-01-01T00:00:00Z");
        // 2024-02-29 12:34:56 UTC = 1709210096 s.
        assert_eq!(iso8601_utc(1_709_210_096), "2024-02-29T12:34:56Z");
        assert_eq!(iso8601_utc(-1), "1969-12-31T23:59:59Z");
    }
}
