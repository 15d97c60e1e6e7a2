//! `yawdyn bench` end to end: every figure in the JSON and in the table, and
//! the evaluation counts that integration across ticks promises (exact
//! counts, not times: tests never assert wall-clock times).

mod common;

use common::{TempDir, repo_path};

#[test]
fn bench_reports_every_run_and_ticks_cost_no_extra_evaluations() {
    let dir = TempDir::new();
    let vehicle = repo_path("scripts/vehicles/hybrid_crossover.toml");
    let vehicle = vehicle.to_str().unwrap();
    let args = ["bench", vehicle, "--duration", "2", "--repeats", "2"];
    let out = dir.yawdyn(args.iter().copied().chain(["--json"]));
    out.expect_code(0);
    let report: serde_json::Value = serde_json::from_str(&out.stdout).unwrap();
    let runs = report["runs"].as_array().unwrap();
    let run = |name: &str| {
        runs.iter()
            .find(|r| r["name"] == name)
            .unwrap_or_else(|| panic!("no run {name}"))
    };
    let evaluations = |name: &str| run(name)["evaluations"].as_u64().unwrap();
    for r in runs {
        for key in ["wall_s", "cpu_s"] {
            assert!(
                r[key]["min"].as_f64().unwrap() > 0.0,
                "{key} of {}",
                r["name"]
            );
            assert!(r[key]["median"].as_f64().unwrap() >= r[key]["min"].as_f64().unwrap());
        }
        assert!(r["evaluations"].as_u64().unwrap() > 0);
    }
    // Unchanged commands at 100 Hz ticks: (almost) the evaluations of one segment.
    let (open, ticked) = (evaluations("open_loop_1khz"), evaluations("ticked_1khz"));
    assert!(ticked as f64 <= 1.02 * open as f64, "{ticked} vs {open}");
    // Interpolated 1 kHz output needs far fewer model evaluations than one per sample.
    let output = |name: &str| run(name)["output_evaluations"].as_u64().unwrap();
    assert!(output("open_loop_1khz") * 2 < output("open_loop_1khz_exact"));
    assert_eq!(run("open_loop_1khz")["samples"], 2001);
    // A command change at every tick costs a restart per tick.
    let ratio = report["closed_loop_evaluation_ratio"].as_f64().unwrap();
    assert!(ratio > 1.0, "{ratio}");
    assert!(report["closed_loop_yaw_rate_error"].as_f64().unwrap() < 1e-5);
    // The table shows every run.
    let text = dir.yawdyn(args);
    text.expect_code(0);
    for r in runs {
        assert!(
            text.stdout.contains(r["name"].as_str().unwrap()),
            "{}",
            text.stdout
        );
    }
    // Every figure of the JSON has its row: derivative time as wall and CPU
    // time, min and median; both accuracy figures.
    for key in ["ns_per_derivative", "ns_per_derivative_cpu"] {
        let s = &report[key];
        assert!(s["min"].as_f64().unwrap() > 0.0 && s["median"].as_f64().unwrap() > 0.0);
    }
    for r in runs {
        for key in ["real_time_factor", "real_time_factor_cpu"] {
            assert!(r[key]["best"].as_f64().unwrap() >= r[key]["median"].as_f64().unwrap());
        }
    }
    assert!(report["open_loop_yaw_rate_error"].as_f64().unwrap() < 1e-4);
    for measure in [
        "derivative evaluation (wall), min / median",
        "derivative evaluation (CPU), min / median",
        "real-time factor (wall) best / median",
        "real-time factor (CPU) best / median",
        "closed-loop evaluations",
        "closed-loop yaw-rate error",
        "open-loop yaw-rate error",
        "final lateral acceleration",
        "evaluations per s",
        "output evaluations",
    ] {
        assert!(text.stdout.contains(measure), "{measure}");
    }
}
