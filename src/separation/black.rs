//! Black generation: the settings, the black rule, and the black-only curve.
//!
//! **The rule.** For a printable colour the exact builds form a curve through
//! ink space along which black runs from its least (Kmin) to its most (Kmax)
//! possible value under the ink limit and maximum black. Black generation
//! picks K = Kmin + share·(Kmax − Kmin) ([`Separator::generate_black`]),
//! where the share ([`BlackGeneration::share`]) rises with the darkness of
//! the colour's neutral component past black start, along a curve of the
//! chosen shape, between a skeleton curve (GCR 0: black only in the
//! shadows, UCR style) and full replacement (GCR 1), less under colour
//! addition in the deepest shadows. Black never exceeds the maximum black:
//! Kmax is sought under it.
//!
//! **The black-only curve** ([`BlackOnlyCurve`]): black ink alone for a ramp
//! of lightnesses, for the colours that print on the black plate only (gray
//! input on black only, and pure black in CMYK re-separation). Each entry is
//! the black-only coverage of the press whose printed media-relative L*
//! matches the L* asked for, found by bisection on the black-only tone scale
//! (which darkens with coverage), clamped to the maximum black and made
//! monotone along the ramp.

pub use crate::settings::BlackGeneration;

use super::engine::Separator;
use super::solve::Solution;
use crate::colour::Lab;
use crate::ink::Cmyk;
use rayon::prelude::*;

impl BlackGeneration {
    /// The share of the replaceable neutral component that black carries at
    /// `darkness` (0 at paper, 1 at the press black point, see [`darkness`]):
    /// 0 up to black start, then a rise of the chosen shape, scaled between
    /// the skeleton curve (GCR 0) and full replacement (GCR 1), less UCA in
    /// the deepest shadows.
    pub fn share(&self, darkness: f64) -> f64 {
        let b = self;
        let u = ((darkness - b.black_start) / (1.0 - b.black_start)).clamp(0.0, 1.0);
        let ramp = 1.0 - (1.0 - u).powf(b.shape);
        let skeleton = ((darkness - 0.5) / 0.5).clamp(0.0, 1.0).powi(2);
        let s = ((darkness - 0.85) / 0.15).clamp(0.0, 1.0);
        let shadow = s * s * (3.0 - 2.0 * s);
        ramp * (b.gcr + (1.0 - b.gcr) * skeleton) * (1.0 - b.uca * shadow)
    }
}

/// Darkness of the neutral component of a colour of lightness `l`: 0 at
/// paper, 1 at the black point (lightness `black_l`).
pub(crate) fn darkness(l: f64, black_l: f64) -> f64 {
    ((100.0 - l) / (100.0 - black_l).max(1.0)).clamp(0.0, 1.0)
}

impl Separator {
    /// The share of the replaceable neutral component that black carries
    /// under this separator's black generation ([`BlackGeneration::share`]).
    pub fn black_share(&self, darkness: f64) -> f64 {
        self.settings.black.share(darkness)
    }

    /// Applies the black rule to an exact build `low` of `target` (the
    /// least black that prints it): finds the most black that prints it
    /// (Kmax, under the maximum black and the ink limit), then the exact
    /// build with K = Kmin + share·(Kmax − Kmin). Falls back to `low` where
    /// no exact build holds that black. The search for Kmax starts from
    /// `most_black` first when given (a neighbour's Kmax build); the build
    /// found there is returned beside the result.
    pub(super) fn generate_black(&self, target: Lab, low: Solution, most_black: Option<[f64; 4]>) -> (Solution, Option<[f64; 4]>) {
        let share = self.black_share(darkness(target.l, self.black_point.l));
        if share <= 0.0 {
            return (low, None);
        }
        let mut raised = low.x;
        raised[3] = (low.x[3] + 0.1).min(self.bounds.k_max);
        let found = most_black
            .into_iter()
            .chain([low.x, raised, [0.2, 0.15, 0.15, self.bounds.k_max * 0.8]])
            .find_map(|start| self.solve_exact(target, self.bounds.k_max, self.bounds, start));
        let high = found.unwrap_or(low);
        let k = low.x[3] + share * (high.x[3] - low.x[3]);
        let mid: [f64; 4] = std::array::from_fn(|i| low.x[i] + share * (high.x[i] - low.x[i]));
        let held = self.bounds.with_black(k);
        let mut from_low = low.x;
        from_low[3] = k;
        let mut from_high = high.x;
        from_high[3] = k;
        let solution = [mid, from_low, from_high]
            .into_iter()
            .find_map(|start| self.solve_exact(target, k, held, start))
            .or_else(|| self.solve_exact(target, k, self.bounds, mid))
            .unwrap_or(low);
        (solution, found.map(|h| h.x))
    }
}

/// Entries of the black-only curve.
pub const BLACK_CURVE_STEPS: usize = 4096;

/// Bisection steps on the black-only tone scale (the coverage is then
/// within 2⁻⁴⁸ of the maximum black of the exact match).
const BLACK_ONLY_BISECTIONS: usize = 48;

/// Black ink alone for a ramp of lightnesses (usually [`BLACK_CURVE_STEPS`]), ordered
/// from paper toward the darkest: the coverage (fraction) per entry, clamped
/// to the maximum black and never less than an earlier entry's.
#[derive(Debug, Clone, PartialEq)]
pub struct BlackOnlyCurve {
    coverage: Vec<f64>,
}

impl BlackOnlyCurve {
    /// The curve of `separator`'s press for the media-relative L* each entry
    /// asks for (`None`: no black). Entries at or above the press's paper
    /// get no black; entries at or below its black-only maximum get the
    /// maximum black.
    pub fn new(separator: &Separator, lightness: &[Option<f64>]) -> BlackOnlyCurve {
        let k_max = separator.settings().black.black_max;
        let press_l = |k: f64| separator.printed_relative(Cmyk::new(0.0, 0.0, 0.0, k)).lab().l;
        let (paper, darkest) = (press_l(0.0), press_l(k_max));
        let mut coverage: Vec<f64> = lightness
            .par_iter()
            .map(|&l| match l {
                None => 0.0,
                Some(l) if l >= paper => 0.0,
                Some(l) if l <= darkest => k_max,
                Some(l) => {
                    let (mut lo, mut hi) = (0.0, k_max);
                    for _ in 0..BLACK_ONLY_BISECTIONS {
                        let mid = 0.5 * (lo + hi);
                        if press_l(mid) > l {
                            lo = mid;
                        } else {
                            hi = mid;
                        }
                    }
                    0.5 * (lo + hi)
                }
            })
            .collect();
        let mut running = 0.0f64;
        for k in &mut coverage {
            running = running.max(*k);
            *k = running;
        }
        BlackOnlyCurve { coverage }
    }

    /// The coverage of entry `i` (0 = the lightest).
    #[inline]
    pub fn coverage(&self, i: usize) -> f64 {
        self.coverage[i]
    }

    /// Every entry's coverage, lightest first.
    pub fn coverages(&self) -> &[f64] {
        &self.coverage
    }
}
