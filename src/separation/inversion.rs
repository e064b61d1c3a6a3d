//! The inversion Lab → CMYK for one colour: the exact active-set solve
//! ([`super::solve`]) on the press model in the working (media-relative)
//! frame, lightness clipped to the printable range, hue-weighted clipping
//! for colours outside the gamut, and black generation on the exact builds
//! ([`super::black`]).

use super::engine::Separator;
use super::frame::RelativeLab;
use super::limits::InkBounds;
use super::solve::{Problem, Solution};
use crate::colour::{Lab, Mat3};
use crate::ink::Cmyk;
use crate::press::MediaWhite;

/// A clipped solution this close to its target (colour-error units) lies on
/// the curve of exact solutions, near enough for the exact search to start.
const REACH_TOLERANCE: f64 = 1e-2;

/// Weight of the black aim in the inversion (colour-error units per unit black).
const BLACK_AIM_WEIGHT: f64 = 0.05;

/// Weight of hue error relative to lightness and chroma error when clipping
/// (hue-preserving minimum-ΔE clipping, after HPMINDE of CIE 156:2004).
const HUE_WEIGHT: f64 = 3.0;

impl Separator {
    /// The printed colour (media-relative) and its derivatives by coverage,
    /// from the model's own Jacobian of absolute CIELAB. Media-relative Lab
    /// is CIELAB of the same XYZ against the paper as white, which in the
    /// cube-root range of CIELAB is an affine map of absolute Lab
    /// ([`Separator::relative_from_absolute`]); its matrix carries the
    /// Jacobian across (near black, where CIELAB turns linear, the step is
    /// still a good Newton direction and the residual stays exact).
    pub(super) fn forward(&self, x: [f64; 4]) -> ([f64; 3], [[f64; 4]; 3]) {
        let (abs, jac) = self.model.lab_jacobian(Cmyk::from_array(x));
        let rel = self.media.relative_from_absolute_lab(abs).to_array();
        let m = &self.relative_from_absolute.0;
        let mut out = [[0.0; 4]; 3];
        for r in 0..3 {
            for c in 0..4 {
                out[r][c] = m[r][0] * jac[0][c] + m[r][1] * jac[1][c] + m[r][2] * jac[2][c];
            }
        }
        (rel, out)
    }

    /// d(relative Lab)/d(absolute Lab) in the cube-root range of CIELAB:
    /// f(X/X_paper) = (X_n/X_paper)^(1/3)·f(X/X_n) per tristimulus channel.
    pub(super) fn relative_jacobian(media: &MediaWhite) -> Mat3 {
        let d50 = crate::colour::D50.xyz;
        let w = media.white;
        let (cx, cy, cz) = ((d50.x / w.x).cbrt(), (d50.y / w.y).cbrt(), (d50.z / w.z).cbrt());
        Mat3([
            [cy, 0.0, 0.0],
            [500.0 * (cx - cy) / 116.0, cx, 0.0],
            [200.0 * (cy - cz) / 116.0, 0.0, cz],
        ])
    }

    /// The colour-error weighting for a target: lightness and chroma error
    /// count once, hue error `HUE_WEIGHT` times, phased in with chroma since a
    /// neutral has no hue.
    fn clip_metric(target: Lab) -> Mat3 {
        let c = target.chroma();
        if c < 1e-9 {
            return Mat3::IDENTITY;
        }
        let (u1, u2) = (target.a / c, target.b / c);
        let t = (c / 5.0).clamp(0.0, 1.0);
        let w = 1.0 + (HUE_WEIGHT - 1.0) * t * t * (3.0 - 2.0 * t);
        Mat3([[1.0, 0.0, 0.0], [0.0, u1, u2], [0.0, -w * u2, w * u1]])
    }

    pub(super) fn solve_with(&self, target: Lab, k_aim: f64, bounds: InkBounds, start: [f64; 4]) -> Solution {
        let forward = |x: [f64; 4]| self.forward(x);
        Problem {
            forward: &forward,
            target: target.to_array(),
            metric: Self::clip_metric(target),
            k_aim,
            lambda: BLACK_AIM_WEIGHT,
            bounds,
        }
        .solve(start)
    }

    /// A first guess for a target: a neutral build of about its lightness.
    pub(super) fn cold_start(target: Lab) -> [f64; 4] {
        let v = ((100.0 - target.l) / 80.0).clamp(0.0, 1.0);
        [v * 0.8, v * 0.7, v * 0.7, (v - 0.6).max(0.0)]
    }

    /// Targets darker than the black point or lighter than paper have no
    /// printable neighbour of their own lightness: clip lightness first to
    /// the printable range (keeping a*, b*, offset by the black point's own
    /// tint below it), so that the deepest shadows all land on the rich black
    /// and not on scattered builds along the flat floor of the gamut.
    fn clamp_lightness(&self, target: Lab) -> Lab {
        let bp = self.black_point;
        if target.l < bp.l {
            Lab::new(bp.l, target.a + bp.a, target.b + bp.b)
        } else if target.l > 100.0 {
            Lab::new(100.0, target.a, target.b)
        } else {
            target
        }
    }

    pub(super) fn solve_exact(&self, target: Lab, k_aim: f64, bounds: InkBounds, start: [f64; 4]) -> Option<Solution> {
        let forward = |x: [f64; 4]| self.forward(x);
        Problem {
            forward: &forward,
            target: target.to_array(),
            metric: Mat3::IDENTITY,
            k_aim,
            lambda: BLACK_AIM_WEIGHT,
            bounds,
        }
        .solve_exact(start)
    }

    /// The nearest printable colour (hue-weighted), for targets outside the
    /// gamut. A neighbour's solution (`start`) keeps neighbouring colours on
    /// one branch, but a neighbour across a steep part of the table (say a
    /// saturated yellow beside a near-white) can lead to a far local minimum,
    /// so the neutral start of the target's lightness is always tried too;
    /// with no neighbour, two more starts.
    fn clip(&self, target: Lab, start: Option<[f64; 4]>) -> Solution {
        let cold = Self::cold_start(target);
        let mut best = self.solve_with(target, 0.0, self.bounds, start.unwrap_or(cold));
        if start.is_some() {
            let s = self.solve_with(target, 0.0, self.bounds, cold);
            if s.colour_error + 1e-9 < best.colour_error {
                best = s;
            }
        } else {
            for alt in [[0.0, 0.0, 0.0, 0.0], [0.9, 0.8, 0.8, self.bounds.k_max]] {
                let s = self.solve_with(target, 0.0, self.bounds, alt);
                if s.colour_error + 1e-9 < best.colour_error {
                    best = s;
                }
            }
        }
        best
    }

    /// Inverts a working-frame target under the black generation rule.
    /// `start` is a warm start (a neighbour's solution) when there is one.
    ///
    /// For a printable target the exact solutions form a curve through ink
    /// space along which black runs from its least (Kmin) to its most (Kmax)
    /// possible value; black generation picks
    /// K = Kmin + share·(Kmax − Kmin), where the share grows with the
    /// darkness of the target past black start (see [`Separator::black_share`]).
    pub fn invert(&self, target: RelativeLab, start: Option<[f64; 4]>) -> Solution {
        self.invert_along(
            target,
            &mut WarmStart {
                result: start,
                ..WarmStart::default()
            },
        )
    }

    /// [`Separator::invert`] for the next of a run of neighbouring targets
    /// (a line of table nodes): each of the three searches (Kmin, Kmax, the
    /// build with the chosen black) starts from the neighbour's answer to
    /// the same search, which lies a short way along the curve of exact
    /// solutions, instead of walking black from the neighbour's result to
    /// the end of the curve and back. `warm` holds the neighbour's answers
    /// and is updated to this target's.
    pub fn invert_along(&self, target: RelativeLab, warm: &mut WarmStart) -> Solution {
        let start = warm.result;
        let target = self.clamp_lightness(target.lab());
        let cold = Self::cold_start(target);
        let first = warm.least_black.or(start).unwrap_or(cold);
        let low = self
            .solve_exact(target, 0.0, self.bounds, first)
            .or_else(|| {
                warm.least_black
                    .and(start)
                    .and_then(|s| self.solve_exact(target, 0.0, self.bounds, s))
            })
            .or_else(|| self.solve_exact(target, 0.0, self.bounds, cold))
            .or_else(|| self.solve_exact(target, 0.0, self.bounds, [0.9, 0.8, 0.8, self.bounds.k_max]));
        // Newton from a far start can run into a corner of the ink bounds
        // before it reaches the curve of exact solutions; the bounded
        // least-squares clip gets there robustly, and the exact search then
        // starts on the curve.
        let low = match low {
            Some(low) => low,
            None => {
                let clipped = self.clip(target, start);
                if clipped.colour_error > REACH_TOLERANCE {
                    *warm = WarmStart {
                        result: Some(clipped.x),
                        ..WarmStart::default()
                    };
                    return clipped;
                }
                self.solve_exact(target, 0.0, self.bounds, clipped.x).unwrap_or(clipped)
            }
        };
        let (solution, most_black) = self.generate_black(target, low, warm.most_black);
        *warm = WarmStart {
            result: Some(solution.x),
            least_black: Some(low.x),
            most_black,
        };
        solution
    }
}

/// What one inversion leaves for the next of a run of neighbouring targets
/// ([`Separator::invert_along`]): its result, and its least-black and
/// most-black exact builds when it found them.
#[derive(Debug, Clone, Copy, Default, PartialEq)]
pub struct WarmStart {
    pub result: Option<[f64; 4]>,
    pub least_black: Option<[f64; 4]>,
    pub most_black: Option<[f64; 4]>,
}
