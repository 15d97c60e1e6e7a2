//! When a phase ends: after a number of ticks, or at the first of the
//! `run_until` conditions met at a tick.

use std::collections::VecDeque;

use super::view::TickState;

/// `run_until` without `max_time` stops after this long, s.
pub const DEFAULT_MAX_PHASE_S: f64 = 60.0;

/// When a phase ends.
#[derive(Debug, Clone)]
pub enum Until {
    /// After this many ticks.
    Ticks(u64),
    /// At the first condition met.
    Conditions(Conditions),
}

/// The conditions of `run_until` (all optional; limits in SI).
#[derive(Debug, Clone, PartialEq)]
pub struct Conditions {
    /// Speed ≥ this, m/s.
    pub speed_above: Option<f64>,
    /// Speed ≤ this, m/s.
    pub speed_below: Option<f64>,
    /// |ay| ≥ this, m/s².
    pub lat_accel_above: Option<f64>,
    /// |yaw rate| ≥ this, rad/s.
    pub yaw_rate_above: Option<f64>,
    /// |sideslip| ≥ this, rad.
    pub sideslip_above: Option<f64>,
    /// Simulation time ≥ this, s (absolute).
    pub time_above: Option<f64>,
    /// A quantity of [`super::view::STEADY_QUANTITIES`] that must stay steady.
    pub steady: Option<String>,
    /// Window of the steady condition, s. Default 1.0.
    pub steady_window: f64,
    /// Relative band of the steady condition (at least 1e-3 in the
    /// quantity's unit). Default 0.01.
    pub steady_tolerance: f64,
    /// Longest phase, s from its start. Default [`DEFAULT_MAX_PHASE_S`].
    pub max_time: f64,
    /// Reaching `max_time` fails the run.
    pub fail_on_timeout: bool,
}

impl Default for Conditions {
    fn default() -> Self {
        Self {
            speed_above: None,
            speed_below: None,
            lat_accel_above: None,
            yaw_rate_above: None,
            sideslip_above: None,
            time_above: None,
            steady: None,
            steady_window: 1.0,
            steady_tolerance: 0.01,
            max_time: DEFAULT_MAX_PHASE_S,
            fail_on_timeout: false,
        }
    }
}

impl Conditions {
    /// Checks the settings; the message names the offending one.
    pub fn check(&self) -> Result<(), String> {
        if !(self.max_time.is_finite() && self.max_time > 0.0) {
            return Err("run_until: `max_time` must be a positive number".into());
        }
        if !(self.steady_window > 0.0 && self.steady_tolerance > 0.0) {
            return Err(
                "run_until: `steady_window` and `steady_tolerance` must be positive".into(),
            );
        }
        if let Some(name) = &self.steady {
            if TickState::default().quantity(name).is_none() {
                let names: Vec<&str> = super::view::STEADY_QUANTITIES
                    .iter()
                    .map(|(n, _)| *n)
                    .collect();
                return Err(format!(
                    "run_until: steady: unknown quantity `{name}` (one of {})",
                    names.join(", ")
                ));
            }
        }
        Ok(())
    }

    /// The first condition met, by name; `history` holds (time, value) of
    /// the steady quantity over the last window, `phase_t` the time since
    /// the phase started, s.
    pub fn met(
        &self,
        s: &TickState,
        history: &VecDeque<(f64, f64)>,
        phase_t: f64,
    ) -> Option<&'static str> {
        let above = |v: f64, lim: Option<f64>| lim.is_some_and(|l| v >= l);
        let checks = [
            ("speed_above", above(s.speed, self.speed_above)),
            (
                "speed_below",
                self.speed_below.is_some_and(|l| s.speed <= l),
            ),
            ("lat_accel_above", above(s.ay.abs(), self.lat_accel_above)),
            (
                "yaw_rate_above",
                above(s.yaw_rate.abs(), self.yaw_rate_above),
            ),
            (
                "sideslip_above",
                above(s.sideslip.abs(), self.sideslip_above),
            ),
            ("time_above", above(s.time, self.time_above)),
        ];
        if let Some((name, _)) = checks.iter().find(|(_, met)| *met) {
            return Some(name);
        }
        if self.steady.is_some() && phase_t >= self.steady_window - 1e-9 {
            let (lo, hi, sum) = history.iter().fold(
                (f64::INFINITY, f64::NEG_INFINITY, 0.0),
                |(lo, hi, sum), &(_, v)| (lo.min(v), hi.max(v), sum + v),
            );
            let mean = sum / history.len().max(1) as f64;
            // Relative band around the mean, with a floor of 1e-3 in the quantity's unit.
            let band = (self.steady_tolerance * mean.abs()).max(1e-3);
            if !history.is_empty() && hi - lo <= band {
                return Some("steady");
            }
        }
        None
    }
}

/// A phase under way: its end rule and what the conditions remember.
#[derive(Debug, Clone)]
pub struct Phase {
    pub(super) until: Until,
    pub(super) start_tick: u64,
    /// (time, value) of the steady quantity over the last window.
    pub(super) history: VecDeque<(f64, f64)>,
    /// Planned end, s (the latest for `run_until`).
    pub planned_end: f64,
}

impl Phase {
    /// Records the steady quantity of the state at the end of a tick.
    pub(super) fn observe(&mut self, s: &TickState) {
        let Until::Conditions(c) = &self.until else {
            return;
        };
        let Some(name) = &c.steady else {
            return;
        };
        if let Some(v) = s.quantity(name) {
            self.history.push_back((s.time, v));
        }
        while self
            .history
            .front()
            .is_some_and(|(t, _)| *t < s.time - c.steady_window - 1e-9)
        {
            self.history.pop_front();
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn steady_needs_a_full_window_within_the_band() {
        let c = Conditions {
            steady: Some("yaw_rate".into()),
            ..Default::default()
        };
        c.check().unwrap();
        let s = TickState::default();
        let flat: VecDeque<(f64, f64)> = (0..=100).map(|i| (i as f64 * 0.01, 0.2)).collect();
        assert_eq!(c.met(&s, &flat, 0.5), None, "window not yet full");
        assert_eq!(c.met(&s, &flat, 1.0), Some("steady"));
        let rising: VecDeque<(f64, f64)> = (0..=100)
            .map(|i| (i as f64 * 0.01, 0.2 + 0.001 * i as f64))
            .collect();
        assert_eq!(c.met(&s, &rising, 1.0), None, "10 % change is not steady");
    }

    #[test]
    fn settings_are_checked() {
        let bad = Conditions {
            steady: Some("roll".into()),
            ..Default::default()
        };
        assert!(bad.check().unwrap_err().contains("one of speed, yaw_rate"));
        let bad = Conditions {
            max_time: 0.0,
            ..Default::default()
        };
        assert!(bad.check().is_err());
    }
}
