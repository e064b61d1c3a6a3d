//! The picture-independent part of a picture's separation table, and the
//! per-picture step that finishes the table from it.
//!
//! With perceptual compression from the picture's own gamut
//! (`CompressFrom::Picture`) the target of a table node depends on the
//! picture only through the map's reach grid
//! ([`super::PerceptualMap::picture_reach`]), and only where the picture
//! reaches beyond the press boundary: wherever its reach stays below the
//! point at which compression starts, the picture's map gives exactly
//! (bit for bit) the target of the map of a picture with no colours. So
//! the base ([`TableBase`]) holds, per node of the source's RGB grid:
//!
//! - the node's colour prepared for the map ([`PreparedColour`]: the
//!   lightness curve, the focal point and the press boundary's distance
//!   along its ray, all of which depend on the press, not the picture);
//!   mapping a prepared colour is a few arithmetic steps, where mapping a
//!   colour searches the press boundary along its ray, which took about as
//!   long as the inversions the step saves (35 937 nodes: 255–300 ms of
//!   processor time, measured);
//! - its target under the empty picture's map;
//! - the exact inversion's state there (the build, its least-black and
//!   most-black exact builds: [`WarmStart`]), solved as
//!   [`SeparationTable::build`] solves every node.
//!
//! It depends on the separator and the source only, so every picture of a
//! source shares it (about 7.8 MB at 33³, kept in the table cache).
//!
//! The per-picture step ([`TableBase::table_for`]) maps every prepared node
//! through the picture's map; a node whose target is the base's keeps the
//! base's build, and a node whose target moved (compressed toward the press
//! boundary, or narrowed by the shadow taper) is solved exactly,
//! warm-started along its line of nodes as the full build does, from the
//! neighbour's state (the base's own for a neighbour that did not move).
//! The result is the exact build up to the solver's convergence: on the
//! demo, a muted picture and a saturated one, the largest node difference
//! from the full build was 0.26 % ink and 0.11 ΔE2000 of printed colour,
//! the 99th percentile zero (`examples/picture_step.rs`,
//! docs/PERFORMANCE.md).
//!
//! What it costs is the moved nodes: a picture that stays inside the press
//! gamut moves none, but a real picture that leaves it moves every node
//! beyond the knee of the compression in the hue sectors and lightness
//! bands it reaches (the demo: 15 091 of 35 937 nodes; 6 367 of them still
//! outside the gamut after mapping, whose clipping is most of the time).
//! Two ways to make those cheaper were measured and not taken: starting
//! each moved node from the base's own state instead of its neighbour's
//! (no faster), and searching the clip of a node the base clipped from the
//! base's clip alone, skipping the exact searches that fail outside the
//! gamut (faster where the target stays outside, but slower where the
//! compression brings it inside, where the clip converges slowly along the
//! curve of exact builds; limited to targets a distance bound proves still
//! outside, too few nodes qualified to matter).
//!
//! Why this and not a separation on a fine CIELAB grid: interpolating CMYK
//! between CIELAB nodes creases where an ink reaches 0 or 100 % or black
//! starts (docs/REFERENCES.md: 4.7 % of points over 1 % ink at 65³), so
//! every node would need polishing by Newton steps of the press model,
//! each polish a Kmin, Kmax and chosen-black search as a warm-started
//! inversion is, for all 33³ nodes of every picture; here only the moved
//! nodes cost an inversion, and the result needs no accuracy argument
//! beyond the solver's.
//!
//! A cache hit and a miss run the same step on the same base (the base's
//! bytes hold every real as its IEEE 754 bits), so they give the same table.

use super::engine::Separator;
use super::frame::{IntentLab, RelativeLab};
use super::gamut::{PREPARED_REALS, PerceptualMap, PreparedColour};
use super::intent::SourceMapping;
use super::inversion::WarmStart;
use super::picture::PictureGamut;
use super::table::{SeparationTable, solve_lines};
use crate::colour::EncodedRgb;
use rayon::prelude::*;

/// One node of the base: its source colour prepared for the perceptual map,
/// its target under the empty picture's map (working frame) and the
/// inversion's state there.
#[derive(Debug, Clone, Copy, PartialEq)]
struct BaseNode {
    prepared: PreparedColour,
    target: [f64; 3],
    state: WarmStart,
}

/// One node's ink build and its target's lightness.
type NodeInk = ([f64; 4], f64);

/// Reals per node in the base's bytes: the prepared colour, the target,
/// then the build, the least-black and the most-black builds (NaN for an
/// absent one).
const REALS_PER_NODE: usize = PREPARED_REALS + 3 + 3 * 4;

/// The picture-independent part of the separation tables of one separator
/// and source under perceptual compression from the picture.
#[derive(Debug, Clone, PartialEq)]
pub struct TableBase {
    grid: usize,
    /// Node index (r·N + g)·N + b.
    nodes: Vec<BaseNode>,
}

/// How many nodes one per-picture step solved, and how many it took from the base.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub struct PictureStep {
    pub solved: usize,
    pub kept: usize,
}

impl TableBase {
    /// Solves every node of `separator`'s grid for the source colours
    /// `node_lab` gives, under the map of a picture with no colours; `None`
    /// when the separator's intent is not perceptual (its tables depend on
    /// no picture).
    pub fn build(separator: &Separator, node_lab: &(dyn Fn(EncodedRgb) -> IntentLab + Sync)) -> Option<TableBase> {
        let n = separator.settings().table_grid;
        let mapping = separator.picture_mapping(&PictureGamut::from_colours(&[]));
        let map = mapping.perceptual()?;
        let nodes = solve_lines(n, &|rgb, warm| {
            // As `Separator::intent_target` maps a perceptual source colour.
            let prepared = map.prepare(node_lab(rgb).lab());
            let target = RelativeLab::new(map.map_prepared(&prepared));
            separator.invert_along(target, warm);
            BaseNode {
                prepared,
                target: target.lab().to_array(),
                state: *warm,
            }
        });
        Some(TableBase { grid: n, nodes })
    }

    pub fn grid(&self) -> usize {
        self.grid
    }

    /// The per-picture step: the table of `separator` under the picture's
    /// `mapping`, each node kept from the base where its target is the
    /// base's (bit for bit) and solved exactly where it moved. `None` when
    /// the mapping is not perceptual or the separator's grid is not the base's.
    pub fn table_for(&self, separator: &Separator, mapping: &SourceMapping) -> Option<(SeparationTable, PictureStep)> {
        let n = self.grid;
        let map: &PerceptualMap = mapping.perceptual()?;
        if n != separator.settings().table_grid {
            return None;
        }
        let same = |a: [f64; 3], b: [f64; 3]| a.iter().zip(&b).all(|(x, y)| x.to_bits() == y.to_bits());
        let lines: Vec<(Vec<NodeInk>, usize)> = self
            .nodes
            .par_chunks(n)
            .map(|line| {
                let mut warm = WarmStart::default();
                let mut solved = 0;
                let inks = line
                    .iter()
                    .map(|base| {
                        let target = RelativeLab::new(map.map_prepared(&base.prepared));
                        let x = if same(target.lab().to_array(), base.target) {
                            warm = base.state;
                            base.state.result.unwrap_or_default()
                        } else {
                            solved += 1;
                            separator.invert_along(target, &mut warm).x
                        };
                        (x, target.lab().l)
                    })
                    .collect();
                (inks, solved)
            })
            .collect();
        let solved: usize = lines.iter().map(|(_, s)| s).sum();
        let (inks, lightness): (Vec<[f64; 4]>, Vec<f64>) = lines.into_iter().flat_map(|(l, _)| l).unzip();
        let table = SeparationTable::from_inks(separator, inks, &lightness);
        Some((
            table,
            PictureStep {
                solved,
                kept: n * n * n - solved,
            },
        ))
    }

    /// The base as bytes, for the table cache: the grid (u32 LE), then per
    /// node [`REALS_PER_NODE`] reals as f64 LE (the prepared colour, the
    /// target, the build, the least-black and the most-black builds, NaN
    /// for an absent build). [`TableBase::from_bytes`] reads them back
    /// exactly.
    pub fn to_bytes(&self) -> Vec<u8> {
        let mut out = Vec::with_capacity(4 + 8 * REALS_PER_NODE * self.nodes.len());
        out.extend((self.grid as u32).to_le_bytes());
        let build = |x: Option<[f64; 4]>| x.unwrap_or([f64::NAN; 4]);
        for node in &self.nodes {
            let s = node.state;
            for v in node
                .prepared
                .to_reals()
                .iter()
                .chain(&node.target)
                .chain(&build(s.result))
                .chain(&build(s.least_black))
                .chain(&build(s.most_black))
            {
                out.extend(v.to_le_bytes());
            }
        }
        out
    }

    /// The base [`TableBase::to_bytes`] wrote, when it is one of
    /// `separator`'s grid and every node holds a prepared colour, a finite
    /// target and a build.
    pub fn from_bytes(separator: &Separator, bytes: &[u8]) -> Option<TableBase> {
        let n = separator.settings().table_grid;
        let (grid, rest) = bytes.split_first_chunk::<4>()?;
        if u32::from_le_bytes(*grid) as usize != n || rest.len() != 8 * REALS_PER_NODE * n * n * n {
            return None;
        }
        let mut nodes = Vec::with_capacity(n * n * n);
        for chunk in rest.chunks_exact(8 * REALS_PER_NODE) {
            let v: [f64; REALS_PER_NODE] =
                std::array::from_fn(|i| f64::from_le_bytes(chunk[8 * i..8 * i + 8].try_into().expect("eight bytes")));
            let prepared = PreparedColour::from_reals(v[..PREPARED_REALS].try_into().expect("the prepared reals"))?;
            let at = PREPARED_REALS;
            let target = [v[at], v[at + 1], v[at + 2]];
            if target.iter().any(|c| !c.is_finite()) {
                return None;
            }
            let build = |from: usize| -> Option<[f64; 4]> {
                let x: [f64; 4] = std::array::from_fn(|i| v[from + i]);
                x.iter().all(|c| c.is_finite()).then_some(x)
            };
            nodes.push(BaseNode {
                prepared,
                target,
                state: WarmStart {
                    result: Some(build(at + 3)?),
                    least_black: build(at + 7),
                    most_black: build(at + 11),
                },
            });
        }
        Some(TableBase { grid: n, nodes })
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::colour::RgbSpace;
    use crate::press::builtin;
    use crate::separation::{Intent, SeparationSettings};

    fn separator(grid: usize) -> Separator {
        let condition = builtin::coated_offset();
        let mut settings = SeparationSettings::for_condition(&condition);
        settings.intent = Intent::Perceptual;
        settings.table_grid = grid;
        Separator::new(condition, settings).expect("built-in settings are valid")
    }

    /// The base's bytes give the very base back, and bytes of another grid
    /// or cut short are refused.
    #[test]
    fn the_bytes_give_the_base_back() {
        let sep = separator(9);
        let conv = RgbSpace::Srgb.converter();
        let base = TableBase::build(&sep, &|rgb| IntentLab::new(conv.to_lab(rgb))).expect("a perceptual separator");
        let bytes = base.to_bytes();
        assert_eq!(TableBase::from_bytes(&sep, &bytes).as_ref(), Some(&base));
        assert!(TableBase::from_bytes(&sep, &bytes[..bytes.len() - 8]).is_none());
        assert!(TableBase::from_bytes(&separator(17), &bytes).is_none());
    }

    /// The prepared colour gives the map's result bit for bit, under the
    /// empty picture's map and under a picture's, and its reals give it back
    /// exactly (neutrals, which have no ray, included).
    #[test]
    fn a_prepared_colour_maps_as_the_colour_and_keeps_its_bits() {
        let sep = separator(9);
        let conv = RgbSpace::Srgb.converter();
        let empty = sep.picture_mapping(&PictureGamut::from_colours(&[]));
        let edges: Vec<crate::colour::Lab> = crate::separation::gamut::RGB_CORNERS
            .iter()
            .map(|&c| conv.to_lab(EncodedRgb(c)))
            .collect();
        let picture = sep.picture_mapping(&PictureGamut::from_colours(&edges));
        let (empty, picture) = (empty.perceptual().unwrap(), picture.perceptual().unwrap());
        let (mut neutrals, mut other_rays) = (0, 0);
        for i in 0..9 * 9 * 9 {
            let c = |v: usize| v as f64 / 8.0;
            let lab = conv.to_lab(EncodedRgb([c(i / 81), c(i / 9 % 9), c(i % 9)]));
            let prepared = empty.prepare(lab);
            let reals = prepared.to_reals();
            neutrals += reals[3].is_nan() as usize;
            // The cube's edges lower the focal point above the press cusp of
            // yellow and green, which the empty picture does not.
            other_rays += (picture.prepare(lab) != prepared) as usize;
            assert_eq!(PreparedColour::from_reals(&reals), Some(prepared));
            for map in [empty, picture] {
                assert_eq!(
                    map.map_prepared(&prepared).to_array().map(f64::to_bits),
                    map.map(lab).to_array().map(f64::to_bits)
                );
            }
        }
        assert!(neutrals >= 9, "the gray axis has no ray");
        assert!(other_rays > 0, "no colour took another ray under the picture's map");
        assert!(PreparedColour::from_reals(&[f64::NAN; PREPARED_REALS]).is_none());
    }

    /// A picture with no colours beyond the press gamut keeps every node of
    /// the base, and its table is the full build's: the base is solved as
    /// the full build solves every node.
    #[test]
    fn a_picture_inside_the_gamut_solves_nothing() {
        let sep = separator(9);
        let conv = RgbSpace::Srgb.converter();
        let lab = |rgb| IntentLab::new(conv.to_lab(rgb));
        let base = TableBase::build(&sep, &lab).expect("a perceptual separator");
        let grey = PictureGamut::from_colours(&[crate::colour::Lab::new(50.0, 2.0, -3.0), crate::colour::Lab::new(80.0, 10.0, 10.0)]);
        let mapping = sep.picture_mapping(&grey);
        let (table, step) = base.table_for(&sep, &mapping).expect("a perceptual mapping");
        assert_eq!(step.solved, 0);
        let full = SeparationTable::build(&sep, &mapping, &lab);
        assert_eq!(table.to_bytes(), full.to_bytes());
    }

    /// A saturated picture (the edges of the sRGB cube, far beyond the
    /// press gamut in most hues) moves many nodes; every node of the step's
    /// table agrees with the full build's (every node solved exactly from
    /// its neighbour, `SeparationTable::build`) within MAX_INK of a plate
    /// and MAX_DELTA_E (CIEDE2000, CIE 142:2001) of printed colour, the
    /// solver's convergence tolerance plus the 16-bit rounding (measured:
    /// docs/REFERENCES.md).
    #[test]
    fn the_step_agrees_with_the_full_build_on_a_saturated_picture() {
        const MAX_INK: f64 = 0.01;
        const MAX_DELTA_E: f64 = 0.1;
        let sep = separator(17);
        let conv = RgbSpace::Srgb.converter();
        let lab = |rgb| IntentLab::new(conv.to_lab(rgb));
        let base = TableBase::build(&sep, &lab).expect("a perceptual separator");
        let mut edges = Vec::new();
        for t in 0..=16 {
            let t = t as f64 / 16.0;
            for c in [
                [1.0, t, 0.0],
                [1.0 - t, 1.0, 0.0],
                [0.0, 1.0, t],
                [0.0, 1.0 - t, 1.0],
                [t, 0.0, 1.0],
                [1.0, 0.0, 1.0 - t],
            ] {
                edges.push(conv.to_lab(EncodedRgb(c)));
            }
        }
        let mapping = sep.picture_mapping(&PictureGamut::from_colours(&edges));
        let (table, step) = base.table_for(&sep, &mapping).expect("a perceptual mapping");
        assert!(step.solved > 17 * 17, "the picture moves many nodes: {step:?}");
        let full = SeparationTable::build(&sep, &mapping, &lab);
        for (i, (a, b)) in full.nodes().iter().zip(table.nodes()).enumerate() {
            let ink = (0..4).map(|c| (a[c] as f64 - b[c] as f64).abs() / 65535.0).fold(0.0, f64::max);
            let printed = |x: &[u16; 4]| sep.printed_relative(crate::ink::Cmyk::from_array(x.map(|v| v as f64 / 65535.0)));
            let de = printed(a).delta_e(printed(b));
            assert!(ink <= MAX_INK && de <= MAX_DELTA_E, "node {i}: {a:?} against {b:?} (ΔE2000 {de})");
        }
    }
}
