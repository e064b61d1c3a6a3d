//! The watched-folder batch runner (`platesmith hotfolder DIR`).
//!
//! # Folders
//! ```text
//! DIR/in/            files arrive here (by copies that may be slow)
//! DIR/work/<id>/     files being processed by the instance <id> (host-pid-start)
//! DIR/work/<id>.lock that instance's lock file, locked while it lives
//! DIR/out/<stem>/    the results of one file, complete (or `<stem>-2/`… for a name seen before)
//! DIR/out/.staging/  results being written (hidden; never a finished result)
//! DIR/done/          inputs whose job is done and whose checks passed
//! DIR/failed/        inputs that failed, each with `<name>.error.txt` saying why
//! DIR/hotfolder.log  one line per event
//! DIR/ticket.toml    the job settings, when no `--ticket` is given
//! ```
//!
//! # Protocol
//! 1. **Arrival.** A file in `in/` is taken once its size and modification
//!    time have stayed the same for the settle time (this process's own
//!    observation). Names starting with a dot and names with a temporary
//!    suffix ([`watch::TEMPORARY_SUFFIXES`]) are never taken, so a copy tool
//!    can write `a.png.part` and rename it when complete. A file still empty
//!    after the settle time is taken and fails ("empty file").
//! 2. **Claim.** An instance registers by locking a lock file (flock) under a
//!    temporary name and hard-linking it to `work/<id>.lock` (so a published
//!    lock file is always locked while its owner lives), then creating
//!    `work/<id>/`. It claims a file by `rename(in/NAME, work/<id>/NAME)`:
//!    atomic on one file system, so of several instances (on one machine or
//!    on machines sharing the folder) exactly one succeeds; the others get
//!    "not found" and forget the file. An instance claims only as many files
//!    as it has jobs running, leaving the rest to others.
//! 3. **Results.** The pipeline ([`steps`]) writes into
//!    `out/.staging/<id>/<n>-<stem>/` through [`crate::raster::OutputSet`],
//!    adds `hotfolder.json` (the job, the input's name, the result and its
//!    reasons), then renames the folder to `out/<stem>/` (or the first free
//!    `<stem>-N/`: a folder is renamed only onto a free name, and a rename onto
//!    a folder with files fails, so two runs never mix). That rename is the
//!    moment the results exist: `out/` never shows half-written results.
//! 4. **Input.** The input is then hard-linked into `done/` under a free name
//!    and unlinked from `work/`; or hard-linked into `failed/` under a free
//!    name, its `<name>.error.txt` written beside it, and unlinked from
//!    `work/`. Nothing is ever replaced; a second `a.png` becomes
//!    `done/a-2.png`.
//! 5. **Crash recovery.** The kernel releases an instance's lock when its
//!    process dies, by kill -9 or otherwise (power loss: at reboot). Every
//!    instance looks at `work/` at start and every rescan interval; a folder
//!    whose lock it can take belongs to a gone instance. It keeps that lock
//!    while taking the folder over, so one instance takes over each folder. It
//!    removes the gone instance's staging folder (unfinished results only),
//!    then per file: a file with two links was already moved (step 4 was
//!    interrupted after the link) and is unlinked, unless its other link is
//!    in `failed/` without an error text (interrupted before the text): then
//!    that link is removed and the file goes on as one not moved; a file
//!    whose results were committed (a `hotfolder.json` in `out/` names its
//!    job) is moved to
//!    `done/` or `failed/` as that file says; any other file is claimed into
//!    the taker's own work folder and processed again from the start.
//! 6. **Stopping.** The first SIGINT or SIGTERM stops claiming; the files in
//!    progress are finished and the process exits 0. A second signal exits at
//!    once (130 for SIGINT, 143 for SIGTERM): what is in `work/` is then an
//!    orphan folder like after a crash, taken over at the next start.
//!
//! Locks need a file system that supports them (local file systems do, and
//! NFS through its lock manager); hard links are used where the file system
//! has them, a checked rename otherwise (then the small window of step 4
//! cannot be recognised after a crash, and such a file is processed again;
//! a file renamed into `failed/` just before a crash keeps no error text).
//!
//! # Testing
//! Debug and test builds read [`JOB_DELAY_ENV`] (milliseconds): every job
//! waits that long after its steps and before its results are committed, so
//! tests can signal or kill an instance in the middle of a job. Release
//! builds ignore it.

pub mod folders;
pub mod log;
pub mod steps;
pub mod watch;

use crate::error::{Error, Result};
use crate::raster::OutputSet;
use folders::{Folders, Instance, Orphan};
use log::EventLog;
use std::collections::HashSet;
use std::ffi::{OsStr, OsString};
use std::path::{Path, PathBuf};
use std::sync::atomic::{AtomicBool, AtomicU64, Ordering};
use std::sync::mpsc::{self, Receiver, Sender};
use std::sync::{Arc, Mutex};
use std::time::{Duration, Instant, SystemTime};
use steps::{JobFile, Step, Verdict};

/// Environment variable read by debug builds: a delay in milliseconds inside every job.
pub const JOB_DELAY_ENV: &str = "PLATESMITH_HOTFOLDER_JOB_DELAY_MS";

/// The name of the job record written into every output folder.
pub const RECORD_NAME: &str = "hotfolder.json";

/// How a hot folder runs.
#[derive(Debug, Clone)]
pub struct Settings {
    pub dir: PathBuf,
    /// The ticket; `None`: `DIR/ticket.toml` when it exists, else the defaults.
    pub ticket: Option<PathBuf>,
    /// Files processed at a time.
    pub jobs: usize,
    /// Process what is there, then exit.
    pub once: bool,
    /// How long a file must stay unchanged before it is taken.
    pub settle: Duration,
    /// How often `in/` and `work/` are looked at without a file system event
    /// (network file systems often send none).
    pub rescan: Duration,
    /// Log lines also go to standard error.
    pub log_to_stderr: bool,
}

/// What a run did.
#[derive(Debug, Clone, Copy, Default, PartialEq, Eq)]
pub struct RunSummary {
    pub done: usize,
    pub failed: usize,
}

impl RunSummary {
    fn count(&mut self, o: Outcome) {
        match o {
            Outcome::Done => self.done += 1,
            Outcome::Failed | Outcome::Stuck => self.failed += 1,
        }
    }
}

enum Msg {
    /// Something happened in `in/`.
    Changed,
    Finished(Outcome),
}

#[derive(Debug, Clone, Copy, PartialEq, Eq)]
enum Outcome {
    Done,
    Failed,
    /// The input could not be moved out of `work/` (it stays there and is
    /// taken over after a restart).
    Stuck,
}

/// A claimed file in this instance's work folder.
struct Claimed {
    name: OsString,
    path: PathBuf,
}

/// What the workers share.
struct Shared<'a> {
    folders: &'a Folders,
    instance: &'a str,
    steps: &'a [Box<dyn Step>],
    log: &'a EventLog,
    delay: Option<Duration>,
    seq: AtomicU64,
}

/// Runs the hot folder until `stop` is set (or, with `once`, until nothing is left).
pub fn run(settings: &Settings, stop: &AtomicBool) -> Result<RunSummary> {
    if settings.jobs == 0 {
        return Err(Error::usage("--jobs must be at least 1"));
    }
    let folders = Folders::at(&settings.dir)?;
    let ticket_path = settings
        .ticket
        .clone()
        .or_else(|| Some(folders.root.join("ticket.toml")).filter(|p| p.is_file()));
    let (workshop, ticket) = crate::cli::separate::ticket_workshop(ticket_path.as_deref())?;
    let steps = steps::pipeline(Arc::new(workshop), &ticket)?;
    folders.create()?;
    let id = folders::instance_id();
    let log = EventLog::open(&folders.log, &id, settings.log_to_stderr)?;
    let instance = Instance::register(&folders, &id)?;
    let delay = if cfg!(debug_assertions) {
        std::env::var(JOB_DELAY_ENV)
            .ok()
            .and_then(|v| v.trim().parse().ok())
            .map(Duration::from_millis)
    } else {
        None
    };
    log.event(
        "start",
        &folders.incoming.display().to_string(),
        &format!(
            "{} job(s), settle {:.2} s, ticket {}{}",
            settings.jobs,
            settings.settle.as_secs_f64(),
            ticket_path
                .as_ref()
                .map(|p| p.display().to_string())
                .unwrap_or_else(|| "none (defaults)".into()),
            if settings.once { ", once" } else { "" }
        ),
        None,
    );
    let shared = Shared {
        folders: &folders,
        instance: &id,
        steps: &steps,
        log: &log,
        delay,
        seq: AtomicU64::new(1),
    };
    let (tx, rx) = mpsc::channel::<Msg>();
    let watcher = if settings.once {
        None
    } else {
        start_watch(&folders.incoming, tx.clone(), &log, settings.rescan)
    };
    let summary = std::thread::scope(|scope| {
        let (job_tx, job_rx) = mpsc::channel::<Claimed>();
        let job_rx = Arc::new(Mutex::new(job_rx));
        for _ in 0..settings.jobs {
            let (job_rx, tx, shared) = (job_rx.clone(), tx.clone(), &shared);
            scope.spawn(move || worker(shared, &job_rx, &tx));
        }
        let summary = schedule(settings, stop, &shared, &instance, &rx, &job_tx);
        drop(job_tx);
        summary
    });
    drop(watcher);
    log.event("stop", "-", &format!("{} done, {} failed", summary.done, summary.failed), None);
    instance.release(&folders);
    Ok(summary)
}

/// Watches `in/` for events (each one only prompts a look at the folder).
fn start_watch(dir: &Path, tx: Sender<Msg>, log: &EventLog, rescan: Duration) -> Option<notify::RecommendedWatcher> {
    use notify::Watcher;
    let made = notify::recommended_watcher(move |_event: notify::Result<notify::Event>| {
        let _ = tx.send(Msg::Changed);
    })
    .and_then(|mut w| w.watch(dir, notify::RecursiveMode::NonRecursive).map(|()| w));
    match made {
        Ok(w) => Some(w),
        Err(e) => {
            log.event(
                "watch",
                &dir.display().to_string(),
                &format!("no file system events ({e}); looking every {:.1} s", rescan.as_secs_f64()),
                None,
            );
            None
        }
    }
}

fn worker(shared: &Shared, jobs: &Mutex<Receiver<Claimed>>, tx: &Sender<Msg>) {
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
fn schedule(
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

/// The next file of a gone instance to process again, finishing on the way
/// those whose results were already committed.
fn take_orphan_file(
    shared: &Shared,
    instance: &Instance,
    held: &[Orphan],
    summary: &mut RunSummary,
    skipped: &mut HashSet<PathBuf>,
) -> Option<Claimed> {
    for orphan in held {
        for name in orphan.files() {
            let src = orphan.dir.join(&name);
            if skipped.contains(&src) {
                continue;
            }
            let shown = name.to_string_lossy().to_string();
            if folders::link_count(&src) > 1 {
                // Linked into done/ or failed/ before the crash. A link in
                // failed/ without its error text was made by a move that
                // died before writing the text: undo it, and finish the file
                // below as if it had not been moved.
                let unexplained = folders::other_link_in(&shared.folders.failed, &src).filter(|other| {
                    let text = other
                        .file_name()
                        .map(folders::error_text_name)
                        .map(|n| shared.folders.failed.join(n));
                    text.is_some_and(|t| std::fs::symlink_metadata(t).is_err())
                });
                match unexplained {
                    Some(other) if std::fs::remove_file(&other).is_ok() => {
                        shared.log.event(
                            "recovered",
                            &shown,
                            "had been linked into failed/ without its error text before the crash; finished again",
                            None,
                        );
                    }
                    Some(_) => continue,
                    None => {
                        if std::fs::remove_file(&src).is_ok() {
                            shared
                                .log
                                .event("recovered", &shown, "had been moved to done/ or failed/ before the crash", None);
                        }
                        continue;
                    }
                }
            }
            let job = format!("{}/{}", orphan.id, shown);
            if let Some((out_dir, record)) = find_record(&shared.folders.out, &job) {
                let claimed = Claimed {
                    name: name.clone(),
                    path: src,
                };
                let started = Instant::now();
                let out_name = out_name(shared, &out_dir);
                let outcome = match record.result.as_str() {
                    "done" => finish_done(shared, &claimed, &out_name, started),
                    _ => fail(shared, &claimed, &record.reasons, Some(&out_name), started),
                };
                summary.count(outcome);
                if outcome == Outcome::Stuck {
                    skipped.insert(orphan.dir.join(&name));
                }
                continue;
            }
            let target = instance.dir.join(&name);
            if std::fs::symlink_metadata(&target).is_ok() {
                continue;
            }
            match std::fs::rename(&src, &target) {
                Ok(()) => {
                    shared
                        .log
                        .event("take", &shown, &format!("left unfinished by {}; processed again", orphan.id), None);
                    return Some(Claimed { name, path: target });
                }
                Err(e) if e.kind() == std::io::ErrorKind::NotFound => continue,
                Err(e) => {
                    shared.log.event(
                        "error",
                        &shown,
                        &format!("cannot take over {}: {e}; it stays there", src.display()),
                        None,
                    );
                    skipped.insert(src);
                }
            }
        }
    }
    None
}

/// The job record in every output folder.
#[derive(Debug, serde::Serialize, serde::Deserialize)]
struct JobRecord {
    /// `<instance>/<name>`: the claim the results belong to.
    job: String,
    /// The file's name as it arrived in `in/`.
    input: String,
    /// "done" (all checks passed) or "failed".
    result: String,
    #[serde(default)]
    reasons: Vec<String>,
    #[serde(default)]
    taken: String,
    #[serde(default)]
    finished: String,
    #[serde(default)]
    outputs: Vec<String>,
    #[serde(default)]
    note: String,
}

/// The output folder whose record names `job`, and the record.
fn find_record(out: &Path, job: &str) -> Option<(PathBuf, JobRecord)> {
    for entry in std::fs::read_dir(out).ok()?.filter_map(|e| e.ok()) {
        if entry.file_name().to_string_lossy().starts_with('.') {
            continue;
        }
        let Ok(text) = std::fs::read_to_string(entry.path().join(RECORD_NAME)) else {
            continue;
        };
        if let Ok(record) = serde_json::from_str::<JobRecord>(&text)
            && record.job == job
        {
            return Some((entry.path(), record));
        }
    }
    None
}

/// An output folder as a log line or error text names it (`out/a`).
fn out_name(shared: &Shared, dir: &Path) -> String {
    dir.strip_prefix(&shared.folders.root).unwrap_or(dir).display().to_string()
}

/// One job: the steps into a staging folder, the record, the commit, the move.
fn process(shared: &Shared, claimed: &Claimed) -> Outcome {
    let started = Instant::now();
    let taken = crate::calendar::rfc3339(SystemTime::now());
    let name = claimed.name.to_string_lossy().to_string();
    let stem = Path::new(&claimed.name)
        .file_stem()
        .map(|s| s.to_string_lossy().to_string())
        .filter(|s| !s.is_empty())
        .unwrap_or_else(|| name.clone());
    let staging = shared
        .folders
        .staging
        .join(shared.instance)
        .join(format!("{}-{stem}", shared.seq.fetch_add(1, Ordering::Relaxed)));
    let work_shown = claimed.path.display().to_string();
    let describe = |step: &str, e: &Error| format!("{step}: {}", e.to_string().replace(&work_shown, &name));
    let result: std::result::Result<Vec<String>, String> = (|| {
        std::fs::create_dir_all(&staging).map_err(|e| format!("cannot create {}: {e}", staging.display()))?;
        let size = std::fs::metadata(&claimed.path).map_err(|e| format!("cannot read: {e}"))?.len();
        if size == 0 {
            return Err("empty file (0 bytes) after the settle time; nothing to separate".to_string());
        }
        let mut job = JobFile {
            input: &claimed.path,
            name: &name,
            staging: &staging,
            started,
            separated: None,
        };
        let mut reasons = Vec::new();
        for step in shared.steps {
            match step.run(&mut job).map_err(|e| describe(step.name(), &e))? {
                Verdict::Pass => {}
                Verdict::Fail(r) => reasons.extend(r.into_iter().map(|r| format!("{}: {r}", step.name()))),
            }
        }
        // Damaged data accepted by the ticket's `accept_damaged` is said in the log, not only in the summary.
        for note in job
            .separated
            .iter()
            .flat_map(|s| &s.raster.notes)
            .filter(|n| n.contains("--accept-damaged"))
        {
            shared.log.event("damaged", &name, note, None);
        }
        Ok(reasons)
    })();
    if let Some(d) = shared.delay {
        std::thread::sleep(d);
    }
    let reasons = match result {
        Ok(reasons) => reasons,
        Err(reason) => {
            let _ = std::fs::remove_dir_all(&staging);
            return fail(shared, claimed, &[reason], None, started);
        }
    };
    let job = format!("{}/{}", shared.instance, name);
    let committed = commit_results(
        shared,
        &staging,
        &stem,
        JobRecord {
            job,
            input: name.clone(),
            result: if reasons.is_empty() { "done" } else { "failed" }.into(),
            reasons: reasons.clone(),
            taken,
            finished: crate::calendar::rfc3339(SystemTime::now()),
            outputs: Vec::new(),
            note: crate::report::PREDICTION_NOTE.into(),
        },
    );
    match committed {
        Err(reason) => {
            let _ = std::fs::remove_dir_all(&staging);
            fail(shared, claimed, &[reason], None, started)
        }
        Ok(out_dir) if reasons.is_empty() => finish_done(shared, claimed, &out_name(shared, &out_dir), started),
        Ok(out_dir) => fail(shared, claimed, &reasons, Some(&out_name(shared, &out_dir)), started),
    }
}

/// Writes the record into the staging folder and renames it into `out/`.
fn commit_results(shared: &Shared, staging: &Path, stem: &str, mut record: JobRecord) -> std::result::Result<PathBuf, String> {
    let mut outputs: Vec<String> = std::fs::read_dir(staging)
        .map_err(|e| e.to_string())?
        .filter_map(|e| e.ok())
        .map(|e| e.file_name().to_string_lossy().to_string())
        .filter(|n| !n.starts_with('.'))
        .collect();
    outputs.sort();
    record.outputs = outputs;
    let json = serde_json::to_string_pretty(&record).map_err(|e| e.to_string())?;
    let mut set = OutputSet::new(staging, false).map_err(|e| e.to_string())?;
    set.stage(RECORD_NAME, |w| std::io::Write::write_all(w, json.as_bytes()))
        .map_err(|e| e.to_string())?;
    set.commit().map_err(|e| e.to_string())?;
    folders::commit_folder(staging, &shared.folders.out, stem)
        .map_err(|e| format!("cannot move the results into {}: {e}", shared.folders.out.display()))
}

fn finish_done(shared: &Shared, claimed: &Claimed, out: &str, started: Instant) -> Outcome {
    let shown = claimed.name.to_string_lossy();
    match folders::move_unique(&claimed.path, &shared.folders.done, &claimed.name) {
        Ok(_) => {
            shared.log.event("done", &shown, out, Some(started.elapsed()));
            Outcome::Done
        }
        Err(e) => {
            shared.log.event(
                "error",
                &shown,
                &format!(
                    "results in {out}, but the input cannot be moved to done/: {e}; it stays in {}",
                    claimed.path.display()
                ),
                Some(started.elapsed()),
            );
            Outcome::Stuck
        }
    }
}

/// Moves the input to `failed/` under a free name, with its `.error.txt`: the
/// input is linked there first (which takes the name), then the text is
/// written through an [`OutputSet`], then the claim in `work/` is unlinked. A
/// crash before the text leaves a file with two links and no text, which
/// recovery recognises ([`take_orphan_file`]).
fn fail(shared: &Shared, claimed: &Claimed, reasons: &[String], out: Option<&str>, started: Instant) -> Outcome {
    let shown = claimed.name.to_string_lossy().to_string();
    let failed = &shared.folders.failed;
    let mut text = format!("{shown} failed ({}):\n", crate::calendar::rfc3339(SystemTime::now()));
    for r in reasons {
        text.push_str(&format!("  {r}\n"));
    }
    match out {
        Some(out) => text.push_str(&format!("The results, with the reports of the checks, are in {out}/.\n")),
        None => text.push_str("Nothing was written to out/.\n"),
    }
    text.push_str("The input is here unchanged; to try again, copy it into in/.\n");
    for n in 1..=100_000 {
        let candidate = folders::numbered(&claimed.name, n);
        let target = failed.join(&candidate);
        let error_name = folders::error_text_name(&candidate);
        let error_path = failed.join(&error_name);
        if std::fs::symlink_metadata(&error_path).is_ok() {
            continue;
        }
        let put = match folders::put(&claimed.path, &target) {
            Ok(folders::Put::Taken) => continue,
            Ok(put) => put,
            Err(e) => {
                shared.log.event(
                    "error",
                    &shown,
                    &format!("cannot move the input to failed/: {e}; it stays in {}", claimed.path.display()),
                    Some(started.elapsed()),
                );
                return Outcome::Stuck;
            }
        };
        let written = OutputSet::new(failed, false).and_then(|mut set| {
            set.stage(&error_name.to_string_lossy(), |w| std::io::Write::write_all(w, text.as_bytes()))?;
            set.commit()
        });
        if let Err(e) = written {
            // Give the name back: the input returns to its claim untouched.
            let undone = match put {
                folders::Put::Renamed => std::fs::rename(&target, &claimed.path),
                _ => std::fs::remove_file(&target),
            };
            let stays = if undone.is_ok() {
                claimed.path.display().to_string()
            } else {
                target.display().to_string()
            };
            shared.log.event(
                "error",
                &shown,
                &format!("cannot write {}: {e}; the input stays in {stays}", error_path.display()),
                Some(started.elapsed()),
            );
            return Outcome::Stuck;
        }
        if put == folders::Put::Linked
            && let Err(e) = std::fs::remove_file(&claimed.path)
        {
            // Moved and explained; the second name in work/ is what a crash
            // here would leave, and recovery removes it the same way.
            shared.log.event(
                "error",
                &shown,
                &format!("failed, but {} cannot be removed: {e}", claimed.path.display()),
                Some(started.elapsed()),
            );
        }
        shared.log.event("failed", &shown, &reasons.join("; "), Some(started.elapsed()));
        return Outcome::Failed;
    }
    Outcome::Stuck
}
