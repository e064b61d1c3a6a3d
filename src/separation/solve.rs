//! The constrained inversion of the press model.
//!
//! For a target colour t (CIELAB in the working frame) and an aim for black
//! k*, find coverage x = (c, m, y, k) minimising
//!
//! ‖W·(f(x) − t)‖² + λ²·(k − k*)²
//!
//! subject to 0 ≤ c, m, y ≤ 1, 0 ≤ k ≤ k_max and c + m + y + k ≤ TAC, where f
//! is the forward model and W a constant weighting of the colour error. With λ
//! small, an exact colour match wins whenever one exists, and among exact
//! matches the one with black closest to its aim; for colours outside the
//! printable gamut the result is the nearest printable colour in the W metric.
//!
//! The method is a projected Levenberg–Marquardt iteration with an active set
//! (Nocedal & Wright, "Numerical Optimization", 2nd ed., §16.5 and §10.3):
//! bounds and the ink limit that block the descent direction are held as
//! equality constraints while the damped Gauss–Newton step is solved from its
//! KKT system; every trial point is projected back onto the feasible set.

pub use super::limits::InkBounds;
use crate::colour::Mat3;

/// One inversion problem.
pub struct Problem<'a> {
    /// Forward model in the working frame: coverage → (Lab, ∂Lab/∂coverage).
    pub forward: &'a dyn Fn([f64; 4]) -> ([f64; 3], [[f64; 4]; 3]),
    pub target: [f64; 3],
    /// Weighting of the colour error (rows apply to ΔL, Δa, Δb).
    pub metric: Mat3,
    /// Aim for black.
    pub k_aim: f64,
    /// Weight of the black aim, in colour-error units per unit of black.
    pub lambda: f64,
    pub bounds: InkBounds,
}

/// The result of an inversion.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Solution {
    pub x: [f64; 4],
    /// Printed colour at `x` in the working frame.
    pub lab: [f64; 3],
    /// ‖W·(f(x) − t)‖, the weighted colour error.
    pub colour_error: f64,
}

const MAX_ITERATIONS: usize = 60;

/// Colour error (CIELAB units) within which a point counts as on the curve of
/// exact solutions: black moves only from such points (predictor), and the
/// Newton steps in between bring the colour back (corrector).
const ON_CURVE: f64 = 1e-3;

/// How often one exact inversion may release a bound it had taken on.
const MAX_RELEASES: usize = 8;

/// Largest change of black per step of the exact inversion.
const BLACK_STRIDE: f64 = 0.12;

impl Problem<'_> {
    fn residual(&self, lab: [f64; 3]) -> [f64; 3] {
        self.metric
            .apply([lab[0] - self.target[0], lab[1] - self.target[1], lab[2] - self.target[2]])
    }

    fn cost(&self, x: &[f64; 4], lab: [f64; 3]) -> f64 {
        let r = self.residual(lab);
        let rk = self.lambda * (x[3] - self.k_aim);
        r[0] * r[0] + r[1] * r[1] + r[2] * r[2] + rk * rk
    }

    /// Solves from `start` (projected onto the feasible set first).
    pub fn solve(&self, start: [f64; 4]) -> Solution {
        let b = self.bounds;
        let mut x = b.project(start);
        let (mut lab, mut jac) = (self.forward)(x);
        let mut cost = self.cost(&x, lab);
        let mut mu = 1e-4;
        for _ in 0..MAX_ITERATIONS {
            // Weighted Jacobian (3 colour rows + the black-aim row) and gradient.
            let mut jw = [[0.0; 4]; 4];
            for (j, col) in (0..4).map(|j| (j, [jac[0][j], jac[1][j], jac[2][j]])) {
                let w = self.metric.apply(col);
                jw[0][j] = w[0];
                jw[1][j] = w[1];
                jw[2][j] = w[2];
            }
            jw[3][3] = self.lambda;
            let r3 = self.residual(lab);
            let r = [r3[0], r3[1], r3[2], self.lambda * (x[3] - self.k_aim)];
            let mut g = [0.0; 4];
            let mut h = [[0.0; 4]; 4];
            for i in 0..4 {
                for row in 0..4 {
                    g[i] += jw[row][i] * r[row];
                }
                for j in 0..4 {
                    for row in 0..4 {
                        h[i][j] += jw[row][i] * jw[row][j];
                    }
                }
            }
            // Active set: bounds and the ink limit that block descent.
            const EDGE: f64 = 1e-9;
            let mut fixed = [false; 4];
            for i in 0..4 {
                fixed[i] =
                    b.lower(i) == b.upper(i) || (x[i] <= b.lower(i) + EDGE && g[i] > 0.0) || (x[i] >= b.upper(i) - EDGE && g[i] < 0.0);
            }
            let total: f64 = x.iter().sum();
            let free_descent: f64 = (0..4).filter(|&i| !fixed[i]).map(|i| -g[i]).sum();
            let tac_active = total >= b.tac - EDGE && free_descent > 0.0;

            let scale = (0..4).map(|i| h[i][i]).fold(0.0, f64::max).max(1e-12);
            let mut accepted = false;
            for _ in 0..12 {
                let delta = match constrained_step(&h, &g, mu * scale, &fixed, tac_active) {
                    Some(d) => d,
                    None => break,
                };
                let trial = b.project(std::array::from_fn(|i| x[i] + delta[i]));
                let (tlab, tjac) = (self.forward)(trial);
                let tcost = self.cost(&trial, tlab);
                if tcost < cost {
                    let moved: f64 = (0..4).map(|i| (trial[i] - x[i]).abs()).sum();
                    let gain = cost - tcost;
                    x = trial;
                    lab = tlab;
                    jac = tjac;
                    cost = tcost;
                    mu = (mu / 4.0).max(1e-9);
                    accepted = true;
                    if moved < 1e-6 || gain < 1e-9 * (1.0 + cost) {
                        return self.finish(x, lab);
                    }
                    break;
                }
                mu *= 8.0;
            }
            if !accepted || cost < 1e-12 {
                break;
            }
        }
        self.finish(x, lab)
    }

    fn finish(&self, x: [f64; 4], lab: [f64; 3]) -> Solution {
        let r = self.residual(lab);
        Solution {
            x,
            lab,
            colour_error: (r[0] * r[0] + r[1] * r[1] + r[2] * r[2]).sqrt(),
        }
    }
}

impl Problem<'_> {
    /// Exact inversion for a target inside the printable gamut: among the
    /// coverages that print the target exactly, the one with black closest to
    /// its aim, by an active-set Newton method on the equality-constrained
    /// problem min (k − k*)² subject to f(x) = t (Nocedal & Wright §18.1,
    /// Newton–KKT steps with a ratio test for the bounds). Each step solves the
    /// linearised colour equations exactly and spends the remaining degree of
    /// freedom (the black direction of the null space) on the black aim.
    /// Returns `None` when the target cannot be matched from this start (out
    /// of gamut, or a constraint set with no exact solution).
    pub fn solve_exact(&self, start: [f64; 4]) -> Option<Solution> {
        let b = self.bounds;
        let mut x = b.project(start);
        let mut fixed: [bool; 4] = std::array::from_fn(|i| b.lower(i) == b.upper(i));
        let mut tac_active = false;
        let mut releases = 0;
        // The last point found on the curve of exact solutions, with its
        // active set: when a move of black along the curve runs into a corner
        // (a bound and the ink limit together leave more equations than free
        // inks) or a singular step, the search goes back there and moves black
        // by half as much; once the stride is negligible, black rests there
        // (the end of the curve).
        let mut stride = BLACK_STRIDE;
        let mut on_curve: Option<([f64; 4], [bool; 4], bool)> = None;
        let mut black_stuck = false;
        for _ in 0..120 {
            let (lab, jac) = (self.forward)(x);
            let r = [lab[0] - self.target[0], lab[1] - self.target[1], lab[2] - self.target[2]];
            let err = (r[0] * r[0] + r[1] * r[1] + r[2] * r[2]).sqrt();
            if err < ON_CURVE {
                on_curve = Some((x, fixed, tac_active));
            }
            // Predictor–corrector: move along the curve of exact solutions only
            // from a point on it, and by at most `stride` at a time.
            let black_move = if err > ON_CURVE || black_stuck {
                0.0
            } else {
                (self.k_aim - x[3]).clamp(-stride, stride)
            };
            let Some(step) = exact_step(&jac, r, &x, black_move, &fixed, tac_active, b) else {
                let (px, pf, pt) = on_curve?;
                (x, fixed, tac_active) = (px, pf, pt);
                stride *= 0.5;
                black_stuck = stride < 1e-4;
                continue;
            };
            let size: f64 = step.iter().map(|v| v.abs()).sum();
            if err < 1e-7 && size < 1e-9 {
                // Converged for this active set: release a bound the black aim
                // would now pull away from (its multiplier has the wrong sign).
                if releases < MAX_RELEASES {
                    let mut released = false;
                    for i in 0..4 {
                        if !fixed[i] || b.lower(i) == b.upper(i) {
                            continue;
                        }
                        let mut trial = fixed;
                        trial[i] = false;
                        if let Some(st) = exact_step(&jac, r, &x, black_move, &trial, tac_active, b) {
                            let inward = if x[i] <= b.lower(i) + 1e-12 { st[i] > 1e-9 } else { st[i] < -1e-9 };
                            if inward {
                                fixed = trial;
                                released = true;
                                break;
                            }
                        }
                    }
                    if !released
                        && tac_active
                        && let Some(st) = exact_step(&jac, r, &x, black_move, &fixed, false, b)
                        && st.iter().sum::<f64>() < -1e-9
                    {
                        tac_active = false;
                        released = true;
                    }
                    if released {
                        releases += 1;
                        continue;
                    }
                }
                return Some(self.finish(x, lab));
            }
            // Ratio test: the longest fraction of the step that stays feasible.
            let mut tau = 1.0f64;
            let mut blocking = None;
            for i in 0..4 {
                if fixed[i] {
                    continue;
                }
                let upper = b.upper(i);
                let lower = b.lower(i);
                if step[i] < 0.0 && x[i] + step[i] < lower {
                    let t = (lower - x[i]) / step[i];
                    if t < tau {
                        tau = t;
                        blocking = Some((i, lower));
                    }
                } else if step[i] > 0.0 && x[i] + step[i] > upper {
                    let t = (upper - x[i]) / step[i];
                    if t < tau {
                        tau = t;
                        blocking = Some((i, upper));
                    }
                }
            }
            let total: f64 = x.iter().sum();
            let dtotal: f64 = step.iter().sum();
            let mut tac_blocks = false;
            if !tac_active && dtotal > 0.0 && total + dtotal > b.tac {
                let t = ((b.tac - total) / dtotal).max(0.0);
                if t < tau {
                    tau = t;
                    tac_blocks = true;
                    blocking = None;
                }
            }
            let free_after = fixed.iter().filter(|&&f| !f).count() - usize::from(blocking.is_some());
            let rows_after = 3 + usize::from(tac_active || tac_blocks);
            if (blocking.is_some() || tac_blocks)
                && rows_after > free_after
                && let Some((px, pf, pt)) = on_curve
            {
                (x, fixed, tac_active) = (px, pf, pt);
                stride *= 0.5;
                black_stuck = stride < 1e-4;
                continue;
            }
            for i in 0..4 {
                x[i] += tau * step[i];
            }
            if let Some((i, bound)) = blocking {
                x[i] = bound;
                fixed[i] = true;
            }
            if tac_blocks {
                tac_active = true;
            }
            x = b.project(x);
        }
        let (lab, _) = (self.forward)(x);
        let s = self.finish(x, lab);
        (s.colour_error < 1e-4).then_some(s)
    }
}

/// One Newton–KKT step of [`Problem::solve_exact`].
fn exact_step(
    jac: &[[f64; 4]; 3],
    r: [f64; 3],
    x: &[f64; 4],
    black_move: f64,
    fixed: &[bool; 4],
    tac_active: bool,
    bounds: InkBounds,
) -> Option<[f64; 4]> {
    let free: Vec<usize> = (0..4).filter(|&i| !fixed[i]).collect();
    // Equality rows: the three colour equations, and the ink limit if active.
    let mut rows: Vec<([f64; 4], f64)> = (0..3).map(|k| (jac[k], -r[k])).collect();
    if tac_active {
        rows.push(([1.0; 4], bounds.tac - x.iter().sum::<f64>()));
    }
    let nf = free.len();
    let nr = rows.len();
    if nr > nf {
        return None;
    }
    // Unknowns: δ over the free variables. With one spare degree of freedom,
    // add the black aim as one more equation (δ_k = k* − k) when black is
    // free, else ask for the least change (handled by the same row on the
    // first free variable with zero weight: a square system needs a row).
    let mut a = [[0.0f64; 9]; 8];
    for (ri, (row, rhs)) in rows.iter().enumerate() {
        for (ci, &v) in free.iter().enumerate() {
            a[ri][ci] = row[v];
        }
        a[ri][8] = *rhs;
    }
    if nr + 1 == nf {
        // Spare freedom: move black toward its aim.
        if let Some(kc) = free.iter().position(|&v| v == 3) {
            a[nr][kc] = 1.0;
            a[nr][8] = black_move;
        } else {
            // Black is held: take the minimum-norm step through the normal
            // equations of the under-determined system (δ = Aᵀ(AAᵀ)⁻¹b).
            let mut m = [[0.0f64; 9]; 8];
            for i in 0..nr {
                for j in 0..nr {
                    m[i][j] = (0..nf).map(|c| a[i][c] * a[j][c]).sum();
                }
                m[i][8] = a[i][8];
            }
            let y = gauss_solve(&mut m, nr)?;
            let mut step = [0.0; 4];
            for (ci, &v) in free.iter().enumerate() {
                step[v] = (0..nr).map(|i| a[i][ci] * y[i]).sum();
            }
            return Some(step);
        }
    } else if nr + 1 < nf {
        return None;
    }
    let sol = gauss_solve(&mut a, nf)?;
    let mut step = [0.0; 4];
    for (ci, &v) in free.iter().enumerate() {
        step[v] = sol[ci];
    }
    // Keep Newton steps modest: the model is far from linear over large moves.
    let size = step.iter().map(|v| v.abs()).fold(0.0, f64::max);
    if size > 0.5 {
        step.iter_mut().for_each(|v| *v *= 0.5 / size);
    }
    Some(step)
}

/// Solves (H + μI)·δ = −g with δᵢ = 0 for fixed i and, when `sum_zero`,
/// Σδ = 0, through the KKT system of the equality-constrained problem.
fn constrained_step(h: &[[f64; 4]; 4], g: &[f64; 4], mu: f64, fixed: &[bool; 4], sum_zero: bool) -> Option<[f64; 4]> {
    let n_fixed = fixed.iter().filter(|&&f| f).count();
    let m = n_fixed + usize::from(sum_zero);
    let n = 4 + m;
    let mut a = [[0.0f64; 9]; 8];
    for i in 0..4 {
        for j in 0..4 {
            a[i][j] = h[i][j];
        }
        a[i][i] += mu;
        a[i][8] = -g[i];
    }
    let mut row = 4;
    for i in 0..4 {
        if fixed[i] {
            a[row][i] = 1.0;
            a[i][row] = 1.0;
            row += 1;
        }
    }
    if sum_zero {
        for i in 0..4 {
            a[row][i] = 1.0;
            a[i][row] = 1.0;
        }
    }
    let sol = gauss_solve(&mut a, n)?;
    Some([sol[0], sol[1], sol[2], sol[3]])
}

/// Gaussian elimination with partial pivoting on an n × (n+1) augmented
/// matrix stored in the first n rows and columns, right-hand side in column 8.
fn gauss_solve(a: &mut [[f64; 9]; 8], n: usize) -> Option<[f64; 8]> {
    for col in 0..n {
        let pivot = (col..n).max_by(|&p, &q| a[p][col].abs().total_cmp(&a[q][col].abs()))?;
        if a[pivot][col].abs() < 1e-300 {
            return None;
        }
        a.swap(col, pivot);
        for r in col + 1..n {
            let f = a[r][col] / a[col][col];
            if f != 0.0 {
                for c in col..n {
                    a[r][c] -= f * a[col][c];
                }
                a[r][8] -= f * a[col][8];
            }
        }
    }
    let mut x = [0.0; 8];
    for r in (0..n).rev() {
        let mut s = a[r][8];
        for c in r + 1..n {
            s -= a[r][c] * x[c];
        }
        x[r] = s / a[r][r];
        if !x[r].is_finite() {
            return None;
        }
    }
    Some(x)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn projection_meets_the_ink_limit_and_bounds() {
        let b = InkBounds::new(2.5, 0.9);
        let p = b.project([1.2, 0.9, 0.8, 1.0]);
        assert!((p.iter().sum::<f64>() - 2.5).abs() < 1e-9);
        assert!(p.iter().all(|&v| (0.0..=1.0).contains(&v)) && p[3] <= 0.9);
        assert_eq!(b.project([0.1, 0.2, 0.3, 0.4]), [0.1, 0.2, 0.3, 0.4]);
    }

    /// A linear "model" Lab = A·x has an exact solution we know.
    #[test]
    fn linear_problem_is_solved_exactly() {
        let a = [[-20.0, -30.0, -5.0, -60.0], [-40.0, 60.0, -5.0, 0.0], [-50.0, -5.0, 90.0, 0.0]];
        let forward = move |x: [f64; 4]| {
            let lab = std::array::from_fn(|r| 95.0 + if r == 0 { 0.0 } else { -95.0 } + (0..4).map(|j| a[r][j] * x[j]).sum::<f64>());
            (lab, a)
        };
        let truth = [0.3, 0.2, 0.4, 0.25];
        let (target, _) = forward(truth);
        let p = Problem {
            forward: &forward,
            target,
            metric: Mat3::IDENTITY,
            k_aim: 0.25,
            lambda: 0.05,
            bounds: InkBounds::new(4.0, 1.0),
        };
        let s = p.solve([0.0; 4]);
        for i in 0..4 {
            assert!((s.x[i] - truth[i]).abs() < 1e-6, "{:?}", s.x);
        }
        assert!(s.colour_error < 1e-6);
    }

    #[test]
    fn active_ink_limit_is_respected() {
        let a = [[-20.0, -30.0, -5.0, -60.0], [-40.0, 60.0, -5.0, 0.0], [-50.0, -5.0, 90.0, 0.0]];
        let forward = move |x: [f64; 4]| {
            let lab = std::array::from_fn(|r| (0..4).map(|j| a[r][j] * x[j]).sum::<f64>());
            (lab, a)
        };
        let (target, _) = forward([0.9, 0.9, 0.9, 0.9]);
        let p = Problem {
            forward: &forward,
            target,
            metric: Mat3::IDENTITY,
            k_aim: 0.9,
            lambda: 0.05,
            bounds: InkBounds::new(3.0, 0.95),
        };
        let s = p.solve([0.5; 4]);
        assert!(s.x.iter().sum::<f64>() <= 3.0 + 1e-9);
        assert!(s.colour_error > 1.0, "the target needs 360 % and must not be reached");
    }
}
