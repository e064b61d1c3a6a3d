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
const WEIGHT_BITS: u32 = 15;
const WEIGHT_ONE: u32 = 1 << WEIGHT_BITS;

/// A 3-D table from source RGB (encoded, 0..1 on each axis) to CMYK.
#[derive(Debug, Clone)]
pub struct SeparationTable {
    grid: usize,
    /// CMYK per node as 0..65535, node index (r·N + g)·N + b.
    nodes: Vec<[u16; 4]>,
    /// Source pure black (all channels 0) prints as black ink only.
    keep_pure_black: bool,
}

/// Index and fixed-point fraction of one input code value on the grid.
#[derive(Debug, Clone, Copy)]
struct Position {
    index: u32,
    fraction: u32,
}

fn position(value: u32, max: u32, grid: usize) -> Position {
    let scaled = value as u64 * (grid as u64 - 1);
    let mut index = (scaled / max as u64) as u32;
    let mut fraction = (((scaled % max as u64) << WEIGHT_BITS) + max as u64 / 2) / max as u64;
    if index as usize >= grid - 1 {
        index = grid as u32 - 2;
        fraction = WEIGHT_ONE as u64;
    }
    Position { index, fraction: fraction as u32 }
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
        let lines: Vec<Vec<[u16; 4]>> = (0..n * n)
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
                        s.x.map(|v| (v * 65535.0).round().clamp(0.0, 65535.0) as u16)
                    })
                    .collect()
            })
            .collect();
        SeparationTable {
            grid: n,
            nodes: lines.into_iter().flatten().collect(),
            keep_pure_black: separator.settings().keep_pure_black,
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
                if self.keep_pure_black && px == [0, 0, 0] {
                    out.copy_from_slice(&[0, 0, 0, 255]);
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
                if self.keep_pure_black && px == [0, 0, 0] {
                    out.copy_from_slice(&[0, 0, 0, 65535]);
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
