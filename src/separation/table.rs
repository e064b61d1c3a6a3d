//! The separation table: the whole chain from source RGB to CMYK evaluated
//! once on a regular grid, then applied to pixels by tetrahedral
//! interpolation (Kasson, Nin, Plouffe & Hafner, "Performing color space
//! conversions with three-dimensional linear interpolation", J. Electronic
//! Imaging 4 (1995) 226–250; the form used by ICC colour management).
//!
//! Tetrahedral interpolation is a convex combination of four nodes, so every
//! interpolated value keeps the linear constraints each node meets: the ink
//! limit and the maximum black hold exactly between nodes as well.

use super::engine::{SourceMapping, Separator};
use crate::colour::Lab;
use crate::ink::Cmyk;
use rayon::prelude::*;

/// Fixed-point scale of interpolation weights.
pub(crate) const WEIGHT_BITS: u32 = 15;
pub(crate) const WEIGHT_ONE: u32 = 1 << WEIGHT_BITS;

/// A 3-D table from source RGB (encoded, 0..1 on each axis) to CMYK.
#[derive(Debug, Clone)]
pub struct SeparationTable {
    grid: usize,
    /// CMYK per node as 0..65535, node index (r·N + g)·N + b.
    nodes: Vec<[u16; 4]>,
    /// Source pure black (all channels 0) prints as black ink only, at the
    /// maximum black (16-bit value), when set.
    pure_black: Option<u16>,
}

/// Index and fixed-point fraction of one input code value on the grid.
#[derive(Debug, Clone, Copy)]
pub(crate) struct Position {
    pub(crate) index: u32,
    pub(crate) fraction: u32,
}

pub(crate) fn position(value: u32, max: u32, grid: usize) -> Position {
    let scaled = value as u64 * (grid as u64 - 1);
    let mut index = (scaled / max as u64) as u32;
    let mut fraction = (((scaled % max as u64) << WEIGHT_BITS) + max as u64 / 2) / max as u64;
    if index as usize >= grid - 1 {
        index = grid as u32 - 2;
        fraction = WEIGHT_ONE as u64;
    }
    Position { index, fraction: fraction as u32 }
}

/// Lightness range above the black point over which the table is smoothed.
const SHADOW_RANGE: f64 = 13.0;

/// Smoothing passes in the shadows.
const SHADOW_PASSES: usize = 3;

/// Used with relative colorimetric with black point compensation, which
/// carries the source black onto the press black point so that the whole
/// shadow range is reproduced (see `Separator::smooths_shadows_in_ink`; the
/// perceptual intent shapes its shadows in the mapping instead).
///
/// Near the black point the press responds little to any ink but black: the
/// exact inversion there swings the other plates widely for small colour
/// differences, which would band in dark gradients. Since those swings cost
/// little colour, the table is smoothed in ink space over the deepest
/// shadows: a few passes of a [1 2 1]/4 kernel along each axis, blended in
/// with a weight that is 1 at the black point and 0 at `SHADOW_RANGE` above
/// it. Every node stays a convex combination of in-limit builds, so the ink
/// limit and maximum black still hold.
/// `axes` is the number of grid dimensions (3 for RGB, 4 for CMYK input).
pub(crate) fn smooth_shadows(inks: &mut [[f64; 4]], lightness: &[f64], n: usize, axes: u32, black_l: f64) {
    let weight: Vec<f64> = lightness
        .iter()
        .map(|&l| {
            let t = ((l - black_l) / SHADOW_RANGE).clamp(0.0, 1.0);
            1.0 - t * t * (3.0 - 2.0 * t)
        })
        .collect();
    if weight.iter().all(|&w| w == 0.0) {
        return;
    }
    let strides: Vec<usize> = (0..axes).rev().map(|a| n.pow(a)).collect();
    for _ in 0..SHADOW_PASSES {
        for &d in &strides {
            let src = inks.to_vec();
            for i in 0..inks.len() {
                let w = weight[i];
                if w == 0.0 {
                    continue;
                }
                let pos = (i / d) % n;
                let lo = if pos > 0 { i - d } else { i };
                let hi = if pos + 1 < n { i + d } else { i };
                for ch in 0..4 {
                    let blurred = 0.25 * src[lo][ch] + 0.5 * src[i][ch] + 0.25 * src[hi][ch];
                    inks[i][ch] = (1.0 - w) * src[i][ch] + w * blurred;
                }
            }
        }
    }
}

/// Rounds a node to 16 bits without letting rounding break the limits:
/// channels rounded up are taken back, largest rounding first, until the
/// total and black fit.
pub(crate) fn quantize(x: [f64; 4], tac: f64, k_max: f64) -> [u16; 4] {
    let scale = 65535.0;
    let mut q = x.map(|v| (v * scale).round().clamp(0.0, scale) as i64);
    let k_cap = (k_max * scale + 1e-6).floor() as i64;
    q[3] = q[3].min(k_cap);
    let cap = (tac * scale + 1e-6).floor() as i64;
    while q.iter().sum::<i64>() > cap {
        let i = (0..4)
            .filter(|&i| q[i] > 0)
            .max_by(|&a, &b| (q[a] as f64 - x[a] * scale).total_cmp(&(q[b] as f64 - x[b] * scale)))
            .unwrap_or(0);
        q[i] -= 1;
    }
    q.map(|v| v as u16)
}

impl SeparationTable {
    /// Builds the table. `node_lab` gives the source colour (media-relative
    /// CIELAB D50, the ICC PCS) of each grid node from its encoded RGB
    /// (0..1): a named space's conversion, or a batch transform through the
    /// embedded profile.
    pub fn build(separator: &Separator, mapping: &SourceMapping, node_lab: &(dyn Fn([f64; 3]) -> Lab + Sync)) -> SeparationTable {
        let n = separator.settings().table_grid;
        let coord = |i: usize| i as f64 / (n - 1) as f64;
        // One line of nodes along blue per (red, green); each line is solved
        // in order with warm starts, so neighbouring nodes take the same
        // branch of the inversion and the result does not depend on threads.
        let lines: Vec<Vec<([f64; 4], f64)>> = (0..n * n)
            .into_par_iter()
            .map(|line| {
                let (r, g) = (line / n, line % n);
                let mut start = None;
                (0..n)
                    .map(|b| {
                        let lab = node_lab([coord(r), coord(g), coord(b)]);
                        let target = separator.intent_target(lab, mapping);
                        let s = separator.invert(target, start);
                        start = Some(s.x);
                        (s.x, target.l)
                    })
                    .collect()
            })
            .collect();
        let (mut inks, lightness): (Vec<[f64; 4]>, Vec<f64>) = lines.into_iter().flatten().unzip();
        if separator.smooths_shadows_in_ink() {
            smooth_shadows(&mut inks, &lightness, n, 3, separator.black_point().0.l);
        }
        let (tac, k_max) = (separator.settings().tac, separator.settings().black.black_max);
        SeparationTable {
            grid: n,
            nodes: inks.into_iter().map(|x| quantize(x, tac, k_max)).collect(),
            pure_black: separator.settings().keep_pure_black.then(|| (k_max * 65535.0 + 1e-6).floor() as u16),
        }
    }

    pub fn grid(&self) -> usize {
        self.grid
    }

    #[inline]
    fn interpolate(&self, p: [Position; 3]) -> [u32; 4] {
        let n = self.grid as u32;
        let (dr, dg, db) = (n * n, n, 1u32);
        let base = (p[0].index * n + p[1].index) * n + p[2].index;
        let (fr, fg, fb) = (p[0].fraction, p[1].fraction, p[2].fraction);
        let s = WEIGHT_ONE;
        let (c1, c2, w) = if fr >= fg {
            if fg >= fb {
                (base + dr, base + dr + dg, [s - fr, fr - fg, fg - fb, fb])
            } else if fr >= fb {
                (base + dr, base + dr + db, [s - fr, fr - fb, fb - fg, fg])
            } else {
                (base + db, base + dr + db, [s - fb, fb - fr, fr - fg, fg])
            }
        } else if fb >= fg {
            (base + db, base + dg + db, [s - fb, fb - fg, fg - fr, fr])
        } else if fb >= fr {
            (base + dg, base + dg + db, [s - fg, fg - fb, fb - fr, fr])
        } else {
            (base + dg, base + dr + dg, [s - fg, fg - fr, fr - fb, fb])
        };
        let c3 = base + dr + dg + db;
        let v = [&self.nodes[base as usize], &self.nodes[c1 as usize], &self.nodes[c2 as usize], &self.nodes[c3 as usize]];
        std::array::from_fn(|ch| {
            (w[0] * v[0][ch] as u32 + w[1] * v[1][ch] as u32 + w[2] * v[2][ch] as u32 + w[3] * v[3][ch] as u32
                + (WEIGHT_ONE >> 1))
                >> WEIGHT_BITS
        })
    }

    /// CMYK for one encoded RGB value (0..1 per channel), interpolated.
    pub fn lookup(&self, rgb: [f64; 3]) -> Cmyk {
        if let (Some(k), true) = (self.pure_black, rgb.iter().all(|&v| v <= 0.0)) {
            return Cmyk::new(0.0, 0.0, 0.0, k as f64 / 65535.0);
        }
        let max = 1u32 << 24;
        let p = rgb.map(|v| position((v.clamp(0.0, 1.0) * max as f64).round() as u32, max, self.grid));
        Cmyk::from_array(self.interpolate(p).map(|v| v as f64 / 65535.0))
    }

    /// Separates interleaved 8-bit RGB (`rgb.len() = 3·pixels`) into
    /// interleaved 8-bit CMYK (`cmyk.len() = 4·pixels`), in parallel over rows
    /// of `row_pixels`.
    pub fn apply_rgb8(&self, rgb: &[u8], cmyk: &mut [u8], row_pixels: usize) {
        let lut: Vec<Position> = (0..256).map(|v| position(v, 255, self.grid)).collect();
        let row_pixels = row_pixels.max(1);
        rgb.par_chunks(3 * row_pixels).zip(cmyk.par_chunks_mut(4 * row_pixels)).for_each(|(src, dst)| {
            for (px, out) in src.chunks_exact(3).zip(dst.chunks_exact_mut(4)) {
                if let (Some(k), [0, 0, 0]) = (self.pure_black, px) {
                    out.copy_from_slice(&[0, 0, 0, (k as u32 * 255 / 65535) as u8]);
                    continue;
                }
                let v = self.interpolate([lut[px[0] as usize], lut[px[1] as usize], lut[px[2] as usize]]);
                for ch in 0..4 {
                    out[ch] = ((v[ch] * 255 + 32767) / 65535) as u8;
                }
            }
        });
    }

    /// Separates interleaved 16-bit RGB into interleaved 16-bit CMYK.
    pub fn apply_rgb16(&self, rgb: &[u16], cmyk: &mut [u16], row_pixels: usize) {
        let row_pixels = row_pixels.max(1);
        rgb.par_chunks(3 * row_pixels).zip(cmyk.par_chunks_mut(4 * row_pixels)).for_each(|(src, dst)| {
            for (px, out) in src.chunks_exact(3).zip(dst.chunks_exact_mut(4)) {
                if let (Some(k), [0, 0, 0]) = (self.pure_black, px) {
                    out.copy_from_slice(&[0, 0, 0, k]);
                    continue;
                }
                let p = [px[0], px[1], px[2]].map(|v| position(v as u32, 65535, self.grid));
                let v = self.interpolate(p);
                for ch in 0..4 {
                    out[ch] = v[ch] as u16;
                }
            }
        });
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn positions_cover_the_grid() {
        let p = position(0, 255, 33);
        assert_eq!((p.index, p.fraction), (0, 0));
        let p = position(255, 255, 33);
        assert_eq!((p.index, p.fraction), (31, WEIGHT_ONE));
        let p = position(128, 255, 33);
        // 128·32/255 = 16.06…
        assert_eq!(p.index, 16);
    }
}
