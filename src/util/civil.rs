//! Civil (calendar) dates from day counts, and the UTC time as text.
//!
//! One implementation for the run id, manifests, the store's timestamps and synth's
//! dates: Howard Hinnant's `civil_from_days` ("chrono-Compatible Low-Level Date
//! Algorithms", public domain), proleptic Gregorian calendar.

/// Days since 1970-01-01 to (year, month, day).
pub fn civil_from_days(z: i64) -> (i64, u32, u32) {
    let z = z + 719_468;
    let era = z.div_euclid(146_097);
    let doe = z.rem_euclid(146_097);
    let yoe = (doe - doe / 1460 + doe / 36_524 - doe / 146_096) / 365;
    let doy = doe - (365 * yoe + yoe / 4 - yoe / 100);
    let mp = (5 * doy + 2) / 153;
    let d = (doy - (153 * mp + 2) / 5 + 1) as u32;
    let m = if mp < 10 { mp + 3 } else { mp - 9 } as u32;
    let y = yoe + era * 400 + i64::from(m <= 2);
    (y, m, d)
}

/// Seconds since 1970-01-01 UTC now (0 if the clock is before it).
pub fn unix_seconds() -> u64 {
    std::time::SystemTime::now()
        .duration_since(std::time::UNIX_EPOCH)
        .map_or(0, |d| d.as_secs())
}

/// `secs` since 1970-01-01 as RFC 3339 UTC, `YYYY-MM-DDTHH:MM:SSZ`.
pub fn rfc3339(secs: u64) -> String {
    let (days, rem) = (secs / 86_400, secs % 86_400);
    let (y, m, d) = civil_from_days(days as i64);
    format!(
        "{y:04}-{m:02}-{d:02}T{:02}:{:02}:{:02}Z",
        rem / 3600,
        rem % 3600 / 60,
        rem % 60
    )
}

/// Now as `YYYY-MM-DDTHH:MM:SSZ` (UTC).
pub fn utc_now() -> String {
    rfc3339(unix_seconds())
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn civil_dates_from_day_counts() {
        // Day counts from the Unix epoch (POSIX; checked by hand: 2000 is a leap year,
        // 30 years of 365 days plus 7 leap days = 10 957 days to 2000-01-01).
        assert_eq!(civil_from_days(0), (1970, 1, 1));
        assert_eq!(civil_from_days(-1), (1969, 12, 31));
        assert_eq!(civil_from_days(10_957), (2000, 1, 1));
        assert_eq!(civil_from_days(11_016), (2000, 2, 29));
        assert_eq!(civil_from_days(11_017), (2000, 3, 1));
        assert_eq!(civil_from_days(20_425), (2025, 12, 3));
        assert_eq!(rfc3339(86_399), "1970-01-01T23:59:59Z");
        assert_eq!(rfc3339(951_782_400 + 3_723), "2000-02-29T01:02:03Z");
    }
}
