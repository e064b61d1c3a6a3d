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
//! algorithms"): chroma-dependent lightness compression and knee scaling,
//! with a cusp alignment step after GCUSP (Morovič 1998). The differences
//! from SGCK are named in [`PerceptualMap`].

use crate::colour::{Lab, Lch};

const L_STEPS: usize = 201; // L* 0..100 in steps of 0.5
const L_STEP: f64 = 0.5;
const H_STEPS: usize = 180; // hue in steps of 2°

/// Chroma up to this share of the destination boundary is kept as it is.
const KNEE: f64 = 0.9;

/// Share of the described boundary distance that perceptual mapping fills at
/// the black point (rising to all of it 20 L* units above): the descriptor
/// interpolates between sampled segments and overstates the narrow gamut of
/// the deep shadows.
const BOUNDARY_MARGIN: f64 = 0.96;

/// Largest chroma per lightness and hue segment.
#[derive(Debug, Clone)]
pub struct GamutBoundary {
    c_max: Vec<f64>, // L_STEPS × H_STEPS
    /// Lightness of the darkest and lightest printable neutral.
    pub l_min: f64,
    pub l_max: f64,
}

/// Segments a dip in hue may span and still count as a sampling gap.
const DIP_RADIUS: usize = 2;

/// Morphological closing (a running maximum, then a running minimum, over
/// ±`DIP_RADIUS` segments, circular in hue). Near paper white and the black
/// point the boundary samples are sparse in hue, and a segment hit only by a
/// sample inside the surface reads far too little chroma: a hole a few
/// degrees wide that would pull the chroma of colours of that hue down, and
/// back up beside it. Closing fills dips narrower than the window and keeps
/// peaks (the cusps of the primaries) and wide valleys as they are.
fn close_narrow_dips(row: &mut [f64]) {
    let n = row.len();
    let window = |v: &[f64], i: usize, pick: fn(f64, f64) -> f64| {
        (1..=DIP_RADIUS).fold(v[i], |acc, d| pick(pick(acc, v[(i + d) % n]), v[(i + n - d) % n]))
    };
    let dilated: Vec<f64> = (0..n).map(|i| window(row, i, f64::max)).collect();
    for (i, c) in row.iter_mut().enumerate() {
        *c = window(&dilated, i, f64::min).max(*c);
    }
}

impl GamutBoundary {
    /// Builds the boundary from samples of the boundary surface.
    pub fn from_samples(samples: impl IntoIterator<Item = Lab>, l_min: f64, l_max: f64) -> GamutBoundary {
        let mut c_max = vec![-1.0f64; L_STEPS * H_STEPS];
        for lab in samples {
            let lch = lab.to_lch();
            let li = (lch.l / L_STEP).round();
            if !(0.0..=(L_STEPS - 1) as f64).contains(&li) {
                continue;
            }
            let hi = ((lch.h / 2.0).round() as usize) % H_STEPS;
            let cell = &mut c_max[li as usize * H_STEPS + hi];
            *cell = cell.max(lch.c);
        }
        // Segments outside the lightness range hold nothing; inside, fill empty
        // segments from their hue neighbours, then from lightness neighbours.
        for li in 0..L_STEPS {
            let l = li as f64 * L_STEP;
            let row = &mut c_max[li * H_STEPS..(li + 1) * H_STEPS];
            if l < l_min - L_STEP / 2.0 || l > l_max + L_STEP / 2.0 {
                row.iter_mut().for_each(|c| *c = 0.0);
                continue;
            }
            fill_circular(row);
            close_narrow_dips(row);
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
        let lf = l.clamp(0.0, 100.0) / L_STEP;
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

    /// Lightness and chroma of the cusp (largest chroma) at hue `h`.
    pub fn cusp(&self, h: f64) -> (f64, f64) {
        refine_cusp(self.l_min, self.l_max, &|l| self.max_chroma(l, h))
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
        let prev = known
            .iter()
            .rev()
            .copied()
            .find(|&k| k < i)
            .map(|k| k as isize)
            .unwrap_or(known[known.len() - 1] as isize - n as isize);
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

    /// The source's primaries and secondaries in the order red, yellow,
    /// green, cyan, blue, magenta, when it has them (for hue alignment).
    fn primaries(&self) -> Option<[Lab; 6]> {
        None
    }

    /// Dense samples of the ridge that carries the cusps (for an RGB cube,
    /// its six edges between the primaries and secondaries), when known.
    fn ridge(&self) -> Option<Vec<Lab>> {
        None
    }
}

/// The gamut of an RGB colour space: the colours whose RGB lies in 0..1.
pub struct RgbGamut(pub crate::colour::RgbConverter);

/// The six saturated corners of the RGB cube in hue order: red, yellow,
/// green, cyan, blue, magenta (encoded values).
pub const RGB_CORNERS: [[f64; 3]; 6] = [
    [1.0, 0.0, 0.0],
    [1.0, 1.0, 0.0],
    [0.0, 1.0, 0.0],
    [0.0, 1.0, 1.0],
    [0.0, 0.0, 1.0],
    [1.0, 0.0, 1.0],
];

impl SourceGamut for RgbGamut {
    fn contains(&self, lab: Lab) -> bool {
        let rgb = self.0.xyz_to_linear(lab.to_xyz());
        rgb.0.iter().all(|&v| (-1e-9..=1.0 + 1e-9).contains(&v))
    }

    fn primaries(&self) -> Option<[Lab; 6]> {
        let corners = RGB_CORNERS;
        Some(corners.map(|c| self.0.to_lab(crate::colour::EncodedRgb(c))))
    }

    fn ridge(&self) -> Option<Vec<Lab>> {
        let corners = RGB_CORNERS;
        Some(ridge_samples(&corners, &|rgb| self.0.to_lab(crate::colour::EncodedRgb(rgb))))
    }
}

/// Samples along the six edges joining consecutive corners (and back to the first).
pub fn ridge_samples(corners: &[[f64; 3]; 6], colour: &dyn Fn([f64; 3]) -> Lab) -> Vec<Lab> {
    const STEPS: usize = 2048;
    let mut out = Vec::with_capacity(6 * STEPS);
    for i in 0..6 {
        let (a, b) = (corners[i], corners[(i + 1) % 6]);
        for s in 0..STEPS {
            let t = s as f64 / STEPS as f64;
            out.push(colour(std::array::from_fn(|k| a[k] + t * (b[k] - a[k]))));
        }
    }
    out
}

/// The cusp (lightness, chroma) of a gamut as a function of hue, from
/// samples sorted by hue and interpolated linearly between neighbours.
#[derive(Debug, Clone)]
pub struct CuspCurve {
    hues: Vec<f64>,
    points: Vec<(f64, f64)>,
}

impl CuspCurve {
    fn from_points(mut samples: Vec<(f64, f64, f64)>) -> CuspCurve {
        samples.retain(|s| s.0.is_finite() && s.1.is_finite() && s.2.is_finite());
        samples.sort_by(|a, b| a.0.total_cmp(&b.0));
        CuspCurve {
            hues: samples.iter().map(|s| s.0).collect(),
            points: samples.iter().map(|s| (s.1, s.2)).collect(),
        }
    }

    fn from_ridge(ridge: &[Lab]) -> CuspCurve {
        CuspCurve::from_points(
            ridge
                .iter()
                .map(|l| {
                    let c = l.to_lch();
                    (c.h, c.l, c.c)
                })
                .collect(),
        )
    }

    fn from_table(table: &[(f64, f64)]) -> CuspCurve {
        let n = table.len() as f64;
        CuspCurve::from_points(table.iter().enumerate().map(|(i, &(l, c))| (i as f64 * 360.0 / n, l, c)).collect())
    }

    pub fn at(&self, h: f64) -> (f64, f64) {
        let n = self.hues.len();
        if n == 0 {
            return (50.0, 0.0);
        }
        let h = h.rem_euclid(360.0);
        let i = self.hues.partition_point(|&x| x <= h);
        let (i0, i1) = (if i == 0 { n - 1 } else { i - 1 }, if i == n { 0 } else { i });
        let span = (self.hues[i1] - self.hues[i0]).rem_euclid(360.0);
        let t = if span > 0.0 {
            (h - self.hues[i0]).rem_euclid(360.0) / span
        } else {
            0.0
        };
        let (a, b) = (self.points[i0], self.points[i1]);
        (a.0 + t * (b.0 - a.0), a.1 + t * (b.1 - a.1))
    }
}

/// Piecewise-linear hue mapping that carries six source anchor hues onto six
/// destination anchor hues (red, yellow, green, cyan, blue, magenta), so that
/// a source primary prints as the corresponding process colour rather than
/// as its exact hue made with a third ink (the hue-alignment step of
/// printing-oriented gamut mapping, cf. the hue mapping discussed in
/// Morovič, "Color Gamut Mapping", Wiley 2008, ch. 10).
#[derive(Debug, Clone)]
pub struct HueAlignment {
    source: [f64; 6],
    dest: [f64; 6],
}

impl HueAlignment {
    /// `None` when the anchors are not in the same circular order on both
    /// sides (then no alignment is applied).
    pub fn new(source: [Lab; 6], dest: [Lab; 6]) -> Option<HueAlignment> {
        let s = source.map(|l| l.to_lch().h);
        let d = dest.map(|l| l.to_lch().h);
        let ordered = |h: &[f64; 6]| {
            let total: f64 = (0..6).map(|i| (h[(i + 1) % 6] - h[i]).rem_euclid(360.0)).sum();
            (total - 360.0).abs() < 1e-6
        };
        (ordered(&s) && ordered(&d)).then_some(HueAlignment { source: s, dest: d })
    }

    pub fn map(&self, h: f64) -> f64 {
        for i in 0..6 {
            let (s0, s1) = (self.source[i], self.source[(i + 1) % 6]);
            let span = (s1 - s0).rem_euclid(360.0);
            let offset = (h - s0).rem_euclid(360.0);
            if offset <= span && span > 0.0 {
                let (d0, d1) = (self.dest[i], self.dest[(i + 1) % 6]);
                let dspan = (d1 - d0).rem_euclid(360.0);
                return (d0 + offset / span * dspan).rem_euclid(360.0);
            }
        }
        h
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

/// Hue steps of the cusp tables (0.5°: cusps are sharp corners at the
/// primaries, and lightness there is steep).
const CUSP_STEPS: usize = 720;

/// Lightness and chroma of the cusp per 0.5° of hue of a gamut.
fn cusps_of(contains: &(dyn Fn(Lab) -> bool + Sync)) -> Vec<(f64, f64)> {
    use rayon::prelude::*;
    (0..CUSP_STEPS)
        .into_par_iter()
        .map(|hi| {
            let h = hi as f64 * 360.0 / CUSP_STEPS as f64;
            refine_cusp(0.0, 100.0, &|l| boundary_distance((l, 0.0), (0.0, 1.0), h, 250.0, contains))
        })
        .collect()
}

/// The lightness of largest chroma on [lo, hi]: a scan in steps of one
/// unit, then golden-section search around the best step.
fn refine_cusp(lo: f64, hi: f64, chroma: &dyn Fn(f64) -> f64) -> (f64, f64) {
    let mut best = (0.5 * (lo + hi), f64::MIN);
    let mut l = lo;
    while l <= hi {
        let c = chroma(l);
        if c > best.1 {
            best = (l, c);
        }
        l += 1.0;
    }
    let (mut a, mut b) = ((best.0 - 1.0).max(lo), (best.0 + 1.0).min(hi));
    let g = (5f64.sqrt() - 1.0) / 2.0;
    for _ in 0..30 {
        let (x1, x2) = (b - g * (b - a), a + g * (b - a));
        if chroma(x1) >= chroma(x2) {
            b = x2;
        } else {
            a = x1;
        }
    }
    let l = 0.5 * (a + b);
    let c = chroma(l);
    if c >= best.1 { (l, c) } else { best }
}

/// L* above the printable black over which the perceptual map tapers chroma.
pub const SHADOW_TAPER_RANGE: f64 = 20.0;
/// Share of chroma the taper keeps at the black point itself.
pub const SHADOW_TAPER_FLOOR: f64 = 0.2;

/// Perceptual gamut mapping from one source gamut into the printable gamut.
///
/// 1. Lightness: the source range [black, 100] maps linearly onto the
///    printable [`l_min`, `l_max`], in full for neutrals and less for
///    saturated colours (the chroma weighting of SGCK, CIE 156:2004).
/// 2. Cusp alignment: colours move in lightness toward the destination cusp
///    in proportion to their chroma relative to the source cusp, so that the
///    source cusp lands at the destination cusp lightness (as in GCUSP,
///    Morovič 1998, also described in CIE 156:2004).
/// 3. Knee scaling of chroma at constant lightness (the knee function of
///    SGCK, applied toward the lightness axis rather than toward the cusp
///    lightness point, which keeps the deep shadows continuous with the
///    neutral axis): chroma up to 90 % of the destination boundary stays; the
///    rest of the source range is compressed linearly into the remaining 10 %.
///
/// 4. A shadow taper of our own (not part of SGCK or GCUSP): within
///    [`SHADOW_TAPER_RANGE`] L* above the printable black, chroma is scaled
///    down smoothly to [`SHADOW_TAPER_FLOOR`] of its value at the black
///    point, where the gamut ends in a point. Without it, 8-bit ramps into
///    the darkest shadows step by more than 3 % of a plate per code value
///    (measured on the built-in coated condition, see tests/suite/separation_engine.rs).
pub struct PerceptualMap<'a> {
    dest: &'a GamutBoundary,
    hues: Option<HueAlignment>,
    dest_cusps: CuspCurve,
    source: &'a dyn SourceGamut,
    source_cusps: CuspCurve,
    source_black: f64,
}

impl<'a> PerceptualMap<'a> {
    /// `dest_primaries`: the printed red, yellow, green, cyan, blue and
    /// magenta of the press (media-relative), for hue alignment.
    pub fn new(
        dest: &'a GamutBoundary,
        dest_primaries: Option<[Lab; 6]>,
        dest_ridge: Option<Vec<Lab>>,
        source: &'a dyn SourceGamut,
        source_black: f64,
    ) -> PerceptualMap<'a> {
        let dest_cusps = match dest_ridge {
            Some(r) => CuspCurve::from_ridge(&r),
            None => CuspCurve::from_table(
                &(0..CUSP_STEPS)
                    .map(|hi| dest.cusp(hi as f64 * 360.0 / CUSP_STEPS as f64))
                    .collect::<Vec<_>>(),
            ),
        };
        let hues = source.primaries().zip(dest_primaries).and_then(|(s, d)| HueAlignment::new(s, d));
        let source_cusps = match source.ridge() {
            Some(r) => CuspCurve::from_ridge(&r),
            None => CuspCurve::from_table(&cusps_of(&|p| source.contains(p))),
        };
        PerceptualMap {
            dest,
            hues,
            dest_cusps,
            source,
            source_cusps,
            source_black,
        }
    }

    /// Step 1 and 2 are affine in L for a fixed chroma and hue: L' = α·L + β.
    fn lightness_affine(&self, c: f64, h: f64, source_hue: f64) -> (f64, f64) {
        self.lightness_affine_with(c, self.source_cusps.at(source_hue), self.dest_cusps.at(h))
    }

    /// [`PerceptualMap::lightness_affine`] with the cusps at the two hues
    /// looked up once (they are constant along one colour's chroma line).
    fn lightness_affine_with(&self, c: f64, source_cusp: (f64, f64), dest_cusp: (f64, f64)) -> (f64, f64) {
        let d = self.dest;
        let a = (d.l_max - d.l_min) / (100.0 - self.source_black);
        let pc = 1.0 - (c.powi(3) / (c.powi(3) + 5e5)).sqrt();
        // step 1: L1 = pc·(l_min + (L − sb)·a) + (1 − pc)·L
        let alpha = pc * a + 1.0 - pc;
        let mut beta = pc * (d.l_min - self.source_black * a);
        // step 2: shift toward the destination cusp
        let (ls, cs) = source_cusp;
        let (ld, _) = dest_cusp;
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
        // 0. Hue alignment of the primaries; the source gamut is then looked up
        //    at the hue the colour came from.
        let source_hue = lch.h;
        let lch = match &self.hues {
            Some(a) => Lch::new(lch.l, lch.c, a.map(lch.h)),
            None => lch,
        };
        let (alpha, beta) = self.lightness_affine(lch.c, lch.h, source_hue);
        let l_mapped = (alpha * lch.l + beta).clamp(self.dest.l_min, self.dest.l_max);
        if lch.c < 1e-6 {
            return Lch::new(l_mapped, 0.0, lch.h).to_lab();
        }
        // Knee scaling of chroma at the mapped lightness.
        let origin = (l_mapped, 0.0);
        let dir = (0.0, 1.0);
        let d = lch.c;
        let shadow = ((l_mapped - self.dest.l_min) / 20.0).clamp(0.0, 1.0);
        let margin = BOUNDARY_MARGIN + (1.0 - BOUNDARY_MARGIN) * shadow;
        let d_dest = margin * boundary_distance(origin, dir, lch.h, 250.0, &|p| self.dest.contains(p));
        // The source boundary at the same place, after steps 1 and 2.
        let cusps = (self.source_cusps.at(source_hue), self.dest_cusps.at(lch.h));
        let source_inside = |p: Lab| {
            let q = p.to_lch();
            let (a, b) = self.lightness_affine_with(q.c, cusps.0, cusps.1);
            self.source.contains(Lch::new((q.l - b) / a, q.c, source_hue).to_lab())
        };
        let d_source = boundary_distance(origin, dir, lch.h, 250.0, &source_inside).max(d);
        let knee = KNEE * d_dest;
        let c_new = if d_source <= d_dest || d <= knee {
            d.min(d_dest.max(knee))
        } else {
            knee + (d - knee) * (d_dest - knee) / (d_source - knee)
        };
        // 4. Shadow taper: toward the black point the printable gamut narrows
        //    to a point, where small differences of chroma take large changes
        //    of ink; chroma there is drawn toward the lightness axis so that
        //    the deepest shadows separate smoothly.
        let t = ((l_mapped - self.dest.l_min) / SHADOW_TAPER_RANGE).clamp(0.0, 1.0);
        let c_new = c_new * (SHADOW_TAPER_FLOOR + (1.0 - SHADOW_TAPER_FLOOR) * t * t * (3.0 - 2.0 * t));
        Lch::new(l_mapped, c_new, lch.h).to_lab()
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
