//! Tests of `map.rs`.

use super::*;

/// Invented two-by-three map survives a write/read round trip bit for bit.
#[test]
fn map_round_trip_is_exact() {
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("map.h5");
    let point = |k: usize| MapPoint {
        trim_found: k != 4,
        stable: k % 2 == 0,
        yaw_damping_ratio: if k == 4 { f64::NAN } else { 0.1 * k as f64 },
        yaw_frequency_hz: 1.0 / 3.0 + k as f64,
        max_real_part: -1.5 + k as f64,
        lat_accel: 2.0,
    };
    let map = StabilityMap {
        vehicle_name: "invented".into(),
        description: "test".into(),
        axes: vec![
            MapAxis {
                key: "speed_kph".into(),
                unit: "km/h".into(),
                values: vec![50.0, 100.0, 150.0],
            },
            MapAxis {
                key: "front_share".into(),
                unit: "1".into(),
                values: vec![0.0, 1.0],
            },
        ],
        points: (0..6).map(point).collect(),
        provenance: MapProvenance {
            yawdyn_version: "0.0.0".into(),
            created_utc: "2000-01-01T00:00:00Z".into(),
            vehicle_path: "invented.toml".into(),
            vehicle_toml: "name = \"invented\"\n".into(),
            overrides: vec!["chassis.mass=1500".into()],
            fixed: vec![
                FixedCondition {
                    key: "lat_accel_g".into(),
                    value: 0.4,
                    unit: "g".into(),
                },
                FixedCondition {
                    key: "long_accel_g".into(),
                    value: 0.0,
                    unit: "g".into(),
                },
            ],
        },
    };
    write_map(&map, &path).unwrap();
    let back = read_map(&path).unwrap();
    assert_eq!(back.axes, map.axes);
    assert_eq!(back.provenance, map.provenance);
    for (a, b) in back.points.iter().zip(&map.points) {
        assert_eq!(a.trim_found, b.trim_found);
        assert_eq!(a.stable, b.stable);
        assert_eq!(a.yaw_damping_ratio.to_bits(), b.yaw_damping_ratio.to_bits());
        assert_eq!(a.yaw_frequency_hz.to_bits(), b.yaw_frequency_hz.to_bits());
    }
}
