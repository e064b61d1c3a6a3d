//! Gamut volume of a printing condition under its total ink limit, in cubic
//! CIELAB units, by voxel counting with hole filling.
//!
//! Method:
//! 1. The in-limit ink domain D = [0,1]⁴ ∩ {c + m + y + k ≤ TAC} is a 4-polytope.
//!    A smooth CMYK → CIELAB map has full rank almost everywhere, so interior
//!    points of D map to interior points of the gamut (open mapping) and the
//!    gamut boundary lies in the image of D's 3-dimensional facets; where the
//!    map has no fold inside a facet (as for a Neugebauer model with ordered
//!    primaries), each facet's image is bounded by the image of its 2-faces.
//!    So the 2-faces of D are sampled on a regular (u, v) grid: the 24 square
//!    faces of the cube (two inks free, two at 0 or 100 %) clipped by the ink
//!    limit, and the 8 faces where the ink-limit hyperplane meets a cube facet.
//!    Grid points beyond the limit are pulled back onto it, so each face
//!    stays one continuous sheet.
//! 2. Each grid cell is split into two triangles in CIELAB and rasterised
//!    (barycentric points no further apart than half a voxel): every voxel the
//!    surface passes through is marked. The marked voxels form closed digital
//!    surfaces that no 6-connected path crosses.
//! 3. The outside is flood-filled from the border of the grid (6-connected),
//!    after a morphological closing of radius 1 voxel that seals pinholes;
//!    everything not outside is the gamut solid, holes included.
//! 4. Voxels of the solid touching the outside (26-neighbourhood) are crossed
//!    by the surface and, on average, half inside it: they count one half,
//!    the others one. The estimate converges as the voxel shrinks; the tests
//!    check it against volumes known analytically (a parallelepiped, the same
//!    cut by an ink limit, and a ball).

use super::PressModel;
use crate::colour::Lab;
use crate::ink::Cmyk;
use rayon::prelude::*;
use serde::Serialize;

/// Sampling and voxel settings.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct GamutOptions {
    /// Grid intervals per side of each 2-face.
    pub steps: usize,
    /// Voxel edge in CIELAB units.
    pub voxel: f64,
}

impl Default for GamutOptions {
    fn default() -> Self {
        GamutOptions { steps: 96, voxel: 1.0 }
    }
}

/// The result of [`gamut_volume`].
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct GamutVolume {
    /// Volume in cubic CIELAB units (ΔE*ab³).
    pub volume: f64,
    /// Voxel edge used, CIELAB units.
    pub voxel: f64,
    /// Model evaluations on the 2-faces.
    pub samples: usize,
    /// The darkest sample (lowest L*) found on the boundary, ink as fractions.
    #[serde(skip)]
    pub darkest_ink: Cmyk,
    pub darkest_lab: Lab,
}

/// Pulls the `free` coordinates of `a` down (equally, then whichever is left)
/// until the total is at most `tac`.
fn pull_into_limit(mut a: [f64; 4], free: [usize; 2], tac: f64) -> [f64; 4] {
    let excess = a.iter().sum::<f64>() - tac;
    if excess <= 0.0 {
        return a;
    }
    let (i, j) = (free[0], free[1]);
    let half = excess / 2.0;
    let (di, dj) = if a[i] < half {
        (a[i], excess - a[i])
    } else if a[j] < half {
        (excess - a[j], a[j])
    } else {
        (half, half)
    };
    a[i] = (a[i] - di).max(0.0);
    a[j] = (a[j] - dj).max(0.0);
    a
}

/// The ink build at grid point (u, v) of 2-face `face` (0..32).
fn face_point(face: usize, u: f64, v: f64, tac: f64) -> [f64; 4] {
    const PAIRS: [[usize; 2]; 6] = [[0, 1], [0, 2], [0, 3], [1, 2], [1, 3], [2, 3]];
    if face < 24 {
        // A square face of the cube: two inks free, the other two fixed.
        let free = PAIRS[face / 4];
        let fixed: Vec<usize> = (0..4).filter(|i| !free.contains(i)).collect();
        let mut a = [0.0; 4];
        a[free[0]] = u;
        a[free[1]] = v;
        a[fixed[0]] = (face % 2) as f64;
        a[fixed[1]] = ((face / 2) % 2) as f64;
        pull_into_limit(a, free, tac)
    } else {
        // The ink-limit hyperplane on the cube facet x_i = b: two of the other
        // inks on the grid, the third making up the limit.
        let f = face - 24;
        let (i, b) = (f / 2, (f % 2) as f64);
        let others: Vec<usize> = (0..4).filter(|&x| x != i).collect();
        let mut a = [0.0; 4];
        a[i] = b;
        a[others[0]] = u;
        a[others[1]] = v;
        a[others[2]] = (tac - b - u - v).clamp(0.0, 1.0);
        pull_into_limit(a, [others[0], others[1]], tac)
    }
}

/// CIELAB of every grid point of one 2-face, row by row ((steps + 1)² values).
fn face_samples(model: &dyn PressModel, tac: f64, face: usize, steps: usize) -> Vec<(Cmyk, [f64; 3])> {
    let h = 1.0 / steps as f64;
    let mut out = Vec::with_capacity((steps + 1) * (steps + 1));
    for i in 0..=steps {
        for j in 0..=steps {
            let ink = Cmyk::from_array(face_point(face, i as f64 * h, j as f64 * h, tac));
            out.push((ink, model.lab(ink).to_array()));
        }
    }
    out
}

/// Points on a triangle no further apart than `spacing` (barycentric grid).
fn triangle_points(p: [[f64; 3]; 3], spacing: f64, out: &mut impl FnMut([f64; 3])) {
    let d = |a: [f64; 3], b: [f64; 3]| ((a[0] - b[0]).powi(2) + (a[1] - b[1]).powi(2) + (a[2] - b[2]).powi(2)).sqrt();
    let longest = d(p[0], p[1]).max(d(p[1], p[2])).max(d(p[0], p[2]));
    let n = ((longest / spacing).ceil() as usize).clamp(1, 4096);
    for i in 0..=n {
        for j in 0..=n - i {
            let (s, t) = (i as f64 / n as f64, j as f64 / n as f64);
            let r = 1.0 - s - t;
            out(std::array::from_fn(|k| r * p[0][k] + s * p[1][k] + t * p[2][k]));
        }
    }
}

/// A dense boolean voxel grid.
struct Grid {
    dims: [usize; 3],
    cells: Vec<bool>,
}

impl Grid {
    fn index(&self, x: usize, y: usize, z: usize) -> usize {
        (x * self.dims[1] + y) * self.dims[2] + z
    }

    /// Dilation by a cube of radius r (separable running maximum).
    fn dilate(&mut self, r: usize) {
        if r == 0 {
            return;
        }
        for axis in 0..3 {
            let src = self.cells.clone();
            let [dx, dy, dz] = self.dims;
            let stride = [dy * dz, dz, 1][axis];
            let len = self.dims[axis];
            for x in 0..dx {
                for y in 0..dy {
                    for z in 0..dz {
                        let pos = [x, y, z][axis];
                        let idx = self.index(x, y, z);
                        if src[idx] {
                            continue;
                        }
                        let lo = pos.saturating_sub(r);
                        let hi = (pos + r).min(len - 1);
                        let base = idx - pos * stride;
                        if (lo..=hi).any(|p| src[base + p * stride]) {
                            self.cells[idx] = true;
                        }
                    }
                }
            }
        }
    }
}

/// Voxels marked by points of a surface, over a fixed bounding box.
struct SurfaceVoxels {
    lo: [f64; 3],
    voxel: f64,
    margin: usize,
    marked: Grid,
}

impl SurfaceVoxels {
    fn new(lo: [f64; 3], hi: [f64; 3], voxel: f64, closing: usize) -> SurfaceVoxels {
        let margin = closing + 2;
        let dims: [usize; 3] = std::array::from_fn(|a| ((hi[a] - lo[a]) / voxel).floor() as usize + 1 + 2 * margin);
        SurfaceVoxels {
            lo,
            voxel,
            margin,
            marked: Grid {
                dims,
                cells: vec![false; dims[0] * dims[1] * dims[2]],
            },
        }
    }

    #[inline]
    fn mark(&mut self, p: [f64; 3]) {
        let dims = self.marked.dims;
        let c: [usize; 3] = std::array::from_fn(|a| {
            let v = ((p[a] - self.lo[a]) / self.voxel).floor().max(0.0) as usize + self.margin;
            v.min(dims[a] - 1 - self.margin)
        });
        let idx = self.marked.index(c[0], c[1], c[2]);
        self.marked.cells[idx] = true;
    }

    /// Steps 3 and 4 of the module documentation.
    fn volume(self, closing: usize) -> f64 {
        let voxel = self.voxel;
        let mut marked = self.marked;
        let dims = marked.dims;
        marked.dilate(closing);

        // Flood fill of the outside from a corner (the margin is never marked).
        let mut outside = Grid {
            dims,
            cells: vec![false; marked.cells.len()],
        };
        let mut stack = vec![0usize];
        outside.cells[0] = true;
        let [dx, dy, dz] = dims;
        while let Some(idx) = stack.pop() {
            let (x, y, z) = (idx / (dy * dz), (idx / dz) % dy, idx % dz);
            let mut visit = |nx: usize, ny: usize, nz: usize| {
                let n = (nx * dy + ny) * dz + nz;
                if !outside.cells[n] && !marked.cells[n] {
                    outside.cells[n] = true;
                    stack.push(n);
                }
            };
            if x > 0 {
                visit(x - 1, y, z);
            }
            if x + 1 < dx {
                visit(x + 1, y, z);
            }
            if y > 0 {
                visit(x, y - 1, z);
            }
            if y + 1 < dy {
                visit(x, y + 1, z);
            }
            if z > 0 {
                visit(x, y, z - 1);
            }
            if z + 1 < dz {
                visit(x, y, z + 1);
            }
        }
        outside.dilate(closing);

        let mut full = 0usize;
        let mut boundary = 0usize;
        for x in 1..dx - 1 {
            for y in 1..dy - 1 {
                for z in 1..dz - 1 {
                    if outside.cells[outside.index(x, y, z)] {
                        continue;
                    }
                    let touches = (0..27).any(|n| {
                        let (ox, oy, oz) = (n / 9, (n / 3) % 3, n % 3);
                        outside.cells[outside.index(x + ox - 1, y + oy - 1, z + oz - 1)]
                    });
                    if touches { boundary += 1 } else { full += 1 }
                }
            }
        }
        (full as f64 + 0.5 * boundary as f64) * voxel.powi(3)
    }
}

/// Volume of the solid bounded by CIELAB points of its surface (dense: no
/// further apart than half a voxel), by steps 3 and 4 of the module
/// documentation. `closing` is the radius of the closing in voxels.
pub fn volume_from_surface_samples(points: &[[f64; 3]], voxel: f64, closing: usize) -> f64 {
    if points.is_empty() || voxel.is_nan() || voxel <= 0.0 {
        return 0.0;
    }
    let (lo, hi) = bounds_of(points.iter().copied());
    let mut grid = SurfaceVoxels::new(lo, hi, voxel, closing);
    for p in points {
        grid.mark(*p);
    }
    grid.volume(closing)
}

fn bounds_of(points: impl Iterator<Item = [f64; 3]>) -> ([f64; 3], [f64; 3]) {
    let mut lo = [f64::INFINITY; 3];
    let mut hi = [f64::NEG_INFINITY; 3];
    for p in points {
        for a in 0..3 {
            lo[a] = lo[a].min(p[a]);
            hi[a] = hi[a].max(p[a]);
        }
    }
    (lo, hi)
}

/// Gamut volume of `model` under the total ink limit `tac` (fraction, 0..4).
pub fn gamut_volume(model: &dyn PressModel, tac: f64, options: GamutOptions) -> GamutVolume {
    let steps = options.steps.max(2);
    let n = steps + 1;
    let voxel = if options.voxel > 0.0 { options.voxel } else { 1.0 };
    let faces: Vec<usize> = if tac < 4.0 { (0..32).collect() } else { (0..24).collect() };
    let sampled: Vec<Vec<(Cmyk, [f64; 3])>> = faces.par_iter().map(|&f| face_samples(model, tac, f, steps)).collect();
    let all = || sampled.iter().flatten();
    let (lo, hi) = bounds_of(all().map(|s| s.1));
    let closing = 1;
    let mut grid = SurfaceVoxels::new(lo, hi, voxel, closing);
    let mut mark = |p: [f64; 3]| grid.mark(p);
    for s in &sampled {
        for i in 0..steps {
            for j in 0..steps {
                let q = |a: usize, b: usize| s[a * n + b].1;
                let (p00, p01, p10, p11) = (q(i, j), q(i, j + 1), q(i + 1, j), q(i + 1, j + 1));
                triangle_points([p00, p10, p11], voxel / 2.0, &mut mark);
                triangle_points([p00, p11, p01], voxel / 2.0, &mut mark);
            }
        }
    }
    let darkest = all()
        .min_by(|a, b| a.1[0].total_cmp(&b.1[0]))
        .map(|(ink, lab)| (*ink, Lab::from_array(*lab)))
        .unwrap_or((Cmyk::ZERO, Lab::default()));
    let samples = all().count();
    GamutVolume {
        volume: grid.volume(closing),
        voxel,
        samples,
        darkest_ink: darkest.0,
        darkest_lab: darkest.1,
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::colour::Xyz;

    /// A made-up linear "press": Lab = origin + A·(c, m, y) (black ignored),
    /// so the gamut is a parallelepiped of volume |det A| (cut by the ink
    /// limit when TAC < 3).
    #[derive(Debug)]
    struct Affine {
        origin: [f64; 3],
        a: [[f64; 3]; 3],
    }

    impl PressModel for Affine {
        fn xyz(&self, ink: Cmyk) -> Xyz {
            self.lab(ink).to_xyz()
        }
        fn lab(&self, ink: Cmyk) -> Lab {
            let v = [ink.c, ink.m, ink.y];
            Lab::from_array(std::array::from_fn(|r| {
                self.origin[r] + (0..3).map(|j| self.a[r][j] * v[j]).sum::<f64>()
            }))
        }
    }

    fn det(a: &[[f64; 3]; 3]) -> f64 {
        crate::colour::Mat3(*a).determinant()
    }

    fn sheared() -> Affine {
        Affine {
            origin: [90.0, -3.0, 4.0],
            a: [[-40.0, -30.0, -10.0], [-35.0, 70.0, -5.0], [-45.0, -10.0, 85.0]],
        }
    }

    #[test]
    fn parallelepiped_volume_is_its_determinant() {
        // Exact answer: |det A| (volume of the image of the unit cube under A).
        let m = sheared();
        let want = det(&m.a).abs();
        let got = gamut_volume(&m, 4.0, GamutOptions::default()).volume;
        eprintln!("volume {got:.0}, exact {want:.0}, error {:+.2} %", 100.0 * (got / want - 1.0));
        assert!((got / want - 1.0).abs() < 0.01, "got {got}, want {want}");
    }

    #[test]
    fn ink_limit_cuts_the_cube_as_the_simplex_formula_says() {
        // Exact: vol{x ∈ [0,1]³ : Σx ≤ 2} = 1 − 1/6 (the corner simplex
        // beyond the plane Σx = 2 has volume 1/6), times |det A|.
        let m = sheared();
        let want = det(&m.a).abs() * (1.0 - 1.0 / 6.0);
        let got = gamut_volume(&m, 2.0, GamutOptions::default()).volume;
        eprintln!("volume {got:.0}, exact {want:.0}, error {:+.2} %", 100.0 * (got / want - 1.0));
        assert!((got / want - 1.0).abs() < 0.01, "got {got}, want {want}");
    }

    #[test]
    fn ball_volume_matches_four_thirds_pi_r_cubed() {
        // Points on a sphere of radius 40: V = 4/3·π·r³.
        let r = 40.0;
        let mut pts = Vec::new();
        let n = 400;
        for i in 0..=n {
            let theta = std::f64::consts::PI * i as f64 / n as f64;
            for j in 0..2 * n {
                let phi = std::f64::consts::PI * j as f64 / n as f64;
                pts.push([50.0 + r * theta.cos(), r * theta.sin() * phi.cos(), r * theta.sin() * phi.sin()]);
            }
        }
        let want = 4.0 / 3.0 * std::f64::consts::PI * r.powi(3);
        let got = volume_from_surface_samples(&pts, 1.0, 1);
        eprintln!("volume {got:.0}, exact {want:.0}, error {:+.2} %", 100.0 * (got / want - 1.0));
        assert!((got / want - 1.0).abs() < 0.01, "got {got}, want {want}");
    }
}
