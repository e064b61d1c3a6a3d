//! Re-separation of CMYK that arrives already separated for another printing
//! condition (the source condition) into CMYK for the target condition.
//!
//! Each source build is printed through the source condition's forward model,
//! the colour is carried to the target by the rendering intent (ICC.1:2022
//! §6.2.2: media-relative colorimetry for perceptual and relative, absolute
//! colorimetry for absolute), and the target separator inverts it under its
//! own black generation and ink limit. The whole chain is sampled once on a
//! regular 4-D grid over the source coverages and applied to pixels by 4-D
//! simplex interpolation: the tetrahedral method of Kasson, Nin, Plouffe &
//! Hafner (J. Electronic Imaging 4 (1995) 226–250) generalised to four
//! dimensions. The four fractional parts are sorted, the walk from the base
//! node along the axes in that order visits five nodes, and the weights are
//! the differences of the sorted fractions. The weights are non-negative and
//! sum to one, so every interpolated build is a convex combination of node
//! builds and keeps the ink limit and the maximum black the nodes meet.
//!
//! Pure black stays pure black (the default for CMYK input): a pixel with no
//! cyan, magenta or yellow is re-separated to black ink only, so black text
//! and hairlines never pick up three more plates and register problems. Its
//! black comes from a 1-D curve of [`BLACK_CURVE_STEPS`] entries that gives,
//! for each source black coverage, the target black-only coverage whose
//! media-relative L* matches the L* the source prints with that black alone
//! (clamped to the target's maximum black; the curve is made monotone by a
//! running maximum, so a darker source black never gets less target black).
//! Only pixels with exactly no C, M, Y take this path (as RGB pure black does
//! in the RGB table); the grid nodes on the black axis keep their colorimetric
//! builds. Setting those nodes to the black-only builds as well would make the
//! plates continuous next to pure black, but the cells beside the black axis
//! would then blend builds of one colour with very different black (the
//! black-only build and the target's black generation), and such blends print
//! another colour: at grid 17, same condition, relative intent, builds with
//! C, M, Y ≤ 6 % were off by ΔE2000 1.9 on average (12 at worst) that way,
//! against 0.3 (3.5) with colorimetric nodes. A pixel with a trace of colour
//! beside pure black therefore gets the target's four-colour build of its
//! colour.
//!
//! The intents that need the source's black (perceptual, relative with black
//! point compensation) take the darkest neutral the source prints with every
//! ink at full coverage (no ink limit is known for an incoming file), where
//! the RGB path takes L* 0 for the source black.

use super::SeparationSettings;
use super::black::{BLACK_CURVE_STEPS, BlackOnlyCurve};
use super::engine::{Intent, Separator};
use super::frame::{AbsoluteLab, IntentLab, RelativeLab};
use super::gamut::{GamutBoundary, PerceptualMap, SourceGamut, black_point_compensation};
use super::kernel::{PackedNodes, Position, Sample, WEIGHT_BITS, WEIGHT_ONE, position, simplex, step_table, steps};
use super::limits::{InkCaps, narrow_within};
use super::shadows::smooth_shadows;
use crate::colour::Lab;
use crate::error::{Error, Result};
use crate::ink::Cmyk;
use crate::press::PrintingCondition;
use rayon::prelude::*;

/// Default nodes per axis of a re-separation table.
pub const DEFAULT_RESEPARATION_GRID: usize = 17;

/// Allowed nodes per axis (17⁴ = 83 521 nodes; 33⁴ ≈ 1.2 million).
pub const RESEPARATION_GRID_RANGE: std::ops::RangeInclusive<usize> = 5..=33;

/// The colours a source printing condition can print with any ink amount
/// (no ink limit, black up to 100 %), for perceptual gamut mapping.
///
/// The boundary is the one [`Separator`] builds (segment maxima over dense
/// samples of the faces of the ink box, see [`GamutBoundary`]), from a
/// separator for the source condition with TAC 400 % and maximum black 100 %.
/// The source's primaries and its cusp ridge (the edges of the ink cube
/// without black) are given exactly, for hue alignment and cusp mapping.
pub struct CmykSourceGamut {
    separator: Separator,
    primaries: [Lab; 6],
}

impl CmykSourceGamut {
    pub fn new(source: &PrintingCondition) -> Result<CmykSourceGamut> {
        let mut settings = SeparationSettings::for_condition(source);
        settings.intent = Intent::Relative;
        settings.bpc = false;
        settings.tac = 4.0;
        settings.black.black_max = 1.0;
        let separator = Separator::new(source.clone(), settings)?;
        let primaries = separator.process_primaries();
        Ok(CmykSourceGamut { separator, primaries })
    }

    /// The described boundary (media-relative).
    pub fn boundary(&self) -> &GamutBoundary {
        self.separator.gamut()
    }

    /// The darkest neutral the source prints (media-relative): black and the
    /// other inks at full coverage, balanced neutral to slightly cool.
    pub fn black_point(&self) -> RelativeLab {
        self.separator.black_point().0
    }

    /// The source's printed colour, media-relative.
    pub fn printed_relative(&self, ink: Cmyk) -> RelativeLab {
        self.separator.printed_relative(ink)
    }

    /// The source's printed colour, absolute.
    pub fn printed_absolute(&self, ink: Cmyk) -> AbsoluteLab {
        self.separator.printed_absolute(ink)
    }
}

impl SourceGamut for CmykSourceGamut {
    fn contains(&self, lab: Lab) -> bool {
        self.separator.gamut().contains(lab)
    }

    fn primaries(&self) -> Option<[Lab; 6]> {
        Some(self.primaries)
    }

    fn ridge(&self) -> Option<Vec<Lab>> {
        Some(self.separator.process_ridge())
    }
}

/// How the source colour of a node becomes the target's working-frame aim.
enum NodeMapping<'a> {
    /// Relative (without BPC) and absolute: the separator's own
    /// `intent_target`, fed media-relative or absolute source colour.
    Direct { absolute: bool, mapping: super::SourceMapping<'a> },
    /// Relative with black point compensation (ISO 18619) from the source's
    /// black point to the target's.
    Bpc { source_black_y: f64, target_black_y: f64 },
    /// Perceptual mapping from the source printing gamut, with the source
    /// black point as the source's black (the RGB path takes 0).
    Perceptual(PerceptualMap<'a>),
}

/// A 4-D table from source CMYK (nominal coverages of the source condition,
/// 0..1 per axis) to target CMYK, with the black-only curve for pure black.
#[derive(Debug, Clone, PartialEq)]
pub struct ReseparationTable {
    grid: usize,
    /// Target CMYK per node as 0..65535, node index ((c·N + m)·N + y)·N + k.
    nodes: Vec<[u16; 4]>,
    /// The same nodes packed for the pixel kernel.
    packed: PackedNodes,
    /// The nodes for 8-bit output, quantised to [`InkCaps::for_8_bit_nodes`].
    packed8: PackedNodes,
    /// Source black → target black only, 0..65535, when pure black is kept.
    black_curve: Option<Vec<u16>>,
    /// The same curve sampled at the 256 8-bit codes, rounded to 8 bits.
    black_curve8: Option<Vec<u8>>,
    /// The target's total ink and black, which rounding a pixel to 8 bits
    /// must not break either.
    caps: InkCaps,
}

impl ReseparationTable {
    /// Builds the table for CMYK separated for `source`, re-separated by
    /// `target` under its intent, black generation and limits.
    /// `keep_pure_black`: pixels with no C, M, Y print black only (see the
    /// module notes). `grid`: nodes per axis, 5–33 ([`DEFAULT_RESEPARATION_GRID`] = 17).
    pub fn build(target: &Separator, source: &PrintingCondition, keep_pure_black: bool, grid: usize) -> Result<ReseparationTable> {
        if !RESEPARATION_GRID_RANGE.contains(&grid) {
            return Err(Error::usage(format!(
                "re-separation grid is {grid}; allowed range is {}–{} nodes per axis",
                RESEPARATION_GRID_RANGE.start(),
                RESEPARATION_GRID_RANGE.end()
            )));
        }
        let source_gamut = CmykSourceGamut::new(source)?;
        let settings = target.settings();
        let (target_black, _) = target.black_point();
        let mapping = match settings.intent {
            Intent::Perceptual => NodeMapping::Perceptual(PerceptualMap::new(
                target.gamut(),
                &target.process_ridge(),
                target_black.lab(),
                &source_gamut,
                source_gamut.black_point().lab().l,
            )),
            Intent::Relative if settings.bpc => NodeMapping::Bpc {
                source_black_y: source_gamut.black_point().lab().to_xyz().y,
                target_black_y: target_black.lab().to_xyz().y,
            },
            intent => NodeMapping::Direct {
                absolute: intent == Intent::Absolute,
                mapping: target.source_mapping(&source_gamut),
            },
        };
        // The source's printed colour in the frame the intent reads.
        let aim = |ink: Cmyk| -> RelativeLab {
            match &mapping {
                NodeMapping::Direct { absolute: true, mapping } => {
                    target.intent_target(IntentLab::new(source_gamut.printed_absolute(ink).lab()), mapping)
                }
                NodeMapping::Direct { absolute: false, mapping } => {
                    target.intent_target(IntentLab::new(source_gamut.printed_relative(ink).lab()), mapping)
                }
                NodeMapping::Bpc {
                    source_black_y,
                    target_black_y,
                } => RelativeLab::new(black_point_compensation(
                    source_gamut.printed_relative(ink).lab(),
                    *source_black_y,
                    *target_black_y,
                )),
                NodeMapping::Perceptual(map) => RelativeLab::new(map.map(source_gamut.printed_relative(ink).lab())),
            }
        };

        let n = grid;
        let coord = |i: usize| i as f64 / (n - 1) as f64;
        // One line of nodes along black per (c, m, y); each line is solved in
        // order with warm starts, so neighbouring nodes take the same branch
        // of the inversion and the result does not depend on threads.
        let lines: Vec<Vec<([f64; 4], f64)>> = (0..n * n * n)
            .into_par_iter()
            .map(|line| {
                let (c, m, y) = (line / (n * n), (line / n) % n, line % n);
                let mut start = None;
                (0..n)
                    .map(|k| {
                        let t = aim(Cmyk::new(coord(c), coord(m), coord(y), coord(k)));
                        let s = target.invert(t, start);
                        start = Some(s.x);
                        (s.x, t.lab().l)
                    })
                    .collect()
            })
            .collect();
        let (mut inks, lightness): (Vec<[f64; 4]>, Vec<f64>) = lines.into_iter().flatten().unzip();
        if target.smooths_shadows_in_ink() {
            smooth_shadows(&mut inks, &lightness, n, 4, target_black.lab().l);
        }
        let caps = InkCaps::of(settings);
        let (nodes, nodes8) = caps.quantize_nodes(inks);

        let (black_curve, black_curve8) = if keep_pure_black {
            let curve = black_only_curve(&source_gamut, target, caps);
            // Rounded, but never over the maximum black in 8-bit codes.
            let curve8: Vec<u8> = (0..256u32)
                .map(|v| caps.black_from_16::<u8>(curve_at(&curve, v, 255) as u32) as u8)
                .collect();
            (Some(curve), Some(curve8))
        } else {
            (None, None)
        };
        Ok(ReseparationTable {
            grid: n,
            packed: PackedNodes::new(&nodes),
            packed8: PackedNodes::new(&nodes8),
            nodes,
            black_curve,
            black_curve8,
            caps,
        })
    }

    pub fn grid(&self) -> usize {
        self.grid
    }

    /// True when pixels without C, M, Y are re-separated to black only.
    pub fn keeps_pure_black(&self) -> bool {
        self.black_curve.is_some()
    }

    /// Every node's target build (fractions), in node order.
    pub fn node_builds(&self) -> impl Iterator<Item = Cmyk> + '_ {
        self.nodes.iter().map(|q| Cmyk::from_array(q.map(|v| v as f64 / 65535.0)))
    }

    /// The black-only curve (target black, 0..65535, at source black
    /// i / (len − 1)), when pure black is kept.
    pub fn black_curve(&self) -> Option<&[u16]> {
        self.black_curve.as_deref()
    }

    /// Node offset of each axis's position per unit index (c, m, y, k).
    #[inline]
    fn strides(&self) -> [u32; 4] {
        let n = self.grid as u32;
        [n * n * n, n * n, n, 1]
    }

    #[inline]
    fn interpolate(&self, p: [Position; 4]) -> [u32; 4] {
        let s = self.strides();
        let base = p[0].index * s[0] + p[1].index * s[1] + p[2].index * s[2] + p[3].index * s[3];
        self.interpolate_at(base, std::array::from_fn(|a| (p[a].fraction, s[a])))
    }

    /// Simplex interpolation in the cell at node `base`; `axes` holds each
    /// axis's fraction and node stride.
    #[inline]
    fn interpolate_at(&self, base: u32, axes: [(u32, u32); 4]) -> [u32; 4] {
        // Axes in order of decreasing fraction: a sorting network of five
        // compare-exchanges on (fraction, stride) packed into one key, with
        // min/max so that it compiles without branches. Ties take either
        // order; their weight is zero.
        let mut k = axes.map(|(f, s)| ((f as u64) << 32) | s as u64);
        let cx = |k: &mut [u64; 4], a: usize, b: usize| {
            let (hi, lo) = (k[a].max(k[b]), k[a].min(k[b]));
            k[a] = hi;
            k[b] = lo;
        };
        cx(&mut k, 0, 1);
        cx(&mut k, 2, 3);
        cx(&mut k, 0, 2);
        cx(&mut k, 1, 3);
        cx(&mut k, 1, 2);
        let axes = k.map(|v| ((v >> 32) as u32, v as u32));
        let w = [
            WEIGHT_ONE - axes[0].0,
            axes[0].0 - axes[1].0,
            axes[1].0 - axes[2].0,
            axes[2].0 - axes[3].0,
            axes[3].0,
        ];
        let v1 = base + axes[0].1;
        let v2 = v1 + axes[1].1;
        let v3 = v2 + axes[2].1;
        let v4 = v3 + axes[3].1;
        let v = [
            self.nodes[base as usize],
            self.nodes[v1 as usize],
            self.nodes[v2 as usize],
            self.nodes[v3 as usize],
            self.nodes[v4 as usize],
        ];
        std::array::from_fn(|ch| {
            (w[0] * v[0][ch] as u32
                + w[1] * v[1][ch] as u32
                + w[2] * v[2][ch] as u32
                + w[3] * v[3][ch] as u32
                + w[4] * v[4][ch] as u32
                + (WEIGHT_ONE >> 1))
                >> WEIGHT_BITS
        })
    }

    /// The target build for one source build (fractions, clamped to 0..1).
    pub fn lookup(&self, cmyk: Cmyk) -> Cmyk {
        let max = 1u32 << 24;
        let codes = cmyk.to_array().map(|v| (v.clamp(0.0, 1.0) * max as f64).round() as u32);
        if let Some(curve) = &self.black_curve
            && codes[..3] == [0, 0, 0]
        {
            return Cmyk::new(0.0, 0.0, 0.0, curve_at(curve, codes[3], max) as f64 / 65535.0);
        }
        let p = codes.map(|v| position(v, max, self.grid));
        Cmyk::from_array(self.interpolate(p).map(|v| v as f64 / 65535.0))
    }

    /// Re-separates interleaved 8-bit CMYK (0 = no ink; `input.len() =
    /// output.len() = 4·pixels`), in parallel over rows of `row_pixels`.
    pub fn apply_cmyk8(&self, input: &[u8], output: &mut [u8], row_pixels: usize) {
        let curve8 = self.black_curve8.as_deref();
        self.apply(input, output, row_pixels, curve8.map(|c| move |k: u32| c[k as usize]))
    }

    /// 16-bit CMYK that this table wrote ([`apply_cmyk16`](Self::apply_cmyk16))
    /// rounded to 8 bits, holding the target's ink limit and maximum black
    /// to the code as [`apply_cmyk8`](Self::apply_cmyk8) does.
    pub fn narrow_to_8bit(&self, cmyk16: &[u16]) -> Vec<u8> {
        narrow_within(self.caps, cmyk16)
    }

    /// Re-separates interleaved 16-bit CMYK (0 = no ink) into interleaved
    /// 16-bit CMYK, in parallel over rows of `row_pixels`.
    pub fn apply_cmyk16(&self, input: &[u16], output: &mut [u16], row_pixels: usize) {
        let curve = self.black_curve.as_deref();
        self.apply(input, output, row_pixels, curve.map(|c| move |k: u32| curve_at(c, k, 65535)))
    }

    /// The pixel kernel for either sample type: simplex interpolation as in
    /// [`ReseparationTable::lookup`] at the pixel's codes, rounded to the
    /// sample type; `black` re-separates pixels without C, M, Y.
    fn apply<S: Sample>(&self, input: &[S], output: &mut [S], row_pixels: usize, black: Option<impl Fn(u32) -> S + Sync>) {
        let strides = self.strides();
        let table = step_table::<S, 4>(self.grid, strides);
        let zero = S::from_16(0);
        // As in `SeparationTable`: 8-bit pixels from nodes rounding cannot
        // take over the limits.
        let packed = if S::MAX == 255 { &self.packed8 } else { &self.packed };
        let row_pixels = row_pixels.max(1);
        input
            .par_chunks(4 * row_pixels)
            .zip(output.par_chunks_mut(4 * row_pixels))
            .for_each(|(src, dst)| {
                for (px, out) in src.chunks_exact(4).zip(dst.chunks_exact_mut(4)) {
                    if let Some(black) = &black
                        && px[0].code() | px[1].code() | px[2].code() == 0
                    {
                        out.copy_from_slice(&[zero, zero, zero, black(px[3].code())]);
                        continue;
                    }
                    let v = simplex::<4, 5>(packed, steps(&table, px, self.grid, strides));
                    for ch in 0..4 {
                        out[ch] = S::from_16(v[ch]);
                    }
                }
            });
    }
}

/// The black-only curve at source black `value / max`, interpolated linearly
/// between entries (which keeps it monotone and under the black cap).
#[inline]
fn curve_at(curve: &[u16], value: u32, max: u32) -> u16 {
    let steps = (curve.len() - 1) as u64;
    let scaled = value.min(max) as u64 * steps;
    let i = (scaled / max as u64) as usize;
    if i as u64 >= steps {
        return curve[curve.len() - 1];
    }
    let rem = scaled % max as u64;
    let (a, b) = (curve[i] as u64, curve[i + 1] as u64);
    ((a * (max as u64 - rem) + b * rem + max as u64 / 2) / max as u64) as u16
}

/// For each source black coverage i / (len − 1), the target black-only
/// coverage of the same media-relative L* ([`BlackOnlyCurve`]), rounded to
/// 16 bits, never over the target's maximum black.
fn black_only_curve(source: &CmykSourceGamut, target: &Separator, caps: InkCaps) -> Vec<u16> {
    let lightness: Vec<Option<f64>> = (0..BLACK_CURVE_STEPS)
        .map(|i| {
            let s = i as f64 / (BLACK_CURVE_STEPS - 1) as f64;
            (s > 0.0).then(|| source.printed_relative(Cmyk::new(0.0, 0.0, 0.0, s)).lab().l)
        })
        .collect();
    let curve = BlackOnlyCurve::new(target, &lightness);
    curve.coverages().iter().map(|&k| caps.black_code::<u16>(k) as u16).collect()
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn curve_interpolation_hits_the_ends() {
        let curve: Vec<u16> = (0..BLACK_CURVE_STEPS as u32).map(|i| (i * 10) as u16).collect();
        assert_eq!(curve_at(&curve, 0, 255), 0);
        assert_eq!(curve_at(&curve, 255, 255), curve[BLACK_CURVE_STEPS - 1]);
        assert_eq!(curve_at(&curve, 65535, 65535), curve[BLACK_CURVE_STEPS - 1]);
        // Halfway between entries 0 and 1 of a 16-bit input.
        let half = 65535 / (BLACK_CURVE_STEPS as u32 - 1) / 2;
        assert!(curve_at(&curve, half, 65535) <= 10);
    }

    #[test]
    fn simplex_weights_sum_to_one() {
        // A table whose nodes hold their own coordinates reproduces any point
        // exactly (linear precision of simplex interpolation).
        let n = 5usize;
        let nodes: Vec<[u16; 4]> = (0..n.pow(4))
            .map(|i| {
                let idx = [i / (n * n * n), (i / (n * n)) % n, (i / n) % n, i % n];
                idx.map(|v| (v * 65535 / (n - 1)) as u16)
            })
            .collect();
        let t = ReseparationTable {
            grid: n,
            packed: PackedNodes::new(&nodes),
            packed8: PackedNodes::new(&nodes),
            nodes,
            black_curve: None,
            black_curve8: None,
            caps: InkCaps::new(4.0, 1.0),
        };
        // Linear precision holds for the pixel kernels too, to within the
        // rounding of the node values and of the output (8 bits: ±1 code).
        let codes8: Vec<u8> = (0..=255u32)
            .flat_map(|v| [v, (v * 7) % 256, 255 - v, (v * 13 + 5) % 256].map(|c| c as u8))
            .collect();
        let mut out8 = vec![0u8; codes8.len()];
        t.apply_cmyk8(&codes8, &mut out8, 16);
        for (px, out) in codes8.chunks_exact(4).zip(out8.chunks_exact(4)) {
            for ch in 0..4 {
                assert!((px[ch] as i32 - out[ch] as i32).abs() <= 1, "{px:?} -> {out:?}");
            }
        }
        let codes16: Vec<u16> = codes8.iter().map(|&v| v as u16 * 256 + 100).collect();
        let mut out16 = vec![0u16; codes16.len()];
        t.apply_cmyk16(&codes16, &mut out16, 16);
        for (px, out) in codes16.chunks_exact(4).zip(out16.chunks_exact(4)) {
            for ch in 0..4 {
                assert!((px[ch] as i32 - out[ch] as i32).abs() <= 2, "{px:?} -> {out:?}");
            }
        }
        for probe in [
            [0.3, 0.7, 0.1, 0.9],
            [0.0, 1.0, 0.5, 0.25],
            [0.6, 0.6, 0.6, 0.6],
            [1.0, 1.0, 1.0, 1.0],
        ] {
            let got = t.lookup(Cmyk::from_array(probe)).to_array();
            for ch in 0..4 {
                assert!((got[ch] - probe[ch]).abs() < 2e-4, "{probe:?} -> {got:?}");
            }
        }
    }
}
