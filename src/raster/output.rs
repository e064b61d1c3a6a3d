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
            return Err(Error::Internal(format!(
                "output name {file_name:?} is not a plain file name"
            )));
        }
        let target = self.dir.join(file_name);
        if self.is_protected(&target) {
            return Err(Error::output(
                &target,
                "is one of the inputs; an input is never overwritten",
            ));
        }
        if self.staged.iter().any(|s| s.target == target) {
            return Err(Error::output(&target, "is produced twice by this job"));
        }
        if fs::symlink_metadata(&target).is_ok() && !self.overwrite {
            return Err(Error::output(
                &target,
                "already exists; allow overwriting (--force) to replace it",
            ));
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
        let prefix = format!(".{file_name}.");
        let mut builder = tempfile::Builder::new();
        builder.prefix(&prefix).suffix(".part");
        #[cfg(unix)]
        {
            use std::os::unix::fs::PermissionsExt;
            builder.permissions(fs::Permissions::from_mode(0o644));
        }
        let temp = builder
            .tempfile_in(&self.dir)
            .map_err(|e| Error::output(&target, describe(&e)))?;
        let (file, temp) = temp.into_parts();
        let mut writer = StagedWriter {
            inner: BufWriter::with_capacity(1 << 20, file),
            written: 0,
            fail_after: self.fail_after,
        };
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
