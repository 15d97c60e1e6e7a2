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
    /// Solver name (`dopri5`, `dop853`, `rk4`, `ark436`).
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

impl RunRecord {
    /// Number of output samples (the length of [`RunRecord::time`]).
    pub fn samples(&self) -> usize {
        self.time.len()
    }

    /// Time span covered by the samples, s (last minus first; 0 with fewer
    /// than two samples).
    pub fn duration_s(&self) -> f64 {
        match (self.time.first(), self.time.last()) {
            (Some(first), Some(last)) if self.time.len() > 1 => last - first,
            _ => 0.0,
        }
    }

    /// Check that the record can be stored: every channel as long as `time`,
    /// channel and metric names usable as file keys (non-empty, no `/`, not
    /// `.` or `..`), unique, and no channel called `time`.
    ///
    /// Returns a sentence naming the first problem found.
    pub fn validate(&self) -> Result<(), String> {
        let mut seen = std::collections::HashSet::new();
        for channel in &self.channels {
            check_key("channel", &channel.name)?;
            if channel.name == "time" {
                return Err(
                    "a channel may not be called `time` (time is stored separately)".into(),
                );
            }
            if !seen.insert(channel.name.as_str()) {
                return Err(format!("channel `{}` appears twice", channel.name));
            }
            if channel.data.len() != self.time.len() {
                return Err(format!(
                    "channel `{}` has {} samples but time has {}",
                    channel.name,
                    channel.data.len(),
                    self.time.len()
                ));
            }
        }
        seen.clear();
        for metric in &self.metrics {
            check_key("metric", &metric.name)?;
            if !seen.insert(metric.name.as_str()) {
                return Err(format!("metric `{}` appears twice", metric.name));
            }
        }
        Ok(())
    }
}

/// A name used as a key inside the results file must be a plain word.
fn check_key(kind: &str, name: &str) -> Result<(), String> {
    if name.is_empty() || name == "." || name == ".." || name.contains('/') || name.contains('\0') {
        return Err(format!(
            "{kind} name {name:?} cannot be stored (empty, `.`, `..`, or contains `/` or NUL)"
        ));
    }
    Ok(())
}

#[cfg(test)]
mod tests {
    use super::*;

    fn record(time: Vec<f64>, channels: Vec<(&str, usize)>) -> RunRecord {
        RunRecord {
            time,
            channels: channels
                .into_iter()
                .map(|(name, len)| Channel {
                    name: name.to_string(),
                    unit: "1".to_string(),
                    description: String::new(),
                    data: vec![0.0; len],
                })
                .collect(),
            provenance: Provenance::default(),
            status: RunStatus::Completed,
            metrics: Vec::new(),
            criteria: Vec::new(),
        }
    }

    #[test]
    fn duration_and_samples() {
        let r = record(vec![0.5, 1.0, 2.5], vec![]);
        assert_eq!(r.samples(), 3);
        assert_eq!(r.duration_s(), 2.0);
        assert_eq!(record(vec![1.0], vec![]).duration_s(), 0.0);
        assert_eq!(record(vec![], vec![]).duration_s(), 0.0);
    }

    #[test]
    fn validate_accepts_consistent_record() {
        assert_eq!(
            record(vec![0.0, 1.0], vec![("ay", 2), ("ax", 2)]).validate(),
            Ok(())
        );
    }

    #[test]
    fn validate_names_the_problem() {
        let short = record(vec![0.0, 1.0], vec![("ay", 1)])
            .validate()
            .unwrap_err();
        assert!(
            short.contains("`ay` has 1 samples but time has 2"),
            "{short}"
        );
        let twice = record(vec![], vec![("ay", 0), ("ay", 0)])
            .validate()
            .unwrap_err();
        assert!(twice.contains("twice"), "{twice}");
        for bad in ["", ".", "..", "a/b", "time"] {
            assert!(
                record(vec![], vec![(bad, 0)]).validate().is_err(),
                "{bad:?}"
            );
        }
        let mut r = record(vec![], vec![]);
        r.metrics = vec![
            Metric {
                name: "m".into(),
                value: 1.0,
                unit: String::new(),
            },
            Metric {
                name: "m".into(),
                value: 2.0,
                unit: String::new(),
            },
        ];
        assert!(r.validate().unwrap_err().contains("metric `m`"));
    }
}
