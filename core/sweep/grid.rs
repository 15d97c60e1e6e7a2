//! The case list of a sweep: varied parameters, their full-factorial grid in
//! a fixed order, and contiguous shards of it.

use std::ops::Range;

use crate::params::Override;

use super::SweepError;

/// Most cases one sweep runs (10 million): far beyond any study, and a
/// limit that stops a typing error before any case starts.
pub const MAX_CASES: usize = 10_000_000;

/// One varied parameter: `key=start:stop:count`, `count` evenly spaced values
/// from `start` to `stop` inclusive.
#[derive(Debug, Clone, PartialEq)]
pub struct VaryAxis {
    /// Dotted vehicle-parameter path, e.g. `drive.front_share`.
    pub key: String,
    /// First value, in the parameter's own unit (as in the vehicle file).
    pub start: f64,
    /// Last value, in the parameter's own unit.
    pub stop: f64,
    /// Number of values, ≥ 1 (with 1 the only value is `start`).
    pub count: usize,
    /// Unit of the values, ASCII (e.g. `kg`, `1`; [`crate::params::parameter_unit`]
    /// for vehicle keys, the script's `param(name, default, unit)` for
    /// `manoeuvre.*` keys); empty when unknown.
    pub unit: String,
}

impl VaryAxis {
    /// Parses `key=start:stop:count` as given to `--vary`. The unit is that
    /// of the vehicle key ([`crate::params::parameter_unit`]), empty for
    /// other keys (the caller may set it).
    ///
    /// ```
    /// let axis = yawdyn::sweep::VaryAxis::parse("drive.front_share=0:1:5").unwrap();
    /// assert_eq!(axis.values(), vec![0.0, 0.25, 0.5, 0.75, 1.0]);
    /// ```
    pub fn parse(text: &str) -> Result<VaryAxis, SweepError> {
        let bad = |reason: &str| SweepError::Vary {
            text: text.to_string(),
            reason: reason.to_string(),
        };
        let (key, range) = text
            .split_once('=')
            .ok_or_else(|| bad("expected key=start:stop:count"))?;
        let key = key.trim();
        if key.is_empty() || key.split('.').any(|part| part.trim().is_empty()) {
            return Err(bad("the parameter key is empty or has an empty part"));
        }
        if key.contains(['/', '\0']) {
            return Err(bad("the parameter key may not contain `/` or NUL"));
        }
        let parts: Vec<&str> = range.split(':').map(str::trim).collect();
        let [start, stop, count] = parts[..] else {
            return Err(bad("expected three fields start:stop:count after `=`"));
        };
        let number = |field: &str, what: &str| -> Result<f64, SweepError> {
            match field.parse::<f64>() {
                Ok(v) if v.is_finite() => Ok(v),
                _ => Err(bad(&format!("{what} {field:?} is not a finite number"))),
            }
        };
        let start = number(start, "start")?;
        let stop = number(stop, "stop")?;
        let count: usize = count
            .parse()
            .map_err(|_| bad(&format!("count {count:?} is not a whole number")))?;
        if count == 0 {
            return Err(bad("count must be at least 1"));
        }
        Ok(VaryAxis {
            key: key.to_string(),
            start,
            stop,
            count,
            unit: crate::params::parameter_unit(key)
                .unwrap_or_default()
                .to_string(),
        })
    }

    /// The axis as `key=start:stop:count` text (Rust's shortest round-trip
    /// number form, so parsing it back gives the same axis).
    pub fn to_text(&self) -> String {
        format!(
            "{}={:?}:{:?}:{}",
            self.key, self.start, self.stop, self.count
        )
    }

    /// Value number `i` (0-based): `start + (stop − start)·i/(count − 1)`,
    /// exactly `stop` for the last and `start` when `count` is 1.
    pub fn value(&self, i: usize) -> f64 {
        if self.count <= 1 || i == 0 {
            self.start
        } else if i + 1 == self.count {
            self.stop
        } else {
            self.start + (self.stop - self.start) * (i as f64) / ((self.count - 1) as f64)
        }
    }

    /// All `count` values in order.
    pub fn values(&self) -> Vec<f64> {
        (0..self.count).map(|i| self.value(i)).collect()
    }
}

/// The full-factorial grid of several [`VaryAxis`]es.
///
/// Order: case indices run like nested loops with the **first** axis the
/// outermost (slowest) and the last axis the innermost (fastest), i.e.
/// row-major order. For axes of counts `n1, n2, …, nk`, case `c` takes value
/// `i_j` of axis `j` with `c = ((i1·n2 + i2)·n3 + i3)…`.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct Grid {
    /// The varied parameters, slowest first.
    pub axes: Vec<VaryAxis>,
}

impl Grid {
    /// A grid over `axes`; refuses an empty list, a key given twice, and
    /// grids with more than `MAX_CASES` cases.
    pub fn new(axes: Vec<VaryAxis>) -> Result<Grid, SweepError> {
        if axes.is_empty() {
            return Err(SweepError::Vary {
                text: String::new(),
                reason: "give at least one --vary".to_string(),
            });
        }
        for (i, axis) in axes.iter().enumerate() {
            if axes[..i].iter().any(|a| a.key == axis.key) {
                return Err(SweepError::Vary {
                    text: axis.to_text(),
                    reason: format!("`{}` is varied twice", axis.key),
                });
            }
        }
        let total = axes
            .iter()
            .try_fold(1usize, |acc, a| acc.checked_mul(a.count))
            .filter(|&n| n <= MAX_CASES);
        if total.is_none() {
            let counts: Vec<String> = axes.iter().map(|a| a.count.to_string()).collect();
            return Err(SweepError::Vary {
                text: axes
                    .iter()
                    .map(|a| a.to_text())
                    .collect::<Vec<_>>()
                    .join(" "),
                reason: format!(
                    "the grid has {} cases, more than the {MAX_CASES} a sweep runs \
                     (split it into several sweeps or use fewer points)",
                    counts.join(" x ")
                ),
            });
        }
        Ok(Grid { axes })
    }

    /// Number of cases (product of the counts).
    pub fn len(&self) -> usize {
        self.axes.iter().map(|a| a.count).product()
    }

    /// True when the grid has no axes (never, for a grid made by [`Grid::new`]).
    pub fn is_empty(&self) -> bool {
        self.axes.is_empty()
    }

    /// The varied keys, in axis order.
    pub fn keys(&self) -> Vec<String> {
        self.axes.iter().map(|a| a.key.clone()).collect()
    }

    /// Parameter values of case `index`, one per axis in axis order.
    pub fn values(&self, index: usize) -> Vec<f64> {
        let mut rest = index;
        let mut out = vec![0.0; self.axes.len()];
        for (slot, axis) in out.iter_mut().zip(&self.axes).rev() {
            *slot = axis.value(rest % axis.count);
            rest /= axis.count;
        }
        out
    }

    /// The overrides of case `index` (one float override per axis).
    pub fn overrides(&self, index: usize) -> Vec<Override> {
        self.axes
            .iter()
            .zip(self.values(index))
            .map(|(axis, v)| Override {
                path: axis.key.clone(),
                value: toml::Value::Float(v),
            })
            .collect()
    }
}

/// Shard `index` of `count` (1-based), as given to `--shard K/N`.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct Shard {
    /// Which slice, 1 ≤ index ≤ count.
    pub index: usize,
    /// Number of slices, ≥ 1.
    pub count: usize,
}

impl Shard {
    /// The whole sweep, `1/1`.
    pub const WHOLE: Shard = Shard { index: 1, count: 1 };

    /// Parses `K/N` with 1 ≤ K ≤ N.
    pub fn parse(text: &str) -> Result<Shard, SweepError> {
        let bad = |reason: &str| SweepError::Shard {
            text: text.to_string(),
            reason: reason.to_string(),
        };
        let (k, n) = text
            .split_once('/')
            .ok_or_else(|| bad("expected K/N, e.g. 2/8"))?;
        let k: usize = k
            .trim()
            .parse()
            .map_err(|_| bad("K is not a whole number"))?;
        let n: usize = n
            .trim()
            .parse()
            .map_err(|_| bad("N is not a whole number"))?;
        if n == 0 || k == 0 || k > n {
            return Err(bad("need 1 ≤ K ≤ N (K counts from 1)"));
        }
        Ok(Shard { index: k, count: n })
    }

    /// The global case indices of this shard of `total` cases: the K-th of N
    /// contiguous slices, `floor(total·(K−1)/N) .. floor(total·K/N)`. Slices
    /// differ in length by at most one; a shard may be empty when N > total.
    pub fn range(&self, total: usize) -> Range<usize> {
        let edge = |k: usize| ((total as u128 * k as u128) / self.count as u128) as usize;
        edge(self.index - 1)..edge(self.index)
    }
}

impl std::fmt::Display for Shard {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        write!(f, "{}/{}", self.index, self.count)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn axis_values_hit_both_ends_exactly() {
        let a = VaryAxis::parse("chassis.mass=1500:1900:3").unwrap();
        assert_eq!(a.values(), vec![1500.0, 1700.0, 1900.0]);
        let b = VaryAxis::parse("x=0.1:0.7:7").unwrap();
        assert_eq!(b.value(6).to_bits(), 0.7f64.to_bits());
        let one = VaryAxis::parse("x=2:5:1").unwrap();
        assert_eq!(one.values(), vec![2.0]);
        let back = VaryAxis::parse(&b.to_text()).unwrap();
        assert_eq!(back, b);
    }

    #[test]
    fn axis_rejects_bad_text() {
        for bad in [
            "x",
            "=0:1:2",
            "x=0:1",
            "x=0:1:2:3",
            "x=a:1:2",
            "x=0:1:0",
            "x=0:1:-1",
            "x=0:inf:2",
            "x..y=0:1:2",
        ] {
            assert!(VaryAxis::parse(bad).is_err(), "{bad}");
        }
    }

    #[test]
    fn grid_order_first_axis_slowest() {
        let g = Grid::new(vec![
            VaryAxis::parse("a=0:1:2").unwrap(),
            VaryAxis::parse("b=10:30:3").unwrap(),
        ])
        .unwrap();
        assert_eq!(g.len(), 6);
        let all: Vec<Vec<f64>> = (0..6).map(|i| g.values(i)).collect();
        assert_eq!(
            all,
            vec![
                vec![0.0, 10.0],
                vec![0.0, 20.0],
                vec![0.0, 30.0],
                vec![1.0, 10.0],
                vec![1.0, 20.0],
                vec![1.0, 30.0],
            ]
        );
        assert!(Grid::new(vec![]).is_err());
        let twice = vec![
            VaryAxis::parse("a=0:1:2").unwrap(),
            VaryAxis::parse("a=0:1:3").unwrap(),
        ];
        assert!(Grid::new(twice).is_err());
    }

    #[test]
    fn shards_cover_cases_once() {
        for total in [0usize, 1, 5, 10, 1000] {
            for n in 1..=7 {
                let mut next = 0;
                for k in 1..=n {
                    let r = Shard { index: k, count: n }.range(total);
                    assert_eq!(r.start, next);
                    next = r.end;
                }
                assert_eq!(next, total);
            }
        }
        assert_eq!(Shard::parse("2/3").unwrap().range(10), 3..6);
        for bad in ["0/3", "4/3", "1/0", "3", "a/b"] {
            assert!(Shard::parse(bad).is_err(), "{bad}");
        }
    }
}
