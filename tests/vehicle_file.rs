//! `yawdyn vehicle`: derived quantities and located errors for bad files,
//! through the real binary.

use std::path::{Path, PathBuf};
use std::process::{Command, Output};

fn yawdyn(args: &[&str]) -> Output {
    Command::new(env!("CARGO_BIN_EXE_yawdyn"))
        .args(args)
        .current_dir(env!("CARGO_MANIFEST_DIR"))
        .output()
        .expect("run yawdyn")
}

fn demo(name: &str) -> String {
    format!("scripts/vehicles/{name}.toml")
}

/// A copy of the demo crossover with `edit` applied to its text, in a temp dir.
fn edited(dir: &Path, edit: impl Fn(String) -> String) -> PathBuf {
    let text = std::fs::read_to_string(
        Path::new(env!("CARGO_MANIFEST_DIR")).join(demo("hybrid_crossover")),
    )
    .unwrap();
    let path = dir.join("car.toml");
    std::fs::write(&path, edit(text)).unwrap();
    path
}

fn stderr(o: &Output) -> String {
    String::from_utf8_lossy(&o.stderr).into_owned()
}

#[test]
fn demo_vehicles_validate_and_print_json() {
    for name in ["hybrid_crossover", "track_car", "sports_prototype"] {
        let o = yawdyn(&["vehicle", &demo(name), "--json"]);
        assert!(o.status.success(), "{name}: {}", stderr(&o));
        let json: serde_json::Value = serde_json::from_slice(&o.stdout).unwrap();
        for key in [
            "mass_kg",
            "wheelbase_m",
            "cg_to_front_axle_m",
            "cg_height_m",
            "yaw_inertia_kg_m2",
            "front_weight_fraction",
            "understeer_gradient_deg_per_g",
            "cornering_stiffness_front_n_per_rad",
            "cornering_stiffness_rear_n_per_rad",
        ] {
            assert!(json[key].is_number(), "{name}: {key} missing");
        }
        // Statics: front weight fraction = b/L.
        let (l, a) = (
            json["wheelbase_m"].as_f64().unwrap(),
            json["cg_to_front_axle_m"].as_f64().unwrap(),
        );
        assert!((json["front_weight_fraction"].as_f64().unwrap() - (l - a) / l).abs() < 1e-12);
        let table = yawdyn(&["vehicle", &demo(name)]);
        assert!(table.status.success());
        assert!(String::from_utf8_lossy(&table.stdout).contains("understeer gradient"));
    }
}

/// The understeer gradient printed equals Gillespie's K = Wf/Cαf − Wr/Cαr
/// (deg/g, Cα per axle in N/deg), computed here from the printed loads and stiffnesses.
#[test]
fn understeer_gradient_follows_gillespie() {
    let o = yawdyn(&["vehicle", &demo("hybrid_crossover"), "--json"]);
    let j: serde_json::Value = serde_json::from_slice(&o.stdout).unwrap();
    let per_deg = |k: &str| j[k].as_f64().unwrap() * std::f64::consts::PI / 180.0;
    let k = j["front_axle_load_n"].as_f64().unwrap()
        / per_deg("cornering_stiffness_front_n_per_rad")
        - j["rear_axle_load_n"].as_f64().unwrap() / per_deg("cornering_stiffness_rear_n_per_rad");
    let printed = j["understeer_gradient_deg_per_g"].as_f64().unwrap();
    assert!((k - printed).abs() < 1e-9 * k.abs(), "{k} vs {printed}");
}

#[test]
fn front_share_is_overridable() {
    let o = yawdyn(&[
        "vehicle",
        &demo("hybrid_crossover"),
        "--set",
        "drive.front_share=0.3",
        "--json",
    ]);
    assert!(o.status.success(), "{}", stderr(&o));
    let j: serde_json::Value = serde_json::from_slice(&o.stdout).unwrap();
    assert_eq!(j["front_share"].as_f64(), Some(0.3));
}

#[test]
fn typo_in_key_is_reported_with_line_and_suggestion() {
    let dir = tempfile::tempdir().unwrap();
    let path = edited(dir.path(), |t| t.replace("yaw_inertia = ", "yaw_inerta = "));
    let o = yawdyn(&["vehicle", path.to_str().unwrap()]);
    assert_eq!(o.status.code(), Some(2));
    let e = stderr(&o);
    assert!(e.contains("chassis.yaw_inerta"), "{e}");
    assert!(e.contains("did you mean `yaw_inertia`"), "{e}");
    assert!(e.contains("line 12: `chassis.yaw_inerta`"), "{e}");
    // The misspelt key is read as the key suggested: one message, not a
    // second one for the missing real key.
    assert!(!e.contains("missing key `yaw_inertia`"), "{e}");
    assert!(e.contains("1 problem(s)"), "{e}");
}

#[test]
fn every_class_of_problem_is_reported_at_once() {
    let dir = tempfile::tempdir().unwrap();
    let path = edited(dir.path(), |t| {
        t.replace("ratio = 15.0 ", "ratio = \"fifteen\" ")
            .replace("pitch_damping = 10000.0", "")
            .replace("front_bias = 0.72", "front_bias = 0.72\nbias_rear = 0.3")
    });
    let o = yawdyn(&["vehicle", path.to_str().unwrap()]);
    assert_eq!(o.status.code(), Some(2));
    let e = stderr(&o);
    assert!(
        e.contains("steering.ratio") && e.contains("wrong type"),
        "{e}"
    );
    assert!(e.contains("missing key `pitch_damping`"), "{e}");
    assert!(
        e.contains("brakes.bias_rear") && e.contains("unknown key"),
        "{e}"
    );
    assert!(e.contains("3 problem(s)"), "{e}");
}

#[test]
fn physically_impossible_values_are_named() {
    let dir = tempfile::tempdir().unwrap();
    let path = edited(dir.path(), |t| {
        t.replace("mass = 1820.0", "mass = -5.0")
            .replace("cg_to_front_axle = 1.13", "cg_to_front_axle = 3.1")
            .replace("friction = 1.0", "friction = 0.0")
            .replacen("pCx1 = 1.60", "pCx1 = 2.5", 1)
    });
    let o = yawdyn(&["vehicle", path.to_str().unwrap()]);
    assert_eq!(o.status.code(), Some(2));
    let e = stderr(&o);
    for key in [
        "chassis.mass",
        "chassis.cg_to_front_axle",
        "road.friction",
        "tyre.front.magic_formula.pCx1",
    ] {
        assert!(e.contains(key), "{key} not named in:\n{e}");
    }
    assert!(!e.contains("panicked"));
}

#[test]
fn unknown_override_key_lists_closest_names() {
    let o = yawdyn(&[
        "vehicle",
        &demo("track_car"),
        "--set",
        "drive.front_shar=0.5",
    ]);
    assert_eq!(o.status.code(), Some(2));
    let e = stderr(&o);
    assert!(e.contains("did you mean `front_share`"), "{e}");
}

#[test]
fn not_toml_and_missing_file_are_bad_input() {
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("broken.toml");
    std::fs::write(&path, "name = \"x\"\n[chassis\nmass = 1\n").unwrap();
    let o = yawdyn(&["vehicle", path.to_str().unwrap()]);
    assert_eq!(o.status.code(), Some(2));
    assert!(stderr(&o).contains("line 2"), "{}", stderr(&o));
    let o = yawdyn(&["vehicle", "does/not/exist.toml"]);
    assert_eq!(o.status.code(), Some(2));
    assert!(stderr(&o).contains("cannot read vehicle file"));
}

/// The hybrid demo reports its powertrain: the fuel-flow power cap equals
/// ṁ_max·LHV·η_b (Heywood, *Internal Combustion Engine Fundamentals*, ch. 2,
/// from memory), each unit's kind and limits, and the store.
#[test]
fn hybrid_powertrain_is_reported() {
    let o = yawdyn(&["vehicle", &demo("sports_prototype"), "--json"]);
    assert!(o.status.success(), "{}", stderr(&o));
    let j: serde_json::Value = serde_json::from_slice(&o.stdout).unwrap();
    let axles = j["drive_axles"].as_array().unwrap();
    let engine = axles.iter().find(|a| a["kind"] == "engine").unwrap();
    let cap = engine["fuel_power_cap_w"].as_f64().unwrap();
    assert!((cap - 0.0222 * 43.0e6 * 0.40).abs() < 1e-6, "{cap}");
    assert!(engine["torque_limit_ends_kph"].is_number());
    let mg = axles
        .iter()
        .find(|a| a["kind"] == "motor_generator")
        .unwrap();
    assert_eq!(mg["max_generating_power_w"].as_f64(), Some(150000.0));
    let store = &j["store"];
    // Deployable energy (SOC0 - SOCmin)·E·η_dis.
    let deployable = (0.5 - 0.1) * 2.0e6 * 0.97;
    assert!((store["deployable_energy_j"].as_f64().unwrap() - deployable).abs() < 1e-6);
    let table = yawdyn(&["vehicle", &demo("sports_prototype")]);
    let text = String::from_utf8_lossy(&table.stdout).into_owned();
    for word in ["motor-generator", "fuel-flow cap", "energy store", "381.8"] {
        assert!(text.contains(word), "{word} missing in:\n{text}");
    }
}

/// Bad powertrain values are named by key path and line, all at once.
#[test]
fn hybrid_problems_are_located() {
    let dir = tempfile::tempdir().unwrap();
    let path = edited(dir.path(), |t| {
        t.replace("motoring_efficiency = 0.92", "motoring_efficiency = 1.2")
            .replace("initial_soc = 0.6", "initial_soc = 0.95")
            .replace(
                "kind = \"engine\"",
                "kind = \"engine\"\nmax_generating_torque = 10.0",
            )
            .replace("lower_heating_value = 43.0e6", "lower_heating_value = -1.0")
    });
    let o = yawdyn(&["vehicle", path.to_str().unwrap()]);
    assert_eq!(o.status.code(), Some(2));
    let e = stderr(&o);
    for (key, rule) in [
        ("drive.rear.motoring_efficiency", "(0, 1]"),
        ("drive.store.initial_soc", "[0.2, 0.9]"),
        ("drive.front.max_generating_torque", "motor_generator"),
        ("drive.front.fuel.lower_heating_value", "positive"),
    ] {
        assert!(
            e.contains(key) && e.contains(rule),
            "{key} ({rule}) not in:\n{e}"
        );
    }
    assert!(e.contains("4 problem(s)"), "{e}");
    assert!(e.contains("line "), "{e}");
    // A motor-generator without a store, and a map whose speeds do not rise.
    let path = edited(dir.path(), |t| {
        let cut = t.find("[drive.store]").unwrap();
        let end = t.find("[brakes]").unwrap();
        format!("{}{}", &t[..cut], &t[end..])
    });
    let e = stderr(&yawdyn(&["vehicle", path.to_str().unwrap()]));
    assert!(
        e.contains("drive.rear.kind") && e.contains("[drive.store]"),
        "{e}"
    );
    let text = std::fs::read_to_string(
        Path::new(env!("CARGO_MANIFEST_DIR")).join(demo("sports_prototype")),
    )
    .unwrap()
    .replacen(
        "speed_rpm = [0.0, 4000.0, 8000.0",
        "speed_rpm = [0.0, 8000.0, 4000.0",
        1,
    );
    let bad = dir.path().join("proto.toml");
    std::fs::write(&bad, text).unwrap();
    let e = stderr(&yawdyn(&["vehicle", bad.to_str().unwrap()]));
    assert!(
        e.contains("drive.front.motoring_efficiency_table.speed_rpm")
            && e.contains("strictly increasing"),
        "{e}"
    );
}

/// Absurd values are refused with the plausible range in the message; the
/// damping ratio implied by stiffness and inertia is checked too.
#[test]
fn implausible_values_are_refused_with_their_range() {
    let cases: [(&str, &str, &str); 5] = [
        (
            "mass = 1820.0",
            "mass = 1.7e308",
            "1.7e308 kg is outside the plausible range [50, 100000] kg",
        ),
        (
            "mass = 1820.0",
            "mass = 5e-324",
            "5e-324 kg is outside the plausible range [50, 100000] kg",
        ),
        (
            "yaw_inertia = 3100.0",
            "yaw_inertia = 1e9",
            "outside the plausible range [1, 1e7] kg*m^2",
        ),
        (
            "yaw_inertia = 3100.0",
            "yaw_inertia = 3.0",
            "radius of gyration of 0.041 m",
        ),
        (
            "roll_damping_rear = 3500.0",
            "roll_damping_rear = 6991756545.2",
            "at most 5 is accepted",
        ),
    ];
    for (from, to, expected) in cases {
        let dir = tempfile::tempdir().unwrap();
        let path = edited(dir.path(), |t| t.replacen(from, to, 1));
        let o = yawdyn(&["vehicle", path.to_str().unwrap()]);
        assert_eq!(o.status.code(), Some(2), "{to}");
        let e = stderr(&o);
        assert!(e.contains(expected), "{to}: {e}");
        assert!(!e.contains("inf") && !e.contains("NaN"), "{to}: {e}");
    }
}

/// Syntax and type problems: located, named, without Rust type names.
#[test]
fn syntax_and_type_messages_name_the_key_and_position() {
    let cases: [(&str, &str, &[&str]); 4] = [
        (
            "mass = 1820.0",
            "mass = 1820.0\nmass = 3.0",
            &[
                "line 12: `chassis.mass`",
                "column 1",
                "duplicate key `mass`",
            ],
        ),
        (
            "wheelbase = 2.70",
            "wheelbase = 2..70",
            &[
                "line 15: `chassis.wheelbase`",
                "column 15",
                "not valid TOML",
            ],
        ),
        (
            "[chassis]",
            "[[chassis]]",
            &["`chassis`", "array of tables", "`[chassis]`"],
        ),
        (
            "[chassis]",
            "[chasis]",
            &["`chasis`", "did you mean `chassis`?", "1 problem(s)"],
        ),
    ];
    for (from, to, expected) in cases {
        let dir = tempfile::tempdir().unwrap();
        let path = edited(dir.path(), |t| t.replacen(from, to, 1));
        let o = yawdyn(&["vehicle", path.to_str().unwrap()]);
        assert_eq!(o.status.code(), Some(2), "{to}");
        let e = stderr(&o);
        for text in expected {
            assert!(e.contains(text), "{to}: missing {text:?} in {e}");
        }
        for leak in ["unit variant", "File", "i128", "f64", "map,"] {
            assert!(!e.contains(leak), "{to}: {leak:?} in {e}");
        }
    }
    // A byte that is not UTF-8, by line and column.
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("car.toml");
    std::fs::write(&path, b"name = \"x\"\nb = \"\xff\"\n").unwrap();
    let o = yawdyn(&["vehicle", path.to_str().unwrap()]);
    assert_eq!(o.status.code(), Some(2));
    assert!(stderr(&o).contains("line 2, column 6"), "{}", stderr(&o));
}
