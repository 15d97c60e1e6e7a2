//! Progress of long commands (`run`, `sweep`, `stability --vary`) on standard error: a bar when it is a
//! terminal, plain lines when it is not (cluster logs, CI), nothing with
//! `--quiet`.
//!
//! A plain line is written at most every [`LINE_INTERVAL_S`] seconds (the
//! environment variable `YAWDYN_PROGRESS_INTERVAL` sets another number of
//! seconds, e.g. `0` for every update) and, when any was written, once more
//! at the end:
//!
//! ```text
//! sweep: 12/44 cases, 1m 4s elapsed, about 2m 51s left
//! run: 2.5/6 s simulated, 5s elapsed, about 7s left
//! sweep: done, 44/44 cases in 4m 2s
//! ```
//!
//! A sweep that takes up a stopped one counts the cases it took over, and
//! estimates the time left from the cases it runs itself:
//!
//! ```text
//! sweep: 140/300 cases (128 resumed), 2s elapsed, about 26s left
//! sweep: done, 300/300 cases (128 resumed) in 30s
//! ```

use std::io::{IsTerminal, Write};
use std::sync::Mutex;
use std::time::{Duration, Instant};

use indicatif::{ProgressBar, ProgressStyle};

/// Seconds between plain progress lines when standard error is not a terminal.
pub const LINE_INTERVAL_S: f64 = 5.0;

/// How positions are counted and shown.
#[derive(Debug, Clone, Copy)]
pub enum Unit {
    /// Whole items, e.g. `cases`.
    Items(&'static str),
    /// Milliseconds of simulated time, shown in seconds.
    SimulatedMs,
}

/// The state of the plain lines.
struct Lines {
    started: Instant,
    /// When the last line was written; `None` before the first.
    last: Option<Instant>,
    interval: Duration,
    position: u64,
    total: u64,
    /// Of `position`, taken over rather than done by this command.
    resumed: u64,
}

enum Mode {
    Hidden,
    Bar(ProgressBar),
    Lines(Mutex<Lines>),
}

/// Progress of one command (`label` starts each plain line).
pub struct Progress {
    label: &'static str,
    unit: Unit,
    mode: Mode,
}

impl Progress {
    /// Progress towards `total` (0 = not known yet): hidden when `quiet`, a
    /// bar with `bar_template` (indicatif) on a terminal, plain lines
    /// otherwise.
    pub fn new(
        label: &'static str,
        unit: Unit,
        total: u64,
        quiet: bool,
        bar_template: &str,
    ) -> Progress {
        let mode = if quiet {
            Mode::Hidden
        } else if std::io::stderr().is_terminal() {
            let bar = ProgressBar::new(total);
            if let Ok(style) = ProgressStyle::with_template(bar_template) {
                bar.set_style(style.progress_chars("=> "));
            }
            Mode::Bar(bar)
        } else {
            Mode::Lines(Mutex::new(Lines {
                started: Instant::now(),
                last: None,
                interval: line_interval(),
                position: 0,
                total,
                resumed: 0,
            }))
        };
        Progress { label, unit, mode }
    }

    /// Sets the total (it may grow as a run learns its end).
    pub fn set_total(&self, total: u64) {
        match &self.mode {
            Mode::Hidden => {}
            Mode::Bar(bar) => bar.set_length(total),
            Mode::Lines(lines) => {
                if let Ok(mut l) = lines.lock() {
                    l.total = total;
                }
            }
        }
    }

    /// The current total (0 when hidden or not known).
    pub fn total(&self) -> u64 {
        match &self.mode {
            Mode::Hidden => 0,
            Mode::Bar(bar) => bar.length().unwrap_or(0),
            Mode::Lines(lines) => lines.lock().map_or(0, |l| l.total),
        }
    }

    /// Moves to `position`.
    pub fn set_position(&self, position: u64) {
        match &self.mode {
            Mode::Hidden => {}
            Mode::Bar(bar) => bar.set_position(position),
            Mode::Lines(lines) => {
                if let Ok(mut l) = lines.lock() {
                    l.position = position;
                    self.maybe_line(&mut l);
                }
            }
        }
    }

    /// Starts at `done` items taken over from an earlier, stopped command
    /// (shown as resumed; the time left is estimated from the others).
    pub fn resume_at(&self, done: u64) {
        match &self.mode {
            Mode::Hidden => {}
            Mode::Bar(bar) => {
                bar.set_position(done);
                bar.reset_eta();
            }
            Mode::Lines(lines) => {
                if let Ok(mut l) = lines.lock() {
                    l.position = done;
                    l.resumed = done;
                }
            }
        }
    }

    /// Moves on by one.
    pub fn inc(&self) {
        match &self.mode {
            Mode::Hidden => {}
            Mode::Bar(bar) => bar.inc(1),
            Mode::Lines(lines) => {
                if let Ok(mut l) = lines.lock() {
                    l.position += 1;
                    self.maybe_line(&mut l);
                }
            }
        }
    }

    /// Clears the bar; after plain lines, writes the closing one.
    pub fn finish(&self) {
        match &self.mode {
            Mode::Hidden => {}
            Mode::Bar(bar) => bar.finish_and_clear(),
            Mode::Lines(lines) => {
                if let Ok(l) = lines.lock()
                    && l.last.is_some()
                {
                    let text = format!(
                        "{}: done, {} in {}",
                        self.label,
                        self.amount(&l),
                        duration(l.started.elapsed().as_secs_f64())
                    );
                    write_line(&text);
                }
            }
        }
    }

    /// Writes a line when the interval has passed since the last (or since
    /// the start, for the first).
    fn maybe_line(&self, l: &mut Lines) {
        let now = Instant::now();
        let since = now.duration_since(l.last.unwrap_or(l.started));
        if since < l.interval {
            return;
        }
        l.last = Some(now);
        let elapsed = now.duration_since(l.started).as_secs_f64();
        let mut text = format!(
            "{}: {}, {} elapsed",
            self.label,
            self.amount(l),
            duration(elapsed)
        );
        let done_here = l.position.saturating_sub(l.resumed);
        if done_here > 0 && l.total > l.position {
            let left = elapsed * (l.total - l.position) as f64 / done_here as f64;
            text.push_str(&format!(", about {} left", duration(left)));
        }
        write_line(&text);
    }

    /// `12/44 cases` or `2.5/6 s simulated`.
    fn amount(&self, l: &Lines) -> String {
        let total = |t: String| if l.total > 0 { t } else { "?".to_string() };
        let resumed = if l.resumed > 0 {
            format!(" ({} resumed)", l.resumed)
        } else {
            String::new()
        };
        match self.unit {
            Unit::Items(name) => format!(
                "{}/{} {name}{resumed}",
                l.position,
                total(l.total.to_string())
            ),
            Unit::SimulatedMs => format!(
                "{}/{} s simulated",
                yawdyn::table::fmt_num(l.position as f64 / 1000.0, 3),
                total(yawdyn::table::fmt_num(l.total as f64 / 1000.0, 3))
            ),
        }
    }
}

/// A duration in whole seconds (tenths below ten seconds), e.g. `1m 4s`.
fn duration(seconds: f64) -> String {
    if !seconds.is_finite() || seconds < 0.0 {
        return "?".to_string();
    }
    if seconds < 10.0 {
        return format!(
            "{}s",
            yawdyn::table::fmt_num((seconds * 10.0).round() / 10.0, 2)
        );
    }
    humantime::format_duration(Duration::from_secs(seconds.round() as u64)).to_string()
}

/// The line interval: `YAWDYN_PROGRESS_INTERVAL` seconds, else [`LINE_INTERVAL_S`].
fn line_interval() -> Duration {
    let seconds = std::env::var("YAWDYN_PROGRESS_INTERVAL")
        .ok()
        .and_then(|s| s.trim().parse::<f64>().ok())
        .filter(|s| s.is_finite() && *s >= 0.0)
        .unwrap_or(LINE_INTERVAL_S);
    Duration::from_secs_f64(seconds)
}

/// One line on standard error; a closed stream is ignored (progress is not
/// worth failing a run for).
fn write_line(text: &str) {
    let _ = writeln!(std::io::stderr(), "{text}");
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn durations_read_as_people_write_them() {
        assert_eq!(duration(0.04), "0s");
        assert_eq!(duration(2.34), "2.3s");
        assert_eq!(duration(64.4), "1m 4s");
        assert_eq!(duration(3725.0), "1h 2m 5s");
        assert_eq!(duration(f64::NAN), "?");
    }
}
