//! A staged set of output files: each is written to a hidden temporary file in the
//! destination folder and the whole set is renamed into place by [`OutputSet::commit`].
//! A failed or abandoned run leaves no partial file, an existing file is only replaced
//! when overwriting is allowed, and a path that is one of the inputs is never written.
//!
//! Temporary names look like `.NAME.XXXXXX.part` (a leading dot and a `.part` suffix),
//! so a watched folder can skip them.
//!
//! # Forcing a write failure (tests)
//! [`OutputSet::fail_writes_after`] makes every staged writer fail once it has taken the
//! given number of bytes, as a full disk would. Builds with debug assertions (the dev and
//! test profiles) also read the environment variable [`FAIL_AFTER_ENV`] when an
//! `OutputSet` is made, so tests that run the binary can force the same failure; release
//! builds ignore it.

use std::fs;
use std::io::{self, BufWriter, Seek, SeekFrom, Write};
use std::path::{Path, PathBuf};

use crate::{Error, Result};

/// Environment variable read by debug builds: a byte count after which staged writes fail.
pub const FAIL_AFTER_ENV: &str = "PLATESMITH_FAIL_WRITE_AFTER_BYTES";

/// Files staged for one job, renamed into place together.
#[derive(Debug)]
pub struct OutputSet {
    dir: PathBuf,
    overwrite: bool,
    protected: Vec<Protected>,
    staged: Vec<Staged>,
    fail_after: Option<u64>,
}

#[derive(Debug)]
struct Protected {
    canonical: PathBuf,
    #[cfg(unix)]
    id: Option<(u64, u64)>,
}

#[derive(Debug)]
struct Staged {
    temp: tempfile::TempPath,
    target: PathBuf,
}

/// A file opened in the set by [`OutputSet::open`] and written over time (a
/// streamed job writes each band as it comes): its temporary file is removed
/// when this is dropped, unless [`OutputSet::keep`] took it into the set.
#[derive(Debug)]
pub struct OpenFile {
    temp: tempfile::TempPath,
    target: PathBuf,
}

impl OpenFile {
    /// Where the file will be after the set is committed.
    pub fn target(&self) -> &Path {
        &self.target
    }

    /// A write failure of this file as the job's error, naming its final path.
    pub fn error(&self, e: &io::Error) -> Error {
        Error::output(&self.target, describe(e))
    }
}

/// One file's writing closure for [`OutputSet::stage_parallel`].
pub type StageFn<'f> = Box<dyn FnOnce(&mut StagedWriter) -> io::Result<()> + Send + 'f>;

/// The writer handed to a staging closure: buffered, seekable (TIFF needs it), counting bytes.
pub struct StagedWriter {
    inner: BufWriter<fs::File>,
    written: u64,
    fail_after: Option<u64>,
}

impl Write for StagedWriter {
    fn write(&mut self, buf: &[u8]) -> io::Result<usize> {
        let mut take = buf.len();
        if let Some(limit) = self.fail_after {
            let room = limit.saturating_sub(self.written);
            if room == 0 {
                return Err(io::Error::new(
                    io::ErrorKind::StorageFull,
                    format!("no space left on device (write failure forced after {limit} bytes)"),
                ));
            }
            take = take.min(usize::try_from(room).unwrap_or(usize::MAX));
        }
        let n = self.inner.write(&buf[..take])?;
        self.written += n as u64;
        Ok(n)
    }

    fn flush(&mut self) -> io::Result<()> {
        self.inner.flush()
    }
}

impl Seek for StagedWriter {
    fn seek(&mut self, pos: SeekFrom) -> io::Result<u64> {
        self.inner.seek(pos)
    }
}

impl StagedWriter {
    /// Bytes written so far.
    pub fn bytes_written(&self) -> u64 {
        self.written
    }
}

impl OutputSet {
    /// A set writing into `dir`, which must be an existing folder. With `overwrite` false
    /// an existing target is refused.
    pub fn new(dir: impl AsRef<Path>, overwrite: bool) -> Result<OutputSet> {
        let dir = dir.as_ref().to_path_buf();
        match fs::metadata(&dir) {
            Ok(m) if m.is_dir() => {}
            Ok(_) => return Err(Error::output(&dir, "is not a folder")),
            Err(e) if e.kind() == io::ErrorKind::NotFound => {
                return Err(Error::output(&dir, "output folder does not exist; create it first"));
            }
            Err(e) => return Err(Error::output(&dir, e.to_string())),
        }
        let fail_after = if cfg!(debug_assertions) {
            std::env::var(FAIL_AFTER_ENV).ok().and_then(|v| v.trim().parse().ok())
        } else {
            None
        };
        Ok(OutputSet {
            dir,
            overwrite,
            protected: Vec::new(),
            staged: Vec::new(),
            fail_after,
        })
    }

    /// Paths that must never be written (the job's inputs). Paths that do not exist are skipped.
    /// Comparison is on canonical paths (and, on Unix, on device and inode, so a hard link counts).
    pub fn protect<P: AsRef<Path>>(&mut self, inputs: impl IntoIterator<Item = P>) -> &mut Self {
        for p in inputs {
            if let Ok(canonical) = fs::canonicalize(p.as_ref()) {
                #[cfg(unix)]
                let id = file_id(&canonical);
                self.protected.push(Protected {
                    canonical,
                    #[cfg(unix)]
                    id,
                });
            }
        }
        self
    }

    /// Forces every staged writer to fail after `bytes` bytes (for tests of the failure path).
    #[doc(hidden)]
    pub fn fail_writes_after(&mut self, bytes: u64) -> &mut Self {
        self.fail_after = Some(bytes);
        self
    }

    /// The destination folder.
    pub fn dir(&self) -> &Path {
        &self.dir
    }

    /// The final path of `file_name`, after checking it may be written: a plain file name,
    /// not an input, not already staged, and not existing unless overwriting is allowed.
    /// Call it for every name before the heavy work to fail early.
    pub fn check(&self, file_name: &str) -> Result<PathBuf> {
        let bad_name = file_name.is_empty()
            || file_name == "."
            || file_name == ".."
            || file_name.contains('/')
            || file_name.contains(std::path::MAIN_SEPARATOR);
        if bad_name {
            return Err(Error::Internal(format!("output name {file_name:?} is not a plain file name")));
        }
        let target = self.dir.join(file_name);
        if self.is_protected(&target) {
            return Err(Error::output(&target, "is one of the inputs; an input is never overwritten"));
        }
        if self.staged.iter().any(|s| s.target == target) {
            return Err(Error::output(&target, "is produced twice by this job"));
        }
        if fs::symlink_metadata(&target).is_ok() && !self.overwrite {
            return Err(Error::output(&target, "already exists; allow overwriting (--force) to replace it"));
        }
        if fs::metadata(&target).is_ok_and(|m| m.is_dir()) {
            return Err(Error::output(&target, "is a folder"));
        }
        Ok(target)
    }

    fn is_protected(&self, target: &Path) -> bool {
        let canonical = fs::canonicalize(target).ok().or_else(|| {
            let parent = fs::canonicalize(target.parent()?).ok()?;
            Some(parent.join(target.file_name()?))
        });
        #[cfg(unix)]
        let id = file_id(target);
        self.protected.iter().any(|p| {
            let same_path = canonical.as_ref() == Some(&p.canonical);
            #[cfg(unix)]
            let same_file = id.is_some() && id == p.id;
            #[cfg(not(unix))]
            let same_file = false;
            same_path || same_file
        })
    }

    /// Writes `file_name` through `write` into a temporary file in the destination folder.
    /// On any failure the temporary file is removed and the error names the final path.
    /// Returns the final path (where the file will be after [`commit`](Self::commit)).
    pub fn stage<F>(&mut self, file_name: &str, write: F) -> Result<PathBuf>
    where
        F: FnOnce(&mut StagedWriter) -> io::Result<()>,
    {
        let target = self.check(file_name)?;
        let (mut writer, temp) = self.create_temp(file_name, &target)?;
        let result = write(&mut writer).and_then(|()| writer.flush());
        drop(writer);
        match result {
            Ok(()) => {
                self.staged.push(Staged {
                    temp,
                    target: target.clone(),
                });
                Ok(target)
            }
            // `temp` is dropped here, which removes the temporary file.
            Err(e) => Err(Error::output(&target, describe(&e))),
        }
    }

    /// Writes several files at once, each through its own closure on a thread of the rayon
    /// pool, with the same guarantees as [`stage`](Self::stage) one after another: the names
    /// are checked and the temporary files made first, in order; when any write fails every
    /// temporary file of the batch is removed and the first failure in the given order is
    /// returned. Returns the final paths in the given order.
    pub fn stage_parallel<'f>(&mut self, files: Vec<(String, StageFn<'f>)>) -> Result<Vec<PathBuf>> {
        use rayon::prelude::*;
        let mut open = Vec::with_capacity(files.len());
        for (file_name, write) in files {
            let target = self.check(&file_name)?;
            if open.iter().any(|(t, ..): &(PathBuf, _, _, _)| *t == target) {
                return Err(Error::output(&target, "is produced twice by this job"));
            }
            let (writer, temp) = self.create_temp(&file_name, &target)?;
            open.push((target, temp, writer, write));
        }
        let results: Vec<io::Result<()>> = open
            .par_iter_mut()
            .map(|(_, _, writer, write)| {
                let write = std::mem::replace(write, Box::new(|_| Ok(())));
                write(writer).and_then(|()| writer.flush())
            })
            .collect();
        if let Some((i, e)) = results.iter().enumerate().find_map(|(i, r)| r.as_ref().err().map(|e| (i, e))) {
            // Dropping `open` removes every temporary file of the batch.
            return Err(Error::output(&open[i].0, describe(e)));
        }
        let mut targets = Vec::with_capacity(open.len());
        for (target, temp, writer, _) in open {
            drop(writer);
            self.staged.push(Staged {
                temp,
                target: target.clone(),
            });
            targets.push(target);
        }
        Ok(targets)
    }

    /// Opens `file_name` for writing over time: the name is checked as
    /// [`stage`](Self::stage) checks it and its temporary file made now. Write
    /// through the returned writer (flushing it), then hand the file to
    /// [`keep`](Self::keep); a file dropped instead leaves nothing.
    pub fn open(&self, file_name: &str) -> Result<(StagedWriter, OpenFile)> {
        let target = self.check(file_name)?;
        let (writer, temp) = self.create_temp(file_name, &target)?;
        Ok((writer, OpenFile { temp, target }))
    }

    /// Adds a file opened by [`open`](Self::open) and completely written to the set;
    /// returns its final path.
    pub fn keep(&mut self, file: OpenFile) -> Result<PathBuf> {
        if self.staged.iter().any(|s| s.target == file.target) {
            return Err(Error::output(&file.target, "is produced twice by this job"));
        }
        let target = file.target.clone();
        self.staged.push(Staged {
            temp: file.temp,
            target: file.target,
        });
        Ok(target)
    }

    /// The temporary file for `file_name` in the destination folder and its writer.
    fn create_temp(&self, file_name: &str, target: &Path) -> Result<(StagedWriter, tempfile::TempPath)> {
        let prefix = format!(".{file_name}.");
        let mut builder = tempfile::Builder::new();
        builder.prefix(&prefix).suffix(".part");
        #[cfg(unix)]
        {
            use std::os::unix::fs::PermissionsExt;
            builder.permissions(fs::Permissions::from_mode(0o644));
        }
        let temp = builder.tempfile_in(&self.dir).map_err(|e| Error::output(target, describe(&e)))?;
        let (file, temp) = temp.into_parts();
        let writer = StagedWriter {
            inner: BufWriter::with_capacity(1 << 20, file),
            written: 0,
            fail_after: self.fail_after,
        };
        Ok((writer, temp))
    }

    /// Final paths of the files staged so far.
    pub fn staged(&self) -> Vec<PathBuf> {
        self.staged.iter().map(|s| s.target.clone()).collect()
    }

    /// Renames every staged file into place. If a rename fails, the files of this set already
    /// renamed are removed again when overwriting was not allowed (they did not exist before);
    /// with overwriting, files replaced before the failure stay replaced.
    pub fn commit(mut self) -> Result<Vec<PathBuf>> {
        let staged = std::mem::take(&mut self.staged);
        let mut done: Vec<PathBuf> = Vec::with_capacity(staged.len());
        for Staged { temp, target } in staged {
            let renamed = if self.overwrite {
                temp.persist(&target).map_err(|e| e.error)
            } else {
                temp.persist_noclobber(&target).map_err(|e| e.error)
            };
            if let Err(e) = renamed {
                if !self.overwrite {
                    for path in &done {
                        let _ = fs::remove_file(path);
                    }
                }
                let reason = if e.kind() == io::ErrorKind::AlreadyExists {
                    "appeared while the job ran; allow overwriting (--force) to replace it".to_string()
                } else {
                    describe(&e)
                };
                // The remaining temporary files are removed as the loop's iterator is dropped.
                return Err(Error::output(&target, reason));
            }
            done.push(target);
        }
        Ok(done)
    }
}

fn describe(e: &io::Error) -> String {
    match e.kind() {
        io::ErrorKind::StorageFull => format!("disk full ({e}); nothing was written"),
        io::ErrorKind::PermissionDenied => "permission denied in the output folder".to_string(),
        io::ErrorKind::ReadOnlyFilesystem => "the output folder is on a read-only file system".to_string(),
        _ => e.to_string(),
    }
}

#[cfg(unix)]
fn file_id(path: &Path) -> Option<(u64, u64)> {
    use std::os::unix::fs::MetadataExt;
    fs::metadata(path).ok().map(|m| (m.dev(), m.ino()))
}

#[cfg(test)]
mod tests {
    use super::*;

    fn names(dir: &Path) -> Vec<String> {
        let mut v: Vec<String> = fs::read_dir(dir)
            .unwrap()
            .map(|e| e.unwrap().file_name().to_string_lossy().into_owned())
            .collect();
        v.sort();
        v
    }

    #[test]
    fn parallel_staging_writes_every_file_and_commits_them_together() {
        let dir = tempfile::tempdir().unwrap();
        let mut set = OutputSet::new(dir.path(), false).unwrap();
        let files: Vec<(String, StageFn)> = (0..5u8)
            .map(|i| {
                (
                    format!("f{i}.bin"),
                    Box::new(move |w: &mut StagedWriter| w.write_all(&vec![i; 200_000 + i as usize])) as StageFn,
                )
            })
            .collect();
        let targets = set.stage_parallel(files).unwrap();
        assert_eq!(targets, (0..5).map(|i| dir.path().join(format!("f{i}.bin"))).collect::<Vec<_>>());
        assert!(names(dir.path()).iter().all(|n| n.starts_with('.') && n.ends_with(".part")));
        set.commit().unwrap();
        assert_eq!(names(dir.path()), ["f0.bin", "f1.bin", "f2.bin", "f3.bin", "f4.bin"]);
        for i in 0..5u8 {
            assert_eq!(
                fs::read(dir.path().join(format!("f{i}.bin"))).unwrap(),
                vec![i; 200_000 + i as usize]
            );
        }
    }

    #[test]
    fn one_failed_file_in_a_parallel_batch_leaves_none_of_the_batch() {
        let dir = tempfile::tempdir().unwrap();
        let mut set = OutputSet::new(dir.path(), false).unwrap();
        set.stage("first.txt", |w| w.write_all(b"kept until the job gives up")).unwrap();
        set.fail_writes_after(100_000);
        let files: Vec<(String, StageFn)> = vec![
            ("small.bin".into(), Box::new(|w: &mut StagedWriter| w.write_all(&[1; 10]))),
            ("large.bin".into(), Box::new(|w: &mut StagedWriter| w.write_all(&[2; 300_000]))),
            ("other.bin".into(), Box::new(|w: &mut StagedWriter| w.write_all(&[3; 10]))),
        ];
        match set.stage_parallel(files) {
            Err(Error::Output { path, message }) => {
                assert_eq!(path, dir.path().join("large.bin"));
                assert!(message.contains("disk full"), "{message}");
            }
            other => panic!("expected the large file's write failure, got {other:?}"),
        }
        // Only the earlier staged file's temporary remains; the batch left nothing.
        let left = names(dir.path());
        assert_eq!(left.len(), 1, "{left:?}");
        assert!(left[0].starts_with(".first.txt."), "{left:?}");
        drop(set);
        assert!(names(dir.path()).is_empty());
    }

    #[test]
    fn a_name_twice_in_one_batch_is_refused() {
        let dir = tempfile::tempdir().unwrap();
        let mut set = OutputSet::new(dir.path(), false).unwrap();
        let files: Vec<(String, StageFn)> = vec![
            ("a.bin".into(), Box::new(|w: &mut StagedWriter| w.write_all(&[1]))),
            ("a.bin".into(), Box::new(|w: &mut StagedWriter| w.write_all(&[2]))),
        ];
        assert!(matches!(set.stage_parallel(files), Err(Error::Output { .. })));
        assert!(names(dir.path()).is_empty());
    }
}
