//! What stamps a file: the writing program's version and the time of
//! writing (reproducible with `SOURCE_DATE_EPOCH`).

/// yawdyn version with git revision, as stored in files.
pub fn yawdyn_version() -> String {
    format!(
        "{} ({})",
        env!("CARGO_PKG_VERSION"),
        option_env!("YAWDYN_GIT_REVISION").unwrap_or("unknown revision")
    )
}

/// The current time as ISO 8601 UTC (`2026-12-01T21:40:00Z`), or the time
/// given in seconds by the environment variable `SOURCE_DATE_EPOCH` when set
/// (common practice for reproducible outputs).
pub fn utc_now() -> String {
    let seconds = std::env::var("SOURCE_DATE_EPOCH")
        .ok()
        .and_then(|s| s.trim().parse::<i64>().ok())
        .unwrap_or_else(|| {
            std::time::SystemTime::now()
                .duration_since(std::time::UNIX_EPOCH)
                .map_or(0, |d| d.as_secs() as i64)
        });
    iso_utc(seconds)
}

/// Seconds since 1970-01-01T00:00:00Z as ISO 8601 text.
///
/// Civil date from a day count: H. Hinnant, "chrono-Compatible Low-Level
/// Date Algorithms", algorithm `civil_from_days` (from memory).
fn iso_utc(seconds: i64) -> String {
    let days = seconds.div_euclid(86_400);
    let secs = seconds.rem_euclid(86_400);
    let z = days + 719_468;
    let era = z.div_euclid(146_097);
    let doe = z.rem_euclid(146_097);
    let yoe = (doe - doe / 1460 + doe / 36_524 - doe / 146_096) / 365;
    let doy = doe - (365 * yoe + yoe / 4 - yoe / 100);
    let mp = (5 * doy + 2) / 153;
    let day = doy - (153 * mp + 2) / 5 + 1;
    let month = if mp < 10 { mp + 3 } else { mp - 9 };
    let year = yoe + era * 400 + i64::from(month <= 2);
    format!(
        "{year:04}-{month:02}-{day:02}T{:02}:{:02}:{:02}Z",
        secs / 3600,
        secs / 60 % 60,
        secs % 60
    )
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn iso_utc_known_dates() {
        // Known instants: the Unix epoch; 2000-03-01 (day after a leap day of a
        // century leap year); 1e9 s = 2001-09-09T01:46:40Z (widely published).
        assert_eq!(iso_utc(0), "1970-01-01T00:00:00Z");
        assert_eq!(iso_utc(951_868_800), "2000-03-01T00:00:00Z");
        assert_eq!(iso_utc(1_000_000_000), "2001-09-09T01:46:40Z");
        assert_eq!(iso_utc(-1), "1969-12-31T23:59:59Z");
    }
}
