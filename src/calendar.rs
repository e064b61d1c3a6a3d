//! Calendar dates and timestamps: the proleptic Gregorian date of a day
//! count since 1970-01-01 (H. Hinnant, "chrono-Compatible Low-Level Date
//! Algorithms", `civil_from_days`) and RFC 3339 timestamps in UTC. No
//! dependency on the rest of the crate: the hot folder's log and records and
//! the ICC profile's creation date both use it.

use std::time::{SystemTime, UNIX_EPOCH};

/// Proleptic Gregorian date (year, month 1–12, day 1–31) of a day count
/// since 1970-01-01, after H. Hinnant, "chrono-Compatible Low-Level Date
/// Algorithms" (`civil_from_days`).
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

/// A time as RFC 3339 in UTC with milliseconds, e.g. `2009-02-13T23:31:30.000Z`.
pub fn rfc3339(time: SystemTime) -> String {
    let since = time.duration_since(UNIX_EPOCH).unwrap_or_default();
    let secs = since.as_secs() as i64;
    let (days, rem) = (secs.div_euclid(86_400), secs.rem_euclid(86_400));
    let (y, m, d) = civil_from_days(days);
    format!(
        "{y:04}-{m:02}-{d:02}T{:02}:{:02}:{:02}.{:03}Z",
        rem / 3600,
        rem % 3600 / 60,
        rem % 60,
        since.subsec_millis()
    )
}

#[cfg(test)]
mod tests {
    use super::*;
    use std::time::Duration;

    fn at(secs: u64, millis: u64) -> SystemTime {
        UNIX_EPOCH + Duration::from_secs(secs) + Duration::from_millis(millis)
    }

    /// Python's `datetime` (standard library) through
    /// `scripts/reference/make_calendar.py`: Gregorian century rules, leap
    /// days, the epoch, years 1 and 9999, and pseudo-random days and instants.
    #[test]
    fn dates_and_timestamps_agree_with_python_datetime() {
        let table = include_str!("../testdata/calendar_reference.csv");
        let (mut days, mut instants) = (0, 0);
        for line in table.lines().skip(1) {
            let f: Vec<&str> = line.split(',').collect();
            assert_eq!(f.len(), 4, "{line}");
            match f[0] {
                "days" => {
                    let (y, m, d) = civil_from_days(f[1].parse().unwrap());
                    assert_eq!(format!("{y:04}-{m:02}-{d:02}"), f[3], "day {}", f[1]);
                    days += 1;
                }
                "unix" => {
                    let time = at(f[1].parse().unwrap(), f[2].parse().unwrap());
                    assert_eq!(rfc3339(time), f[3], "unix time {} + {} ms", f[1], f[2]);
                    instants += 1;
                }
                other => panic!("unknown row kind {other}"),
            }
        }
        assert!(days > 250 && instants > 200, "{days} days, {instants} instants");
    }

    /// The shift in Hinnant's paper (from memory): 719468 days from 0000-03-01,
    /// the first day of its era, to 1970-01-01; year 0 (1 BC) is a leap year.
    /// Python's `datetime` cannot check these (its years start at 1).
    #[test]
    fn civil_from_days_at_the_papers_origins() {
        assert_eq!(civil_from_days(0), (1970, 1, 1));
        assert_eq!(civil_from_days(-719_468), (0, 3, 1));
        assert_eq!(civil_from_days(-719_469), (0, 2, 29));
    }

    #[test]
    fn rfc3339_matches_published_instants() {
        // The Unix epoch (POSIX.1-2017, 4.16 Seconds Since the Epoch).
        assert_eq!(rfc3339(at(0, 0)), "1970-01-01T00:00:00.000Z");
        // Unix time 1234567890, widely published as 2009-02-13 23:31:30 UTC (from memory).
        assert_eq!(rfc3339(at(1_234_567_890, 250)), "2009-02-13T23:31:30.250Z");
        // POSIX "seconds since the epoch" formula, 4.16: a leap day and a century.
        let posix = |y: i64, yday: i64, h: i64, m: i64, s: i64| {
            let y = y - 1900;
            (s + m * 60 + h * 3600 + yday * 86400 + (y - 70) * 31_536_000 + ((y - 69) / 4) * 86400 - ((y - 1) / 100) * 86400
                + ((y + 299) / 400) * 86400) as u64
        };
        // 2000-02-29 is day 59 of the year (0-based); 2100-03-01 is day 59 (2100 is not a leap year).
        assert_eq!(rfc3339(at(posix(2000, 59, 12, 0, 0), 0)), "2000-02-29T12:00:00.000Z");
        assert_eq!(rfc3339(at(posix(2100, 59, 0, 0, 1), 0)), "2100-03-01T00:00:01.000Z");
        assert_eq!(rfc3339(at(posix(2024, 365, 23, 59, 59), 999)), "2024-12-31T23:59:59.999Z");
    }

    #[test]
    fn rfc3339_agrees_with_the_system_date_tool() {
        // GNU coreutils `date -u` as an independent reference, where installed.
        let stamps = [86_399u64, 951_782_400, 1_700_000_000, 4_102_444_800];
        for s in stamps {
            let Ok(out) = std::process::Command::new("date")
                .args(["-u", "-d", &format!("@{s}"), "+%Y-%m-%dT%H:%M:%S.000Z"])
                .output()
            else {
                eprintln!("date not available; skipped");
                return;
            };
            if !out.status.success() {
                eprintln!("date -d not supported; skipped");
                return;
            }
            assert_eq!(rfc3339(at(s, 0)), String::from_utf8_lossy(&out.stdout).trim(), "unix time {s}");
        }
    }
}
