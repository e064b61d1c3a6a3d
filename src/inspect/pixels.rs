//! The pixel pass: one walk over the CMYK checked, band by band of rows as
//! they come from the reader or the separation, that tallies the ΔE2000
//! and the distance outside the gamut of every pixel (through
//! [`super::delta_e`]), total ink, small dots and rich black, joins the runs
//! of flagged pixels per kind into regions ([`super::regions::Labeler`]),
//! and accumulates the reduced maps.
//!
//! Only the band in hand is held per pixel; the tallies, the map cells (at
//! most [`super::MAP_SIDE`] on a side), the chart's sample and the open
//! regions are carried from band to band. Within a band, the rows of each
//! row of map cells are walked in parallel; every sum is made per row, then
//! over the rows in order, so the result does not depend on the band height.

use super::delta_e::{DeLookup, DeModel, cmyk_key, rgb_key};
use super::regions::{Labeler, Region, RowRuns, Run};
use super::{DE_BIN, DE_BINS, InspectOptions, MAP_SIDE};
use crate::job::InkStats;
use crate::raster::Samples;
use crate::separation::Separator;
use rayon::prelude::*;
use std::collections::HashSet;

/// A map cell being accumulated.
#[derive(Debug, Clone, Copy, Default)]
pub(super) struct Cell {
    pub de: f32,
    pub tac: f32,
    pub ink: [f32; 4],
    pub n: u32,
}

/// Statistics merged over the picture.
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
}

impl Tally {
    /// Adds the counts of `o` (its sums are per row, added in row order by the caller).
    fn add_counts(&mut self, o: Tally) {
        add_hist(&mut self.de_hist, o.de_hist);
        add_hist(&mut self.de_over, o.de_over);
        add_hist(&mut self.ink.tac_hist, o.ink.tac_hist);
        self.de_max = self.de_max.max(o.de_max);
        self.region_over += o.region_over;
        self.outside_max = self.outside_max.max(o.outside_max);
        self.outside_over += o.outside_over;
        for i in 0..4 {
            self.small_dots[i] += o.small_dots[i];
            self.ink.plate_inked[i] += o.ink.plate_inked[i];
        }
        self.ink.pixels += o.ink.pixels;
        self.ink.tac_max = self.ink.tac_max.max(o.ink.tac_max);
        self.ink.over += o.ink.over;
    }
}

fn add_hist(a: &mut Vec<u64>, b: Vec<u64>) {
    if a.len() < b.len() {
        a.resize(b.len(), 0);
    }
    for (x, y) in a.iter_mut().zip(b) {
        *x += y;
    }
}

/// What one row gives beside the counts: its runs per region kind and its sums.
#[derive(Default)]
struct RowOut {
    runs: [Vec<Run>; 4],
    de_sum: f64,
    outside_sum: f64,
    tac_sum: f64,
    plate: [u64; 4],
}

/// What the rows of a band within one row of map cells give.
struct Piece {
    counts: Tally,
    rows: Vec<RowOut>,
    /// Source RGB keys of out-of-gamut pixels on the chart's sample grid, row-major.
    samples: Vec<u64>,
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
    /// The pass over a `width` × `height` picture whose CMYK has `bits` per
    /// sample, for `separator`'s limits and condition; `ink_stats` when the
    /// ink statistics are not known otherwise.
    pub fn new(width: u32, height: u32, bits: u8, separator: &Separator, opts: &InspectOptions, ink_stats: bool) -> Pass {
        let (w, h) = (width as usize, height as usize);
        let tac_limit = separator.settings().tac;
        let min_dot = separator.condition().min_dot;
        let factor = (width.max(height)).div_ceil(MAP_SIDE).max(1) as usize;
        let max = if bits == 8 { 255.0 } else { 65535.0 };
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

    /// Rows of map cells.
    pub fn map_h(&self) -> usize {
        self.h.div_ceil(self.factor)
    }

    /// The rows `ya..yb` of `band` (all in one row of map cells, whose
    /// `cells` they add to); `cmyk` is the band's CMYK samples.
    fn piece<T: Copy + Into<u32>>(&self, ya: usize, yb: usize, band: &BandIn, cmyk: &[T], cells: &mut [Cell]) -> Piece {
        let (w, factor, band_y) = (self.w, self.factor, band.y);
        let mut lookup = match (band.model, band.rgb) {
            (Some(model), Some(rgb)) => Some(DeLookup::new(model, rgb, band.cmyk)),
            _ => None,
        };
        let mut counts = Tally::default();
        if lookup.is_some() {
            counts.de_hist = vec![0; DE_BINS];
            counts.de_over = vec![0; self.thresholds.len()];
        }
        if self.ink_stats {
            counts.ink.tac_hist = vec![0; 801];
        }
        let mut piece = Piece {
            counts,
            rows: Vec::with_capacity(yb - ya),
            samples: Vec::new(),
        };
        let to_percent = self.to_percent;
        for y in ya..yb {
            let mut runs: [RowRuns; 4] = Default::default();
            let mut out = RowOut::default();
            let first = (y - band_y) * w;
            let row = &cmyk[first * 4..(first + w) * 4];
            for (x, px) in row.chunks_exact(4).enumerate() {
                let ink: [u32; 4] = [px[0].into(), px[1].into(), px[2].into(), px[3].into()];
                let total = ink[0] + ink[1] + ink[2] + ink[3];
                let mut de = 0.0f32;
                if let Some(l) = lookup.as_mut() {
                    de = self.colour_pixel(l, first + x, x, y, &mut runs[0], &mut piece, &mut out);
                }
                self.ink_pixel(ink, total, x, &mut runs, &mut piece.counts, &mut out);
                if self.keep_maps {
                    let cell = &mut cells[x / factor];
                    cell.de = cell.de.max(de);
                    cell.tac = cell.tac.max(total as f32 * to_percent);
                    for c in 0..4 {
                        cell.ink[c] += ink[c] as f32 / self.max as f32;
                    }
                    cell.n += 1;
                }
            }
            for (k, r) in runs.into_iter().enumerate() {
                out.runs[k] = r.finish();
            }
            piece.rows.push(out);
        }
        if self.ink_stats {
            piece.counts.ink.pixels += ((yb - ya) * w) as u64;
        }
        piece
    }

    /// The ΔE of pixel `i` of the band (column `x` of row `y`) and its
    /// distance outside the gamut, into the tally; a pixel out of gamut joins
    /// the row's out-of-gamut runs (and the a*b* chart's samples when on its
    /// grid). Returns the ΔE.
    #[inline(always)]
    #[allow(clippy::too_many_arguments)]
    fn colour_pixel(&self, l: &mut DeLookup, i: usize, x: usize, y: usize, runs: &mut RowRuns, piece: &mut Piece, out: &mut RowOut) -> f32 {
        let (de, outside) = l.get(i);
        let tally = &mut piece.counts;
        out.outside_sum += outside as f64;
        tally.outside_max = tally.outside_max.max(outside);
        if outside > self.region_de {
            tally.outside_over += 1;
            // Out-of-gamut regions and the a*b* chart's samples:
            // where and which colours the press cannot reach.
            runs.push(x as u32, outside);
            if x.is_multiple_of(self.sample_step) && y.is_multiple_of(self.sample_step) {
                piece.samples.push(l.key(i));
            }
        }
        tally.de_hist[((de * (1.0 / DE_BIN as f32)).round() as usize).min(DE_BINS - 1)] += 1;
        out.de_sum += de as f64;
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
    fn ink_pixel(&self, ink: [u32; 4], total: u32, x: usize, runs: &mut [RowRuns; 4], tally: &mut Tally, out: &mut RowOut) {
        let to_percent = self.to_percent;
        if total > self.over_code {
            runs[1].push(x as u32, total as f32 * to_percent);
        }
        if ink[3] >= self.rich_k_code && ink[0] + ink[1] + ink[2] >= self.rich_cmy_code {
            runs[2].push(x as u32, total as f32 * to_percent);
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
            runs[3].push(x as u32, -(smallest as f32) * to_percent);
        }
        if self.ink_stats {
            let s = &mut tally.ink;
            let t = total as f64 / self.max;
            s.tac_hist[((t * 200.0).round() as usize).min(800)] += 1;
            out.tac_sum += t;
            s.tac_max = s.tac_max.max(t);
            s.over += (total > self.over_code) as u64;
            for c in 0..4 {
                out.plate[c] += ink[c] as u64;
                s.plate_inked[c] += (ink[c] as f64 >= 0.01 * self.max) as u64;
            }
        }
    }
}

/// How regions are kept: specks under `min_pixels` dropped, the largest
/// `keep` of each kind listed, rich black only in detail narrower than
/// `detail_side` pixels.
pub(super) struct RegionRules {
    pub min_pixels: u64,
    pub keep: usize,
    pub detail_side: u32,
}

/// One band as the pass walks it.
pub(super) struct BandIn<'b, 'm> {
    /// Its first row.
    pub y: usize,
    pub rows: usize,
    pub cmyk: &'b Samples,
    /// RGB and gray input: the source RGB (alpha flattened) and the ΔE model, ready for this band.
    pub rgb: Option<&'b Samples>,
    pub model: Option<&'b DeModel<'m>>,
}

/// The pass in progress: everything carried from band to band.
pub(super) struct Scan<'p> {
    pass: &'p Pass,
    tally: Tally,
    /// Per region kind, in [`super::KINDS`] order.
    labelers: [Labeler; 4],
    /// The map cells, row-major (empty without maps).
    cells: Vec<Cell>,
    samples: Vec<u64>,
    sampled: HashSet<u64>,
    /// The next row expected.
    next_row: usize,
}

/// The pass over the whole picture.
pub(super) struct Scanned {
    pub tally: Tally,
    /// Per region kind: the listed regions in report order and how many were found.
    pub regions: [(Vec<Region>, usize); 4],
    pub cells: Vec<Cell>,
    /// Distinct source RGB keys of the out-of-gamut pixels on the chart's
    /// sample grid, in row-major order of their first pixel.
    pub samples: Vec<u64>,
}

impl<'p> Scan<'p> {
    pub fn new(pass: &'p Pass, rules: &RegionRules) -> Scan<'p> {
        let labeler = |detail: Option<u32>| Labeler::new(pass.w as u32, rules.min_pixels, rules.keep, detail);
        Scan {
            pass,
            tally: Tally::default(),
            labelers: [labeler(None), labeler(None), labeler(Some(rules.detail_side)), labeler(None)],
            cells: if pass.keep_maps {
                vec![Cell::default(); pass.map_w * pass.map_h()]
            } else {
                Vec::new()
            },
            samples: Vec::new(),
            sampled: HashSet::new(),
            next_row: 0,
        }
    }

    /// The next band, from the row after the last band's.
    pub fn band(&mut self, band: &BandIn) {
        let pass = self.pass;
        let (y, rows, cmyk, rgb) = (band.y, band.rows, band.cmyk, band.rgb);
        debug_assert_eq!(y, self.next_row);
        if rows == 0 {
            return;
        }
        let (y1, f, map_w) = (y + rows, pass.factor, pass.map_w);
        let (cr0, cr1) = (y / f, (y1 - 1) / f);
        let piece = |cr: usize, cells: &mut [Cell]| {
            let (ya, yb) = ((cr * f).max(y), ((cr + 1) * f).min(y1));
            match cmyk {
                Samples::U8(v) => pass.piece(ya, yb, band, v, cells),
                Samples::U16(v) => pass.piece(ya, yb, band, v, cells),
            }
        };
        let pieces: Vec<Piece> = if pass.keep_maps {
            self.cells[cr0 * map_w..(cr1 + 1) * map_w]
                .par_chunks_mut(map_w)
                .enumerate()
                .map(|(k, cells)| piece(cr0 + k, cells))
                .collect()
        } else {
            (cr0..=cr1).into_par_iter().map(|cr| piece(cr, &mut [])).collect()
        };
        let (w, max) = (pass.w, pass.max);
        let mut row_y = y;
        for p in pieces {
            self.tally.add_counts(p.counts);
            for mut out in p.rows {
                self.tally.de_sum += out.de_sum;
                self.tally.outside_sum += out.outside_sum;
                self.tally.ink.tac_sum += out.tac_sum;
                for c in 0..4 {
                    self.tally.ink.plate_sum[c] += out.plate[c] as f64 / max;
                }
                let first = (row_y - y) * w;
                for (k, runs) in out.runs.iter_mut().enumerate() {
                    for run in runs.iter_mut() {
                        let i = first + run.max_x as usize;
                        run.tag = [cmyk_key(cmyk, i), rgb.map_or(0, |rgb| rgb_key(rgb, i))];
                    }
                    self.labelers[k].push_row(runs);
                }
                row_y += 1;
            }
            for key in p.samples {
                if self.sampled.insert(key) {
                    self.samples.push(key);
                }
            }
        }
        self.next_row = y1;
    }

    pub fn finish(self) -> Scanned {
        let [a, b, c, d] = self.labelers;
        Scanned {
            tally: self.tally,
            regions: [a.finish_all(), b.finish_all(), c.finish_all(), d.finish_all()],
            cells: self.cells,
            samples: self.samples,
        }
    }
}
