//! Gamut boundaries and gamut mapping.
//!
//! The printable gamut is described by the segment-maxima method (Morovič &
//! Luo, "Calculating medium and image gamut boundaries for gamut mapping",
//! Color Res. Appl. 25 (2000) 394–401), here in cylindrical form: for each
//! lightness and hue segment the largest chroma found among samples of the
//! boundary faces of the feasible ink set (the faces of the CMYK box under the
//! black limit and the face of the ink limit). Since the forward model maps
//! the 4-D ink set onto 3-D colour space, the boundary of the printable
//! colours is the image of those faces.
//!
//! Perceptual mapping follows the structure of SGCK, the reference algorithm
//! of CIE 156:2004 ("Guidelines for the evaluation of gamut mapping
//! algorithms"): chroma-dependent lightness compression, then knee scaling of
//! the distance to a point on the lightness axis at the lightness of the
//! destination cusp. Where SGCK uses a sigmoidal lightness curve we use the
//! linear range mapping, the form CIE 156 names as its simpler variant.

use crate::colour::{Lab, Lch};

const L_STEPS: usize = 101; // L* 0..100 in steps of 1
const H_STEPS: usize = 180; // hue in steps of 2°

/// Largest chroma per lightness and hue segment.
#[derive(Debug, Clone)]
pub struct GamutBoundary {
    c_max: Vec<f64>, // L_STEPS × H_STEPS
    /// Lightness of the darkest and lightest printable neutral.
    pub l_min: f64,
    pub l_max: f64,
}

impl GamutBoundary {
    /// Builds the boundary from samples of the boundary surface.
    pub fn from_samples(samples: impl IntoIterator<Item = Lab>, l_min: f64, l_max: f64) -> GamutBoundary {
        let mut c_max = vec![-1.0f64; L_STEPS * H_STEPS];
        for lab in samples {
            let lch = lab.to_lch();
            let li = lch.l.round();
            if !(0.0..=100.0).contains(&li) {
                continue;
            }
            let hi = ((lch.h / 2.0).round() as usize) % H_STEPS;
            let cell = &mut c_max[li as usize * H_STEPS + hi];
            *cell = cell.max(lch.c);
        }
        // Segments outside the lightness range hold nothing; inside, fill empty
        // segments from their hue neighbours, then from lightness neighbours.
        for li in 0..L_STEPS {
            let l = li as f64;
            let row = &mut c_max[li * H_STEPS..(li + 1) * H_STEPS];
            if l < l_min - 0.5 || l > l_max + 0.5 {
                row.iter_mut().for_each(|c| *c = 0.0);
                continue;
            }
            fill_circular(row);
        }
        for hi in 0..H_STEPS {
            let mut column: Vec<f64> = (0..L_STEPS).map(|li| c_max[li * H_STEPS + hi]).collect();
            fill_linear(&mut column);
            for (li, c) in column.into_iter().enumerate() {
                c_max[li * H_STEPS + hi] = c.max(0.0);
            }
        }
        GamutBoundary { c_max, l_min, l_max }
    }

    /// Largest printable chroma at lightness `l` and hue `h` (degrees),
    /// interpolated bilinearly between segments.
    pub fn max_chroma(&self, l: f64, h: f64) -> f64 {
        if l < self.l_min || l > self.l_max {
            return 0.0;
        }
        let lf = l.clamp(0.0, 100.0);
        let l0 = (lf.floor() as usize).min(L_STEPS - 2);
        let tl = lf - l0 as f64;
        let hf = h.rem_euclid(360.0) / 2.0;
        let h0 = hf.floor() as usize % H_STEPS;
        let h1 = (h0 + 1) % H_STEPS;
        let th = hf - hf.floor();
        let at = |li: usize, hi: usize| self.c_max[li * H_STEPS + hi];
        let low = at(l0, h0) * (1.0 - th) + at(l0, h1) * th;
        let high = at(l0 + 1, h0) * (1.0 - th) + at(l0 + 1, h1) * th;
        low * (1.0 - tl) + high * tl
    }

    /// True when the colour lies inside the described boundary.
    pub fn contains(&self, lab: Lab) -> bool {
        let lch = lab.to_lch();
        lch.l >= self.l_min && lch.l <= self.l_max && lch.c <= self.max_chroma(lch.l, lch.h)
    }

    /// Lightness of the cusp (largest chroma) at hue `h`.
    pub fn cusp(&self, h: f64) -> (f64, f64) {
        let mut best = (50.0, 0.0);
        let mut l = self.l_min.ceil();
        while l <= self.l_max {
            let c = self.max_chroma(l, h);
            if c > best.1 {
                best = (l, c);
            }
            l += 0.5;
        }
        best
    }

    /// Volume in cubic CIELAB units, by integration over the segments.
    pub fn volume(&self) -> f64 {
        let dh = (360.0 / H_STEPS as f64).to_radians();
        let mut v = 0.0;
        let mut l = self.l_min;
        let dl = 0.25;
        while l < self.l_max {
            for hi in 0..H_STEPS {
                let c = self.max_chroma(l + dl / 2.0, hi as f64 * 2.0);
                v += 0.5 * c * c * dh * dl;
            }
            l += dl;
        }
        v
    }
}

fn fill_circular(row: &mut [f64]) {
    let n = row.len();
    if row.iter().all(|&c| c < 0.0) {
        return;
    }
    let known: Vec<usize> = (0..n).filter(|&i| row[i] >= 0.0).collect();
    let original = row.to_vec();
    for i in 0..n {
        if original[i] >= 0.0 {
            continue;
        }
        let next = known.iter().copied().find(|&k| k > i).unwrap_or(known[0] + n);
        let prev = known.iter().rev().copied().find(|&k| k < i).map(|k| k as isize).unwrap_or(known[known.len() - 1] as isize - n as isize);
        let t = (i as isize - prev) as f64 / (next as isize - prev) as f64;
        row[i] = original[prev.rem_euclid(n as isize) as usize] * (1.0 - t) + original[next % n] * t;
    }
}

fn fill_linear(col: &mut [f64]) {
    let n = col.len();
    let known: Vec<usize> = (0..n).filter(|&i| col[i] >= 0.0).collect();
    if known.is_empty() {
        return;
    }
    let original = col.to_vec();
    for i in 0..n {
        if original[i] >= 0.0 {
            continue;
        }
        let next = known.iter().copied().find(|&k| k > i);
        let prev = known.iter().rev().copied().find(|&k| k < i);
        col[i] = match (prev, next) {
            (Some(p), Some(q)) => original[p] + (original[q] - original[p]) * (i - p) as f64 / (q - p) as f64,
            (Some(p), None) => original[p],
            (None, Some(q)) => original[q],
            (None, None) => 0.0,
        };
    }
}

/// The gamut a source colour comes from, for perceptual compression.
pub trait SourceGamut: Send + Sync {
    /// True when `lab` (CIELAB D50, media-relative) lies inside the source gamut.
    fn contains(&self, lab: Lab) -> bool;
}

/// The gamut of an RGB colour space: the colours whose RGB lies in 0..1.
pub struct RgbGamut(pub crate::colour::RgbConverter);

impl SourceGamut for RgbGamut {
    fn contains(&self, lab: Lab) -> bool {
        let rgb = self.0.xyz_to_linear(lab.to_xyz());
        rgb.0.iter().all(|&v| (-1e-9..=1.0 + 1e-9).contains(&v))
    }
}

/// Distance from `origin` along the unit direction `dir` (in the L, C plane of
/// one hue) to the last point inside `inside`, by stepping then bisection.
fn boundary_distance(origin: (f64, f64), dir: (f64, f64), hue: f64, max: f64, inside: &dyn Fn(Lab) -> bool) -> f64 {
    let point = |s: f64| Lch::new(origin.0 + s * dir.0, (origin.1 + s * dir.1).max(0.0), hue).to_lab();
    let step = 1.0;
    let mut s = 0.0;
    while s < max && inside(point(s + step)) {
        s += step;
    }
    if s >= max {
        return max;
    }
    let (mut lo, mut hi) = (s, s + step);
    for _ in 0..20 {
        let mid = 0.5 * (lo + hi);
        if inside(point(mid)) {
            lo = mid;
        } else {
            hi = mid;
        }
    }
    lo
}

/// Lightness and chroma of the cusp per 2° hue segment of a gamut.
fn cusps_of(contains: &dyn Fn(Lab) -> bool) -> Vec<(f64, f64)> {
    (0..H_STEPS)
        .map(|hi| {
            let h = hi as f64 * 2.0;
            let mut best = (50.0, 0.0);
            let mut l = 1.0;
            while l < 100.0 {
                let c = boundary_distance((l, 0.0), (0.0, 1.0), h, 250.0, contains);
                if c > best.1 {
                    best = (l, c);
                }
                l += 1.0;
            }
            best
        })
        .collect()
}

fn cusp_at(cusps: &[(f64, f64)], h: f64) -> (f64, f64) {
    let hf = h.rem_euclid(360.0) / 2.0;
    let i0 = hf.floor() as usize % H_STEPS;
    let i1 = (i0 + 1) % H_STEPS;
    let t = hf - hf.floor();
    (cusps[i0].0 * (1.0 - t) + cusps[i1].0 * t, cusps[i0].1 * (1.0 - t) + cusps[i1].1 * t)
}

/// Perceptual gamut mapping from one source gamut into the printable gamut.
///
/// 1. Lightness: the source range [black, 100] maps linearly onto the
///    printable [`l_min`, `l_max`], in full for neutrals and less for
///    saturated colours (the chroma weighting of SGCK, CIE 156:2004).
/// 2. Cusp alignment: colours move in lightness toward the destination cusp
///    in proportion to their chroma relative to the source cusp, so that the
///    source cusp lands at the destination cusp lightness (as in GCUSP,
///    Morovič 1998, also described in CIE 156:2004).
/// 3. Knee scaling (SGCK): along the line toward the lightness axis at the
///    destination cusp lightness, distances up to 90 % of the destination
///    boundary stay; the rest of the source range is compressed linearly
///    into the remaining 10 %.
pub struct PerceptualMap<'a> {
    dest: &'a GamutBoundary,
    dest_cusps: Vec<(f64, f64)>,
    source: &'a dyn SourceGamut,
    source_cusps: Vec<(f64, f64)>,
    source_black: f64,
}

impl<'a> PerceptualMap<'a> {
    pub fn new(dest: &'a GamutBoundary, source: &'a dyn SourceGamut, source_black: f64) -> PerceptualMap<'a> {
        let dest_cusps = (0..H_STEPS).map(|hi| dest.cusp(hi as f64 * 2.0)).collect();
        let source_cusps = cusps_of(&|p| source.contains(p));
        PerceptualMap { dest, dest_cusps, source, source_cusps, source_black }
    }

    /// Step 1 and 2 are affine in L for a fixed chroma and hue: L' = α·L + β.
    fn lightness_affine(&self, c: f64, h: f64) -> (f64, f64) {
        let d = self.dest;
        let a = (d.l_max - d.l_min) / (100.0 - self.source_black);
        let pc = 1.0 - (c.powi(3) / (c.powi(3) + 5e5)).sqrt();
        // step 1: L1 = pc·(l_min + (L − sb)·a) + (1 − pc)·L
        let alpha = pc * a + 1.0 - pc;
        let mut beta = pc * (d.l_min - self.source_black * a);
        // step 2: shift toward the destination cusp
        let (ls, cs) = cusp_at(&self.source_cusps, h);
        let (ld, _) = cusp_at(&self.dest_cusps, h);
        if cs > 1e-6 {
            let pcs = 1.0 - (cs.powi(3) / (cs.powi(3) + 5e5)).sqrt();
            let ls1 = pcs * (d.l_min + (ls - self.source_black) * a) + (1.0 - pcs) * ls;
            beta += (ld - ls1) * (c / cs).min(1.0);
        }
        (alpha, beta)
    }

    /// Maps one media-relative colour. The result may still lie slightly
    /// outside the printable gamut; the inversion clips the rest.
    pub fn map(&self, lab: Lab) -> Lab {
        let lch = lab.to_lch();
        let (alpha, beta) = self.lightness_affine(lch.c, lch.h);
        let l_mapped = (alpha * lch.l + beta).clamp(self.dest.l_min, self.dest.l_max);
        if lch.c < 1e-6 {
            return Lch::new(l_mapped, 0.0, lch.h).to_lab();
        }
        let (l_cusp, _) = cusp_at(&self.dest_cusps, lch.h);
        let dl = l_mapped - l_cusp;
        let d = (dl * dl + lch.c * lch.c).sqrt();
        let dir = (dl / d, lch.c / d);
        let origin = (l_cusp, 0.0);
        let d_dest = boundary_distance(origin, dir, lch.h, 250.0, &|p| self.dest.contains(p));
        // The source boundary along the same line, after steps 1 and 2.
        let source_inside = |p: Lab| {
            let q = p.to_lch();
            let (a, b) = self.lightness_affine(q.c, q.h);
            self.source.contains(Lch::new((q.l - b) / a, q.c, q.h).to_lab())
        };
        let d_source = boundary_distance(origin, dir, lch.h, 250.0, &source_inside).max(d);
        let knee = 0.9 * d_dest;
        let d_new = if d_source <= d_dest || d <= knee {
            d
        } else {
            knee + (d - knee) * (d_dest - knee) / (d_source - knee)
        };
        Lch::new(l_cusp + dir.0 * d_new, (dir.1 * d_new).max(0.0), lch.h).to_lab()
    }
}

/// Black point compensation of ISO 18619:2015 in XYZ relative to D50:
/// XYZ' = (XYZ − BPs)·(1 − Ybd)/(1 − Ybs) + BPd with the black points taken
/// as neutral (scaled D50), as the standard computes for the PCS.
pub fn black_point_compensation(lab: Lab, source_black_y: f64, dest_black_y: f64) -> Lab {
    let w = crate::colour::D50.xyz;
    let xyz = lab.to_xyz();
    let scale = (1.0 - dest_black_y) / (1.0 - source_black_y);
    let f = |v: f64, wv: f64| (v - source_black_y * wv) * scale + dest_black_y * wv;
    Lab::from_xyz(crate::colour::Xyz::new(f(xyz.x, w.x), f(xyz.y, w.y), f(xyz.z, w.z)))
}
