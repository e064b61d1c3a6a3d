//! The separation table: the whole chain from source RGB to CMYK evaluated
//! once on a regular grid, then applied to pixels by tetrahedral
//! interpolation (Kasson, Nin, Plouffe & Hafner, "Performing color space
//! conversions with three-dimensional linear interpolation", J. Electronic
//! Imaging 4 (1995) 226–250; the form used by ICC colour management).
//!
//! Tetrahedral interpolation is a convex combination of four nodes, so every
//! interpolated value keeps the linear constraints each node meets: the ink
//! limit and the maximum black hold exactly between nodes as well.
//!
//! Pixels go through the fixed-point kernels of `kernel` (the reference);
//! 8-bit RGB goes eight pixels at a time through the AVX2 kernel of `simd`
//! where the processor has it, which writes the same bytes.

use super::engine::Separator;
use super::frame::IntentLab;
use super::intent::SourceMapping;
use super::inversion::WarmStart;
use super::kernel::{PackedNodes, Position, Sample, WEIGHT_BITS, WEIGHT_ONE, position, simplex, step_table, steps};
use super::limits::{InkCaps, narrow_within};
use super::shadows::smooth_shadows;
use super::simd::{PixelKernel, rgb8_blocks};
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
/// Every node of an n³ RGB grid (node index (r·N + g)·N + b, encoded
/// coordinates i / (N − 1)) through `node`, one line of nodes along blue
/// per (red, green): the lines in parallel, each solved in order with one
/// warm start (each search from the neighbour's answer to it:
/// `Separator::invert_along`), so neighbouring nodes take the same branch of
/// the inversion and the result does not depend on threads.
pub(super) fn solve_lines<T: Send>(n: usize, node: &(dyn Fn(EncodedRgb, &mut WarmStart) -> T + Sync)) -> Vec<T> {
    let coord = |i: usize| i as f64 / (n - 1) as f64;
    let lines: Vec<Vec<T>> = (0..n * n)
        .into_par_iter()
        .map(|line| {
            let (r, g) = (line / n, line % n);
            let mut warm = WarmStart::default();
            (0..n)
                .map(|b| node(EncodedRgb([coord(r), coord(g), coord(b)]), &mut warm))
                .collect()
        })
        .collect();
    lines.into_iter().flatten().collect()
}

impl SeparationTable {
    /// Builds the table. `node_lab` gives the source colour (media-relative
    /// CIELAB D50, the ICC PCS) of each grid node from its encoded RGB
    /// (0..1): a named space's conversion, or a batch transform through the
    /// embedded profile.
    pub fn build(separator: &Separator, mapping: &SourceMapping, node_lab: &(dyn Fn(EncodedRgb) -> IntentLab + Sync)) -> SeparationTable {
        let n = separator.settings().table_grid;
        let nodes = solve_lines(n, &|rgb, warm| {
            let target = separator.intent_target(node_lab(rgb), mapping);
            let s = separator.invert_along(target, warm);
            (s.x, target.lab().l)
        });
        let (inks, lightness): (Vec<[f64; 4]>, Vec<f64>) = nodes.into_iter().unzip();
        SeparationTable::from_inks(separator, inks, &lightness)
    }

    /// The table of `separator` from each node's exact ink build and its
    /// target's lightness (node index (r·N + g)·N + b): the deepest shadows
    /// smoothed where the intent asks for it, then quantised under the caps.
    pub(super) fn from_inks(separator: &Separator, mut inks: Vec<[f64; 4]>, lightness: &[f64]) -> SeparationTable {
        let n = separator.settings().table_grid;
        if separator.smooths_shadows_in_ink() {
            smooth_shadows(&mut inks, lightness, n, 3, separator.black_point().0.lab().l);
        }
        let (nodes, nodes8) = InkCaps::of(separator.settings()).quantize_nodes(inks);
        SeparationTable::from_nodes(separator, nodes, nodes8)
    }

    /// The table of `separator` with these 16-bit nodes and nodes for 8-bit
    /// output; its settings give the ink caps and the pure black.
    fn from_nodes(separator: &Separator, nodes: Vec<[u16; 4]>, nodes8: Vec<[u16; 4]>) -> SeparationTable {
        let caps = InkCaps::of(separator.settings());
        SeparationTable {
            grid: separator.settings().table_grid,
            packed: PackedNodes::new(&nodes),
            packed8: PackedNodes::new(&nodes8),
            nodes,
            caps,
            pure_black: separator.settings().keep_pure_black.then_some(caps.black16()),
        }
    }

    /// The nodes as bytes, for the table cache: the grid (u32 LE), then
    /// the 16-bit nodes and the nodes for 8-bit output, CMYK u16 LE each.
    /// [`SeparationTable::from_bytes`] reads them back.
    pub fn to_bytes(&self) -> Vec<u8> {
        let mut out = Vec::with_capacity(4 + 16 * self.nodes.len());
        out.extend((self.grid as u32).to_le_bytes());
        for node in self.nodes.iter().copied().chain(self.packed8.unpacked()) {
            out.extend(node.iter().flat_map(|v| v.to_le_bytes()));
        }
        out
    }

    /// The table [`SeparationTable::to_bytes`] wrote for `separator`, whose
    /// settings give the ink caps and the pure black; `None` when the bytes
    /// do not hold a table of the separator's grid.
    pub fn from_bytes(separator: &Separator, bytes: &[u8]) -> Option<SeparationTable> {
        let n = separator.settings().table_grid;
        let (grid, rest) = bytes.split_first_chunk::<4>()?;
        if u32::from_le_bytes(*grid) as usize != n || rest.len() != 16 * n * n * n {
            return None;
        }
        let node = |b: &[u8]| -> [u16; 4] { std::array::from_fn(|i| u16::from_le_bytes([b[2 * i], b[2 * i + 1]])) };
        let mut nodes: Vec<[u16; 4]> = rest.chunks_exact(8).map(node).collect();
        let nodes8 = nodes.split_off(n * n * n);
        Some(SeparationTable::from_nodes(separator, nodes, nodes8))
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

    /// The 16-bit CMYK nodes, node index (r·N + g)·N + b.
    pub fn nodes(&self) -> &[[u16; 4]] {
        &self.nodes
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
    /// of `row_pixels`, with the fastest kernel this processor runs
    /// ([`PixelKernel::detected`]).
    pub fn apply_rgb8(&self, rgb: &[u8], cmyk: &mut [u8], row_pixels: usize) {
        self.apply_rgb8_with(PixelKernel::detected(), rgb, cmyk, row_pixels)
    }

    /// [`apply_rgb8`](Self::apply_rgb8) with a chosen kernel: every kernel
    /// gives the same bytes (the scalar one is the reference); one this
    /// processor cannot run falls back to the scalar kernel.
    pub fn apply_rgb8_with(&self, kernel: PixelKernel, rgb: &[u8], cmyk: &mut [u8], row_pixels: usize) {
        let black = self.pure_black.map(|_| self.caps.black_sample::<u8>());
        let kernel = if kernel.is_available() { kernel } else { PixelKernel::Scalar };
        let row_pixels = row_pixels.max(1);
        let scalar = self.scalar_kernel::<u8>();
        rgb.par_chunks(3 * row_pixels)
            .zip(cmyk.par_chunks_mut(4 * row_pixels))
            .for_each(|(src, dst)| {
                let done = rgb8_blocks(kernel, &self.packed8, self.grid, black, src, dst);
                scalar(&src[3 * done..], &mut dst[4 * done..]);
            });
    }

    /// Separates interleaved 16-bit RGB into interleaved 16-bit CMYK.
    pub fn apply_rgb16(&self, rgb: &[u16], cmyk: &mut [u16], row_pixels: usize) {
        let scalar = self.scalar_kernel::<u16>();
        let row_pixels = row_pixels.max(1);
        rgb.par_chunks(3 * row_pixels)
            .zip(cmyk.par_chunks_mut(4 * row_pixels))
            .for_each(|(src, dst)| scalar(src, dst));
    }

    /// The scalar pixel kernel for either sample type: the same
    /// interpolation as [`SeparationTable::lookup`] at the pixel's code
    /// values (tetrahedral, 15-bit weights, 16-bit nodes), rounded to the
    /// sample type, pixel by pixel over a run of interleaved pixels.
    fn scalar_kernel<S: Sample>(&self) -> impl Fn(&[S], &mut [S]) + Sync + '_ {
        let n = self.grid as u32;
        let strides = [n * n, n, 1];
        let table = step_table::<S, 3>(self.grid, strides);
        let black = self.pure_black.map(|_| self.caps.black_sample::<S>());
        let zero = S::from_16(0);
        // 8-bit pixels come from nodes that rounding cannot take over the
        // limits; 16-bit pixels are not rounded.
        let packed = if S::MAX == 255 { &self.packed8 } else { &self.packed };
        move |src: &[S], dst: &mut [S]| {
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
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::separation::SeparationSettings;
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

    /// A table of random 16-bit nodes (both node sets), for kernel checks.
    fn random_table(grid: usize, pure_black: Option<u16>, state: &mut u64) -> SeparationTable {
        let nodes: Vec<[u16; 4]> = (0..grid.pow(3)).map(|_| std::array::from_fn(|_| splitmix(state) as u16)).collect();
        SeparationTable {
            grid,
            packed: PackedNodes::new(&nodes),
            packed8: PackedNodes::new(&nodes),
            nodes,
            pure_black,
            caps: InkCaps::new(4.0, 1.0),
        }
    }

    /// Pixels that probe every way the kernels can differ: every code on
    /// each axis with random others, ties between two and three channels
    /// (equal codes, and codes one apart), the cube's corners and codes next
    /// to them, its faces, and pure black.
    fn probe_pixels(state: &mut u64) -> Vec<u8> {
        let mut rnd = || splitmix(state) as u8;
        let mut px: Vec<[u8; 3]> = Vec::new();
        for c in 0..=255u8 {
            for _ in 0..3 {
                px.extend([[c, rnd(), rnd()], [rnd(), c, rnd()], [rnd(), rnd(), c]]);
            }
            let (x, up, down) = (rnd(), c.saturating_add(1), c.saturating_sub(1));
            px.extend([
                [c, c, x],
                [x, c, c],
                [c, x, c],
                [c, c, c],
                [c, up, down],
                [down, c, up],
                [up, down, c],
            ]);
            px.extend([[c, c, up], [up, c, c], [c, up, c], [c, c, down], [down, c, c], [c, down, c]]);
            for end in [0, 255] {
                px.extend([
                    [end, c, rnd()],
                    [rnd(), end, c],
                    [c, rnd(), end],
                    [end, end, c],
                    [c, end, end],
                    [end, c, end],
                ]);
            }
        }
        let ends = [0u8, 1, 2, 127, 128, 253, 254, 255];
        for r in ends {
            for g in ends {
                for b in ends {
                    px.push([r, g, b]);
                }
            }
        }
        px.into_iter().flatten().collect()
    }

    fn separate_both(table: &SeparationTable, rgb: &[u8], row_pixels: usize) -> (Vec<u8>, Vec<u8>) {
        let mut scalar = vec![0u8; rgb.len() / 3 * 4];
        let mut vector = vec![0xA5u8; rgb.len() / 3 * 4];
        table.apply_rgb8_with(PixelKernel::Scalar, rgb, &mut scalar, row_pixels);
        table.apply_rgb8_with(PixelKernel::Avx2, rgb, &mut vector, row_pixels);
        (scalar, vector)
    }

    fn assert_same(scalar: &[u8], vector: &[u8], rgb: &[u8], what: &str) {
        for (i, (s, v)) in scalar.chunks_exact(4).zip(vector.chunks_exact(4)).enumerate() {
            assert_eq!(s, v, "{what}: pixel {i}, RGB {:?}", &rgb[3 * i..3 * i + 3]);
        }
    }

    fn vector_kernel_runs() -> bool {
        let runs = PixelKernel::Avx2.is_available();
        if !runs {
            eprintln!("this processor has no AVX2: only the scalar kernel is checked");
        }
        runs
    }

    /// The AVX2 kernel writes exactly the scalar kernel's bytes for every
    /// grid from 2 to 66 and the largest the settings allow (127–129),
    /// every code on each axis, ties, corners and faces, with and without
    /// the pure-black rule. The scalar kernel is itself checked against the
    /// plain tetrahedral interpolation of Kasson et al. (1995) above.
    #[test]
    fn vector_kernel_is_the_scalar_kernel_on_every_code_and_grid() {
        let runs = vector_kernel_runs();
        let mut state = 11u64;
        for grid in (2..=66).chain(127..=129) {
            let black = (grid % 2 == 0).then_some(65535);
            let table = random_table(grid, black, &mut state);
            let rgb = probe_pixels(&mut state);
            let (scalar, vector) = separate_both(&table, &rgb, rgb.len() / 3);
            assert_same(&scalar, &vector, &rgb, &format!("grid {grid}"));
            if runs && black.is_some() {
                assert_eq!(
                    &vector[vector.len() - 4 * 512..][..4],
                    &[0, 0, 0, 255],
                    "pure black at the maximum black"
                );
            }
        }
    }

    /// Odd row lengths (a row of one pixel, rows shorter than a block, rows
    /// with a tail of 1 to 7 pixels) and buffers that start at any byte
    /// offset give the scalar kernel's bytes.
    #[test]
    fn vector_kernel_handles_tails_and_unaligned_buffers() {
        vector_kernel_runs();
        let mut state = 12u64;
        let table = random_table(33, Some(60000), &mut state);
        let probe = probe_pixels(&mut state);
        for row_pixels in [1usize, 3, 7, 8, 9, 15, 16, 17, 31, 100, 1001] {
            for offset in 0..4 {
                let pixels = 2 * row_pixels + 5;
                let mut backing = vec![0u8; offset + 3 * pixels];
                let start = (row_pixels * 97 + offset * 31) % (probe.len() - 3 * pixels);
                backing[offset..].copy_from_slice(&probe[start - start % 3..][..3 * pixels]);
                let rgb = &backing[offset..];
                let mut scalar = vec![0u8; 4 * pixels];
                table.apply_rgb8_with(PixelKernel::Scalar, rgb, &mut scalar, row_pixels);
                let mut out = vec![0x5Au8; offset + 4 * pixels + 3];
                table.apply_rgb8_with(PixelKernel::Avx2, rgb, &mut out[offset..offset + 4 * pixels], row_pixels);
                assert_same(
                    &scalar,
                    &out[offset..offset + 4 * pixels],
                    rgb,
                    &format!("rows of {row_pixels}, offset {offset}"),
                );
                assert!(
                    out[..offset].iter().chain(&out[offset + 4 * pixels..]).all(|&b| b == 0x5A),
                    "nothing written outside"
                );
            }
        }
    }

    /// Real tables (three built-in conditions, both intents, pure black
    /// kept or not, grids 17 and 33: the 8-bit nodes quantised under the ink
    /// limit) give the scalar kernel's bytes on every code of each axis and
    /// on a random image; and `apply_rgb8` is the detected kernel.
    #[test]
    fn vector_kernel_is_the_scalar_kernel_on_real_tables() {
        use crate::colour::RgbSpace;
        use crate::press::builtin;
        use crate::separation::{Intent, RgbGamut};
        vector_kernel_runs();
        let mut state = 13u64;
        let cases = [
            (builtin::coated_offset(), Intent::Perceptual, true, 17),
            (builtin::uncoated_offset(), Intent::Relative, false, 33),
            (builtin::newsprint(), Intent::Relative, true, 17),
        ];
        for (condition, intent, keep_pure_black, grid) in cases {
            let name = condition.name.clone();
            let mut settings = SeparationSettings::for_condition(&condition);
            settings.intent = intent;
            settings.keep_pure_black = keep_pure_black;
            settings.table_grid = grid;
            let sep = Separator::new(condition, settings).expect("built-in settings are valid");
            let conv = RgbSpace::Srgb.converter();
            let gamut = RgbGamut(conv);
            let mapping = sep.source_mapping(&gamut);
            let table = SeparationTable::build(&sep, &mapping, &|rgb| IntentLab::new(conv.to_lab(rgb)));
            let mut rgb = probe_pixels(&mut state);
            rgb.extend((0..3 * 20_000).map(|_| splitmix(&mut state) as u8));
            let (scalar, vector) = separate_both(&table, &rgb, 640);
            assert_same(&scalar, &vector, &rgb, &format!("{name}, {intent:?}, grid {grid}"));
            let mut detected = vec![0u8; scalar.len()];
            table.apply_rgb8(&rgb, &mut detected, 640);
            assert_same(&scalar, &detected, &rgb, &format!("{name}, detected kernel"));
        }
    }

    /// Every one of the 2²⁴ 8-bit RGB values through the vector kernel and
    /// the scalar kernel, on random tables of grids 17, 33 and 65: the same
    /// bytes. A slip of one unit in the 16-bit sum shows in the 8-bit output
    /// of a few of these pixels, so the whole cube is the check that
    /// catches it.
    #[test]
    fn vector_kernel_is_the_scalar_kernel_on_the_whole_cube() {
        vector_kernel_runs();
        let mut state = 14u64;
        let rgb: Vec<u8> = (0..1u32 << 24).flat_map(|v| [(v >> 16) as u8, (v >> 8) as u8, v as u8]).collect();
        for grid in [17, 33, 65] {
            let table = random_table(grid, Some(65535), &mut state);
            let (scalar, vector) = separate_both(&table, &rgb, 4096);
            assert_same(&scalar, &vector, &rgb, &format!("grid {grid}"));
        }
    }
}
