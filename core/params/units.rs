//! The unit of each numeric vehicle-file key, for the files that record a
//! varied parameter (sweep parameters, stability-map axes). The units are
//! those of the vehicle file (SI; `_deg` keys in degrees), spelled in the
//! ASCII style of [`crate::units`]. The demo vehicles' keys are all listed
//! (tested in `tests/vehicle_file.rs`).

/// Units by the last part of a dotted key; the names are unique across the
/// sections (`ratio`, `efficiency` and `max_torque` mean the same kind of
/// quantity wherever they appear).
const UNITS: &[(&str, &str)] = &[
    // [chassis]
    ("mass", "kg"),
    ("yaw_inertia", "kg*m^2"),
    ("roll_inertia", "kg*m^2"),
    ("pitch_inertia", "kg*m^2"),
    ("wheelbase", "m"),
    ("cg_to_front_axle", "m"),
    ("cg_height", "m"),
    ("track_front", "m"),
    ("track_rear", "m"),
    ("roll_centre_height_front", "m"),
    ("roll_centre_height_rear", "m"),
    ("roll_stiffness_front", "N*m/rad"),
    ("roll_stiffness_rear", "N*m/rad"),
    ("roll_damping_front", "N*m*s/rad"),
    ("roll_damping_rear", "N*m*s/rad"),
    ("pitch_stiffness", "N*m/rad"),
    ("pitch_damping", "N*m*s/rad"),
    // [steering]
    ("ratio", "1"),
    ("ackermann", "1"),
    ("toe_front_deg", "deg"),
    ("toe_rear_deg", "deg"),
    // [aero]
    ("air_density", "kg/m^3"),
    ("drag_area", "m^2"),
    ("downforce_area", "m^2"),
    ("pressure_centre_to_front_axle", "m"),
    ("drag_height", "m"),
    // [tyre.*]
    ("rolling_radius", "m"),
    ("wheel_inertia", "kg*m^2"),
    ("relaxation_length_lateral", "m"),
    ("relaxation_length_longitudinal", "m"),
    ("rolling_resistance", "1"),
    ("camber_deg", "deg"),
    ("nominal_load_n", "N"),
    // [drive], [drive.front|rear], fuel, differential, store
    ("front_share", "1"),
    ("max_torque", "N*m"),
    ("max_power", "W"),
    ("efficiency", "1"),
    ("max_generating_torque", "N*m"),
    ("max_generating_power", "W"),
    ("motoring_efficiency", "1"),
    ("generating_efficiency", "1"),
    ("lower_heating_value", "J/kg"),
    ("max_mass_flow", "kg/s"),
    ("thermal_efficiency", "1"),
    ("preload", "N*m"),
    ("locking", "1"),
    ("coupling_damping", "N*m*s/rad"),
    ("usable_energy", "J"),
    ("initial_soc", "1"),
    ("min_soc", "1"),
    ("max_soc", "1"),
    ("max_charge_power", "W"),
    ("max_discharge_power", "W"),
    ("charge_efficiency", "1"),
    ("discharge_efficiency", "1"),
    ("limit_fade", "1"),
    // [brakes]
    ("front_bias", "1"),
    // [road]
    ("friction", "1"),
];

/// The unit of the numeric vehicle-file key `path` (dotted, as given to
/// `--set` or `--vary`), or `None` when the key is not a known numeric key.
/// Magic Formula coefficients (`tyre.*.magic_formula.p…`, `r…`, `q…`) are
/// dimensionless (`1`): they multiply normalised load and camber (Pacejka,
/// *Tire and Vehicle Dynamics*, 3rd ed. 2012, ch. 4.3.2; from memory).
///
/// ```
/// use yawdyn::params::parameter_unit;
/// assert_eq!(parameter_unit("chassis.mass"), Some("kg"));
/// assert_eq!(parameter_unit("drive.rear.max_torque"), Some("N*m"));
/// assert_eq!(parameter_unit("tyre.rear.magic_formula.pKy1"), Some("1"));
/// assert_eq!(parameter_unit("chassis.colour"), None);
/// ```
pub fn parameter_unit(path: &str) -> Option<&'static str> {
    let last = path.rsplit('.').next()?;
    if path.contains(".magic_formula.") && last != "nominal_load_n" {
        let coefficient = last.starts_with(['p', 'q', 'r'])
            && last[1..].chars().next().is_some_and(char::is_uppercase);
        return coefficient.then_some("1");
    }
    UNITS.iter().find(|(k, _)| *k == last).map(|(_, u)| *u)
}
