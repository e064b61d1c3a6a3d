//! The folders under the hot folder, the instance's claim on `work/`, the
//! detection of work left by instances that are gone, and the moves that
//! never replace an existing file (see the protocol in the module docs of
//! [`crate::hotfolder::recovery`]).

use crate::error::{Error, Result};
use std::ffi::{OsStr, OsString};
use std::fs::{self, File, OpenOptions};
use std::io;
use std::path::{Path, PathBuf};

/// The folders of one hot folder.
#[derive(Debug, Clone)]
pub struct Folders {
    pub root: PathBuf,
    pub incoming: PathBuf,
    pub work: PathBuf,
    pub out: PathBuf,
    pub done: PathBuf,
    pub failed: PathBuf,
    /// `out/.staging`: output folders being filled.
    pub staging: PathBuf,
    pub log: PathBuf,
}

impl Folders {
    /// The layout under `root`, which must be an existing folder; nothing is created yet.
    pub fn at(root: &Path) -> Result<Folders> {
        match fs::metadata(root) {
            Ok(m) if m.is_dir() => {}
            Ok(_) => return Err(Error::input(root, "is not a folder")),
            Err(e) if e.kind() == io::ErrorKind::NotFound => {
                return Err(Error::input(
                    root,
                    "no such folder; create it (the hot folder makes in/, work/, out/, done/ and failed/ inside)",
                ));
            }
            Err(e) => return Err(Error::input(root, e.to_string())),
        }
        let f = Folders {
            root: root.to_path_buf(),
            incoming: root.join("in"),
            work: root.join("work"),
            out: root.join("out"),
            done: root.join("done"),
            failed: root.join("failed"),
            staging: root.join("out").join(".staging"),
            log: root.join("hotfolder.log"),
        };
        Ok(f)
    }

    /// Creates the folders that are missing.
    pub fn create(&self) -> Result<()> {
        for dir in [&self.incoming, &self.work, &self.out, &self.done, &self.failed, &self.staging] {
            fs::create_dir_all(dir).map_err(|e| Error::output(dir, format!("cannot create the folder: {e}")))?;
        }
        Ok(())
    }

    /// The layout under `root` (which must exist), creating the folders that are missing.
    pub fn prepare(root: &Path) -> Result<Folders> {
        let f = Folders::at(root)?;
        f.create()?;
        Ok(f)
    }
}

/// This process's identity: `<host>-<pid>-<start time>`, unique across
/// machines sharing the folder and across restarts.
pub fn instance_id() -> String {
    let host = fs::read_to_string("/proc/sys/kernel/hostname")
        .ok()
        .or_else(|| std::env::var("HOSTNAME").ok())
        .unwrap_or_default();
    let host: String = host
        .trim()
        .chars()
        .map(|c| {
            if c.is_ascii_alphanumeric() || c == '.' || c == '_' {
                c
            } else {
                '_'
            }
        })
        .collect();
    let host = if host.is_empty() { "host".to_string() } else { host };
    let nanos = std::time::SystemTime::now()
        .duration_since(std::time::UNIX_EPOCH)
        .map(|d| d.as_nanos())
        .unwrap_or(0);
    format!("{host}-{}-{nanos:x}", std::process::id())
}

/// A live instance's hold on its own work folder: `work/<id>/`, with the
/// lock file `work/<id>.lock` locked (flock) for as long as the process lives.
/// The kernel drops the lock when the process dies, however it dies.
#[derive(Debug)]
pub struct Instance {
    pub id: String,
    pub dir: PathBuf,
    lock_path: PathBuf,
    _lock: File,
}

impl Instance {
    /// Publishes a locked lock file, then makes the work folder.
    pub fn register(folders: &Folders, id: &str) -> Result<Instance> {
        let lock_path = folders.work.join(format!("{id}.lock"));
        let lock = publish_locked(&folders.work, &lock_path, id)?
            .ok_or_else(|| Error::output(&lock_path, "already exists (an instance of the same identity)"))?;
        let dir = folders.work.join(id);
        fs::create_dir(&dir).map_err(|e| Error::output(&dir, format!("cannot create the work folder: {e}")))?;
        Ok(Instance {
            id: id.to_string(),
            dir,
            lock_path,
            _lock: lock,
        })
    }

    /// Removes the work folder and the lock file when nothing is left in the folder.
    pub fn release(self, folders: &Folders) {
        if fs::remove_dir(&self.dir).is_ok() {
            let _ = fs::remove_dir_all(folders.staging.join(&self.id));
            let _ = fs::remove_file(&self.lock_path);
        }
    }
}

/// Makes a lock file under a temporary name, locks it, and links it to
/// `path` (a hard link never replaces a file), so a lock file is never
/// visible unlocked while its owner lives. `None` when `path` exists.
fn publish_locked(work: &Path, path: &Path, owner: &str) -> Result<Option<File>> {
    let temp = work.join(format!(".lock-{}.tmp", instance_id()));
    let mut file = OpenOptions::new()
        .read(true)
        .write(true)
        .create_new(true)
        .open(&temp)
        .map_err(|e| Error::output(&temp, format!("cannot create a lock file: {e}")))?;
    let result = (|| {
        file.lock()
            .map_err(|e| Error::output(&temp, format!("cannot lock: {e} (the file system must support file locks)")))?;
        let _ = io::Write::write_all(&mut file, format!("{owner}\n").as_bytes());
        match fs::hard_link(&temp, path) {
            Ok(()) => Ok(Some(())),
            Err(e) if e.kind() == io::ErrorKind::AlreadyExists => Ok(None),
            Err(e) => Err(Error::output(
                path,
                format!("cannot create the lock file: {e} (the file system must support hard links)"),
            )),
        }
    })();
    let _ = fs::remove_file(&temp);
    Ok(result?.map(|()| file))
}

/// A work folder whose instance is gone, held (locked) by this process while
/// its files are taken over.
#[derive(Debug)]
pub struct Orphan {
    pub id: String,
    pub dir: PathBuf,
    lock_path: PathBuf,
    _lock: File,
}

impl Orphan {
    /// The files left in the folder (not hidden), sorted by name.
    pub fn files(&self) -> Vec<OsString> {
        let mut names: Vec<OsString> = fs::read_dir(&self.dir)
            .map(|rd| {
                rd.filter_map(|e| e.ok())
                    .map(|e| e.file_name())
                    .filter(|n| !n.to_string_lossy().starts_with('.'))
                    .collect()
            })
            .unwrap_or_default();
        names.sort();
        names
    }

    /// Removes the folder, its staging folder and its lock file once nothing is
    /// left in the folder; `false` while something is.
    pub fn close_if_empty(&self, folders: &Folders) -> bool {
        match fs::remove_dir(&self.dir) {
            Ok(()) => {}
            Err(e) if e.kind() == io::ErrorKind::NotFound => {}
            Err(_) => return false,
        }
        let _ = fs::remove_dir_all(folders.staging.join(&self.id));
        let _ = fs::remove_file(&self.lock_path);
        true
    }
}

/// Looks for work folders in `work/` whose lock is free (their process is
/// gone) and takes their locks. Folders already `held` (by id) and this
/// instance's own are skipped. Staging folders of gone instances are removed:
/// they hold only unfinished results.
pub fn find_orphans(folders: &Folders, own: &str, held: &[String]) -> Vec<Orphan> {
    let mut found = Vec::new();
    let Ok(entries) = fs::read_dir(&folders.work) else { return found };
    let mut names: Vec<String> = entries
        .filter_map(|e| e.ok())
        .filter(|e| e.path().is_dir())
        .filter_map(|e| e.file_name().to_str().map(str::to_string))
        .collect();
    names.sort();
    for id in names {
        if id.starts_with('.') || id == own || held.contains(&id) {
            continue;
        }
        let lock_path = folders.work.join(format!("{id}.lock"));
        let lock = match OpenOptions::new().read(true).write(true).open(&lock_path) {
            Ok(f) => match f.try_lock() {
                Ok(()) => f,
                Err(_) => continue,
            },
            // No lock file: a folder left without one (its lock was removed by
            // hand); publish a lock for it, as an instance would.
            Err(e) if e.kind() == io::ErrorKind::NotFound => match publish_locked(&folders.work, &lock_path, &id) {
                Ok(Some(f)) => f,
                _ => continue,
            },
            Err(_) => continue,
        };
        // The lock may be on a file an earlier taker already removed, with the
        // folder gone too: then there is nothing to take.
        let dir = folders.work.join(&id);
        if !dir.is_dir() {
            continue;
        }
        let _ = fs::remove_dir_all(folders.staging.join(&id));
        found.push(Orphan {
            id,
            dir,
            lock_path,
            _lock: lock,
        });
    }
    // Lock files of gone instances that never made their folder.
    if let Ok(entries) = fs::read_dir(&folders.work) {
        for e in entries.filter_map(|e| e.ok()) {
            let name = e.file_name().to_string_lossy().to_string();
            let Some(id) = name.strip_suffix(".lock") else { continue };
            if id.starts_with('.') || id == own || held.iter().any(|h| h == id) || folders.work.join(id).exists() {
                continue;
            }
            if let Ok(f) = OpenOptions::new().read(true).write(true).open(e.path())
                && f.try_lock().is_ok()
                && !folders.work.join(id).exists()
            {
                let _ = fs::remove_file(e.path());
            }
        }
    }
    // Staging folders of instances with neither a work folder nor a lock file.
    if let Ok(entries) = fs::read_dir(&folders.staging) {
        for e in entries.filter_map(|e| e.ok()) {
            let id = e.file_name().to_string_lossy().to_string();
            if id != own && !held.contains(&id) && !folders.work.join(&id).exists() && !folders.work.join(format!("{id}.lock")).exists() {
                let _ = fs::remove_dir_all(e.path());
            }
        }
    }
    found
}

/// `name` with `-N` before its extension (`a.png`, `a-2.png`, `a-3.png`…);
/// for N = 1 the name itself.
pub fn numbered(name: &OsStr, n: u32) -> OsString {
    if n <= 1 {
        return name.to_os_string();
    }
    let path = Path::new(name);
    let stem = path.file_stem().unwrap_or(name).to_string_lossy();
    match path.extension() {
        Some(ext) if !stem.is_empty() => format!("{stem}-{n}.{}", ext.to_string_lossy()).into(),
        _ => format!("{}-{n}", name.to_string_lossy()).into(),
    }
}

const MAX_NUMBER: u32 = 100_000;

/// Moves `src` into `dir` under `name`, or `name-2`, `name-3`… when taken,
/// never replacing a file. A hard link is made first and the source removed
/// after, so a crash between the two leaves a file with two links (which a
/// restart recognises as moved). Where hard links are not supported the move
/// is a rename after checking the name is free. Returns the new path.
pub fn move_unique(src: &Path, dir: &Path, name: &OsStr) -> io::Result<PathBuf> {
    for n in 1..=MAX_NUMBER {
        let target = dir.join(numbered(name, n));
        match place(src, &target)? {
            true => return Ok(target),
            false => continue,
        }
    }
    Err(io::Error::new(
        io::ErrorKind::AlreadyExists,
        format!("{}: no free name", dir.join(name).display()),
    ))
}

/// Moves `src` to `target` unless `target` exists; `false` when it does.
pub fn place(src: &Path, target: &Path) -> io::Result<bool> {
    match put(src, target)? {
        Put::Taken => Ok(false),
        Put::Renamed => Ok(true),
        Put::Linked => {
            fs::remove_file(src)?;
            Ok(true)
        }
    }
}

/// How [`put`] placed a file.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Put {
    /// `target` was there already; nothing changed.
    Taken,
    /// `target` is a second link to `src`, which is still in place: the caller
    /// removes `src` once the rest of its move is done.
    Linked,
    /// No hard links on this file system: `src` was renamed to `target`.
    Renamed,
}

/// Puts `src` at `target` unless `target` exists, never replacing a file: a
/// hard link (atomic, and `src` stays), or where the file system has no hard
/// links a rename after checking that the name is free.
pub fn put(src: &Path, target: &Path) -> io::Result<Put> {
    if fs::symlink_metadata(target).is_ok() {
        return Ok(Put::Taken);
    }
    match fs::hard_link(src, target) {
        Ok(()) => Ok(Put::Linked),
        Err(e) if e.kind() == io::ErrorKind::AlreadyExists => Ok(Put::Taken),
        Err(e) if e.kind() == io::ErrorKind::NotFound => Err(e),
        Err(_) => {
            // No hard links here (some network file systems): a checked rename.
            if fs::symlink_metadata(target).is_ok() {
                return Ok(Put::Taken);
            }
            fs::rename(src, target)?;
            Ok(Put::Renamed)
        }
    }
}

/// Renames the filled staging folder `src` to `out/<stem>`, or `<stem>-2`…
/// when taken (a folder is renamed onto a name only while nothing is there;
/// a rename onto a folder with files fails, so two instances never mix).
pub fn commit_folder(src: &Path, out: &Path, stem: &str) -> io::Result<PathBuf> {
    for n in 1..=MAX_NUMBER {
        let target = out.join(if n == 1 { stem.to_string() } else { format!("{stem}-{n}") });
        if fs::symlink_metadata(&target).is_ok() {
            continue;
        }
        match fs::rename(src, &target) {
            Ok(()) => return Ok(target),
            Err(_) if fs::symlink_metadata(&target).is_ok() && src.exists() => continue,
            Err(e) => return Err(e),
        }
    }
    Err(io::Error::new(
        io::ErrorKind::AlreadyExists,
        format!("{}: no free name", out.join(stem).display()),
    ))
}

/// How many names point at a file (2 or more: a move was interrupted after its link).
#[cfg(unix)]
pub fn link_count(path: &Path) -> u64 {
    use std::os::unix::fs::MetadataExt;
    fs::symlink_metadata(path).map(|m| m.nlink()).unwrap_or(1)
}

#[cfg(not(unix))]
pub fn link_count(_path: &Path) -> u64 {
    1
}

/// Another name in `dir` for the file at `path` (the same device and inode),
/// if there is one.
#[cfg(unix)]
pub fn other_link_in(dir: &Path, path: &Path) -> Option<PathBuf> {
    use std::os::unix::fs::MetadataExt;
    let meta = fs::symlink_metadata(path).ok()?;
    fs::read_dir(dir)
        .ok()?
        .filter_map(|e| e.ok())
        .map(|e| e.path())
        .find(|p| p != path && fs::symlink_metadata(p).is_ok_and(|m| m.is_file() && m.dev() == meta.dev() && m.ino() == meta.ino()))
}

#[cfg(not(unix))]
pub fn other_link_in(_dir: &Path, _path: &Path) -> Option<PathBuf> {
    None
}

/// The name of the text that says why `failed/NAME` failed: `NAME.error.txt`.
pub fn error_text_name(name: &OsStr) -> OsString {
    let mut n = name.to_os_string();
    n.push(".error.txt");
    n
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn numbered_names_keep_the_extension() {
        assert_eq!(numbered(OsStr::new("a.png"), 1), OsString::from("a.png"));
        assert_eq!(numbered(OsStr::new("a.png"), 2), OsString::from("a-2.png"));
        assert_eq!(numbered(OsStr::new("a.b.tif"), 3), OsString::from("a.b-3.tif"));
        assert_eq!(numbered(OsStr::new("noext"), 2), OsString::from("noext-2"));
    }

    #[test]
    fn moves_never_replace_and_folders_never_mix() {
        let t = tempfile::tempdir().unwrap();
        let dir = t.path().join("done");
        fs::create_dir(&dir).unwrap();
        for i in 0..3 {
            let src = t.path().join("a.png");
            fs::write(&src, format!("{i}")).unwrap();
            move_unique(&src, &dir, OsStr::new("a.png")).unwrap();
            assert!(!src.exists());
        }
        assert_eq!(fs::read_to_string(dir.join("a.png")).unwrap(), "0");
        assert_eq!(fs::read_to_string(dir.join("a-2.png")).unwrap(), "1");
        assert_eq!(fs::read_to_string(dir.join("a-3.png")).unwrap(), "2");
        let out = t.path().join("out");
        fs::create_dir(&out).unwrap();
        for i in 0..2 {
            let s = t.path().join(format!("stage{i}"));
            fs::create_dir(&s).unwrap();
            fs::write(s.join("f"), format!("{i}")).unwrap();
            commit_folder(&s, &out, "a").unwrap();
        }
        assert_eq!(fs::read_to_string(out.join("a/f")).unwrap(), "0");
        assert_eq!(fs::read_to_string(out.join("a-2/f")).unwrap(), "1");
    }

    #[test]
    fn a_live_instance_is_not_an_orphan_and_a_released_lock_is() {
        let t = tempfile::tempdir().unwrap();
        let f = Folders::prepare(t.path()).unwrap();
        let a = Instance::register(&f, "host-1-a").unwrap();
        fs::write(a.dir.join("x.png"), "x").unwrap();
        // Locks are per open file: another open of the lock file sees it held.
        assert!(find_orphans(&f, "host-2-b", &[]).is_empty());
        drop(a);
        let orphans = find_orphans(&f, "host-2-b", &[]);
        assert_eq!(orphans.len(), 1);
        assert_eq!(orphans[0].files(), [OsString::from("x.png")]);
        // Held by us: a second look does not find it again.
        assert!(find_orphans(&f, "host-3-c", &[]).is_empty(), "a held orphan is locked");
        fs::remove_file(orphans[0].dir.join("x.png")).unwrap();
        assert!(orphans[0].close_if_empty(&f));
        assert!(!f.work.join("host-1-a").exists() && !f.work.join("host-1-a.lock").exists());
    }
}
