//! `yawdyn sensitivity` end to end: elasticities of the linear understeer
//! gradient against their closed form, identical outputs for any `--jobs`,
//! failed perturbations reported, unknown names refused with exit code 2.
//! The arithmetic of the estimates is tested in `core/sensitivity/tests.rs`.

mod common;

use common::{TempDir, repo_path};
use serde_json::Value;

fn json(stdout: &str) -> Value {
    serde_json::from_str(stdout).unwrap_or_else(|e| panic!("not JSON ({e}):\n{stdout}"))
}

/// The estimates of `metric` in the JSON document, by parameter key.
fn estimates<'a>(doc: &'a Value, metric: &str) -> Vec<&'a Value> {
    doc["rankings"]
        .as_array()
        .unwrap()
        .iter()
        .find(|r| r["metric"] == metric)
        .unwrap_or_else(|| panic!("no ranking of {metric}"))["estimates"]
        .as_array()
        .unwrap()
        .iter()
        .collect()
}

fn elasticity(doc: &Value, metric: &str, key: &str) -> f64 {
    estimates(doc, metric)
        .into_iter()
        .find(|e| e["parameter"] == key)
        .unwrap_or_else(|| panic!("no estimate for {key}"))["elasticity"]
        .as_f64()
        .unwrap()
}

/// Elasticities of the linear understeer gradient K = (m/L)·(b/Cf − a/Cr)
/// (Gillespie, *Fundamentals of Vehicle Dynamics*, ch. 6; Milliken &
/// Milliken, *Race Car Vehicle Dynamics*, ch. 5), with the axle cornering
/// stiffness C = 2·pKy1·Fz0·sin(2·atan(Fz/(pKy2·Fz0))) at the static wheel
/// load Fz (the Magic Formula's Kyα at zero camber; Pacejka, *Tire and
/// Vehicle Dynamics*, ch. 4), Fz front = m·g·b/(2L), rear m·g·a/(2L).
/// With A = b/Cf, B = a/Cr, D = A − B and ε = (1 − u²)/(1 + u²), u =
/// Fz/(pKy2·Fz0), the elasticity of C with respect to the load, the chain
/// rule gives (derived here):
///
/// - mass: 1 + (−A·εf + B·εr)/D
/// - pKy1 front: −A/D; rear: B/D
/// - pKy2 front: A·εf/D; rear: −B·εr/D
/// - Fz0 front: −A·(1 − εf)/D
/// - a (b = L − a): (−(a/Cf)·(1 − εf) − B·(1 − εr))/D
/// - L (a held): −1 + ((L − a·εf)/Cf − B·εr)/D
///
/// `yawdyn vehicle` reports K from the same parameters; the central
/// difference at the default 1 % step must match within 1 %.
#[test]
fn understeer_gradient_elasticities_match_the_closed_form() {
    let text = std::fs::read_to_string(repo_path("scripts/vehicles/track_car.toml")).unwrap();
    let file: toml::Table = toml::from_str(&text).unwrap();
    let get = |path: &str| -> f64 {
        let mut parts = path.split('.');
        let mut v = &file[parts.next().unwrap()];
        for part in parts {
            v = &v[part];
        }
        v.as_float().unwrap_or_else(|| panic!("{path}"))
    };
    let g = 9.80665;
    let m = get("chassis.mass");
    let l = get("chassis.wheelbase");
    let a = get("chassis.cg_to_front_axle");
    let b = l - a;
    let mf = |axle: &str, key: &str| get(&format!("tyre.{axle}.magic_formula.{key}"));
    let stiffness = |axle: &str, fz: f64| {
        let (ky1, ky2, fz0) = (
            mf(axle, "pKy1"),
            mf(axle, "pKy2"),
            mf(axle, "nominal_load_n"),
        );
        let u = fz / (ky2 * fz0);
        let c = 2.0 * ky1 * fz0 * (2.0 * u.atan()).sin();
        let eps = (1.0 - u * u) / (1.0 + u * u);
        (c, eps)
    };
    let (cf, ef) = stiffness("front", m * g * b / (2.0 * l));
    let (cr, er) = stiffness("rear", m * g * a / (2.0 * l));
    let (big_a, big_b) = (b / cf, a / cr);
    let d = big_a - big_b;
    let expected = [
        ("chassis.mass", 1.0 + (-big_a * ef + big_b * er) / d),
        ("tyre.front.magic_formula.pKy1", -big_a / d),
        ("tyre.rear.magic_formula.pKy1", big_b / d),
        ("tyre.front.magic_formula.pKy2", big_a * ef / d),
        ("tyre.rear.magic_formula.pKy2", -big_b * er / d),
        (
            "tyre.front.magic_formula.nominal_load_n",
            -big_a * (1.0 - ef) / d,
        ),
        (
            "chassis.cg_to_front_axle",
            (-(a / cf) * (1.0 - ef) - big_b * (1.0 - er)) / d,
        ),
        (
            "chassis.wheelbase",
            -1.0 + ((l - a * ef) / cf - big_b * er) / d,
        ),
    ];
    let keys: Vec<&str> = expected.iter().map(|(k, _)| *k).collect();
    let dir = TempDir::new();
    // A shipped vehicle by name, from a folder that has no copy of it.
    let out = dir.yawdyn([
        "sensitivity",
        "--vehicle",
        "track_car",
        "--metric",
        "vehicle.understeer_gradient_deg_per_g",
        "--params",
        &keys.join(","),
        "--jobs",
        "2",
        "--json",
    ]);
    out.expect_code(0);
    let doc = json(&out.stdout);
    // The base value is the figure `yawdyn vehicle` prints.
    let k_closed = (m / l) * d * (180.0 / std::f64::consts::PI) * g;
    let base = doc["rankings"][0]["base"].as_f64().unwrap();
    assert!((base / k_closed - 1.0).abs() < 1e-9, "{base} vs {k_closed}");
    for (key, analytic) in expected {
        let found = elasticity(&doc, "vehicle.understeer_gradient_deg_per_g", key);
        assert!(
            (found / analytic - 1.0).abs() < 0.01,
            "{key}: {found} vs closed form {analytic}"
        );
    }
    // Ranked by |elasticity|, largest first.
    let ranked: Vec<f64> = estimates(&doc, "vehicle.understeer_gradient_deg_per_g")
        .iter()
        .map(|e| e["elasticity"].as_f64().unwrap().abs())
        .collect();
    assert!(ranked.windows(2).all(|w| w[0] >= w[1]), "{ranked:?}");
}

/// A short constant-steer run on the invented track car, with two metrics.
const SCRIPT: &str = r#"
// Invented test manoeuvre: constant steer at 60 km/h for 0.6 s.
sample_rate(100);
start_speed(kph(60));
hold_speed(kph(60));
phase("turn");
steer(deg(30));
run_for(0.6);
fn evaluate(ch) {
    metric("final_lat_accel", ch.ay[ch.ay.len() - 1], "m/s^2");
    metric("peak_yaw_rate", max(ch.yaw_rate), "rad/s");
}
"#;

/// The same ranking on 1 and 2 worker threads gives byte-identical JSON,
/// HDF5 (with `SOURCE_DATE_EPOCH` fixing the creation stamp) and SVG; the
/// file describes itself.
#[test]
fn outputs_do_not_depend_on_jobs() {
    let dir = TempDir::new();
    let script = dir.write("turn.rhai", SCRIPT);
    let car = repo_path("scripts/vehicles/track_car.toml");
    let run = |jobs: &str| {
        let out = std::process::Command::new(env!("CARGO_BIN_EXE_yawdyn"))
            .current_dir(dir.path())
            .env("SOURCE_DATE_EPOCH", "1800000000")
            .args([
                "sensitivity",
                script.to_str().unwrap(),
                "--vehicle",
                car.to_str().unwrap(),
                "--metric",
                "final_lat_accel,peak_yaw_rate",
                "--params",
                "chassis.mass,chassis.yaw_inertia,tyre.rear.magic_formula.pKy1,aero.downforce_area,steering.ratio",
                "--set",
                "road.friction=0.9",
                "--jobs",
                jobs,
                "--json",
                "--out",
                &format!("rank{jobs}.h5"),
                "--plot",
                &format!("rank{jobs}.svg"),
            ])
            .output()
            .unwrap();
        assert_eq!(
            out.status.code(),
            Some(0),
            "{}",
            String::from_utf8_lossy(&out.stderr)
        );
        out.stdout
    };
    let one = run("1");
    let two = run("2");
    assert_eq!(one, two, "JSON differs between --jobs 1 and 2");
    let read = |name: &str| std::fs::read(dir.join(name)).unwrap();
    assert_eq!(read("rank1.h5"), read("rank2.h5"), "HDF5 files differ");
    assert_eq!(read("rank1.svg"), read("rank2.svg"), "SVG files differ");

    // Physics sanity of the ranking (common practice): more steering ratio,
    // less road-wheel steer, less lateral acceleration.
    let doc = json(&String::from_utf8(one).unwrap());
    assert!(elasticity(&doc, "final_lat_accel", "steering.ratio") < 0.0);

    // The file: format, step, units, provenance, one rank per parameter.
    let file = hdf5::File::open(dir.join("rank1.h5")).unwrap();
    let text = |loc: &hdf5::Location, name: &str| -> String {
        let v: hdf5::types::VarLenUnicode = loc.attr(name).unwrap().read_scalar().unwrap();
        v.as_str().to_string()
    };
    assert_eq!(text(&file, "format"), "yawdyn-sensitivity");
    assert_eq!(text(&file, "status"), "completed");
    assert_eq!(text(&file, "created_utc"), "2027-01-15T08:00:00Z");
    let step: f64 = file.attr("step").unwrap().read_scalar().unwrap();
    assert_eq!(step, 0.01);
    let group = file.group("metrics/final_lat_accel").unwrap();
    assert_eq!(text(&group, "units"), "m/s^2");
    let ranks: Vec<i64> = group.dataset("rank").unwrap().read_raw().unwrap();
    let mut sorted = ranks.clone();
    sorted.sort_unstable();
    assert_eq!(sorted, [1, 2, 3, 4, 5]);
    let elasticities = group.dataset("elasticity").unwrap();
    assert_eq!(text(&elasticities, "units"), "1");
    let overrides: Vec<hdf5::types::VarLenUnicode> = file
        .dataset("provenance/overrides")
        .unwrap()
        .read_raw()
        .unwrap();
    assert_eq!(overrides[0].as_str(), "road.friction=0.9");
    let toml: hdf5::types::VarLenUnicode = file
        .dataset("provenance/vehicle_toml")
        .unwrap()
        .read_scalar()
        .unwrap();
    assert!(toml.as_str().contains("friction = 0.9"));
    let svg = String::from_utf8(read("rank1.svg")).unwrap();
    assert!(svg.contains("steering.ratio") && svg.contains("central estimate"));
}

/// A perturbation out of the parameter's range fails; the ranking of the
/// other parameters and the one-sided estimate are still given, the failure
/// listed, the file marked failed, and the exit code is 1.
#[test]
fn failed_perturbation_is_reported() {
    let dir = TempDir::new();
    let out = dir.yawdyn([
        "sensitivity",
        "--vehicle",
        "track_car",
        "--metric",
        "vehicle.front_axle_load_n",
        "--set",
        "brakes.front_bias=1.0",
        "--params",
        "brakes.front_bias,chassis.cg_to_front_axle",
        "--json",
        "--out",
        "failed.h5",
        "--plot",
        "figures/failed.svg",
    ]);
    out.expect_code(1);
    // Written although a case failed, into a directory made for it.
    assert!(dir.join("figures/failed.svg").is_file());
    let doc = json(&out.stdout);
    let failures = doc["rankings"][0]["failures"].as_array().unwrap();
    assert_eq!(failures.len(), 1, "{failures:?}");
    assert_eq!(failures[0]["parameter"], "brakes.front_bias");
    assert_eq!(failures[0]["direction"], "up");
    assert!(
        failures[0]["message"]
            .as_str()
            .unwrap()
            .contains("brakes.front_bias"),
        "{failures:?}"
    );
    // Static front load m·g·b/L: elasticity −a/b w.r.t. a (closed form,
    // Gillespie ch. 6); the brake bias does not move it (down side only).
    let e = elasticity(
        &doc,
        "vehicle.front_axle_load_n",
        "chassis.cg_to_front_axle",
    );
    let (a, b) = (1.32, 2.40 - 1.32);
    assert!((e / (-a / b) - 1.0).abs() < 1e-3, "{e}");
    let bias = estimates(&doc, "vehicle.front_axle_load_n")
        .into_iter()
        .find(|e| e["parameter"] == "brakes.front_bias")
        .unwrap()
        .clone();
    assert!(bias["elasticity"].is_null(), "{bias}");
    assert_eq!(bias["elasticity_down"].as_f64(), Some(0.0));
    assert_eq!(doc["failed_cases"], 1);
    let file = hdf5::File::open(dir.join("failed.h5")).unwrap();
    let status: hdf5::types::VarLenUnicode = file.attr("status").unwrap().read_scalar().unwrap();
    assert_eq!(status.as_str(), "failed");

    // The text output lists it too.
    let text = dir.yawdyn([
        "sensitivity",
        "--vehicle",
        "track_car",
        "--metric",
        "vehicle.front_axle_load_n",
        "--set",
        "brakes.front_bias=1.0",
        "--params",
        "brakes.front_bias,chassis.cg_to_front_axle",
    ]);
    text.expect_code(1);
    assert!(
        text.stdout.contains("failed perturbations (1)"),
        "{}",
        text.stdout
    );
}

/// Unknown metrics and parameters are bad input (exit 2), found before any
/// perturbed case runs: no output file is written.
#[test]
fn unknown_names_exit_2() {
    let dir = TempDir::new();
    let script = dir.write("turn.rhai", SCRIPT);
    let script = script.to_str().unwrap();
    let car = repo_path("scripts/vehicles/track_car.toml");
    let car = car.to_str().unwrap();
    let cases: [(&[&str], &str); 5] = [
        (
            &[script, "--vehicle", car, "--metric", "no_such_metric"],
            "final_lat_accel",
        ),
        (
            &[
                script,
                "--vehicle",
                car,
                "--metric",
                "final_lat_accel",
                "--params",
                "chassis.mas",
            ],
            "chassis.mass",
        ),
        (
            &["--vehicle", car, "--metric", "vehicle.no_such_figure"],
            "vehicle.understeer_gradient_deg_per_g",
        ),
        (
            &["--vehicle", car, "--metric", "stability.yaw_damping_ratio"],
            "--speed-kph",
        ),
        (
            &[
                "--vehicle",
                car,
                "--metric",
                "vehicle.mass_kg",
                "--step",
                "0",
            ],
            "--step",
        ),
    ];
    for (args, hint) in cases {
        let mut all = vec!["sensitivity"];
        all.extend_from_slice(args);
        all.extend_from_slice(&["--out", "x.h5", "--plot", "x.svg"]);
        let out = dir.yawdyn(&all);
        out.expect_code(2);
        assert!(out.stderr.contains(hint), "{args:?}: {}", out.stderr);
        assert!(!dir.join("x.h5").exists() && !dir.join("x.svg").exists());
    }
}

/// A stability quantity at an operating point ranks too: the base value is
/// the yaw/sideslip damping ratio `yawdyn stability` reports at the same
/// point (invented crossover, 80 km/h, 0.3 g), and every parameter gets an
/// estimate.
#[test]
fn stability_quantity_ranks() {
    let dir = TempDir::new();
    let out = dir.yawdyn([
        "sensitivity",
        "--vehicle",
        "hybrid_crossover",
        "--metric",
        "stability.yaw_damping_ratio",
        "--speed-kph",
        "80",
        "--lat-accel-g",
        "0.3",
        "--params",
        "chassis.yaw_inertia,chassis.mass",
        "--json",
    ]);
    out.expect_code(0);
    let doc = json(&out.stdout);
    assert_eq!(doc["operating_point"]["speed_kph"].as_f64(), Some(80.0));
    let stability = dir.yawdyn([
        "stability",
        "hybrid_crossover",
        "--speed-kph",
        "80",
        "--lat-accel-g",
        "0.3",
        "--json",
    ]);
    stability.expect_code(0);
    let zeta = json(&stability.stdout)["yaw_mode"]["damping_ratio"]
        .as_f64()
        .unwrap();
    assert_eq!(doc["rankings"][0]["base"].as_f64(), Some(zeta));
    for e in estimates(&doc, "stability.yaw_damping_ratio") {
        assert!(e["elasticity"].as_f64().unwrap().is_finite(), "{e}");
    }
}
