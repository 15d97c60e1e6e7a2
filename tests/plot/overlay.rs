//! Overlays of two results files or sweep cases, and PNG output.

use super::*;

#[test]
fn overlay_of_two_results_files_has_both_series_and_a_legend() {
    let dir = tempfile::tempdir().unwrap();
    simulate(dir.path(), "slow_ramp.h5", "invented_ramp.rhai", 10.0, 1.5);
    simulate(dir.path(), "fast_ramp.h5", "invented_ramp.rhai", 30.0, 1.5);
    let out = yawdyn(
        dir.path(),
        &[
            "plot",
            "slow_ramp.h5",
            "fast_ramp.h5",
            "--channels",
            "yaw_rate,ay",
            "--out",
            "both.svg",
        ],
    );
    assert_eq!(out.status.code(), Some(0), "{}", text(&out));
    let svg = std::fs::read_to_string(dir.path().join("both.svg")).unwrap();
    // One line per file in each of the two panels.
    assert_eq!(polylines(&svg, FIRST).len(), 2, "first file");
    assert_eq!(polylines(&svg, SECOND).len(), 2, "second file");
    // The legend names each file by its stem (plotters writes each text on
    // its own line).
    for label in ["\nslow_ramp\n", "\nfast_ramp\n"] {
        assert!(svg.contains(label), "legend entry {label:?}");
    }
    // The title names the vehicle.
    assert!(
        svg.contains("Invented hybrid crossover"),
        "vehicle in title"
    );
    // Smooth lines: vertices at fractional pixel positions, not rounded.
    let fractional = polylines(&svg, FIRST)
        .concat()
        .iter()
        .filter(|(x, y)| x.fract() != 0.0 || y.fract() != 0.0)
        .count();
    assert!(fractional > 50, "only {fractional} fractional vertices");

    // Cross-plot overlay against a channel: the same two lines.
    let out = yawdyn(
        dir.path(),
        &[
            "plot",
            "slow_ramp.h5",
            "fast_ramp.h5",
            "--x",
            "ay",
            "--channels",
            "steer_wheel_angle",
            "--out",
            "xy.svg",
        ],
    );
    assert_eq!(out.status.code(), Some(0), "{}", text(&out));
    let svg = std::fs::read_to_string(dir.path().join("xy.svg")).unwrap();
    assert_eq!(polylines(&svg, FIRST).len(), 1);
    assert_eq!(polylines(&svg, SECOND).len(), 1);
    assert!(svg.contains("ay [g]") && !svg.contains("time [s]"));

    // Maps and handling diagrams are not overlaid.
    let out = yawdyn(
        dir.path(),
        &["plot", "slow_ramp.h5", "fast_ramp.h5", "--kind", "handling"],
    );
    assert_eq!(out.status.code(), Some(2), "{}", text(&out));
}

#[test]
fn overlay_of_two_sweep_cases_with_json_summary() {
    let dir = tempfile::tempdir().unwrap();
    let script = concat!(env!("CARGO_MANIFEST_DIR"), "/scripts/step_steer.rhai");
    let out = yawdyn(
        dir.path(),
        &[
            "sweep",
            script,
            "--vary",
            "chassis.mass=1700:1900:3",
            "--channels",
            "yaw_rate,ay",
            "--out",
            "sw.h5",
        ],
    );
    assert_eq!(out.status.code(), Some(0), "{}", text(&out));
    let out = yawdyn(
        dir.path(),
        &[
            "plot",
            "sw.h5",
            "--case",
            "0,2",
            "--channels",
            "yaw_rate",
            "--json",
        ],
    );
    assert_eq!(out.status.code(), Some(0), "{}", text(&out));
    let stdout = String::from_utf8_lossy(&out.stdout).into_owned();
    let summary: serde_json::Value = serde_json::from_str(&stdout).expect("JSON summary");
    assert_eq!(summary["cases"], serde_json::json!([0, 2]));
    assert_eq!(summary["kind"], "time");
    let series: Vec<&str> = summary["series"]
        .as_array()
        .unwrap()
        .iter()
        .map(|v| v.as_str().unwrap())
        .collect();
    assert_eq!(
        series,
        ["case 0: chassis.mass=1700.0", "case 2: chassis.mass=1900.0"]
    );
    let written = summary["files_written"][0].as_str().unwrap();
    assert!(written.ends_with("sw_overlay.svg"), "{written}");
    let svg = std::fs::read_to_string(dir.path().join("sw_overlay.svg")).unwrap();
    assert_eq!(polylines(&svg, FIRST).len(), 1);
    assert_eq!(polylines(&svg, SECOND).len(), 1);
    for label in series {
        assert!(svg.contains(&format!("\n{label}\n")), "legend {label:?}");
    }
    // The two cases differ (a heavier car, another yaw-rate trace).
    assert_ne!(polylines(&svg, FIRST), polylines(&svg, SECOND));

    // A case the file does not hold, and a sweep without --case.
    let out = yawdyn(dir.path(), &["plot", "sw.h5", "--case", "7"]);
    assert_eq!(out.status.code(), Some(2), "{}", text(&out));
    assert!(text(&out).contains("0 to 2"), "{}", text(&out));
    simulate(dir.path(), "ramp.h5", "invented_ramp.rhai", 10.0, 1.0);
    let out = yawdyn(dir.path(), &["plot", "ramp.h5", "sw.h5"]);
    assert_eq!(out.status.code(), Some(2), "{}", text(&out));
    assert!(text(&out).contains("--case"), "{}", text(&out));
}

/// Width and height from a PNG's IHDR chunk, after checking the signature
/// (PNG specification, ISO/IEC 15948:2004, sections 5.2 and 11.2.2).
fn png_size(bytes: &[u8]) -> (u32, u32) {
    assert_eq!(&bytes[..8], b"\x89PNG\r\n\x1a\n", "PNG signature");
    assert_eq!(&bytes[8..12], &[0, 0, 0, 13], "IHDR length");
    assert_eq!(&bytes[12..16], b"IHDR", "first chunk IHDR");
    let word = |k: usize| u32::from_be_bytes(bytes[k..k + 4].try_into().unwrap());
    (word(16), word(20))
}

#[test]
fn png_output_by_extension_and_beside_the_svg() {
    let dir = tempfile::tempdir().unwrap();
    simulate(dir.path(), "ramp.h5", "invented_ramp.rhai", 20.0, 1.0);
    // By extension: 900 x 600 px canvas (two panels) at 2 PNG px per SVG px.
    let out = yawdyn(
        dir.path(),
        &[
            "plot",
            "ramp.h5",
            "--channels",
            "yaw_rate,ay",
            "--out",
            "r.png",
        ],
    );
    assert_eq!(out.status.code(), Some(0), "{}", text(&out));
    let bytes = std::fs::read(dir.path().join("r.png")).unwrap();
    assert_eq!(png_size(&bytes), (1800, 1200));
    assert!(!dir.path().join("r.svg").exists());
    // Not a blank image: the text and lines put dark pixels in it, so it
    // compresses far worse than a white 1800 x 1200 image would.
    assert!(bytes.len() > 20_000, "{} bytes", bytes.len());

    // --png: the SVG and a PNG of the same plot beside it; five panels make
    // the canvas 900 x 1050 px.
    let out = yawdyn(dir.path(), &["plot", "ramp.h5", "--png"]);
    assert_eq!(out.status.code(), Some(0), "{}", text(&out));
    assert!(dir.path().join("ramp.svg").exists());
    let bytes = std::fs::read(dir.path().join("ramp.png")).unwrap();
    assert_eq!(png_size(&bytes), (1800, 2100));
}
