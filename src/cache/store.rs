//! The cache folder: entries named by their key, each verified on load,
//! written atomically, and the folder held under a size limit by removing
//! the least recently used entries.
//!
//! An entry file is a 96-byte header and its payload:
//!
//! | bytes | field |
//! |-------|-------|
//! | 0..8 | magic `PSMCACHE` |
//! | 8..12 | entry format version, u32 LE ([`FORMAT_VERSION`]) |
//! | 12..16 | kind, u32 LE ([`Kind`]) |
//! | 16..48 | key (SHA-256 of the canonical key bytes) |
//! | 48..56 | payload length, u64 LE |
//! | 56..88 | SHA-256 of the payload |
//! | 88..96 | zero |
//!
//! An entry is written to a temporary file in the same folder, synced, and
//! renamed over its name (rename is atomic within a file system, POSIX.1
//! `rename`), so a reader sees the whole of an old or a new entry, never a
//! part; several processes filling the folder at once at worst build the
//! same entry twice. A hit sets the file's modification time to now, which
//! orders entries for eviction.

use super::key::Key;
use sha2::{Digest, Sha256};
use std::io::Write;
use std::path::{Path, PathBuf};
use std::time::{Duration, SystemTime};

/// Version of the entry layout and of the payload encodings; a change
/// makes every older entry a miss (it is also part of every key). 2: a
/// picture's table under its reach is finished from the table base, so an
/// older one (every node solved) is not what a miss now computes.
pub const FORMAT_VERSION: u32 = 4;

const MAGIC: &[u8; 8] = b"PSMCACHE";
const HEADER: usize = 96;

/// The size limit when none is given: 256 MiB on disk.
pub const DEFAULT_LIMIT_BYTES: u64 = 256 << 20;

/// Environment variable naming the cache folder (else `$XDG_CACHE_HOME/platesmith`, else `~/.cache/platesmith`).
pub const DIR_VAR: &str = "PLATESMITH_CACHE_DIR";

/// Environment variable giving the size limit in MiB.
pub const LIMIT_VAR: &str = "PLATESMITH_CACHE_LIMIT_MIB";

/// Suffix of entry files; anything else in the folder is left alone.
const ENTRY_SUFFIX: &str = ".entry";

/// Prefix of entries being written.
const PARTIAL_PREFIX: &str = ".partial-";

/// A partial file older than this was left by a process that died while writing.
const STALE_PARTIAL: Duration = Duration::from_secs(3600);

/// What a look-up found.
#[derive(Debug, PartialEq, Eq)]
pub enum Lookup {
    /// A verified payload.
    Hit(Vec<u8>),
    /// No entry under this key.
    Miss,
    /// An entry that failed verification (why), or could not be read.
    Damaged(String),
}

/// One cache folder and its size limit.
#[derive(Debug, Clone)]
pub struct Store {
    dir: PathBuf,
    limit: u64,
}

/// The folder the environment names: [`DIR_VAR`], else the XDG base
/// directory specification's `$XDG_CACHE_HOME` (when absolute), else
/// `$HOME/.cache`, each with `platesmith` appended except the first.
pub fn default_dir() -> Option<PathBuf> {
    let var = |name: &str| std::env::var_os(name).filter(|v| !v.is_empty()).map(PathBuf::from);
    if let Some(dir) = var(DIR_VAR) {
        return Some(dir);
    }
    let base = var("XDG_CACHE_HOME")
        .filter(|p| p.is_absolute())
        .or_else(|| var("HOME").map(|h| h.join(".cache")))?;
    Some(base.join("platesmith"))
}

/// The size limit the environment gives ([`LIMIT_VAR`], MiB), else the default;
/// an unreadable value is reported.
pub fn default_limit() -> Result<u64, String> {
    match std::env::var(LIMIT_VAR) {
        Err(_) => Ok(DEFAULT_LIMIT_BYTES),
        Ok(v) => match v.trim().parse::<u64>() {
            Ok(mib) if mib.checked_mul(1 << 20).is_some() => Ok(mib << 20),
            _ => Err(format!("{LIMIT_VAR}={v} is not a size in MiB")),
        },
    }
}

impl Store {
    pub fn new(dir: PathBuf, limit: u64) -> Store {
        Store { dir, limit }
    }

    pub fn dir(&self) -> &Path {
        &self.dir
    }

    fn path_of(&self, key: &Key) -> PathBuf {
        self.dir.join(format!("{}-{}{ENTRY_SUFFIX}", key.kind().file_prefix(), key.hex()))
    }

    /// The verified payload stored under `key`.
    pub fn load(&self, key: &Key) -> Lookup {
        let path = self.path_of(key);
        let bytes = match std::fs::read(&path) {
            Ok(b) => b,
            // No entry, or no folder (a file in its place is found when saving).
            Err(e) if matches!(e.kind(), std::io::ErrorKind::NotFound | std::io::ErrorKind::NotADirectory) => return Lookup::Miss,
            Err(e) => return Lookup::Damaged(format!("unreadable: {}", crate::error::io_reason(&e))),
        };
        match verify(&bytes, key) {
            Ok(()) => {
                // Most recently used now; a failure only makes eviction less fair.
                if let Ok(f) = std::fs::File::options().write(true).open(&path) {
                    let _ = f.set_modified(SystemTime::now());
                }
                let mut payload = bytes;
                payload.drain(..HEADER);
                Lookup::Hit(payload)
            }
            Err(why) => Lookup::Damaged(why),
        }
    }

    /// Stores `payload` under `key` atomically, then evicts the least
    /// recently used entries over the limit.
    pub fn save(&self, key: &Key, payload: &[u8]) -> Result<(), String> {
        let fail = |what: &str, e: std::io::Error| format!("{what} {}: {}", self.dir.display(), crate::error::io_reason(&e));
        std::fs::create_dir_all(&self.dir).map_err(|e| fail("cannot create the cache folder", e))?;
        let mut file = tempfile::Builder::new()
            .prefix(PARTIAL_PREFIX)
            .tempfile_in(&self.dir)
            .map_err(|e| fail("cannot write into the cache folder", e))?;
        let header = header(key, payload);
        file.write_all(&header)
            .and_then(|_| file.write_all(payload))
            .and_then(|_| file.as_file().sync_all())
            .map_err(|e| fail("cannot write into the cache folder", e))?;
        file.persist(self.path_of(key))
            .map_err(|e| fail("cannot write into the cache folder", e.error))?;
        self.evict();
        Ok(())
    }

    /// Entries by last use, oldest first, with their size on disk.
    fn entries(&self) -> Vec<(SystemTime, u64, PathBuf)> {
        let Ok(read) = std::fs::read_dir(&self.dir) else {
            return Vec::new();
        };
        let now = SystemTime::now();
        let mut entries = Vec::new();
        for item in read.flatten() {
            let name = item.file_name();
            let name = name.to_string_lossy();
            let Ok(meta) = item.metadata() else { continue };
            let modified = meta.modified().unwrap_or(now);
            if name.starts_with(PARTIAL_PREFIX) {
                if now.duration_since(modified).is_ok_and(|age| age > STALE_PARTIAL) {
                    let _ = std::fs::remove_file(item.path());
                }
                continue;
            }
            if meta.is_file() && name.ends_with(ENTRY_SUFFIX) {
                entries.push((modified, disk_bytes(&meta), item.path()));
            }
        }
        entries.sort();
        entries
    }

    /// Bytes the entries take on disk.
    pub fn usage(&self) -> u64 {
        self.entries().iter().map(|e| e.1).sum()
    }

    /// Removes the least recently used entries until the rest fit the limit.
    /// Another process may remove the same file first: that is no error.
    pub fn evict(&self) {
        let entries = self.entries();
        let mut total: u64 = entries.iter().map(|e| e.1).sum();
        for (_, size, path) in entries {
            if total <= self.limit {
                break;
            }
            let _ = std::fs::remove_file(path);
            total -= size;
        }
    }
}

/// Size on disk: allocated blocks where the platform says, else the length.
fn disk_bytes(meta: &std::fs::Metadata) -> u64 {
    #[cfg(unix)]
    {
        use std::os::unix::fs::MetadataExt;
        meta.blocks() * 512
    }
    #[cfg(not(unix))]
    {
        meta.len()
    }
}

fn header(key: &Key, payload: &[u8]) -> [u8; HEADER] {
    let mut h = [0u8; HEADER];
    h[0..8].copy_from_slice(MAGIC);
    h[8..12].copy_from_slice(&FORMAT_VERSION.to_le_bytes());
    h[12..16].copy_from_slice(&(key.kind() as u32).to_le_bytes());
    h[16..48].copy_from_slice(key.digest());
    h[48..56].copy_from_slice(&(payload.len() as u64).to_le_bytes());
    h[56..88].copy_from_slice(&Sha256::digest(payload));
    h
}

/// Checks an entry's header against `key` and its payload against the header.
fn verify(bytes: &[u8], key: &Key) -> Result<(), String> {
    if bytes.len() < HEADER {
        return Err(format!("{} bytes, shorter than its header", bytes.len()));
    }
    let (h, payload) = bytes.split_at(HEADER);
    if &h[0..8] != MAGIC {
        return Err("not a cache entry".into());
    }
    let u32_at = |i: usize| u32::from_le_bytes([h[i], h[i + 1], h[i + 2], h[i + 3]]);
    if u32_at(8) != FORMAT_VERSION {
        return Err(format!("entry format {}, not {FORMAT_VERSION}", u32_at(8)));
    }
    if u32_at(12) != key.kind() as u32 || &h[16..48] != key.digest() {
        return Err("its header names another key".into());
    }
    let mut len = [0u8; 8];
    len.copy_from_slice(&h[48..56]);
    let len = u64::from_le_bytes(len);
    if len != payload.len() as u64 {
        return Err(format!("{} bytes of payload where the header says {len}", payload.len()));
    }
    if Sha256::digest(payload).as_slice() != &h[56..88] {
        return Err("its checksum does not match".into());
    }
    Ok(())
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::cache::key::{KeyBytes, Kind};

    fn key(n: u64) -> Key {
        let mut k = KeyBytes::new(Kind::Profile);
        k.number("n", n);
        k.finish()
    }

    #[test]
    fn a_saved_entry_loads_and_a_changed_byte_anywhere_is_found() {
        let dir = tempfile::tempdir().unwrap();
        let store = Store::new(dir.path().to_path_buf(), DEFAULT_LIMIT_BYTES);
        let payload: Vec<u8> = (0..1000u32).map(|i| (i * 7) as u8).collect();
        assert_eq!(store.load(&key(1)), Lookup::Miss);
        store.save(&key(1), &payload).unwrap();
        assert_eq!(store.load(&key(1)), Lookup::Hit(payload.clone()));
        assert_eq!(store.load(&key(2)), Lookup::Miss);
        let path = store.path_of(&key(1));
        let good = std::fs::read(&path).unwrap();
        for at in [0, 9, 13, 20, 50, 60, HEADER, HEADER + 500, good.len() - 1] {
            let mut bad = good.clone();
            bad[at] ^= 0x10;
            std::fs::write(&path, &bad).unwrap();
            assert!(matches!(store.load(&key(1)), Lookup::Damaged(_)), "byte {at}");
        }
        for len in [0, 10, HEADER, good.len() - 1] {
            std::fs::write(&path, &good[..len]).unwrap();
            assert!(matches!(store.load(&key(1)), Lookup::Damaged(_)), "length {len}");
        }
        // An entry copied under another key's name is not that key's.
        std::fs::write(store.path_of(&key(2)), &good).unwrap();
        assert!(matches!(store.load(&key(2)), Lookup::Damaged(_)));
    }

    #[test]
    fn the_limit_evicts_the_least_recently_used_entries() {
        let dir = tempfile::tempdir().unwrap();
        let payload = vec![7u8; 40_000];
        let probe = Store::new(dir.path().to_path_buf(), u64::MAX);
        probe.save(&key(0), &payload).unwrap();
        let one = probe.usage();
        std::fs::remove_file(probe.path_of(&key(0))).unwrap();
        // Room for three entries.
        let store = Store::new(dir.path().to_path_buf(), 3 * one + one / 2);
        let t0 = SystemTime::now() - Duration::from_secs(100);
        for n in 1..=3 {
            store.save(&key(n), &payload).unwrap();
            let f = std::fs::File::options().write(true).open(store.path_of(&key(n))).unwrap();
            f.set_modified(t0 + Duration::from_secs(n)).unwrap();
        }
        // Entry 1, the oldest, is used again: entry 2 becomes the least recently used.
        assert!(matches!(store.load(&key(1)), Lookup::Hit(_)));
        store.save(&key(4), &payload).unwrap();
        assert!(store.usage() <= 3 * one + one / 2);
        assert_eq!(store.load(&key(2)), Lookup::Miss);
        for n in [1, 3, 4] {
            assert!(matches!(store.load(&key(n)), Lookup::Hit(_)), "entry {n}");
        }
    }
}
