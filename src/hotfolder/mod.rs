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
//! Claims by atomic rename, results committed by one rename of their folder,
//! inputs moved without replacing anything, and the takeover of the work of
//! instances that are gone: documented with the recovery code in
//! [`recovery`]. Scheduling and the workers: [`schedule`]; one job's results:
//! [`results`].
//!
//!
//! # Testing
//! Debug and test builds read [`JOB_DELAY_ENV`] (milliseconds): every job
//! waits that long after its steps and before its results are committed, so
//! tests can signal or kill an instance in the middle of a job. Release
//! builds ignore it.

pub mod folders;
pub mod log;
pub mod recovery;
pub mod results;
pub mod schedule;
pub mod steps;
pub mod watch;

use crate::error::{Error, Result};
use folders::{Folders, Instance};
use log::EventLog;
use schedule::{schedule, worker};
use std::ffi::OsString;
use std::path::{Path, PathBuf};
use std::sync::atomic::{AtomicBool, AtomicU64};
use std::sync::mpsc::{self, Sender};
use std::sync::{Arc, Mutex};
use std::time::Duration;
use steps::Step;

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
    /// Tables and the embedded profile are not kept in the cache folder.
    pub no_cache: bool,
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
    let (workshop, ticket) = crate::setup::ticket_workshop(ticket_path.as_deref(), !settings.no_cache)?;
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
