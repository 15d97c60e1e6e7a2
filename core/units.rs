//! Unit spelling: every unit yawdyn writes (channels, metrics, parameters,
//! map axes) is plain ASCII text in one style, so that it reads the same in
//! a terminal, a CSV header, h5py and MATLAB.
//!
//! The style: SI symbols, `^` for powers (`m/s^2`, `kg*m^2`), `*` for
//! products (`N*m`), `/` for quotients, `deg` for degrees, `1` for
//! dimensionless, `u` for micro. [`ascii`] turns the common non-ASCII
//! spellings (`m/s²`, `°`, `N·m`, `µs`) into it; the script API applies it
//! to every metric unit, so a script that writes `"m/s²"` stores `m/s^2`.

/// The unit `unit` in the ASCII style of this module: `²` → `^2`, `³` →
/// `^3`, `⁻¹` → `^-1`, `°` → `deg`, `·` and `×` → `*`, `µ`/`μ` → `u`.
/// Text already in the style is returned unchanged.
///
/// ```
/// use yawdyn::units::ascii;
/// assert_eq!(ascii("m/s²"), "m/s^2");
/// assert_eq!(ascii("m/s²/rad"), "m/s^2/rad");
/// assert_eq!(ascii("°/g"), "deg/g");
/// assert_eq!(ascii("kg·m²"), "kg*m^2");
/// assert_eq!(ascii("s⁻¹"), "s^-1");
/// assert_eq!(ascii("N*m"), "N*m");
/// ```
pub fn ascii(unit: &str) -> String {
    if unit.is_ascii() {
        return unit.to_string();
    }
    let mut out = String::with_capacity(unit.len() + 4);
    for c in unit.chars() {
        match c {
            '²' => out.push_str("^2"),
            '³' => out.push_str("^3"),
            '¹' => out.push('1'),
            '⁻' => out.push_str("^-"),
            '°' => out.push_str("deg"),
            '·' | '×' | '⋅' => out.push('*'),
            'µ' | 'μ' => out.push('u'),
            other => out.push(other),
        }
    }
    // `s⁻¹` became `s^-1`; a superscript minus after a `^` is already a power.
    out.replace("^-^", "^-")
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn non_ascii_spellings_become_the_ascii_style() {
        assert_eq!(ascii("m/s²"), "m/s^2");
        assert_eq!(ascii("kg/m³"), "kg/m^3");
        assert_eq!(ascii("µs"), "us");
        assert_eq!(ascii("1/s"), "1/s");
        assert_eq!(ascii(""), "");
        assert!(ascii("N·m·s/rad°").is_ascii());
    }
}
