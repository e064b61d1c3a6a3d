//! Crash recovery: the takeover of what instances that are gone left in
//! `work/` (claims and records), and the protocol it relies on.
//!
//! # Protocol
//! 1. **Arrival.** A file in `in/` is taken once its size and modification
//!    time have stayed the same for the settle time (this process's own
//!    observation). Names starting with a dot and names with a temporary
//!    suffix ([`super::watch::TEMPORARY_SUFFIXES`]) are never taken, so a copy tool
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
//! 3. **Results.** The pipeline ([`super::steps`]) writes into
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

use super::folders::{self, Instance, Orphan};
use super::results::{fail, finish_done, out_name};
use super::{Claimed, Outcome, RECORD_NAME, RunSummary, Shared};
use std::collections::HashSet;
use std::path::{Path, PathBuf};
use std::time::Instant;

/// The next file of a gone instance to process again, finishing on the way
/// those whose results were already committed.
pub(super) fn take_orphan_file(
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
pub(super) struct JobRecord {
    /// `<instance>/<name>`: the claim the results belong to.
    pub job: String,
    /// The file's name as it arrived in `in/`.
    pub input: String,
    /// "done" (all checks passed) or "failed".
    pub result: String,
    #[serde(default)]
    pub reasons: Vec<String>,
    #[serde(default)]
    pub taken: String,
    #[serde(default)]
    pub finished: String,
    #[serde(default)]
    pub outputs: Vec<String>,
    #[serde(default)]
    pub note: String,
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
