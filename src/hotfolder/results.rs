//! One job's results: the pipeline's steps into a staging folder, the job
//! record, the commit into `out/` (one rename), and the input moved to
//! `done/` or `failed/` (steps 3 and 4 of the protocol in [`super::recovery`]).

use super::recovery::JobRecord;
use super::steps::{JobFile, Verdict};
use super::{Claimed, Outcome, RECORD_NAME, Shared, folders};
use crate::calendar::rfc3339;
use crate::error::Error;
use crate::raster::OutputSet;
use std::path::{Path, PathBuf};
use std::sync::atomic::Ordering;
use std::time::{Instant, SystemTime};

/// An output folder as a log line or error text names it (`out/a`).
pub(super) fn out_name(shared: &Shared, dir: &Path) -> String {
    dir.strip_prefix(&shared.folders.root).unwrap_or(dir).display().to_string()
}

/// One job: the steps into a staging folder, the record, the commit, the move.
pub(super) fn process(shared: &Shared, claimed: &Claimed) -> Outcome {
    let started = Instant::now();
    let taken = rfc3339(SystemTime::now());
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
            read_notes: Vec::new(),
            inspection: None,
        };
        let mut reasons = Vec::new();
        for step in shared.steps {
            match step.run(&mut job).map_err(|e| describe(step.name(), &e))? {
                Verdict::Pass => {}
                Verdict::Fail(r) => reasons.extend(r.into_iter().map(|r| format!("{}: {r}", step.name()))),
            }
        }
        // Damaged data accepted by the ticket's `accept_damaged` is said in the log, not only in the summary.
        for note in job.read_notes.iter().filter(|n| n.contains("--accept-damaged")) {
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
            finished: rfc3339(SystemTime::now()),
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

pub(super) fn finish_done(shared: &Shared, claimed: &Claimed, out: &str, started: Instant) -> Outcome {
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
/// recovery recognises ([`super::recovery::take_orphan_file`]).
pub(super) fn fail(shared: &Shared, claimed: &Claimed, reasons: &[String], out: Option<&str>, started: Instant) -> Outcome {
    let shown = claimed.name.to_string_lossy().to_string();
    let failed = &shared.folders.failed;
    let mut text = format!("{shown} failed ({}):\n", rfc3339(SystemTime::now()));
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
