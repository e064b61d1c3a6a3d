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
//! source shares it (about 8.1 MB at 33³ when complete, kept in the table
//! cache).
//!
//! **Solved as far as pictures need it.** A pixel is interpolated from the
//! corners of one grid cell, so a picture's table needs exact nodes only at
//! the corners of the cells its pixels fall in ([`PictureCells`], from its
//! distinct colours; the demo falls in 4 117 of 32 768 cells, 8 360 nodes
//! of 35 937). The base is solved line by line (the lines of nodes along
//! blue, each in order from blue 0 with one warm start, as the full build
//! solves it), and a line only as far as some picture has needed it: a
//! base started by one picture and solved on by the next holds at every
//! solved node the very bits the full build of the base holds
//! (`a_base_solved_in_parts_is_the_full_base`), so the cache may keep it in
//! part. A job with an empty cache solves about half the grid for the demo
//! (19 041 nodes) instead of all of it and then the whole picture's step.
//!
//! The per-picture step ([`TableBase::finish`]) maps the nodes the
//! picture's cells read through the picture's map; a node whose target is
//! the base's keeps the base's build, and a node whose target moved
//! (compressed toward the press boundary, or narrowed by the shadow taper)
//! is solved exactly, warm-started along its line of nodes as the full
//! build does, from the neighbour's state (the base's own for a neighbour
//! that did not move or that no pixel reads). Nodes no pixel reads are left
//! at zero ink, and the finished table is cached under the picture's cells
//! as well as its reach. [`TableBase::table_for`] runs the step over the
//! whole grid of a complete base. The result is the exact build up to the
//! solver's convergence: on the demo, a muted picture and a saturated one,
//! the largest node difference from the full build was 0.51 % ink and 0.19
//! ΔE2000 of printed colour, the 99th percentile zero, and the step on the
//! picture's cells gave every node its pixels read as the whole-grid step
//! did (`examples/picture_step.rs`, docs/PERFORMANCE.md).
//!
//! What it costs is the moved nodes: a picture that stays inside the press
//! gamut moves none, but a real picture that leaves it moves every node
//! beyond the knee of the compression in the hue sectors and lightness
//! bands it reaches (the demo: 15 030 of 35 937 nodes over the whole grid,
//! 3 926 of them among the nodes its pixels read; many still outside the
//! gamut after mapping, whose clipping is most of the time).
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

/// A node's target under the empty picture's map (working frame) and the
/// inversion's state there.
#[derive(Debug, Clone, Copy, PartialEq)]
struct Solved {
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
/// and source under perceptual compression from the picture, solved as far
/// as the pictures seen so far needed it.
#[derive(Debug, Clone, PartialEq)]
pub struct TableBase {
    grid: usize,
    /// Per node (index (r·N + g)·N + b), its colour prepared for the empty
    /// picture's map, once some picture needed it.
    prepared: Vec<Option<PreparedColour>>,
    /// Per node within its line's solved run, its target and state.
    solved: Vec<Option<Solved>>,
    /// Per line of nodes along blue (index r·N + g): how many of its nodes,
    /// from blue 0 on, are solved. A line is solved in order from its first
    /// node with one warm start, as the full build solves it, so a node's
    /// solution does not depend on how far its line had been solved before.
    lines: Vec<usize>,
}

/// What one per-picture step solved.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub struct PictureStep {
    /// Nodes solved under the picture's map (their target moved).
    pub solved: usize,
    /// Nodes taken from the base.
    pub kept: usize,
    /// Nodes added to the base (solved under the empty picture's map).
    pub base_solved: usize,
    /// Nodes no pixel of the picture reads, left unsolved.
    pub skipped: usize,
}

/// The cells of a table grid the pixels of one picture fall in: a pixel is
/// interpolated from the corners of one cell, so only those nodes must be
/// exact. Taken from the picture's distinct colours (one per bin of 4 × 4 ×
/// 4 eight-bit codes, [`super::DistinctColours`]): every cell any code of
/// an occupied bin falls in, at 8 and at 16 bits.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct PictureCells {
    grid: usize,
    /// Per cell (index (r·(N−1) + g)·(N−1) + b).
    cells: Vec<bool>,
}

impl PictureCells {
    /// The cells of a grid of `grid` nodes per axis the pixels of a picture
    /// whose distinct colours are `distinct` (encoded, 0..1, each an 8-bit
    /// code of its bin) fall in.
    pub fn of_colours(grid: usize, distinct: &[[f64; 3]]) -> PictureCells {
        let m = grid - 1;
        // The cell of a code, as `kernel::position` finds it.
        let cell = |code: u64, max: u64| ((code * m as u64 / max) as usize).min(m - 1);
        let range = |v: f64| {
            let bin = ((v * 255.0).round().clamp(0.0, 255.0) as u64) >> 2;
            let lo = cell(4 * bin, 255).min(cell(1024 * bin, 65535));
            let hi = cell(4 * bin + 3, 255).max(cell(1024 * bin + 1023, 65535));
            lo..=hi
        };
        let mut cells = vec![false; m * m * m];
        for rgb in distinct {
            for r in range(rgb[0]) {
                for g in range(rgb[1]) {
                    for b in range(rgb[2]) {
                        cells[(r * m + g) * m + b] = true;
                    }
                }
            }
        }
        PictureCells { grid, cells }
    }

    /// Every cell of the grid.
    pub fn all(grid: usize) -> PictureCells {
        PictureCells {
            grid,
            cells: vec![true; (grid - 1).pow(3)],
        }
    }

    /// How many cells the picture falls in.
    pub fn count(&self) -> usize {
        self.cells.iter().filter(|&&c| c).count()
    }

    /// The cells as bits (eight cells a byte, in index order), for the table cache's key.
    pub fn to_bits(&self) -> Vec<u8> {
        self.cells
            .chunks(8)
            .map(|c| c.iter().enumerate().fold(0u8, |byte, (i, &on)| byte | ((on as u8) << i)))
            .collect()
    }

    /// Per node of the grid (index (r·N + g)·N + b): whether it is a corner
    /// of one of the cells.
    pub fn corners(&self) -> Vec<bool> {
        let (n, m) = (self.grid, self.grid - 1);
        let mut nodes = vec![false; n * n * n];
        for (i, _) in self.cells.iter().enumerate().filter(|(_, c)| **c) {
            let (r, g, b) = (i / (m * m), i / m % m, i % m);
            for corner in 0..8 {
                let (dr, dg, db) = (corner >> 2, (corner >> 1) & 1, corner & 1);
                nodes[((r + dr) * n + g + dg) * n + b + db] = true;
            }
        }
        nodes
    }
}

/// The encoded RGB of node `i` of an n³ grid, as [`solve_lines`] gives it.
fn node_rgb(n: usize, i: usize) -> EncodedRgb {
    let coord = |v: usize| v as f64 / (n - 1) as f64;
    EncodedRgb([coord(i / (n * n)), coord(i / n % n), coord(i % n)])
}

/// A source colour per node (from its encoded RGB).
pub type NodeLab<'a> = dyn Fn(EncodedRgb) -> IntentLab + Sync + 'a;

impl TableBase {
    /// A base of `separator` with nothing solved yet; `None` when the
    /// separator's intent is not perceptual (its tables depend on no picture).
    pub fn empty(separator: &Separator) -> Option<TableBase> {
        separator.picture_mapping(&PictureGamut::from_colours(&[])).perceptual()?;
        let n = separator.settings().table_grid;
        Some(TableBase {
            grid: n,
            prepared: vec![None; n * n * n],
            solved: vec![None; n * n * n],
            lines: vec![0; n * n],
        })
    }

    /// Solves every node of `separator`'s grid for the source colours
    /// `node_lab` gives, under the map of a picture with no colours; `None`
    /// when the separator's intent is not perceptual.
    pub fn build(separator: &Separator, node_lab: &NodeLab) -> Option<TableBase> {
        let n = separator.settings().table_grid;
        let mapping = separator.picture_mapping(&PictureGamut::from_colours(&[]));
        let map = mapping.perceptual()?;
        let nodes = solve_lines(n, &|rgb, warm| {
            // As `Separator::intent_target` maps a perceptual source colour.
            let prepared = map.prepare(node_lab(rgb).lab());
            let target = RelativeLab::new(map.map_prepared(&prepared));
            separator.invert_along(target, warm);
            (
                Some(prepared),
                Some(Solved {
                    target: target.lab().to_array(),
                    state: *warm,
                }),
            )
        });
        let (prepared, solved) = nodes.into_iter().unzip();
        Some(TableBase {
            grid: n,
            prepared,
            solved,
            lines: vec![n; n * n],
        })
    }

    pub fn grid(&self) -> usize {
        self.grid
    }

    /// How many nodes are solved.
    pub fn solved_nodes(&self) -> usize {
        self.lines.iter().sum()
    }

    /// Whether every node is solved.
    pub fn is_complete(&self) -> bool {
        self.lines.iter().all(|&l| l == self.grid)
    }

    /// Solves each line on to `need` nodes under the empty picture's map
    /// `empty`, from where it was solved to (the lines in parallel, each
    /// warm-started from its last solved node, as the full build solves
    /// it). Returns the number of nodes solved.
    fn extend_lines(&mut self, separator: &Separator, empty: &PerceptualMap, node_lab: &NodeLab, need: &[usize]) -> usize {
        let n = self.grid;
        let this = &*self;
        let grown: Vec<(usize, Vec<(PreparedColour, Solved)>)> = (0..n * n)
            .into_par_iter()
            .filter(|&line| need[line] > this.lines[line])
            .map(|line| {
                let from = this.lines[line];
                let mut warm = match from {
                    0 => WarmStart::default(),
                    _ => this.solved[line * n + from - 1].expect("a node of the solved run").state,
                };
                let nodes = (from..need[line])
                    .map(|b| {
                        let i = line * n + b;
                        let prepared = this.prepared[i].unwrap_or_else(|| empty.prepare(node_lab(node_rgb(n, i)).lab()));
                        let target = RelativeLab::new(empty.map_prepared(&prepared));
                        separator.invert_along(target, &mut warm);
                        (
                            prepared,
                            Solved {
                                target: target.lab().to_array(),
                                state: warm,
                            },
                        )
                    })
                    .collect();
                (line, nodes)
            })
            .collect();
        let mut count = 0;
        for (line, nodes) in grown {
            let from = self.lines[line];
            count += nodes.len();
            for (k, (prepared, solved)) in nodes.into_iter().enumerate() {
                self.prepared[line * n + from + k] = Some(prepared);
                self.solved[line * n + from + k] = Some(solved);
            }
            self.lines[line] = need[line];
        }
        count
    }

    /// The per-picture step on a complete base: the table of `separator`
    /// under the picture's `mapping` at every node, each node kept from the
    /// base where its target is the base's (bit for bit) and solved exactly
    /// where it moved. `None` when the mapping is not perceptual, the
    /// separator's grid is not the base's or the base is not complete.
    pub fn table_for(&self, separator: &Separator, mapping: &SourceMapping) -> Option<(SeparationTable, PictureStep)> {
        let map: &PerceptualMap = mapping.perceptual()?;
        if self.grid != separator.settings().table_grid || !self.is_complete() {
            return None;
        }
        let (inks, lightness, solved) = self.step(separator, map, &self.lines, None);
        let table = SeparationTable::from_inks(separator, inks, &lightness);
        Some((
            table,
            PictureStep {
                solved,
                kept: self.grid.pow(3) - solved,
                ..PictureStep::default()
            },
        ))
    }

    /// The per-picture step for a picture whose pixels fall in `cells`: the
    /// nodes those pixels read (the cells' corners; every node where the
    /// intent smooths the shadows in ink space, which mixes neighbours) as
    /// [`TableBase::table_for`] solves them, the base first solved on where
    /// they need it (it grows: the bool says so), every other node left at
    /// zero ink. A moved node no pixel reads is not solved; the read node
    /// after it on its line starts from the base's state there instead of
    /// its solution, so it may differ from `table_for`'s within the
    /// solver's convergence. With every cell it is `table_for`'s table. `node_lab` gives the source colour of a node as for
    /// [`TableBase::build`]. `None` when the mapping is not perceptual or
    /// the grids differ.
    pub fn finish(
        &mut self,
        separator: &Separator,
        mapping: &SourceMapping,
        node_lab: &NodeLab,
        cells: &PictureCells,
    ) -> Option<(SeparationTable, PictureStep, bool)> {
        let map: &PerceptualMap = mapping.perceptual()?;
        let n = self.grid;
        if n != separator.settings().table_grid || cells.grid != n {
            return None;
        }
        let empty_mapping = separator.picture_mapping(&PictureGamut::from_colours(&[]));
        let empty = empty_mapping.perceptual()?;
        // Where the table's shadows are smoothed in ink space, a node's
        // build reads its neighbours': every node is needed then.
        let needed = match separator.smooths_shadows_in_ink() {
            false => cells.corners(),
            true => vec![true; n * n * n],
        };
        let need: Vec<usize> = needed
            .chunks(n)
            .map(|line| line.iter().rposition(|&x| x).map_or(0, |b| b + 1))
            .collect();
        let base_solved = self.extend_lines(separator, empty, node_lab, &need);
        let (inks, lightness, solved) = self.step(separator, map, &need, Some(&needed));
        let table = SeparationTable::from_inks(separator, inks, &lightness);
        let reached: usize = need.iter().sum();
        let step = PictureStep {
            solved,
            kept: reached - solved,
            base_solved,
            skipped: n * n * n - reached,
        };
        Some((table, step, base_solved > 0))
    }

    /// Each line's first `need` nodes under the picture's `map`: the
    /// base's build where the target is the base's or where no pixel reads
    /// the node (`needed`, when given, says which are read), else solved
    /// exactly, warm-started from the node before. Nodes beyond are zero
    /// ink at lightness 100 (no pixel reads them). Returns the inks, the
    /// targets' lightness and the number of nodes solved.
    fn step(
        &self,
        separator: &Separator,
        map: &PerceptualMap,
        need: &[usize],
        needed: Option<&[bool]>,
    ) -> (Vec<[f64; 4]>, Vec<f64>, usize) {
        let n = self.grid;
        let same = |a: [f64; 3], b: [f64; 3]| a.iter().zip(&b).all(|(x, y)| x.to_bits() == y.to_bits());
        let lines: Vec<(Vec<NodeInk>, usize)> = (0..n * n)
            .into_par_iter()
            .map(|line| {
                let mut warm = WarmStart::default();
                let mut solved = 0;
                let inks = (0..n)
                    .map(|b| {
                        let i = line * n + b;
                        if b >= need[line] {
                            return ([0.0; 4], 100.0);
                        }
                        let base = self.solved[i].expect("the base is solved where the picture needs it");
                        let prepared = self.prepared[i].expect("a solved node is prepared");
                        let target = RelativeLab::new(map.map_prepared(&prepared));
                        let read = needed.is_none_or(|m| m[i]);
                        let x = if !read || same(target.lab().to_array(), base.target) {
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
        let solved = lines.iter().map(|(_, s)| s).sum();
        let (inks, lightness) = lines.into_iter().flat_map(|(l, _)| l).unzip();
        (inks, lightness, solved)
    }

    /// The base as bytes, for the table cache: the grid (u32 LE), each
    /// line's solved length (u16 LE), then per node [`REALS_PER_NODE`]
    /// reals as f64 LE (the prepared colour, NaN throughout for a node not
    /// prepared; the target, the build, the least-black and the most-black
    /// builds, NaN for an absent build or a node not solved).
    /// [`TableBase::from_bytes`] reads them back exactly.
    pub fn to_bytes(&self) -> Vec<u8> {
        let nodes = self.grid.pow(3);
        let mut out = Vec::with_capacity(4 + 2 * self.lines.len() + 8 * REALS_PER_NODE * nodes);
        out.extend((self.grid as u32).to_le_bytes());
        for &l in &self.lines {
            out.extend((l as u16).to_le_bytes());
        }
        let build = |x: Option<[f64; 4]>| x.unwrap_or([f64::NAN; 4]);
        for (prepared, solved) in self.prepared.iter().zip(&self.solved) {
            let prepared = prepared.map_or([f64::NAN; PREPARED_REALS], |p| p.to_reals());
            let (target, s) = solved.map_or(([f64::NAN; 3], WarmStart::default()), |s| (s.target, s.state));
            for v in prepared
                .iter()
                .chain(&target)
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
    /// `separator`'s grid, every solved node holds a prepared colour, a
    /// finite target and a build, and every prepared node a prepared colour.
    pub fn from_bytes(separator: &Separator, bytes: &[u8]) -> Option<TableBase> {
        let n = separator.settings().table_grid;
        let (grid, rest) = bytes.split_first_chunk::<4>()?;
        if u32::from_le_bytes(*grid) as usize != n || rest.len() != 2 * n * n + 8 * REALS_PER_NODE * n * n * n {
            return None;
        }
        let (line_bytes, rest) = rest.split_at(2 * n * n);
        let lines: Vec<usize> = line_bytes
            .chunks_exact(2)
            .map(|b| u16::from_le_bytes([b[0], b[1]]) as usize)
            .collect();
        if lines.iter().any(|&l| l > n) {
            return None;
        }
        let (mut prepared, mut solved) = (Vec::with_capacity(n * n * n), Vec::with_capacity(n * n * n));
        for (i, chunk) in rest.chunks_exact(8 * REALS_PER_NODE).enumerate() {
            let v: [f64; REALS_PER_NODE] =
                std::array::from_fn(|k| f64::from_le_bytes(chunk[8 * k..8 * k + 8].try_into().expect("eight bytes")));
            let p = match v[..PREPARED_REALS].iter().all(|x| x.is_nan()) {
                true => None,
                false => Some(PreparedColour::from_reals(
                    v[..PREPARED_REALS].try_into().expect("the prepared reals"),
                )?),
            };
            prepared.push(p);
            if i % n >= lines[i / n] {
                solved.push(None);
                continue;
            }
            let at = PREPARED_REALS;
            let target = [v[at], v[at + 1], v[at + 2]];
            if p.is_none() || target.iter().any(|c| !c.is_finite()) {
                return None;
            }
            let build = |from: usize| -> Option<[f64; 4]> {
                let x: [f64; 4] = std::array::from_fn(|k| v[from + k]);
                x.iter().all(|c| c.is_finite()).then_some(x)
            };
            solved.push(Some(Solved {
                target,
                state: WarmStart {
                    result: Some(build(at + 3)?),
                    least_black: build(at + 7),
                    most_black: build(at + 11),
                },
            }));
        }
        Some(TableBase {
            grid: n,
            prepared,
            solved,
            lines,
        })
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::colour::RgbSpace;
    use crate::press::builtin;
    use crate::separation::{Intent, SeparationSettings, distinct_colours};

    fn separator(grid: usize) -> Separator {
        let condition = builtin::coated_offset();
        let mut settings = SeparationSettings::for_condition(&condition);
        settings.intent = Intent::Perceptual;
        settings.table_grid = grid;
        Separator::new(condition, settings).expect("built-in settings are valid")
    }

    /// The base's bytes give the very base back, complete or solved in part,
    /// and bytes of another grid or cut short are refused.
    #[test]
    fn the_bytes_give_the_base_back() {
        let sep = separator(9);
        let conv = RgbSpace::Srgb.converter();
        let lab = |rgb| IntentLab::new(conv.to_lab(rgb));
        let base = TableBase::build(&sep, &lab).expect("a perceptual separator");
        let mut part = TableBase::empty(&sep).expect("a perceptual separator");
        let mapping = sep.picture_mapping(&PictureGamut::from_colours(&[]));
        part.finish(
            &sep,
            &mapping,
            &lab,
            &PictureCells::of_colours(9, &[[0.9, 0.2, 0.1], [0.1, 0.5, 0.3]]),
        )
        .expect("a perceptual mapping");
        assert!(0 < part.solved_nodes() && part.solved_nodes() < 9 * 9 * 9);
        for b in [&base, &part] {
            let bytes = b.to_bytes();
            assert_eq!(TableBase::from_bytes(&sep, &bytes).as_ref(), Some(b));
            assert!(TableBase::from_bytes(&sep, &bytes[..bytes.len() - 8]).is_none());
            assert!(TableBase::from_bytes(&separator(17), &bytes).is_none());
        }
    }

    /// Random pictures at 8 and 16 bits: every pixel falls (as the pixel
    /// kernels place it, `kernel::position`) in a cell the picture's
    /// distinct colours give, at every grid the settings allow.
    #[test]
    fn the_cells_hold_every_pixel() {
        use crate::separation::kernel::position;
        let mut state = 0x9e37_79b9_7f4a_7c15_u64;
        let mut next = move || {
            state ^= state << 13;
            state ^= state >> 7;
            state ^= state << 17;
            state
        };
        let wide: Vec<u16> = (0..3 * 4000).map(|_| next() as u16).collect();
        let narrow: Vec<u8> = wide.iter().map(|&v| (v >> 8) as u8).collect();
        for grid in [2, 9, 17, 18, 33, 52, 65] {
            let m = grid - 1;
            for (distinct, codes, max) in [
                (distinct_colours(&narrow), narrow.iter().map(|&v| v as u32).collect::<Vec<_>>(), 255),
                (distinct_colours(&wide), wide.iter().map(|&v| v as u32).collect(), 65535),
            ] {
                let cells = PictureCells::of_colours(grid, &distinct);
                for px in codes.chunks_exact(3) {
                    let [r, g, b] = [0, 1, 2].map(|c| position(px[c], max, grid).index as usize);
                    assert!(cells.cells[(r * m + g) * m + b], "grid {grid}, pixel {px:?} at {max}");
                }
                assert!(cells.count() < m * m * m || grid <= 9, "grid {grid}: every cell");
            }
        }
    }

    /// A base solved in part for one picture, then on for another, then for
    /// every cell, holds at each solved node the very node the full build
    /// of the base holds (bit for bit), and ends as that base: a line is
    /// solved in order with one warm start however far it had been solved.
    #[test]
    fn a_base_solved_in_parts_is_the_full_base() {
        let sep = separator(9);
        let conv = RgbSpace::Srgb.converter();
        let lab = |rgb| IntentLab::new(conv.to_lab(rgb));
        let full = TableBase::build(&sep, &lab).expect("a perceptual separator");
        let mut part = TableBase::empty(&sep).expect("a perceptual separator");
        let mapping = sep.picture_mapping(&PictureGamut::from_colours(&[]));
        let pictures = [
            PictureCells::of_colours(9, &[[0.2, 0.3, 0.4]]),
            PictureCells::of_colours(9, &[[0.8, 0.1, 0.9], [0.3, 0.3, 0.2]]),
            PictureCells::all(9),
        ];
        let mut grew = Vec::new();
        for cells in &pictures {
            let (_, step, g) = part.finish(&sep, &mapping, &lab, cells).expect("a perceptual mapping");
            grew.push((g, step.base_solved));
            for i in 0..9 * 9 * 9 {
                if part.solved[i].is_some() {
                    assert_eq!(part.solved[i], full.solved[i], "node {i}");
                    assert_eq!(part.prepared[i], full.prepared[i], "node {i}");
                }
            }
        }
        assert!(grew.iter().all(|&(g, n)| g && n > 0), "{grew:?}");
        assert_eq!(part, full);
        let again = part.finish(&sep, &mapping, &lab, &pictures[1]).expect("a perceptual mapping");
        assert!(!again.2 && again.1.base_solved == 0);
    }

    /// A saturated picture's step on its own cells, from an empty base,
    /// gives every node its pixels read as the step on the complete base
    /// over the whole grid gives it, within the tolerance of
    /// `the_step_agrees_with_the_full_build_on_a_saturated_picture` (a moved
    /// node no pixel reads is left unsolved, so the next read node on its
    /// line starts elsewhere), and its table separates the picture's own
    /// pixels as that table does, within one 8-bit code.
    #[test]
    fn the_step_on_the_pictures_cells_gives_what_its_pixels_read() {
        const MAX_INK: f64 = 0.01;
        const MAX_DELTA_E: f64 = 0.1;
        let sep = separator(17);
        let conv = RgbSpace::Srgb.converter();
        let lab = |rgb| IntentLab::new(conv.to_lab(rgb));
        let base = TableBase::build(&sep, &lab).expect("a perceptual separator");
        let mut pixels: Vec<u8> = Vec::new();
        for t in 0..=64u8 {
            let t = t * 3 + 40;
            for c in [[255, t, 30], [30, 200, t], [t, 40, 220], [t / 2, t, t / 3]] {
                pixels.extend(c);
            }
        }
        let distinct = distinct_colours(&pixels);
        let labs: Vec<crate::colour::Lab> = distinct.iter().map(|&c| conv.to_lab(EncodedRgb(c))).collect();
        let mapping = sep.picture_mapping(&PictureGamut::from_colours(&labs));
        let (whole, _) = base.table_for(&sep, &mapping).expect("a perceptual mapping");
        let cells = PictureCells::of_colours(17, &distinct);
        let mut empty = TableBase::empty(&sep).expect("a perceptual separator");
        let (table, step, grew) = empty.finish(&sep, &mapping, &lab, &cells).expect("a perceptual mapping");
        assert!(grew && step.skipped > 0 && step.solved > 0, "{step:?}");
        let read = cells.corners();
        for i in (0..read.len()).filter(|&i| read[i]) {
            let (a, b) = (whole.nodes()[i], table.nodes()[i]);
            let ink = (0..4).map(|c| (a[c] as f64 - b[c] as f64).abs() / 65535.0).fold(0.0, f64::max);
            let printed = |x: &[u16; 4]| sep.printed_relative(crate::ink::Cmyk::from_array(x.map(|v| v as f64 / 65535.0)));
            let de = printed(&a).delta_e(printed(&b));
            assert!(ink <= MAX_INK && de <= MAX_DELTA_E, "node {i}: {a:?} against {b:?} (ΔE2000 {de})");
        }
        let n = pixels.len() / 3;
        let (mut from_whole, mut from_cells) = (vec![0u8; 4 * n], vec![0u8; 4 * n]);
        whole.apply_rgb8(&pixels, &mut from_whole, n);
        table.apply_rgb8(&pixels, &mut from_cells, n);
        let worst = from_whole.iter().zip(&from_cells).map(|(a, b)| a.abs_diff(*b)).max();
        assert!(worst <= Some(1), "{worst:?}");
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
