//! The ink limit and the maximum black, held from the solver to the last
//! written code. A newcomer looking for where total ink (TAC) and maximum
//! black are enforced finds every holder here:
//!
//! 1. **Solve** ([`InkBounds`]): every inversion searches the feasible set
//!    {0 ≤ c, m, y ≤ 1, 0 ≤ k ≤ maximum black, c + m + y + k ≤ TAC}, and
//!    every trial point is projected onto it ([`InkBounds::project`]), so
//!    every solved build meets both limits.
//! 2. **Nodes** ([`InkCaps::quantize_nodes`], [`quantize`]): a table node is rounded to 16 bits, and
//!    channels rounded up are taken back, largest rounding first, until the
//!    total and black fit the 16-bit caps ([`InkCaps::new`]: the limits
//!    rounded down to the code).
//! 3. **Interpolation**: tetrahedral (and 4-D simplex) interpolation is a
//!    convex combination of nodes (weights ≥ 0 summing to one), so every
//!    interpolated 16-bit pixel keeps the linear constraints its nodes meet.
//! 4. **8-bit output** ([`InkCaps::for_8_bit_nodes`]): 8-bit pixels come
//!    from a second node set quantised one code under the limits, so that
//!    rounding each plate to the nearest code cannot go over.
//! 5. **Narrowing** ([`narrow_within`], [`round_within`]): 16-bit CMYK
//!    written at 8 bits rounds down the plates rounded up the most where a
//!    pixel would go over.
//! 6. **Black only** ([`InkCaps::black_code`], [`InkCaps::black_from_16`],
//!    [`InkCaps::black_sample`]): builds on the black plate alone (gray
//!    input, pure black) are rounded to the nearest code, or down, and never
//!    over the maximum black.
//!
//! Either way no written pixel exceeds the ink limit or the maximum black by
//! one code. [`InkBounds::broken_by`] names the limits a build given as it
//! is (a recipe) breaks.

use super::engine::{Limit, LimitSet, SeparationSettings};
use super::kernel::Sample;
use crate::ink::Cmyk;
use rayon::prelude::*;

/// The feasible set of coverages.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct InkBounds {
    /// Total ink limit as a fraction (3.2 = 320 %).
    pub tac: f64,
    /// Maximum black as a fraction.
    pub k_max: f64,
    /// Minimum black (equal to `k_max` to hold black at one value).
    pub k_min: f64,
}

impl InkBounds {
    /// The usual bounds: no black floor.
    pub fn new(tac: f64, k_max: f64) -> InkBounds {
        InkBounds { tac, k_max, k_min: 0.0 }
    }

    /// The same bounds with black held at `k`.
    pub fn with_black(self, k: f64) -> InkBounds {
        let k = k.clamp(0.0, self.k_max);
        InkBounds {
            k_min: k,
            k_max: k,
            ..self
        }
    }

    #[inline]
    pub(super) fn upper(&self, i: usize) -> f64 {
        if i == 3 { self.k_max } else { 1.0 }
    }

    #[inline]
    pub(super) fn lower(&self, i: usize) -> f64 {
        if i == 3 { self.k_min } else { 0.0 }
    }

    /// Euclidean projection onto {0 ≤ xᵢ ≤ uᵢ, Σxᵢ ≤ TAC}: clamp(x − τ) with
    /// the smallest τ ≥ 0 that meets the ink limit.
    pub fn project(&self, x: [f64; 4]) -> [f64; 4] {
        let clamp = |x: [f64; 4], tau: f64| std::array::from_fn(|i| (x[i] - tau).clamp(self.lower(i), self.upper(i)));
        let first: [f64; 4] = clamp(x, 0.0);
        if first.iter().sum::<f64>() <= self.tac {
            return first;
        }
        let (mut lo, mut hi) = (0.0, x.iter().cloned().fold(0.0, f64::max).max(0.0));
        for _ in 0..60 {
            let mid = 0.5 * (lo + hi);
            if clamp(x, mid).iter().sum::<f64>() > self.tac {
                lo = mid;
            } else {
                hi = mid;
            }
        }
        clamp(x, hi)
    }

    /// The limits `cmyk` breaks, for a build given as it is (not solved):
    /// more total ink than the limit, more black than the maximum black.
    pub fn broken_by(&self, cmyk: Cmyk) -> LimitSet {
        let mut limits = LimitSet::default();
        if cmyk.total() > self.tac + 1e-9 {
            limits.insert(Limit::InkLimit);
        }
        if cmyk.k > self.k_max + 1e-9 {
            limits.insert(Limit::MaximumBlack);
        }
        limits
    }
}

/// Rounds a node to 16 bits without letting rounding break the limits:
/// channels rounded up are taken back, largest rounding first, until the
/// total and black fit.
pub(crate) fn quantize(x: [f64; 4], caps: InkCaps) -> [u16; 4] {
    let scale = 65535.0;
    let mut q = x.map(|v| (v * scale).round().clamp(0.0, scale) as i64);
    q[3] = q[3].min(caps.black as i64);
    let cap = caps.total as i64;
    while q.iter().sum::<i64>() > cap {
        let i = (0..4)
            .filter(|&i| q[i] > 0)
            .max_by(|&a, &b| (q[a] as f64 - x[a] * scale).total_cmp(&(q[b] as f64 - x[b] * scale)))
            .unwrap_or(0);
        q[i] -= 1;
    }
    q.map(|v| v as u16)
}

/// The limits a table's nodes are quantised to ([`quantize`]), in 16-bit
/// units: total ink and black.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub(crate) struct InkCaps {
    total: u32,
    black: u32,
}

impl InkCaps {
    /// The limits for the nodes that 8-bit pixels are interpolated from:
    /// low enough that no pixel between them, each plate rounded to the
    /// nearest code, can go over the limits in 8-bit codes (at 330 %, nodes
    /// hold at most 840.0 codes and pixels at most 841). The cost is one code
    /// of total ink at nodes on the limit; the kernel needs no check.
    pub(crate) fn for_8_bit_nodes(self) -> InkCaps {
        let c = self.codes::<u8>();
        InkCaps {
            total: c.safe_total,
            black: c.safe_black,
        }
    }

    pub(crate) fn new(tac: f64, k_max: f64) -> InkCaps {
        let cap = |v: f64| (v * 65535.0 + 1e-6).floor().clamp(0.0, 4.0 * 65535.0) as u32;
        InkCaps {
            total: cap(tac),
            black: cap(k_max).min(65535),
        }
    }

    /// The caps of a separation's ink limit and maximum black.
    pub(crate) fn of(settings: &SeparationSettings) -> InkCaps {
        InkCaps::new(settings.tac, settings.black.black_max)
    }

    /// A table's nodes (fractions) quantised under these caps, and the same
    /// nodes quantised under [`InkCaps::for_8_bit_nodes`] for 8-bit output.
    pub(crate) fn quantize_nodes(self, inks: Vec<[f64; 4]>) -> (Vec<[u16; 4]>, Vec<[u16; 4]>) {
        let caps8 = self.for_8_bit_nodes();
        let nodes8: Vec<[u16; 4]> = inks.iter().map(|&x| quantize(x, caps8)).collect();
        let nodes: Vec<[u16; 4]> = inks.into_iter().map(|x| quantize(x, self)).collect();
        (nodes, nodes8)
    }

    /// The maximum black as a sample of type `S`, rounded down.
    #[inline]
    pub(crate) fn black_sample<S: Sample>(self) -> S {
        S::from_16_down(self.black)
    }

    /// The maximum black in 16-bit units (what pure black prints at).
    #[inline]
    pub(crate) fn black16(self) -> u16 {
        self.black as u16
    }

    /// A black-only coverage (fraction) as a code of the sample type:
    /// rounded to the nearest code, never over the maximum black.
    #[inline]
    pub(crate) fn black_code<S: Sample>(self, k: f64) -> u32 {
        ((k * S::MAX as f64).round() as u32).min(self.codes::<S>().black)
    }

    /// A 16-bit black (0..65535) as the sample type: rounded to the nearest
    /// code, never over the maximum black.
    #[inline]
    pub(crate) fn black_from_16<S: Sample>(self, v: u32) -> u32 {
        S::from_16(v).code().min(self.codes::<S>().black)
    }

    /// The same limits in codes of the sample type, rounded down, with the
    /// sums of 16-bit values below which rounding cannot break them.
    pub(crate) fn codes<S: Sample>(self) -> PixelCaps {
        let down = |v: u32| (v as u64 * S::MAX as u64 / 65535) as u32;
        let (total, black) = (down(self.total), down(self.black));
        // Rounding gives floor((v · MAX + HALF) / 65535) per channel, so a
        // code sum over `total` needs Σv · MAX + 4 · HALF ≥ (total + 1) · 65535.
        let safe = |cap: u32, channels: u64| (((cap as u64 + 1) * 65535 - channels * S::HALF as u64 - 1) / S::MAX as u64) as u32;
        PixelCaps {
            total,
            black,
            safe_total: safe(total, 4),
            safe_black: safe(black, 1),
        }
    }
}

/// [`InkCaps`] for one sample type ([`InkCaps::codes`]).
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub(crate) struct PixelCaps {
    /// Most total ink and black, in codes.
    total: u32,
    black: u32,
    /// Largest sum of the four 16-bit values, and largest 16-bit black,
    /// whose rounding always fits.
    safe_total: u32,
    safe_black: u32,
}

/// An interpolated pixel (16-bit channels, each within the caps, as
/// interpolation between nodes that are) rounded to the sample type without
/// letting rounding break the limits. Where rounding up would put black or
/// the total over its cap, the channels rounded up the most are rounded down
/// instead, one code each; the floors always fit, so this ends. The common
/// case costs one sum and two compares on the 16-bit values.
#[inline(always)]
pub(crate) fn round_within<S: Sample>(v: [u32; 4], caps: PixelCaps, out: &mut [S]) {
    // At 16 bits nothing is rounded: interpolation between nodes within the
    // caps stays within them, and the constant test drops the check.
    if S::MAX < 65535 && (v[0] + v[1] + v[2] + v[3] > caps.safe_total || v[3] > caps.safe_black) {
        out.copy_from_slice(&held(v, caps));
        return;
    }
    for ch in 0..4 {
        out[ch] = S::from_16(v[ch]);
    }
}

/// 16-bit CMYK from a table with these caps, rounded to 8 bits with
/// [`round_within`], in parallel.
pub(crate) fn narrow_within(caps: InkCaps, cmyk16: &[u16]) -> Vec<u8> {
    let caps = caps.codes::<u8>();
    let mut out = vec![0u8; cmyk16.len()];
    out.par_chunks_mut(4 * 4096)
        .zip(cmyk16.par_chunks(4 * 4096))
        .for_each(|(dst, src)| {
            for (o, px) in dst.chunks_exact_mut(4).zip(src.chunks_exact(4)) {
                round_within([0, 1, 2, 3].map(|i| px[i] as u32), caps, o);
            }
        });
    out
}

#[cold]
fn held<S: Sample>(v: [u32; 4], caps: PixelCaps) -> [S; 4] {
    let mut q = v.map(S::from_16);
    // How far each channel was rounded up, in units of 1 / (65535 · MAX).
    let up = |q: &[S; 4], i: usize| q[i].code() as i64 * 65535 - v[i] as i64 * S::MAX as i64;
    if q[3].code() > caps.black {
        q[3] = S::from_16_down(v[3]);
    }
    while q.iter().map(|s| s.code()).sum::<u32>() > caps.total {
        let Some(i) = (0..4).filter(|&i| up(&q, i) > 0).max_by_key(|&i| (up(&q, i), std::cmp::Reverse(i))) else {
            break;
        };
        q[i] = S::from_16_down(v[i]);
    }
    q
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::separation::kernel::splitmix;

    /// Rounding to 8 bits never puts a pixel over the caps, changes nothing
    /// where plain rounding fits, and otherwise only rounds channels down
    /// that plain rounding took up. Random in-cap pixels with every channel
    /// just over half a code make plain rounding overshoot often.
    #[test]
    fn rounding_to_8_bits_holds_the_ink_limit_and_black() {
        let mut state = 11u64;
        let (tac, k_max) = (3.3, 0.96);
        let caps = InkCaps::new(tac, k_max);
        let codes = caps.codes::<u8>();
        assert_eq!((codes.total, codes.black), (841, 244), "floor(3.3 · 255) and floor(0.96 · 255)");
        let (mut held_total, mut held_black) = (0, 0);
        for _ in 0..200_000 {
            // Codes c + 0.5 … c + 0.99 in 16-bit units, scaled into the caps.
            let raw: [f64; 4] = std::array::from_fn(|_| {
                let c = (splitmix(&mut state) % 255) as f64;
                c + 0.5 + (splitmix(&mut state) % 490) as f64 / 1000.0
            });
            let mut v = raw.map(|c| (c * 65535.0 / 255.0) as u32);
            v[3] = v[3].min(caps.black);
            let sum: u32 = v.iter().sum();
            if sum > caps.total {
                let over = sum - caps.total;
                v[0] = v[0].saturating_sub(over);
                if v.iter().sum::<u32>() > caps.total {
                    continue;
                }
            }
            let plain = v.map(u8::from_16);
            let mut out = [0u8; 4];
            round_within(v, codes, &mut out);
            let total: u32 = out.iter().map(|&c| c as u32).sum();
            assert!(total <= codes.total && out[3] as u32 <= codes.black, "{v:?} → {out:?}");
            let plain_total: u32 = plain.iter().map(|&c| c as u32).sum();
            if plain_total <= codes.total && plain[3] as u32 <= codes.black {
                assert_eq!(out, plain, "{v:?}: nothing to hold");
            } else {
                held_total += (plain_total > codes.total) as u32;
                held_black += (plain[3] as u32 > codes.black) as u32;
                for i in 0..4 {
                    assert!(
                        out[i] == plain[i] || out[i] == u8::from_16_down(v[i]),
                        "{v:?} → {out:?} (plain {plain:?})"
                    );
                }
            }
        }
        assert!(
            held_total > 1000 && held_black > 100,
            "the check fired {held_total} / {held_black} times"
        );
        // Sixteen bits: nothing is rounded, so nothing changes.
        let mut out16 = [0u16; 4];
        round_within([54_000, 54_000, 54_000, caps.total - 162_000], caps.codes::<u16>(), &mut out16);
        assert_eq!(out16, [54_000, 54_000, 54_000, (caps.total - 162_000) as u16]);
    }

    /// Nodes at the 8-bit node caps, interpolated anyhow and rounded per
    /// plate, stay within the 8-bit limits: the worst case rounds all four
    /// plates up by half a code.
    #[test]
    fn eight_bit_node_caps_leave_room_for_rounding() {
        for (tac, k_max) in [(3.3, 0.96), (2.4, 0.9), (2.8, 1.0), (4.0, 1.0), (2.0, 0.5)] {
            let caps = InkCaps::new(tac, k_max);
            let codes = caps.codes::<u8>();
            let caps8 = caps.for_8_bit_nodes();
            let (t16, k16) = (caps8.total, caps8.black);
            // Σ round(v) ≤ (Σv · 255 + 4 · 32767) / 65535 and round(k) alike.
            assert!((t16 as u64 * 255 + 4 * 32767) / 65535 <= codes.total as u64, "{tac}: {t16}");
            assert!(u8::from_16(k16) as u32 <= codes.black, "{k_max}: {k16}");
            // And the room taken is one code of total ink.
            assert!(codes.total as f64 - t16 as f64 * 255.0 / 65535.0 <= 1.01, "{tac}: {t16}");
        }
    }
}
