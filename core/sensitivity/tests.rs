//! Tests of the plan and the estimates on metrics with known derivatives.

use super::*;
use crate::sweep::CaseList;

fn parameter(key: &str, value: f64) -> Parameter {
    Parameter {
        key: key.to_string(),
        value,
        integer: false,
    }
}

/// Outcomes of `plan` for a metric `m(p)` of the perturbed parameter alone
/// (the others at base), named `m`.
fn outcomes(plan: &Plan, m: impl Fn(usize, f64) -> Option<f64>) -> Vec<CaseOutcome> {
    (0..plan.len())
        .map(|c| {
            let (i, d) = plan.case(c);
            let result = match m(i, plan.perturbed_value(i, d)) {
                Some(v) => Ok(vec![("m".to_string(), v)]),
                None => Err("failed: diverged".to_string()),
            };
            CaseOutcome { result }
        })
        .collect()
}

/// A power law m = p^k has the elasticity k everywhere (definition of the
/// elasticity; e.g. Sydsæter & Hammond, *Essential Mathematics for Economic
/// Analysis*, ch. 7.7). The central difference of p^2 over p(1 ± h) is
/// exactly 2; the one-sided ones are 2 ± h, so the asymmetry is h/2.
#[test]
fn power_law_elasticities() {
    let plan = Plan::new(
        &[parameter("a.square", 3.0), parameter("a.cube", 2.0)],
        None,
        vec![],
        0.01,
    )
    .unwrap();
    let power = [2.0, 3.0];
    let base_p = [3.0, 2.0];
    // m = Π p_j^k_j with only parameter i moved; base m = 9·8 = 72.
    let m = |i: usize, p: f64| {
        let mut v = 1.0;
        for j in 0..2 {
            let pj: f64 = if j == i { p } else { base_p[j] };
            v *= pj.powf(power[j]);
        }
        Some(v)
    };
    let r = rank("m", "1", 72.0, &plan, &outcomes(&plan, m));
    let e = &r.estimates;
    assert!((e[0].elasticity - 2.0).abs() < 1e-12, "{}", e[0].elasticity);
    assert!((e[0].elasticity_up - 2.01).abs() < 1e-12);
    assert!((e[0].elasticity_down - 1.99).abs() < 1e-12);
    assert!((e[0].asymmetry - 0.005).abs() < 1e-12);
    // p^3: central (3h + h^3)/h·... = 3 + h^2.
    assert!(
        (e[1].elasticity - 3.0001).abs() < 1e-10,
        "{}",
        e[1].elasticity
    );
    // Derivative: dm/dp of 8·p^2 at 3 is 48 (central exact for a parabola).
    assert!((e[0].derivative - 48.0).abs() < 1e-9);
    assert_eq!(e[1].rank, Some(1));
    assert_eq!(e[0].rank, Some(2));
    assert!(r.failures.is_empty());
}

/// A failed side leaves the central estimate and the asymmetry NaN, keeps
/// the other side, ranks by it and lists the failure; a parameter with both
/// sides failed has no rank and comes last.
#[test]
fn failed_perturbations_are_listed_not_fatal() {
    let plan = Plan::new(
        &[
            parameter("x.one", 1.0),
            parameter("x.two", 2.0),
            parameter("x.three", 4.0),
        ],
        None,
        vec![],
        0.1,
    )
    .unwrap();
    let m = |i: usize, p: f64| match i {
        0 if p > 1.0 => None,
        0 => Some(p),
        1 => Some(p / 2.0 * 0.5 + 0.5),
        _ => None,
    };
    let r = rank("m", "1", 1.0, &plan, &outcomes(&plan, m));
    let e = &r.estimates;
    assert!(e[0].elasticity.is_nan() && e[0].asymmetry.is_nan());
    assert!((e[0].elasticity_down - 1.0).abs() < 1e-12);
    assert!(e[0].elasticity_up.is_nan());
    assert_eq!(e[0].rank, Some(1));
    assert!((e[1].elasticity - 0.5).abs() < 1e-12);
    assert_eq!(e[1].rank, Some(2));
    assert_eq!(e[2].rank, None);
    let ranked: Vec<&str> = r.ranked().iter().map(|e| e.parameter.as_str()).collect();
    assert_eq!(ranked, ["x.one", "x.two", "x.three"]);
    let failed: Vec<(&str, Direction)> = r
        .failures
        .iter()
        .map(|f| (f.parameter.as_str(), f.direction))
        .collect();
    assert_eq!(
        failed,
        [
            ("x.one", Direction::Up),
            ("x.three", Direction::Up),
            ("x.three", Direction::Down)
        ]
    );
    assert!(r.failures[0].message.contains("diverged"));
}

/// A metric that is zero at the base has no elasticity but a derivative.
#[test]
fn zero_metric_keeps_the_derivative() {
    let plan = Plan::new(&[parameter("k", 2.0)], None, vec![], 0.01).unwrap();
    let r = rank(
        "m",
        "N",
        0.0,
        &plan,
        &outcomes(&plan, |_, p| Some(3.0 * (p - 2.0))),
    );
    let e = &r.estimates[0];
    assert!(e.elasticity.is_nan() && e.elasticity_up.is_nan());
    assert!((e.derivative - 3.0).abs() < 1e-12);
    assert_eq!(e.rank, None);
}

/// Zero and integer keys are skipped with a reason; the chosen order is
/// kept; names that are not numeric keys are refused with a suggestion.
#[test]
fn plan_selection() {
    let toml = "name = \"invented\"\n[chassis]\nmass = 1500.0\nwheelbase = 2.6\n\
                [drive]\nfront_share = 0.0\n[drive.table]\npoints = 3\nspeeds = [1.0, 2.0]\n";
    let all = vehicle_parameters(toml).unwrap();
    let keys: Vec<&str> = all.iter().map(|p| p.key.as_str()).collect();
    assert_eq!(
        keys,
        [
            "chassis.mass",
            "chassis.wheelbase",
            "drive.front_share",
            "drive.table.points"
        ]
    );
    let plan = Plan::new(&all, None, vec![], DEFAULT_STEP).unwrap();
    assert_eq!(plan.parameters.len(), 2);
    let skipped: Vec<&str> = plan.skipped.iter().map(|s| s.key.as_str()).collect();
    assert_eq!(skipped, ["drive.front_share", "drive.table.points"]);
    let chosen = ["chassis.wheelbase".to_string(), "chassis.mass".to_string()];
    let plan = Plan::new(&all, Some(&chosen), vec![], DEFAULT_STEP).unwrap();
    assert_eq!(plan.parameters[0].key, "chassis.wheelbase");
    let err = Plan::new(&all, Some(&["chassis.mas".to_string()]), vec![], 0.01).unwrap_err();
    assert!(matches!(err, SensitivityError::UnknownParameter { .. }));
    assert!(err.to_string().contains("`chassis.mass`"), "{err}");
    assert_eq!(err.kind(), ErrorKind::BadInput);
    for step in [0.0, -0.01, 0.6, f64::NAN] {
        assert!(matches!(
            Plan::new(&all, None, vec![], step),
            Err(SensitivityError::Step(_))
        ));
    }
    let only_zero = ["drive.front_share".to_string()];
    assert!(matches!(
        Plan::new(&all, Some(&only_zero), vec![], 0.01),
        Err(SensitivityError::NothingToPerturb(_))
    ));
}

/// Case `2i` steps parameter `i` up, `2i + 1` down, after the base
/// overrides (so the step wins over a `--set` of the same key).
#[test]
fn case_overrides() {
    let base = vec![crate::params::Override::parse("chassis.mass=1600").unwrap()];
    let plan = Plan::new(
        &[
            parameter("chassis.mass", 1600.0),
            parameter("aero.drag_area", 0.5),
        ],
        None,
        base,
        0.01,
    )
    .unwrap();
    assert_eq!(plan.len(), 4);
    let step = |c: usize| -> (String, f64) {
        let overrides = plan.overrides(c);
        assert_eq!(overrides.len(), 2);
        assert_eq!(overrides[0].to_text(), "chassis.mass=1600");
        let o = &overrides[1];
        (o.path.clone(), o.value.as_float().unwrap())
    };
    assert_eq!(step(0), ("chassis.mass".to_string(), 1600.0 * (1.0 + 0.01)));
    assert_eq!(step(1), ("chassis.mass".to_string(), 1600.0 * (1.0 - 0.01)));
    assert_eq!(step(3), ("aero.drag_area".to_string(), 0.5 * (1.0 - 0.01)));
    assert_eq!(plan.values(2), [0.5 * (1.0 + 0.01)]);
    assert_eq!(plan.channels(), Some(&[][..]));
}
