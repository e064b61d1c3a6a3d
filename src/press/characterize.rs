//! Characterizing a press from measured patches: the physical model fitted
//! first ([`super::fit::fit_model`]), then the lattice correction of
//! [`super::correction`] fitted to what the physics leaves, and k-fold
//! cross-validation that says how well the result predicts patches it did not
//! see.
//!
//! The correction solves, per CIELAB coordinate, the penalised least-squares
//! problem
//!
//! min Σᵢ (Σⱼ wᵢⱼ xⱼ − rᵢ)² + λ Σ_{C,M,Y} Σ (x₋ − 2x + x₊)² + λ Σ_K Σ (y₋ − 2y + y₊)²
//!     + τ Σ_pairs Σ (x₊₊ − x₊₋ − x₋₊ + x₋₋)² + μ Σⱼ xⱼ²,   y = φ + x,
//!
//! where wᵢⱼ are the multilinear weights of patch i on node j, rᵢ the
//! physical model's residual and φⱼ the physical model's CIELAB at node j.
//! The second term keeps the correction's slope along cyan, magenta and
//! yellow from changing from one cell to the next. The third does the same
//! along black, but for the corrected colour y itself: where no patch is, the
//! colour is carried on along black in a straight line in CIELAB rather than
//! the physics' curve with the neighbours' residual added. The physics is
//! least trustworthy there: toward 100 % black the wet-on-wet black makes
//! the solids over black more chromatic than the Yule–Nielsen model puts
//! them, an effect the data show only at the corners themselves, so a
//! residual extrapolated from 80 % black points the wrong way (held out,
//! FOGRA39L's C100 K100 is predicted at b* −7.5 against −10.25 measured);
//! the measured colours themselves run nearly straight along black in the
//! shadows (the six solids and overprints that FOGRA39L prints at K60, K70
//! and K80: their steps in L*, a*, b* from K60 to K70 and from K70 to K80
//! agree within 0.26, steps of up to 9; FOGRA29L within 0.47). Along cyan, magenta and yellow the physics'
//! curvature is kept (the chart is dense there, and the tone curves are
//! what the Yule–Nielsen model is built for). Measured on FOGRA39L
//! (held-out max 2.02 → 1.81, the same mean and p95) and the five other
//! sets (docs/REFERENCES.md); putting every ink's second differences on the
//! corrected colour gave 1.99, on black alone was chosen on those folds.
//! The term adds −λ D_Kᵀ D_K φ to the right-hand side only
//! ([`black_smoothness_rhs`]); the matrix is unchanged. The fourth (the
//! mixed second difference over each cell face, for each of the six pairs of
//! inks: the thin-plate energy's cross term, Wahba, "Spline models for
//! observational data", 1990, ch. 2, discretised) keeps the slope along one
//! ink from changing when another ink is added. Without it, a node that no
//! patch reaches is set by the two one-ink extrapolations alone; with it, the
//! correction a corner needs is carried over from the neighbouring face: the
//! change that black brings to the residual at yellow 40 % is the change it
//! brings at yellow 100 %. That is what predicts a solid over 100 % black the
//! fit did not see (cross-validation on FOGRA39L, held-out Y100 K100: 3.63
//! ΔE2000 without the term, 1.68 with it; docs/REFERENCES.md). The normal
//! equations are sparse and solved by
//! conjugate gradients with a Jacobi preconditioner (Hestenes & Stiefel 1952;
//! Saad, "Iterative methods for sparse linear systems", 2003, §9.2). λ is
//! chosen among [`LAMBDAS`] by the mean cross-validated ΔE2000; μ is small
//! and fixed ([`RIDGE`]), enough to pull nodes no patch reaches toward zero.
//!
//! The correction must not let L* rise when ink is added
//! ([`Correction::hold_monotonic`], whose bound per lattice edge holds it
//! between the nodes too: `press::correction`). Lowering the nodes that
//! break it after the fit moves them away from their patches with nothing to
//! make up for it. Instead the bound enters the fit: the edges the free solve
//! leaves over their bounds are held, each by a stiff penalty
//! ρ (xᵤ − xₗ − bound)² on its L* difference ([`HOLD_WEIGHT`]), and the
//! problem is solved again, so the neighbouring nodes take up what the held
//! ones cannot fit (an active-set method with a quadratic penalty for the
//! active constraints: Nocedal & Wright, "Numerical optimization", 2006,
//! §16.5 and §17.1). Rounds repeat while new edges break their bounds; the
//! lowering afterwards only removes what the finite penalty leaves (hundredths
//! of a unit). Against lowering alone this took FOGRA39L's in-sample maximum
//! from 0.78 to 0.45 and TR 002's held-out mean from 0.32 to 0.29; with the
//! aims weighted ([`AIM_WEIGHT`]) 0.44 and 0.30 (docs/REFERENCES.md).

use super::correction::{Axis, Correction};
use super::fit::{Patch, Residuals, fit_model, mean_at, order_params, patches_from_cgats, starting_point, summarize};
use super::{AIM_INKS, MeasuredAim, ModelParams, PressModel, PrintingCondition};
use crate::cgats::{self, CgatsFile};
use crate::colour::Lab;
use crate::error::{Error, Result};
use crate::ink::Cmyk;
use rayon::prelude::*;
use serde::Serialize;
use std::path::Path;
use std::sync::Arc;

/// Node levels of the lattice on cyan, magenta and yellow, percent. Chosen by
/// the cross-validation on the FOGRA39L data set (10 folds, mean held-out
/// ΔE2000): nodes at the chart's own nine levels fit every patch but predict
/// held-out ones worse (0.160), ten nodes 0.147, these seven 0.130, six 0.150,
/// five 0.166 (docs/REFERENCES.md). Fewer nodes than levels make each node an
/// average of several patches, which is what smooths the measurement noise.
pub const CMY_LEVELS: [f64; 7] = [0.0, 15.0, 30.0, 45.0, 60.0, 80.0, 100.0];

/// Node levels on black, percent (the chart's main black levels).
pub const K_LEVELS: [f64; 6] = [0.0, 20.0, 40.0, 60.0, 80.0, 100.0];

/// Smoothness weights tried by the cross-validation.
pub const LAMBDAS: [f64; 4] = [0.0001, 0.0003, 0.001, 0.003];

/// Weight τ of the mixed second differences. Chosen on the FOGRA39L and
/// FOGRA29L data sets (10 folds, held-out ΔE2000 mean / max, smoothness from
/// the former grid 0.001–0.03): τ = 0 gave 0.13 / 3.63 and 0.11 / 3.20;
/// 0.001: 0.12 / 2.75 on FOGRA39L; 0.01: 0.11 / 2.12; 0.03: 0.11 / 2.11 and
/// 0.06 / 1.69; 0.1: 0.12 / 2.26 and 0.08 / 1.86. With it every set chose
/// the lowest smoothness, so [`LAMBDAS`] moved down a step (then 0.11 / 2.05
/// and 0.06 / 1.62; with the monotonicity bounds held in the fit, 0.11 /
/// 2.02 and 0.06 / 1.63; with the second differences along black on the
/// corrected colour, 0.11 / 1.81 and 0.06 / 1.25, when FOGRA39L, FOGRA29L
/// and FOGRA30L choose the top of the grid, 0.003, which was not widened).
/// Chosen on the data it is scored on, like the node levels, so the
/// held-out figures are slightly flattered.
pub const TWIST: f64 = 0.03;

/// Ridge weight μ: fades the correction where no patch constrains it.
pub const RIDGE: f64 = 1e-4;

/// Default number of folds.
pub const DEFAULT_FOLDS: usize = 10;

/// Iterations of the physical fit on all patches, and per fold (warm start).
const FULL_ITERATIONS: usize = 200;
const FOLD_ITERATIONS: usize = 40;

/// Margin by which the corrected L* drops from a node to the next node with
/// more ink at least, where the correction had to be lowered.
const MONOTONIC_MARGIN: f64 = 0.01;

/// Weight of a patch printed at one of the aims (paper, the solids, the
/// overprints without black) in the lattice fit, against 1 for the others.
/// The aims are what a condition is checked by (within 1 ΔE2000 of the
/// data); where the data are not monotonic (TR 002 prints yellow over black
/// lighter than black alone), the held bounds would otherwise spread the
/// compromise onto the black solid.
const AIM_WEIGHT: f64 = 10.0;

/// Weight ρ of a held edge in the fit ([`HeldEdge`]): a hundred times the
/// weight of one patch on its own node, so that a held edge's rise lands
/// within about a percent of the gap between the free fit and its bound.
const HOLD_WEIGHT: f64 = 100.0;

/// Relative residual at which the conjugate gradients stop once edges are
/// held (1e-7 without).
const HELD_TOLERANCE: f64 = 1e-4;

/// Most rounds of holding edges (a round adds the edges the last solve left
/// over their bounds; it stops early when there are none).
const HOLD_ROUNDS: usize = 8;

/// Steps per ink across each lattice cell at which the physical model's
/// slope is sampled for its least fall over the cell ([`Correction::edge_drops`]).
const CELL_SAMPLES: usize = 4;

/// What to fit.
#[derive(Debug, Clone)]
pub struct Options {
    /// Fit the lattice correction (otherwise the physical model alone).
    pub correction: bool,
    /// Number of folds of the cross-validation (0: none; then λ is `lambda`).
    pub folds: usize,
    /// Smoothness weight when no cross-validation chooses it.
    pub lambda: f64,
    /// Iterations of the physical fit.
    pub iterations: usize,
}

impl Default for Options {
    fn default() -> Options {
        Options {
            correction: true,
            folds: DEFAULT_FOLDS,
            lambda: LAMBDAS[1],
            iterations: FULL_ITERATIONS,
        }
    }
}

/// Held-out accuracy.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct CrossValidation {
    pub folds: usize,
    /// ΔE2000 of every patch predicted by the model fitted without its fold.
    pub held_out: Residuals,
    /// Mean held-out ΔE2000 for each smoothness weight tried.
    pub lambda_scores: Vec<(f64, f64)>,
    /// The mean held-out ΔE2000 of the physical model alone (same folds).
    pub physical_mean: f64,
    /// The held-out prediction of every patch (in the patches' order).
    #[serde(skip)]
    pub predicted: Vec<Lab>,
}

/// The outcome of [`characterize`].
#[derive(Debug, Clone, Serialize)]
pub struct Characterization {
    pub params: ModelParams,
    #[serde(skip)]
    pub correction: Option<Arc<Correction>>,
    /// The smoothness weight used.
    pub lambda: f64,
    /// Iterations of the physical fit on all patches.
    pub iterations: usize,
    /// Whether the physical fit converged (stopped by its own test rather than the iteration limit).
    pub converged: bool,
    /// In-sample residuals of the physical model alone.
    pub physical: Residuals,
    /// In-sample residuals of the full model.
    pub residuals: Residuals,
    pub cross_validation: Option<CrossValidation>,
    /// Nodes whose ΔL* was lowered to keep L* from rising with ink.
    pub monotonic_adjusted_nodes: usize,
    /// Largest |offset| of the correction, CIELAB units.
    pub largest_offset: f64,
}

impl Characterization {
    /// The model (physics plus correction).
    pub fn model(&self) -> super::CorrectedModel {
        super::CorrectedModel::new(self.params.model(), self.correction.clone())
    }
}

/// The default lattice axes.
pub fn default_axes() -> [Axis; 4] {
    let cmy: Vec<f64> = CMY_LEVELS.iter().map(|v| v / 100.0).collect();
    let k: Vec<f64> = K_LEVELS.iter().map(|v| v / 100.0).collect();
    std::array::from_fn(|a| Axis::new(if a == 3 { &k } else { &cmy }).unwrap_or_else(unreachable_axis))
}

#[cold]
fn unreachable_axis() -> Axis {
    // NODE_LEVELS are a valid axis (checked by a test); two nodes otherwise.
    Axis::new(&[0.0, 1.0]).unwrap_or_else(|| unreachable!())
}

/// Multilinear weights of every patch on the lattice.
struct Design {
    idx: Vec<[usize; 16]>,
    /// The multilinear weights times the square root of the patch's weight.
    w: Vec<[f64; 16]>,
    /// The square root of each patch's weight ([`AIM_WEIGHT`]).
    scale: Vec<f64>,
}

impl Design {
    fn new(lattice: &Correction, inks: &[Cmyk]) -> Design {
        let scale: Vec<f64> = inks
            .iter()
            .map(|i| {
                let at_aim = AIM_INKS
                    .iter()
                    .any(|aim| aim.iter().zip(i.to_array()).all(|(a, b)| (a - b).abs() < 0.005));
                if at_aim { AIM_WEIGHT.sqrt() } else { 1.0 }
            })
            .collect();
        let (idx, w) = inks
            .iter()
            .zip(&scale)
            .map(|(&i, &s)| {
                let (idx, w) = lattice.weights(i);
                (idx, w.map(|v| v * s))
            })
            .unzip();
        Design { idx, w, scale }
    }
}

/// Calls `f(a, b, at)` for every cell face on the pair of inks a < b, by the
/// node `at` at its lowest corner.
fn for_each_face(lattice: &Correction, mut f: impl FnMut(usize, usize, usize)) {
    let strides = lattice.strides();
    let n: [usize; 4] = std::array::from_fn(|a| lattice.axes()[a].len());
    for a in 0..4 {
        for b in a + 1..4 {
            for at in 0..lattice.values().len() {
                if at / strides[a] % n[a] + 1 < n[a] && at / strides[b] % n[b] + 1 < n[b] {
                    f(strides[a], strides[b], at);
                }
            }
        }
    }
}

/// y = (WᵀW + λ DᵀD + τ TᵀT + μ I + ρ CᵀC) x for the three coordinates at once
/// (C: the held edges' differences, L* only).
fn apply(design: &Design, lattice: &Correction, lambda: f64, held: &[HeldEdge], x: &[[f64; 3]], y: &mut [[f64; 3]]) {
    for v in y.iter_mut() {
        *v = [0.0; 3];
    }
    for (idx, w) in design.idx.iter().zip(&design.w) {
        let mut s = [0.0; 3];
        for (&j, &wj) in idx.iter().zip(w) {
            for ch in 0..3 {
                s[ch] += wj * x[j][ch];
            }
        }
        for (&j, &wj) in idx.iter().zip(w) {
            for ch in 0..3 {
                y[j][ch] += wj * s[ch];
            }
        }
    }
    let strides = lattice.strides();
    let n: [usize; 4] = std::array::from_fn(|a| lattice.axes()[a].len());
    for a in 0..4 {
        let s = strides[a];
        for at in 0..x.len() {
            let pos = at / s % n[a];
            if pos == 0 || pos + 1 == n[a] {
                continue;
            }
            for ch in 0..3 {
                let d = x[at - s][ch] - 2.0 * x[at][ch] + x[at + s][ch];
                y[at - s][ch] += lambda * d;
                y[at][ch] -= 2.0 * lambda * d;
                y[at + s][ch] += lambda * d;
            }
        }
    }
    for_each_face(lattice, |sa, sb, at| {
        for ch in 0..3 {
            let d = x[at + sa + sb][ch] - x[at + sa][ch] - x[at + sb][ch] + x[at][ch];
            y[at + sa + sb][ch] += TWIST * d;
            y[at + sa][ch] -= TWIST * d;
            y[at + sb][ch] -= TWIST * d;
            y[at][ch] += TWIST * d;
        }
    });
    for (yv, xv) in y.iter_mut().zip(x) {
        for ch in 0..3 {
            yv[ch] += RIDGE * xv[ch];
        }
    }
    for e in held {
        let d = HOLD_WEIGHT * (x[e.upper][0] - x[e.lower][0]);
        y[e.upper][0] += d;
        y[e.lower][0] -= d;
    }
}

/// A lattice edge whose L* rise is held at its bound in the fit: node
/// `upper` has more of one ink than `lower`, and ΔL*(upper) − ΔL*(lower)
/// is drawn to `bound`.
#[derive(Debug, Clone, Copy, PartialEq)]
struct HeldEdge {
    upper: usize,
    lower: usize,
    bound: f64,
}

/// The diagonal of the normal matrix (the Jacobi preconditioner).
fn diagonal(design: &Design, lattice: &Correction, lambda: f64, held: &[HeldEdge]) -> Vec<[f64; 3]> {
    let mut d = vec![RIDGE; lattice.values().len()];
    for (idx, w) in design.idx.iter().zip(&design.w) {
        for (&j, &wj) in idx.iter().zip(w) {
            d[j] += wj * wj;
        }
    }
    let strides = lattice.strides();
    let n: [usize; 4] = std::array::from_fn(|a| lattice.axes()[a].len());
    for a in 0..4 {
        for (at, dv) in d.iter_mut().enumerate() {
            let pos = at / strides[a] % n[a];
            // Each interior stencil touching the node adds its coefficient squared.
            let mut sum = 0.0;
            if pos >= 1 && pos + 1 < n[a] {
                sum += 4.0;
            }
            if pos >= 2 {
                sum += 1.0;
            }
            if pos + 2 < n[a] {
                sum += 1.0;
            }
            *dv += lambda * sum;
        }
    }
    // Each face stencil adds 1 (its coefficient squared) to each of its four nodes.
    for_each_face(lattice, |sa, sb, at| {
        for j in [at, at + sa, at + sb, at + sa + sb] {
            d[j] += TWIST;
        }
    });
    let mut d: Vec<[f64; 3]> = d.into_iter().map(|v| [v; 3]).collect();
    for e in held {
        d[e.upper][0] += HOLD_WEIGHT;
        d[e.lower][0] += HOLD_WEIGHT;
    }
    d
}

/// Solves for the node offsets that best fit `residuals` (measured − physical
/// model, per patch) by preconditioned conjugate gradients, from the
/// lattice's present values; `prior` is added to the right-hand side
/// ([`black_smoothness_rhs`]).
fn solve_lattice(lattice: &mut Correction, design: &Design, residuals: &[[f64; 3]], lambda: f64, held: &[HeldEdge], prior: &[[f64; 3]]) {
    let nodes = lattice.values().len();
    // With held edges the solve only places the L* nodes near their bounds;
    // the final hold settles them exactly, so a looser tolerance is enough.
    let tol = if held.is_empty() { 1e-7 } else { HELD_TOLERANCE };
    let mut b = vec![[0.0; 3]; nodes];
    for (((idx, w), r), s) in design.idx.iter().zip(&design.w).zip(residuals).zip(&design.scale) {
        for (&j, &wj) in idx.iter().zip(w) {
            for ch in 0..3 {
                b[j][ch] += wj * s * r[ch];
            }
        }
    }
    for e in held {
        b[e.upper][0] += HOLD_WEIGHT * e.bound;
        b[e.lower][0] -= HOLD_WEIGHT * e.bound;
    }
    for (bj, ej) in b.iter_mut().zip(prior) {
        for ch in 0..3 {
            bj[ch] += ej[ch];
        }
    }
    let diag = diagonal(design, lattice, lambda, held);
    let mut x = lattice.values().to_vec();
    let mut ax = vec![[0.0; 3]; nodes];
    apply(design, lattice, lambda, held, &x, &mut ax);
    let mut r: Vec<[f64; 3]> = b.iter().zip(&ax).map(|(b, a)| [b[0] - a[0], b[1] - a[1], b[2] - a[2]]).collect();
    let mut z: Vec<[f64; 3]> = r.iter().zip(&diag).map(|(r, d)| [r[0] / d[0], r[1] / d[1], r[2] / d[2]]).collect();
    let mut p = z.clone();
    let dot = |a: &[[f64; 3]], b: &[[f64; 3]]| -> [f64; 3] {
        let mut s = [0.0; 3];
        for (u, v) in a.iter().zip(b) {
            for ch in 0..3 {
                s[ch] += u[ch] * v[ch];
            }
        }
        s
    };
    let b_norm = dot(&b, &b).map(|v| v.sqrt().max(1e-300));
    let mut rz = dot(&r, &z);
    let mut ap = vec![[0.0; 3]; nodes];
    for _ in 0..4 * nodes {
        let rr = dot(&r, &r);
        if (0..3).all(|ch| rr[ch].sqrt() <= tol * b_norm[ch]) {
            break;
        }
        apply(design, lattice, lambda, held, &p, &mut ap);
        let pap = dot(&p, &ap);
        let alpha: [f64; 3] = std::array::from_fn(|ch| if pap[ch] > 0.0 { rz[ch] / pap[ch] } else { 0.0 });
        for j in 0..nodes {
            for ch in 0..3 {
                x[j][ch] += alpha[ch] * p[j][ch];
                r[j][ch] -= alpha[ch] * ap[j][ch];
                z[j][ch] = r[j][ch] / diag[j][ch];
            }
        }
        let rz_new = dot(&r, &z);
        let beta: [f64; 3] = std::array::from_fn(|ch| if rz[ch] > 0.0 { rz_new[ch] / rz[ch] } else { 0.0 });
        for j in 0..nodes {
            for ch in 0..3 {
                p[j][ch] = z[j][ch] + beta[ch] * p[j][ch];
            }
        }
        rz = rz_new;
    }
    lattice.values_mut().copy_from_slice(&x);
}

/// The residual of the physical model at each patch (measured − model).
fn physical_residuals(params: &ModelParams, patches: &[Patch]) -> Vec<[f64; 3]> {
    let model = params.model();
    patches
        .iter()
        .map(|p| {
            let l = model.lab(p.ink);
            [p.lab.l - l.l, p.lab.a - l.a, p.lab.b - l.b]
        })
        .collect()
}

/// The least fall of the physical model's L* over the cells around each
/// lattice edge ([`Correction::edge_drops`]), from its exact derivative.
fn edge_drops(params: &ModelParams, lattice: &Correction) -> Vec<[f64; 4]> {
    let model = params.model();
    lattice.edge_drops(|i| model.lab_jacobian_fused(i).1[0], CELL_SAMPLES)
}

/// Fits the lattice for each of `lambdas` (warm-started in turn), returning one
/// correction per weight, held monotonic (the module doc: edges over their
/// bounds held in the fit, then lowered to them) with the number of nodes
/// the final lowering changed.
fn fit_lattices(params: &ModelParams, patches: &[Patch], lambdas: &[f64]) -> Vec<(Correction, usize)> {
    let mut lattice = Correction::zero(default_axes());
    let inks: Vec<Cmyk> = patches.iter().map(|p| p.ink).collect();
    let design = Design::new(&lattice, &inks);
    let residuals = physical_residuals(params, patches);
    let drops = edge_drops(params, &lattice);
    lambdas
        .iter()
        .map(|&lambda| {
            let prior = black_smoothness_rhs(params, &lattice, lambda);
            solve_lattice(&mut lattice, &design, &residuals, lambda, &[], &prior);
            let mut held_edges: Vec<HeldEdge> = Vec::new();
            let mut fitted = lattice.clone();
            for _ in 0..HOLD_ROUNDS {
                // Held: the edges over their bounds, and those held before whose
                // penalty still pushes down (rise at or over the bound); an edge
                // the penalty pulls up is released.
                let mut next = violated_edges(&fitted, &drops, MONOTONIC_MARGIN);
                let values = fitted.values();
                for h in &held_edges {
                    let rise = values[h.upper][0] - values[h.lower][0];
                    if rise >= h.bound && !next.iter().any(|e| e.upper == h.upper && e.lower == h.lower) {
                        next.push(*h);
                    }
                }
                next.sort_by_key(|e| (e.upper, e.lower));
                if next == held_edges {
                    break;
                }
                held_edges = next;
                solve_lattice(&mut fitted, &design, &residuals, lambda, &held_edges, &prior);
            }
            let mut held = fitted;
            let changed = held.hold_monotonic(&drops, MONOTONIC_MARGIN);
            (held, changed)
        })
        .collect()
}

/// The part of the right-hand side that puts the second differences along
/// black on the corrected colour rather than on the correction (module doc):
/// −λ D_Kᵀ D_K φ, where φ is the physical model's CIELAB at the nodes and D_K
/// the second differences along black.
fn black_smoothness_rhs(params: &ModelParams, lattice: &Correction, lambda: f64) -> Vec<[f64; 3]> {
    let model = params.model();
    let phi: Vec<[f64; 3]> = lattice.node_inks().iter().map(|&i| model.lab(i).to_array()).collect();
    let s = lattice.strides()[3];
    let n = lattice.axes()[3].len();
    let mut y = vec![[0.0; 3]; phi.len()];
    for at in 0..phi.len() {
        let pos = at / s % n;
        if pos == 0 || pos + 1 == n {
            continue;
        }
        for ch in 0..3 {
            let d = lambda * (phi[at - s][ch] - 2.0 * phi[at][ch] + phi[at + s][ch]);
            y[at - s][ch] -= d;
            y[at][ch] += 2.0 * d;
            y[at + s][ch] -= d;
        }
    }
    y
}

/// The lattice edges whose L* rise exceeds the bound of [`Correction::hold_monotonic`].
fn violated_edges(lattice: &Correction, drops: &[[f64; 4]], margin: f64) -> Vec<HeldEdge> {
    let strides = lattice.strides();
    let n: [usize; 4] = std::array::from_fn(|a| lattice.axes()[a].len());
    let v = lattice.values();
    let mut out = Vec::new();
    for at in 0..v.len() {
        for a in 0..4 {
            if (at / strides[a]).is_multiple_of(n[a]) {
                continue;
            }
            let lower = at - strides[a];
            let bound = drops[at][a] - margin;
            if v[at][0] - v[lower][0] > bound {
                out.push(HeldEdge { upper: at, lower, bound });
            }
        }
    }
    out
}

/// Deterministic fold of each patch: a shuffle by splitmix64 (Steele, Lea &
/// Flood 2014) with a fixed seed, dealt round-robin.
pub fn fold_of(count: usize, folds: usize) -> Vec<usize> {
    let mut state: u64 = 0x005e_ed0f_c01d;
    let mut next = || {
        state = state.wrapping_add(0x9e37_79b9_7f4a_7c15);
        let mut z = state;
        z = (z ^ (z >> 30)).wrapping_mul(0xbf58_476d_1ce4_e5b9);
        z = (z ^ (z >> 27)).wrapping_mul(0x94d0_49bb_1331_11eb);
        z ^ (z >> 31)
    };
    let mut order: Vec<usize> = (0..count).collect();
    for i in (1..count).rev() {
        let j = (next() % (i as u64 + 1)) as usize;
        order.swap(i, j);
    }
    let mut fold = vec![0; count];
    for (rank, &i) in order.iter().enumerate() {
        fold[i] = rank % folds.max(1);
    }
    fold
}

/// Fits the physical model and the correction to `patches` from `start`, and
/// cross-validates when `options.folds` ≥ 2.
pub fn characterize(patches: &[Patch], start: &ModelParams, options: &Options) -> Characterization {
    let full = fit_model(patches, start, options.iterations);
    let params = full.params;
    let physical = full.residuals.clone();
    let converged = full.iterations < options.iterations;
    if !options.correction {
        return Characterization {
            params,
            correction: None,
            lambda: 0.0,
            iterations: full.iterations,
            converged,
            residuals: physical.clone(),
            physical,
            cross_validation: None,
            monotonic_adjusted_nodes: 0,
            largest_offset: 0.0,
        };
    }
    let (lambda, cross_validation) = if options.folds >= 2 {
        let (lambda, cv) = cross_validate(patches, &params, options.folds);
        (lambda, Some(cv))
    } else {
        (options.lambda, None)
    };
    let (lattice, changed) = fit_lattices(&params, patches, &[lambda]).remove(0);
    let model = super::CorrectedModel::new(params.model(), Some(Arc::new(lattice.clone())));
    let predicted: Vec<Lab> = patches.iter().map(|p| model.lab(p.ink)).collect();
    Characterization {
        params,
        largest_offset: lattice.largest(),
        correction: Some(Arc::new(lattice)),
        lambda,
        iterations: full.iterations,
        converged,
        physical,
        residuals: summarize(patches, &predicted),
        cross_validation,
        monotonic_adjusted_nodes: changed,
    }
}

/// k-fold cross-validation of the whole fit (physics warm-started from the
/// fit on all patches, then the lattice for each weight of [`LAMBDAS`]).
fn cross_validate(patches: &[Patch], params: &ModelParams, folds: usize) -> (f64, CrossValidation) {
    let fold = fold_of(patches.len(), folds);
    // Per fold: (patch index, physical prediction, prediction per λ).
    let results: Vec<Vec<(usize, Lab, Vec<Lab>)>> = (0..folds)
        .into_par_iter()
        .map(|f| {
            let train: Vec<Patch> = patches
                .iter()
                .zip(&fold)
                .filter(|(_, k)| **k != f)
                .map(|(p, _)| p.clone())
                .collect();
            let mut fp = fit_model(&train, params, FOLD_ITERATIONS).params;
            order_params(&mut fp);
            let lattices = fit_lattices(&fp, &train, &LAMBDAS);
            let base = fp.model();
            patches
                .iter()
                .enumerate()
                .filter(|(i, _)| fold[*i] == f)
                .map(|(i, p)| {
                    let physical = base.lab(p.ink);
                    let per_lambda = lattices
                        .iter()
                        .map(|(l, _)| {
                            let d = l.offset(p.ink);
                            Lab::new(physical.l + d[0], physical.a + d[1], physical.b + d[2])
                        })
                        .collect();
                    (i, physical, per_lambda)
                })
                .collect()
        })
        .collect();
    let mut physical = vec![Lab::default(); patches.len()];
    let mut per_lambda = vec![vec![Lab::default(); patches.len()]; LAMBDAS.len()];
    for (i, ph, labs) in results.into_iter().flatten() {
        physical[i] = ph;
        for (k, lab) in labs.into_iter().enumerate() {
            per_lambda[k][i] = lab;
        }
    }
    let scores: Vec<(f64, f64)> = LAMBDAS
        .iter()
        .zip(&per_lambda)
        .map(|(&l, labs)| (l, summarize(patches, labs).mean))
        .collect();
    let best = scores
        .iter()
        .enumerate()
        .min_by(|a, b| a.1.1.total_cmp(&b.1.1))
        .map(|(i, _)| i)
        .unwrap_or(0);
    let cv = CrossValidation {
        folds,
        held_out: summarize(patches, &per_lambda[best]),
        lambda_scores: scores,
        physical_mean: summarize(patches, &physical).mean,
        predicted: per_lambda[best].clone(),
    };
    (LAMBDAS[best], cv)
}

/// Builds where adding 1 % of some ink raises L* by more than `tolerance`, on
/// a grid of `steps` + 1 levels per ink (the check of monotonicity between
/// nodes). Returns the count and the worst rise.
pub fn lightness_rises(model: &dyn PressModel, steps: usize, tolerance: f64) -> (usize, f64) {
    let level = |i: usize| i as f64 / steps as f64;
    let rows: Vec<(usize, f64)> = (0..=steps)
        .into_par_iter()
        .map(|c| {
            let mut count = 0;
            let mut worst: f64 = 0.0;
            for m in 0..=steps {
                for y in 0..=steps {
                    for k in 0..=steps {
                        let ink = Cmyk::new(level(c), level(m), level(y), level(k));
                        let l = model.lab(ink).l;
                        let mut v = ink.to_array();
                        for a in 0..4 {
                            if v[a] >= 1.0 {
                                continue;
                            }
                            let old = v[a];
                            v[a] = (old + 0.01).min(1.0);
                            let rise = model.lab(Cmyk::from_array(v)).l - l;
                            v[a] = old;
                            if rise > tolerance {
                                count += 1;
                            }
                            worst = worst.max(rise);
                        }
                    }
                }
            }
            (count, worst)
        })
        .collect();
    rows.iter().fold((0, 0.0), |(n, w), &(c, r)| (n + c, w.max(r)))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn node_levels_are_a_valid_axis() {
        for levels in [&CMY_LEVELS[..], &K_LEVELS[..]] {
            let levels: Vec<f64> = levels.iter().map(|v| v / 100.0).collect();
            assert!(Axis::new(&levels).is_some());
        }
    }

    #[test]
    fn folds_are_balanced_and_repeatable() {
        let a = fold_of(1617, 10);
        assert_eq!(a, fold_of(1617, 10));
        for f in 0..10 {
            let n = a.iter().filter(|&&k| k == f).count();
            assert!(n == 161 || n == 162, "{f}: {n}");
        }
    }
}

/// A condition fitted to a measurement file, with what the fit found.
#[derive(Debug, Clone)]
pub struct MeasurementFit {
    pub condition: PrintingCondition,
    pub fit: Characterization,
    pub patches: Vec<Patch>,
}

/// Reads a CGATS measurement file and fits a condition to it. The job
/// defaults (ink limit, black generation, smallest dot, ink film) come from
/// `defaults`; `name` and `description` default to the file's stem and a line
/// naming the file. A fit that does not converge is an error.
pub fn fit_measurements(
    path: &Path,
    defaults: &PrintingCondition,
    name: Option<String>,
    description: Option<String>,
    options: &Options,
) -> Result<MeasurementFit> {
    let file = cgats::read(path)?;
    let patches = patches_from_cgats(&file, path)?;
    check_solids(&patches, path)?;
    if options.folds == 1 || options.folds > patches.len() / 4 {
        return Err(Error::usage(format!(
            "--folds {}: allowed 0 (none) or 2 to {} for the {} patches of {}",
            options.folds,
            patches.len() / 4,
            patches.len(),
            path.display()
        )));
    }
    let base = defaults
        .params
        .ok_or_else(|| Error::usage(format!("condition `{}` has no model parameters to start a fit from", defaults.name)))?;
    let start = starting_point(&patches, &base);
    let fit = characterize(&patches, &start, options);
    if !fit.converged {
        return Err(Error::input(
            path,
            format!(
                "the fit did not converge in {} iterations (ΔE2000 mean {:.2} so far); nothing was written",
                fit.iterations, fit.physical.mean
            ),
        ));
    }
    if !(fit.residuals.mean.is_finite() && fit.residuals.max.is_finite()) {
        return Err(Error::input(path, "the fit gave no finite model; nothing was written"));
    }
    let stem = path
        .file_stem()
        .map(|s| s.to_string_lossy().into_owned())
        .unwrap_or_else(|| "measured".into());
    let file_name = path.file_name().map(|s| s.to_string_lossy().into_owned()).unwrap_or_default();
    let mut condition = PrintingCondition::from_fitted(
        name.unwrap_or(stem),
        description.unwrap_or_else(|| format!("fitted to {}", path.display())),
        fit.params,
        fit.correction.clone(),
        defaults.tac,
        defaults.black,
        defaults.min_dot,
    )
    .with_ink_film(defaults.ink_film)
    .with_source(source_line(&file, &file_name, patches.len()));
    condition.measured = super::aim_builds()
        .filter_map(|(name, ink)| {
            mean_at(&patches, ink).map(|lab| MeasuredAim {
                name: name.to_string(),
                ink,
                lab,
            })
        })
        .collect();
    Ok(MeasurementFit { condition, fit, patches })
}

/// "FOGRA39L.ti3: FOGRA39L (Fogra, www.fogra.org), 1617 patches": the file
/// and what its header says it holds.
pub fn source_line(file: &CgatsFile, file_name: &str, count: usize) -> String {
    let table = file.tables.first();
    let keyword = |k: &str| table.and_then(|t| t.keyword(k)).map(str::trim).filter(|v| !v.is_empty());
    let what = keyword("DESCRIPTOR").or_else(|| keyword("FILE_DESCRIPTOR"));
    let who = keyword("ORIGINATOR");
    let mut s = file_name.to_string();
    match (what, who) {
        (Some(w), Some(o)) => s += &format!(": {w} ({o})"),
        (Some(w), None) => s += &format!(": {w}"),
        (None, Some(o)) => s += &format!(" ({o})"),
        (None, None) => {}
    }
    s + &format!(", {count} patches")
}

/// The solids of each ink fix the model's aims: a chart without them (a file
/// of paper patches, a single-ink ramp) would "fit" by keeping the starting
/// aims, so it is refused. Characterization charts carry every solid
/// (ISO 12642-2 layouts do; common practice).
pub fn check_solids(patches: &[Patch], path: &Path) -> Result<()> {
    for (i, name) in ["cyan", "magenta", "yellow", "black"].iter().enumerate() {
        if !patches.iter().any(|p| p.ink.to_array()[i] >= 0.95) {
            return Err(Error::input(
                path,
                format!("no patch with {name} at 95 % or more: a chart must measure each ink's solid to fit the model"),
            ));
        }
    }
    Ok(())
}
