//! The hot folder's event log: one line per event, to standard error and
//! appended to `DIR/hotfolder.log`.
//!
//! A line is tab-separated: time (RFC 3339, UTC, milliseconds), event, file,
//! result, duration (seconds, or `-`), instance. Tabs and line breaks inside a
//! field become spaces, so a line is always one line. The file is opened with
//! `O_APPEND` and each line is handed to the kernel in one `write`, so several
//! instances sharing the log interleave whole lines.

use crate::error::{Error, Result};
use std::fs::{File, OpenOptions};
use std::io::Write;
use std::path::{Path, PathBuf};
use std::sync::Mutex;
use std::sync::atomic::{AtomicBool, Ordering};
use std::time::{Duration, SystemTime, UNIX_EPOCH};

/// Where events are written.
pub struct EventLog {
    path: PathBuf,
    file: Mutex<File>,
    instance: String,
    /// Standard error gets the lines too (off in library tests).
    to_stderr: bool,
    /// A failed write to the log file was reported once.
    write_failed: AtomicBool,
}

impl EventLog {
    /// Opens (creating) the log file for appending.
    pub fn open(path: &Path, instance: &str, to_stderr: bool) -> Result<EventLog> {
        let file = OpenOptions::new()
            .create(true)
            .append(true)
            .open(path)
            .map_err(|e| Error::output(path, format!("cannot open the log: {e}")))?;
        Ok(EventLog {
            path: path.to_path_buf(),
            file: Mutex::new(file),
            instance: instance.to_string(),
            to_stderr,
            write_failed: AtomicBool::new(false),
        })
    }

    /// Records one event. A log file that cannot be written is reported once on
    /// standard error; the run goes on.
    pub fn event(&self, event: &str, file: &str, result: &str, duration: Option<Duration>) {
        let line = format_line(SystemTime::now(), event, file, result, duration, &self.instance);
        if self.to_stderr {
            eprint!("{line}");
        }
        let written = match self.file.lock() {
            Ok(mut f) => f.write_all(line.as_bytes()),
            Err(_) => Ok(()),
        };
        if let Err(e) = written
            && !self.write_failed.swap(true, Ordering::Relaxed)
        {
            eprintln!("platesmith: {}: cannot write the log: {e}", self.path.display());
        }
    }
}

/// One log line, newline included.
pub fn format_line(time: SystemTime, event: &str, file: &str, result: &str, duration: Option<Duration>, instance: &str) -> String {
    let clean = |s: &str| s.replace(['\t', '\n', '\r'], " ");
    let duration = match duration {
        Some(d) => format!("{:.2}s", d.as_secs_f64()),
        None => "-".to_string(),
    };
    format!(
        "{}\t{}\t{}\t{}\t{}\t{}\n",
        rfc3339(time),
        clean(event),
        clean(file),
        clean(result),
        duration,
        clean(instance)
    )
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

/// Proleptic Gregorian date of a day count since 1970-01-01, after H. Hinnant,
/// "chrono-Compatible Low-Level Date Algorithms" (`civil_from_days`).
pub(crate) fn civil_from_days(z: i64) -> (i64, u32, u32) {
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

#[cfg(test)]
mod tests {
    use super::*;

    fn at(secs: u64, millis: u64) -> SystemTime {
        UNIX_EPOCH + Duration::from_secs(secs) + Duration::from_millis(millis)
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

    #[test]
    fn a_line_is_one_line_of_six_fields() {
        let line = format_line(
            at(0, 0),
            "failed",
            "a\tb.png",
            "bad\nthing",
            Some(Duration::from_millis(1500)),
            "host-1",
        );
        assert!(line.ends_with('\n'));
        assert_eq!(line.matches('\n').count(), 1);
        let fields: Vec<&str> = line.trim_end().split('\t').collect();
        assert_eq!(
            fields,
            ["1970-01-01T00:00:00.000Z", "failed", "a b.png", "bad thing", "1.50s", "host-1"]
        );
    }
}
