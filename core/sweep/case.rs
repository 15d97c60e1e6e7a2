//! One case of a sweep in memory, and the summary table of a sweep file
//! (one row per case).

use crate::results::{Channel, Criterion, Metric};

use super::CaseStatus;

/// One finished case: a row of `/summary` and its samples.
#[derive(Debug, Clone, PartialEq)]
pub struct SweepCase {
    /// Global case index (0-based, grid order).
    pub index: usize,
    /// Values of the varied parameters, in `--vary` order.
    pub parameters: Vec<f64>,
    /// Every override the case ran with (base `--set`s, then the varied ones), `key=value`.
    pub overrides: Vec<String>,
    /// How the case ended.
    pub status: CaseStatus,
    /// Why it did not complete or pass; empty when completed.
    pub message: String,
    /// Simulation time of a run failure, s; NaN otherwise.
    pub failure_time_s: f64,
    /// Sample times, s (empty when the case could not run).
    pub time: Vec<f64>,
    /// The stored channels (all, or the `--channels` selection); empty when
    /// the case could not run.
    pub channels: Vec<Channel>,
    /// Metrics of the run. Written: in the order the run returned them. Read
    /// back ([`SweepFile::read_case`](super::SweepFile::read_case)): every
    /// metric of the file in file order, NaN where the case reported none.
    pub metrics: Vec<Metric>,
    /// Pass/fail criteria the run evaluated, in order.
    pub criteria: Vec<Criterion>,
}

impl SweepCase {
    /// The channel called `name`, if stored.
    pub fn channel(&self, name: &str) -> Option<&Channel> {
        self.channels.iter().find(|c| c.name == name)
    }

    /// True when the case ran (any status but `error`): it then has the
    /// file's channels, possibly with no samples.
    pub fn ran(&self) -> bool {
        self.status != CaseStatus::Error
    }
}

/// One metric column of the summary.
#[derive(Debug, Clone, PartialEq)]
pub struct SummaryMetric {
    /// Metric name.
    pub name: String,
    /// Unit as text (that of the first case that reported the metric).
    pub unit: String,
    /// Global index of the first case of the file that reported it.
    pub first_case: usize,
    /// One value per summary row; NaN where the case has no such metric.
    pub values: Vec<f64>,
}

/// The columns of one criterion in the summary.
#[derive(Debug, Clone, PartialEq)]
pub struct SummaryCriterion {
    /// Criterion name.
    pub name: String,
    /// Value checked per row (NaN where not evaluated).
    pub value: Vec<f64>,
    /// Inclusive lower limit per row; NaN = none (or not evaluated).
    pub lower: Vec<f64>,
    /// Inclusive upper limit per row; NaN = none (or not evaluated).
    pub upper: Vec<f64>,
    /// 1 passed, 0 failed, −1 not evaluated in that case.
    pub passed: Vec<i8>,
}

impl SummaryCriterion {
    /// The criterion of row `row`, if that case evaluated it.
    pub fn at(&self, row: usize) -> Option<Criterion> {
        let limit = |x: f64| if x.is_nan() { None } else { Some(x) };
        match self.passed.get(row) {
            Some(&p) if p >= 0 => Some(Criterion {
                name: self.name.clone(),
                value: self.value[row],
                lower: limit(self.lower[row]),
                upper: limit(self.upper[row]),
                passed: p == 1,
            }),
            _ => None,
        }
    }
}

/// The `/summary` table: one row per case in the file, in case-index order.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct Summary {
    /// Global case index of each row.
    pub case_index: Vec<usize>,
    /// One column per varied parameter, `(key, values)` in `--vary` order.
    pub parameters: Vec<(String, Vec<f64>)>,
    /// One column per metric, in order of first report over the cases.
    pub metrics: Vec<SummaryMetric>,
    /// The criteria, in order of first report over the cases.
    pub criteria: Vec<SummaryCriterion>,
    /// Status of each row.
    pub status: Vec<CaseStatus>,
    /// Message of each row (empty when completed).
    pub message: Vec<String>,
    /// Simulation time of a run failure per row, s; NaN where none.
    pub failure_time_s: Vec<f64>,
}

impl Summary {
    /// Number of rows.
    pub fn len(&self) -> usize {
        self.case_index.len()
    }

    /// True when there are no rows.
    pub fn is_empty(&self) -> bool {
        self.case_index.is_empty()
    }

    /// The column of varied parameter `key`.
    pub fn parameter(&self, key: &str) -> Option<&[f64]> {
        self.parameters
            .iter()
            .find(|(k, _)| k == key)
            .map(|(_, v)| v.as_slice())
    }

    /// The column of metric `name`.
    pub fn metric(&self, name: &str) -> Option<&SummaryMetric> {
        self.metrics.iter().find(|m| m.name == name)
    }

    /// The columns of criterion `name`.
    pub fn criterion(&self, name: &str) -> Option<&SummaryCriterion> {
        self.criteria.iter().find(|c| c.name == name)
    }

    /// The row of global case `index`, if this summary holds it.
    pub fn row_of(&self, index: usize) -> Option<usize> {
        self.case_index.binary_search(&index).ok()
    }

    /// An empty summary with one (empty) column per varied key.
    pub(crate) fn with_keys(keys: &[String]) -> Summary {
        Summary {
            parameters: keys.iter().map(|k| (k.clone(), Vec::new())).collect(),
            ..Summary::default()
        }
    }

    /// Adds one case as a row; new metric and criterion names become new
    /// columns (NaN, or −1 for `passed`, in earlier rows).
    pub(crate) fn push(&mut self, case: &SweepCase) {
        let row = self.case_index.len();
        self.case_index.push(case.index);
        for ((_, column), v) in self.parameters.iter_mut().zip(&case.parameters) {
            column.push(*v);
        }
        for metric in &case.metrics {
            if !self.metrics.iter().any(|m| m.name == metric.name) {
                self.metrics.push(SummaryMetric {
                    name: metric.name.clone(),
                    unit: metric.unit.clone(),
                    first_case: case.index,
                    values: vec![f64::NAN; row],
                });
            }
        }
        for column in &mut self.metrics {
            let value = case.metrics.iter().find(|m| m.name == column.name);
            column.values.push(value.map_or(f64::NAN, |m| m.value));
        }
        for criterion in &case.criteria {
            if !self.criteria.iter().any(|c| c.name == criterion.name) {
                self.criteria.push(SummaryCriterion {
                    name: criterion.name.clone(),
                    value: vec![f64::NAN; row],
                    lower: vec![f64::NAN; row],
                    upper: vec![f64::NAN; row],
                    passed: vec![-1; row],
                });
            }
        }
        for column in &mut self.criteria {
            let found = case.criteria.iter().find(|c| c.name == column.name);
            let nan = f64::NAN;
            column.value.push(found.map_or(nan, |c| c.value));
            column
                .lower
                .push(found.and_then(|c| c.lower).unwrap_or(nan));
            column
                .upper
                .push(found.and_then(|c| c.upper).unwrap_or(nan));
            column.passed.push(found.map_or(-1, |c| i8::from(c.passed)));
        }
        self.status.push(case.status);
        self.message.push(case.message.clone());
        self.failure_time_s.push(case.failure_time_s);
    }
}
