//! One separation job: an image in, a composite CMYK TIFF, one plate per ink
//! and a JSON summary out, written as a set (all files or none).

use crate::cache::{Origin, TableCache};
use crate::colour::{EncodedRgb, RgbSpace};
use crate::error::{Error, Result};
use crate::ink::Ink;
use crate::raster::{CmykImage, Compression, Layout, Limits, OutputSet, Raster, ReadOptions, Resolution, Samples, TiffOptions};
use crate::report::{SettingsReport, round_to};
use crate::separation::limits::InkCaps;
use crate::separation::{BLACK_CURVE_STEPS, BlackOnlyCurve, CompressFrom, Intent, IntentLab, SeparationTable, Separator};
use crate::settings::Coverage;
use crate::source::RgbSource;
use rayon::prelude::*;
use serde::Serialize;
use std::borrow::Cow;
use std::path::{Path, PathBuf};
use std::sync::{Arc, Mutex};
use std::time::Instant;

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
            v.par_chunks(4 * 4096)
                .map(|chunk| {
                    let mut hist = vec![0u64; 801];
                    let (mut total_sum, mut total_max, mut over) = (0u64, 0u32, 0u64);
                    let (mut plate, mut inked) = ([0u64; 4], [0u64; 4]);
                    for px in chunk.chunks_exact(4) {
                        let codes: [u32; 4] = std::array::from_fn(|i| px[i].into());
                        let total = codes[0] + codes[1] + codes[2] + codes[3];
                        hist[((400 * total as u64 + m) / (2 * m)).min(800) as usize] += 1;
                        total_sum += total as u64;
                        total_max = total_max.max(total);
                        over += u64::from(total as f64 > over_from);
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
    /// file needed none (gray on the black plate only).
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
        }
    }

    /// The workshop with tables and the embedded profile kept in `cache`
    /// (a new workshop keeps them in memory only).
    pub fn with_cache(self, cache: TableCache) -> Workshop {
        Workshop { cache, ..self }
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
        SettingsReport {
            compress_from: separated.compressed_from.map(CompressFrom::name),
            ..self.settings_report.clone()
        }
    }

    /// The table for a source (`source_key` names it), from the picture's
    /// own gamut when `picture` is given: from memory, the cache folder, or
    /// built. The picture's mapping is measured every time; it keys the table.
    fn table(&self, source_key: &[u8], source: &RgbSource, picture: Option<&Samples>) -> crate::cache::Fetched<Arc<SeparationTable>> {
        let sep = &self.separator;
        match picture {
            Some(rgb) => {
                let picture = picture_gamut(source, rgb);
                let mapping = sep.picture_mapping(&picture);
                let key = self.cache.table_key(sep, source_key, mapping.picture_reach());
                self.cache.table(sep, key, || table_with(sep, source, &mapping))
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
    fn source_of(&self, raster: &Raster, path: &Path, notes: &mut Vec<String>) -> Result<(Vec<u8>, RgbSource, String)> {
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
        raster: &Raster,
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

    /// Separates one file and writes its outputs.
    pub fn run(&self, path: &Path) -> Result<JobSummary> {
        let total = Instant::now();
        // The output profile (built once per run) is made while the file is
        // read and separated: decoding is single-threaded.
        let (separated, profile) = rayon::join(|| self.separate_file(path), || self.output_profile().map(|_| ()));
        let separated = separated?;
        profile?;
        self.write_outputs(path, &separated, total)
    }

    /// Reads and separates one file in memory; nothing is written.
    ///
    /// The same path as [`Workshop::run`] up to the output: callers that check
    /// a separation (inspect, proof) see exactly the CMYK that `separate` writes.
    pub fn separate_file(&self, path: &Path) -> Result<SeparatedFile> {
        let t = Instant::now();
        let raster = crate::raster::read_raster_with(path, &self.options.read_options())?;
        let read_ms = ms(t);
        self.separate_raster(path, raster, read_ms)
    }

    /// Separates a raster already read from `path` (as [`Workshop::separate_file`]
    /// does after reading); `read_ms` is the time the read took.
    pub fn separate_raster(&self, path: &Path, raster: Raster, read_ms: f64) -> Result<SeparatedFile> {
        let mut notes = raster.notes.clone();
        let t = Instant::now();
        let gray = matches!(raster.layout, Layout::Gray | Layout::GrayAlpha);
        let black_only = self.options.gray == GrayMode::BlackOnly || raster.line_art;
        let mut rgb_source = None;
        let mut compressed_from = None;
        let mut source_description = None;
        let mut table_source = None;
        let (image, table_ms, separate_ms) = match to_rgb(&raster, &mut notes) {
            Some(_) if gray && black_only => {
                let (_, source, described) = self.source_of(&raster, path, &mut notes)?;
                source_description = Some(described);
                let cmyk = self.gray_to_black(&raster, &source);
                if !raster.line_art {
                    notes.push("gray input on the black plate only".into());
                }
                (cmyk, 0.0, ms(t))
            }
            Some(rgb) => {
                if gray {
                    notes.push("gray separated as neutrals".into());
                }
                let (key, source, described) = self.source_of(&raster, path, &mut notes)?;
                source_description = Some(described);
                let settings = self.separator.settings();
                let from_picture = settings.intent == Intent::Perceptual && settings.compress_from == CompressFrom::Picture;
                compressed_from = (settings.intent == Intent::Perceptual).then_some(if from_picture {
                    CompressFrom::Picture
                } else {
                    CompressFrom::Space
                });
                let fetched = self.table(&key, &source, from_picture.then_some(rgb.as_ref()));
                notes.extend(fetched.notes);
                table_source = Some(fetched.origin);
                let table = fetched.value;
                let table_ms = ms(t);
                let t2 = Instant::now();
                let cmyk = self.apply(&table, &rgb, raster.width as usize);
                rgb_source = Some(source);
                (cmyk, table_ms, ms(t2))
            }
            None => {
                // Re-separation compresses from the source condition's whole gamut.
                compressed_from = (self.separator.settings().intent == Intent::Perceptual).then_some(CompressFrom::Space);
                let table = self
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
                    .clone();
                let table_ms = ms(t);
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
                if raster.icc_profile.is_some() {
                    notes.push("embedded CMYK profile not used; the source condition describes the input".into());
                }
                let t2 = Instant::now();
                let pixels = raster.samples.len() / 4;
                let w = raster.width as usize;
                let cmyk = match (&raster.samples, self.options.bits) {
                    (Samples::U8(v), 8) => {
                        let mut out = vec![0u8; pixels * 4];
                        table.apply_cmyk8(v, &mut out, w);
                        Samples::U8(out)
                    }
                    (Samples::U8(v), _) => {
                        let wide: Vec<u16> = v.iter().map(|&x| x as u16 * 257).collect();
                        let mut out = vec![0u16; pixels * 4];
                        table.apply_cmyk16(&wide, &mut out, w);
                        Samples::U16(out)
                    }
                    (Samples::U16(v), bits) => {
                        let mut out = vec![0u16; pixels * 4];
                        table.apply_cmyk16(v, &mut out, w);
                        if bits == 16 {
                            Samples::U16(out)
                        } else {
                            Samples::U8(table.narrow_to_8bit(&out))
                        }
                    }
                };
                (cmyk, table_ms, ms(t2))
            }
        };
        let image = CmykImage::new(raster.width, raster.height, image)?;
        let stats = InkStats::of_samples(&image.samples, self.separator.settings().tac);
        let source_description = match source_description {
            Some(d) => d,
            None => format!("CMYK for {}", self.options.source_condition.name),
        };
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
            separate_ms,
            table_source,
        })
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
    /// folder that is renamed when complete).
    pub fn write_outputs_in(&self, path: &Path, separated: &SeparatedFile, started: Instant, place: &OutputPlace) -> Result<JobSummary> {
        let SeparatedFile { raster, image, stats, .. } = separated;
        let t = Instant::now();
        let stem = output_stem(path).to_string();
        let mut out = OutputSet::new(place.dir, self.options.overwrite)?;
        out.protect([path]);
        let (icc, profile_source) = self.output_profile_from()?;
        let mut notes = separated.notes.clone();
        notes.extend(self.profile_notes.lock().map(|mut n| std::mem::take(&mut *n)).unwrap_or_default());
        let tiff = TiffOptions {
            compression: self.options.compression,
            resolution: raster.resolution,
            icc_profile: Some(icc),
        };
        // The composite and the plates are written at the same time, one file per thread.
        let mut files: Vec<(String, crate::raster::StageFn)> = vec![(
            format!("{stem}.cmyk.tif"),
            Box::new(|w| crate::raster::write_cmyk_tiff(w, image, &tiff)),
        )];
        for ink in Ink::ALL {
            let tiff = &tiff;
            match self.options.plates {
                PlateFormat::Tiff => files.push((
                    format!("{stem}.{}.tif", ink.letter()),
                    Box::new(move |w| crate::raster::write_plate_tiff(w, image, ink, tiff)),
                )),
                PlateFormat::Png => files.push((
                    format!("{stem}.{}.png", ink.letter()),
                    Box::new(move |w| crate::raster::write_plate_png(w, image, ink, raster.resolution)),
                )),
                PlateFormat::None => {}
            }
        }
        out.stage_parallel(files)?;
        let res = raster.resolution.unwrap_or(Resolution::DEFAULT);
        let listed = |name: &std::ffi::OsStr| place.listed_dir.join(name).display().to_string();
        let mut outputs: Vec<String> = out.staged().iter().filter_map(|p| p.file_name().map(listed)).collect();
        let summary_name = crate::report::export::SUMMARY_JSON.file_name(&stem);
        outputs.push(listed(summary_name.as_ref()));
        let px = stats.pixels.max(1) as f64;
        let mut summary = JobSummary {
            file: place.input_shown.display().to_string(),
            outputs,
            width: raster.width,
            height: raster.height,
            resolution_ppi: [round_to(res.x_ppi, 2), round_to(res.y_ppi, 2)],
            input: format!("{} {:?} {}-bit", raster.format.name(), raster.layout, raster.bits),
            source: separated.source_description.clone(),
            notes,
            settings: self.settings_of(separated),
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
            timings: Timings {
                read_ms: separated.read_ms,
                table_ms: separated.table_ms,
                separate_ms: separated.separate_ms,
                write_ms: 0.0,
                total_ms: 0.0,
                table_source: separated.table_source,
                profile_source,
            },
            note: crate::report::PREDICTION_NOTE,
        };
        summary.timings.write_ms = ms(t);
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

    /// Gray on black only: black whose printed lightness matches the gray's
    /// (its lightness as a neutral of `source`).
    fn gray_to_black(&self, raster: &Raster, source: &RgbSource) -> Samples {
        let sep = &self.separator;
        let top = BLACK_CURVE_STEPS - 1;
        let grays: Vec<[f64; 3]> = (0..=top).map(|i| [i as f64 / top as f64; 3]).collect();
        // The curve runs from paper (white) toward black.
        let lightness: Vec<Option<f64>> = source.labs_of(&grays).iter().rev().map(|lab| Some(lab.l)).collect();
        let curve = BlackOnlyCurve::new(sep, &lightness);
        let k_max = sep.settings().black.black_max;
        let max_in = raster.max_value() as f64;
        let channels = raster.channels();
        let k_at = |v: f64| curve.coverage(top - ((v / max_in) * top as f64).round() as usize);
        let bits = self.options.bits;
        let pure = sep.settings().keep_pure_black;
        // Rounded to the nearest code, but never over the maximum black.
        let caps = InkCaps::of(sep.settings());
        let gray: Vec<f64> = match &raster.samples {
            Samples::U8(v) => v
                .chunks_exact(channels)
                .map(|p| flatten_gray(p[0] as f64, p.get(1).map(|&a| a as f64), max_in))
                .collect(),
            Samples::U16(v) => v
                .chunks_exact(channels)
                .map(|p| flatten_gray(p[0] as f64, p.get(1).map(|&a| a as f64), max_in))
                .collect(),
        };
        let k: Vec<f64> = gray.par_iter().map(|&g| if pure && g == 0.0 { k_max } else { k_at(g) }).collect();
        if bits == 8 {
            Samples::U8(k.iter().flat_map(|&k| [0, 0, 0, caps.black_code::<u8>(k) as u8]).collect())
        } else {
            Samples::U16(k.iter().flat_map(|&k| [0, 0, 0, caps.black_code::<u16>(k) as u16]).collect())
        }
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
    let n = separator.settings().table_grid;
    let labs = source.node_labs(n);
    let lookup = |EncodedRgb(rgb): EncodedRgb| {
        let idx = |v: f64| (v * (n - 1) as f64).round() as usize;
        IntentLab::new(labs[(idx(rgb[0]) * n + idx(rgb[1])) * n + idx(rgb[2])])
    };
    SeparationTable::build(separator, mapping, &lookup)
}

/// The separation table of `separator` for one picture: as
/// [`table_for_source`], but perceptual compression starts from the gamut
/// of the picture's own colours (`rgb`: its interleaved RGB samples). The
/// picture's distinct colours, their source colours and the map's reach per
/// region depend on the picture; everything else (the press boundary, the
/// node colours) does not.
pub fn table_for_picture(separator: &Separator, source: &RgbSource, rgb: &Samples) -> SeparationTable {
    table_with(separator, source, &separator.picture_mapping(&picture_gamut(source, rgb)))
}

/// The gamut of a picture's own colours (`rgb`: its interleaved RGB samples) in `source`.
pub fn picture_gamut(source: &RgbSource, rgb: &Samples) -> crate::separation::PictureGamut {
    let distinct = match rgb {
        Samples::U8(v) => crate::separation::distinct_colours(v),
        Samples::U16(v) => crate::separation::distinct_colours(v),
    };
    crate::separation::PictureGamut::from_colours(&source.labs_of(&distinct))
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
    if raster.layout == Layout::Cmyk {
        return None;
    }
    if raster.layout.has_alpha() {
        notes.push("alpha flattened onto paper white".into());
    }
    Some(match &raster.samples {
        _ if raster.layout == Layout::Rgb => Cow::Borrowed(&raster.samples),
        Samples::U8(v) => Cow::Owned(Samples::U8(convert(v, raster.layout, 255))),
        Samples::U16(v) => Cow::Owned(Samples::U16(convert(v, raster.layout, 65535))),
    })
}
