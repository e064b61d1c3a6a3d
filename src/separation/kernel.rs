//! The fixed-point pixel kernels shared by the RGB separation table and the
//! CMYK re-separation table: where a code value falls on the grid, the 8- and
//! 16-bit sample types, nodes packed two channels to a word, and simplex
//! interpolation (tetrahedral for three axes: Kasson, Nin, Plouffe & Hafner,
//! J. Electronic Imaging 4 (1995) 226–250; the same walk over five nodes for
//! four axes). Weights are 15-bit fixed point and sum to one exactly, so
//! every interpolated value is a convex combination of its nodes.

/// Fixed-point scale of interpolation weights.
pub(crate) const WEIGHT_BITS: u32 = 15;
pub(crate) const WEIGHT_ONE: u32 = 1 << WEIGHT_BITS;
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
    /// The nodes as [`PackedNodes::new`] was given them.
    pub(crate) fn unpacked(&self) -> impl Iterator<Item = [u16; 4]> + '_ {
        self.0
            .iter()
            .map(|&[a, b]| [a as u16, (a >> 32) as u16, b as u16, (b >> 32) as u16])
    }

    pub(crate) fn new(nodes: &[[u16; 4]]) -> PackedNodes {
        PackedNodes(
            nodes
                .iter()
                .map(|v| [v[0] as u64 | (v[1] as u64) << 32, v[2] as u64 | (v[3] as u64) << 32])
                .collect(),
        )
    }

    /// The packed nodes, in node order: each node's C, M, Y and K as the
    /// four 32-bit lanes of 16 bytes (little-endian), the layout the vector
    /// kernel loads.
    #[inline]
    pub(crate) fn words(&self) -> &[[u64; 2]] {
        &self.0
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

/// splitmix64 (Steele, Lea & Flood, OOPSLA 2014), for reproducible test inputs.
#[cfg(test)]
pub(crate) fn splitmix(state: &mut u64) -> u64 {
    *state = state.wrapping_add(0x9E3779B97F4A7C15);
    let mut z = *state;
    z = (z ^ (z >> 30)).wrapping_mul(0xBF58476D1CE4E5B9);
    z = (z ^ (z >> 27)).wrapping_mul(0x94D049BB133111EB);
    z ^ (z >> 31)
}

#[cfg(test)]
mod tests {
    use super::*;

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
