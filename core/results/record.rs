//! The in-memory form of one run's results.

/// One sampled channel: a named time history with its unit.
#[derive(Debug, Clone, PartialEq)]
pub struct Channel {
    /// Channel name, lower_snake_case, e.g. `yaw_rate`, `fz_front_left`.
    pub name: String,
    /// SI unit as text, e.g. `rad/s`, `N`, `1` for dimensionless.
    pub unit: String,
    /// One-line description a reader understands without the source.
    pub description: String,
    /// Samples, one per entry of [`RunRecord::time`].
    pub data: Vec<f64>,
}

/// How a run ended.
#[derive(Debug, Clone, PartialEq)]
pub enum RunStatus {
    /// The run reached its end.
    Completed,
    /// The run stopped early; the channels hold what was computed up to then.
    Failed {
        /// What went wrong (e.g. which state became non-finite).
        message: String,
        /// Simulation time at the failure, s.
        time_s: f64,
    },
}

/// A named scalar result computed after the run (by the evaluation function).
#[derive(Debug, Clone, PartialEq)]
pub struct Metric {
    /// Metric name, e.g. `yaw_rate_response_time`.
    pub name: String,
    /// Value in `unit`.
    pub value: f64,
    /// Unit as text (may be empty when the script gives none).
    pub unit: String,
}

/// A pass/fail check of a metric against limits.
#[derive(Debug, Clone, PartialEq)]
pub struct Criterion {
    /// Criterion name.
    pub name: String,
    /// The value checked.
    pub value: f64,
    /// Lower limit (inclusive), if any.
    pub lower: Option<f64>,
    /// Upper limit (inclusive), if any.
    pub upper: Option<f64>,
    /// Whether the value lies within the limits.
    pub passed: bool,
}

/// Where a run came from: enough to reproduce it.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct Provenance {
    /// yawdyn version (`CARGO_PKG_VERSION`, plus git revision when known).
    pub yawdyn_version: String,
    /// Creation time, UTC, ISO 8601 (e.g. `2026-12-01T21:40:00Z`).
    pub created_utc: String,
    /// Path of the manoeuvre script as given.
    pub script_path: String,
    /// Full text of the script.
    pub script_text: String,
    /// Path of the vehicle file as given.
    pub vehicle_path: String,
    /// Fully resolved vehicle parameters (after overrides) as TOML text.
    pub vehicle_toml: String,
    /// The overrides applied, as `key=value` strings, in order.
    pub overrides: Vec<String>,
    /// Solver name (`dopri5`, `dop853`, `rk4`).
    pub solver: String,
    /// Relative tolerance of the adaptive solvers.
    pub rtol: f64,
    /// Absolute tolerance of the adaptive solvers.
    pub atol: f64,
    /// Fixed step of `rk4`, s (0 for adaptive solvers).
    pub fixed_step_s: f64,
    /// Output sample rate, Hz.
    pub sample_rate_hz: f64,
    /// Controller tick rate, Hz.
    pub tick_rate_hz: f64,
    /// Further key/value items (free form), in order.
    pub extra: Vec<(String, String)>,
}

/// Everything one run produced.
#[derive(Debug, Clone, PartialEq)]
pub struct RunRecord {
    /// Sample times, s, strictly increasing.
    pub time: Vec<f64>,
    /// Channels, each as long as `time`.
    pub channels: Vec<Channel>,
    /// Where the run came from.
    pub provenance: Provenance,
    /// How it ended.
    pub status: RunStatus,
    /// Metrics from the evaluation function, in the order returned.
    pub metrics: Vec<Metric>,
    /// Criteria results, in the order declared.
    pub criteria: Vec<Criterion>,
}

impl RunRecord {
    /// The channel called `name`, if present.
    pub fn channel(&self, name: &str) -> Option<&Channel> {
        self.channels.iter().find(|c| c.name == name)
    }

    /// True when the run completed and every criterion passed.
    pub fn passed(&self) -> bool {
        self.status == RunStatus::Completed && self.criteria.iter().all(|c| c.passed)
    }
}
