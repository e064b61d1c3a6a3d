//! `inspect`: how an RGB file will print on a press, and whether a CMYK
//! file is safe to plate.
//!
//! RGB input is separated exactly as `separate` does it (through
//! [`Workshop::separate_raster`] or the table it builds); per pixel, CIEDE2000 (CIE 142:2001)
//! compares the source colour (CIELAB D50, the ICC PCS) with the printed
//! colour of the CMYK actually produced, evaluated by the press model in the
//! frame of the rendering intent, as [`Separator::separate`] reports it. The
//! difference depends on the pixel value only, so it is computed once per
//! distinct value (exactly, no approximation), and the forward model once per
//! distinct CMYK.
//!
//! CMYK input is checked as it would be plated (the file's own ink values,
//! not re-separated) against the target condition: total ink, plate
//! coverage, dots below the smallest printable dot, and rich black under
//! fine detail, where C, M and Y under the black risk visible
//! misregistration (common practice).
//!
//! A file is read, separated and checked band by band of rows
//! ([`crate::raster::open_bands`]): only the band in hand is held per pixel,
//! and the report does not depend on the band height. The stages, one module
//! each: where the bands come from ([`feed`], with the separation of RGB and
//! gray bands in [`band_separation`], the one seam with the separation job),
//! the pixel pass ([`pixels`]), the ΔE memo ([`delta_e`]), 8-connected
//! regions of flagged pixels carried across bands ([`regions`]), the report
//! schema ([`schema`]), the analysis that turns the pass into a report
//! ([`analysis`]) and the pass/fail rules ([`rules`]). Report files are
//! written by [`crate::report`].

mod analysis;
pub mod band_separation;
mod delta_e;
mod feed;
mod pixels;
pub mod regions;
pub mod rules;
pub mod schema;

pub use schema::{
    GamutSummary, InkUse, InspectReport, InspectSettings, InspectTimings, PlateReport, RegionColour, RegionReport, RichBlackSettings,
    ThresholdShare,
};

use crate::colour::Lab;
use crate::error::Result;
use crate::job::{SeparatedFile, StreamedJob, Workshop};
use crate::raster::Layout;
use crate::report::round_to;
use crate::source::RgbSource;
use std::path::Path;
use std::time::Instant;

pub const KIND_OUT_OF_GAMUT: &str = "out-of-gamut";
pub const KIND_OVER_INK: &str = "over-ink";
pub const KIND_RICH_BLACK: &str = "rich-black-detail";
pub const KIND_SMALL_DOT: &str = "below-min-dot";

/// The region kinds in report order.
const KINDS: [&str; 4] = [KIND_OUT_OF_GAMUT, KIND_OVER_INK, KIND_RICH_BLACK, KIND_SMALL_DOT];

/// Width of a ΔE histogram bin.
pub const DE_BIN: f64 = 0.01;
/// ΔE histogram bins (0 to 100 and everything above in the last).
pub const DE_BINS: usize = 10_001;

/// Longest side of the maps, pixels (each map pixel covers a square block).
pub const MAP_SIDE: u32 = 1200;

/// Common-practice sheet for the ink estimate: a B1-class sheetfed press sheet, mm.
pub const DEFAULT_SHEET_MM: [f64; 2] = [700.0, 1000.0];
/// Common-practice run length for the ink estimate, copies.
pub const DEFAULT_COPIES: u64 = 1000;

/// Rich black under fine detail (common practice, from memory): black of at
/// least this much…
pub const RICH_BLACK_K: f64 = 0.70;
/// …with at least this much C + M + Y under it…
pub const RICH_BLACK_CMY: f64 = 0.30;
/// …in strokes narrower than this, mm (type and lines where a slight
/// misregistration of the colour plates shows as a coloured fringe).
pub const RICH_BLACK_DETAIL_MM: f64 = 0.5;

/// Regions smaller than this are dropped as specks, mm².
pub const DEFAULT_MIN_AREA_MM2: f64 = 0.25;

/// What to look for and how to judge it.
#[derive(Debug, Clone)]
pub struct InspectOptions {
    /// ΔE2000 thresholds for the area shares, ascending.
    pub de_thresholds: Vec<f64>,
    /// ΔE2000 above which a pixel counts as out of gamut: its distance outside the press gamut for the regions and `gamut.outside_fraction`, the separation's ΔE for `gamut.over_fraction`.
    pub region_de: f64,
    /// Regions under this area are dropped, mm².
    pub min_area_mm2: f64,
    pub rich_black_k: f64,
    pub rich_black_cmy: f64,
    pub rich_black_detail_mm: f64,
    /// Also report regions of dots below the minimum printable dot.
    pub small_dot_regions: bool,
    /// Sheet for the ink estimate, mm, and whether it was given.
    pub sheet_mm: [f64; 2],
    pub sheet_given: bool,
    pub copies: u64,
    pub copies_given: bool,
    /// Ink film at 100 %, g/m² (C, M, Y, K); `None` = the condition's.
    pub ink_film: Option<[f64; 4]>,
    /// Regions listed in the report per kind, largest first (all are counted).
    pub max_regions: usize,
    /// The pass/fail rules (empty: [`rules::DEFAULT_RULE`]).
    pub rules: Vec<rules::Rule>,
    /// Keep what the maps and the HTML page need.
    pub keep_maps: bool,
    /// Rows per band of the pass; `None`: about four million pixels a band.
    /// The report does not depend on it.
    pub band_rows: Option<u32>,
}

impl Default for InspectOptions {
    fn default() -> InspectOptions {
        InspectOptions {
            de_thresholds: vec![2.0, 5.0],
            region_de: 5.0,
            min_area_mm2: DEFAULT_MIN_AREA_MM2,
            rich_black_k: RICH_BLACK_K,
            rich_black_cmy: RICH_BLACK_CMY,
            rich_black_detail_mm: RICH_BLACK_DETAIL_MM,
            small_dot_regions: false,
            sheet_mm: DEFAULT_SHEET_MM,
            sheet_given: false,
            copies: DEFAULT_COPIES,
            copies_given: false,
            ink_film: None,
            max_regions: 200,
            rules: Vec::new(),
            keep_maps: false,
            band_rows: None,
        }
    }
}

/// The maps at reduced size: each cell covers `factor` × `factor` pixels.
#[derive(Debug, Clone)]
pub struct MapData {
    pub width: u32,
    pub height: u32,
    pub factor: u32,
    /// Printed colour of the cell's mean ink, sRGB.
    pub base: Vec<[u8; 3]>,
    /// Largest ΔE2000 in the cell (RGB input).
    pub de: Option<Vec<f32>>,
    /// Largest total ink in the cell, percent.
    pub tac: Vec<f32>,
}

/// A report with what the maps and the HTML page draw.
#[derive(Debug, Clone)]
pub struct Inspection {
    pub report: InspectReport,
    pub maps: Option<MapData>,
    /// ΔE histogram, bins of [`DE_BIN`] (RGB input).
    pub de_hist: Option<Vec<u64>>,
    /// Total ink histogram, bins of 0.5 %.
    pub tac_hist: Vec<u64>,
    /// Source colours (CIELAB D50) of out-of-gamut pixels, a sample.
    pub out_of_gamut_labs: Vec<Lab>,
}

fn ms(t: Instant) -> f64 {
    round_to(t.elapsed().as_secs_f64() * 1000.0, 1)
}

/// Inspects one file, read band by band: RGB and gray as `separate`
/// separates them, CMYK as it would be plated (not re-separated). Memory
/// holds one band of pixels, whatever the picture's size.
pub fn inspect_file(workshop: &Workshop, path: &Path, opts: &InspectOptions) -> Result<Inspection> {
    inspect_file_with_progress(workshop, path, opts, &|_, _| {})
}

/// [`inspect_file`], with `progress` hearing (bands done, bands in all)
/// after each band of each pass over the picture (two passes when the
/// perceptual table is built from the picture's own colours).
pub fn inspect_file_with_progress(
    workshop: &Workshop,
    path: &Path,
    opts: &InspectOptions,
    progress: &(dyn Fn(u64, u64) + Sync),
) -> Result<Inspection> {
    let started = Instant::now();
    let bands = crate::raster::open_bands(path, &workshop.options.read_options())?;
    let read_ms = ms(started);
    inspect_bands_with(workshop, path, bands, read_ms, opts, started, progress)
}

/// Inspects a picture served band by band (`path` names it in the report
/// and in errors; `read_ms` is what opening it took), as [`inspect_file`].
pub fn inspect_bands(
    workshop: &Workshop,
    path: &Path,
    bands: Box<dyn crate::raster::BandSource>,
    read_ms: f64,
    opts: &InspectOptions,
    started: Instant,
) -> Result<Inspection> {
    inspect_bands_with(workshop, path, bands, read_ms, opts, started, &|_, _| {})
}

fn inspect_bands_with(
    workshop: &Workshop,
    path: &Path,
    mut bands: Box<dyn crate::raster::BandSource>,
    read_ms: f64,
    opts: &InspectOptions,
    started: Instant,
    progress: &(dyn Fn(u64, u64) + Sync),
) -> Result<Inspection> {
    let info = bands.info().clone();
    let first_pass = if info.layout == Layout::Cmyk {
        0
    } else {
        workshop.colour_pass_bands(&info)
    };
    let total = first_pass + analysis::bands_in_pass(info.width, info.height, opts);
    let done = std::cell::Cell::new(0u64);
    let tick = || {
        done.set(done.get() + 1);
        progress(done.get().min(total), total);
    };
    if info.layout == Layout::Cmyk {
        let notes = vec![format!(
            "the file's own CMYK is checked for {}, as it would be plated (not re-separated)",
            workshop.separator.condition().name
        )];
        let subject = Subject::of(&Shape::of(&info), info.bits, None, notes, "CMYK".into(), None);
        let mut feed = feed::Ticking::new(feed::FileCmyk::new(bands.as_mut(), read_ms), &tick);
        return analysis::analyse(workshop, path, subject, &mut feed, opts, started);
    }
    let mut separation = band_separation::band_separation(workshop, path, bands.as_mut(), &tick)?;
    let fallback_source = RgbSource::Named(workshop.options.source_space);
    let mut notes = separation.notes.clone();
    if separation.source.is_none() {
        notes.push(format!("ΔE measured against {} gray", workshop.options.source_space.name()));
    }
    let source = separation.source.take().unwrap_or(fallback_source);
    let subject = Subject::of(
        &Shape::of(&info),
        workshop.options.bits,
        Some(&source),
        notes,
        separation.description.clone(),
        separation.compressed_from,
    );
    let mut feed = feed::Ticking::new(feed::FileSeparated::new(bands.as_mut(), separation, read_ms), &tick);
    analysis::analyse(workshop, path, subject, &mut feed, opts, started)
}

/// Inspects a file already separated in memory ([`Workshop::separate_file`]),
/// exactly the CMYK that was (or will be) written: for RGB and gray input with
/// the ΔE of every pixel; for CMYK input, the re-separated CMYK. The bands of
/// the image in memory go through the same pass as those of a file.
pub fn inspect_separated(
    workshop: &Workshop,
    path: &Path,
    s: &SeparatedFile,
    opts: &InspectOptions,
    started: Instant,
) -> Result<Inspection> {
    let separate_ms = s.table_ms + s.separate_ms;
    let r = &s.raster;
    let shape = Shape {
        width: r.width,
        height: r.height,
        layout: r.layout,
        resolution: r.resolution,
        bits: r.bits,
    };
    let bits = s.image.samples.bits();
    if s.raster.layout == Layout::Cmyk {
        let mut notes = s.notes.clone();
        notes.push("checked: the re-separated CMYK".into());
        let subject = Subject::of(&shape, bits, None, notes, s.source_description.clone(), s.compressed_from);
        let mut feed = feed::InMemory::new(&s.image.samples, None, r.width, s.read_ms, separate_ms);
        return analysis::analyse(workshop, path, subject, &mut feed, opts, started);
    }
    let rgb = crate::job::to_rgb(&s.raster, &mut Vec::new());
    let fallback_source = RgbSource::Named(workshop.options.source_space);
    let source = s.rgb_source.as_ref().unwrap_or(&fallback_source);
    let mut notes = s.notes.clone();
    if s.rgb_source.is_none() {
        notes.push(format!("ΔE measured against {} gray", workshop.options.source_space.name()));
    }
    let subject = Subject::of(&shape, bits, Some(source), notes, s.source_description.clone(), s.compressed_from);
    let mut feed = feed::InMemory::new(&s.image.samples, rgb.as_deref(), r.width, s.read_ms, separate_ms);
    analysis::analyse(workshop, path, subject, &mut feed, opts, started)
}

/// Inspects the bands of a separation job as it writes them ([`Workshop::stream_job`]):
/// the picture is read once, each band separated, written and checked, and
/// memory holds one band whatever the picture's size. The report is that of
/// [`inspect_separated`] on the same file (RGB and gray with the ΔE of every
/// pixel; CMYK input as re-separated), sample for sample. Every band is taken:
/// the job is ready for [`StreamedJob::finish`] after.
pub fn inspect_job(workshop: &Workshop, path: &Path, job: &mut StreamedJob, opts: &InspectOptions, started: Instant) -> Result<Inspection> {
    let shape = Shape::of(job.info());
    let bits = workshop.options.bits;
    let mut notes = job.notes().to_vec();
    let description = job.source_description().to_string();
    let compressed_from = job.compressed_from();
    if job.info().layout == Layout::Cmyk {
        notes.push("checked: the re-separated CMYK".into());
        let subject = Subject::of(&shape, bits, None, notes, description, compressed_from);
        return analysis::analyse(workshop, path, subject, &mut feed::JobBands::new(job), opts, started);
    }
    let fallback_source = RgbSource::Named(workshop.options.source_space);
    let own_source = job.take_rgb_source();
    if own_source.is_none() {
        notes.push(format!("ΔE measured against {} gray", workshop.options.source_space.name()));
    }
    let source = own_source.unwrap_or(fallback_source);
    let subject = Subject::of(&shape, bits, Some(&source), notes, description, compressed_from);
    analysis::analyse(workshop, path, subject, &mut feed::JobBands::new(job), opts, started)
}

/// The size, layout, resolution and depth of the picture inspected.
struct Shape {
    width: u32,
    height: u32,
    layout: Layout,
    resolution: Option<crate::raster::Resolution>,
    bits: u8,
}

impl Shape {
    fn of(info: &crate::raster::RasterInfo) -> Shape {
        Shape {
            width: info.width,
            height: info.height,
            layout: info.layout,
            resolution: info.resolution,
            bits: info.bits,
        }
    }
}

/// What one inspection looks at, beside its pixels.
struct Subject<'a> {
    width: u32,
    height: u32,
    layout: Layout,
    resolution: Option<crate::raster::Resolution>,
    /// Bits per sample of the CMYK checked and of the source RGB.
    cmyk_bits: u8,
    rgb_bits: u8,
    /// The source RGB's colour space, for the ΔE (RGB and gray input).
    source: Option<&'a RgbSource>,
    notes: Vec<String>,
    source_description: String,
    /// What the perceptual intent compressed from (see [`SeparatedFile`]).
    compressed_from: Option<crate::separation::CompressFrom>,
}

impl<'a> Subject<'a> {
    fn of(
        info: &Shape,
        cmyk_bits: u8,
        source: Option<&'a RgbSource>,
        notes: Vec<String>,
        source_description: String,
        compressed_from: Option<crate::separation::CompressFrom>,
    ) -> Subject<'a> {
        Subject {
            width: info.width,
            height: info.height,
            layout: info.layout,
            resolution: info.resolution,
            cmyk_bits,
            rgb_bits: info.bits,
            source,
            notes,
            source_description,
            compressed_from,
        }
    }
}
