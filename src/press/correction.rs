//! A smooth correction of the physical model, fitted to measured patches: a
//! 4-D lattice over nominal CMYK holding a CIELAB offset (ΔL*, Δa*, Δb*) at
//! each node, evaluated by multilinear interpolation between the 16 nodes
//! around a build.
//!
//! Why this form. The Yule–Nielsen Neugebauer model carries the physics
//! (Beer-like filtering of the overprints, light scattering in the paper, the
//! tone value increase) with a few dozen parameters, and on real press data it
//! leaves residuals of about 1 ΔE2000 that vary slowly over the ink space:
//! ink trapping that is not quite additive, a tone curve that is not exactly
//! the one-parameter form, a wet-on-wet black that differs from its dry
//! solid. A lattice fitted to those residuals by regularised least squares
//! (a penalised regression spline of order one: Eilers & Marx, "Flexible
//! smoothing with B-splines and penalties", Statistical Science 11, 1996, in
//! four dimensions) takes them out without the ripples a polynomial would add:
//!
//! - the penalty on second differences of the node values along cyan,
//!   magenta and yellow keeps the correction smooth (its slope changes
//!   little from one cell to the next); along black it acts on the corrected
//!   colour instead, which the data show running nearly straight toward
//!   100 % black where the physics bends (`press::characterize` module doc);
//!   its weight is chosen by cross-validation on the patches;
//! - a small ridge penalty pulls nodes that no patch constrains toward zero,
//!   so far from the data (a corner the chart does not print) the correction
//!   fades and the physics carries the prediction, where an interpolant on
//!   raw CMYK must extrapolate blindly;
//! - evaluation reads 16 nodes and costs a few dozen multiplications, and the
//!   derivative with respect to each ink is exact (piecewise constant along
//!   the ink), so the model keeps its analytic Jacobian for the inversion.
//!
//! Monotonicity (more ink never raises L*) holds by construction, between the
//! nodes as well as at them. Take a cell, an ink a and its width h along a.
//! Inside the cell the offset is multilinear, so its derivative along a is
//! Σₑ wₑ dₑ / h: the differences dₑ of ΔL* along the cell's 8 edges on ink a,
//! blended with the trilinear weights wₑ ≥ 0 (summing to 1) of the other
//! three inks. Let F be the rate at which the physical model's L* falls
//! along a, gₑ its least value along edge e, and δ the cell's defect: how far
//! F anywhere in the cell lies below Σₑ wₑ F(on edge e, same coverage of a),
//! its own interpolation from the edges. Then at every point
//! F ≥ Σₑ wₑ gₑ − δ. [`Correction::hold_monotonic`] keeps every
//! dₑ ≤ h (gₑ − δ) − margin, with δ the largest over the cells that hold the
//! edge ([`Correction::edge_drops`]), so the corrected L* changes along a at
//! the rate Σₑ wₑ dₑ / h − F ≤ −margin / h < 0. The offset is continuous
//! across cells, so the same holds for any step that crosses them. What
//! rests on sampling: gₑ and δ are read from the physics' exact derivative
//! at a quarter-cell spacing, each moved by the largest change between
//! neighbouring samples (what it can move between them if it changes no
//! faster there), and the margin covers the rest; the checks sample L* on
//! grids of 1 % steps. The bound is nearly as loose as holding each edge by
//! its own least slope (the defect of the smooth physics over a cell is
//! small), where taking the least slope over whole cells lowered 3 times as
//! many nodes and cost FOGRA39L 0.25 ΔE2000 at the in-sample 95th percentile
//! (docs/REFERENCES.md).

use super::PressModel;
use super::neugebauer::{NeugebauerModel, lerp3, sub3};
use crate::colour::{Lab, Xyz};
use crate::ink::Cmyk;

/// Bins of the lookup that finds the lattice cell of a coverage. Finer than
/// the closest node spacing [`Axis::new`] allows (1e-3), so that a bin holds
/// at most one node and one comparison finishes the look-up.
const LOCATE_BINS: usize = 1024;

/// Most nodes per axis.
const MAX_NODES: usize = 64;

/// One axis of the lattice: node positions (fractions, ascending, 0 first and
/// 1 last) and a lookup from coverage to cell.
#[derive(Debug, Clone, PartialEq)]
pub struct Axis {
    levels: Vec<f64>,
    /// Per cell: its lower node, 1 / its width, and the node that ends it
    /// (infinite for the last cell, so that coverage 1 stays in it).
    cells: Box<[CellBounds; MAX_NODES]>,
    /// The cell that holds the start of each of the LOCATE_BINS bins.
    bins: Box<[u8; LOCATE_BINS]>,
}

#[derive(Debug, Clone, Copy, PartialEq, Default)]
struct CellBounds {
    lower: f64,
    inv_width: f64,
    upper: f64,
}

impl Axis {
    /// `levels` must be ascending, start at 0, end at 1 and hold 2 to 64 nodes.
    pub fn new(levels: &[f64]) -> Option<Axis> {
        let ok = levels.len() >= 2
            && levels.len() <= MAX_NODES
            && levels[0] == 0.0
            && levels[levels.len() - 1] == 1.0
            && levels.windows(2).all(|w| w[1] - w[0] >= 1e-3);
        if !ok {
            return None;
        }
        let last = levels.len() - 2;
        let mut cells = Box::new([CellBounds::default(); MAX_NODES]);
        for (i, w) in levels.windows(2).enumerate() {
            cells[i] = CellBounds {
                lower: w[0],
                inv_width: 1.0 / (w[1] - w[0]),
                upper: if i == last { f64::INFINITY } else { w[1] },
            };
        }
        let mut bins = Box::new([0u8; LOCATE_BINS]);
        for (b, slot) in bins.iter_mut().enumerate() {
            let x = b as f64 / LOCATE_BINS as f64;
            *slot = levels[1..=last].iter().filter(|&&l| l <= x).count() as u8;
        }
        Some(Axis {
            levels: levels.to_vec(),
            cells,
            bins,
        })
    }

    pub fn levels(&self) -> &[f64] {
        &self.levels
    }

    pub fn len(&self) -> usize {
        self.levels.len()
    }

    pub fn is_empty(&self) -> bool {
        self.levels.is_empty()
    }

    /// Cell index, position inside it (0..1) and 1 / cell width, for coverage
    /// `x`: one table read and one comparison, no branch on the data.
    #[inline(always)]
    fn locate(&self, x: f64) -> (usize, f64, f64) {
        // `max` then `min` maps NaN to 0.
        #[allow(clippy::manual_clamp)]
        let x = x.max(0.0).min(1.0);
        let b = ((x * LOCATE_BINS as f64) as usize).min(LOCATE_BINS - 1);
        let i = self.bins[b] as usize & (MAX_NODES - 1);
        // A bin is narrower than the closest two nodes: at most one more step.
        let i = (i + (x >= self.cells[i].upper) as usize) & (MAX_NODES - 1);
        let cell = self.cells[i];
        (i, (x - cell.lower) * cell.inv_width, cell.inv_width)
    }
}

/// A CIELAB offset per lattice node over CMYK.
#[derive(Debug, Clone, PartialEq)]
pub struct Correction {
    axes: [Axis; 4],
    /// ΔL*, Δa*, Δb* per node; node (i, j, k, l) at `i·s0 + j·s1 + k·s2 + l`.
    values: Vec<[f64; 3]>,
    strides: [usize; 4],
}

impl Correction {
    /// A zero correction on the given axes.
    pub fn zero(axes: [Axis; 4]) -> Correction {
        let n = [axes[0].len(), axes[1].len(), axes[2].len(), axes[3].len()];
        let strides = [n[1] * n[2] * n[3], n[2] * n[3], n[3], 1];
        Correction {
            values: vec![[0.0; 3]; n.iter().product()],
            axes,
            strides,
        }
    }

    /// A correction from its node values (in the order of [`Correction::values`]);
    /// `None` when the count does not match the axes or a value is not finite.
    pub fn new(axes: [Axis; 4], values: Vec<[f64; 3]>) -> Option<Correction> {
        let mut c = Correction::zero(axes);
        if values.len() != c.values.len() || values.iter().flatten().any(|v| !v.is_finite()) {
            return None;
        }
        c.values = values;
        Some(c)
    }

    pub fn axes(&self) -> &[Axis; 4] {
        &self.axes
    }

    pub fn values(&self) -> &[[f64; 3]] {
        &self.values
    }

    pub fn values_mut(&mut self) -> &mut [[f64; 3]] {
        &mut self.values
    }

    pub fn strides(&self) -> [usize; 4] {
        self.strides
    }

    /// The lowest node of the cell holding `ink`, the position inside the
    /// cell per ink (0..1) and 1 / the cell's width per ink.
    #[inline(always)]
    fn cell(&self, ink: Cmyk) -> (usize, [f64; 4], [f64; 4]) {
        locate_cell(&self.axes, self.strides, ink)
    }

    /// The 16 nodes around `ink` (index) and their multilinear weights.
    #[inline(always)]
    pub fn weights(&self, ink: Cmyk) -> ([usize; 16], [f64; 16]) {
        let (base, t, _) = self.cell(ink);
        let mut idx = [0; 16];
        let mut w = [0.0; 16];
        for corner in 0..16 {
            let mut weight = 1.0;
            let mut at = base;
            for a in 0..4 {
                if corner >> (3 - a) & 1 == 1 {
                    weight *= t[a];
                    at += self.strides[a];
                } else {
                    weight *= 1.0 - t[a];
                }
            }
            idx[corner] = at;
            w[corner] = weight;
        }
        (idx, w)
    }

    /// The values at the 16 corners of the cell whose lowest node is `base`,
    /// black varying fastest, then yellow, magenta, cyan (corner bit 0 black,
    /// bit 3 cyan).
    #[inline(always)]
    fn corners(&self, base: usize) -> [[f64; 3]; 16] {
        let s = self.strides;
        let mut v = [[0.0; 3]; 16];
        for (j, slot) in v.iter_mut().enumerate() {
            *slot = self.values[base + (j >> 3 & 1) * s[0] + (j >> 2 & 1) * s[1] + (j >> 1 & 1) * s[2] + (j & 1) * s[3]];
        }
        v
    }

    /// The offset at `ink`: 15 linear interpolations, along black, then
    /// yellow, magenta and cyan ([`interpolate`]).
    #[inline(always)]
    pub fn offset(&self, ink: Cmyk) -> [f64; 3] {
        let (base, t, _) = self.cell(ink);
        interpolate(&self.corners(base), t)
    }

    /// The offset and its derivative with respect to each ink (rows L*, a*,
    /// b*; columns c, m, y, k). Inside a cell the derivative along an ink is
    /// exact; on a node the cell above is used ([`interpolate_with_derivative`]).
    #[inline(always)]
    pub fn offset_with_derivative(&self, ink: Cmyk) -> ([f64; 3], [[f64; 4]; 3]) {
        let (base, t, inv) = self.cell(ink);
        interpolate_with_derivative(&self.corners(base), t, inv)
    }

    /// Lowers ΔL* at nodes so that the corrected L* never rises when any ink
    /// is added. `drops[at][a]` bounds the rise of ΔL* along the lattice edge
    /// that ends at node `at` on ink `a` ([`Correction::edge_drops`]: the
    /// edge's length times the physics' least fall along it, less the defect
    /// of the cells around it). A node whose offset rises along such an edge
    /// by more than that bound less `margin` is lowered; lowering only, swept
    /// until nothing changes (each sweep can only lower values, so it ends;
    /// the sweep runs in node order, lower nodes first, so one sweep settles
    /// and the next confirms). Returns the number of nodes changed. Why this
    /// holds between the nodes too: the module doc.
    pub fn hold_monotonic(&mut self, drops: &[[f64; 4]], margin: f64) -> usize {
        let n: [usize; 4] = std::array::from_fn(|a| self.axes[a].len());
        let mut changed = 0;
        for _sweep in 0..1000 {
            let mut any = false;
            for at in 0..self.values.len() {
                for a in 0..4 {
                    if (at / self.strides[a]).is_multiple_of(n[a]) {
                        continue;
                    }
                    let below = at - self.strides[a];
                    let limit = self.values[below][0] + drops[at][a] - margin;
                    if self.values[at][0] > limit {
                        self.values[at][0] = limit;
                        any = true;
                        changed += 1;
                    }
                }
            }
            if !any {
                break;
            }
        }
        changed
    }

    /// The input of [`Correction::hold_monotonic`] for a physical model whose
    /// L* has the derivative `slope` (dL*/dc, dL*/dm, dL*/dy, dL*/dk) at any
    /// build, sampled at `per_cell` + 1 levels per ink across every cell (the
    /// cell's corners included). For the edge ending at node `at` on ink `a`
    /// it returns the edge's length times
    ///
    /// - the least fall rate of L* along `a` on the edge itself (its samples,
    ///   less the largest change between neighbouring ones: what the fall
    ///   can lose between two samples if it changes no faster than between
    ///   them),
    /// - less the cell defect: how far, at most, the fall rate anywhere in a
    ///   cell holding the edge lies below the interpolation of its values on
    ///   the cell's 8 edges along `a` (trilinear over the other three inks,
    ///   the same weights as the offset's), from the samples, raised by the
    ///   largest change of that defect between neighbouring samples; the
    ///   largest over the up to 8 cells that hold the edge.
    ///
    /// Then the fall rate at any point of a cell is at least the blend, with
    /// the offset's own weights, of its edges' bounds (module doc).
    pub fn edge_drops(&self, slope: impl Fn(Cmyk) -> [f64; 4], per_cell: usize) -> Vec<[f64; 4]> {
        let p = per_cell.max(1);
        let n: [usize; 4] = std::array::from_fn(|a| self.axes[a].len());
        let cells: [usize; 4] = std::array::from_fn(|a| n[a] - 1);
        // Sample levels per axis: p steps across every cell, shared ends.
        let grid: [Vec<f64>; 4] = std::array::from_fn(|a| {
            let l = &self.axes[a].levels;
            let mut g: Vec<f64> = (0..cells[a])
                .flat_map(|c| (0..p).map(move |s| l[c] + (l[c + 1] - l[c]) * s as f64 / p as f64))
                .collect();
            g.push(1.0);
            g
        });
        let g: [usize; 4] = std::array::from_fn(|a| grid[a].len());
        let gs = [g[1] * g[2] * g[3], g[2] * g[3], g[3], 1];
        let mut falls = vec![[0.0; 4]; g.iter().product()];
        for (at, f) in falls.iter_mut().enumerate() {
            let ink = Cmyk::from_array(std::array::from_fn(|a| grid[a][at / gs[a] % g[a]]));
            *f = slope(ink).map(|d| -d);
        }
        // The sample index of node `i` (per axis) and of local sample `li` in cell `ci`.
        let sample = |idx: [usize; 4]| -> usize { (0..4).map(|a| idx[a] * gs[a]).sum() };
        // Per cell and ink: the largest defect of the fall rate below its
        // interpolation from the cell's edges along that ink.
        let cs = [cells[1] * cells[2] * cells[3], cells[2] * cells[3], cells[3], 1];
        let local_count = (p + 1).pow(4);
        let local = |l: usize| -> [usize; 4] { std::array::from_fn(|a| l / (p + 1).pow(3 - a as u32) % (p + 1)) };
        let side = p + 1;
        let defects: Vec<[f64; 4]> = (0..cells.iter().product())
            .map(|cell: usize| {
                let ci: [usize; 4] = std::array::from_fn(|a| cell / cs[a] % cells[a]);
                std::array::from_fn(|a| {
                    // The other three inks, in order, and the local sample grid
                    // indexed [s on ink a][u][v][w] over them.
                    let others: Vec<usize> = (0..4).filter(|&b| b != a).collect();
                    let (b0, b1, b2) = (others[0], others[1], others[2]);
                    let mut defect = vec![0.0; local_count];
                    let at_local = |sa: usize, u: usize, v: usize, w: usize| -> usize {
                        let mut idx = [0; 4];
                        idx[a] = ci[a] * p + sa;
                        idx[b0] = ci[b0] * p + u;
                        idx[b1] = ci[b1] * p + v;
                        idx[b2] = ci[b2] * p + w;
                        sample(idx)
                    };
                    for sa in 0..side {
                        // The fall on the cell's 8 edges along a at this level.
                        let e: [f64; 8] = std::array::from_fn(|c| falls[at_local(sa, (c >> 2 & 1) * p, (c >> 1 & 1) * p, (c & 1) * p)][a]);
                        for u in 0..side {
                            let tu = u as f64 / p as f64;
                            let e4: [f64; 4] = std::array::from_fn(|j| e[j] + (e[j + 4] - e[j]) * tu);
                            for v in 0..side {
                                let tv = v as f64 / p as f64;
                                let e2 = [e4[0] + (e4[2] - e4[0]) * tv, e4[1] + (e4[3] - e4[1]) * tv];
                                for w in 0..side {
                                    let tw = w as f64 / p as f64;
                                    let interp = e2[0] + (e2[1] - e2[0]) * tw;
                                    defect[((sa * side + u) * side + v) * side + w] = interp - falls[at_local(sa, u, v, w)][a];
                                }
                            }
                        }
                    }
                    let mut worst: f64 = 0.0;
                    let mut step: f64 = 0.0;
                    for (l, &d) in defect.iter().enumerate() {
                        worst = worst.max(d);
                        let li = local(l);
                        for (b, &lb) in li.iter().enumerate() {
                            if lb < p {
                                step = step.max((defect[l + side.pow(3 - b as u32)] - d).abs());
                            }
                        }
                    }
                    worst + step
                })
            })
            .collect();
        (0..self.values.len())
            .map(|at| {
                let i: [usize; 4] = std::array::from_fn(|a| at / self.strides[a] % n[a]);
                std::array::from_fn(|a| {
                    if i[a] == 0 {
                        return 0.0;
                    }
                    // The least fall along the edge itself, from its samples.
                    let mut least = f64::INFINITY;
                    let mut step: f64 = 0.0;
                    let mut idx: [usize; 4] = std::array::from_fn(|b| i[b] * p);
                    let mut prev: Option<f64> = None;
                    for s in 0..=p {
                        idx[a] = (i[a] - 1) * p + s;
                        let f = falls[sample(idx)][a];
                        least = least.min(f);
                        if let Some(q) = prev {
                            step = step.max((f - q).abs());
                        }
                        prev = Some(f);
                    }
                    // The largest defect over the cells holding the edge: index
                    // i[a] − 1 on ink a, i[b] − 1 or i[b] on the others.
                    let mut defect: f64 = 0.0;
                    'cells: for corner in 0..8usize {
                        let mut cell = (i[a] - 1) * cs[a];
                        for (bit, b) in (0..4).filter(|&b| b != a).enumerate() {
                            let c = if corner >> bit & 1 == 1 {
                                i[b]
                            } else {
                                match i[b].checked_sub(1) {
                                    Some(c) => c,
                                    None => continue 'cells,
                                }
                            };
                            if c >= cells[b] {
                                continue 'cells;
                            }
                            cell += c * cs[b];
                        }
                        defect = defect.max(defects[cell][a]);
                    }
                    (least - step - defect) * (self.axes[a].levels[i[a]] - self.axes[a].levels[i[a] - 1])
                })
            })
            .collect()
    }

    /// The nominal CMYK of every node, in the order of [`Correction::values`].
    pub fn node_inks(&self) -> Vec<Cmyk> {
        let n: [usize; 4] = std::array::from_fn(|a| self.axes[a].len());
        (0..self.values.len())
            .map(|at| {
                let i: [usize; 4] = std::array::from_fn(|a| at / self.strides[a] % n[a]);
                Cmyk::new(
                    self.axes[0].levels[i[0]],
                    self.axes[1].levels[i[1]],
                    self.axes[2].levels[i[2]],
                    self.axes[3].levels[i[3]],
                )
            })
            .collect()
    }

    /// Largest |ΔL*|, |Δa*|, |Δb*| over the nodes.
    pub fn largest(&self) -> f64 {
        self.values.iter().flatten().fold(0.0, |m: f64, v| m.max(v.abs()))
    }
}

/// The cell of the lattice on `axes` holding `ink`: the index of its lowest
/// corner under `strides` (node strides for the node values, cell strides
/// for [`CellBlocks`]), the position inside the cell per ink (0..1) and
/// 1 / the cell's width per ink.
#[inline(always)]
fn locate_cell(axes: &[Axis; 4], strides: [usize; 4], ink: Cmyk) -> (usize, [f64; 4], [f64; 4]) {
    let x = ink.to_array();
    let mut base = 0;
    let mut t = [0.0; 4];
    let mut inv = [0.0; 4];
    for a in 0..4 {
        let (i, f, w) = axes[a].locate(x[a]);
        base += i * strides[a];
        t[a] = f;
        inv[a] = w;
    }
    (base, t, inv)
}

/// Multilinear interpolation between the 16 corner values of a cell (black
/// varying fastest, then yellow, magenta, cyan) at position `t` inside it:
/// 15 linear interpolations, along black, then yellow, magenta and cyan.
#[inline(always)]
fn interpolate(v: &[[f64; 3]; 16], t: [f64; 4]) -> [f64; 3] {
    let k8: [[f64; 3]; 8] = std::array::from_fn(|j| lerp3(v[2 * j], v[2 * j + 1], t[3]));
    let y4: [[f64; 3]; 4] = std::array::from_fn(|j| lerp3(k8[2 * j], k8[2 * j + 1], t[2]));
    let m2 = [lerp3(y4[0], y4[1], t[1]), lerp3(y4[2], y4[3], t[1])];
    lerp3(m2[0], m2[1], t[0])
}

/// [`interpolate`] and its derivative with respect to each ink (rows L*,
/// a*, b*; columns c, m, y, k; `inv`: 1 / the cell's width per ink). The
/// same cascade: the derivative along an ink is the difference across that
/// ink, interpolated along the inks after it.
#[inline(always)]
fn interpolate_with_derivative(v: &[[f64; 3]; 16], t: [f64; 4], inv: [f64; 4]) -> ([f64; 3], [[f64; 4]; 3]) {
    let k8: [[f64; 3]; 8] = std::array::from_fn(|j| lerp3(v[2 * j], v[2 * j + 1], t[3]));
    let dk8: [[f64; 3]; 8] = std::array::from_fn(|j| sub3(v[2 * j + 1], v[2 * j]));
    let y4: [[f64; 3]; 4] = std::array::from_fn(|j| lerp3(k8[2 * j], k8[2 * j + 1], t[2]));
    let dk4: [[f64; 3]; 4] = std::array::from_fn(|j| lerp3(dk8[2 * j], dk8[2 * j + 1], t[2]));
    let dy4: [[f64; 3]; 4] = std::array::from_fn(|j| sub3(k8[2 * j + 1], k8[2 * j]));
    let m2 = [lerp3(y4[0], y4[1], t[1]), lerp3(y4[2], y4[3], t[1])];
    let dk2 = [lerp3(dk4[0], dk4[1], t[1]), lerp3(dk4[2], dk4[3], t[1])];
    let dy2 = [lerp3(dy4[0], dy4[1], t[1]), lerp3(dy4[2], dy4[3], t[1])];
    let dm2 = [sub3(y4[1], y4[0]), sub3(y4[3], y4[2])];
    let out = lerp3(m2[0], m2[1], t[0]);
    let d = [
        sub3(m2[1], m2[0]),
        lerp3(dm2[0], dm2[1], t[0]),
        lerp3(dy2[0], dy2[1], t[0]),
        lerp3(dk2[0], dk2[1], t[0]),
    ];
    let jac = std::array::from_fn(|ch| std::array::from_fn(|a| d[a][ch] * inv[a]));
    (out, jac)
}

/// A correction laid out for evaluation: the 16 corner values of every cell
/// side by side (384 bytes a cell), so that an evaluation reads one block
/// instead of 16 nodes spread over the lattice (in eight places, up to a
/// cyan step of several kilobytes apart). Same values and the same
/// arithmetic as [`Correction::offset`], so the same results to the bit.
#[derive(Debug, Clone)]
struct CellBlocks {
    axes: [Axis; 4],
    /// Strides of the cell index per ink (cells per axis: nodes − 1).
    strides: [usize; 4],
    blocks: Vec<[[f64; 3]; 16]>,
}

impl CellBlocks {
    fn new(c: &Correction) -> CellBlocks {
        let cells: [usize; 4] = std::array::from_fn(|a| c.axes[a].len() - 1);
        let strides = [cells[1] * cells[2] * cells[3], cells[2] * cells[3], cells[3], 1];
        let blocks = (0..cells.iter().product())
            .map(|cell: usize| {
                let base: usize = (0..4).map(|a| cell / strides[a] % cells[a] * c.strides[a]).sum();
                c.corners(base)
            })
            .collect();
        CellBlocks {
            axes: c.axes.clone(),
            strides,
            blocks,
        }
    }

    #[inline(always)]
    fn offset(&self, ink: Cmyk) -> [f64; 3] {
        let (cell, t, _) = locate_cell(&self.axes, self.strides, ink);
        interpolate(&self.blocks[cell], t)
    }

    #[inline(always)]
    fn offset_with_derivative(&self, ink: Cmyk) -> ([f64; 3], [[f64; 4]; 3]) {
        let (cell, t, inv) = locate_cell(&self.axes, self.strides, ink);
        interpolate_with_derivative(&self.blocks[cell], t, inv)
    }
}

/// The physical model with an optional lattice correction applied in CIELAB.
/// An evaluation is the physical model's CIELAB ([`NeugebauerModel::lab_fused`])
/// plus the correction read from its cell blocks.
#[derive(Debug, Clone)]
pub struct CorrectedModel {
    base: NeugebauerModel,
    correction: Option<std::sync::Arc<Correction>>,
    blocks: Option<CellBlocks>,
}

impl CorrectedModel {
    pub fn new(base: NeugebauerModel, correction: Option<std::sync::Arc<Correction>>) -> CorrectedModel {
        let blocks = correction.as_deref().map(CellBlocks::new);
        CorrectedModel { base, correction, blocks }
    }

    pub fn base(&self) -> &NeugebauerModel {
        &self.base
    }

    pub fn correction(&self) -> Option<&Correction> {
        self.correction.as_deref()
    }
}

impl PressModel for CorrectedModel {
    #[inline]
    fn xyz(&self, ink: Cmyk) -> Xyz {
        match &self.blocks {
            None => self.base.xyz(ink),
            Some(_) => self.lab(ink).to_xyz(),
        }
    }

    #[inline]
    fn lab(&self, ink: Cmyk) -> Lab {
        let lab = self.base.lab_fused(ink);
        match &self.blocks {
            None => lab,
            Some(c) => {
                let d = c.offset(ink);
                Lab::new(lab.l + d[0], lab.a + d[1], lab.b + d[2])
            }
        }
    }

    fn lab_jacobian(&self, ink: Cmyk) -> (Lab, [[f64; 4]; 3]) {
        let (lab, mut jac) = self.base.lab_jacobian_fused(ink);
        match &self.blocks {
            None => (lab, jac),
            Some(c) => {
                let (d, dj) = c.offset_with_derivative(ink);
                for r in 0..3 {
                    for k in 0..4 {
                        jac[r][k] += dj[r][k];
                    }
                }
                (Lab::new(lab.l + d[0], lab.a + d[1], lab.b + d[2]), jac)
            }
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn axis(levels: &[f64]) -> Axis {
        Axis::new(levels).unwrap()
    }

    fn sample() -> Correction {
        let axes = [
            axis(&[0.0, 0.3, 1.0]),
            axis(&[0.0, 0.5, 1.0]),
            axis(&[0.0, 0.1, 0.2, 1.0]),
            axis(&[0.0, 1.0]),
        ];
        let mut c = Correction::zero(axes);
        for (i, v) in c.values_mut().iter_mut().enumerate() {
            let x = i as f64;
            *v = [(x * 0.37).sin(), (x * 0.11).cos(), x * 0.01];
        }
        c
    }

    #[test]
    fn locate_finds_the_cell_for_every_coverage() {
        let a = axis(&[0.0, 0.1, 0.2, 0.3, 0.4, 0.55, 0.7, 0.85, 1.0]);
        for i in 0..=1000 {
            let x = i as f64 / 1000.0;
            let (cell, t, _) = a.locate(x);
            assert!(a.levels[cell] <= x + 1e-15 && (x <= a.levels[cell + 1] + 1e-15), "{x} {cell}");
            assert!((0.0..=1.0 + 1e-12).contains(&t));
        }
    }

    #[test]
    fn locate_finds_the_cell_between_the_closest_nodes_allowed() {
        // Nodes 1e-3 apart (the closest Axis::new accepts), around bin edges.
        let a = axis(&[0.0, 0.2495, 0.2505, 0.2515, 0.5, 0.999, 1.0]);
        for i in 0..=100_000 {
            let x = i as f64 / 100_000.0;
            let (cell, t, w) = a.locate(x);
            let (lo, hi) = (a.levels[cell], a.levels[cell + 1]);
            assert!(lo <= x && (x < hi || (x == 1.0 && hi == 1.0)), "{x} in cell {cell}");
            assert!((t - (x - lo) / (hi - lo)).abs() < 1e-9 && (w - 1.0 / (hi - lo)).abs() < 1e-6);
        }
    }

    #[test]
    fn derivative_cascade_gives_the_offset_and_uses_the_cell_above_on_a_node() {
        let c = sample();
        for ink in [
            Cmyk::new(0.3, 0.5, 0.1, 0.0),
            Cmyk::new(0.77, 0.21, 0.33, 0.64),
            Cmyk::new(1.0, 1.0, 1.0, 1.0),
        ] {
            let (o, _) = c.offset_with_derivative(ink);
            assert_eq!(o, c.offset(ink));
        }
        // On the cyan node at 0.3 the slope along cyan is that of the cell 0.3..1.
        let ink = Cmyk::new(0.3, 0.25, 0.15, 0.5);
        let (_, j) = c.offset_with_derivative(ink);
        let h = 1e-7;
        let up = c.offset(Cmyk::new(0.3 + h, 0.25, 0.15, 0.5));
        let o = c.offset(ink);
        for ch in 0..3 {
            assert!(((up[ch] - o[ch]) / h - j[ch][0]).abs() < 1e-5);
        }
    }

    #[test]
    fn nodes_are_reproduced_and_weights_sum_to_one() {
        let c = sample();
        for (ink, v) in c.node_inks().iter().zip(c.values()) {
            let o = c.offset(*ink);
            assert!((0..3).all(|k| (o[k] - v[k]).abs() < 1e-12), "{ink:?}");
        }
        let (_, w) = c.weights(Cmyk::new(0.17, 0.61, 0.15, 0.4));
        assert!((w.iter().sum::<f64>() - 1.0).abs() < 1e-12);
    }

    #[test]
    fn weights_give_the_same_offset_as_the_interpolation() {
        let c = sample();
        let ink = Cmyk::new(0.77, 0.21, 0.33, 0.64);
        let (idx, w) = c.weights(ink);
        let o = c.offset(ink);
        for ch in 0..3 {
            let s: f64 = idx.iter().zip(w).map(|(&i, w)| w * c.values()[i][ch]).sum();
            assert!((s - o[ch]).abs() < 1e-12);
        }
    }

    #[test]
    fn derivative_matches_central_differences_inside_a_cell() {
        let c = sample();
        let ink = Cmyk::new(0.41, 0.27, 0.15, 0.66);
        let (o, j) = c.offset_with_derivative(ink);
        assert!((0..3).all(|k| (o[k] - c.offset(ink)[k]).abs() < 1e-12));
        let h = 1e-6;
        for a in 0..4 {
            let mut lo = ink.to_array();
            let mut hi = ink.to_array();
            lo[a] -= h;
            hi[a] += h;
            let (pl, ph) = (c.offset(Cmyk::from_array(lo)), c.offset(Cmyk::from_array(hi)));
            for ch in 0..3 {
                let fd = (ph[ch] - pl[ch]) / (2.0 * h);
                assert!((fd - j[ch][a]).abs() < 1e-6, "{a} {ch}: {fd} vs {}", j[ch][a]);
            }
        }
    }

    #[test]
    fn cell_blocks_give_the_lattice_offset_to_the_bit() {
        let c = sample();
        let blocks = CellBlocks::new(&c);
        for i in 0..=3000 {
            let f = |a: f64| (i as f64 * a).fract();
            let ink = Cmyk::new(f(0.618_033_988_7), f(0.754_877_666_2), f(0.569_840_290_9), f(0.441_487_542_1));
            assert_eq!(blocks.offset(ink), c.offset(ink), "{ink:?}");
            assert_eq!(blocks.offset_with_derivative(ink), c.offset_with_derivative(ink), "{ink:?}");
        }
        for ink in c.node_inks() {
            assert_eq!(blocks.offset(ink), c.offset(ink), "{ink:?}");
        }
    }

    #[test]
    fn bad_axes_are_refused() {
        assert!(Axis::new(&[0.0]).is_none());
        assert!(Axis::new(&[0.1, 1.0]).is_none());
        assert!(Axis::new(&[0.0, 0.5, 0.5, 1.0]).is_none());
        assert!(Axis::new(&[0.0, 0.9]).is_none());
    }

    #[test]
    fn holding_monotonic_makes_node_lightness_non_increasing() {
        let mut c = sample();
        let lightness = |i: Cmyk| 90.0 - 20.0 * (i.c + i.m + i.y + i.k);
        let base: Vec<f64> = c.node_inks().iter().map(|&i| lightness(i)).collect();
        for v in c.values_mut() {
            v[0] *= 30.0;
        }
        let drops = c.edge_drops(|_| [-20.0; 4], 4);
        assert!(c.hold_monotonic(&drops, 0.0) > 0);
        let n: [usize; 4] = std::array::from_fn(|a| c.axes()[a].len());
        for at in 0..c.values().len() {
            for a in 0..4 {
                if !(at / c.strides()[a]).is_multiple_of(n[a]) {
                    let below = at - c.strides()[a];
                    assert!(base[at] + c.values()[at][0] <= base[below] + c.values()[below][0] + 1e-12);
                }
            }
        }
    }

    #[test]
    fn holding_monotonic_keeps_lightness_falling_inside_cells() {
        // A physics whose fall along cyan weakens as black is added (to 2 per
        // unit at full black) and along black weakens as cyan is added: the
        // least slope along an edge is not the least over its cells, and a
        // rough offset (±30 L*) would rise between the nodes if only the
        // edges were held. After holding, L* must fall along every ink at
        // every point (to rounding), not only at the nodes.
        let mut c = sample();
        let lightness = |i: Cmyk| 90.0 - 20.0 * (i.c + i.m + i.y + i.k) + 9.0 * i.c * i.k;
        let slope = |i: Cmyk| [-20.0 + 9.0 * i.k, -20.0, -20.0, -20.0 + 9.0 * i.c];
        for v in c.values_mut() {
            v[0] *= 30.0;
        }
        let drops = c.edge_drops(slope, 4);
        c.hold_monotonic(&drops, 0.0);
        let mut worst: f64 = f64::NEG_INFINITY;
        for i in 0..20_000 {
            let f = |a: f64| (i as f64 * a).fract();
            let x = [f(0.618_033_988_7), f(0.754_877_666_2), f(0.569_840_290_9), f(0.441_487_542_1)];
            let l = lightness(Cmyk::from_array(x)) + c.offset(Cmyk::from_array(x))[0];
            for a in 0..4 {
                let mut y = x;
                y[a] = (y[a] + 0.003).min(1.0);
                let l2 = lightness(Cmyk::from_array(y)) + c.offset(Cmyk::from_array(y))[0];
                worst = worst.max(l2 - l);
            }
        }
        assert!(worst <= 1e-9, "L* rises by {worst}");
    }
}
