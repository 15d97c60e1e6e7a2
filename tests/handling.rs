//! Handling-diagram checks of the shipped steady-state circle manoeuvre
//! against the linear reference (ISO 4138 definition; Gillespie ch. 6).

use yawdyn::model::linear::summarize;
use yawdyn::params::{Override, load_vehicle};
use yawdyn::results::RunStatus;
use yawdyn::script::{RunOptions, run_script};

mod common;
use common::LINEARISE;

fn metric(record: &yawdyn::results::RunRecord, name: &str) -> f64 {
    record
        .metrics
        .iter()
        .find(|m| m.name == name)
        .unwrap_or_else(|| panic!("metric {name} missing"))
        .value
}

/// ISO 4138 constant radius: the understeer gradient from the handling
/// diagram at low lateral acceleration (≤ 2 m/s²) matches the linear value
/// K = Wf/Cαf − Wr/Cαr printed by `yawdyn vehicle` (Gillespie ch. 6) within 5 %.
#[test]
fn circle_understeer_gradient_matches_linear_value_at_low_lateral_acceleration() {
    let root = env!("CARGO_MANIFEST_DIR");
    let overrides: Vec<Override> = LINEARISE
        .iter()
        .map(|s| Override::parse(s).unwrap())
        .collect();
    let vehicle = load_vehicle(
        format!("{root}/scripts/vehicles/hybrid_crossover.toml").as_ref(),
        &overrides,
    )
    .unwrap();
    let linear = summarize(&vehicle).understeer_gradient_deg_per_g;
    let options = RunOptions {
        overrides,
        ..RunOptions::default()
    };
    let record = run_script(
        format!("{root}/scripts/steady_state_circle.rhai").as_ref(),
        &options,
    )
    .unwrap();
    assert_eq!(record.status, RunStatus::Completed);
    let measured = metric(&record, "understeer_gradient");
    assert!(linear > 0.5, "an understeering demo: {linear} deg/g");
    assert!(
        (measured - linear).abs() < 0.05 * linear,
        "handling diagram {measured} deg/g vs linear {linear} deg/g"
    );
    // Common practice: the gradient grows with lateral acceleration as the
    // front axle nears its limit (load transfer, tyre saturation).
    assert!(metric(&record, "understeer_gradient_to_4_mps2") > measured);
}
