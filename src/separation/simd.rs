//! The 8-bit RGB → CMYK pixel kernel in AVX2, eight pixels at a time, bit
//! for bit the scalar kernel of [`kernel`](super::kernel) (which stays as the
//! reference and the fallback).
//!
//! Per block of eight pixels: two 16-byte loads and three byte shuffles
//! spread R, G and B into 32-bit lanes; each axis's grid index and 15-bit
//! fraction are computed in the lanes with the scalar kernel's
//! [`position`](super::kernel::position) formula (its divisions by 255 as a
//! multiply-high by 0x8081 and a shift, exact for every 16-bit dividend;
//! every code and grid is checked against the scalar steps in the tests);
//! the tetrahedron comes from the sorted fractions by min/max and three
//! compares, with the scalar order on ties (red before green before blue
//! for the largest fraction, the reverse for the smallest); each vertex is
//! one 16-byte load of its packed node (C, M, Y, K as 32-bit lanes, the
//! layout of [`PackedNodes`]), two pixels to a register, weighted by a
//! 32-bit multiply; then the same rounding to 16 bits, the same
//! multiply-and-shift rounding to 8 bits, the pure-black rule as a blend,
//! and one 32-byte store. The arithmetic is the scalar kernel's integer
//! arithmetic in the same widths (no sum exceeds 2³¹), so the results are
//! identical, not merely close.
//!
//! Why `std::arch` and not a portable SIMD crate (`wide`, `pulp`): the
//! kernel's speed comes from three operations those crates do not offer
//! as such on integers — in-lane byte shuffles to deinterleave RGB,
//! cross-lane permutes to broadcast one pixel's weight, and a 16-byte load
//! from a computed address per vertex — and each would have to be emulated
//! lane by lane. Intrinsics cost no dependency, and the unsafe code is this
//! module's pointer loads and stores, each bounded as its `SAFETY` note
//! says. The kernel is chosen once per process at run time
//! ([`PixelKernel::detected`]); other targets and processors without AVX2
//! use the scalar kernel.

use super::kernel::PackedNodes;
use std::sync::OnceLock;

/// Which implementation applies a separation table to 8-bit RGB pixels.
/// Both give identical output; [`PixelKernel::detected`] is what
/// [`SeparationTable::apply_rgb8`](super::SeparationTable::apply_rgb8)
/// uses, the others are for measuring and testing one against the other.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum PixelKernel {
    /// One pixel at a time, portable: the reference.
    Scalar,
    /// Eight pixels at a time with AVX2 (x86-64 processors since about 2013).
    Avx2,
}

impl PixelKernel {
    /// The fastest kernel this processor runs, detected once per process.
    pub fn detected() -> PixelKernel {
        static CHOICE: OnceLock<PixelKernel> = OnceLock::new();
        *CHOICE.get_or_init(|| {
            if PixelKernel::Avx2.is_available() {
                PixelKernel::Avx2
            } else {
                PixelKernel::Scalar
            }
        })
    }

    /// Whether this processor can run the kernel.
    pub fn is_available(self) -> bool {
        match self {
            PixelKernel::Scalar => true,
            #[cfg(target_arch = "x86_64")]
            PixelKernel::Avx2 => std::arch::is_x86_feature_detected!("avx2"),
            #[cfg(not(target_arch = "x86_64"))]
            PixelKernel::Avx2 => false,
        }
    }
}

/// The grids the vector kernel takes: every grid the settings allow
/// (`Setting::TableGrid`, 5..=129) and the small ones tests use. The limit
/// keeps `code · (grid − 1)` within 16 bits and node byte offsets within
/// 32 bits.
const GRIDS: std::ops::RangeInclusive<usize> = 2..=129;

/// Separates the leading whole blocks of eight pixels of `rgb` (interleaved
/// 8-bit RGB) into `cmyk` (interleaved 8-bit CMYK) with `kernel`, and
/// returns how many pixels it did: a multiple of eight, zero when the
/// kernel is the scalar one or cannot run here. The caller does the rest
/// with the scalar kernel. `nodes` are the table's nodes (`grid³`, index
/// (r·N + g)·N + b) and `black` the black code of source pure black, when
/// pure black prints as black only.
pub(crate) fn rgb8_blocks(kernel: PixelKernel, nodes: &PackedNodes, grid: usize, black: Option<u8>, rgb: &[u8], cmyk: &mut [u8]) -> usize {
    if kernel != PixelKernel::Avx2 || !kernel.is_available() || !GRIDS.contains(&grid) || nodes.words().len() != grid.pow(3) {
        return 0;
    }
    #[cfg(target_arch = "x86_64")]
    {
        // SAFETY: AVX2 is available (checked above), the node count is
        // grid³ with the grid in `GRIDS`, which is what `avx2::rgb8` needs
        // for its loads to stay inside `nodes`.
        unsafe { avx2::rgb8(nodes.words(), grid as u32, black, rgb, cmyk) }
    }
    #[cfg(not(target_arch = "x86_64"))]
    {
        let _ = (black, rgb, cmyk);
        0
    }
}

#[cfg(target_arch = "x86_64")]
mod avx2 {
    use std::arch::x86_64::*;

    /// Grid index and 15-bit fraction of eight 8-bit codes (one per 32-bit
    /// lane), as `kernel::position(code, 255, grid)`: `scaled = code·(N−1)`
    /// (below 2¹⁶), `index = scaled / 255`, `fraction = ((scaled mod 255)
    /// · 2¹⁵ + 127) / 255`, written as `rem·128 + (rem·128 + 127) / 255`
    /// (2¹⁵ = 128·255 + 128) so that every dividend stays below 2¹⁶, where
    /// `x / 255 = (x · 0x8081) >> 23` exactly. The last cell takes code 255
    /// at fraction one; the index is clamped to N − 2 in any case, which is
    /// what keeps every vertex inside the table.
    #[target_feature(enable = "avx2")]
    #[inline]
    pub(super) fn position(code: __m256i, n_minus_1: __m256i, n_minus_2: __m256i) -> (__m256i, __m256i) {
        let div255 = _mm256_set1_epi32(0x8081);
        let scaled = _mm256_mullo_epi16(code, n_minus_1);
        let index = _mm256_srli_epi32::<7>(_mm256_mulhi_epu16(scaled, div255));
        let rem = _mm256_sub_epi32(scaled, _mm256_mullo_epi16(index, _mm256_set1_epi32(255)));
        let rem128 = _mm256_slli_epi32::<7>(rem);
        let carry = _mm256_srli_epi32::<7>(_mm256_mulhi_epu16(_mm256_add_epi32(rem128, _mm256_set1_epi32(127)), div255));
        let fraction = _mm256_add_epi32(rem128, carry);
        let last = _mm256_cmpgt_epi32(index, n_minus_2);
        (
            _mm256_min_epu32(index, n_minus_2),
            _mm256_blendv_epi8(fraction, _mm256_set1_epi32(1 << 15), last),
        )
    }

    /// Byte offsets of the four vertices of each pixel's tetrahedron and
    /// their weights (summing to 2¹⁵), in pixel order.
    struct Cells {
        offsets: [[u32; 8]; 4],
        weights: [__m256i; 4],
    }

    #[target_feature(enable = "avx2")]
    #[inline]
    fn cells(r: __m256i, g: __m256i, b: __m256i, n: u32) -> Cells {
        let n_minus_1 = _mm256_set1_epi32(n as i32 - 1);
        let n_minus_2 = _mm256_set1_epi32(n as i32 - 2);
        let (ir, fr) = position(r, n_minus_1, n_minus_2);
        let (ig, fg) = position(g, n_minus_1, n_minus_2);
        let (ib, fb) = position(b, n_minus_1, n_minus_2);
        let (dr, dg, db) = (_mm256_set1_epi32((n * n) as i32), _mm256_set1_epi32(n as i32), _mm256_set1_epi32(1));
        let base = _mm256_add_epi32(_mm256_add_epi32(_mm256_mullo_epi32(ir, dr), _mm256_mullo_epi32(ig, dg)), ib);
        let top = _mm256_add_epi32(base, _mm256_set1_epi32((n * n + n + 1) as i32));
        // The scalar kernel sorts (fraction, stride) pairs: on equal
        // fractions the larger stride (red, then green) comes first.
        let g_over_r = _mm256_cmpgt_epi32(fg, fr);
        let b_over_r = _mm256_cmpgt_epi32(fb, fr);
        let b_over_g = _mm256_cmpgt_epi32(fb, fg);
        let first = _mm256_blendv_epi8(dr, _mm256_blendv_epi8(dg, db, b_over_g), _mm256_or_si256(g_over_r, b_over_r));
        let last = _mm256_blendv_epi8(db, _mm256_blendv_epi8(dg, dr, g_over_r), _mm256_or_si256(b_over_r, b_over_g));
        let high = _mm256_max_epu32(fr, _mm256_max_epu32(fg, fb));
        let low = _mm256_min_epu32(fr, _mm256_min_epu32(fg, fb));
        let mid = _mm256_sub_epi32(_mm256_sub_epi32(_mm256_add_epi32(_mm256_add_epi32(fr, fg), fb), high), low);
        let vertices = [base, _mm256_add_epi32(base, first), _mm256_sub_epi32(top, last), top];
        let mut offsets = [[0u32; 8]; 4];
        for (v, out) in vertices.into_iter().zip(offsets.iter_mut()) {
            // SAFETY: `out` is 32 writable bytes; the store is unaligned.
            unsafe { _mm256_storeu_si256(out.as_mut_ptr().cast(), _mm256_slli_epi32::<4>(v)) };
        }
        Cells {
            offsets,
            weights: [
                _mm256_sub_epi32(_mm256_set1_epi32(1 << 15), high),
                _mm256_sub_epi32(high, mid),
                _mm256_sub_epi32(mid, low),
                low,
            ],
        }
    }

    /// See [`super::rgb8_blocks`].
    ///
    /// # Safety
    /// AVX2 must be available, `grid` in `super::GRIDS` and
    /// `nodes.len() == grid³`.
    #[target_feature(enable = "avx2")]
    pub(super) unsafe fn rgb8(nodes: &[[u64; 2]], grid: u32, black: Option<u8>, rgb: &[u8], cmyk: &mut [u8]) -> usize {
        let blocks = (rgb.len() / 3).min(cmyk.len() / 4) / 8;
        let table = nodes.as_ptr().cast::<u8>();
        // Byte i of each 32-bit lane's low byte: pixel i's channel, from the
        // first 16 bytes (pixels 0–3) in the low half and from bytes 8–23
        // (pixels 4–7, starting at byte 4) in the high half.
        let spread = |c: i8| {
            _mm256_setr_epi8(
                c,
                -1,
                -1,
                -1,
                3 + c,
                -1,
                -1,
                -1,
                6 + c,
                -1,
                -1,
                -1,
                9 + c,
                -1,
                -1,
                -1,
                4 + c,
                -1,
                -1,
                -1,
                7 + c,
                -1,
                -1,
                -1,
                10 + c,
                -1,
                -1,
                -1,
                13 + c,
                -1,
                -1,
                -1,
            )
        };
        let (spread_r, spread_g, spread_b) = (spread(0), spread(1), spread(2));
        let half = _mm256_set1_epi32(1 << 14);
        let (round8, scale8) = (_mm256_set1_epi32(128), _mm256_set1_epi32(65281));
        let black_word = _mm256_set1_epi32((black.unwrap_or(0) as i32) << 24);
        let keep_black = _mm256_set1_epi32(if black.is_some() { -1 } else { 0 });
        // Pair j of a block holds pixel j in its low half and pixel j + 4 in
        // its high half, so that the packs below leave pixels in order.
        let pair = |j: i32| _mm256_setr_epi32(j, j, j, j, j + 4, j + 4, j + 4, j + 4);
        let pairs = [pair(0), pair(1), pair(2), pair(3)];
        for block in 0..blocks {
            // SAFETY: the block's 24 bytes lie inside `rgb` (block < blocks);
            // the loads read bytes 0–15 and 8–23 of it, unaligned.
            let pixels = unsafe {
                let src = rgb.as_ptr().add(24 * block);
                _mm256_set_m128i(_mm_loadu_si128(src.add(8).cast()), _mm_loadu_si128(src.cast()))
            };
            let r = _mm256_shuffle_epi8(pixels, spread_r);
            let g = _mm256_shuffle_epi8(pixels, spread_g);
            let b = _mm256_shuffle_epi8(pixels, spread_b);
            let cells = cells(r, g, b, grid);
            let mut sums = [_mm256_setzero_si256(); 4];
            for (j, sum) in sums.iter_mut().enumerate() {
                let mut acc = half;
                for v in 0..4 {
                    let (lo, hi) = (cells.offsets[v][j] as usize, cells.offsets[v][j + 4] as usize);
                    // SAFETY: each offset is 16 × a node index of the
                    // pixel's cell, whose base index per axis is at most
                    // grid − 2 (clamped in `position`), so the index is at
                    // most grid³ − 1 and the 16 bytes read lie in `nodes`
                    // (grid³ nodes of 16 bytes, checked by the caller).
                    let node = unsafe { _mm256_set_m128i(_mm_loadu_si128(table.add(hi).cast()), _mm_loadu_si128(table.add(lo).cast())) };
                    let weight = _mm256_permutevar8x32_epi32(cells.weights[v], pairs[j]);
                    acc = _mm256_add_epi32(acc, _mm256_mullo_epi32(node, weight));
                }
                let v16 = _mm256_srli_epi32::<15>(acc);
                *sum = _mm256_srli_epi32::<24>(_mm256_mullo_epi32(_mm256_add_epi32(v16, round8), scale8));
            }
            let bytes = _mm256_packus_epi16(_mm256_packus_epi32(sums[0], sums[1]), _mm256_packus_epi32(sums[2], sums[3]));
            let zero = _mm256_cmpeq_epi32(_mm256_or_si256(_mm256_or_si256(r, g), b), _mm256_setzero_si256());
            let bytes = _mm256_blendv_epi8(bytes, black_word, _mm256_and_si256(zero, keep_black));
            // SAFETY: the block's 32 output bytes lie inside `cmyk`
            // (block < blocks); the store is unaligned.
            unsafe { _mm256_storeu_si256(cmyk.as_mut_ptr().add(32 * block).cast(), bytes) };
        }
        8 * blocks
    }
}

#[cfg(test)]
mod tests {
    /// The lane arithmetic of grid positions is the scalar `position` for
    /// every 8-bit code and every grid the vector kernel takes.
    #[test]
    #[cfg(target_arch = "x86_64")]
    fn lane_positions_are_the_scalar_positions() {
        use super::super::kernel::position;
        use std::arch::x86_64::*;
        if !std::arch::is_x86_feature_detected!("avx2") {
            eprintln!("this processor has no AVX2: nothing to check");
            return;
        }
        #[target_feature(enable = "avx2")]
        fn lanes(codes: [i32; 8], grid: u32) -> ([u32; 8], [u32; 8]) {
            let (n1, n2) = (_mm256_set1_epi32(grid as i32 - 1), _mm256_set1_epi32(grid as i32 - 2));
            let c = _mm256_setr_epi32(codes[0], codes[1], codes[2], codes[3], codes[4], codes[5], codes[6], codes[7]);
            let (index, fraction) = super::avx2::position(c, n1, n2);
            let (mut i, mut f) = ([0u32; 8], [0u32; 8]);
            // SAFETY: each array is 32 writable bytes; the stores are unaligned.
            unsafe {
                _mm256_storeu_si256(i.as_mut_ptr().cast(), index);
                _mm256_storeu_si256(f.as_mut_ptr().cast(), fraction);
            }
            (i, f)
        }
        for grid in super::GRIDS {
            for first in (0..256).step_by(8) {
                let codes: [i32; 8] = std::array::from_fn(|k| first + k as i32);
                // SAFETY: AVX2 is available (checked above).
                let (index, fraction) = unsafe { lanes(codes, grid as u32) };
                for k in 0..8 {
                    let p = position(codes[k] as u32, 255, grid);
                    assert_eq!((index[k], fraction[k]), (p.index, p.fraction), "grid {grid}, code {}", codes[k]);
                }
            }
        }
    }
}
