//! Which files in `in/` are ready: names that are not temporary, and whose
//! size and modification time have not changed for the settle time.
//!
//! Files arrive by slow copies (often over a network), so a file is only
//! taken once it has been seen unchanged for the whole settle time. The
//! observation is this process's own: a file's modification time is not
//! trusted to say when the copy ended (copy tools often preserve the source's).

use std::collections::HashMap;
use std::ffi::{OsStr, OsString};
use std::path::Path;
use std::time::{Duration, Instant, SystemTime};

/// Suffixes of names that copy and transfer tools commonly give a file while
/// it is still being written (compared without case). Such files, and names
/// starting with a dot, are never taken.
pub const TEMPORARY_SUFFIXES: &[&str] = &[
    ".part",
    ".partial",
    ".tmp",
    ".temp",
    ".download",
    ".upload",
    ".incomplete",
    ".filepart",
    ".swp",
    "~",
];

/// Whether a name in `in/` is skipped (hidden or temporary).
pub fn is_ignored(name: &OsStr) -> bool {
    let name = name.to_string_lossy().to_lowercase();
    name.starts_with('.') || TEMPORARY_SUFFIXES.iter().any(|s| name.ends_with(s))
}

/// One observation of a file.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct Seen {
    pub size: u64,
    pub modified: Option<SystemTime>,
}

#[derive(Debug)]
struct Pending {
    seen: Seen,
    /// When the current (size, mtime) was first observed.
    since: Instant,
}

/// Files waiting to settle.
#[derive(Debug)]
pub struct Tracker {
    settle: Duration,
    pending: HashMap<OsString, Pending>,
}

impl Tracker {
    pub fn new(settle: Duration) -> Tracker {
        Tracker {
            settle,
            pending: HashMap::new(),
        }
    }

    /// Takes a fresh listing of the folder made at `now`: new files start
    /// waiting, changed files wait again from `now`, files gone are forgotten.
    pub fn update(&mut self, listing: impl IntoIterator<Item = (OsString, Seen)>, now: Instant) {
        let mut present = HashMap::new();
        for (name, seen) in listing {
            let since = match self.pending.get(&name) {
                Some(p) if p.seen == seen => p.since,
                _ => now,
            };
            present.insert(name, Pending { seen, since });
        }
        self.pending = present;
    }

    /// Files unchanged for the settle time at `now`, longest waiting first.
    pub fn ready(&self, now: Instant) -> Vec<(OsString, Seen)> {
        let mut out: Vec<(&OsString, &Pending)> = self
            .pending
            .iter()
            .filter(|(_, p)| now.duration_since(p.since) >= self.settle)
            .collect();
        out.sort_by(|a, b| a.1.since.cmp(&b.1.since).then_with(|| a.0.cmp(b.0)));
        out.into_iter().map(|(n, p)| (n.clone(), p.seen)).collect()
    }

    /// Forgets a file (taken, or refused).
    pub fn forget(&mut self, name: &OsStr) {
        self.pending.remove(name);
    }

    pub fn is_empty(&self) -> bool {
        self.pending.is_empty()
    }

    /// Whether a file is waiting that is not yet ready.
    pub fn has_waiting(&self, now: Instant) -> bool {
        self.pending.values().any(|p| now.duration_since(p.since) < self.settle)
    }
}

/// The regular files of `in/` that are candidates (not ignored), with what
/// was observed of them. Folders and unreadable entries are skipped.
pub fn list_incoming(dir: &Path) -> std::io::Result<Vec<(OsString, Seen)>> {
    let mut out = Vec::new();
    for entry in std::fs::read_dir(dir)? {
        let Ok(entry) = entry else { continue };
        let name = entry.file_name();
        if is_ignored(&name) {
            continue;
        }
        // Follows a symbolic link: a link to a file is taken as that file.
        let Ok(meta) = std::fs::metadata(entry.path()) else { continue };
        if !meta.is_file() {
            continue;
        }
        out.push((
            name,
            Seen {
                size: meta.len(),
                modified: meta.modified().ok(),
            },
        ));
    }
    Ok(out)
}

#[cfg(test)]
mod tests {
    use super::*;

    fn seen(size: u64, secs: u64) -> Seen {
        Seen {
            size,
            modified: Some(SystemTime::UNIX_EPOCH + Duration::from_secs(secs)),
        }
    }

    #[test]
    fn temporary_and_hidden_names_are_ignored() {
        for name in [".a.png", "a.png.part", "A.PNG.TMP", "a.png~", "a.png.filepart", "x.download"] {
            assert!(is_ignored(OsStr::new(name)), "{name}");
        }
        for name in ["a.png", "part.tif", "tmp", "a.temperature.jpg"] {
            assert!(!is_ignored(OsStr::new(name)), "{name}");
        }
    }

    #[test]
    fn a_file_is_ready_only_after_the_settle_time_unchanged() {
        let t0 = Instant::now();
        let settle = Duration::from_millis(500);
        let at = |ms: u64| t0 + Duration::from_millis(ms);
        let mut tr = Tracker::new(settle);
        let name = OsString::from("a.png");
        tr.update([(name.clone(), seen(10, 1))], at(0));
        assert!(tr.ready(at(499)).is_empty());
        assert!(tr.has_waiting(at(499)));
        // It grows at 400 ms: the wait starts again.
        tr.update([(name.clone(), seen(20, 1))], at(400));
        assert!(tr.ready(at(800)).is_empty());
        // Same size, new mtime (rewritten in place): waits again.
        tr.update([(name.clone(), seen(20, 2))], at(800));
        assert!(tr.ready(at(1200)).is_empty());
        tr.update([(name.clone(), seen(20, 2))], at(1200));
        assert_eq!(tr.ready(at(1300)), vec![(name.clone(), seen(20, 2))]);
        // Gone from the folder: forgotten.
        tr.update([], at(1400));
        assert!(tr.is_empty());
    }

    #[test]
    fn ready_files_come_oldest_first() {
        let t0 = Instant::now();
        let mut tr = Tracker::new(Duration::ZERO);
        tr.update([(OsString::from("b"), seen(1, 1))], t0);
        tr.update(
            [(OsString::from("b"), seen(1, 1)), (OsString::from("a"), seen(1, 1))],
            t0 + Duration::from_millis(5),
        );
        let names: Vec<OsString> = tr.ready(t0 + Duration::from_millis(10)).into_iter().map(|(n, _)| n).collect();
        assert_eq!(names, [OsString::from("b"), OsString::from("a")]);
    }
}
