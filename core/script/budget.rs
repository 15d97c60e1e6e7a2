//! The budgets of one run: limits on what a script may spend, so that a
//! hostile or mistaken script ends quickly with a located message instead of
//! running for hours or exhausting the machine's memory.
//!
//! | budget | default | checked |
//! | --- | --- | --- |
//! | simulated time | [`MAX_SIM_TIME_S`] | before each tick |
//! | script operations, whole run | [`DEFAULT_MAX_OPERATIONS`] | at every operation (top level, controllers, `evaluate`) |
//! | wall-clock time, whole run | [`DEFAULT_MAX_WALL_S`] | every tick and every 1024 operations |
//! | memory of the samples | [`DEFAULT_MAX_SAMPLE_BYTES`] | before each phase, for its planned end |
//! | memory of script values | [`MAX_SCRIPT_BYTES`] | at every operation (`memory`) |
//!
//! [`Limits`] holds the numbers (the caller may change all but the script
//! memory); [`Budget`] counts what a run has spent and records the first
//! budget exceeded. Knows nothing of the script engine.

use std::sync::Mutex;
use std::sync::atomic::{AtomicU64, Ordering};
use std::time::Instant;

use super::memory;
use crate::sim::N_CHANNELS;

/// Longest simulated time a run may reach, s.
pub const MAX_SIM_TIME_S: f64 = 600.0;
/// Script operations one run may use (top level, every controller call and
/// `evaluate` together).
pub const DEFAULT_MAX_OPERATIONS: u64 = 20_000_000;
/// Wall-clock time one run may take, s (one hour).
pub const DEFAULT_MAX_WALL_S: f64 = 3600.0;
/// Memory the recorded samples of one run may take, bytes (512 MiB).
pub const DEFAULT_MAX_SAMPLE_BYTES: u64 = 512 * MIB;
/// Memory the script's own values (strings, arrays, maps, closures,
/// signals) may take beyond the samples, bytes (256 MiB).
pub const MAX_SCRIPT_BYTES: u64 = 256 * MIB;
/// Operations between two looks at the clock inside script code.
const WALL_CHECK_EVERY: u64 = 1024;

/// One mebibyte, bytes.
pub const MIB: u64 = 1 << 20;

/// Bytes the samples of a run take: one `f64` per channel and one for the
/// time, per sample.
pub fn sample_bytes(samples: u64) -> u64 {
    samples.saturating_mul(8 * (N_CHANNELS as u64 + 1))
}

/// Limits of one run (see the module table).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Limits {
    /// Longest simulated time, s. Default [`MAX_SIM_TIME_S`].
    pub max_sim_time_s: f64,
    /// Script operations of the whole run. Default [`DEFAULT_MAX_OPERATIONS`].
    pub max_operations: u64,
    /// Wall-clock time of the whole run, s. Default [`DEFAULT_MAX_WALL_S`].
    pub max_wall_s: f64,
    /// Memory of the recorded samples, bytes. Default [`DEFAULT_MAX_SAMPLE_BYTES`].
    pub max_sample_bytes: u64,
}

impl Default for Limits {
    fn default() -> Self {
        Self {
            max_sim_time_s: MAX_SIM_TIME_S,
            max_operations: DEFAULT_MAX_OPERATIONS,
            max_wall_s: DEFAULT_MAX_WALL_S,
            max_sample_bytes: DEFAULT_MAX_SAMPLE_BYTES,
        }
    }
}

impl Limits {
    /// Error unless every limit is positive (and finite where it is a time).
    pub fn check(&self) -> Result<(), String> {
        if !(self.max_sim_time_s.is_finite() && self.max_sim_time_s > 0.0) {
            return Err(format!(
                "the simulated-time limit must be positive, got {}",
                self.max_sim_time_s
            ));
        }
        if self.max_operations == 0 {
            return Err("the operation budget must be at least 1".into());
        }
        if !(self.max_wall_s.is_finite() && self.max_wall_s > 0.0) {
            return Err(format!(
                "the wall-clock budget must be a positive number of seconds, got {}",
                self.max_wall_s
            ));
        }
        if self.max_sample_bytes == 0 {
            return Err("the sample memory budget must be positive".into());
        }
        Ok(())
    }
}

/// A budget that a run exceeded. The message says which, its size and the
/// option that raises it.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum Exceeded {
    /// Too many script operations.
    #[error(
        "operation budget of {limit} script operations for the whole run exceeded \
         (an endless loop?); the run was stopped (--max-operations raises it)"
    )]
    Operations {
        /// The budget.
        limit: u64,
    },
    /// Too much wall-clock time.
    #[error(
        "wall-clock budget of {limit_s} s exceeded; the run was stopped \
         (--max-wall raises it)"
    )]
    WallTime {
        /// The budget, s.
        limit_s: f64,
    },
    /// The script's values take too much memory.
    #[error(
        "script memory budget of {} MiB exceeded (strings, arrays, maps, closures \
         and signals the script holds); the run was stopped",
        limit / MIB
    )]
    ScriptMemory {
        /// The budget, bytes.
        limit: u64,
    },
    /// The samples up to the planned end of a phase would take too much memory.
    #[error(
        "the samples up to t = {end_s} s would take {} MiB ({samples} samples × {} values \
         × 8 bytes), over the sample memory budget of {} MiB; lower the \
         sample rate or the duration (--max-memory raises it)",
        bytes.div_ceil(MIB), N_CHANNELS + 1, limit / MIB
    )]
    SampleMemory {
        /// The planned end of the phase, s.
        end_s: f64,
        /// Samples up to then.
        samples: u64,
        /// Their memory, bytes.
        bytes: u64,
        /// The budget, bytes.
        limit: u64,
    },
}

/// What one run has spent of its budgets, shared by the script engine's
/// operation hook and the phases. Created on the thread that runs the
/// script (its memory is counted per thread).
#[derive(Debug)]
pub struct Budget {
    limits: Limits,
    started: Instant,
    operations: AtomicU64,
    /// Memory of this thread when the run began, bytes.
    memory_base: isize,
    /// Memory not charged to the script (the samples), bytes.
    allowance: AtomicU64,
    exceeded: Mutex<Option<Exceeded>>,
}

impl Budget {
    /// A budget with `limits`, starting now on the current thread.
    pub fn new(limits: Limits) -> Self {
        Self {
            limits,
            started: Instant::now(),
            operations: AtomicU64::new(0),
            memory_base: memory::live_bytes(),
            allowance: AtomicU64::new(0),
            exceeded: Mutex::new(None),
        }
    }

    /// The limits.
    pub fn limits(&self) -> &Limits {
        &self.limits
    }

    /// When the run began (the wall-clock budget counts from here).
    pub fn started(&self) -> Instant {
        self.started
    }

    /// Script operations used so far.
    pub fn operations(&self) -> u64 {
        self.operations.load(Ordering::Relaxed)
    }

    /// Counts one script operation and checks the budgets that script code
    /// spends: operations, script memory, and (every 1024 operations) wall
    /// time. Once a budget is exceeded, every later call fails with it.
    pub fn operation(&self) -> Result<(), Exceeded> {
        if let Some(e) = self.exceeded() {
            return Err(e);
        }
        let n = self.operations.fetch_add(1, Ordering::Relaxed) + 1;
        if n > self.limits.max_operations {
            return Err(self.exceed(Exceeded::Operations {
                limit: self.limits.max_operations,
            }));
        }
        if self.script_bytes() > MAX_SCRIPT_BYTES {
            return Err(self.exceed(Exceeded::ScriptMemory {
                limit: MAX_SCRIPT_BYTES,
            }));
        }
        if n % WALL_CHECK_EVERY == 0 {
            self.check_wall()?;
        }
        Ok(())
    }

    /// Error once the wall-clock budget is spent.
    pub fn check_wall(&self) -> Result<(), Exceeded> {
        if self.started.elapsed().as_secs_f64() > self.limits.max_wall_s {
            return Err(self.exceed(Exceeded::WallTime {
                limit_s: self.limits.max_wall_s,
            }));
        }
        Ok(())
    }

    /// Memory the script holds beyond the allowance, bytes (0 when the
    /// counting allocator is not installed).
    fn script_bytes(&self) -> u64 {
        let grown = memory::live_bytes().saturating_sub(self.memory_base);
        let grown = u64::try_from(grown).unwrap_or(0);
        grown.saturating_sub(self.allowance.load(Ordering::Relaxed))
    }

    /// Memory of the run not charged to the script from now on, bytes: the
    /// samples planned so far (twice: a growing buffer may double), or
    /// everything held when `evaluate` begins.
    pub fn allow(&self, bytes: u64) {
        self.allowance.fetch_max(bytes, Ordering::Relaxed);
    }

    /// Everything the run holds now is allowed (e.g. the channels handed to
    /// `evaluate`).
    pub fn allow_current(&self) {
        let grown = memory::live_bytes().saturating_sub(self.memory_base);
        self.allow(u64::try_from(grown).unwrap_or(0));
    }

    /// The first budget exceeded, if any.
    pub fn exceeded(&self) -> Option<Exceeded> {
        self.exceeded
            .lock()
            .unwrap_or_else(|p| p.into_inner())
            .clone()
    }

    /// Records `e` unless a budget was exceeded before; returns the first.
    pub fn exceed(&self, e: Exceeded) -> Exceeded {
        let mut first = self.exceeded.lock().unwrap_or_else(|p| p.into_inner());
        first.get_or_insert(e).clone()
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// The operation budget counts every call and, once spent, stays spent.
    #[test]
    fn operations_are_counted_for_the_whole_run() {
        let b = Budget::new(Limits {
            max_operations: 3,
            ..Limits::default()
        });
        for _ in 0..3 {
            b.operation().unwrap();
        }
        let e = b.operation().unwrap_err();
        assert_eq!(e, Exceeded::Operations { limit: 3 });
        assert!(e.to_string().contains("--max-operations"), "{e}");
        assert_eq!(b.exceeded(), Some(e.clone()));
        assert_eq!(b.operation(), Err(e));
    }

    /// A spent wall-clock budget is reported with its size.
    #[test]
    fn wall_clock_budget_is_checked() {
        let b = Budget::new(Limits {
            max_wall_s: 1e-9,
            ..Limits::default()
        });
        std::thread::sleep(std::time::Duration::from_millis(1));
        let e = b.check_wall().unwrap_err();
        assert!(
            e.to_string().contains("wall-clock budget of 0.000000001 s"),
            "{e}"
        );
    }

    /// Limits must be positive; the sample memory is channels × 8 bytes per sample.
    #[test]
    fn limits_are_checked_and_samples_sized() {
        assert!(Limits::default().check().is_ok());
        let bad = Limits {
            max_wall_s: f64::NAN,
            ..Limits::default()
        };
        assert!(bad.check().is_err());
        assert_eq!(sample_bytes(10), 10 * 8 * (N_CHANNELS as u64 + 1));
    }
}
