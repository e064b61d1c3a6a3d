//! One separation job: an image in, a composite CMYK TIFF, one plate per ink
//! and a JSON summary out, written as a set (all files or none).

use crate::cache::{Origin, TableCache};
use crate::colour::{EncodedRgb, RgbSpace};
use crate::error::{Error, Result};
use crate::ink::Ink;
use crate::raster::{
    BandSource, CmykImage, Compression, Layout, Limits, OpenFile, OutputSet, PngPlateWriter, Raster, RasterInfo, ReadOptions, Resolution,
    Samples, StagedWriter, TiffOptions, TiffStripWriter, open_bands,
};
use crate::report::{SettingsReport, round_to};
use crate::separation::limits::InkCaps;
use crate::separation::{
    BLACK_CURVE_STEPS, BlackOnlyCurve, CompressFrom, Intent, IntentLab, PictureCells, SeparationTable, Separator, TableBase,
};
use crate::settings::Coverage;
use crate::source::RgbSource;
use rayon::prelude::*;
use serde::Serialize;
use std::borrow::Cow;
use std::path::{Path, PathBuf};
use std::sync::{Arc, Mutex};
use std::time::{Duration, Instant};

/// What to do with the plates.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "lowercase")]
pub enum PlateFormat {
    /// One single-ink TIFF per plate (WhiteIsZero: the sample is the ink value).
    Tiff,
    /// One 8-bit PNG preview per plate, ink dark on white.
    Png,
    /// No plate files, the composite only.
    None,
}

/// How grayscale input is separated.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "kebab-case")]
pub enum GrayMode {
    /// As neutral RGB through the full separation.
    Neutral,
    /// On the black plate only, matching lightness.
    BlackOnly,
}

/// Output and input settings of a job.
#[derive(Debug, Clone)]
pub struct JobOptions {
    pub out_dir: PathBuf,
    pub bits: u8,
    pub plates: PlateFormat,
    pub compression: Compression,
    pub overwrite: bool,
    pub limits: Limits,
    /// Separate JPEG files whose data is cut short or corrupt (noted in the summary).
    pub accept_damaged: bool,
    /// The TIFF page to read, from 1 (`None`: the first full-resolution page).
    pub page: Option<u32>,
    pub gray: GrayMode,
    pub ignore_bad_profile: bool,
    pub source_space: RgbSpace,
    /// The condition CMYK input was separated for (default: the target's).
    pub source_condition: crate::press::PrintingCondition,
    /// CMYK input: pixels with only black stay black only.
    pub keep_pure_black_cmyk: bool,
}

impl JobOptions {
    /// How this job reads its inputs: float samples are encoded with the source space's curve.
    pub fn read_options(&self) -> ReadOptions {
        ReadOptions {
            limits: self.limits,
            accept_damaged: self.accept_damaged,
            page: self.page,
            float_space: self.source_space,
        }
    }
}

/// Points per L*, a*, b* axis of the BToA and gamut tables of the profile
/// embedded in composites. A reader shows the file through the AToB tables,
/// which keep their full size; the BToA side only serves converting other
/// colours into the condition, for which `platesmith profile` writes the full
/// 33³ tables and the floating-point BToD tables, which the embedded profile
/// leaves out. 17³ builds in a seventh of the time.
pub const EMBEDDED_B2A_GRID: u32 = 17;

/// Nodes per axis of the 4-D re-separation table.
pub const CMYK_TABLE_GRID: usize = 13;

/// Ink statistics of a separated image.
#[derive(Debug, Clone, Default)]
pub struct InkStats {
    pub pixels: u64,
    /// Total ink histogram in steps of 0.5 % (0..=400 %).
    pub tac_hist: Vec<u64>,
    /// Sum of total ink over the pixels (fractions).
    pub tac_sum: f64,
    /// Largest total ink (fraction).
    pub tac_max: f64,
    /// Pixels over the limit by more than 0.5 % (rounding).
    pub over: u64,
    /// Sum of each ink over the pixels (fractions), in C, M, Y, K order.
    pub plate_sum: [f64; 4],
    /// Pixels with at least 1 % of each ink.
    pub plate_inked: [u64; 4],
}

impl std::ops::AddAssign for InkStats {
    fn add_assign(&mut self, o: InkStats) {
        if self.tac_hist.is_empty() {
            self.tac_hist = vec![0; 801];
        }
        for (a, b) in self.tac_hist.iter_mut().zip(o.tac_hist) {
            *a += b;
        }
        self.pixels += o.pixels;
        self.tac_sum += o.tac_sum;
        self.tac_max = self.tac_max.max(o.tac_max);
        self.over += o.over;
        for i in 0..4 {
            self.plate_sum[i] += o.plate_sum[i];
            self.plate_inked[i] += o.plate_inked[i];
        }
    }
}

impl InkStats {
    /// Statistics of interleaved CMYK samples with `max` = 100 % and the
    /// ink limit `tac` (fraction).
    pub fn of_samples(samples: &Samples, tac: f64) -> InkStats {
        fn collect<T: Copy + Into<u32> + Sync>(v: &[T], max: f64, tac: f64) -> InkStats {
            // Sums in integer codes, converted to fractions once per chunk. The
            // histogram bin round(total·200) is computed exactly as
            // ⌊(400·total + max) / (2·max)⌋: with an odd `max` (255, 65535) a
            // total never falls on a half step, so the bins equal those of the
            // fractions.
            let m = max as u64;
            let inked_from = (0..=max as u32).find(|&c| c as f64 / max >= 0.01).unwrap_or(max as u32);
            let over_from = (tac + 0.5 / 100.0) * max;
            // The bin and the over-limit test of every total, looked up for
            // 8-bit samples (1 021 totals) instead of a division per pixel.
            let bin = |total: u32| ((400 * total as u64 + m) / (2 * m)).min(800) as u16;
            let bins: Vec<u16> = if m == 255 { (0..=4 * 255).map(bin).collect() } else { Vec::new() };
            let over_code = (0..=4 * max as u32).find(|&t| t as f64 > over_from).unwrap_or(u32::MAX);
            v.par_chunks(4 * 4096)
                .map(|chunk| {
                    let mut hist = vec![0u64; 801];
                    let (mut total_sum, mut total_max, mut over) = (0u64, 0u32, 0u64);
                    let (mut plate, mut inked) = ([0u64; 4], [0u64; 4]);
                    for px in chunk.chunks_exact(4) {
                        let codes: [u32; 4] = std::array::from_fn(|i| px[i].into());
                        let total = codes[0] + codes[1] + codes[2] + codes[3];
                        let b = match bins.get(total as usize) {
                            Some(&b) => b,
                            None => bin(total),
                        };
                        hist[b as usize] += 1;
                        total_sum += total as u64;
                        total_max = total_max.max(total);
                        over += u64::from(total >= over_code);
                        for i in 0..4 {
                            plate[i] += codes[i] as u64;
                            inked[i] += u64::from(codes[i] >= inked_from);
                        }
                    }
                    InkStats {
                        pixels: (chunk.len() / 4) as u64,
                        tac_hist: hist,
                        tac_sum: total_sum as f64 / max,
                        tac_max: total_max as f64 / max,
                        over,
                        plate_sum: plate.map(|p| p as f64 / max),
                        plate_inked: inked,
                    }
                })
                .reduce(InkStats::default, |mut a, b| {
                    a += b;
                    a
                })
        }
        match samples {
            Samples::U8(v) => collect(v, 255.0, tac),
            Samples::U16(v) => collect(v, 65535.0, tac),
        }
    }

    /// Total ink at quantile `q`, percent.
    pub fn tac_quantile(&self, q: f64) -> f64 {
        let target = (self.pixels as f64 * q).ceil() as u64;
        let mut seen = 0;
        for (i, n) in self.tac_hist.iter().enumerate() {
            seen += n;
            if seen >= target.max(1) {
                return i as f64 * 0.5;
            }
        }
        400.0
    }
}

#[derive(Debug, Serialize)]
pub struct PlateSummary {
    pub ink: &'static str,
    /// Mean tone value over the image, percent.
    pub mean_percent: f64,
    /// Share of the image with at least 1 % of this ink, percent.
    pub inked_area_percent: f64,
}

#[derive(Debug, Clone, Serialize)]
pub struct TacSummary {
    pub limit: f64,
    pub max: f64,
    pub p99: f64,
    pub mean: f64,
    /// Share of pixels over the limit (beyond 0.5 % rounding), as a fraction.
    pub over_fraction: f64,
}

#[derive(Debug, Serialize)]
pub struct Timings {
    pub read_ms: f64,
    pub table_ms: f64,
    pub separate_ms: f64,
    pub write_ms: f64,
    pub total_ms: f64,
    /// Where the separation table came from: built, cached (the cache
    /// folder) or reused (an earlier file of this run); absent when the
    /// file needed none (gray on the black plate only). With perceptual
    /// compression from the picture: cached or reused when the picture's
    /// finished table was found (a picture with the same reach seen
    /// before); otherwise where its picture-independent base came from
    /// (built, cached or reused), the picture's own step having run on it
    /// (its time is in `table_ms`).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub table_source: Option<Origin>,
    /// Where the embedded profile came from: built or cached.
    pub profile_source: Origin,
}

/// The summary written beside the plates.
#[derive(Debug, Serialize)]
pub struct JobSummary {
    pub file: String,
    pub outputs: Vec<String>,
    pub width: u32,
    pub height: u32,
    pub resolution_ppi: [f64; 2],
    pub input: String,
    pub source: String,
    pub notes: Vec<String>,
    pub settings: SettingsReport,
    pub bits: u8,
    pub plates: Vec<PlateSummary>,
    pub tac: TacSummary,
    pub timings: Timings,
    pub note: &'static str,
}

/// One file read and separated in memory, before anything is written.
pub struct SeparatedFile {
    /// The file as read (RGB, gray or CMYK samples, resolution, embedded profile).
    pub raster: Raster,
    /// The CMYK separation, at the job's output depth.
    pub image: CmykImage,
    /// The RGB source the separation started from; `None` for CMYK input and
    /// for gray input put on the black plate only.
    pub rgb_source: Option<RgbSource>,
    /// What the perceptual intent compressed from (`None` for the
    /// colorimetric intents and for gray on the black plate only).
    pub compressed_from: Option<CompressFrom>,
    /// How the summary names the source ("sRGB (assumed)", "embedded ICC profile", …).
    pub source_description: String,
    /// What was assumed or done on the way (flattened alpha, assumed space…).
    pub notes: Vec<String>,
    pub stats: InkStats,
    pub read_ms: f64,
    pub table_ms: f64,
    pub separate_ms: f64,
    /// Where the separation table came from (`None` when there was none).
    pub table_source: Option<Origin>,
}

/// Where [`Workshop::write_outputs_in`] writes, and how the summary names things.
#[derive(Debug, Clone, Copy)]
pub struct OutputPlace<'a> {
    /// The existing folder the files are written into.
    pub dir: &'a Path,
    /// The folder the summary lists the outputs under.
    pub listed_dir: &'a Path,
    /// The input as the summary names it.
    pub input_shown: &'a Path,
}

/// The shared state of a run: one separator, tables cached per source.
pub struct Workshop {
    pub separator: Separator,
    pub settings_report: SettingsReport,
    pub options: JobOptions,
    /// Separation tables and the embedded profile: in memory for the run, and in the cache folder unless it is off.
    cache: TableCache,
    cmyk_table: std::sync::OnceLock<Result<Arc<crate::separation::ReseparationTable>>>,
    /// The output ICC profile embedded in the composites, made once per run,
    /// where it came from, and the notes of the cache about it (for the first summary).
    profile: std::sync::OnceLock<std::result::Result<(Vec<u8>, Origin), String>>,
    profile_notes: Mutex<Vec<String>>,
    /// Rows per band, when not chosen from the picture's width ([`BAND_BYTES`]).
    band_rows: Option<u32>,
}

fn ms(t: Instant) -> f64 {
    round_to(t.elapsed().as_secs_f64() * 1000.0, 1)
}

impl Workshop {
    pub fn new(separator: Separator, settings_report: SettingsReport, options: JobOptions) -> Workshop {
        Workshop {
            separator,
            settings_report,
            options,
            cache: TableCache::memory_only(),
            cmyk_table: std::sync::OnceLock::new(),
            profile: std::sync::OnceLock::new(),
            profile_notes: Mutex::new(Vec::new()),
            band_rows: None,
        }
    }

    /// The workshop with tables and the embedded profile kept in `cache`
    /// (a new workshop keeps them in memory only).
    pub fn with_cache(self, cache: TableCache) -> Workshop {
        Workshop { cache, ..self }
    }

    /// The same workshop separating and writing bands of `rows` rows (at
    /// least one) instead of the height chosen from each picture's width. The
    /// output does not depend on it.
    pub fn with_band_rows(mut self, rows: u32) -> Workshop {
        self.band_rows = Some(rows.max(1));
        self
    }

    /// The ICC output profile of this run's condition and settings (v4, default
    /// tables), built on first use and embedded in every composite.
    pub fn output_profile(&self) -> Result<&[u8]> {
        self.output_profile_from().map(|(p, _)| p)
    }

    /// [`Workshop::output_profile`] and where it came from.
    fn output_profile_from(&self) -> Result<(&[u8], Origin)> {
        self.profile
            .get_or_init(|| {
                let options = crate::icc::ProfileOptions {
                    b2a_grid: EMBEDDED_B2A_GRID,
                    float_tables: false,
                    ..crate::icc::ProfileOptions::default()
                };
                let fetched = self
                    .cache
                    .profile(&self.separator, &options, || {
                        crate::icc::profile_for_separator(&self.separator, &options)
                    })
                    .map_err(|e| e.to_string())?;
                if let Ok(mut n) = self.profile_notes.lock() {
                    n.extend(fetched.notes);
                }
                Ok((fetched.value, fetched.origin))
            })
            .as_ref()
            .map(|(p, origin)| (p.as_slice(), *origin))
            .map_err(|e| Error::Internal(format!("the output profile could not be built: {e}")))
    }

    /// The settings echoed in the reports of one separated file: the run's,
    /// with what its perceptual compression started from.
    pub fn settings_of(&self, separated: &SeparatedFile) -> SettingsReport {
        self.settings_with(separated.compressed_from)
    }

    /// The run's settings with what a file's perceptual compression started from.
    fn settings_with(&self, compressed_from: Option<CompressFrom>) -> SettingsReport {
        SettingsReport {
            compress_from: compressed_from.map(CompressFrom::name),
            ..self.settings_report.clone()
        }
    }

    /// The table for a source (`source_key` names it), from the picture's
    /// own gamut when its distinct colours are given: from memory, the cache folder, or
    /// built. For a picture, its mapping is measured every time and keys
    /// its finished table; a table not found is finished from the
    /// picture-independent base ([`TableBase`], from memory, the folder or
    /// built), whose origin the summary then reports.
    fn table(&self, source_key: &[u8], source: &RgbSource, distinct: Option<&[[f64; 3]]>) -> crate::cache::Fetched<Arc<SeparationTable>> {
        let sep = &self.separator;
        match distinct {
            Some(colours) => {
                let picture = colours_gamut(source, colours);
                let mapping = sep.picture_mapping(&picture);
                let cells = PictureCells::of_colours(sep.settings().table_grid, colours);
                let cell_bits = cells.to_bits();
                let key = self
                    .cache
                    .table_key(sep, source_key, mapping.picture_reach().map(|r| (r, cell_bits.as_slice())));
                // A picture seen before (the same reach and cells) finds its
                // finished table in memory or the folder; a new one is
                // finished from the picture-independent base (from memory,
                // the folder or started now) by its own step, which solves
                // the base on where the picture needs it first: the same
                // step whichever way the base came.
                let mut base_fetch = None;
                let mut fetched = self.cache.table(sep, key, || {
                    let node_lab = LazyNodeLabs::new(sep, source);
                    let base = self.cache.with_table_base(
                        sep,
                        self.cache.table_base_key(sep, source_key),
                        || TableBase::empty(sep),
                        |base| {
                            base.finish(sep, &mapping, &|rgb| node_lab.at(rgb), &cells)
                                .map(|(table, _, grew)| (table, grew))
                        },
                    );
                    base_fetch = Some((base.origin, base.notes));
                    // `None`: not reached, a picture's mapping is perceptual.
                    base.value.unwrap_or_else(|| table_with(sep, source, &mapping))
                });
                if let Some((origin, notes)) = base_fetch {
                    // Built now: from a base that was started, cached or reused.
                    fetched.origin = origin;
                    fetched.notes.splice(0..0, notes);
                }
                fetched
            }
            None => {
                let key = self.cache.table_key(sep, source_key, None);
                self.cache.table(sep, key, || table_for_source(sep, source))
            }
        }
    }

    /// The RGB source of a file and how the summary names it: its embedded
    /// profile (named by its description tag), else what its PNG colour chunks
    /// say (sRGB, or gAMA and cHRM), else the assumed space. The first element
    /// keys the table cache.
    fn source_of(&self, raster: &RasterInfo, path: &Path, notes: &mut Vec<String>) -> Result<(Vec<u8>, RgbSource, String)> {
        let gray = matches!(raster.layout, Layout::Gray | Layout::GrayAlpha);
        let assumed = self.options.source_space.name();
        match &raster.icc_profile {
            Some(bytes) if !gray => match RgbSource::from_icc(bytes, path) {
                Ok(s) => {
                    notes.extend(raster.colour_chunks.as_ref().and_then(|c| c.outranked_note()));
                    let described = s.describe();
                    Ok((bytes.clone(), s, described))
                }
                Err(e) if self.options.ignore_bad_profile => {
                    notes.push(format!("{e}; ignored"));
                    self.chunk_or_assumed_source(raster, path, notes, format!("{assumed} assumed"))
                }
                Err(e) => Err(Error::input(
                    path,
                    format!("{}; give --ignore-bad-profile to assume {assumed} instead", strip_path(&e, path),),
                )),
            },
            Some(_) => {
                notes.push("gray profile not used".into());
                self.chunk_or_assumed_source(raster, path, notes, format!("{assumed} gray assumed"))
            }
            None => self.chunk_or_assumed_source(raster, path, notes, format!("no embedded profile; {assumed} assumed")),
        }
    }

    /// The space a file's PNG colour chunks give (noted, with what could not be
    /// used), else the assumed space with the note `assumed_note`.
    fn chunk_or_assumed_source(
        &self,
        raster: &RasterInfo,
        path: &Path,
        notes: &mut Vec<String>,
        assumed_note: String,
    ) -> Result<(Vec<u8>, RgbSource, String)> {
        let chunks = raster.colour_chunks.as_ref();
        notes.extend(chunks.iter().flat_map(|c| c.notes.iter().cloned()));
        if let Some(space) = chunks.and_then(|c| c.space.as_ref()) {
            let (key, source) = RgbSource::from_chunks(space, path)?;
            let built = if space.named().is_some() { "" } else { ", built with lcms2" };
            notes.push(format!("source space from the PNG colour chunks: {}{built}", space.describe()));
            return Ok((key, source, space.describe()));
        }
        notes.push(assumed_note);
        let assumed = self.options.source_space;
        Ok((
            format!("named:{}", assumed.name()).into_bytes(),
            RgbSource::Named(assumed),
            format!("{} (assumed)", assumed.name()),
        ))
    }

    /// Separates one file and writes its outputs, streamed: see [`Workshop::run_with_progress`].
    pub fn run(&self, path: &Path) -> Result<JobSummary> {
        self.run_with_progress(path, &|_, _| {})
    }

    /// Separates one file and writes its outputs into the job's `out_dir`, a
    /// band of rows at a time: read through [`open_bands`], separated, and
    /// pushed to the composite and plate writers, so memory is bounded by the
    /// band height, not the picture. `progress` hears (bands done, bands in
    /// all) after each band of each pass (two passes when the perceptual
    /// intent compresses from the picture's own colours).
    ///
    /// The output folder is made here, when there is something to write, so a
    /// run whose inputs all fail leaves no empty folder behind.
    pub fn run_with_progress(&self, path: &Path, progress: &(dyn Fn(u64, u64) + Sync)) -> Result<JobSummary> {
        let started = Instant::now();
        let (bands, open_ms) = self.open(path)?;
        let dir = &self.options.out_dir;
        std::fs::create_dir_all(dir)
            .map_err(|e| Error::output(dir, format!("cannot create the output folder: {}", crate::error::io_reason(&e))))?;
        let place = OutputPlace {
            dir,
            listed_dir: dir,
            input_shown: path,
        };
        self.stream_bands(path, bands, &place, started, open_ms, progress)
    }

    /// [`Workshop::run_with_progress`] into `place` (see [`Workshop::write_outputs_in`]).
    pub fn stream_into(
        &self,
        path: &Path,
        place: &OutputPlace,
        started: Instant,
        progress: &(dyn Fn(u64, u64) + Sync),
    ) -> Result<JobSummary> {
        let (bands, open_ms) = self.open(path)?;
        self.stream_bands(path, bands, place, started, open_ms, progress)
    }

    /// Opens `path` as bands, and the time it took. The output profile (built
    /// once per run) is made meanwhile: decoding is single-threaded.
    fn open(&self, path: &Path) -> Result<(Box<dyn BandSource>, f64)> {
        let t = Instant::now();
        let (bands, profile) = rayon::join(
            || open_bands(path, &self.options.read_options()),
            || self.output_profile().map(|_| ()),
        );
        let bands = bands?;
        profile?;
        Ok((bands, ms(t)))
    }

    /// [`Workshop::stream_into`] from a band source already open on `path`
    /// (`open_ms`: the time opening took).
    pub fn stream_bands(
        &self,
        path: &Path,
        bands: Box<dyn BandSource + '_>,
        place: &OutputPlace,
        started: Instant,
        open_ms: f64,
        progress: &(dyn Fn(u64, u64) + Sync),
    ) -> Result<JobSummary> {
        let info = bands.info();
        let per_pass = u64::from(info.height.div_ceil(self.band_rows_for(info)));
        let passes = if self.gathers_picture_colours(info) { 2 } else { 1 };
        let done = std::sync::atomic::AtomicU64::new(0);
        let tick = || progress(done.fetch_add(1, std::sync::atomic::Ordering::Relaxed) + 1, per_pass * passes);
        let mut job = self.begin_stream(path, bands, *place, started, open_ms, &tick)?;
        while job.next_band(job.band_rows())?.is_some() {
            tick();
        }
        job.finish()
    }

    /// Opens `path` and begins its streamed job into `place` (see
    /// [`StreamedJob`]): the caller takes the bands, each separated and
    /// written as it is taken, then finishes the job.
    pub fn stream_job<'a>(&'a self, path: &'a Path, place: OutputPlace<'a>, started: Instant) -> Result<StreamedJob<'a>> {
        let (bands, open_ms) = self.open(path)?;
        self.begin_stream(path, bands, place, started, open_ms, &|| {})
    }

    /// Begins the streamed job of the band source `bands` open on `path`:
    /// the output files are opened (names checked before any work) and the
    /// separation prepared (a first pass over the bands, a `tick` per band,
    /// when the table comes from the picture's own colours).
    fn begin_stream<'a>(
        &'a self,
        path: &'a Path,
        mut bands: Box<dyn BandSource + 'a>,
        place: OutputPlace<'a>,
        started: Instant,
        open_ms: f64,
        tick: &dyn Fn(),
    ) -> Result<StreamedJob<'a>> {
        let info = bands.info().clone();
        let band_rows = self.band_rows_for(&info);
        // Names are checked and files opened before the work, so a refused name costs nothing.
        let mut out = OutputSet::new(place.dir, self.options.overwrite)?;
        out.protect([path]);
        let stem = output_stem(path).to_string();
        let files = self.open_outputs(&out, &stem, &info)?;
        let prepared = self.prepare(path, &mut *bands, band_rows, tick)?;
        Ok(StreamedJob {
            workshop: self,
            bands,
            info,
            prepared,
            out,
            files,
            place,
            started,
            open_ms,
            read: Duration::ZERO,
            separate: Duration::ZERO,
            write: Duration::ZERO,
            stats: InkStats::default(),
            rows: 0,
            band_rows,
        })
    }

    /// Reads and separates one file in memory; nothing is written.
    ///
    /// The same band code as [`Workshop::run`]: callers that check a
    /// separation (inspect, proof) see exactly the CMYK that `separate` writes.
    pub fn separate_file(&self, path: &Path) -> Result<SeparatedFile> {
        let t = Instant::now();
        let raster = crate::raster::read_raster_with(path, &self.options.read_options())?;
        let read_ms = ms(t);
        self.separate_raster(path, raster, read_ms)
    }

    /// Separates a raster already read from `path` (as [`Workshop::separate_file`]
    /// does after reading); `read_ms` is the time the read took.
    pub fn separate_raster(&self, path: &Path, raster: Raster, read_ms: f64) -> Result<SeparatedFile> {
        let mut bands = crate::raster::RasterRows::borrowed(&raster);
        let info = bands.info().clone();
        let band_rows = self.band_rows_for(&info);
        let prepared = self.prepare(path, &mut bands, band_rows, &|| {})?;
        let mut cmyk: Option<Samples> = None;
        let (stats, _, separate) = self.separate_bands(&mut bands, &info, &prepared, band_rows, &|| {}, &mut |band| {
            match (&mut cmyk, band) {
                (Some(Samples::U8(all)), Samples::U8(v)) => all.extend_from_slice(&v),
                (Some(Samples::U16(all)), Samples::U16(v)) => all.extend_from_slice(&v),
                (all @ None, band) => *all = Some(band),
                _ => return Err(Error::Internal("bands of one separation at two depths".into())),
            }
            Ok(())
        })?;
        let samples = cmyk.ok_or_else(|| Error::Internal("a picture without rows".into()))?;
        let image = CmykImage::new(raster.width, raster.height, samples)?;
        let Prepared {
            rgb_source,
            compressed_from,
            source_description,
            notes,
            table_ms,
            table_source,
            ..
        } = prepared;
        Ok(SeparatedFile {
            raster,
            image,
            rgb_source,
            compressed_from,
            source_description,
            notes,
            stats,
            read_ms,
            table_ms,
            separate_ms: round_to(separate.as_secs_f64() * 1000.0, 1),
            table_source,
        })
    }

    /// Rows per band: about [`BAND_BYTES`] of input or output samples,
    /// whichever is wider, at least one row; or the height set by
    /// [`Workshop::with_band_rows`].
    fn band_rows_for(&self, info: &RasterInfo) -> u32 {
        let out_row = info.width as usize * 4 * usize::from(self.options.bits / 8);
        let in_row = info.row_len() * usize::from(info.bits / 8);
        let auto = (BAND_BYTES / out_row.max(in_row).max(1)) as u32;
        self.band_rows.unwrap_or(auto).clamp(1, info.height.max(1))
    }

    /// Whether this file's table needs a first pass over its colours (the
    /// perceptual intent compressing from the picture, for RGB and gray as neutrals).
    fn gathers_picture_colours(&self, info: &RasterInfo) -> bool {
        let settings = self.separator.settings();
        let gray = matches!(info.layout, Layout::Gray | Layout::GrayAlpha);
        let black_only = gray && (self.options.gray == GrayMode::BlackOnly || info.line_art);
        info.layout != Layout::Cmyk
            && !black_only
            && settings.intent == Intent::Perceptual
            && settings.compress_from == CompressFrom::Picture
    }

    /// The table of re-separation from the source condition, built once per run.
    fn reseparation_table(&self) -> Result<Arc<crate::separation::ReseparationTable>> {
        Ok(self
            .cmyk_table
            .get_or_init(|| {
                crate::separation::ReseparationTable::build(
                    &self.separator,
                    &self.options.source_condition,
                    self.options.keep_pure_black_cmyk,
                    CMYK_TABLE_GRID,
                )
                .map(Arc::new)
            })
            .as_ref()
            .map_err(|e| Error::usage(e.to_string()))?
            .clone())
    }

    /// Everything a file's separation needs before its first band: the
    /// source, the notes, and the rule its bands go through. The perceptual
    /// table from the picture's own colours reads `bands` once here (a
    /// `tick` per band) and rewinds it.
    fn prepare(&self, path: &Path, bands: &mut dyn BandSource, band_rows: u32, tick: &dyn Fn()) -> Result<Prepared> {
        let info = bands.info().clone();
        let mut notes = info.notes.clone();
        let t = Instant::now();
        let intent = self.separator.settings().intent;
        if info.layout == Layout::Cmyk {
            let table = self.reseparation_table()?;
            notes.push(format!(
                "CMYK re-separated from {} to {}{}",
                self.options.source_condition.name,
                self.separator.condition().name,
                if self.options.keep_pure_black_cmyk {
                    "; pure black kept black only"
                } else {
                    ""
                }
            ));
            if info.icc_profile.is_some() {
                notes.push("embedded CMYK profile not used; the source condition describes the input".into());
            }
            return Ok(Prepared {
                rule: BandRule::Reseparation(table),
                rgb_source: None,
                // Re-separation compresses from the source condition's whole gamut.
                compressed_from: (intent == Intent::Perceptual).then_some(CompressFrom::Space),
                source_description: format!("CMYK for {}", self.options.source_condition.name),
                notes,
                table_ms: ms(t),
                table_source: Some(Origin::Built),
            });
        }
        let gray = matches!(info.layout, Layout::Gray | Layout::GrayAlpha);
        if info.layout.has_alpha() {
            notes.push("alpha flattened onto paper white".into());
        }
        if gray && (self.options.gray == GrayMode::BlackOnly || info.line_art) {
            let (_, source, described) = self.source_of(&info, path, &mut notes)?;
            if !info.line_art {
                notes.push("gray input on the black plate only".into());
            }
            return Ok(Prepared {
                rule: BandRule::BlackOnly(GrayToBlack::new(&self.separator, &source, self.options.bits)),
                rgb_source: None,
                compressed_from: None,
                source_description: described,
                notes,
                table_ms: 0.0,
                table_source: None,
            });
        }
        if gray {
            notes.push("gray separated as neutrals".into());
        }
        let (key, source, described) = self.source_of(&info, path, &mut notes)?;
        let (distinct, compressed_from) = if self.gathers_picture_colours(&info) {
            let mut colours = crate::separation::DistinctColours::new();
            while let Some(band) = bands.next_band(band_rows)? {
                match &*band_rgb(info.layout, &band.samples) {
                    Samples::U8(v) => colours.add(v),
                    Samples::U16(v) => colours.add(v),
                }
                tick();
            }
            bands.rewind()?;
            (Some(colours.colours()), Some(CompressFrom::Picture))
        } else {
            (None, (intent == Intent::Perceptual).then_some(CompressFrom::Space))
        };
        let fetched = self.table(&key, &source, distinct.as_deref());
        notes.extend(fetched.notes);
        Ok(Prepared {
            rule: BandRule::Table(fetched.value),
            rgb_source: Some(source),
            compressed_from,
            source_description: described,
            notes,
            table_ms: ms(t),
            table_source: Some(fetched.origin),
        })
    }

    /// A file's separation prepared for its bands, as [`Workshop::run`]
    /// prepares it: for the perceptual intent from the picture's own colours,
    /// `bands` is read once and rewound.
    /// `tick` is called after each band of that pass.
    pub(crate) fn prepare_bands(&self, path: &Path, bands: &mut dyn BandSource, tick: &dyn Fn()) -> Result<Prepared> {
        let band_rows = self.band_rows_for(bands.info());
        self.prepare(path, bands, band_rows, tick)
    }

    /// Bands of the first pass [`Workshop::prepare_bands`] makes over a
    /// picture (none unless its table comes from its own colours).
    pub(crate) fn colour_pass_bands(&self, info: &RasterInfo) -> u64 {
        if self.gathers_picture_colours(info) {
            u64::from(info.height.div_ceil(self.band_rows_for(info)))
        } else {
            0
        }
    }

    /// The CMYK of one band's `samples` (laid out as `info` says) under `prepared`.
    pub(crate) fn separate_band(&self, prepared: &Prepared, info: &RasterInfo, samples: &Samples) -> Samples {
        let width = info.width as usize;
        match &prepared.rule {
            BandRule::Table(table) => self.apply(table, &band_rgb(info.layout, samples), width),
            BandRule::Reseparation(table) => self.reseparate(table, samples, width),
            BandRule::BlackOnly(curve) => curve.apply(info, samples),
        }
    }

    /// Separates every band of `bands` (from its current row) under
    /// `prepared`, handing each band's CMYK to `sink` in order; returns the
    /// ink statistics and the time spent reading and separating.
    fn separate_bands(
        &self,
        bands: &mut dyn BandSource,
        info: &RasterInfo,
        prepared: &Prepared,
        band_rows: u32,
        tick: &dyn Fn(),
        sink: &mut dyn FnMut(Samples) -> Result<()>,
    ) -> Result<(InkStats, Duration, Duration)> {
        let (mut read, mut separate) = (Duration::ZERO, Duration::ZERO);
        let mut stats = InkStats::default();
        let tac = self.separator.settings().tac;
        let mut rows = 0u32;
        loop {
            let t = Instant::now();
            let Some(band) = bands.next_band(band_rows)? else { break };
            read += t.elapsed();
            if band.y != rows {
                return Err(Error::Internal(format!("band at row {} after {rows} rows", band.y)));
            }
            rows += band.rows;
            let t = Instant::now();
            let cmyk = self.separate_band(prepared, info, &band.samples);
            stats += InkStats::of_samples(&cmyk, tac);
            separate += t.elapsed();
            sink(cmyk)?;
            tick();
        }
        if rows != info.height {
            return Err(Error::Internal(format!("{rows} of {} rows were read", info.height)));
        }
        Ok((stats, read, separate))
    }

    /// Opens the composite and plate files of `stem` in `out` for `info`'s picture.
    fn open_outputs<'w>(&'w self, out: &OutputSet, stem: &str, info: &RasterInfo) -> Result<OutputFiles<'w>> {
        let tiff = TiffOptions {
            compression: self.options.compression,
            resolution: info.resolution,
            icc_profile: Some(self.output_profile()?),
        };
        let (w, h, bits) = (info.width, info.height, self.options.bits);
        let begun = |file: &OpenFile, r: std::io::Result<FileWriter<'w>>| r.map_err(|e| file.error(&e));
        let (writer, file) = out.open(&format!("{stem}.cmyk.tif"))?;
        let composite = begun(&file, TiffStripWriter::begin(writer, w, h, bits, None, &tiff).map(FileWriter::Tiff))?;
        let mut files = vec![(file, composite)];
        for ink in Ink::ALL {
            let (name, begin): (String, &dyn Fn(StagedWriter) -> std::io::Result<FileWriter<'w>>) = match self.options.plates {
                PlateFormat::Tiff => (format!("{stem}.{}.tif", ink.letter()), &|writer| {
                    TiffStripWriter::begin(writer, w, h, bits, Some(ink), &tiff).map(FileWriter::Tiff)
                }),
                PlateFormat::Png => (format!("{stem}.{}.png", ink.letter()), &|writer| {
                    PngPlateWriter::begin(writer, w, h, ink, info.resolution).map(FileWriter::Png)
                }),
                PlateFormat::None => continue,
            };
            let (writer, file) = out.open(&name)?;
            let plate = begun(&file, begin(writer))?;
            files.push((file, plate));
        }
        Ok(OutputFiles { files })
    }

    /// Writes the composite, the plates and the summary of a separated file as
    /// one set; `started` is when the job began (for the total time).
    ///
    /// The output folder is made here, when there is something to write, so a
    /// run whose inputs all fail leaves no empty folder behind.
    pub fn write_outputs(&self, path: &Path, separated: &SeparatedFile, started: Instant) -> Result<JobSummary> {
        let dir = &self.options.out_dir;
        std::fs::create_dir_all(dir)
            .map_err(|e| Error::output(dir, format!("cannot create the output folder: {}", crate::error::io_reason(&e))))?;
        self.write_outputs_in(
            path,
            separated,
            started,
            &OutputPlace {
                dir: &self.options.out_dir,
                listed_dir: &self.options.out_dir,
                input_shown: path,
            },
        )
    }

    /// [`Workshop::write_outputs`] into another folder than the job's `out_dir`,
    /// with the summary naming the outputs under `place.listed_dir` and the
    /// input as `place.input_shown` (the hot folder writes into a staging
    /// folder that is renamed when complete). The image goes through the same
    /// band writers as [`Workshop::run`].
    pub fn write_outputs_in(&self, path: &Path, separated: &SeparatedFile, started: Instant, place: &OutputPlace) -> Result<JobSummary> {
        let SeparatedFile { raster, image, stats, .. } = separated;
        let t = Instant::now();
        let mut out = OutputSet::new(place.dir, self.options.overwrite)?;
        out.protect([path]);
        let info = raster.info();
        let mut files = self.open_outputs(&out, output_stem(path), &info)?;
        let row = image.width as usize * 4;
        let band = self.band_rows_for(&info) as usize * row;
        match &image.samples {
            Samples::U8(v) => v.chunks(band).try_for_each(|b| files.push(&Samples::U8(b.to_vec())))?,
            Samples::U16(v) => v.chunks(band).try_for_each(|b| files.push(&Samples::U16(b.to_vec())))?,
        }
        files.finish(&mut out)?;
        let described = Described {
            source_description: &separated.source_description,
            notes: &separated.notes,
            compressed_from: separated.compressed_from,
        };
        let timings = Timings {
            read_ms: separated.read_ms,
            table_ms: separated.table_ms,
            separate_ms: separated.separate_ms,
            write_ms: 0.0,
            total_ms: 0.0,
            table_source: separated.table_source,
            profile_source: Origin::Built,
        };
        self.finish_set(out, place, &info, &described, stats, timings, t.elapsed(), started)
    }

    /// Stages the summary beside the written files and commits the set;
    /// `writing` is the time the files took.
    #[allow(clippy::too_many_arguments)]
    fn finish_set(
        &self,
        mut out: OutputSet,
        place: &OutputPlace,
        info: &RasterInfo,
        described: &Described,
        stats: &InkStats,
        timings: Timings,
        writing: Duration,
        started: Instant,
    ) -> Result<JobSummary> {
        let t = Instant::now();
        let stem = output_stem(place.input_shown).to_string();
        let res = info.resolution.unwrap_or(Resolution::DEFAULT);
        let mut timings = timings;
        timings.profile_source = self.output_profile_from()?.1;
        // The cache's notes about the embedded profile go into the run's first summary.
        let mut notes = described.notes.to_vec();
        notes.extend(self.profile_notes.lock().map(|mut n| std::mem::take(&mut *n)).unwrap_or_default());
        let listed = |name: &std::ffi::OsStr| place.listed_dir.join(name).display().to_string();
        let mut outputs: Vec<String> = out.staged().iter().filter_map(|p| p.file_name().map(listed)).collect();
        let summary_name = crate::report::export::SUMMARY_JSON.file_name(&stem);
        outputs.push(listed(summary_name.as_ref()));
        let px = stats.pixels.max(1) as f64;
        let mut summary = JobSummary {
            file: place.input_shown.display().to_string(),
            outputs,
            width: info.width,
            height: info.height,
            resolution_ppi: [round_to(res.x_ppi, 2), round_to(res.y_ppi, 2)],
            input: format!("{} {:?} {}-bit", info.format.name(), info.layout, info.bits),
            source: described.source_description.to_string(),
            notes,
            settings: self.settings_with(described.compressed_from),
            bits: self.options.bits,
            plates: Ink::ALL
                .iter()
                .map(|&ink| PlateSummary {
                    ink: ink.name(),
                    mean_percent: round_to(stats.plate_sum[ink.index()] / px * 100.0, 2),
                    inked_area_percent: round_to(stats.plate_inked[ink.index()] as f64 / px * 100.0, 2),
                })
                .collect(),
            tac: TacSummary {
                limit: round_to(Coverage(self.separator.settings().tac).percent().0, 1),
                max: round_to(stats.tac_max * 100.0, 1),
                p99: stats.tac_quantile(0.99),
                mean: round_to(stats.tac_sum / px * 100.0, 1),
                over_fraction: stats.over as f64 / px,
            },
            timings,
            note: crate::report::PREDICTION_NOTE,
        };
        summary.timings.write_ms = round_to((writing + t.elapsed()).as_secs_f64() * 1000.0, 1);
        summary.timings.total_ms = ms(started);
        crate::report::export::stage(&mut out, &stem, &summary, &crate::report::export::SUMMARY_JSON)?;
        out.commit()?;
        Ok(summary)
    }

    fn apply(&self, table: &SeparationTable, rgb: &Samples, width: usize) -> Samples {
        let pixels = rgb.len() / 3;
        match (rgb, self.options.bits) {
            (Samples::U8(v), 8) => {
                let mut out = vec![0u8; pixels * 4];
                table.apply_rgb8(v, &mut out, width);
                Samples::U8(out)
            }
            (Samples::U8(v), _) => {
                let wide: Vec<u16> = v.iter().map(|&x| x as u16 * 257).collect();
                let mut out = vec![0u16; pixels * 4];
                table.apply_rgb16(&wide, &mut out, width);
                Samples::U16(out)
            }
            (Samples::U16(v), 16) => {
                let mut out = vec![0u16; pixels * 4];
                table.apply_rgb16(v, &mut out, width);
                Samples::U16(out)
            }
            (Samples::U16(v), _) => {
                let mut out16 = vec![0u16; pixels * 4];
                table.apply_rgb16(v, &mut out16, width);
                Samples::U8(table.narrow_to_8bit(&out16))
            }
        }
    }

    /// CMYK input re-separated at the job's depth.
    fn reseparate(&self, table: &crate::separation::ReseparationTable, cmyk: &Samples, width: usize) -> Samples {
        let pixels = cmyk.len() / 4;
        match (cmyk, self.options.bits) {
            (Samples::U8(v), 8) => {
                let mut out = vec![0u8; pixels * 4];
                table.apply_cmyk8(v, &mut out, width);
                Samples::U8(out)
            }
            (Samples::U8(v), _) => {
                let wide: Vec<u16> = v.iter().map(|&x| x as u16 * 257).collect();
                let mut out = vec![0u16; pixels * 4];
                table.apply_cmyk16(&wide, &mut out, width);
                Samples::U16(out)
            }
            (Samples::U16(v), bits) => {
                let mut out = vec![0u16; pixels * 4];
                table.apply_cmyk16(v, &mut out, width);
                if bits == 16 {
                    Samples::U16(out)
                } else {
                    Samples::U8(table.narrow_to_8bit(&out))
                }
            }
        }
    }
}

/// Bytes of samples per band aimed at: large enough that every band keeps
/// both cores busy (dozens of strips to compress), small enough that a
/// job's memory stays far below the picture's.
pub const BAND_BYTES: usize = 8 << 20;

/// How the rows of one file become CMYK, prepared once per file and applied band by band.
enum BandRule {
    /// RGB (and gray as neutrals) through a separation table.
    Table(Arc<SeparationTable>),
    /// CMYK re-separated from the source condition.
    Reseparation(Arc<crate::separation::ReseparationTable>),
    /// Gray on the black plate only.
    BlackOnly(GrayToBlack),
}

/// A file's separation, prepared before its first band.
pub(crate) struct Prepared {
    rule: BandRule,
    pub(crate) rgb_source: Option<RgbSource>,
    pub(crate) compressed_from: Option<CompressFrom>,
    pub(crate) source_description: String,
    pub(crate) notes: Vec<String>,
    pub(crate) table_ms: f64,
    /// Where the separation table came from (`None` when there was none).
    pub(crate) table_source: Option<Origin>,
}

impl Prepared {
    fn described(&self) -> Described<'_> {
        Described {
            source_description: &self.source_description,
            notes: &self.notes,
            compressed_from: self.compressed_from,
        }
    }
}

/// What the summary says of a file's source.
struct Described<'a> {
    source_description: &'a str,
    notes: &'a [String],
    compressed_from: Option<CompressFrom>,
}

/// Gray on black only: black whose printed lightness matches the gray's (its
/// lightness as a neutral of the source).
struct GrayToBlack {
    curve: BlackOnlyCurve,
    k_max: f64,
    pure: bool,
    caps: InkCaps,
    bits: u8,
}

impl GrayToBlack {
    fn new(sep: &Separator, source: &RgbSource, bits: u8) -> GrayToBlack {
        let top = BLACK_CURVE_STEPS - 1;
        let grays: Vec<[f64; 3]> = (0..=top).map(|i| [i as f64 / top as f64; 3]).collect();
        // The curve runs from paper (white) toward black.
        let lightness: Vec<Option<f64>> = source.labs_of(&grays).iter().rev().map(|lab| Some(lab.l)).collect();
        GrayToBlack {
            curve: BlackOnlyCurve::new(sep, &lightness),
            k_max: sep.settings().black.black_max,
            pure: sep.settings().keep_pure_black,
            // Rounded to the nearest code, but never over the maximum black.
            caps: InkCaps::of(sep.settings()),
            bits,
        }
    }

    /// One band of gray (alpha flattened onto white) as CMYK with black only.
    fn apply(&self, info: &RasterInfo, samples: &Samples) -> Samples {
        let top = BLACK_CURVE_STEPS - 1;
        let max_in = info.max_value() as f64;
        let channels = info.channels();
        let k_at = |v: f64| self.curve.coverage(top - ((v / max_in) * top as f64).round() as usize);
        let gray: Vec<f64> = match samples {
            Samples::U8(v) => v
                .chunks_exact(channels)
                .map(|p| flatten_gray(p[0] as f64, p.get(1).map(|&a| a as f64), max_in))
                .collect(),
            Samples::U16(v) => v
                .chunks_exact(channels)
                .map(|p| flatten_gray(p[0] as f64, p.get(1).map(|&a| a as f64), max_in))
                .collect(),
        };
        let k: Vec<f64> = gray
            .par_iter()
            .map(|&g| if self.pure && g == 0.0 { self.k_max } else { k_at(g) })
            .collect();
        if self.bits == 8 {
            Samples::U8(k.iter().flat_map(|&k| [0, 0, 0, self.caps.black_code::<u8>(k) as u8]).collect())
        } else {
            Samples::U16(k.iter().flat_map(|&k| [0, 0, 0, self.caps.black_code::<u16>(k) as u16]).collect())
        }
    }
}

/// One file separated and written a band at a time, the bands handed on to
/// the caller as they are written ([`Workshop::stream_job`]): `separate`
/// takes them and drops them; the hot folder inspects them in the same pass,
/// so the picture is read once and memory holds one band whatever its size.
/// The outputs are committed as a set by [`StreamedJob::finish`]; dropped
/// before, it leaves nothing.
pub struct StreamedJob<'a> {
    workshop: &'a Workshop,
    bands: Box<dyn BandSource + 'a>,
    info: RasterInfo,
    prepared: Prepared,
    out: OutputSet,
    files: OutputFiles<'a>,
    place: OutputPlace<'a>,
    started: Instant,
    open_ms: f64,
    read: Duration,
    separate: Duration,
    write: Duration,
    stats: InkStats,
    /// Rows separated so far.
    rows: u32,
    /// Rows per band for this picture, as `separate` takes them.
    band_rows: u32,
}

/// One band of a [`StreamedJob`], already separated and written.
pub struct JobBand {
    /// Its first row and its number of rows.
    pub y: u32,
    pub rows: u32,
    /// The band as read, interleaved as the picture's layout.
    pub input: Samples,
    /// Its CMYK, as written.
    pub cmyk: Samples,
}

impl StreamedJob<'_> {
    /// Rows per band for this picture, as `separate` takes them: about
    /// [`BAND_BYTES`] of samples (or the workshop's set band height).
    pub fn band_rows(&self) -> u32 {
        self.band_rows
    }

    /// The picture's description.
    pub fn info(&self) -> &RasterInfo {
        &self.info
    }

    /// The RGB source of the separation, taken out (the bands need only the
    /// prepared table): `None` for CMYK input, for gray on the black plate
    /// only, and once taken.
    pub fn take_rgb_source(&mut self) -> Option<RgbSource> {
        self.prepared.rgb_source.take()
    }

    /// How the summary names the source.
    pub fn source_description(&self) -> &str {
        &self.prepared.source_description
    }

    /// What reading and the set-up did, as the summary lists them.
    pub fn notes(&self) -> &[String] {
        &self.prepared.notes
    }

    /// What the perceptual intent compressed from.
    pub fn compressed_from(&self) -> Option<CompressFrom> {
        self.prepared.compressed_from
    }

    /// Time spent opening and reading so far, ms.
    pub fn read_ms(&self) -> f64 {
        round_to(self.open_ms + self.read.as_secs_f64() * 1000.0, 1)
    }

    /// Time spent on the table and separating so far, ms.
    pub fn separate_ms(&self) -> f64 {
        round_to(self.prepared.table_ms + self.separate.as_secs_f64() * 1000.0, 1)
    }

    /// Reads, separates and writes the next band of at most `max_rows` rows
    /// (the outputs do not depend on it), or `None` after the last.
    pub fn next_band(&mut self, max_rows: u32) -> Result<Option<JobBand>> {
        let t = Instant::now();
        let Some(band) = self.bands.next_band(max_rows)? else {
            if self.rows != self.info.height {
                return Err(Error::Internal(format!("{} of {} rows were read", self.rows, self.info.height)));
            }
            return Ok(None);
        };
        self.read += t.elapsed();
        if band.y != self.rows {
            return Err(Error::Internal(format!("band at row {} after {} rows", band.y, self.rows)));
        }
        self.rows += band.rows;
        let t = Instant::now();
        let cmyk = self.workshop.separate_band(&self.prepared, &self.info, &band.samples);
        self.stats += InkStats::of_samples(&cmyk, self.workshop.separator.settings().tac);
        self.separate += t.elapsed();
        let t = Instant::now();
        self.files.push(&cmyk)?;
        self.write += t.elapsed();
        Ok(Some(JobBand {
            y: band.y,
            rows: band.rows,
            input: band.samples,
            cmyk,
        }))
    }

    /// Ends the files and commits them with the summary as one set, once
    /// every band was taken.
    pub fn finish(mut self) -> Result<JobSummary> {
        if self.rows != self.info.height {
            return Err(Error::Internal(format!("{} of {} rows were read", self.rows, self.info.height)));
        }
        let read_ms = self.read_ms();
        let t = Instant::now();
        self.files.finish(&mut self.out)?;
        let timings = Timings {
            read_ms,
            table_ms: self.prepared.table_ms,
            separate_ms: round_to(self.separate.as_secs_f64() * 1000.0, 1),
            write_ms: 0.0,
            total_ms: 0.0,
            table_source: self.prepared.table_source,
            profile_source: Origin::Built,
        };
        let written = self.write + t.elapsed();
        let workshop = self.workshop;
        workshop.finish_set(
            self.out,
            &self.place,
            &self.info,
            &self.prepared.described(),
            &self.stats,
            timings,
            written,
            self.started,
        )
    }
}

/// The composite and plate files of one job, written band by band.
struct OutputFiles<'w> {
    files: Vec<(OpenFile, FileWriter<'w>)>,
}

// At most five per job: their size does not matter.
#[allow(clippy::large_enum_variant)]
enum FileWriter<'w> {
    Tiff(TiffStripWriter<'w, StagedWriter>),
    Png(PngPlateWriter<StagedWriter>),
}

impl OutputFiles<'_> {
    /// Hands the next rows of CMYK to every file, the files in parallel.
    fn push(&mut self, cmyk: &Samples) -> Result<()> {
        self.files
            .par_iter_mut()
            .map(|(file, writer)| {
                match writer {
                    FileWriter::Tiff(w) => w.push(cmyk),
                    FileWriter::Png(w) => w.push(cmyk),
                }
                .map_err(|e| file.error(&e))
            })
            .collect()
    }

    /// Ends every file and adds it to `out`.
    fn finish(self, out: &mut OutputSet) -> Result<()> {
        let finished: Vec<Result<OpenFile>> = self
            .files
            .into_par_iter()
            .map(|(file, writer)| {
                match writer {
                    FileWriter::Tiff(w) => w.finish().map(drop),
                    FileWriter::Png(w) => w.finish(),
                }
                .map_err(|e| file.error(&e))
                .map(|()| file)
            })
            .collect();
        for file in finished {
            out.keep(file?)?;
        }
        Ok(())
    }
}

/// The separation table of `separator` for an RGB source: the source colour
/// of every node (a batch through the source's profile or named space), its
/// gamut for the perceptual mapping.
pub fn table_for_source(separator: &Separator, source: &RgbSource) -> SeparationTable {
    let gamut = source.gamut();
    table_with(separator, source, &separator.source_mapping(gamut.as_ref()))
}

/// The table of `separator` for an RGB source under a prepared mapping: the
/// source colour of every node in one batch through the source.
fn table_with(separator: &Separator, source: &RgbSource, mapping: &crate::separation::SourceMapping) -> SeparationTable {
    let labs = source.node_labs(separator.settings().table_grid);
    SeparationTable::build(separator, mapping, &node_lookup(separator, &labs))
}

/// The source colour of a grid node from the source colours of every node
/// of `separator`'s grid (`labs`, node index (r·N + g)·N + b).
fn node_lookup<'a>(separator: &Separator, labs: &'a [crate::colour::Lab]) -> impl Fn(EncodedRgb) -> IntentLab + Sync + 'a {
    let n = separator.settings().table_grid;
    move |EncodedRgb(rgb): EncodedRgb| {
        let idx = |v: f64| (v * (n - 1) as f64).round() as usize;
        IntentLab::new(labs[(idx(rgb[0]) * n + idx(rgb[1])) * n + idx(rgb[2])])
    }
}

/// The picture-independent base of `separator`'s tables for an RGB source,
/// every node solved ([`TableBase::build`]); `None` when the intent is not
/// perceptual.
pub fn base_for_source(separator: &Separator, source: &RgbSource) -> Option<TableBase> {
    let labs = source.node_labs(separator.settings().table_grid);
    TableBase::build(separator, &node_lookup(separator, &labs))
}

/// The source colours of a separator's grid nodes, converted (in one batch
/// through the source) the first time a node's colour is asked for: a
/// picture's step asks for none when the base already holds every node it
/// needs.
struct LazyNodeLabs<'a> {
    separator: &'a Separator,
    source: &'a RgbSource,
    labs: std::sync::OnceLock<Vec<crate::colour::Lab>>,
}

impl<'a> LazyNodeLabs<'a> {
    fn new(separator: &'a Separator, source: &'a RgbSource) -> LazyNodeLabs<'a> {
        LazyNodeLabs {
            separator,
            source,
            labs: std::sync::OnceLock::new(),
        }
    }

    /// The source colour of the node at `rgb`.
    fn at(&self, rgb: EncodedRgb) -> IntentLab {
        let labs = self
            .labs
            .get_or_init(|| self.source.node_labs(self.separator.settings().table_grid));
        node_lookup(self.separator, labs)(rgb)
    }
}

/// The separation table of `separator` for one picture from the
/// picture-independent base of its source (as a job builds it:
/// [`TableBase::finish`] under the picture's mapping, for the cells its
/// pixels fall in, the base solved on where it needs it); the full build
/// when there is no base (an intent other than perceptual).
pub fn table_for_picture_from(separator: &Separator, source: &RgbSource, base: Option<&mut TableBase>, rgb: &Samples) -> SeparationTable {
    let distinct = distinct_of(rgb);
    let mapping = separator.picture_mapping(&colours_gamut(source, &distinct));
    let cells = PictureCells::of_colours(separator.settings().table_grid, &distinct);
    let node_lab = LazyNodeLabs::new(separator, source);
    match base.and_then(|b| b.finish(separator, &mapping, &|rgb| node_lab.at(rgb), &cells)) {
        Some((table, ..)) => table,
        None => table_with(separator, source, &mapping),
    }
}

/// The separation table of `separator` for one picture: as
/// [`table_for_source`], but perceptual compression starts from the gamut
/// of the picture's own colours (`rgb`: its interleaved RGB samples). The
/// picture's distinct colours, their source colours and the map's reach per
/// region depend on the picture; everything else (the press boundary, the
/// node colours) does not.
///
/// Built as a job builds it: the picture-independent base, then the
/// picture's own step ([`table_for_picture_from`]).
pub fn table_for_picture(separator: &Separator, source: &RgbSource, rgb: &Samples) -> SeparationTable {
    table_for_picture_from(separator, source, TableBase::empty(separator).as_mut(), rgb)
}

/// [`table_for_picture`] with every node solved exactly from scratch (the
/// full build, the reference the per-picture step is measured against).
pub fn exact_table_for_picture(separator: &Separator, source: &RgbSource, rgb: &Samples) -> SeparationTable {
    table_with(separator, source, &separator.picture_mapping(&picture_gamut(source, rgb)))
}

/// The gamut of a picture's own colours (`rgb`: its interleaved RGB samples) in `source`.
pub fn picture_gamut(source: &RgbSource, rgb: &Samples) -> crate::separation::PictureGamut {
    colours_gamut(source, &distinct_of(rgb))
}

/// The distinct colours of interleaved RGB samples ([`crate::separation::distinct_colours`]).
pub fn distinct_of(rgb: &Samples) -> Vec<[f64; 3]> {
    match rgb {
        Samples::U8(v) => crate::separation::distinct_colours(v),
        Samples::U16(v) => crate::separation::distinct_colours(v),
    }
}

/// The gamut of a picture from its distinct colours, gathered before
/// ([`crate::separation::DistinctColours`], a band at a time in a streamed job).
pub fn colours_gamut(source: &RgbSource, distinct: &[[f64; 3]]) -> crate::separation::PictureGamut {
    crate::separation::PictureGamut::from_colours(&source.labs_of(distinct))
}

fn flatten_gray(g: f64, alpha: Option<f64>, max: f64) -> f64 {
    match alpha {
        Some(a) => g * a / max + max * (1.0 - a / max),
        None => g,
    }
}

/// The stem every output of `input` is named after: the file stem when it is
/// UTF-8, else `image`.
pub fn output_stem(input: &Path) -> &str {
    input.file_stem().and_then(|s| s.to_str()).unwrap_or("image")
}

/// The error text without the leading path (for wrapping with advice).
fn strip_path(e: &Error, path: &Path) -> String {
    let s = e.to_string();
    s.strip_prefix(&format!("{}: ", path.display())).map(str::to_string).unwrap_or(s)
}

/// Interleaved RGB at the raster's depth: alpha flattened onto paper white
/// (source white), gray expanded to neutral RGB. `None` for CMYK.
pub fn to_rgb<'a>(raster: &'a Raster, notes: &mut Vec<String>) -> Option<Cow<'a, Samples>> {
    if raster.layout == Layout::Cmyk {
        return None;
    }
    if raster.layout.has_alpha() {
        notes.push("alpha flattened onto paper white".into());
    }
    Some(band_rgb(raster.layout, &raster.samples))
}

/// Interleaved samples of `layout` (not CMYK) as interleaved RGB at the same
/// depth: alpha flattened onto paper white, gray expanded to neutral RGB.
pub(crate) fn band_rgb(layout: Layout, samples: &Samples) -> Cow<'_, Samples> {
    fn convert<T: Copy + Into<u32> + TryFrom<u32> + Default + Send + Sync>(v: &[T], layout: Layout, max: u32) -> Vec<T> {
        let ch = layout.channels();
        // `max` is the type's own largest value, so the clamped sample always fits.
        let cast = |x: u32| T::try_from(x.min(max)).ok().unwrap_or_default();
        v.par_chunks(ch)
            .flat_map_iter(|p| {
                let get = |i: usize| p[i].into();
                let (r, g, b, a) = match layout {
                    Layout::Gray => (get(0), get(0), get(0), max),
                    Layout::GrayAlpha => (get(0), get(0), get(0), get(1)),
                    Layout::Rgb => (get(0), get(1), get(2), max),
                    Layout::Rgba => (get(0), get(1), get(2), get(3)),
                    Layout::Cmyk => (0, 0, 0, max),
                };
                let flat = |c: u32| ((c as u64 * a as u64 + max as u64 * (max - a.min(max)) as u64 + max as u64 / 2) / max as u64) as u32;
                [cast(flat(r)), cast(flat(g)), cast(flat(b))]
            })
            .collect()
    }
    match samples {
        _ if layout == Layout::Rgb => Cow::Borrowed(samples),
        Samples::U8(v) => Cow::Owned(Samples::U8(convert(v, layout, 255))),
        Samples::U16(v) => Cow::Owned(Samples::U16(convert(v, layout, 65535))),
    }
}
