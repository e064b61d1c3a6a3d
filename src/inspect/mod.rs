//! `inspect`: how an RGB file will print on a press, and whether a CMYK
//! file is safe to plate.
//!
//! RGB input is separated exactly as `separate` does it
//! ([`Workshop::separate_raster`]); per pixel, CIEDE2000 (CIE 142:2001)
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
//! Flagged pixels are grouped into 8-connected regions ([`regions`]);
//! pass/fail rules are in [`rules`].

pub mod regions;
pub mod rules;

use crate::colour::{EncodedRgb, Lab, RgbSpace, ciede2000};
use crate::error::Result;
use crate::ink::{Cmyk, Ink};
use crate::job::{InkStats, SeparatedFile, TacSummary, Workshop, table_for_source};
use crate::raster::{Layout, Raster, Resolution, Samples};
use crate::report::{SettingsReport, round_to};
use crate::separation::{Intent, RelativeLab, SeparationTable, Separator};
use crate::source::RgbSource;
use rayon::prelude::*;
use regions::{Region, RowRuns, Run};
use serde::Serialize;
use std::collections::{BTreeMap, HashMap};
use std::path::Path;
use std::sync::atomic::{AtomicU32, Ordering};
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
        }
    }
}

/// Settings of an inspection, echoed in the report (percent and mm).
#[derive(Debug, Clone, Serialize)]
pub struct InspectSettings {
    #[serde(flatten)]
    pub separation: SettingsReport,
    pub de_thresholds: Vec<f64>,
    pub region_de: f64,
    pub min_area_mm2: f64,
    pub min_dot_percent: f64,
    pub rich_black: RichBlackSettings,
    pub fail_if: Vec<String>,
}

#[derive(Debug, Clone, Serialize)]
pub struct RichBlackSettings {
    pub k_percent: f64,
    pub cmy_percent: f64,
    pub detail_mm: f64,
    pub basis: &'static str,
}

#[derive(Debug, Clone, Serialize)]
pub struct ThresholdShare {
    pub threshold: f64,
    pub fraction: f64,
}

#[derive(Debug, Clone, Serialize)]
pub struct GamutSummary {
    pub mean_de: f64,
    pub p95_de: f64,
    pub max_de: f64,
    /// Share of pixels with ΔE over `threshold`.
    pub over_fraction: f64,
    pub threshold: f64,
    /// Share of pixels over each of the configured thresholds.
    pub over: Vec<ThresholdShare>,
    /// Share of pixels whose source colour lies more than `threshold`
    /// outside the press gamut: ΔE2000 from the source colour to the nearest
    /// printable colour (media-relative, as relative colorimetric clips it),
    /// whatever the intent. With the perceptual intent `over_fraction` also
    /// counts printable colours the mapping moved; this does not.
    pub outside_fraction: f64,
    /// Mean (over all pixels; 0 inside the gamut) and largest of that distance.
    pub outside_mean_de: f64,
    pub outside_max_de: f64,
    /// Distinct source values evaluated.
    pub distinct_values: u64,
}

#[derive(Debug, Clone, Serialize)]
pub struct PlateReport {
    pub ink: &'static str,
    /// Mean tone value over the image, percent.
    pub mean_percent: f64,
    /// Share of the image with at least 1 % of this ink.
    pub inked_fraction: f64,
    /// Share of the image with a dot of this ink above 0 and below the minimum printable dot.
    pub below_min_dot_fraction: f64,
}

#[derive(Debug, Clone, Serialize)]
pub struct InkUse {
    pub sheet_mm: [f64; 2],
    pub sheet_basis: &'static str,
    pub copies: u64,
    pub copies_basis: &'static str,
    /// Ink film at 100 % per ink, g/m² (C, M, Y, K).
    pub film_g_per_m2: [f64; 4],
    pub film_basis: &'static str,
    /// Ink per copy, g (C, M, Y, K).
    pub per_copy_g: [f64; 4],
    /// Ink for the run, kg (C, M, Y, K).
    pub run_kg: [f64; 4],
    pub run_total_kg: f64,
    pub assumption: &'static str,
}

/// A region's representative colour: its worst pixel.
#[derive(Debug, Clone, Serialize)]
pub struct RegionColour {
    /// Where: column and row, pixels.
    pub at: [u32; 2],
    /// The source value: RGB code values as read (alpha flattened) or CMYK percent.
    pub source: Vec<f64>,
    /// The source colour, CIELAB D50.
    pub lab: [f64; 3],
    /// The printed colour of `cmyk` (in the frame of the intent).
    pub printed_lab: [f64; 3],
    /// The ink build, percent.
    pub cmyk: [f64; 4],
}

#[derive(Debug, Clone, Serialize)]
pub struct RegionReport {
    pub kind: &'static str,
    /// Column, row, width, height in pixels.
    pub bbox: [u32; 4],
    /// The same box in millimetres (from the image resolution).
    pub bbox_mm: [f64; 4],
    pub pixels: u64,
    pub area_mm2: f64,
    /// Worst and mean value: ΔE2000 (out-of-gamut), total ink percent
    /// (over-ink, rich-black-detail), smallest dot percent (below-min-dot).
    pub max: f64,
    pub mean: f64,
    pub unit: &'static str,
    pub colour: RegionColour,
    /// Out-of-gamut only: whether the source colour is printable under the
    /// limits, and what keeps it out.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub in_gamut: Option<bool>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub limited_by: Option<Vec<&'static str>>,
}

#[derive(Debug, Clone, Serialize)]
pub struct InspectTimings {
    pub read_ms: f64,
    pub separate_ms: f64,
    pub analyse_ms: f64,
    pub total_ms: f64,
}

/// The report of one file.
#[derive(Debug, Clone, Serialize)]
pub struct InspectReport {
    pub file: String,
    /// "rgb" (any non-CMYK input: RGB, gray, with or without alpha) or "cmyk".
    pub kind: &'static str,
    pub width: u32,
    pub height: u32,
    pub resolution_ppi: [f64; 2],
    pub condition: String,
    pub source: String,
    pub notes: Vec<String>,
    pub settings: InspectSettings,
    pub tac: TacSummary,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub gamut: Option<GamutSummary>,
    pub plates: Vec<PlateReport>,
    pub ink_use: InkUse,
    pub regions: Vec<RegionReport>,
    /// Regions found (after speck removal), listed or not.
    pub regions_total: usize,
    pub regions_by_kind: BTreeMap<&'static str, usize>,
    pub rules: Vec<rules::RuleOutcome>,
    pub pass: bool,
    pub timings: InspectTimings,
    pub note: &'static str,
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

/// A map cell being accumulated.
#[derive(Debug, Clone, Copy, Default)]
struct Cell {
    de: f32,
    tac: f32,
    ink: [f32; 4],
    n: u32,
}

/// What one band of rows gives.
struct Band {
    index: usize,
    runs: [Vec<Vec<Run>>; 4],
    cells: Vec<Cell>,
    samples: Vec<usize>,
}

/// Statistics merged over bands.
#[derive(Default)]
struct Tally {
    de_hist: Vec<u64>,
    de_sum: f64,
    de_max: f32,
    de_over: Vec<u64>,
    region_over: u64,
    outside_sum: f64,
    outside_max: f32,
    outside_over: u64,
    small_dots: [u64; 4],
    /// CMYK input: the ink statistics (RGB input has them from the separation).
    ink: InkStats,
    bands: Vec<Band>,
}

impl Tally {
    fn merge(mut self, mut o: Tally) -> Tally {
        if self.de_hist.len() < o.de_hist.len() {
            std::mem::swap(&mut self.de_hist, &mut o.de_hist);
        }
        for (a, b) in self.de_hist.iter_mut().zip(o.de_hist) {
            *a += b;
        }
        if self.de_over.len() < o.de_over.len() {
            std::mem::swap(&mut self.de_over, &mut o.de_over);
        }
        for (a, b) in self.de_over.iter_mut().zip(o.de_over) {
            *a += b;
        }
        self.de_sum += o.de_sum;
        self.de_max = self.de_max.max(o.de_max);
        self.region_over += o.region_over;
        self.outside_sum += o.outside_sum;
        self.outside_max = self.outside_max.max(o.outside_max);
        self.outside_over += o.outside_over;
        for i in 0..4 {
            self.small_dots[i] += o.small_dots[i];
        }
        self.bands.append(&mut o.bands);
        self.ink += o.ink;
        self
    }
}

/// The settings of the per-pixel pass.
struct Pass {
    w: usize,
    h: usize,
    factor: usize,
    map_w: usize,
    keep_maps: bool,
    thresholds: Vec<f32>,
    region_de: f32,
    sample_step: usize,
    /// The code value of 100 % ink.
    max: f64,
    /// Total ink codes above this are over the limit (beyond 0.5 % rounding).
    over_code: u32,
    rich_k_code: u32,
    rich_cmy_code: u32,
    /// Dots of at least one code and below this are below the minimum dot.
    min_dot_code: u32,
    small_dot_regions: bool,
    /// Gather [`InkStats`] (CMYK input).
    ink_stats: bool,
}

impl Pass {
    /// One band of `factor` rows (one row of map cells).
    fn band<T: Copy + Into<u32>>(&self, cmyk: &[T], mut lookup: Option<&mut DeLookup>, band_index: usize, tally: &mut Tally) {
        let (w, factor) = (self.w, self.factor);
        if lookup.is_some() && tally.de_hist.is_empty() {
            tally.de_hist = vec![0; DE_BINS];
            tally.de_over = vec![0; self.thresholds.len()];
        }
        if self.ink_stats && tally.ink.tac_hist.is_empty() {
            tally.ink.tac_hist = vec![0; 801];
        }
        let to_percent = 100.0 / self.max as f32;
        let y0 = band_index * factor;
        let y1 = (y0 + factor).min(self.h);
        let mut band = Band {
            index: band_index,
            runs: Default::default(),
            cells: if self.keep_maps {
                vec![Cell::default(); self.map_w]
            } else {
                Vec::new()
            },
            samples: Vec::new(),
        };
        let mut plate_sum = [0u64; 4];
        for y in y0..y1 {
            let mut rows: [RowRuns; 4] = Default::default();
            let row = &cmyk[y * w * 4..(y + 1) * w * 4];
            for (x, px) in row.chunks_exact(4).enumerate() {
                let ink: [u32; 4] = [px[0].into(), px[1].into(), px[2].into(), px[3].into()];
                let total = ink[0] + ink[1] + ink[2] + ink[3];
                let mut de = 0.0f32;
                if let Some(l) = lookup.as_mut() {
                    let i = y * w + x;
                    let outside;
                    (de, outside) = l.get(i);
                    tally.outside_sum += outside as f64;
                    tally.outside_max = tally.outside_max.max(outside);
                    if outside > self.region_de {
                        tally.outside_over += 1;
                        // Out-of-gamut regions and the a*b* chart's samples:
                        // where and which colours the press cannot reach.
                        rows[0].push(x as u32, outside);
                        if x % self.sample_step == 0 && y % self.sample_step == 0 {
                            band.samples.push(i);
                        }
                    }
                    tally.de_hist[((de * (1.0 / DE_BIN as f32)).round() as usize).min(DE_BINS - 1)] += 1;
                    tally.de_sum += de as f64;
                    tally.de_max = tally.de_max.max(de);
                    for (k, &th) in self.thresholds.iter().enumerate() {
                        tally.de_over[k] += (de > th) as u64;
                    }
                    if de > self.region_de {
                        tally.region_over += 1;
                    }
                }
                if total > self.over_code {
                    rows[1].push(x as u32, total as f32 * to_percent);
                }
                if ink[3] >= self.rich_k_code && ink[0] + ink[1] + ink[2] >= self.rich_cmy_code {
                    rows[2].push(x as u32, total as f32 * to_percent);
                }
                let mut smallest = u32::MAX;
                for c in 0..4 {
                    if ink[c] > 0 && ink[c] < self.min_dot_code {
                        tally.small_dots[c] += 1;
                        smallest = smallest.min(ink[c]);
                    }
                }
                if self.small_dot_regions && smallest != u32::MAX {
                    // Worst = smallest dot: stored negated so the maximum is the smallest.
                    rows[3].push(x as u32, -(smallest as f32) * to_percent);
                }
                if self.ink_stats {
                    let s = &mut tally.ink;
                    let t = total as f64 / self.max;
                    s.tac_hist[((t * 200.0).round() as usize).min(800)] += 1;
                    s.tac_sum += t;
                    s.tac_max = s.tac_max.max(t);
                    s.over += (total > self.over_code) as u64;
                    for c in 0..4 {
                        plate_sum[c] += ink[c] as u64;
                        s.plate_inked[c] += (ink[c] as f64 >= 0.01 * self.max) as u64;
                    }
                }
                if self.keep_maps {
                    let cell = &mut band.cells[x / factor];
                    cell.de = cell.de.max(de);
                    cell.tac = cell.tac.max(total as f32 * to_percent);
                    for c in 0..4 {
                        cell.ink[c] += ink[c] as f32 / self.max as f32;
                    }
                    cell.n += 1;
                }
            }
            for (k, r) in rows.into_iter().enumerate() {
                band.runs[k].push(r.finish());
            }
        }
        if self.ink_stats {
            tally.ink.pixels += ((y1 - y0) * w) as u64;
            for c in 0..4 {
                tally.ink.plate_sum[c] += plate_sum[c] as f64 / self.max;
            }
        }
        tally.bands.push(band);
    }
}

/// An 8-bit RGB key (R << 16 | G << 8 | B) as encoded values 0..1.
fn key_rgb(key: u32) -> [f64; 3] {
    [
        (key >> 16) as f64 / 255.0,
        ((key >> 8) & 255) as f64 / 255.0,
        (key & 255) as f64 / 255.0,
    ]
}

/// A CMYK sample as one key (16 bits per ink).
#[inline]
fn cmyk_key(samples: &Samples, i: usize) -> u64 {
    let q: [u64; 4] = match samples {
        Samples::U8(v) => std::array::from_fn(|c| v[i * 4 + c] as u64 * 257),
        Samples::U16(v) => std::array::from_fn(|c| v[i * 4 + c] as u64),
    };
    q[0] << 48 | q[1] << 32 | q[2] << 16 | q[3]
}

fn cmyk_of_key(k: u64) -> Cmyk {
    let f = |s: u32| ((k >> s) & 0xFFFF) as f64 / 65535.0;
    Cmyk::new(f(48), f(32), f(16), f(0))
}

/// RGB code values of pixel `i` as 0..1.
#[inline]
fn rgb_at(samples: &Samples, i: usize) -> [f64; 3] {
    match samples {
        Samples::U8(v) => std::array::from_fn(|c| v[i * 3 + c] as f64 / 255.0),
        Samples::U16(v) => std::array::from_fn(|c| v[i * 3 + c] as f64 / 65535.0),
    }
}

#[inline]
fn rgb_key(samples: &Samples, i: usize) -> u64 {
    match samples {
        Samples::U8(v) => (v[i * 3] as u64) << 16 | (v[i * 3 + 1] as u64) << 8 | v[i * 3 + 2] as u64,
        Samples::U16(v) => (v[i * 3] as u64) << 32 | (v[i * 3 + 1] as u64) << 16 | v[i * 3 + 2] as u64,
    }
}

/// Everything needed to give the ΔE of a pixel.
struct DeModel<'a> {
    separator: &'a Separator,
    source: &'a RgbSource,
    rgb: &'a Samples,
    cmyk: &'a Samples,
    /// 8-bit RGB: ΔE (as f32 bits) per RGB value, filled for the values present.
    dense: Option<Vec<AtomicU32>>,
    /// The relative colorimetric table (no black point compensation) that
    /// finds each colour's nearest printable colour, where the intent is
    /// another; `None` when the separation itself is that clip.
    reach: Option<SeparationTable>,
    /// 8-bit RGB with `reach`: the distance outside the gamut (f32 bits) per
    /// RGB value.
    dense_outside: Option<Vec<AtomicU32>>,
    distinct: u64,
}

impl<'a> DeModel<'a> {
    fn new(separator: &'a Separator, source: &'a RgbSource, rgb: &'a Samples, cmyk: &'a Samples) -> DeModel<'a> {
        let pixels = rgb.len() / 3;
        let settings = separator.settings();
        let reach = (settings.intent != Intent::Relative || settings.bpc)
            .then(|| table_for_source(&separator.with_intent(Intent::Relative, false), source));
        let mut model = DeModel {
            separator,
            source,
            rgb,
            cmyk,
            dense: None,
            reach,
            dense_outside: None,
            distinct: 0,
        };
        let Samples::U8(v) = rgb else { return model };
        if pixels >= u32::MAX as usize {
            return model;
        }
        // Pass 1: the first pixel of every RGB value present.
        let first: Vec<AtomicU32> = (0..1usize << 24).into_par_iter().map(|_| AtomicU32::new(u32::MAX)).collect();
        const STEP: usize = 1 << 16;
        v.par_chunks(3 * STEP).enumerate().for_each(|(c, chunk)| {
            for (k, px) in chunk.chunks_exact(3).enumerate() {
                let key = (px[0] as usize) << 16 | (px[1] as usize) << 8 | px[2] as usize;
                let i = (c * STEP + k) as u32;
                let slot = &first[key];
                if slot.load(Ordering::Relaxed) > i {
                    slot.fetch_min(i, Ordering::Relaxed);
                }
            }
        });
        let distinct: Vec<(u32, u32)> = first
            .par_iter()
            .enumerate()
            .filter_map(|(k, s)| {
                let i = s.load(Ordering::Relaxed);
                (i != u32::MAX).then_some((k as u32, i))
            })
            .collect();
        // Grouped by the CMYK they separate to: the forward model once per
        // distinct CMYK, the source colour once per distinct RGB.
        let mut items: Vec<(u64, u32)> = distinct.par_iter().map(|&(key, i)| (cmyk_key(cmyk, i as usize), key)).collect();
        items.par_sort_unstable();
        let mut starts: Vec<usize> = Vec::with_capacity(items.len() / 4096 + 2);
        starts.push(0);
        let mut last = 0;
        for k in 1..items.len() {
            if k - last >= 4096 && items[k].0 != items[k - 1].0 {
                starts.push(k);
                last = k;
            }
        }
        starts.push(items.len());
        // The distance outside the gamut, where it is not the ΔE itself, from
        // the same source colours.
        let outside = model.reach.as_ref().map(|reach| {
            (
                reach,
                (0..1usize << 24).into_par_iter().map(|_| AtomicU32::new(0)).collect::<Vec<_>>(),
            )
        });
        starts.par_windows(2).for_each(|span| {
            let group = &items[span[0]..span[1]];
            let rgb: Vec<[f64; 3]> = group.iter().map(|&(_, key)| key_rgb(key)).collect();
            let labs = source.labs_of(&rgb);
            let mut printed = (u64::MAX, Lab::default());
            for ((&(ink, key), lab), rgb) in group.iter().zip(labs).zip(&rgb) {
                if printed.0 != ink {
                    printed = (ink, separator.printed_in_frame(cmyk_of_key(ink)).lab());
                }
                first[key as usize].store((ciede2000(lab, printed.1) as f32).to_bits(), Ordering::Relaxed);
                if let Some((reach, o)) = &outside {
                    let d = ciede2000(lab, separator.printed_relative(reach.lookup(EncodedRgb(*rgb))).lab());
                    o[key as usize].store((d as f32).to_bits(), Ordering::Relaxed);
                }
            }
        });
        model.dense_outside = outside.map(|(_, o)| o);
        model.distinct = distinct.len() as u64;
        model.dense = Some(first);
        model
    }

    /// ΔE of pixel `i`, and its distance outside the gamut, computed directly.
    fn compute(&self, i: usize) -> (f32, f32) {
        let rgb = rgb_at(self.rgb, i);
        let lab = self.source.labs_of(&[rgb])[0];
        let de = ciede2000(lab, self.separator.printed_in_frame(cmyk_of_key(cmyk_key(self.cmyk, i))).lab()) as f32;
        let outside = match &self.reach {
            Some(reach) => ciede2000(lab, self.separator.printed_relative(reach.lookup(EncodedRgb(rgb))).lab()) as f32,
            None => de,
        };
        (de, outside)
    }
}

/// A per-band lookup: the dense table, or a memo of the band's own values.
struct DeLookup<'m, 'a> {
    model: &'m DeModel<'a>,
    memo: HashMap<u64, (f32, f32)>,
}

impl DeLookup<'_, '_> {
    /// ΔE of pixel `i` and its distance outside the gamut.
    #[inline]
    fn get(&mut self, i: usize) -> (f32, f32) {
        let key = rgb_key(self.model.rgb, i);
        if let Some(d) = &self.model.dense {
            let de = f32::from_bits(d[key as usize].load(Ordering::Relaxed));
            let outside = match &self.model.dense_outside {
                Some(o) => f32::from_bits(o[key as usize].load(Ordering::Relaxed)),
                None => de,
            };
            return (de, outside);
        }
        if let Some(&v) = self.memo.get(&key) {
            return v;
        }
        let v = self.model.compute(i);
        self.memo.insert(key, v);
        v
    }
}

fn ms(t: Instant) -> f64 {
    round_to(t.elapsed().as_secs_f64() * 1000.0, 1)
}

fn lab3(l: Lab) -> [f64; 3] {
    [round_to(l.l, 2), round_to(l.a, 2), round_to(l.b, 2)]
}

/// Value at quantile `q` of a histogram with bins of `bin`.
fn hist_quantile(hist: &[u64], q: f64, bin: f64) -> f64 {
    let total: u64 = hist.iter().sum();
    let target = ((total as f64 * q).ceil() as u64).max(1);
    let mut seen = 0;
    for (i, n) in hist.iter().enumerate() {
        seen += n;
        if seen >= target {
            return i as f64 * bin;
        }
    }
    (hist.len().saturating_sub(1)) as f64 * bin
}

/// Inspects one file: RGB and gray as `separate` separates them, CMYK as it
/// would be plated (not re-separated).
pub fn inspect_file(workshop: &Workshop, path: &Path, opts: &InspectOptions) -> Result<Inspection> {
    let started = Instant::now();
    let t = Instant::now();
    let raster = crate::raster::read_raster_with(path, &workshop.options.read_options())?;
    let read_ms = ms(t);
    if raster.layout == Layout::Cmyk {
        let notes = vec![format!(
            "the file's own CMYK is checked for {}, as it would be plated (not re-separated)",
            workshop.separator.condition().name
        )];
        // Ink statistics are gathered in the analysis pass.
        let subject = Subject {
            raster: &raster,
            cmyk: &raster.samples,
            stats: None,
            rgb: None,
            source: None,
            notes,
            source_description: "CMYK".into(),
            compressed_from: None,
            read_ms,
            separate_ms: 0.0,
        };
        analyse(workshop, path, subject, opts, started)
    } else {
        let separated = workshop.separate_raster(path, raster, read_ms)?;
        inspect_separated(workshop, path, &separated, opts, started)
    }
}

/// Inspects a file already separated in memory ([`Workshop::separate_file`]),
/// exactly the CMYK that was (or will be) written: for RGB and gray input with
/// the ΔE of every pixel; for CMYK input, the re-separated CMYK.
pub fn inspect_separated(
    workshop: &Workshop,
    path: &Path,
    s: &SeparatedFile,
    opts: &InspectOptions,
    started: Instant,
) -> Result<Inspection> {
    let separate_ms = s.table_ms + s.separate_ms;
    if s.raster.layout == Layout::Cmyk {
        let mut notes = s.notes.clone();
        notes.push("checked: the re-separated CMYK".into());
        let subject = Subject {
            raster: &s.raster,
            cmyk: &s.image.samples,
            stats: Some(s.stats.clone()),
            rgb: None,
            source: None,
            notes,
            source_description: s.source_description.clone(),
            compressed_from: s.compressed_from,
            read_ms: s.read_ms,
            separate_ms,
        };
        return analyse(workshop, path, subject, opts, started);
    }
    let rgb = crate::job::to_rgb(&s.raster, &mut Vec::new());
    let fallback_source = RgbSource::Named(workshop.options.source_space);
    let source = s.rgb_source.as_ref().unwrap_or(&fallback_source);
    let mut notes = s.notes.clone();
    if s.rgb_source.is_none() {
        notes.push(format!("ΔE measured against {} gray", workshop.options.source_space.name()));
    }
    let subject = Subject {
        raster: &s.raster,
        cmyk: &s.image.samples,
        stats: Some(s.stats.clone()),
        rgb: rgb.as_deref(),
        source: Some(source),
        notes,
        source_description: s.source_description.clone(),
        compressed_from: s.compressed_from,
        read_ms: s.read_ms,
        separate_ms,
    };
    analyse(workshop, path, subject, opts, started)
}

/// What one inspection looks at.
struct Subject<'a> {
    /// The file as read (size, resolution, layout).
    raster: &'a Raster,
    /// The CMYK checked.
    cmyk: &'a Samples,
    /// Its ink statistics when already known.
    stats: Option<InkStats>,
    /// The source RGB and its colour space, for the ΔE (RGB and gray input).
    rgb: Option<&'a Samples>,
    source: Option<&'a RgbSource>,
    notes: Vec<String>,
    source_description: String,
    /// What the perceptual intent compressed from (see [`SeparatedFile`]).
    compressed_from: Option<crate::separation::CompressFrom>,
    read_ms: f64,
    separate_ms: f64,
}

fn analyse(workshop: &Workshop, path: &Path, subject: Subject, opts: &InspectOptions, started: Instant) -> Result<Inspection> {
    let Subject {
        raster,
        cmyk,
        stats,
        rgb,
        source,
        notes,
        source_description,
        compressed_from,
        read_ms,
        separate_ms,
    } = subject;
    let separator = &workshop.separator;
    let tac_limit = separator.settings().tac;
    let t = Instant::now();
    let (w, h) = (raster.width as usize, raster.height as usize);
    let res = raster.resolution.unwrap_or(Resolution::DEFAULT);
    let (mm_x, mm_y) = (25.4 / res.x_ppi, 25.4 / res.y_ppi);
    let px_mm2 = mm_x * mm_y;
    let min_pixels = ((opts.min_area_mm2 / px_mm2).ceil() as u64).max(1);
    let min_dot = separator.condition().min_dot;
    let de_model = match (rgb, source) {
        (Some(rgb), Some(source)) => Some(DeModel::new(separator, source, rgb, cmyk)),
        _ => None,
    };
    let factor = (raster.width.max(raster.height)).div_ceil(MAP_SIDE).max(1) as usize;
    let (map_w, map_h) = (w.div_ceil(factor), h.div_ceil(factor));
    let max = if cmyk.bits() == 8 { 255.0 } else { 65535.0 };
    let ctx = Pass {
        w,
        h,
        factor,
        map_w,
        keep_maps: opts.keep_maps,
        thresholds: opts.de_thresholds.iter().map(|&v| v as f32).collect(),
        region_de: opts.region_de as f32,
        // About 100 000 pixels on a regular grid feed the a*b* chart.
        sample_step: ((w * h) as f64 / 100_000.0).sqrt().ceil().max(1.0) as usize,
        max,
        // Integer thresholds on the code values, exact for the fractions they stand for.
        over_code: ((tac_limit + 0.005) * max).floor() as u32,
        rich_k_code: ((opts.rich_black_k - 1e-4) * max).ceil() as u32,
        rich_cmy_code: ((opts.rich_black_cmy - 1e-4) * max).ceil() as u32,
        min_dot_code: (min_dot * max).ceil() as u32,
        small_dot_regions: opts.small_dot_regions,
        ink_stats: stats.is_none(),
    };
    let tally = (0..map_h)
        .into_par_iter()
        .fold(Tally::default, |mut tally, band_index| {
            let mut lookup = de_model.as_ref().map(|m| DeLookup {
                model: m,
                memo: HashMap::new(),
            });
            match cmyk {
                Samples::U8(v) => ctx.band(v, lookup.as_mut(), band_index, &mut tally),
                Samples::U16(v) => ctx.band(v, lookup.as_mut(), band_index, &mut tally),
            }
            tally
        })
        .reduce(Tally::default, Tally::merge);
    let mut tally = tally;
    let stats = stats.unwrap_or_else(|| std::mem::take(&mut tally.ink));
    tally.bands.sort_by_key(|b| b.index);

    // Regions per kind.
    let mut kind_rows: [Vec<Vec<Run>>; 4] = Default::default();
    for band in &mut tally.bands {
        for k in 0..4 {
            kind_rows[k].append(&mut band.runs[k]);
        }
    }
    let side = ((opts.rich_black_detail_mm / mm_x.min(mm_y)).round() as u32).max(2);
    let mut regions_by_kind = BTreeMap::new();
    for kind in KINDS {
        regions_by_kind.insert(kind, 0usize);
    }
    let mut regions_total = 0;
    let mut found: Vec<(usize, Region)> = Vec::new();
    for (k, rows) in kind_rows.iter().enumerate() {
        let regions = regions::label(rows, min_pixels);
        let regions: Vec<Region> = if k == 2 {
            regions.into_par_iter().filter(|r| regions::is_fine_detail(r, side)).collect()
        } else {
            regions
        };
        *regions_by_kind.entry(KINDS[k]).or_insert(0) += regions.len();
        regions_total += regions.len();
        found.extend(regions.into_iter().take(opts.max_regions).map(|r| (k, r)));
    }
    drop(kind_rows);
    let working = |lab: Lab| match separator.settings().intent {
        Intent::Absolute => separator.media_white().relative_lab_from_absolute(lab),
        _ => lab,
    };
    let region_reports: Vec<RegionReport> = found
        .par_iter()
        .map(|(k, r)| {
            let (x, y) = r.max_at;
            let i = y as usize * w + x as usize;
            let ink = cmyk_of_key(cmyk_key(cmyk, i));
            let printed = separator.printed_in_frame(ink).lab();
            let (source_value, lab) = match (rgb, source) {
                (Some(rgb), Some(src)) => {
                    let max = if rgb.bits() == 8 { 255.0 } else { 65535.0 };
                    let v = rgb_at(rgb, i);
                    (v.iter().map(|c| (c * max).round()).collect(), src.labs_of(&[v])[0])
                }
                _ => (ink.to_percent().iter().map(|&v| round_to(v, 1)).collect(), printed),
            };
            let (in_gamut, limited_by) = if *k == 0 {
                let (inside, limits) = separator.gamut_check(RelativeLab::new(working(lab)));
                (Some(inside), Some(limits.iter().map(|l| l.name()).collect()))
            } else {
                (None, None)
            };
            let sign = if *k == 3 { -1.0 } else { 1.0 };
            let (max, mean) = (sign * r.max as f64, sign * r.mean());
            RegionReport {
                kind: KINDS[*k],
                bbox: [r.x, r.y, r.w, r.h],
                bbox_mm: [
                    round_to(r.x as f64 * mm_x, 2),
                    round_to(r.y as f64 * mm_y, 2),
                    round_to(r.w as f64 * mm_x, 2),
                    round_to(r.h as f64 * mm_y, 2),
                ],
                pixels: r.pixels,
                area_mm2: round_to(r.pixels as f64 * px_mm2, 3),
                max: round_to(max, 2),
                mean: round_to(mean, 2),
                unit: if *k == 0 { "ΔE2000" } else { "%" },
                colour: RegionColour {
                    at: [x, y],
                    source: source_value,
                    lab: lab3(lab),
                    printed_lab: lab3(printed),
                    cmyk: ink.to_percent().map(|v| round_to(v, 1)),
                },
                in_gamut,
                limited_by,
            }
        })
        .collect();

    let px = (w * h).max(1) as f64;
    let frac = |n: u64| round_to(n as f64 / px, 6);
    let gamut = de_model.as_ref().map(|m| GamutSummary {
        mean_de: round_to(tally.de_sum / px, 2),
        p95_de: round_to(hist_quantile(&tally.de_hist, 0.95, DE_BIN), 2),
        max_de: round_to(tally.de_max as f64, 2),
        over_fraction: frac(tally.region_over),
        threshold: opts.region_de,
        over: opts
            .de_thresholds
            .iter()
            .zip(&tally.de_over)
            .map(|(&t, &n)| ThresholdShare {
                threshold: t,
                fraction: frac(n),
            })
            .collect(),
        outside_fraction: frac(tally.outside_over),
        outside_mean_de: round_to(tally.outside_sum / px, 2),
        outside_max_de: round_to(tally.outside_max as f64, 2),
        distinct_values: if m.dense.is_some() { m.distinct } else { 0 },
    });
    let tac = TacSummary {
        limit: round_to(crate::settings::Coverage(tac_limit).percent().0, 1),
        max: round_to(stats.tac_max * 100.0, 1),
        p99: stats.tac_quantile(0.99),
        mean: round_to(stats.tac_sum / px * 100.0, 1),
        over_fraction: frac(stats.over),
    };
    let plates: Vec<PlateReport> = Ink::ALL
        .iter()
        .map(|&ink| PlateReport {
            ink: ink.name(),
            mean_percent: round_to(stats.plate_sum[ink.index()] / px * 100.0, 2),
            inked_fraction: frac(stats.plate_inked[ink.index()]),
            below_min_dot_fraction: frac(tally.small_dots[ink.index()]),
        })
        .collect();
    let ink_use = ink_use(&stats, separator, opts);

    // The a*b* chart: distinct out-of-gamut source colours from the sample grid.
    let mut out_of_gamut_labs = Vec::new();
    if let (Some(rgb), Some(src)) = (rgb, source) {
        let mut picked: Vec<usize> = tally.bands.iter().flat_map(|b| b.samples.iter().copied()).collect();
        let mut seen = std::collections::HashSet::new();
        picked.retain(|&i| seen.insert(rgb_key(rgb, i)));
        let stride = picked.len().div_ceil(1500).max(1);
        let values: Vec<[f64; 3]> = picked.iter().step_by(stride).map(|&i| rgb_at(rgb, i)).collect();
        out_of_gamut_labs = src.labs_of(&values);
    }
    let maps = opts.keep_maps.then(|| {
        let cells: Vec<Cell> = tally.bands.iter().flat_map(|b| b.cells.iter().copied()).collect();
        let srgb = RgbSpace::Srgb.converter();
        let base = cells
            .par_iter()
            .map(|c| {
                let n = c.n.max(1) as f64;
                let ink = Cmyk::new(c.ink[0] as f64 / n, c.ink[1] as f64 / n, c.ink[2] as f64 / n, c.ink[3] as f64 / n);
                let rgb = srgb.from_lab(separator.printed_relative(ink).lab()).0;
                rgb.map(|v| (v.clamp(0.0, 1.0) * 255.0).round() as u8)
            })
            .collect();
        MapData {
            width: map_w as u32,
            height: map_h as u32,
            factor: factor as u32,
            base,
            de: de_model.as_ref().map(|_| cells.iter().map(|c| c.de).collect()),
            tac: cells.iter().map(|c| c.tac).collect(),
        }
    });

    let rule_texts: Vec<String> = opts.rules.iter().map(|r| r.text.clone()).collect();
    let mut report = InspectReport {
        file: path.display().to_string(),
        kind: if raster.layout == Layout::Cmyk { "cmyk" } else { "rgb" },
        width: raster.width,
        height: raster.height,
        resolution_ppi: [round_to(res.x_ppi, 2), round_to(res.y_ppi, 2)],
        condition: separator.condition().name.clone(),
        source: source_description,
        notes,
        settings: InspectSettings {
            separation: crate::report::SettingsReport {
                compress_from: compressed_from.map(crate::separation::CompressFrom::name),
                ..workshop.settings_report.clone()
            },
            de_thresholds: opts.de_thresholds.clone(),
            region_de: opts.region_de,
            min_area_mm2: opts.min_area_mm2,
            min_dot_percent: round_to(min_dot * 100.0, 2),
            rich_black: RichBlackSettings {
                k_percent: round_to(opts.rich_black_k * 100.0, 1),
                cmy_percent: round_to(opts.rich_black_cmy * 100.0, 1),
                detail_mm: opts.rich_black_detail_mm,
                basis: "common practice",
            },
            fail_if: if rule_texts.is_empty() {
                vec![rules::DEFAULT_RULE.to_string()]
            } else {
                rule_texts
            },
        },
        tac,
        gamut,
        plates,
        ink_use,
        regions: region_reports,
        regions_total,
        regions_by_kind,
        rules: Vec::new(),
        pass: true,
        timings: InspectTimings {
            read_ms,
            separate_ms,
            analyse_ms: ms(t),
            total_ms: ms(started),
        },
        note: crate::report::PREDICTION_NOTE,
    };
    let default_rule;
    let applied: &[rules::Rule] = if opts.rules.is_empty() {
        default_rule = [rules::Rule::parse(rules::DEFAULT_RULE)?];
        &default_rule
    } else {
        &opts.rules
    };
    report.rules = applied.iter().map(|r| r.evaluate(&report)).collect();
    report.pass = report.rules.iter().all(|o| !o.failed);
    Ok(Inspection {
        report,
        maps,
        de_hist: de_model.as_ref().map(|_| std::mem::take(&mut tally.de_hist)),
        tac_hist: stats.tac_hist.clone(),
        out_of_gamut_labs,
    })
}

fn ink_use(stats: &InkStats, separator: &Separator, opts: &InspectOptions) -> InkUse {
    let px = stats.pixels.max(1) as f64;
    let condition_film = separator.condition().ink_film;
    let (film, film_basis) = match opts.ink_film {
        Some(f) => (f, "given"),
        None if condition_film == crate::press::DEFAULT_INK_FILM => (condition_film, "common practice (sheetfed offset, coated paper)"),
        None => (condition_film, "printing condition"),
    };
    let sheet_m2 = opts.sheet_mm[0] * opts.sheet_mm[1] / 1e6;
    let per_copy: [f64; 4] = std::array::from_fn(|i| stats.plate_sum[i] / px * sheet_m2 * film[i]);
    let run_kg: [f64; 4] = per_copy.map(|g| g * opts.copies as f64 / 1000.0);
    InkUse {
        sheet_mm: opts.sheet_mm,
        sheet_basis: if opts.sheet_given {
            "given"
        } else {
            "common practice (B1-class sheetfed sheet)"
        },
        copies: opts.copies,
        copies_basis: if opts.copies_given { "given" } else { "common practice default" },
        film_g_per_m2: film,
        film_basis,
        per_copy_g: per_copy.map(|v| round_to(v, 3)),
        run_kg: run_kg.map(|v| round_to(v, 3)),
        run_total_kg: round_to(run_kg.iter().sum(), 3),
        assumption: "the file's mean coverage over the whole sheet (the artwork or its copies fill the sheet); no waste or spoilage",
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn histogram_quantile_is_the_first_bin_reaching_the_share() {
        let mut h = vec![0u64; 10];
        h[1] = 90;
        h[7] = 10;
        assert_eq!(hist_quantile(&h, 0.9, 0.5), 0.5);
        assert_eq!(hist_quantile(&h, 0.95, 0.5), 3.5);
    }

    /// The memo per distinct value gives exactly what a direct computation
    /// per pixel gives, for repeated and unrelated values alike.
    #[test]
    fn memoised_delta_e_is_the_direct_computation() {
        let condition = crate::press::builtin::coated_offset();
        let settings = crate::separation::SeparationSettings::for_condition(&condition);
        let separator = Separator::new(condition, settings).unwrap();
        let source = RgbSource::Named(RgbSpace::Srgb);
        let mut state = 0x5EED_u64;
        let mut next = || {
            state = state.wrapping_mul(6364136223846793005).wrapping_add(1442695040888963407);
            (state >> 56) as u8
        };
        let pixels = 3000;
        // Few distinct RGB values (so most repeat), each with its own CMYK;
        // some CMYK shared between RGB values.
        let palette: Vec<([u8; 3], [u8; 4])> = (0..200)
            .map(|k| {
                (
                    [next(), next(), next()],
                    if k % 3 == 0 {
                        [10, 20, 30, 40]
                    } else {
                        [next(), next(), next(), next()]
                    },
                )
            })
            .collect();
        let (mut rgb, mut cmyk) = (Vec::new(), Vec::new());
        for _ in 0..pixels {
            let (r, c) = palette[next() as usize % palette.len()];
            rgb.extend(r);
            cmyk.extend(c);
        }
        let (rgb, cmyk) = (Samples::U8(rgb), Samples::U8(cmyk));
        let model = DeModel::new(&separator, &source, &rgb, &cmyk);
        assert!(model.dense.is_some());
        let mut lookup = DeLookup {
            model: &model,
            memo: HashMap::new(),
        };
        for i in 0..pixels {
            let (got, want) = (lookup.get(i), model.compute(i));
            assert_eq!(
                (got.0.to_bits(), got.1.to_bits()),
                (want.0.to_bits(), want.1.to_bits()),
                "pixel {i}"
            );
        }
    }

    #[test]
    fn cmyk_keys_round_trip() {
        let s = Samples::U8(vec![255, 0, 128, 3]);
        let c = cmyk_of_key(cmyk_key(&s, 0));
        assert_eq!(c.c, 1.0);
        assert_eq!(c.m, 0.0);
        assert!((c.y - 128.0 / 255.0).abs() < 1e-12 && (c.k - 3.0 / 255.0).abs() < 1e-12);
    }
}
