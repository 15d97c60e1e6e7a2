//! One syntax for a list of values on the command line, used by the
//! quasi-static and tyre commands: a single value `V`, a comma list
//! `V1,V2,...`, or an evenly spaced range `START:STOP:COUNT` (the range
//! syntax of `--vary`, without the key).

use super::bad_input;

/// Most values a list may hold.
pub const MAX_VALUES: usize = 1000;

/// Parses `text` given to option `--option` into values (user units).
///
/// Errors are bad input naming the option: not a number, not finite, a
/// COUNT of 0 or above [`MAX_VALUES`], STOP not above START for COUNT > 1.
pub fn parse_values(option: &str, text: &str) -> anyhow::Result<Vec<f64>> {
    let bad = |why: &str| {
        bad_input(format!(
            "--{option} {text}: {why} (expected V, V1,V2,... or START:STOP:COUNT)"
        ))
    };
    let number = |s: &str| -> anyhow::Result<f64> {
        let v: f64 = s.trim().parse().map_err(|_| bad("not a number"))?;
        if v.is_finite() {
            Ok(v)
        } else {
            Err(bad("values must be finite"))
        }
    };
    if text.contains(':') {
        let parts: Vec<&str> = text.split(':').collect();
        if parts.len() != 3 {
            return Err(bad("a range has three parts"));
        }
        let (start, stop) = (number(parts[0])?, number(parts[1])?);
        let count: usize = parts[2]
            .trim()
            .parse()
            .map_err(|_| bad("COUNT is not a whole number"))?;
        if count == 0 || count > MAX_VALUES {
            return Err(bad("COUNT must be 1..=1000"));
        }
        if count > 1 && stop <= start {
            return Err(bad("STOP must be greater than START"));
        }
        if count == 1 {
            return Ok(vec![start]);
        }
        return Ok((0..count)
            .map(|k| start + (stop - start) * k as f64 / (count - 1) as f64)
            .collect());
    }
    let values = text
        .split(',')
        .map(number)
        .collect::<anyhow::Result<Vec<f64>>>()?;
    if values.len() > MAX_VALUES {
        return Err(bad("too many values"));
    }
    Ok(values)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn ranges_lists_and_single_values() {
        assert_eq!(parse_values("x", "2.5").unwrap(), vec![2.5]);
        assert_eq!(parse_values("x", "1,2, 4").unwrap(), vec![1.0, 2.0, 4.0]);
        assert_eq!(
            parse_values("x", "-1:1:5").unwrap(),
            vec![-1.0, -0.5, 0.0, 0.5, 1.0]
        );
        assert_eq!(parse_values("x", "3:3:1").unwrap(), vec![3.0]);
        for bad in ["", "a", "1:2", "1:2:0", "2:1:3", "1,nan", "1:2:x", "inf"] {
            let e = parse_values("speed-kph", bad).unwrap_err();
            assert!(e.to_string().contains("--speed-kph"), "{bad}: {e}");
            assert_eq!(super::super::exit_code(&e), 2, "{bad}");
        }
    }
}
