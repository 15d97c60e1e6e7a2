//! `yawdyn stability` through the real binary: JSON keys, exit codes,
//! the map file, the braking trim.

use super::*;

fn yawdyn(args: &[&str], dir: &Path) -> (i32, String, String) {
    let out = Command::new(env!("CARGO_BIN_EXE_yawdyn"))
        .args(args)
        .current_dir(dir)
        .output()
        .expect("binary runs");
    (
        out.status.code().unwrap_or(-1),
        String::from_utf8_lossy(&out.stdout).into_owned(),
        String::from_utf8_lossy(&out.stderr).into_owned(),
    )
}

fn crossover_path() -> String {
    PathBuf::from(env!("CARGO_MANIFEST_DIR"))
        .join(CROSSOVER)
        .display()
        .to_string()
}

/// `--json` has `stable`, `eigenvalues` [{re, im}], `modes` [{name,
/// frequency_hz, damping_ratio}] and the trim quantities; exit 0.
#[test]
fn json_output_has_documented_keys() {
    let dir = tempfile::tempdir().unwrap();
    let file = crossover_path();
    let (code, out, err) = yawdyn(
        &[
            "stability",
            &file,
            "--speed-kph",
            "100",
            "--lat-accel-g",
            "0.4",
            "--json",
        ],
        dir.path(),
    );
    assert_eq!(code, 0, "{err}");
    let j: serde_json::Value = serde_json::from_str(&out).expect("valid JSON");
    assert!(j["stable"].is_boolean());
    let ev = j["eigenvalues"].as_array().unwrap();
    assert_eq!(ev.len(), 20);
    assert!(ev.iter().all(|e| e["re"].is_f64() && e["im"].is_f64()));
    let modes = j["modes"].as_array().unwrap();
    assert!(!modes.is_empty());
    for m in modes {
        assert!(m["name"].is_string());
        assert!(m.get("frequency_hz").is_some() && m.get("damping_ratio").is_some());
    }
    assert!(
        modes
            .iter()
            .any(|m| m["name"] == "yaw/sideslip" && m["damping_ratio"].is_f64())
    );
    for key in [
        "steer_wheel_angle_deg",
        "road_wheel_angle_deg",
        "sideslip_deg",
        "understeer_gradient_deg_per_g",
        "yaw_rate_deg_per_s",
    ] {
        assert!(j["trim"][key].is_f64(), "trim.{key}");
    }
    // ISO 8855 / steady state: yaw rate = ay/V.
    let r = j["trim"]["yaw_rate_deg_per_s"]
        .as_f64()
        .unwrap()
        .to_radians();
    assert!((r - 0.4 * GRAVITY / (100.0 / 3.6)).abs() < 1e-6);
}

/// Exit codes: 1 when no trim exists, 2 for bad input.
#[test]
fn exit_codes_for_no_trim_and_bad_input() {
    let dir = tempfile::tempdir().unwrap();
    let file = crossover_path();
    let (code, out, _) = yawdyn(
        &[
            "stability",
            &file,
            "--speed-kph",
            "100",
            "--lat-accel-g",
            "3",
        ],
        dir.path(),
    );
    assert_eq!(code, 1);
    assert!(out.contains("NO TRIM"), "{out}");
    let (code, _, _) = yawdyn(
        &[
            "stability",
            &file,
            "--speed-kph",
            "100",
            "--lat-accel-g",
            "0.3",
            "--front-share",
            "1.5",
        ],
        dir.path(),
    );
    assert_eq!(code, 2);
    let (code, _, _) = yawdyn(&["stability", &file, "--speed-kph", "100"], dir.path());
    assert_eq!(code, 2);
    let (code, _, _) = yawdyn(
        &[
            "stability",
            &file,
            "--lat-accel-g",
            "0.3",
            "--vary",
            "speed_kph=10:5:3",
        ],
        dir.path(),
    );
    assert_eq!(code, 2);
}

/// A 3 × 2 map through the binary: HDF5 file readable with `read_map`, grid
/// and flags consistent with single-point runs, SVG drawn, rerun identical.
#[test]
fn stability_map_file_round_trip() {
    let dir = tempfile::tempdir().unwrap();
    let file = crossover_path();
    let args = [
        "stability",
        &file,
        "--lat-accel-g",
        "0.3",
        "--vary",
        "speed_kph=60:140:3",
        "--vary",
        "chassis.cg_to_front_axle=1.13:1.6:2",
        "--set",
        "tyre.rear.magic_formula.pKy1=12",
        "--out",
        "map.h5",
        "--plot",
        "map.svg",
    ];
    let (code, _, err) = yawdyn(&args, dir.path());
    assert_eq!(code, 0, "{err}");
    let map = read_map(&dir.path().join("map.h5")).expect("map reads");
    assert_eq!(map.axes.len(), 2);
    assert_eq!(map.axes[0].values, vec![60.0, 100.0, 140.0]);
    assert_eq!(map.points.len(), 6);
    let svg = std::fs::read_to_string(dir.path().join("map.svg")).unwrap();
    assert!(svg.contains("<svg"));
    // Point (140 km/h, CG 1.6 m) against a direct analysis.
    let v = vehicle(&[&[
        "chassis.cg_to_front_axle=1.6",
        "tyre.rear.magic_formula.pKy1=12",
    ]]);
    let direct = report(&v, 140.0 / 3.6, 0.3 * GRAVITY);
    let p = map.points[5];
    assert_eq!(p.stable, direct.stable);
    assert_eq!(p.max_real_part.to_bits(), direct.max_real_part.to_bits());
    let first = std::fs::read(dir.path().join("map.h5")).unwrap().len();
    let (code, _, _) = yawdyn(&args, dir.path());
    assert_eq!(code, 0);
    let again = read_map(&dir.path().join("map.h5")).unwrap();
    assert_eq!(
        std::fs::read(dir.path().join("map.h5")).unwrap().len(),
        first
    );
    for (a, b) in map.points.iter().zip(&again.points) {
        assert_eq!(a.yaw_damping_ratio.to_bits(), b.yaw_damping_ratio.to_bits());
    }
}

/// ISO 8855 (roll positive = right side down): in a steady left turn the
/// body rolls towards the outside, right side down, and the right (outer)
/// wheels carry more load (Milliken & Milliken ch. 18 load transfer).
/// The steady roll angle satisfies the roll moment balance with the
/// overturning moment of the displaced body (Gillespie, *Fundamentals of
/// Vehicle Dynamics*, ch. 8): KΦ·φ = m·ay·H + m·g·H·sin φ.
/// The command line reports the braking trim (it reported none while trims
/// braked through the drive units): `yawdyn stability` at 80 km/h, 0 g
/// lateral, −0.6 g longitudinal, with the front share of the braking torque
/// (equal radii: of the braking force) at the bias.
#[test]
fn command_line_reports_braking_trim() {
    let dir = tempfile::tempdir().unwrap();
    let car = crossover_path();
    let args = [
        "stability",
        car.as_str(),
        "--speed-kph",
        "80",
        "--lat-accel-g",
        "0",
        "--long-accel-g",
        "-0.6",
        "--json",
    ];
    let (code, stdout, stderr) = yawdyn(&args, dir.path());
    assert_eq!(code, 0, "{stderr}");
    let j: serde_json::Value = serde_json::from_str(&stdout).unwrap();
    assert_eq!(j["trim_found"], true);
    let share = j["trim"]["braking_front_share"].as_f64().unwrap();
    assert!((share - 0.72).abs() < 1e-9, "{share}");
}
