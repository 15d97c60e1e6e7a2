//! The perturbation plan: which keys of the vehicle file are stepped, to
//! which values, and the case list the sweep engine runs.

use serde::Serialize;

use super::{MAX_STEP, SensitivityError};
use crate::params::Override;
use crate::sweep::CaseList;

/// One numeric key of the resolved vehicle file.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Parameter {
    /// Dotted key path, as `--set` takes it (`chassis.mass`).
    pub key: String,
    /// Value in the resolved file, in the file's unit for that key (SI; a key
    /// ending in `_deg` in degrees).
    pub value: f64,
    /// True for a key written as an integer (a count): never perturbed.
    #[serde(skip)]
    pub integer: bool,
}

/// A parameter left out of the ranking, and why.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Skipped {
    /// Dotted key path.
    pub key: String,
    /// Base value.
    pub value: f64,
    /// Why it is not perturbed.
    pub reason: String,
}

/// The side of a perturbation.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "lowercase")]
pub enum Direction {
    /// p₀·(1 + h).
    Up,
    /// p₀·(1 − h).
    Down,
}

impl Direction {
    /// `up` or `down`.
    pub fn name(self) -> &'static str {
        match self {
            Direction::Up => "up",
            Direction::Down => "down",
        }
    }
}

/// Every numeric key of a resolved vehicle file (as
/// [`Vehicle::to_toml`](crate::params::Vehicle::to_toml) writes it), in the
/// file's order, with its value. Strings, booleans and arrays (tables of
/// curve or map points) are not parameters.
///
/// ```
/// let toml = "name = \"x\"\n[chassis]\nmass = 1500.0\n[drive]\nfront_share = 0.0\n";
/// let p = yawdyn::sensitivity::vehicle_parameters(toml)?;
/// assert_eq!(p[0].key, "chassis.mass");
/// assert_eq!(p[1].value, 0.0);
/// # Ok::<(), yawdyn::sensitivity::SensitivityError>(())
/// ```
pub fn vehicle_parameters(vehicle_toml: &str) -> Result<Vec<Parameter>, SensitivityError> {
    let table: toml::Table =
        toml::from_str(vehicle_toml).map_err(|e| SensitivityError::VehicleText(e.to_string()))?;
    let mut out = Vec::new();
    collect(&table, "", &mut out);
    Ok(out)
}

/// Appends the numeric leaves of `table` under the key prefix `prefix`.
fn collect(table: &toml::Table, prefix: &str, out: &mut Vec<Parameter>) {
    for (key, value) in table {
        let path = if prefix.is_empty() {
            key.clone()
        } else {
            format!("{prefix}.{key}")
        };
        match value {
            toml::Value::Float(v) => out.push(Parameter {
                key: path,
                value: *v,
                integer: false,
            }),
            toml::Value::Integer(v) => out.push(Parameter {
                key: path,
                value: *v as f64,
                integer: true,
            }),
            toml::Value::Table(t) => collect(t, &path, out),
            _ => {}
        }
    }
}

/// The perturbed cases of a ranking: for parameter `i`, case `2i` steps it
/// up and case `2i + 1` down; each runs with the base overrides followed by
/// the one perturbed key (which wins over a `--set` of the same key).
#[derive(Debug, Clone, PartialEq)]
pub struct Plan {
    /// `--set` overrides of every case, base case included.
    pub base_overrides: Vec<Override>,
    /// Relative step h, 1.
    pub step: f64,
    /// The parameters perturbed, in the order chosen (`--params`) or of the file.
    pub parameters: Vec<Parameter>,
    /// Parameters left out, with the reason.
    pub skipped: Vec<Skipped>,
}

impl Plan {
    /// The plan over `candidates` (every numeric key of the resolved file),
    /// restricted to `wanted` when given (in that order; a name that is not
    /// a numeric key is [`SensitivityError::UnknownParameter`]). Zero-valued
    /// and integer keys are skipped; when nothing is left,
    /// [`SensitivityError::NothingToPerturb`].
    pub fn new(
        candidates: &[Parameter],
        wanted: Option<&[String]>,
        base_overrides: Vec<Override>,
        step: f64,
    ) -> Result<Plan, SensitivityError> {
        if !(step > 0.0 && step <= MAX_STEP) {
            return Err(SensitivityError::Step(step));
        }
        let chosen: Vec<Parameter> = match wanted {
            None => candidates.to_vec(),
            Some(keys) => keys
                .iter()
                .map(|key| find(candidates, key))
                .collect::<Result<_, _>>()?,
        };
        let mut parameters = Vec::new();
        let mut skipped = Vec::new();
        for p in chosen {
            if parameters.iter().any(|q: &Parameter| q.key == p.key) {
                continue;
            }
            let reason = if p.integer {
                Some("integer key (a count, not a continuous quantity)")
            } else if p.value == 0.0 {
                Some("value is 0: no relative step (set it off zero with --set to include it)")
            } else {
                None
            };
            match reason {
                Some(r) => skipped.push(Skipped {
                    key: p.key,
                    value: p.value,
                    reason: r.to_string(),
                }),
                None => parameters.push(p),
            }
        }
        if parameters.is_empty() {
            let keys: Vec<&str> = skipped.iter().map(|s| s.key.as_str()).collect();
            return Err(SensitivityError::NothingToPerturb(format!(
                "every parameter chosen was skipped ({})",
                keys.join(", ")
            )));
        }
        Ok(Plan {
            base_overrides,
            step,
            parameters,
            skipped,
        })
    }

    /// Parameter index and direction of case `index`.
    pub fn case(&self, index: usize) -> (usize, Direction) {
        let direction = if index % 2 == 0 {
            Direction::Up
        } else {
            Direction::Down
        };
        (index / 2, direction)
    }

    /// Case index of parameter `i` stepped in `direction`.
    pub fn index(i: usize, direction: Direction) -> usize {
        2 * i + usize::from(direction == Direction::Down)
    }

    /// The value parameter `i` takes when stepped in `direction`:
    /// p₀·(1 ± h).
    pub fn perturbed_value(&self, i: usize, direction: Direction) -> f64 {
        let p = self.parameters[i].value;
        match direction {
            Direction::Up => p * (1.0 + self.step),
            Direction::Down => p * (1.0 - self.step),
        }
    }
}

/// The candidate called `key`, or why there is none.
fn find(candidates: &[Parameter], key: &str) -> Result<Parameter, SensitivityError> {
    let key = key.trim();
    if let Some(p) = candidates.iter().find(|p| p.key == key) {
        return Ok(p.clone());
    }
    let names: Vec<String> = candidates.iter().map(|p| p.key.clone()).collect();
    let mut scored: Vec<(f64, &String)> = names
        .iter()
        .map(|c| (strsim::jaro_winkler(key, c), c))
        .collect();
    scored.sort_by(|a, b| b.0.total_cmp(&a.0).then_with(|| a.1.cmp(b.1)));
    let close: Vec<String> = scored
        .iter()
        .filter(|(s, _)| *s > 0.8)
        .take(3)
        .map(|(_, c)| format!("`{c}`"))
        .collect();
    let hint = if close.is_empty() {
        String::new()
    } else {
        format!("; did you mean {}?", close.join(" or "))
    };
    Err(SensitivityError::UnknownParameter {
        key: key.to_string(),
        reason: format!("not a numeric key of the vehicle file{hint}"),
    })
}

impl CaseList for Plan {
    /// Two cases per parameter.
    fn len(&self) -> usize {
        2 * self.parameters.len()
    }

    /// The base overrides, then the perturbed key.
    fn overrides(&self, index: usize) -> Vec<Override> {
        let (i, direction) = self.case(index);
        let mut overrides = self.base_overrides.clone();
        overrides.push(Override {
            path: self.parameters[i].key.clone(),
            value: toml::Value::Float(self.perturbed_value(i, direction)),
        });
        overrides
    }

    /// The perturbed value.
    fn values(&self, index: usize) -> Vec<f64> {
        let (i, direction) = self.case(index);
        vec![self.perturbed_value(i, direction)]
    }

    /// None: a ranking needs only the metrics.
    fn channels(&self) -> Option<&[String]> {
        Some(&[])
    }
}
