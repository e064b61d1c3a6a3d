//! The pixel pass: one walk over the CMYK checked, in parallel bands of rows
//! (one band per row of map cells), that tallies the ΔE2000 and the distance
//! outside the gamut of every pixel (through [`super::delta_e`]), total ink,
//! small dots and rich black, collects the runs of flagged pixels per kind
//! for [`super::regions`], and accumulates the reduced maps.

use super::delta_e::{DeLookup, DeModel};
use super::regions::{RowRuns, Run};
use super::{DE_BIN, DE_BINS, InspectOptions, MAP_SIDE};
use crate::job::InkStats;
use crate::raster::{Raster, Samples};
use crate::separation::Separator;
use rayon::prelude::*;
use std::collections::HashMap;

/// A map cell being accumulated.
#[derive(Debug, Clone, Copy, Default)]
pub(super) struct Cell {
    pub de: f32,
    pub tac: f32,
    pub ink: [f32; 4],
    pub n: u32,
}

/// What one band of rows gives.
pub(super) struct Band {
    pub index: usize,
    /// Per region kind (in [`super::KINDS`] order), the runs of each row.
    pub runs: [Vec<Vec<Run>>; 4],
    pub cells: Vec<Cell>,
    /// Out-of-gamut pixels on the sample grid of the a*b* chart.
    pub samples: Vec<usize>,
}

/// Statistics merged over bands.
#[derive(Default)]
pub(super) struct Tally {
    pub de_hist: Vec<u64>,
    pub de_sum: f64,
    pub de_max: f32,
    pub de_over: Vec<u64>,
    pub region_over: u64,
    pub outside_sum: f64,
    pub outside_max: f32,
    pub outside_over: u64,
    pub small_dots: [u64; 4],
    /// CMYK input: the ink statistics (RGB input has them from the separation).
    pub ink: InkStats,
    /// In band order after [`Pass::run`].
    pub bands: Vec<Band>,
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
pub(super) struct Pass {
    pub w: usize,
    pub h: usize,
    /// Each map cell covers `factor` × `factor` pixels.
    pub factor: usize,
    pub map_w: usize,
    keep_maps: bool,
    thresholds: Vec<f32>,
    region_de: f32,
    sample_step: usize,
    /// The code value of 100 % ink.
    max: f64,
    /// Percent per code value.
    to_percent: f32,
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
    /// The pass over `cmyk` (the samples of `raster`'s size) for `separator`'s
    /// limits and condition; `ink_stats` when the ink statistics are not known yet.
    pub fn new(raster: &Raster, cmyk: &Samples, separator: &Separator, opts: &InspectOptions, ink_stats: bool) -> Pass {
        let (w, h) = (raster.width as usize, raster.height as usize);
        let tac_limit = separator.settings().tac;
        let min_dot = separator.condition().min_dot;
        let factor = (raster.width.max(raster.height)).div_ceil(MAP_SIDE).max(1) as usize;
        let max = if cmyk.bits() == 8 { 255.0 } else { 65535.0 };
        Pass {
            w,
            h,
            factor,
            map_w: w.div_ceil(factor),
            keep_maps: opts.keep_maps,
            thresholds: opts.de_thresholds.iter().map(|&v| v as f32).collect(),
            region_de: opts.region_de as f32,
            // About 100 000 pixels on a regular grid feed the a*b* chart.
            sample_step: ((w * h) as f64 / 100_000.0).sqrt().ceil().max(1.0) as usize,
            max,
            to_percent: 100.0 / max as f32,
            // Integer thresholds on the code values, exact for the fractions they stand for.
            over_code: ((tac_limit + 0.005) * max).floor() as u32,
            rich_k_code: ((opts.rich_black_k - 1e-4) * max).ceil() as u32,
            rich_cmy_code: ((opts.rich_black_cmy - 1e-4) * max).ceil() as u32,
            min_dot_code: (min_dot * max).ceil() as u32,
            small_dot_regions: opts.small_dot_regions,
            ink_stats,
        }
    }

    /// Rows of map cells (bands).
    pub fn map_h(&self) -> usize {
        self.h.div_ceil(self.factor)
    }

    /// The pass over every band, in parallel; the bands come back in order.
    pub fn run(&self, cmyk: &Samples, de_model: Option<&DeModel>) -> Tally {
        let mut tally = (0..self.map_h())
            .into_par_iter()
            .fold(Tally::default, |mut tally, band_index| {
                let mut lookup = de_model.map(|m| DeLookup {
                    model: m,
                    memo: HashMap::new(),
                });
                match cmyk {
                    Samples::U8(v) => self.band(v, lookup.as_mut(), band_index, &mut tally),
                    Samples::U16(v) => self.band(v, lookup.as_mut(), band_index, &mut tally),
                }
                tally
            })
            .reduce(Tally::default, Tally::merge);
        tally.bands.sort_by_key(|b| b.index);
        tally
    }

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
        let to_percent = self.to_percent;
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
                    de = self.colour_pixel(l, x, y, &mut rows[0], &mut band.samples, tally);
                }
                self.ink_pixel(ink, total, x, &mut rows, tally, &mut plate_sum);
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

    /// The ΔE of pixel (x, y) and its distance outside the gamut, into the
    /// tally; a pixel out of gamut joins the row's out-of-gamut runs (and the
    /// a*b* chart's samples when on its grid). Returns the ΔE.
    #[inline(always)]
    fn colour_pixel(&self, l: &mut DeLookup, x: usize, y: usize, runs: &mut RowRuns, samples: &mut Vec<usize>, tally: &mut Tally) -> f32 {
        let i = y * self.w + x;
        let (de, outside) = l.get(i);
        tally.outside_sum += outside as f64;
        tally.outside_max = tally.outside_max.max(outside);
        if outside > self.region_de {
            tally.outside_over += 1;
            // Out-of-gamut regions and the a*b* chart's samples:
            // where and which colours the press cannot reach.
            runs.push(x as u32, outside);
            if x.is_multiple_of(self.sample_step) && y.is_multiple_of(self.sample_step) {
                samples.push(i);
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
        de
    }

    /// The ink checks of one pixel (over the limit, rich black, small dots)
    /// into the row's runs and the tally, and its ink statistics when gathered.
    #[inline(always)]
    fn ink_pixel(&self, ink: [u32; 4], total: u32, x: usize, rows: &mut [RowRuns; 4], tally: &mut Tally, plate_sum: &mut [u64; 4]) {
        let to_percent = self.to_percent;
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
    }
}
