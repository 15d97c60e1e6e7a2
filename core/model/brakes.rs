//! Stage 4b, brakes: the brake request shared between the friction brakes
//! (capacity, front bias) and regenerative braking by the blending rule.

use crate::params::{BlendingRule, Brakes, FRONT, REAR};

/// `[f(FRONT), f(REAR)]`: a per-axle array without the iterator machinery
/// of `array::map` (the inner loop is hot).
#[inline(always)]
pub(crate) fn per_axle(f: impl Fn(usize) -> f64) -> [f64; 2] {
    [f(FRONT), f(REAR)]
}

/// Braking torque at the wheels per axle [front, rear], N·m (both wheels, ≥ 0).
#[derive(Debug, Clone, Copy, Default, PartialEq)]
pub struct BrakeSplit {
    /// Friction brake torque per axle from the brake request.
    pub friction: [f64; 2],
    /// Regenerative brake torque per axle.
    pub regen: [f64; 2],
}

/// Shares the brake request (0..1 of the friction brakes' capacity) between
/// friction and the regenerative capacity of each axle (N·m at the wheels).
///
/// The request asks for T = request·capacity, split [bias·T, (1 − bias)·T]
/// (brake proportioning; Gillespie, *Fundamentals of Vehicle Dynamics*,
/// ch. 3). Balance kept: each axle's regeneration replaces friction on that
/// axle up to the axle's share, so the front/rear balance stays at the bias.
/// Regeneration first: the generators take min(T, their capacity), shared in
/// proportion to their capacities, and friction supplies the rest at the
/// bias, so the balance moves towards the generating axle (common practice).
#[inline]
pub fn blend_brakes(
    brakes: &Brakes,
    rule: BlendingRule,
    request: f64,
    regen_capacity: [f64; 2],
) -> BrakeSplit {
    let total = request.clamp(0.0, 1.0) * brakes.max_torque;
    let bias = brakes.front_bias;
    let at_bias = |t: f64| [bias * t, (1.0 - bias) * t];
    match rule {
        BlendingRule::BalanceKept => {
            let share = at_bias(total);
            let regen = per_axle(|k| share[k].min(regen_capacity[k]));
            BrakeSplit {
                friction: per_axle(|k| share[k] - regen[k]),
                regen,
            }
        }
        BlendingRule::RegenerationFirst => {
            let capacity = regen_capacity[FRONT] + regen_capacity[REAR];
            let taken = total.min(capacity);
            let regen = if capacity > 0.0 {
                per_axle(|k| taken * regen_capacity[k] / capacity)
            } else {
                [0.0; 2]
            };
            BrakeSplit {
                friction: at_bias(total - taken),
                regen,
            }
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn brakes() -> Brakes {
        Brakes {
            max_torque: 10_000.0,
            front_bias: 0.7,
            blending: BlendingRule::BalanceKept,
        }
    }

    /// Balance kept: front share of (friction + regeneration) stays at the
    /// bias whatever the generator takes; regeneration never exceeds its
    /// capacity or its axle's share (the rule's definition).
    #[test]
    fn balance_kept_holds_the_bias() {
        let b = brakes();
        for capacity in [0.0, 500.0, 2999.0, 3000.0, 8000.0] {
            let s = blend_brakes(&b, BlendingRule::BalanceKept, 0.6, [0.0, capacity]);
            let axle = [0, 1].map(|k| s.friction[k] + s.regen[k]);
            assert!((axle[0] / (axle[0] + axle[1]) - 0.7).abs() < 1e-12);
            assert!((axle[0] + axle[1] - 6000.0).abs() < 1e-9);
            assert!(s.regen[1] <= capacity && s.regen[1] <= 1800.0 + 1e-9);
        }
    }

    /// Regeneration first: with a rear generator of capacity C < T the front
    /// share is bias·(T − C)/T (closed form of the rule).
    #[test]
    fn regeneration_first_shifts_the_balance_by_closed_form() {
        let b = brakes();
        let (t, c) = (6000.0, 1500.0);
        let s = blend_brakes(&b, BlendingRule::RegenerationFirst, 0.6, [0.0, c]);
        let front = s.friction[0] + s.regen[0];
        let total = front + s.friction[1] + s.regen[1];
        assert!((total - t).abs() < 1e-9);
        assert!((front / total - 0.7 * (t - c) / t).abs() < 1e-12);
        assert_eq!(s.regen, [0.0, c]);
        // Capacity above the request: all regenerative, no friction.
        let s = blend_brakes(&b, BlendingRule::RegenerationFirst, 0.1, [0.0, c]);
        assert_eq!(s.friction, [0.0, 0.0]);
        assert!((s.regen[1] - 1000.0).abs() < 1e-9);
    }
}
