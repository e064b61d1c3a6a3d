//! Scheduling: the loop that looks at the folders (file system events and a
//! rescan interval), takes over work of gone instances first ([`super::recovery`]),
//! claims settled files from `in/` while jobs are free, hands them to the
//! workers, and stops when asked (or, with `once`, when nothing is left).

use super::folders::{self, Instance, Orphan};
use super::recovery::take_orphan_file;
use super::results::{fail, process};
use super::{Claimed, Msg, RunSummary, Settings, Shared, watch};
use std::collections::HashSet;
use std::ffi::{OsStr, OsString};
use std::path::PathBuf;
use std::sync::Mutex;
use std::sync::atomic::{AtomicBool, Ordering};
use std::sync::mpsc::{self, Receiver, Sender};
use std::time::{Duration, Instant};

pub(super) fn worker(shared: &Shared, jobs: &Mutex<Receiver<Claimed>>, tx: &Sender<Msg>) {
    loop {
        let next = match jobs.lock() {
            Ok(rx) => rx.recv(),
            Err(_) => return,
        };
        let Ok(claimed) = next else { return };
        let outcome = std::panic::catch_unwind(std::panic::AssertUnwindSafe(|| process(shared, &claimed)));
        let outcome = match outcome {
            Ok(o) => o,
            Err(_) => {
                let started = Instant::now();
                fail(
                    shared,
                    &claimed,
                    &["internal error (please report this with the input that caused it)".to_string()],
                    None,
                    started,
                )
            }
        };
        if tx.send(Msg::Finished(outcome)).is_err() {
            return;
        }
    }
}

/// The scheduler: looks at the folders, claims files while jobs are free, and
/// stops when asked (or, with `once`, when nothing is left).
pub(super) fn schedule(
    settings: &Settings,
    stop: &AtomicBool,
    shared: &Shared,
    instance: &Instance,
    rx: &Receiver<Msg>,
    job_tx: &Sender<Claimed>,
) -> RunSummary {
    let folders = shared.folders;
    let log = shared.log;
    let tick = (settings.settle / 4).clamp(Duration::from_millis(20), Duration::from_millis(250));
    let mut tracker = watch::Tracker::new(settings.settle);
    let mut held: Vec<Orphan> = Vec::new();
    let mut refused: HashSet<OsString> = HashSet::new();
    // Files of gone instances that could not be taken over (reported once).
    let mut skipped: HashSet<PathBuf> = HashSet::new();
    let mut summary = RunSummary::default();
    let mut in_flight = 0usize;
    let mut stopping = false;
    let mut changed = true;
    let mut last_sweep: Option<Instant> = None;
    let mut last_scan: Option<Instant> = None;
    let mut scan_failed = false;
    loop {
        let now = Instant::now();
        if !stopping && stop.load(Ordering::SeqCst) {
            stopping = true;
            log.event(
                "stopping",
                "-",
                &format!("{in_flight} file(s) in progress are finished first; a second signal stops at once"),
                None,
            );
        }
        if !stopping {
            if last_sweep.is_none_or(|t| now.duration_since(t) >= settings.rescan) {
                last_sweep = Some(now);
                let ids: Vec<String> = held.iter().map(|o| o.id.clone()).collect();
                for o in folders::find_orphans(folders, &instance.id, &ids) {
                    log.event(
                        "recover",
                        &o.dir.display().to_string(),
                        &format!("instance {} is gone; its files are taken over", o.id),
                        None,
                    );
                    held.push(o);
                }
            }
            // Files left by gone instances first: they arrived earlier.
            while in_flight < settings.jobs {
                let Some(claimed) = take_orphan_file(shared, instance, &held, &mut summary, &mut skipped) else {
                    break;
                };
                if job_tx.send(claimed).is_ok() {
                    in_flight += 1;
                }
            }
            held.retain(|o| !(o.files().is_empty() && o.close_if_empty(folders)));
            let due = last_scan.is_none_or(|t| now.duration_since(t) >= settings.rescan);
            if changed || due || tracker.has_waiting(now) || (settings.once && in_flight < settings.jobs) {
                changed = false;
                last_scan = Some(now);
                match watch::list_incoming(&folders.incoming) {
                    Ok(listing) => {
                        scan_failed = false;
                        refused.retain(|n| listing.iter().any(|(m, _)| m == n));
                        tracker.update(listing.into_iter().filter(|(n, _)| !refused.contains(n)), now);
                    }
                    Err(e) => {
                        if !scan_failed {
                            log.event(
                                "error",
                                &folders.incoming.display().to_string(),
                                &format!("cannot list the folder: {e}"),
                                None,
                            );
                        }
                        scan_failed = true;
                    }
                }
            }
            for (name, seen) in tracker.ready(Instant::now()) {
                if in_flight >= settings.jobs {
                    break;
                }
                match claim(shared, instance, &name) {
                    Claim::Taken(claimed) => {
                        tracker.forget(&name);
                        log.event("take", &name.to_string_lossy(), &format!("{} bytes", seen.size), None);
                        if job_tx.send(claimed).is_ok() {
                            in_flight += 1;
                        }
                    }
                    Claim::Gone => tracker.forget(&name),
                    Claim::Later if in_flight > 0 => {}
                    Claim::Later => {
                        tracker.forget(&name);
                        log.event(
                            "refused",
                            &name.to_string_lossy(),
                            &format!("a file of the same name is stuck in {}; it stays in in/", instance.dir.display()),
                            None,
                        );
                        refused.insert(name);
                    }
                    Claim::Refused(reason) => {
                        tracker.forget(&name);
                        log.event(
                            "refused",
                            &name.to_string_lossy(),
                            &format!("cannot take the file: {reason}; it stays in in/"),
                            None,
                        );
                        refused.insert(name);
                    }
                }
            }
        }
        let idle = in_flight == 0;
        let orphans_left = held.iter().any(|o| o.files().iter().any(|n| !skipped.contains(&o.dir.join(n))));
        if idle && (stopping || (settings.once && tracker.is_empty() && !orphans_left && last_scan.is_some())) {
            break;
        }
        let wait = if stopping { Duration::from_millis(100) } else { tick };
        match rx.recv_timeout(wait) {
            Ok(msg) => {
                let mut handle = |msg: Msg| match msg {
                    Msg::Changed => changed = true,
                    Msg::Finished(o) => {
                        in_flight -= 1;
                        summary.count(o);
                    }
                };
                handle(msg);
                while let Ok(more) = rx.try_recv() {
                    handle(more);
                }
            }
            Err(mpsc::RecvTimeoutError::Timeout) => {}
            Err(mpsc::RecvTimeoutError::Disconnected) => break,
        }
    }
    summary
}

enum Claim {
    Taken(Claimed),
    /// Another instance took it first.
    Gone,
    /// A file of that name is still in this instance's work folder.
    Later,
    Refused(String),
}

/// Claims `in/NAME` by renaming it into this instance's work folder.
fn claim(shared: &Shared, instance: &Instance, name: &OsStr) -> Claim {
    let target = instance.dir.join(name);
    if std::fs::symlink_metadata(&target).is_ok() {
        return Claim::Later;
    }
    match std::fs::rename(shared.folders.incoming.join(name), &target) {
        Ok(()) => Claim::Taken(Claimed {
            name: name.to_os_string(),
            path: target,
        }),
        Err(e) if e.kind() == std::io::ErrorKind::NotFound => Claim::Gone,
        Err(e) => Claim::Refused(e.to_string()),
    }
}
