//! The hot folder's event log: one line per event, to standard error and
//! appended to `DIR/hotfolder.log`.
//!
//! A line is tab-separated: time (RFC 3339, UTC, milliseconds), event, file,
//! result, duration (seconds, or `-`), instance. Tabs and line breaks inside a
//! field become spaces, so a line is always one line. The file is opened with
//! `O_APPEND` and each line is handed to the kernel in one `write`, so several
//! instances sharing the log interleave whole lines.

use crate::calendar::rfc3339;
use crate::error::{Error, Result};
use std::fs::{File, OpenOptions};
use std::io::Write;
use std::path::{Path, PathBuf};
use std::sync::Mutex;
use std::sync::atomic::{AtomicBool, Ordering};
use std::time::{Duration, SystemTime};

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

#[cfg(test)]
mod tests {
    use super::*;
    use std::time::UNIX_EPOCH;

    #[test]
    fn a_line_is_one_line_of_six_fields() {
        let line = format_line(
            UNIX_EPOCH,
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
