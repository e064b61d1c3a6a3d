//! The persistent cache of separation tables and embedded profiles.
//!
//! A separation table takes 33³ exact inversions of the press model (about
//! 0.5 s on two cores) and the profile embedded in every composite a
//! similar time; both depend only on the settings, the source and, for the
//! default perceptual intent, the picture's reach beyond the press gamut.
//! Entries live in the user's cache folder ([`store::default_dir`]), are
//! named by the SHA-256 of a canonical byte string of everything that
//! determines them ([`key`]), are verified on load, written atomically and
//! held under a size limit ([`store`]).
//!
//! **The picture-adaptive perceptual mapping.** By default the perceptual
//! intent compresses from the picture's own gamut. Its only dependence on
//! the picture is the reach grid of [`crate::separation::PerceptualMap`]
//! (per lightness band and hue sector, how far the picture's most colourful
//! colour lies beyond the press boundary), and a node's target moves only
//! where that reach passes the point at which compression starts. So the
//! folder holds no table per picture but one picture-independent base per
//! separator and source ([`crate::separation::TableBase`]: each node's
//! colour prepared for the map, and solved under the map of a picture with
//! no colours, with the solver's state), and each file runs its own step on
//! it: the picture's gamut, map and the table cells its pixels fall in, the
//! nodes of those cells mapped, the ones whose target moved solved exactly,
//! warm-started (see `separation::table_base` for the choice and
//! docs/PERFORMANCE.md for the times). The base is solved only as far as
//! the pictures seen so far needed it, line by line as the full build
//! solves it, and grows (written back whole) when a picture needs more.
//! Every picture of a source shares the base; a hit runs the same step on a
//! base whose nodes are the same bits as a miss's, so output with and
//! without the cache is byte-identical. The finished table of a picture is
//! also kept, in memory and in the folder (575 kB at 33³), under its reach
//! grid with cells that cannot change a mapped colour zeroed and its table
//! cells, so a picture seen before (or one that leaves the gamut in the
//! same places and falls in the same cells) skips its step; the step is
//! deterministic, so that entry too holds what a miss computes.
//!
//! Relative and absolute colorimetric and `--compress-from space` depend on
//! no picture: their whole table is the entry.
//!
//! **The press gamut's boundary.** Every separator describes its printable
//! gamut by sampling the press model on the faces of the ink box (about 0.9
//! million evaluations, some 60–100 ms of a run on two cores); a job takes
//! it from the folder too ([`TableCache::boundary`]), keyed as the
//! separator's tables are.
//!
//! **Measurement files as conditions.** `--condition press.ti3` fits the
//! press model on load (a second or two); the folder keeps the condition
//! file that fit gives ([`fitted_condition`]), keyed by the measurement
//! file's bytes and name and by what it is fitted with.
//!
//! A cache folder that cannot be created, read or written never fails a
//! job: the job notes it and builds without the cache. A damaged entry is
//! rebuilt and replaced, with a note.

pub mod key;
pub mod store;

use crate::error::Result;
use crate::press::PrintingCondition;
use crate::separation::{GamutBoundary, SeparationSettings, SeparationTable, Separator, TableBase};
use key::{Key, KeyBytes, Kind};
use std::sync::atomic::{AtomicBool, Ordering};
use std::sync::{Arc, Mutex, OnceLock};
pub use store::{DEFAULT_LIMIT_BYTES, DIR_VAR, LIMIT_VAR, Lookup, Store};

/// Where a table or profile came from, as the summary's timings name it.
#[derive(Debug, Clone, Copy, PartialEq, Eq, serde::Serialize)]
#[serde(rename_all = "lowercase")]
pub enum Origin {
    /// Built now (and saved, when the cache is on).
    Built,
    /// Loaded from the cache folder.
    Cached,
    /// Already in memory from an earlier file of this run.
    Reused,
}

/// What one look-up returned, with the notes for the file's summary.
pub struct Fetched<T> {
    pub value: T,
    pub origin: Origin,
    pub notes: Vec<String>,
}

/// The cache of one run: the folder (if on), the separator's key, and the
/// tables already in memory (also when the folder is off).
pub struct TableCache {
    store: Option<Store>,
    /// Set when the folder failed: the rest of the run goes without it.
    store_failed: AtomicBool,
    /// Why the folder is not used, noted with the first file.
    off_note: Mutex<Option<String>>,
    separator_key: OnceLock<Vec<u8>>,
    /// The tables of this run, most recently used last, at most [`TABLES_IN_MEMORY`].
    tables: Mutex<Vec<(Key, Arc<SeparationTable>)>>,
    /// The table bases of this run, most recently used last, at most [`BASES_IN_MEMORY`].
    bases: Mutex<Vec<(Key, Arc<TableBase>)>>,
}

/// Table bases a run keeps in memory (one per source: most runs see one or two sources).
const BASES_IN_MEMORY: usize = 2;

/// Tables a run keeps in memory: a hot folder that runs for weeks sees a
/// new picture table with most files, so the run's memo is bounded (the
/// cache folder keeps the rest).
const TABLES_IN_MEMORY: usize = 8;

impl TableCache {
    /// A cache in memory only (`--no-cache`).
    pub fn memory_only() -> TableCache {
        TableCache {
            store: None,
            store_failed: AtomicBool::new(false),
            off_note: Mutex::new(None),
            separator_key: OnceLock::new(),
            tables: Mutex::new(Vec::new()),
            bases: Mutex::new(Vec::new()),
        }
    }

    /// A cache in `store`'s folder.
    pub fn in_store(store: Store) -> TableCache {
        TableCache {
            store: Some(store),
            ..TableCache::memory_only()
        }
    }

    /// The cache the environment names ([`store::default_dir`],
    /// [`store::default_limit`]); without a usable folder or limit, in memory
    /// only with a note for the first file.
    pub fn from_environment() -> TableCache {
        match (store::default_dir(), store::default_limit()) {
            (Some(dir), Ok(limit)) => TableCache::in_store(Store::new(dir, limit)),
            (None, _) => TableCache::memory_only_noting(format!("no cache folder (set {DIR_VAR} or HOME); going on without the cache")),
            (_, Err(why)) => TableCache::memory_only_noting(format!("{why}; going on without the cache")),
        }
    }

    fn memory_only_noting(note: String) -> TableCache {
        let cache = TableCache::memory_only();
        if let Ok(mut n) = cache.off_note.lock() {
            *n = Some(note);
        }
        cache
    }

    /// The folder in use, if any.
    pub fn store(&self) -> Option<&Store> {
        self.store.as_ref().filter(|_| !self.store_failed.load(Ordering::Relaxed))
    }

    /// A key of `kind` for `separator`'s settings and condition.
    fn key_for(&self, kind: Kind, separator: &Separator) -> KeyBytes {
        key_for(
            kind,
            self.separator_key
                .get_or_init(|| separator_key_bytes(separator.condition(), separator.settings())),
        )
    }

    /// The key of the table of `separator` for the source keyed `source_key`
    /// under a mapping whose picture reach is the first of `picture`, for a
    /// picture whose pixels fall in the table cells the second gives as bits
    /// ([`crate::separation::PictureCells::to_bits`]); `None`: from the
    /// whole source space, every cell.
    pub fn table_key(&self, separator: &Separator, source_key: &[u8], picture: Option<(&[f64], &[u8])>) -> Key {
        table_key(self.key_for(Kind::Table, separator), source_key, picture)
    }

    /// The table under `key`: from memory, else the folder, else `build`
    /// (then saved in both).
    pub fn table(&self, separator: &Separator, key: Key, build: impl FnOnce() -> SeparationTable) -> Fetched<Arc<SeparationTable>> {
        let mut notes = self.take_off_note();
        if let Some(t) = self.remembered(&key) {
            return Fetched {
                value: t,
                origin: Origin::Reused,
                notes,
            };
        }
        let (table, origin) = match self.load(&key, "table", &mut notes) {
            Some(bytes) => match SeparationTable::from_bytes(separator, &bytes) {
                Some(t) => (t, Origin::Cached),
                None => {
                    notes.push(format!("cached table {} does not fit the settings; rebuilt", key.short()));
                    (
                        self.build_and_save(&key, build, SeparationTable::to_bytes, &mut notes),
                        Origin::Built,
                    )
                }
            },
            None => (
                self.build_and_save(&key, build, SeparationTable::to_bytes, &mut notes),
                Origin::Built,
            ),
        };
        let table = Arc::new(table);
        self.remember(key, &table);
        Fetched {
            value: table,
            origin,
            notes,
        }
    }

    /// The key of the table base of `separator` for the source keyed `source_key`.
    pub fn table_base_key(&self, separator: &Separator, source_key: &[u8]) -> Key {
        let mut k = self.key_for(Kind::TableBase, separator);
        k.bytes("source", source_key);
        k.text("mapping", "picture with no colours");
        k.finish()
    }

    /// Runs `work` on the table base under `key` (from memory, else the
    /// folder, else a new one from `fresh`; `None`, a separator that has no
    /// base, runs nothing) and keeps the base `work` leaves: in memory, and
    /// in the folder when `work` says it grew (an entry written whole, so
    /// processes filling it at once each leave a valid base). A damaged
    /// entry is started anew with a note. The origin is where the base came
    /// from.
    pub fn with_table_base<T>(
        &self,
        separator: &Separator,
        key: Key,
        fresh: impl FnOnce() -> Option<TableBase>,
        work: impl FnOnce(&mut TableBase) -> Option<(T, bool)>,
    ) -> Fetched<Option<T>> {
        let mut notes = self.take_off_note();
        let in_memory = self.bases.lock().ok().and_then(|mut bases| {
            let at = bases.iter().position(|(k, _)| *k == key)?;
            let entry = bases.remove(at);
            let base = entry.1.clone();
            bases.push(entry);
            Some(base)
        });
        let (base, origin) = match in_memory {
            Some(base) => (Some((*base).clone()), Origin::Reused),
            None => {
                let loaded = self.load(&key, "table base", &mut notes).and_then(|bytes| {
                    let base = TableBase::from_bytes(separator, &bytes);
                    if base.is_none() {
                        notes.push(format!("cached table base {} does not fit the settings; rebuilt", key.short()));
                    }
                    base
                });
                match loaded {
                    Some(base) => (Some(base), Origin::Cached),
                    None => (fresh(), Origin::Built),
                }
            }
        };
        let Some(mut base) = base else {
            return Fetched {
                value: None,
                origin,
                notes,
            };
        };
        let done = work(&mut base);
        let grew = done.as_ref().is_some_and(|(_, grew)| *grew);
        if grew {
            self.save(&key, &base.to_bytes(), &mut notes);
        }
        if (grew || origin != Origin::Reused)
            && let Ok(mut bases) = self.bases.lock()
        {
            bases.retain(|(k, _)| *k != key);
            if bases.len() >= BASES_IN_MEMORY {
                bases.remove(0);
            }
            bases.push((key, Arc::new(base)));
        }
        Fetched {
            value: done.map(|(value, _)| value),
            origin,
            notes,
        }
    }

    /// The boundary of the printable gamut of a separator of `condition`
    /// and `settings`: from the folder, else `build` (then saved). A damaged
    /// entry is rebuilt with a note, which goes with the first file.
    pub fn boundary(
        &self,
        condition: &PrintingCondition,
        settings: &SeparationSettings,
        build: impl FnOnce() -> GamutBoundary,
    ) -> GamutBoundary {
        let key = key_for(Kind::Boundary, &separator_key_bytes(condition, settings)).finish();
        let mut notes = Vec::new();
        let loaded = self.load(&key, "press gamut", &mut notes).and_then(|bytes| {
            let boundary = GamutBoundary::from_bytes(&bytes);
            if boundary.is_none() {
                notes.push(format!("cached press gamut {} does not fit; rebuilt", key.short()));
            }
            boundary
        });
        let boundary = loaded.unwrap_or_else(|| self.build_and_save(&key, build, GamutBoundary::to_bytes, &mut notes));
        if !notes.is_empty()
            && let Ok(mut n) = self.off_note.lock()
        {
            let earlier = n.take();
            *n = Some(earlier.into_iter().chain(notes).collect::<Vec<_>>().join("; "));
        }
        boundary
    }

    /// The embedded profile of `separator` written with `options`: from the
    /// folder, else `build` (then saved). Errors of `build` are returned.
    pub fn profile(
        &self,
        separator: &Separator,
        options: &crate::icc::ProfileOptions,
        build: impl FnOnce() -> Result<Vec<u8>>,
    ) -> Result<Fetched<Vec<u8>>> {
        let mut k = self.key_for(Kind::Profile, separator);
        k.text("profile options", &format!("{options:?}"));
        let key = k.finish();
        let mut notes = Vec::new();
        if let Some(bytes) = self.load(&key, "profile", &mut notes) {
            return Ok(Fetched {
                value: bytes,
                origin: Origin::Cached,
                notes,
            });
        }
        let profile = build()?;
        self.save(&key, &profile, &mut notes);
        Ok(Fetched {
            value: profile,
            origin: Origin::Built,
            notes,
        })
    }

    /// A table of this run, now the most recently used.
    fn remembered(&self, key: &Key) -> Option<Arc<SeparationTable>> {
        let mut tables = self.tables.lock().ok()?;
        let at = tables.iter().position(|(k, _)| k == key)?;
        let entry = tables.remove(at);
        let table = entry.1.clone();
        tables.push(entry);
        Some(table)
    }

    fn remember(&self, key: Key, table: &Arc<SeparationTable>) {
        if let Ok(mut tables) = self.tables.lock() {
            tables.retain(|(k, _)| *k != key);
            if tables.len() >= TABLES_IN_MEMORY {
                tables.remove(0);
            }
            tables.push((key, table.clone()));
        }
    }

    fn take_off_note(&self) -> Vec<String> {
        self.off_note.lock().ok().and_then(|mut n| n.take()).into_iter().collect()
    }

    fn build_and_save<T>(&self, key: &Key, build: impl FnOnce() -> T, encode: impl Fn(&T) -> Vec<u8>, notes: &mut Vec<String>) -> T {
        let value = build();
        if self.store().is_some() {
            self.save(key, &encode(&value), notes);
        }
        value
    }

    /// The verified payload under `key`, noting a damaged entry (`what`
    /// names it in the note).
    fn load(&self, key: &Key, what: &str, notes: &mut Vec<String>) -> Option<Vec<u8>> {
        match self.store()?.load(key) {
            Lookup::Hit(bytes) => Some(bytes),
            Lookup::Miss => None,
            Lookup::Damaged(why) => {
                notes.push(format!("cached {what} {} was damaged ({why}); rebuilt", key.short()));
                None
            }
        }
    }

    fn save(&self, key: &Key, payload: &[u8], notes: &mut Vec<String>) {
        let Some(store) = self.store() else { return };
        if let Err(why) = store.save(key, payload) {
            // Noted once; the rest of the run goes without the folder.
            if !self.store_failed.swap(true, Ordering::Relaxed) {
                notes.push(format!("{why}; going on without the cache"));
            }
        }
    }
}

/// A key of `kind` for a separator whose key bytes are `separator`.
fn key_for(kind: Kind, separator: &[u8]) -> KeyBytes {
    let mut k = KeyBytes::new(kind);
    k.bytes("separator", separator);
    k
}

fn table_key(mut k: KeyBytes, source_key: &[u8], picture: Option<(&[f64], &[u8])>) -> Key {
    k.bytes("source", source_key);
    match picture {
        Some((reach, cells)) => {
            k.reals("picture reach", reach);
            k.bytes("picture cells", cells);
        }
        None => k.text("mapping", "source space"),
    }
    k.finish()
}

/// Points per CMYK axis at which the press model is sampled for its key.
const MODEL_PROBES: usize = 6;

/// The key bytes of everything a separator's tables depend on: its settings
/// and its printing condition's contents (not its name). The model is keyed
/// by what it prints, CIEXYZ at 6⁴ coverages (grid points and midpoints of
/// its own lattice at most 5 apart), beside the parameters and the fitted
/// correction it was built from, so a condition file that changes any value
/// changes the key, whatever it is called.
fn separator_key_bytes(c: &PrintingCondition, s: &SeparationSettings) -> Vec<u8> {
    let mut k = KeyBytes::bare(Kind::Table);
    k.text("intent", s.intent.name());
    k.flag("bpc", s.bpc);
    k.reals("tac", &[s.tac]);
    let b = &s.black;
    k.reals("black", &[b.gcr, b.black_start, b.black_max, b.uca, b.shape]);
    k.flag("keep pure black", s.keep_pure_black);
    k.number("table grid", s.table_grid as u64);
    k.text("compress from", s.compress_from.name());
    k.text("model parameters", &format!("{:?}", c.params));
    k.text("model correction", &format!("{:?}", c.correction));
    let n = MODEL_PROBES;
    let at = |i: usize| i as f64 / (n - 1) as f64;
    let printed: Vec<f64> = (0..n.pow(4))
        .flat_map(|i| {
            let ink = crate::ink::Cmyk::new(at(i / (n * n * n)), at(i / (n * n) % n), at(i / n % n), at(i % n));
            let xyz = c.model.xyz(ink);
            [xyz.x, xyz.y, xyz.z]
        })
        .collect();
    k.reals("model prints", &printed);
    k.as_bytes().to_vec()
}

/// The condition file (TOML text) fitted to a measurement file, from the
/// cache folder when `use_folder` and it holds one, else `fit` (then
/// saved). `key_parts` is everything the fit depends on besides the program
/// (the file's bytes and name, the defaults and options). A damaged entry
/// is fitted anew; notes (a damaged entry, a folder that cannot be
/// written) are returned beside the text.
pub fn fitted_condition(
    use_folder: bool,
    key_parts: &[(&str, &[u8])],
    fit: impl FnOnce() -> Result<String>,
) -> Result<(String, Vec<String>)> {
    let cache = open(use_folder);
    let mut k = KeyBytes::new(Kind::FittedCondition);
    for (name, value) in key_parts {
        k.bytes(name, value);
    }
    let key = k.finish();
    let mut notes = Vec::new();
    if let Some(text) = cache
        .load(&key, "fitted condition", &mut notes)
        .and_then(|bytes| String::from_utf8(bytes).ok())
    {
        return Ok((text, notes));
    }
    let text = fit()?;
    cache.save(&key, text.as_bytes(), &mut notes);
    Ok((text, notes))
}

/// Whether a job uses the cache folder.
pub fn open(use_folder: bool) -> TableCache {
    if use_folder {
        TableCache::from_environment()
    } else {
        TableCache::memory_only()
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::separation::{CompressFrom, Intent};

    fn table_key_with(c: &PrintingCondition, s: &SeparationSettings, source: &[u8], picture: Option<(&[f64], &[u8])>) -> Key {
        table_key(key_for(Kind::Table, &separator_key_bytes(c, s)), source, picture)
    }

    /// Every setting, the condition's contents, the source and the picture's
    /// reach each change the key on their own; the condition's name does not.
    #[test]
    fn changing_any_one_input_changes_the_key() {
        let coated = crate::press::load_condition("coated-offset").unwrap();
        let base = SeparationSettings::for_condition(&coated);
        let reach = vec![0.0; 51 * 72];
        let cells = vec![0xff_u8; 32 * 32 * 4];
        let key = |c: &PrintingCondition, s: &SeparationSettings| table_key_with(c, s, b"named:srgb", Some((&reach, &cells)));
        let reference = key(&coated, &base);
        assert_eq!(reference, key(&coated, &base.clone()), "the same inputs give the same key");
        type Change = Box<dyn Fn(&mut SeparationSettings)>;
        let changes: Vec<(&str, Change)> = vec![
            ("intent", Box::new(|s| s.intent = Intent::Relative)),
            ("bpc", Box::new(|s| s.bpc = !s.bpc)),
            ("tac", Box::new(|s| s.tac -= 0.001)),
            ("gcr", Box::new(|s| s.black.gcr += 0.01)),
            ("black start", Box::new(|s| s.black.black_start += 0.01)),
            ("black max", Box::new(|s| s.black.black_max -= 0.01)),
            ("uca", Box::new(|s| s.black.uca += 0.01)),
            ("black shape", Box::new(|s| s.black.shape += 0.1)),
            ("keep pure black", Box::new(|s| s.keep_pure_black = !s.keep_pure_black)),
            ("table grid", Box::new(|s| s.table_grid = 17)),
            ("compress from", Box::new(|s| s.compress_from = CompressFrom::Space)),
        ];
        let mut seen = vec![reference];
        for (what, change) in &changes {
            let mut s = base.clone();
            change(&mut s);
            let k = key(&coated, &s);
            assert!(!seen.contains(&k), "{what} did not change the key");
            seen.push(k);
        }
        // Another condition under the same name, and the same condition under another name.
        let mut other = crate::press::load_condition("uncoated-offset").unwrap();
        other.name = coated.name.clone();
        assert!(!seen.contains(&key(&other, &base)), "the condition's model");
        let mut renamed = coated.clone();
        renamed.name = "house-coated".into();
        renamed.description = "renamed".into();
        assert_eq!(key(&renamed, &base), reference, "the name is not part of the key");
        // The same parameters but another model (a fitted correction, a profile's model) print differently.
        let mut params_only = other.clone();
        params_only.params = coated.params;
        params_only.correction = coated.correction.clone();
        assert!(!seen.contains(&key(&params_only, &base)), "the model's prints");
        // The source, the picture's reach and cells and the kind of mapping.
        let mut reach2 = reach.clone();
        reach2[100] = 1.2;
        let mut cells2 = cells.clone();
        cells2[7] = 0xfe;
        assert_ne!(
            table_key_with(&coated, &base, b"named:display-p3", Some((&reach, &cells))),
            reference
        );
        assert_ne!(table_key_with(&coated, &base, b"named:srgb", Some((&reach2, &cells))), reference);
        assert_ne!(table_key_with(&coated, &base, b"named:srgb", Some((&reach, &cells2))), reference);
        assert_ne!(table_key_with(&coated, &base, b"named:srgb", None), reference);
        // A profile of the same separator is another entry.
        let profile = key_for(Kind::Profile, &separator_key_bytes(&coated, &base)).finish();
        assert_ne!(profile, reference);
    }
}
