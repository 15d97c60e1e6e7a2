//! Finite-difference estimates from the perturbed cases, and the ranking
//! (formulas in the [module documentation](super)).

use serde::Serialize;

use super::plan::{Direction, Plan};
use crate::sweep::{CaseStatus, SweepCase};

/// What one perturbed case gave: its metrics, or why it failed.
#[derive(Debug, Clone, PartialEq)]
pub struct CaseOutcome {
    /// `Ok` with the metrics `(name, value)` of a case that ran to its end
    /// (criteria may have failed: the metrics are still computed); `Err`
    /// with the message of a case that failed or could not run.
    pub result: Result<Vec<(String, f64)>, String>,
}

impl CaseOutcome {
    /// The outcome of a case of the sweep engine.
    pub fn of_case(case: &SweepCase) -> CaseOutcome {
        let result = match case.status {
            CaseStatus::Completed | CaseStatus::CriteriaFailed => Ok(case
                .metrics
                .iter()
                .map(|m| (m.name.clone(), m.value))
                .collect()),
            CaseStatus::Failed | CaseStatus::Error => Err(format!(
                "{}: {}",
                case.status.name(),
                case.message.replace('\n', " ")
            )),
        };
        CaseOutcome { result }
    }

    /// The value of metric `name`, or why there is none.
    fn metric(&self, name: &str) -> Result<f64, String> {
        match &self.result {
            Ok(metrics) => match metrics.iter().find(|(n, _)| n == name) {
                Some((_, v)) if v.is_finite() => Ok(*v),
                Some((_, v)) => Err(format!("metric `{name}` is {v}")),
                None => Err(format!("metric `{name}` was not reported")),
            },
            Err(message) => Err(message.clone()),
        }
    }
}

/// The estimates of one parameter for one metric.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Estimate {
    /// Dotted key of the parameter.
    pub parameter: String,
    /// Base value p₀ (file unit).
    pub value: f64,
    /// Value run up, p₊.
    pub value_up: f64,
    /// Value run down, p₋.
    pub value_down: f64,
    /// Metric at p₊ (metric unit); NaN when that case failed.
    pub metric_up: f64,
    /// Metric at p₋; NaN when that case failed.
    pub metric_down: f64,
    /// Central elasticity e, 1; NaN when a side failed or m₀ = 0.
    pub elasticity: f64,
    /// One-sided elasticity from the up case, e₊, 1.
    pub elasticity_up: f64,
    /// One-sided elasticity from the down case, e₋, 1.
    pub elasticity_down: f64,
    /// (e₊ − e₋)/(|e₊| + |e₋|), 1 (0: locally linear); NaN when undefined.
    pub asymmetry: f64,
    /// Central derivative ∂m/∂p, metric unit per parameter unit.
    pub derivative: f64,
    /// Place in the ranking, 1 = largest |e|; `None` without any estimate.
    pub rank: Option<usize>,
}

impl Estimate {
    /// |e| used for ranking: the central estimate, else a one-sided one.
    pub fn magnitude(&self) -> Option<f64> {
        [self.elasticity, self.elasticity_up, self.elasticity_down]
            .into_iter()
            .find(|e| e.is_finite())
            .map(f64::abs)
    }
}

/// A perturbation that gave no value of a metric.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Failure {
    /// Dotted key of the parameter.
    pub parameter: String,
    /// `up` or `down`.
    pub direction: Direction,
    /// The value it ran with.
    pub value: f64,
    /// Why it gave no value.
    pub message: String,
}

/// The ranking of every planned parameter for one metric.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Ranking {
    /// Metric name.
    pub metric: String,
    /// Its unit.
    pub unit: String,
    /// Its value in the base case, m₀.
    pub base: f64,
    /// One estimate per parameter, in plan order (see [`Ranking::ranked`]).
    pub estimates: Vec<Estimate>,
    /// Perturbations that gave no value of this metric, in case order.
    pub failures: Vec<Failure>,
}

impl Ranking {
    /// The estimates in rank order (those without a rank last, in plan order).
    pub fn ranked(&self) -> Vec<&Estimate> {
        let mut out: Vec<&Estimate> = self.estimates.iter().collect();
        out.sort_by_key(|e| e.rank.unwrap_or(usize::MAX));
        out
    }
}

/// Estimates and ranks every parameter of `plan` for the metric `name`
/// (unit `unit`, base value `base`) from `outcomes`, one per case of the
/// plan in case order. Pure arithmetic: the same inputs give the same bits.
pub fn rank(name: &str, unit: &str, base: f64, plan: &Plan, outcomes: &[CaseOutcome]) -> Ranking {
    let mut estimates = Vec::with_capacity(plan.parameters.len());
    let mut failures = Vec::new();
    for (i, p) in plan.parameters.iter().enumerate() {
        let mut side = |direction: Direction| -> (f64, f64) {
            let value = plan.perturbed_value(i, direction);
            let metric = match outcomes.get(Plan::index(i, direction)) {
                Some(o) => o.metric(name),
                None => Err("the case did not run".to_string()),
            };
            let metric = metric.unwrap_or_else(|message| {
                failures.push(Failure {
                    parameter: p.key.clone(),
                    direction,
                    value,
                    message,
                });
                f64::NAN
            });
            (value, metric)
        };
        let (value_up, metric_up) = side(Direction::Up);
        let (value_down, metric_down) = side(Direction::Down);
        estimates.push(estimate(
            &p.key,
            p.value,
            base,
            (value_up, metric_up),
            (value_down, metric_down),
        ));
    }
    assign_ranks(&mut estimates);
    Ranking {
        metric: name.to_string(),
        unit: unit.to_string(),
        base,
        estimates,
        failures,
    }
}

/// The estimates of one parameter (formulas: module documentation).
fn estimate(key: &str, p0: f64, m0: f64, up: (f64, f64), down: (f64, f64)) -> Estimate {
    let (p_up, m_up) = up;
    let (p_down, m_down) = down;
    // Relative changes; NaN propagates from a failed side, m₀ = 0 gives ±∞ or NaN.
    let relative = |dm: f64, dp: f64| {
        let e = (dm / m0) / (dp / p0);
        if e.is_finite() { e } else { f64::NAN }
    };
    let elasticity = relative(m_up - m_down, p_up - p_down);
    let elasticity_up = relative(m_up - m0, p_up - p0);
    let elasticity_down = relative(m0 - m_down, p0 - p_down);
    let spread = elasticity_up.abs() + elasticity_down.abs();
    let asymmetry = if spread > 0.0 {
        (elasticity_up - elasticity_down) / spread
    } else {
        f64::NAN
    };
    Estimate {
        parameter: key.to_string(),
        value: p0,
        value_up: p_up,
        value_down: p_down,
        metric_up: m_up,
        metric_down: m_down,
        elasticity,
        elasticity_up,
        elasticity_down,
        asymmetry,
        derivative: (m_up - m_down) / (p_up - p_down),
        rank: None,
    }
}

/// Ranks by |e| (largest first), ties in plan order; no estimate, no rank.
fn assign_ranks(estimates: &mut [Estimate]) {
    let mut order: Vec<(usize, f64)> = estimates
        .iter()
        .enumerate()
        .filter_map(|(i, e)| e.magnitude().map(|m| (i, m)))
        .collect();
    order.sort_by(|a, b| b.1.total_cmp(&a.1).then(a.0.cmp(&b.0)));
    for (rank, (i, _)) in order.into_iter().enumerate() {
        estimates[i].rank = Some(rank + 1);
    }
}
