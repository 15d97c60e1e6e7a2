//! What a run writes down besides its channels: phase starts, remembered
//! values, notes, metrics and criteria.
//!
//! Knows nothing of the script engine or of the simulation.

use crate::results::{Criterion, Metric};

/// Why a log entry was refused.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum LogError {
    /// A metric name recorded before.
    #[error("metric `{0}` is recorded twice (metric names must be unique)")]
    DuplicateMetric(String),
    /// No phase of that name.
    #[error("no phase called \"{0}\"")]
    NoPhase(String),
    /// Nothing remembered under that name.
    #[error("nothing remembered as \"{0}\"")]
    NotRemembered(String),
}

/// The log of one run, in the order things happened.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct RunLog {
    /// Phase names with their start times, s.
    pub phases: Vec<(String, f64)>,
    /// Values kept with `remember`, by name (a later value of a name wins).
    pub remembered: Vec<(String, f64)>,
    /// Text notes, by name (e.g. why a metric is NaN).
    pub notes: Vec<(String, String)>,
    /// Metrics, names unique.
    pub metrics: Vec<Metric>,
    /// Pass/fail criteria.
    pub criteria: Vec<Criterion>,
}

impl RunLog {
    /// Marks the start of phase `name` at time `t`, s.
    pub fn phase(&mut self, name: &str, t: f64) {
        self.phases.push((name.to_string(), t));
    }

    /// Start time of the latest phase called `name`, s.
    pub fn phase_start(&self, name: &str) -> Result<f64, LogError> {
        self.phases
            .iter()
            .rev()
            .find(|(n, _)| n == name)
            .map(|(_, t)| *t)
            .ok_or_else(|| LogError::NoPhase(name.to_string()))
    }

    /// Keeps a value under `name`.
    pub fn remember(&mut self, name: &str, value: f64) {
        self.remembered.push((name.to_string(), value));
    }

    /// The latest value kept under `name`.
    pub fn recall(&self, name: &str) -> Result<f64, LogError> {
        self.remembered
            .iter()
            .rev()
            .find(|(n, _)| n == name)
            .map(|(_, v)| *v)
            .ok_or_else(|| LogError::NotRemembered(name.to_string()))
    }

    /// Keeps a text note under `name`.
    pub fn note(&mut self, name: &str, text: &str) {
        self.notes.push((name.to_string(), text.to_string()));
    }

    /// Records a metric; a name recorded before is refused. The unit is
    /// stored in the ASCII spelling of [`crate::units::ascii`] (`m/s²` → `m/s^2`).
    pub fn metric(&mut self, name: &str, value: f64, unit: &str) -> Result<(), LogError> {
        if self.metrics.iter().any(|m| m.name == name) {
            return Err(LogError::DuplicateMetric(name.to_string()));
        }
        self.metrics.push(Metric {
            name: name.to_string(),
            value,
            unit: crate::units::ascii(unit),
        });
        Ok(())
    }

    /// Records a criterion: passed when `value` is finite and within the
    /// inclusive limits (`None` = no limit). Returns whether it passed.
    pub fn criterion(
        &mut self,
        name: &str,
        value: f64,
        lower: Option<f64>,
        upper: Option<f64>,
    ) -> bool {
        let passed = value.is_finite()
            && lower.is_none_or(|l| value >= l)
            && upper.is_none_or(|u| value <= u);
        self.criteria.push(Criterion {
            name: name.to_string(),
            value,
            lower,
            upper,
            passed,
        });
        passed
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn duplicate_metrics_are_refused_and_the_first_kept() {
        let mut log = RunLog::default();
        log.metric("gain", 1.0, "1/s").unwrap();
        let err = log.metric("gain", 2.0, "1/s").unwrap_err();
        assert_eq!(err, LogError::DuplicateMetric("gain".into()));
        assert_eq!(log.metrics.len(), 1);
        assert_eq!(log.metrics[0].value, 1.0);
    }

    /// A NaN value fails a criterion whatever its limits; limits are inclusive.
    #[test]
    fn criteria_pass_only_finite_values_within_inclusive_limits() {
        let mut log = RunLog::default();
        assert!(log.criterion("a", 0.35, None, Some(0.35)));
        assert!(!log.criterion("b", f64::NAN, None, None));
        assert!(!log.criterion("c", 1.0, Some(1.5), None));
        assert_eq!(log.criteria.len(), 3);
    }

    #[test]
    fn recall_gives_the_latest_value_and_phases_their_latest_start() {
        let mut log = RunLog::default();
        log.remember("x", 1.0);
        log.remember("x", 2.0);
        log.phase("p", 0.5);
        log.phase("p", 1.5);
        assert_eq!(log.recall("x"), Ok(2.0));
        assert_eq!(log.phase_start("p"), Ok(1.5));
        assert!(log.recall("y").is_err());
    }
}
