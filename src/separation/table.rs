//! The separation table: the whole chain from source RGB to CMYK evaluated
//! once on a regular grid, then applied to pixels by tetrahedral
//! interpolation (Kasson, Nin, Plouffe & Hafner, "Performing color space
//! conversions with three-dimensional linear interpolation", J. Electronic
//! Imaging 4 (1995) 226–250; the form used by ICC colour management).
//!
//! Tetrahedral interpolation is a convex combination of four nodes, so every
//! interpolated value keeps the linear constraints each node meets: the ink
//! limit and the maximum black hold exactly between nodes as well.

use super::engine::Separator;
use super::frame::IntentLab;
use super::intent::SourceMapping;
use super::inversion::WarmStart;
use super::kernel::{PackedNodes, Position, Sample, WEIGHT_BITS, WEIGHT_ONE, position, simplex, step_table, steps};
use super::limits::{InkCaps, narrow_within};
use super::shadows::smooth_shadows;
use crate::colour::EncodedRgb;
use crate::ink::Cmyk;
use rayon::prelude::*;

/// A 3-D table from source RGB (encoded, 0..1 on each axis) to CMYK.
#[derive(Debug, Clone)]
pub struct SeparationTable {
    grid: usize,
    /// CMYK per node as 0..65535, node index (r·N + g)·N + b.
    nodes: Vec<[u16; 4]>,
    /// The same nodes packed for the pixel kernels (see [`PackedNodes`]).
    packed: PackedNodes,
    /// The nodes for 8-bit output, quantised to [`InkCaps::for_8_bit_nodes`].
    packed8: PackedNodes,
    /// Source pure black (all channels 0) prints as black ink only, at the
    /// maximum black (16-bit value), when set.
    pure_black: Option<u16>,
    /// The total ink and black the nodes hold, which rounding a pixel to
    /// 8 bits must not break either.
    caps: InkCaps,
}
impl SeparationTable {
    /// Builds the table. `node_lab` gives the source colour (media-relative
    /// CIELAB D50, the ICC PCS) of each grid node from its encoded RGB
    /// (0..1): a named space's conversion, or a batch transform through the
    /// embedded profile.
    pub fn build(separator: &Separator, mapping: &SourceMapping, node_lab: &(dyn Fn(EncodedRgb) -> IntentLab + Sync)) -> SeparationTable {
        let n = separator.settings().table_grid;
        let coord = |i: usize| i as f64 / (n - 1) as f64;
        // One line of nodes along blue per (red, green); each line is solved
        // in order with warm starts (each search from the neighbour's answer
        // to it: `Separator::invert_along`), so neighbouring nodes take the
        // same branch of the inversion and the result does not depend on
        // threads.
        let lines: Vec<Vec<([f64; 4], f64)>> = (0..n * n)
            .into_par_iter()
            .map(|line| {
                let (r, g) = (line / n, line % n);
                let mut warm = WarmStart::default();
                (0..n)
                    .map(|b| {
                        let lab = node_lab(EncodedRgb([coord(r), coord(g), coord(b)]));
                        let target = separator.intent_target(lab, mapping);
                        let s = separator.invert_along(target, &mut warm);
                        (s.x, target.lab().l)
                    })
                    .collect()
            })
            .collect();
        let (mut inks, lightness): (Vec<[f64; 4]>, Vec<f64>) = lines.into_iter().flatten().unzip();
        if separator.smooths_shadows_in_ink() {
            smooth_shadows(&mut inks, &lightness, n, 3, separator.black_point().0.lab().l);
        }
        let caps = InkCaps::of(separator.settings());
        let (nodes, nodes8) = caps.quantize_nodes(inks);
        SeparationTable {
            grid: n,
            packed: PackedNodes::new(&nodes),
            packed8: PackedNodes::new(&nodes8),
            nodes,
            caps,
            pure_black: separator.settings().keep_pure_black.then_some(caps.black16()),
        }
    }

    /// 16-bit CMYK that this table wrote ([`apply_rgb16`](Self::apply_rgb16))
    /// rounded to 8 bits, holding the ink limit and maximum black to the
    /// code as [`apply_rgb8`](Self::apply_rgb8) does.
    pub fn narrow_to_8bit(&self, cmyk16: &[u16]) -> Vec<u8> {
        narrow_within(self.caps, cmyk16)
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
        let v = [
            &self.nodes[base as usize],
            &self.nodes[c1 as usize],
            &self.nodes[c2 as usize],
            &self.nodes[c3 as usize],
        ];
        std::array::from_fn(|ch| {
            (w[0] * v[0][ch] as u32 + w[1] * v[1][ch] as u32 + w[2] * v[2][ch] as u32 + w[3] * v[3][ch] as u32 + (WEIGHT_ONE >> 1))
                >> WEIGHT_BITS
        })
    }

    /// CMYK for one encoded RGB value (0..1 per channel), interpolated.
    pub fn lookup(&self, rgb: EncodedRgb) -> Cmyk {
        let rgb = rgb.0;
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
        self.apply(rgb, cmyk, row_pixels)
    }

    /// Separates interleaved 16-bit RGB into interleaved 16-bit CMYK.
    pub fn apply_rgb16(&self, rgb: &[u16], cmyk: &mut [u16], row_pixels: usize) {
        self.apply(rgb, cmyk, row_pixels)
    }

    /// The pixel kernel for either sample type: the same interpolation as
    /// [`SeparationTable::lookup`] at the pixel's code values (tetrahedral,
    /// 15-bit weights, 16-bit nodes), rounded to the sample type.
    fn apply<S: Sample>(&self, rgb: &[S], cmyk: &mut [S], row_pixels: usize) {
        let n = self.grid as u32;
        let strides = [n * n, n, 1];
        let table = step_table::<S, 3>(self.grid, strides);
        let black = self.pure_black.map(|_| self.caps.black_sample::<S>());
        let zero = S::from_16(0);
        // 8-bit pixels come from nodes that rounding cannot take over the
        // limits; 16-bit pixels are not rounded.
        let packed = if S::MAX == 255 { &self.packed8 } else { &self.packed };
        let row_pixels = row_pixels.max(1);
        rgb.par_chunks(3 * row_pixels)
            .zip(cmyk.par_chunks_mut(4 * row_pixels))
            .for_each(|(src, dst)| {
                for (px, out) in src.chunks_exact(3).zip(dst.chunks_exact_mut(4)) {
                    if let Some(k) = black
                        && px[0].code() | px[1].code() | px[2].code() == 0
                    {
                        out.copy_from_slice(&[zero, zero, zero, k]);
                        continue;
                    }
                    let v = simplex::<3, 4>(packed, steps(&table, px, self.grid, strides));
                    for ch in 0..4 {
                        out[ch] = S::from_16(v[ch]);
                    }
                }
            });
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::separation::kernel::splitmix;

    /// The packed, branch-free kernel gives exactly what the plain
    /// tetrahedral interpolation (Kasson et al. 1995, the case table of
    /// `SeparationTable::interpolate`) gives, on random nodes and on codes
    /// that tie fractions (equal channels, grid nodes, the ends).
    #[test]
    fn pixel_kernel_matches_plain_tetrahedral_interpolation() {
        let mut state = 7u64;
        for grid in [5usize, 17, 33] {
            let nodes: Vec<[u16; 4]> = (0..grid.pow(3))
                .map(|_| std::array::from_fn(|_| splitmix(&mut state) as u16))
                .collect();
            let table = SeparationTable {
                grid,
                packed: PackedNodes::new(&nodes),
                packed8: PackedNodes::new(&nodes),
                nodes,
                pure_black: None,
                caps: InkCaps::new(4.0, 1.0),
            };
            let mut rgb8: Vec<u8> = (0..3 * 4096).map(|_| splitmix(&mut state) as u8).collect();
            for v in [0u8, 1, 8, 64, 127, 128, 254, 255] {
                rgb8.extend([v, v, v, v, v, 0, 255, v, v, v, 3, v]);
            }
            let mut rgb16: Vec<u16> = (0..3 * 4096).map(|_| splitmix(&mut state) as u16).collect();
            for v in [0u16, 1, 2048, 32767, 32768, 65534, 65535] {
                rgb16.extend([v, v, v, v, v, 0, 65535, v, v, v, 3, v]);
            }
            let mut out8 = vec![0u8; rgb8.len() / 3 * 4];
            let mut out16 = vec![0u16; rgb16.len() / 3 * 4];
            table.apply_rgb8(&rgb8, &mut out8, 64);
            table.apply_rgb16(&rgb16, &mut out16, 64);
            for (px, out) in rgb8.chunks_exact(3).zip(out8.chunks_exact(4)) {
                let v = table.interpolate([0, 1, 2].map(|a| position(px[a] as u32, 255, grid)));
                let want: Vec<u8> = v.iter().map(|&v| ((v * 255 + 32767) / 65535) as u8).collect();
                assert_eq!(out, &want[..], "grid {grid}, pixel {px:?}");
            }
            for (px, out) in rgb16.chunks_exact(3).zip(out16.chunks_exact(4)) {
                let v = table.interpolate([0, 1, 2].map(|a| position(px[a] as u32, 65535, grid)));
                let want: Vec<u16> = v.iter().map(|&v| v as u16).collect();
                assert_eq!(out, &want[..], "grid {grid}, pixel {px:?}");
            }
        }
    }
}
