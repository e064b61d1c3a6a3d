//! What the press prints under the ink limit and maximum black: the rich
//! black point, the gamut boundary sampled from the faces of the feasible ink
//! set, the process primaries and cusp ridge, and the gamut check that names
//! the limit keeping a colour out.

use super::engine::{Limit, LimitSet, Separator};
use super::frame::RelativeLab;
use super::gamut::GamutBoundary;
use super::limits::InkBounds;
use super::solve::Problem;
use crate::colour::{Lab, Mat3, ciede2000};
use crate::ink::Cmyk;

/// A colour counts as printable when the inversion reaches it this closely.
pub const IN_GAMUT_TOLERANCE: f64 = 0.1;
/// C, M, Y of the six process colours in hue order: red (M+Y), yellow,
/// green (C+Y), cyan, blue (C+M), magenta.
const PROCESS_CORNERS: [[f64; 3]; 6] = [
    [0.0, 1.0, 1.0],
    [0.0, 0.0, 1.0],
    [1.0, 0.0, 1.0],
    [1.0, 0.0, 0.0],
    [1.0, 1.0, 0.0],
    [0.0, 1.0, 0.0],
];

impl Separator {
    /// The printed red (M+Y), yellow, green (C+Y), cyan, blue (C+M) and
    /// magenta solids, media-relative.
    pub fn process_primaries(&self) -> [Lab; 6] {
        PROCESS_CORNERS.map(|[c, m, y]| self.printed_relative(Cmyk::new(c, m, y, 0.0)).lab())
    }

    /// Dense samples along the edges of the ink cube (no black) joining the
    /// process colours: the ridge of the printable gamut that holds its cusps.
    pub fn process_ridge(&self) -> Vec<Lab> {
        super::gamut::ridge_samples(&PROCESS_CORNERS, &|[c, m, y]| self.printed_relative(Cmyk::new(c, m, y, 0.0)).lab())
    }

    /// Whether a working-frame colour is printable under the limits and, if
    /// not, which limits keep it out: relaxing a limit that lets the colour
    /// be reached names that limit; if none does, the inks themselves.
    pub fn gamut_check(&self, target: RelativeLab) -> (bool, LimitSet) {
        let target = target.lab();
        let mut limits = LimitSet::default();
        let reach = |bounds: InkBounds| {
            let mut best = self.solve_with(target, 0.0, bounds, Self::cold_start(target));
            for alt in [[0.0; 4], [0.9, 0.8, 0.8, bounds.k_max]] {
                let s = self.solve_with(target, 0.0, bounds, alt);
                if s.colour_error < best.colour_error {
                    best = s;
                }
            }
            ciede2000(target, Lab::from_array(best.lab))
        };
        if reach(self.bounds) <= IN_GAMUT_TOLERANCE {
            return (true, limits);
        }
        let free_tac = InkBounds { tac: 4.0, ..self.bounds };
        let free_black = InkBounds { k_max: 1.0, ..self.bounds };
        let free_both = InkBounds::new(4.0, 1.0);
        let tac_helps = self.bounds.tac < 4.0 && reach(free_tac) <= IN_GAMUT_TOLERANCE;
        let black_helps = self.bounds.k_max < 1.0 && reach(free_black) <= IN_GAMUT_TOLERANCE;
        if tac_helps {
            limits.insert(Limit::InkLimit);
        }
        if black_helps {
            limits.insert(Limit::MaximumBlack);
        }
        if !tac_helps && !black_helps {
            if (self.bounds.tac < 4.0 || self.bounds.k_max < 1.0) && reach(free_both) <= IN_GAMUT_TOLERANCE {
                limits.insert(Limit::InkLimit);
                if self.bounds.k_max < 1.0 {
                    limits.insert(Limit::MaximumBlack);
                }
            } else {
                limits.insert(Limit::InkGamut);
            }
        }
        (false, limits)
    }

    /// The rich black: black at its maximum, the other inks filling the ink
    /// limit in a neutral to slightly cool balance (common practice), found as
    /// the darkest build whose a*, b* sit at (0, −0.5).
    pub(super) fn find_black_point(&self) -> (Cmyk, Lab) {
        let forward = |x: [f64; 4]| self.forward(x);
        let k = self.bounds.k_max;
        let problem = Problem {
            forward: &forward,
            target: [0.0, 0.0, -0.5],
            metric: Mat3::diagonal([0.15, 1.0, 1.0]),
            k_aim: k,
            lambda: 50.0,
            bounds: self.bounds,
        };
        let rest = ((self.bounds.tac - k) / 3.0).clamp(0.0, 1.0);
        let s = problem.solve([rest, rest, rest, k]);
        let ink = Cmyk::from_array(s.x);
        (ink, self.printed_relative(ink).lab())
    }

    /// Samples the boundary of the feasible ink set and describes the
    /// printable gamut (media-relative).
    ///
    /// The outer surface of the gamut is the image of the two-dimensional
    /// faces of the ink box (two inks at a bound), of the faces where the ink
    /// limit meets one bound, and of folds inside the three-dimensional faces:
    /// the first two are sampled densely, the three-dimensional faces coarsely.
    ///
    /// About 0.9 million evaluations of the press model: a job keeps the
    /// result in the table cache (`Separator::new_with_boundary`).
    pub fn printable_boundary(&self) -> GamutBoundary {
        use rayon::prelude::*;
        const DENSE: usize = 129;
        const COARSE: usize = 17;
        let b = self.bounds;
        let upper = |a: usize| if a == 3 { b.k_max } else { 1.0 };
        // Each job: a set of fixed coordinates, the free ones on a grid, and
        // optionally one coordinate solved from the ink limit.
        struct Job {
            fixed: Vec<(usize, f64)>,
            free: Vec<usize>,
            solved: Option<usize>,
            steps: usize,
        }
        let mut jobs = Vec::new();
        for a1 in 0..4 {
            for a2 in a1 + 1..4 {
                for (v1, v2) in [(0.0, 0.0), (0.0, 1.0), (1.0, 0.0), (1.0, 1.0)] {
                    let free: Vec<usize> = (0..4).filter(|&a| a != a1 && a != a2).collect();
                    jobs.push(Job {
                        fixed: vec![(a1, v1 * upper(a1)), (a2, v2 * upper(a2))],
                        free,
                        solved: None,
                        steps: DENSE,
                    });
                }
            }
            for v in [0.0, 1.0] {
                let free: Vec<usize> = (0..4).filter(|&a| a != a1).collect();
                jobs.push(Job {
                    fixed: vec![(a1, v * upper(a1))],
                    free,
                    solved: None,
                    steps: COARSE,
                });
            }
        }
        if b.tac < 3.0 + b.k_max {
            for bound in 0..4 {
                for v in [0.0, 1.0] {
                    let rest: Vec<usize> = (0..4).filter(|&a| a != bound).collect();
                    for &solved in &rest {
                        let free: Vec<usize> = rest.iter().copied().filter(|&a| a != solved).collect();
                        jobs.push(Job {
                            fixed: vec![(bound, v * upper(bound))],
                            free,
                            solved: Some(solved),
                            steps: DENSE,
                        });
                    }
                }
            }
            for solved in 0..4 {
                let free: Vec<usize> = (0..4).filter(|&a| a != solved).collect();
                jobs.push(Job {
                    fixed: vec![],
                    free,
                    solved: Some(solved),
                    steps: COARSE,
                });
            }
        }
        let mut samples: Vec<Lab> = jobs
            .par_iter()
            .flat_map_iter(|job| {
                let n = job.steps;
                let count = n.pow(job.free.len() as u32);
                let mut out = Vec::with_capacity(count);
                for idx in 0..count {
                    let mut x = [0.0; 4];
                    for &(a, v) in &job.fixed {
                        x[a] = v;
                    }
                    let mut rem = idx;
                    for &a in &job.free {
                        x[a] = (rem % n) as f64 / (n - 1) as f64 * upper(a);
                        rem /= n;
                    }
                    if let Some(sv) = job.solved {
                        let rest = b.tac - (x.iter().sum::<f64>() - x[sv]);
                        if !(0.0..=upper(sv)).contains(&rest) {
                            continue;
                        }
                        x[sv] = rest;
                    } else if x.iter().sum::<f64>() > b.tac + 1e-12 {
                        continue;
                    }
                    out.push(self.printed_relative(Cmyk::from_array(x)).lab());
                }
                out
            })
            .collect();
        // The edges of the ink box carry the ridges and cusps of the gamut
        // (solids, overprints): sample them densely.
        const EDGE_STEPS: usize = 512;
        for corner in 0..16usize {
            for axis in 0..4 {
                if corner & (1 << axis) != 0 {
                    continue;
                }
                for i in 0..=EDGE_STEPS {
                    let t = i as f64 / EDGE_STEPS as f64;
                    let mut x: [f64; 4] = std::array::from_fn(|a| ((corner >> a) & 1) as f64);
                    x[axis] = t;
                    x[3] *= b.k_max;
                    let x = b.project(x);
                    samples.push(self.printed_relative(Cmyk::from_array(x)).lab());
                }
            }
        }
        GamutBoundary::from_samples(samples, self.black_point.l, 100.0)
    }
}
