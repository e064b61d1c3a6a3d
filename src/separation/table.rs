//! The separation table: the whole chain from source RGB to CMYK evaluated
//! once on a regular grid, then applied to pixels by tetrahedral
//! interpolation (Kasson, Nin, Plouffe & Hafner, "Performing color space
//! conversions with three-dimensional linear interpolation", J. Electronic
//! Imaging 4 (1995) 226–250; the form used by ICC colour management).
//!
//! Tetrahedral interpolation is a convex combination of four nodes, so every
//! interpolated value keeps the linear constraints each node meets: the ink
//! limit and the maximum black hold exactly between nodes as well.

use super::engine::{Separator, SourceMapping};
use super::limits::{InkCaps, narrow_within, quantize};
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
    Position {
        index,
        fraction: fraction as u32,
    }
}

/// Sample types of the pixel buffers the tables apply to: 8- and 16-bit codes.
pub(crate) trait Sample: Copy + Send + Sync + 'static {
    /// The largest code (full ink or full channel).
    const MAX: u32;
    /// What [`from_16`](Sample::from_16) adds before dividing by 65535 to
    /// round: `from_16(v) = (v · MAX + HALF) / 65535`.
    const HALF: u32;
    fn code(self) -> u32;
    /// A 16-bit table value (0..65535) as this sample type, rounded.
    fn from_16(v: u32) -> Self;
    /// A 16-bit table value as this sample type, rounded down (for values
    /// that must not exceed a limit, such as the maximum black).
    fn from_16_down(v: u32) -> Self;
}

impl Sample for u8 {
    const MAX: u32 = 255;
    const HALF: u32 = 32767;
    #[inline(always)]
    fn code(self) -> u32 {
        self as u32
    }
    /// `(v · 255 + 32767) / 65535`, which is `(v + 128) / 257` (65535 =
    /// 255 · 257, and no multiple of 257 lies between v + 128 and
    /// v + 128.498), computed as a multiply and a shift: x · 65281 / 2^24 is
    /// x / 257 + x / (257 · 2^24) (65281 · 257 = 2^24 + 1), and the excess,
    /// below 1/257 for x below 2^24, never carries past an integer; and
    /// (65535 + 128) · 65281 fits in 32 bits. Equal for every 16-bit value
    /// (unit test).
    #[inline(always)]
    fn from_16(v: u32) -> u8 {
        (((v + 128) * 65281) >> 24) as u8
    }
    /// `v · 255 / 65535`, that is `v / 257`, as in [`from_16`](Sample::from_16).
    #[inline(always)]
    fn from_16_down(v: u32) -> u8 {
        ((v * 65281) >> 24) as u8
    }
}

impl Sample for u16 {
    const MAX: u32 = 65535;
    const HALF: u32 = 0;
    #[inline(always)]
    fn code(self) -> u32 {
        self as u32
    }
    #[inline(always)]
    fn from_16(v: u32) -> u16 {
        v as u16
    }
    #[inline(always)]
    fn from_16_down(v: u32) -> u16 {
        v as u16
    }
}

/// Table nodes packed two channels to a 64-bit word (C | M << 32 and
/// Y | K << 32), so that one multiply weights two channels at once: a weight
/// (at most 2^15) times a 16-bit value, summed over vertices whose weights add
/// up to 2^15, stays below 2^31 in each 32-bit lane, so the lanes never carry
/// into each other and the result is exactly the per-channel sum.
#[derive(Debug, Clone, PartialEq)]
pub(crate) struct PackedNodes(Vec<[u64; 2]>);

impl PackedNodes {
    pub(crate) fn new(nodes: &[[u16; 4]]) -> PackedNodes {
        PackedNodes(
            nodes
                .iter()
                .map(|v| [v[0] as u64 | (v[1] as u64) << 32, v[2] as u64 | (v[3] as u64) << 32])
                .collect(),
        )
    }

    /// The weighted sum of the nodes at `at` (weights summing to
    /// `WEIGHT_ONE`), rounded to 16 bits per channel.
    #[inline(always)]
    pub(crate) fn blend<const V: usize>(&self, at: [u32; V], w: [u32; V]) -> [u32; 4] {
        const HALF: u64 = (WEIGHT_ONE as u64 >> 1) | ((WEIGHT_ONE as u64 >> 1) << 32);
        let (mut lo, mut hi) = (HALF, HALF);
        for i in 0..V {
            let node = &self.0[at[i] as usize];
            lo += w[i] as u64 * node[0];
            hi += w[i] as u64 * node[1];
        }
        let lane = |v: u64| ((v & 0xFFFF_FFFF) >> WEIGHT_BITS) as u32;
        [lane(lo), lane(lo >> 32), lane(hi), lane(hi >> 32)]
    }
}

/// Where one code value of one axis falls on the grid: the node offset of
/// its cell (index × the axis's node stride) and the sort key of the axis in
/// that cell (fraction << 32 | node stride).
#[derive(Debug, Clone, Copy)]
pub(crate) struct AxisStep {
    pub(crate) offset: u32,
    pub(crate) key: u64,
}

impl AxisStep {
    #[inline(always)]
    pub(crate) fn new(p: Position, stride: u32) -> AxisStep {
        AxisStep {
            offset: p.index * stride,
            key: ((p.fraction as u64) << 32) | stride as u64,
        }
    }
}

/// Per-axis steps of every code of a sample type, when there are few codes
/// (8 bits: 256 per axis); empty for 16 bits, whose steps are computed.
pub(crate) fn step_table<S: Sample, const A: usize>(grid: usize, strides: [u32; A]) -> Vec<[AxisStep; A]> {
    if S::MAX > 255 {
        return Vec::new();
    }
    (0..=S::MAX)
        .map(|v| {
            let p = position(v, S::MAX, grid);
            strides.map(|s| AxisStep::new(p, s))
        })
        .collect()
}

/// The steps of one pixel: from the table for 8 bits, computed for 16 bits.
#[inline(always)]
pub(crate) fn steps<S: Sample, const A: usize>(table: &[[AxisStep; A]], px: &[S], grid: usize, strides: [u32; A]) -> [AxisStep; A] {
    if S::MAX <= 255 {
        std::array::from_fn(|a| table[px[a].code() as usize][a])
    } else {
        std::array::from_fn(|a| AxisStep::new(position(px[a].code(), S::MAX, grid), strides[a]))
    }
}

/// Simplex (tetrahedral for 3 axes) interpolation in the cell at the
/// pixel's steps: the axes in order of decreasing fraction by a sorting
/// network of compare-exchanges (min/max, no branches), then the walk from
/// the cell's base node along the axes in that order. Ties take either
/// order; their weight is zero, so the result is the same.
#[inline(always)]
pub(crate) fn simplex<const A: usize, const V: usize>(nodes: &PackedNodes, steps: [AxisStep; A]) -> [u32; 4] {
    let mut k = steps.map(|s| s.key);
    let base: u32 = steps.iter().map(|s| s.offset).sum();
    let cx = |k: &mut [u64; A], a: usize, b: usize| {
        let (hi, lo) = (k[a].max(k[b]), k[a].min(k[b]));
        k[a] = hi;
        k[b] = lo;
    };
    match A {
        3 => {
            cx(&mut k, 0, 1);
            cx(&mut k, 1, 2);
            cx(&mut k, 0, 1);
        }
        4 => {
            cx(&mut k, 0, 1);
            cx(&mut k, 2, 3);
            cx(&mut k, 0, 2);
            cx(&mut k, 1, 3);
            cx(&mut k, 1, 2);
        }
        _ => k.sort_unstable_by(|a, b| b.cmp(a)),
    }
    let fraction = |i: usize| (k[i] >> 32) as u32;
    let mut at = [base; V];
    let mut w = [0u32; V];
    w[0] = WEIGHT_ONE - fraction(0);
    for i in 0..A {
        at[i + 1] = at[i] + k[i] as u32;
        w[i + 1] = if i + 1 < A { fraction(i) - fraction(i + 1) } else { fraction(i) };
    }
    nodes.blend(at, w)
}

/// Lightness range above the black point over which the table is smoothed.
const SHADOW_RANGE: f64 = 13.0;

/// Smoothing passes in the shadows.
const SHADOW_PASSES: usize = 3;

/// Used with relative colorimetric with black point compensation and with
/// perceptual, which carry the source black onto the press black point so
/// that the whole shadow range is reproduced (see
/// `Separator::smooths_shadows_in_ink`).
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
        let caps = InkCaps::new(tac, k_max);
        let caps8 = caps.for_8_bit_nodes();
        let nodes8: Vec<[u16; 4]> = inks.iter().map(|&x| quantize(x, caps8)).collect();
        let nodes: Vec<[u16; 4]> = inks.into_iter().map(|x| quantize(x, caps)).collect();
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
        let black = self.pure_black.map(|k| S::from_16_down(k as u32));
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

    /// splitmix64 (Steele, Lea & Flood, OOPSLA 2014), for reproducible inputs.
    fn splitmix(state: &mut u64) -> u64 {
        *state = state.wrapping_add(0x9E3779B97F4A7C15);
        let mut z = *state;
        z = (z ^ (z >> 30)).wrapping_mul(0xBF58476D1CE4E5B9);
        z = (z ^ (z >> 27)).wrapping_mul(0x94D049BB133111EB);
        z ^ (z >> 31)
    }

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

    /// The multiply-and-shift rounding to 8 bits is the division it stands
    /// for, at every 16-bit value.
    #[test]
    fn eight_bit_rounding_is_exact() {
        for v in 0..=65535u32 {
            assert_eq!(u8::from_16(v) as u32, (v * 255 + 32767) / 65535, "{v}");
            assert_eq!(u8::from_16_down(v) as u32, v * 255 / 65535, "{v}");
        }
    }

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
