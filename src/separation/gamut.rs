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
//! Perceptual mapping ([`PerceptualMap`]) keeps what the press can print:
//! black point compensation (ISO 18619) for lightness, then compression of
//! chroma in IPT (Ebner & Fairchild 1998), a hue-linear space, along rays
//! from a focal point on the lightness axis as in SGCK, the reference
//! algorithm of CIE 156:2004 ("Guidelines for the evaluation of gamut
//! mapping algorithms"), with a knee near the press boundary. The source of
//! the compression is either the whole source space or the gamut of the
//! picture itself ([`PictureGamut`], segment maxima of its distinct colours).

use super::picture::{BAND, BANDS, PictureGamut, SECTOR, SECTORS, cell_of};
use crate::colour::{Ipt, Lab};

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

    /// The boundary as bytes, for the table cache: `l_min`, `l_max`, then
    /// every segment's chroma, f64 LE. [`GamutBoundary::from_bytes`] reads
    /// them back exactly.
    pub fn to_bytes(&self) -> Vec<u8> {
        [self.l_min, self.l_max]
            .iter()
            .chain(&self.c_max)
            .flat_map(|v| v.to_le_bytes())
            .collect()
    }

    /// The boundary [`GamutBoundary::to_bytes`] wrote; `None` for bytes of
    /// another length or with a value no boundary holds (not finite, a
    /// negative chroma, lightness outside 0..100 or in the wrong order).
    pub fn from_bytes(bytes: &[u8]) -> Option<GamutBoundary> {
        if bytes.len() != 8 * (2 + L_STEPS * H_STEPS) {
            return None;
        }
        let v: Vec<f64> = bytes
            .chunks_exact(8)
            .map(|b| f64::from_le_bytes(b.try_into().expect("eight bytes")))
            .collect();
        let (l_min, l_max) = (v[0], v[1]);
        let c_max = v[2..].to_vec();
        let lightness = (0.0..=100.0).contains(&l_min) && (l_min..=100.0).contains(&l_max);
        (lightness && c_max.iter().all(|c| c.is_finite() && *c >= 0.0)).then_some(GamutBoundary { c_max, l_min, l_max })
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

/// Distance along a ray (`point(s)` at distance s) to the boundary of
/// `inside`: the first exit, by steps of [`RAY_STEP`] then bisection.
fn ray_extent(point: &dyn Fn(f64) -> Lab, max: f64, inside: &dyn Fn(Lab) -> bool) -> f64 {
    let mut s = 0.0;
    let mut last_inside = if inside(point(0.0)) { Some(0.0) } else { None };
    while s < max {
        let next = s + RAY_STEP;
        if inside(point(next)) {
            last_inside = Some(next);
        } else if last_inside.is_some() {
            break;
        }
        s = next;
    }
    let Some(lo) = last_inside else { return 0.0 };
    if lo >= max {
        return max;
    }
    let (mut lo, mut hi) = (lo, lo + RAY_STEP);
    for _ in 0..RAY_BISECTIONS {
        let mid = 0.5 * (lo + hi);
        if inside(point(mid)) {
            lo = mid;
        } else {
            hi = mid;
        }
    }
    lo
}

/// Step and bisections of [`ray_extent`]: 2 units, refined to 2/2¹² (below 0.001).
const RAY_STEP: f64 = 2.0;
const RAY_BISECTIONS: usize = 11;

/// A source that reaches no further than this share beyond the described
/// press boundary is not compressed: the segment-maxima description is
/// itself that close (colours the inversion reproduces exactly read up to
/// about 2 % beyond it, measured on coated offset).
const REACH_SLACK: f64 = 0.03;

/// For a colour lighter than the press cusp of its hue, the focal point
/// of the compression lies this share of the way from the cusp's lightness
/// to the colour's own: rays from the cusp (SGCK) pull light colours down to
/// the cusp's lightness, so the lightest out-of-gamut yellows of a sunset
/// printed darker than the printable yellows below them (a dull band, seen
/// in the demo proof); horizontal rays would give up more chroma. The rise
/// levels off at [`LIGHT_FOCUS_RISE_MAX`] (working units): sRGB green lies
/// far above the press green's cusp, and a focal point that far up prints
/// it as a pale green (C 48 %, Y 57 % on coated offset without the limit,
/// Y 69 % with a limit of 5; measured).
const LIGHT_FOCUS_RISE: f64 = 0.7;
const LIGHT_FOCUS_RISE_MAX: f64 = 2.0;

/// Deepest the focal point of a hue may lie below the press cusp's
/// lightness, in working units (see [`focus_drops`]).
const FOCUS_DROP_MAX: f64 = 30.0;

/// Largest share of the way from the press cusp's lightness down to the
/// press black that the focal point may drop: a focal point at or below
/// the black lies outside the gamut, where a ray's first stretch inside it
/// is the narrow tip at the black point (a printable cyan at L* 58 was
/// carried onto the press black on uncoated offset; measured).
const FOCUS_DROP_SHARE: f64 = 0.5;

/// Working lightness above the press cusp over which the focal point's drop
/// fades in (smoothstep): colours at or below the cusp keep SGCK's focal
/// point, so the drop changes no ray of a colour darker than the cusp.
const FOCUS_DROP_FADE: f64 = 5.0;

/// Per hue sector ([`SECTOR`] degrees, [`SECTORS`] of them), how far the
/// focal point lies below the lightness of the press cusp, in working
/// units. Where the source's cusp of a hue is lighter and more chromatic
/// than the press's (sRGB yellow and green against process yellow and
/// green), the focal point is the axis intercept of the line through the
/// two cusps, so the ray through the source cusp ends on the press cusp
/// and the colours above it (light yellows) map onto the press boundary
/// above the press cusp instead of being pulled down to its lightness with
/// little chroma left. The drop fades in as the source cusp's chroma
/// exceeds the press's by up to a quarter and its lightness the press's by
/// up to [`FOCUS_DROP_FADE`] (the fade above the cusp in
/// [`PerceptualMap::ray`] would not carry a source cusp barely lighter than
/// the press's the whole drop anyway), and is at most
/// [`FOCUS_DROP_MAX`] and [`FOCUS_DROP_SHARE`] of the way to the press
/// black (working lightness `black`). It acts on colours lighter than the
/// press cusp only (see [`PerceptualMap::ray`]). `source_cusp(h)`: the
/// source's cusp (working lightness, chroma) at hue h, when known.
fn focus_drops(dest: &CuspCurve, black: f64, source_cusp: &dyn Fn(f64) -> Option<(f64, f64)>) -> Vec<f64> {
    (0..SECTORS)
        .map(|s| {
            let h = s as f64 * SECTOR;
            let (id, cd) = dest.at(h);
            match source_cusp(h) {
                Some((is, cs)) if is > id && cs > cd && cd > 0.0 => {
                    // Fades in as the source cusp is more chromatic (by up to a
                    // quarter) and lighter (by up to FOCUS_DROP_FADE) than the press's.
                    let w = ((cs - cd) / (0.25 * cd)).clamp(0.0, 1.0) * ((is - id) / FOCUS_DROP_FADE).clamp(0.0, 1.0);
                    let deepest = FOCUS_DROP_MAX.min(FOCUS_DROP_SHARE * (id - black)).max(0.0);
                    w * (cd * (is - id) / (cs - cd)).min(deepest)
                }
                _ => 0.0,
            }
        })
        .collect()
}

/// [`focus_drops`] interpolated linearly in hue.
fn drop_at(drops: &[f64], h: f64) -> f64 {
    if drops.len() < SECTORS {
        return 0.0;
    }
    let sf = h.rem_euclid(360.0) / SECTOR;
    let s0 = sf.floor() as usize % SECTORS;
    let t = sf - sf.floor();
    drops[s0] * (1.0 - t) + drops[(s0 + 1) % SECTORS] * t
}

/// Reach beyond the press boundary (as a share of its distance, past
/// [`REACH_SLACK`]) over which the shadow taper of a picture's mapping
/// fades in.
const TAPER_FADE: f64 = 0.1;

/// Longest ray searched, in working units (IPT × 100): beyond any real gamut.
const RAY_MAX: f64 = 160.0;

/// The working space of the perceptual mapping: IPT (Ebner & Fairchild
/// 1998) scaled by 100, so that lightness runs 0..100 like L*, in polar form
/// (lightness, chroma, hue in degrees).
pub fn working_polar(lab: Lab) -> (f64, f64, f64) {
    let p = Ipt::from_lab(lab);
    (100.0 * p.i, 100.0 * p.chroma(), p.hue())
}

/// The inverse of [`working_polar`].
pub fn from_working_polar(i: f64, c: f64, h: f64) -> Lab {
    Ipt::from_polar(i / 100.0, c.max(0.0) / 100.0, h).to_lab()
}

/// The cusp (lightness, chroma) of a gamut as a function of hue, from
/// samples sorted by hue and interpolated linearly between neighbours.
#[derive(Debug, Clone)]
struct CuspCurve {
    hues: Vec<f64>,
    points: Vec<(f64, f64)>,
}

impl CuspCurve {
    /// From samples of the ridge that carries the cusps, in the working space.
    fn from_ridge(ridge: &[Lab]) -> CuspCurve {
        let mut samples: Vec<(f64, f64, f64)> = ridge
            .iter()
            .map(|&lab| {
                let (i, c, h) = working_polar(lab);
                (h, i, c)
            })
            .filter(|s| s.0.is_finite() && s.1.is_finite() && s.2.is_finite())
            .collect();
        samples.sort_by(|a, b| a.0.total_cmp(&b.0));
        CuspCurve {
            hues: samples.iter().map(|s| s.0).collect(),
            points: samples.iter().map(|s| (s.1, s.2)).collect(),
        }
    }

    fn at(&self, h: f64) -> (f64, f64) {
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

/// L* above the printable black over which the perceptual map tapers
/// chroma. It was 20; with the focal point's descent near the black
/// ([`SHADOW_FOCUS_RANGE`]) 15 keeps 8-bit ramps at or below 3 % of a plate
/// per code on every built-in but uncoated-yellowish, and printable dark
/// colours within the requirements (docs/PERCEPTUAL.md, "The shadow taper
/// and the focal point near the black"; 14 stepped by 3.14 % on web
/// offset, 16 turned a printable blue by 3.1° on super-calendered;
/// measured).
pub const SHADOW_TAPER_RANGE: f64 = 15.0;
/// Share of chroma the taper keeps at the black point itself.
pub const SHADOW_TAPER_FLOOR: f64 = 0.05;

/// L* above the printable black over which the focal point of the chroma
/// compression descends from the press cusp's lightness (SGCK) to the
/// colour's own ([`shadow_focus_share`]). A ray from the cusp runs steeply
/// down into the narrow tip of the gamut at its black point, so SGCK lifted
/// dark out-of-gamut colours along it: sRGB (8, 8, 0) printed 2.4 L* above
/// the press black on uncoated offset where (8, 8, 8) prints 0.3 above it,
/// and near the rich black at the ink limit 2 L* take a quarter of the
/// cyan plate (C 100 → 72 over the first 8 codes of the yellow ramp: 3.9 %
/// per code). Horizontal rays there keep the lightness the lightness curve
/// gives (C 100 → 99). 12 kept every ramp of the built-ins tested at 3 %
/// or less with [`SHADOW_TAPER_RANGE`] 15; 10 stepped by 3.14 % on coated
/// offset; 15 by 3.14 % on web offset (measured).
pub const SHADOW_FOCUS_RANGE: f64 = 12.0;

/// How far the focal point of a colour `above` L* units above the printable
/// black has descended to the colour's own lightness: all the way at the
/// black, none from [`SHADOW_FOCUS_RANGE`] up (smoothstep between).
pub fn shadow_focus_share(above: f64) -> f64 {
    let t = (above / SHADOW_FOCUS_RANGE).clamp(0.0, 1.0);
    1.0 - t * t * (3.0 - 2.0 * t)
}

/// Slope of [`knee_compression`] over most of the compressed band, as a
/// share of the linear scaling of the band onto the rest of the boundary
/// distance (0.5 made the gray-to-blue ramp of the coastal scene print 10
/// codes alike on newsprint; measured).
const KNEE_SLOPE: f64 = 0.7;

/// The share of the press boundary's distance (along a colour's ray from
/// the focal point) the shadow taper leaves to a colour `above` L* units
/// above the printable black: [`SHADOW_TAPER_FLOOR`]
/// at the black, rising smoothly (smoothstep of t = above /
/// [`SHADOW_TAPER_RANGE`]) to all of it.
pub fn shadow_taper_keep(above: f64) -> f64 {
    let t = (above / SHADOW_TAPER_RANGE).clamp(0.0, 1.0);
    SHADOW_TAPER_FLOOR + (1.0 - SHADOW_TAPER_FLOOR) * t * t * (3.0 - 2.0 * t)
}

/// The knee function of the chroma compression. `r` is a colour's distance
/// from the focal point and `rs` the source boundary's along the same ray,
/// both as shares of the destination boundary's distance. Up to [`KNEE`]
/// nothing moves; the band [`KNEE`], `rs` is carried onto [`KNEE`], 1 by a
/// curve whose slope is 1 at the knee (no crease where compression starts),
/// falls linearly over the first 2(1 − m)/(s − m) of the band (s = its
/// compression ratio) and stays constant beyond, at m = [`KNEE_SLOPE`] of
/// the linear map's slope (2 − s when the ratio is below 2 − m): strictly
/// increasing, so distinct colours stay distinct, and nowhere flatter than
/// m times the linear scaling of the band, so an 8-bit ramp leaving the
/// gamut keeps its steps. Beyond `rs` (a colour outside the described
/// source gamut) the boundary.
pub fn knee_compression(r: f64, rs: f64) -> f64 {
    if r <= KNEE || rs <= 1.0 {
        return r;
    }
    let s = (rs - KNEE) / (1.0 - KNEE);
    let x = ((r - KNEE) / (rs - KNEE)).min(1.0);
    // The slope falls from s to m over [0, delta], with g(1) = 1.
    let m = if s >= 2.0 - KNEE_SLOPE { KNEE_SLOPE } else { 2.0 - s };
    let delta = if s - m > 1e-12 { (2.0 * (1.0 - m) / (s - m)).min(1.0) } else { 1.0 };
    let g = if x <= delta {
        s * x - (s - m) * x * x / (2.0 * delta)
    } else {
        delta * (s + m) / 2.0 + m * (x - delta)
    };
    KNEE + (1.0 - KNEE) * g.min(1.0)
}

/// Perceptual gamut mapping from one source gamut into the printable gamut.
///
/// The steps, each chosen so that colours the press can print stay as they
/// are (CIE 156:2004 names the criteria such an algorithm is judged by):
///
/// 1. Lightness: the source black maps onto the press black, as black
///    point compensation does (ISO 18619:2015), but by a curve in L* that
///    acts in the shadows only ([`shadow_lightness`]; IPT hue kept): the
///    range from the source black up to about 1.9 times the difference of
///    the blacks, or at most [`SHADOW_REACH`] above the press black, is
///    compressed, the rest kept. ISO 18619's scaling in
///    XYZ would lift L* 30 by 2.6 and L* 50 by 1.1 on coated offset,
///    moving printable midtones.
/// 2. Chroma, in IPT (Ebner & Fairchild 1998, see [`crate::colour::Ipt`]),
///    which is hue-linear: a colour moves on its IPT hue plane, so a
///    saturated blue does not turn purple as it would scaled in CIELAB.
///    It moves along the ray from a focal point on the lightness axis at the
///    lightness of the press cusp of its hue (the focal point of SGCK, CIE
///    156:2004; raised toward the colour's own lightness above the cusp, by
///    at most [`LIGHT_FOCUS_RISE_MAX`]; for those colours lowered where the
///    source's cusp of the hue is lighter and more chromatic than the
///    press's, so that the source cusp maps onto the press cusp,
///    [`focus_drops`]), by [`knee_compression`] of its distance: up to [`KNEE`] of
///    the distance to the press boundary nothing moves, and the band beyond,
///    out to the source boundary on the same ray, is compressed smoothly into
///    the rest. The source is either the whole source space or the gamut of
///    the picture ([`PictureGamut`]): a picture that barely leaves the press
///    gamut is barely compressed. Within [`SHADOW_FOCUS_RANGE`] L* of the
///    press black the focal point descends to the colour's own lightness
///    ([`shadow_focus_share`]), so that dark colours are compressed at the
///    lightness the curve of step 1 gives them instead of being lifted
///    along steep rays into the narrow tip of the gamut.
/// 3. No hue rotation: hue is kept in IPT.
/// 4. A shadow taper of our own: within [`SHADOW_TAPER_RANGE`] L* above the
///    printable black, the press boundary's chroma is narrowed smoothly to
///    [`SHADOW_TAPER_FLOOR`] of itself at the black point, where the gamut
///    ends in a point ([`shadow_taper_keep`]), and chroma beyond
///    [`KNEE`] of the narrowed boundary is carried into it by
///    [`knee_compression`] (at constant IPT hue and lightness). Without it,
///    8-bit ramps into the darkest shadows step by more than 3 % of a plate
///    per code value (see tests/suite/separation_engine.rs). Dark printable
///    colours inside the knee of the narrowed boundary do not move (an
///    earlier taper scaled every chroma there, moving printable colours up
///    to 20 L* above the black point).
///
/// Which parts depend on the source: the press boundary, its cusps and the
/// press black depend on the separator only; the source boundary distance
/// along each ray depends on the source gamut (the picture's, by default).
pub struct PerceptualMap<'a> {
    dest: &'a GamutBoundary,
    dest_cusps: CuspCurve,
    /// Per hue sector, the focal point's drop below the press cusp ([`focus_drops`]).
    focus_drops: Vec<f64>,
    shadows: ShadowCurve,
    /// a*, b* of the press black point (slightly cool on offset).
    black_tint: (f64, f64),
    source: Extent<'a>,
}

/// What the compression starts from.
enum Extent<'a> {
    /// A whole source gamut, searched along each ray.
    Space(&'a dyn SourceGamut),
    /// A picture's reach beyond the press boundary per lightness band and
    /// hue sector ([`PerceptualMap::for_picture`]).
    Picture(Vec<f64>),
}

/// A picture's reach grid interpolated bilinearly at working lightness `i` and hue `h` (degrees).
fn reach_at(grid: &[f64], i: f64, h: f64) -> f64 {
    let bf = (i / BAND).clamp(0.0, (BANDS - 1) as f64);
    let b0 = (bf.floor() as usize).min(BANDS - 2);
    let tb = bf - b0 as f64;
    let sf = h.rem_euclid(360.0) / SECTOR;
    let s0 = sf.floor() as usize % SECTORS;
    let s1 = (s0 + 1) % SECTORS;
    let ts = sf - sf.floor();
    let at = |b: usize, s: usize| grid[b * SECTORS + s];
    let low = at(b0, s0) * (1.0 - ts) + at(b0, s1) * ts;
    let high = at(b0 + 1, s0) * (1.0 - ts) + at(b0 + 1, s1) * ts;
    low * (1.0 - tb) + high * tb
}

/// The reach grid with every cell zeroed that only enters interpolation
/// patches (bands b, b+1 × sectors s, s+1) whose four corners all lie below
/// `1 + REACH_SLACK`: within such a patch the interpolated reach stays below
/// it, where the mapping does not read the value (no compression, no
/// taper), so zeroing changes no mapped colour. Pictures that stay inside
/// the press gamut in the same regions then share one reach grid.
fn quiet_cells_to_zero(grid: Vec<f64>) -> Vec<f64> {
    // A hair below the threshold, so that rounding in the interpolation cannot cross it.
    let quiet_below = 1.0 + REACH_SLACK - 1e-9;
    let at = |b: usize, s: usize| grid[b * SECTORS + s % SECTORS];
    let patch_quiet = |b0: usize, s0: usize| {
        [at(b0, s0), at(b0, s0 + 1), at(b0 + 1, s0), at(b0 + 1, s0 + 1)]
            .iter()
            .all(|&v| v < quiet_below)
    };
    let mut out = grid.clone();
    for b in 0..BANDS {
        for s in 0..SECTORS {
            let bands = [b.checked_sub(1), (b < BANDS - 1).then_some(b)];
            let sectors = [(s + SECTORS - 1) % SECTORS, s];
            if bands.iter().flatten().all(|&b0| sectors.iter().all(|&s0| patch_quiet(b0, s0))) {
                out[b * SECTORS + s] = 0.0;
            }
        }
    }
    out
}

/// Largest share of contrast [`shadow_lightness`] takes from the shadows
/// where its span is 1.5/this times the difference of the blacks: its
/// slope falls to 1 − this at the middle of its span (0.2 for a lighter
/// press black, 1.8 for a darker one).
const SHADOW_DEPTH: f64 = 0.8;

/// The lightness curve rejoins the identity at most this far (L*) above
/// the press black. The curve of slope 1 at both ends ([`SHADOW_DEPTH`])
/// needs 1.9 times the difference of the blacks: L* 20 on coated offset,
/// but L* 55 on uncoated offset (press black near L* 30) and 83 on
/// newsprint (near L* 44), where it moved printable midtones by up to 11
/// and 20 L*. Beyond this reach the curve takes its contrast from the
/// deepest shadows instead (see [`ShadowCurve::new`]).
pub const SHADOW_REACH: f64 = 10.0;

/// Slope of the steeper lightness curve at the source black, as a share of
/// its mean slope below the press black + [`SHADOW_REACH`].
const SHADOW_FLOOR_SLOPE: f64 = 0.6;

/// The lightness curve of perceptual mapping, from the source black onto
/// the press black (see [`shadow_lightness`]).
struct ShadowCurve {
    source_black: f64,
    dest_black: f64,
    shape: ShadowShape,
    span: f64,
}

enum ShadowShape {
    /// slope(u) = 1 − depth·4u(1 − u), u = (L* − source black)/span.
    Cubic { depth: f64 },
    /// y = press black + (span − lift)·(a·t + (1 − a)·tᵖ), t = (L* − source
    /// black)/span, with p chosen so that the slope is 1 where it ends.
    Power { p: f64 },
}

impl ShadowCurve {
    fn new(source_black: f64, dest_black: f64) -> ShadowCurve {
        let lift = dest_black - source_black;
        // lift = depth·span·2/3
        let span = 1.5 * lift.abs() / SHADOW_DEPTH;
        if lift > 0.0 && span > lift + SHADOW_REACH {
            let span = lift + SHADOW_REACH;
            let a = SHADOW_FLOOR_SLOPE;
            let p = (span / SHADOW_REACH - a) / (1.0 - a);
            return ShadowCurve {
                source_black,
                dest_black,
                shape: ShadowShape::Power { p },
                span,
            };
        }
        ShadowCurve {
            source_black,
            dest_black,
            shape: ShadowShape::Cubic {
                depth: SHADOW_DEPTH.copysign(lift),
            },
            span,
        }
    }

    fn map(&self, l: f64) -> f64 {
        let x = l - self.source_black;
        if x >= self.span || self.span <= 0.0 {
            return l;
        }
        if x <= 0.0 {
            return l + self.dest_black - self.source_black;
        }
        let u = x / self.span;
        match self.shape {
            ShadowShape::Cubic { depth } => self.dest_black + x - depth * self.span * (2.0 * u * u - 4.0 / 3.0 * u * u * u),
            ShadowShape::Power { p } => {
                let a = SHADOW_FLOOR_SLOPE;
                let rest = self.span - (self.dest_black - self.source_black);
                self.dest_black + rest * (a * u + (1.0 - a) * u.powf(p))
            }
        }
    }

    /// The inverse, by bisection (the curve increases).
    fn inverse(&self, y: f64) -> f64 {
        let end = self.source_black + self.span;
        if y >= end || self.span <= 0.0 {
            return y;
        }
        if y <= self.dest_black {
            return y - self.dest_black + self.source_black;
        }
        let (mut lo, mut hi) = (self.source_black, end);
        for _ in 0..48 {
            let mid = 0.5 * (lo + hi);
            if self.map(mid) < y {
                lo = mid;
            } else {
                hi = mid;
            }
        }
        0.5 * (lo + hi)
    }
}

/// The lightness curve of perceptual mapping: `source_black` onto
/// `dest_black` with slope 1 there, the slope dipping to 1 − [`SHADOW_DEPTH`]
/// midway and back to 1 at 1.5/[`SHADOW_DEPTH`] times the difference of the
/// blacks above the source black, the identity above. On coated offset
/// (black near L* 10.7) it ends near L* 20; the deepest shadows keep their
/// contrast, so ramps into the press black separate smoothly. Where that
/// would end more than [`SHADOW_REACH`] above the press black (a press
/// black lighter than about L* 11.4), the curve ends there instead and
/// compresses the deepest shadows the most: printable colours above the
/// press black + [`SHADOW_REACH`] keep their lightness.
pub fn shadow_lightness(l: f64, source_black: f64, dest_black: f64) -> f64 {
    ShadowCurve::new(source_black, dest_black).map(l)
}

/// One colour on its way through the perceptual map: after the lightness
/// curve, its ray from the focal point in the working space.
#[derive(Debug, Clone, Copy, PartialEq)]
struct Ray {
    /// The colour after step 1.
    lab: Lab,
    /// Working lightness of the focal point, hue, unit direction.
    focus: f64,
    h: f64,
    dir: (f64, f64),
    /// Distance of the colour from the focal point, and of the press boundary.
    d: f64,
    d_dest: f64,
    /// How far the focal point was lowered for this colour ([`focus_drops`],
    /// faded in above the press cusp): it depends on the source gamut, so
    /// [`PerceptualMap::map_prepared`] compares it with its own.
    drop: f64,
}

impl Ray {
    fn point(&self, s: f64) -> Lab {
        from_working_polar(self.focus + s * self.dir.0, s * self.dir.1, self.h)
    }
}

/// A colour with what [`PerceptualMap::map`] works out before it reads the
/// source gamut ([`PerceptualMap::prepare`]): the lightness curve, the
/// focal point and the press boundary's distance along the colour's ray.
/// That part depends on the press and the source black only, not on the
/// source gamut or the picture, so a picture-independent cache can keep it
/// and map the colour for each picture by [`PerceptualMap::map_prepared`]
/// alone (the same result, bit for bit, as [`PerceptualMap::map`]).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct PreparedColour {
    source: Lab,
    /// `None` for a neutral (it has no ray).
    ray: Option<Ray>,
}

/// Reals in [`PreparedColour::to_reals`].
pub const PREPARED_REALS: usize = 13;

impl PreparedColour {
    /// The colour as reals, exactly (IEEE 754): the source colour, then the
    /// ray's colour, focal lightness, hue, direction and the colour's and
    /// the press boundary's distances and the focal point's drop (NaN for a
    /// neutral without a ray).
    pub fn to_reals(&self) -> [f64; PREPARED_REALS] {
        let s = self.source;
        match &self.ray {
            Some(r) => [
                s.l, s.a, s.b, r.lab.l, r.lab.a, r.lab.b, r.focus, r.h, r.dir.0, r.dir.1, r.d, r.d_dest, r.drop,
            ],
            None => {
                let mut v = [f64::NAN; PREPARED_REALS];
                v[..3].copy_from_slice(&[s.l, s.a, s.b]);
                v
            }
        }
    }

    /// The colour [`PreparedColour::to_reals`] wrote; `None` for reals no
    /// prepared colour has (a non-finite source colour or ray).
    pub fn from_reals(v: &[f64; PREPARED_REALS]) -> Option<PreparedColour> {
        if v[..3].iter().any(|x| !x.is_finite()) {
            return None;
        }
        let source = Lab::new(v[0], v[1], v[2]);
        if v[3..].iter().all(|x| x.is_nan()) {
            return Some(PreparedColour { source, ray: None });
        }
        if v[3..].iter().any(|x| !x.is_finite()) {
            return None;
        }
        let ray = Ray {
            lab: Lab::new(v[3], v[4], v[5]),
            focus: v[6],
            h: v[7],
            dir: (v[8], v[9]),
            d: v[10],
            d_dest: v[11],
            drop: v[12],
        };
        Some(PreparedColour { source, ray: Some(ray) })
    }
}

impl<'a> PerceptualMap<'a> {
    /// Compresses from the whole of `source`. `dest_ridge`: samples of the
    /// press's cusp ridge (the edges of the ink cube without black),
    /// media-relative. `dest_black`: the press black point (media-relative);
    /// `source_black`: L* of the source black.
    pub fn new(
        dest: &'a GamutBoundary,
        dest_ridge: &[Lab],
        dest_black: Lab,
        source: &'a dyn SourceGamut,
        source_black: f64,
    ) -> PerceptualMap<'a> {
        let dest_cusps = CuspCurve::from_ridge(dest_ridge);
        let source_cusps = source.ridge().map(|ridge| CuspCurve::from_ridge(&ridge));
        let black = working_polar(Lab::new(dest.l_min, 0.0, 0.0)).0;
        let focus_drops = focus_drops(&dest_cusps, black, &|h| source_cusps.as_ref().map(|c| c.at(h)));
        PerceptualMap {
            dest,
            dest_cusps,
            focus_drops,
            shadows: ShadowCurve::new(source_black, dest_black.l),
            black_tint: (dest_black.a, dest_black.b),
            source: Extent::Space(source),
        }
    }

    /// Compresses from the gamut of one picture: each of its extreme colours
    /// (one per lightness band and hue sector) gives how far beyond the press
    /// boundary the picture reaches there, as a share of the press
    /// boundary's distance along its ray; the share is widened by one band
    /// and sector on each side and interpolated bilinearly between them.
    /// Where it is at most 1, nothing is compressed. The only part of the
    /// map that depends on the picture; it costs one boundary search per
    /// extreme colour (at most 51 × 72).
    pub fn for_picture(
        dest: &'a GamutBoundary,
        dest_ridge: &[Lab],
        dest_black: Lab,
        picture: &PictureGamut,
        source_black: f64,
    ) -> PerceptualMap<'a> {
        use rayon::prelude::*;
        let dest_cusps = CuspCurve::from_ridge(dest_ridge);
        // The picture's cusp per hue sector: its most chromatic colour over
        // all lightness bands, widened by one sector on each side.
        let mut cusps = vec![(0.0f64, 0.0f64); SECTORS];
        for &lab in picture.extremes() {
            let (i, c, h) = working_polar(lab);
            let s = cell_of(0.0, h);
            if c.is_finite() && i.is_finite() && c > cusps[s].1 {
                cusps[s] = (i, c);
            }
        }
        let widened: Vec<(f64, f64)> = (0..SECTORS)
            .map(|s| {
                [SECTORS - 1, 0, 1]
                    .iter()
                    .map(|d| cusps[(s + d) % SECTORS])
                    .fold((0.0, 0.0), |a, b| if b.1 > a.1 { b } else { a })
            })
            .collect();
        let black = working_polar(Lab::new(dest.l_min, 0.0, 0.0)).0;
        let focus_drops = focus_drops(&dest_cusps, black, &|h| {
            let (i, c) = widened[cell_of(0.0, h)];
            (c > 0.0).then_some((i, c))
        });
        let mut map = PerceptualMap {
            dest,
            dest_cusps,
            focus_drops,
            shadows: ShadowCurve::new(source_black, dest_black.l),
            black_tint: (dest_black.a, dest_black.b),
            source: Extent::Picture(Vec::new()),
        };
        let reach: Vec<(usize, f64)> = picture
            .extremes()
            .par_iter()
            .filter_map(|&lab| {
                let ray = map.ray(lab)?;
                let (i, _, _) = working_polar(ray.lab);
                (ray.d_dest > 0.0).then(|| (cell_of(i, ray.h), ray.d / ray.d_dest))
            })
            .collect();
        let mut raw = vec![0.0f64; BANDS * SECTORS];
        for (cell, r) in reach {
            raw[cell] = raw[cell].max(r);
        }
        let mut grid = vec![0.0f64; BANDS * SECTORS];
        for b in 0..BANDS {
            for s in 0..SECTORS {
                let mut m = 0.0f64;
                for nb in b.saturating_sub(1)..=(b + 1).min(BANDS - 1) {
                    for ds in [SECTORS - 1, 0, 1] {
                        m = m.max(raw[nb * SECTORS + (s + ds) % SECTORS]);
                    }
                }
                grid[b * SECTORS + s] = m;
            }
        }
        let mut grid = quiet_cells_to_zero(grid);
        // The focal point's drops follow the reach (the key of the
        // picture's table must hold them too); a sector's drop changes no
        // colour where the reach of it and its neighbours is zero throughout.
        let quiet = |s: usize| (0..BANDS).all(|b| grid[b * SECTORS + s] == 0.0);
        let drops: Vec<f64> = (0..SECTORS)
            .map(|s| {
                let all_quiet = [SECTORS - 1, 0, 1].iter().all(|d| quiet((s + d) % SECTORS));
                if all_quiet { 0.0 } else { map.focus_drops[s] }
            })
            .collect();
        // The map itself keeps the zeroed drops too (they change no colour),
        // so a colour prepared without a drop is prepared again only where
        // this picture's drop acts (`map_prepared`).
        map.focus_drops.clone_from(&drops);
        grid.extend(drops);
        map.source = Extent::Picture(grid);
        map
    }

    /// A picture mapping's reach per lightness band and hue sector (band-major),
    /// with cells that cannot change any mapped colour set to zero, followed
    /// by the focal point's drop per hue sector ([`focus_drops`], zero where
    /// it changes no colour); `None`
    /// for a mapping from a whole source space. Two picture mappings of one
    /// press with equal reach map every colour alike, so the reach keys the
    /// picture's separation table in the table cache.
    pub fn picture_reach(&self) -> Option<&[f64]> {
        match &self.source {
            Extent::Picture(grid) => Some(grid),
            Extent::Space(_) => None,
        }
    }

    /// The lightness curve; neutrals also take on the press black point's
    /// tint in proportion to how far the curve lifts them (all of it at the
    /// source black, which so prints as the press black point itself).
    fn lift(&self, lab: Lab) -> Lab {
        let l = self.shadows.map(lab.l);
        let lift = self.shadows.dest_black - self.shadows.source_black;
        let w = if lift.abs() > 1e-9 {
            ((l - lab.l) / lift).clamp(0.0, 1.0)
        } else {
            0.0
        };
        let neutral = (1.0 - lab.chroma() / 10.0).clamp(0.0, 1.0);
        Lab::new(l, lab.a + w * neutral * self.black_tint.0, lab.b + w * neutral * self.black_tint.1)
    }

    /// Step 1 and the ray of step 2; `None` for a neutral (it has no ray).
    fn ray(&self, lab: Lab) -> Option<Ray> {
        // The IPT hue of the source is kept (a* and b* kept as they are
        // would turn it slightly where L* changes).
        let (_, _, h) = working_polar(lab);
        let lifted = self.lift(lab);
        let (i, c, _) = working_polar(lifted);
        if c < 1e-6 {
            return None;
        }
        let lab = if lifted.l == lab.l { lab } else { from_working_polar(i, c, h) };
        // Above the cusp the focal point rises with the colour (a light
        // yellow aimed at the cusp of the press yellow, L* near 89, would
        // print darker than the printable yellows below it); where the
        // source's cusp is lighter than the press's it lies lower, on the
        // line through both cusps.
        let (cusp, _) = self.dest_cusps.at(h);
        let rise = if i > cusp {
            LIGHT_FOCUS_RISE_MAX * (LIGHT_FOCUS_RISE * (i - cusp) / LIGHT_FOCUS_RISE_MAX).tanh()
        } else {
            0.0
        };
        let drop = self.drop_term(i, h);
        let focus = cusp + rise - drop;
        // Near the press black the focal point descends to the colour's own
        // lightness: the compression there acts at constant lightness.
        let focus = focus - shadow_focus_share(lab.l - self.dest.l_min) * (focus - i);
        let (di, dc) = (i - focus, c);
        let d = di.hypot(dc);
        let mut ray = Ray {
            lab,
            focus,
            h,
            dir: (di / d, dc / d),
            d,
            d_dest: 0.0,
            drop,
        };
        let shadow = ((lab.l - self.dest.l_min) / 20.0).clamp(0.0, 1.0);
        let margin = BOUNDARY_MARGIN + (1.0 - BOUNDARY_MARGIN) * shadow;
        ray.d_dest = margin * ray_extent(&|s| ray.point(s), RAY_MAX, &|p| self.dest.contains(p));
        Some(ray)
    }

    /// How far the focal point drops below the press cusp (plus its rise)
    /// for a colour of working lightness `i` (after step 1) and IPT hue `h`:
    /// [`focus_drops`] of the hue, faded in (smoothstep) over
    /// [`FOCUS_DROP_FADE`] above the press cusp.
    fn drop_term(&self, i: f64, h: f64) -> f64 {
        let (cusp, _) = self.dest_cusps.at(h);
        let t = ((i - cusp) / FOCUS_DROP_FADE).clamp(0.0, 1.0);
        t * t * (3.0 - 2.0 * t) * drop_at(&self.focus_drops, h)
    }

    /// [`PerceptualMap::drop_term`] of a source colour, as [`PerceptualMap::ray`] computes it.
    fn focus_drop(&self, lab: Lab) -> f64 {
        let (_, _, h) = working_polar(lab);
        let (i, _, _) = working_polar(self.lift(lab));
        self.drop_term(i, h)
    }

    /// The source's reach along a ray, as a share of the press boundary's distance.
    fn source_reach(&self, ray: &Ray) -> f64 {
        match &self.source {
            Extent::Space(source) => {
                let inside = |p: Lab| source.contains(Lab::new(self.shadows.inverse(p.l), p.a, p.b));
                ray_extent(&|s| ray.point(s), RAY_MAX, &inside).max(ray.d) / ray.d_dest
            }
            Extent::Picture(grid) => reach_at(grid, working_polar(ray.lab).0, ray.h),
        }
    }

    /// Maps one media-relative colour. The result may still lie slightly
    /// outside the printable gamut; the inversion clips the rest.
    pub fn map(&self, lab: Lab) -> Lab {
        self.map_ray(&self.prepare(lab))
    }

    /// The part of [`PerceptualMap::map`] that does not read the source
    /// gamut (see [`PreparedColour`]).
    pub fn prepare(&self, lab: Lab) -> PreparedColour {
        // Neutrals stay on the axis (tinted toward the press black in the shadows).
        let ray = if lab.chroma() < 1e-6 { None } else { self.ray(lab) };
        PreparedColour { source: lab, ray }
    }

    /// [`PerceptualMap::map`] of a colour prepared by a map of the same
    /// press and source black (this one, or another with another source
    /// gamut). The focal point's drop depends on the source gamut: where
    /// this map's drop for the colour is not the one it was prepared with
    /// (bit for bit), the colour is prepared again here, so the result is
    /// always [`PerceptualMap::map`]'s.
    pub fn map_prepared(&self, prepared: &PreparedColour) -> Lab {
        if let Some(ray) = &prepared.ray {
            let drops_here = self.focus_drops.iter().any(|&d| d != 0.0);
            if (drops_here || ray.drop != 0.0) && self.focus_drop(prepared.source).to_bits() != ray.drop.to_bits() {
                // A picture's map leaves a colour as it is (after step 1)
                // where the picture's reach on its ray stays within the
                // slack: steps 2 and 4 then read only the reach, which does
                // not depend on the focal point, so no ray is needed.
                if let Extent::Picture(grid) = &self.source
                    && reach_at(grid, working_polar(ray.lab).0, ray.h) <= 1.0 + REACH_SLACK
                {
                    return ray.lab;
                }
                return self.map_ray(&self.prepare(prepared.source));
            }
        }
        self.map_ray(prepared)
    }

    /// Steps 1 to 4 of [`PerceptualMap::map`] along the prepared colour's
    /// own ray.
    fn map_ray(&self, prepared: &PreparedColour) -> Lab {
        // Steps 1 and 2.
        let Some(ray) = &prepared.ray else {
            return self.lift(prepared.source);
        };
        let mapped = if ray.d <= KNEE * ray.d_dest || ray.d_dest <= 0.0 {
            ray.lab
        } else {
            match self.source_reach(ray) {
                reach if reach <= 1.0 + REACH_SLACK => ray.lab,
                reach => ray.point(ray.d_dest * knee_compression(ray.d / ray.d_dest, reach)),
            }
        };
        // 4. Shadow taper, at constant IPT hue and lightness: in full where
        // the source reaches beyond the press boundary, fading out where a
        // picture stays inside it (a whole source space always reaches
        // beyond it in the shadows).
        let keep = shadow_taper_keep(mapped.l - self.dest.l_min);
        if keep >= 1.0 {
            return mapped;
        }
        let keep = match &self.source {
            Extent::Space(_) => keep,
            Extent::Picture(_) => {
                let beyond = ((self.source_reach(ray) - 1.0 - REACH_SLACK) / TAPER_FADE).clamp(0.0, 1.0);
                1.0 - beyond * (1.0 - keep)
            }
        };
        if keep >= 1.0 {
            return mapped;
        }
        // The colour's distance from the focal point as a share of the
        // press boundary's along its ray (after step 2).
        let q = if ray.d <= KNEE * ray.d_dest || ray.d_dest <= 0.0 {
            ray.d / ray.d_dest.max(1e-9)
        } else {
            let (i, c, _) = working_polar(mapped);
            (i - ray.focus).hypot(c) / ray.d_dest
        };
        let scale = if q > 1e-9 && ray.d_dest > 0.0 {
            keep * knee_compression(q / keep, (1.0 / keep).max(q / keep)) / q
        } else {
            keep
        };
        if scale >= 1.0 {
            return mapped;
        }
        let (i, c, h) = working_polar(mapped);
        from_working_polar(i, c * scale, h)
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

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn shadow_lightness_maps_black_onto_black_and_inverts() {
        for (sb, db) in [
            (0.0, 9.0),
            (0.0, 28.0),
            (0.0, 44.0),
            (0.0, 2.0),
            (9.0, 14.0),
            (14.0, 9.0),
            (5.0, 5.0),
        ] {
            let curve = ShadowCurve::new(sb, db);
            assert!((curve.map(sb) - db).abs() < 1e-12, "{sb} {db}");
            let above = sb + curve.span + 0.1;
            assert_eq!(curve.map(above), above);
            assert!(curve.span <= (db - sb).abs().max(0.0) * 1.875 + 1e-9 && (db <= sb || curve.span <= db - sb + SHADOW_REACH + 1e-9));
            // Slope 1 where it rejoins the identity.
            let e = 1e-6;
            assert!(
                ((curve.map(sb + curve.span) - curve.map(sb + curve.span - e)) / e - 1.0).abs() < 1e-3,
                "{sb} {db}"
            );
            let mut prev = f64::MIN;
            for k in 0..=1000 {
                let l = sb + k as f64 * 0.1;
                let m = curve.map(l);
                assert!(m > prev, "{sb} {db}: not increasing at {l}");
                // slope at most 1.8
                assert!(k == 0 || m - prev < 0.1 * 1.8 + 1e-9);
                prev = m;
                assert!((curve.inverse(m) - l).abs() < 1e-9, "{sb} {db} {l}: {}", curve.inverse(m));
            }
        }
    }

    #[test]
    fn zeroing_quiet_reach_cells_changes_no_reach_the_mapping_reads() {
        // The mapping reads the interpolated reach only above 1 + REACH_SLACK
        // (compression and taper); below it every value acts alike.
        let mut state = 11u64;
        let mut next = || {
            state = state.wrapping_mul(6364136223846793005).wrapping_add(1442695040888963407);
            (state >> 11) as f64 / (1u64 << 53) as f64
        };
        let threshold = 1.0 + REACH_SLACK;
        for trial in 0..20 {
            // Mostly inside the press gamut, a few cells reaching beyond it.
            let raw: Vec<f64> = (0..BANDS * SECTORS)
                .map(|_| {
                    if next() < 0.02 * trial as f64 / 10.0 {
                        1.0 + next()
                    } else {
                        next() * 1.02
                    }
                })
                .collect();
            let quiet = quiet_cells_to_zero(raw.clone());
            assert!(quiet.iter().filter(|&&v| v == 0.0).count() > 0, "trial {trial}");
            for _ in 0..20_000 {
                let (i, h) = (next() * 104.0 - 2.0, next() * 360.0);
                let (a, b) = (reach_at(&raw, i, h), reach_at(&quiet, i, h));
                assert!(
                    a == b || (a <= threshold && b <= threshold),
                    "trial {trial}: {a} against {b} at I {i}, h {h}"
                );
            }
        }
    }

    #[test]
    fn the_focal_point_lies_on_the_line_through_both_cusps() {
        // A press cusp at I 80, C 60 and a source cusp at I 92, C 90 (a
        // light yellow); the press black at I 20.
        let dest = CuspCurve {
            hues: vec![0.0, 180.0],
            points: vec![(80.0, 60.0), (80.0, 60.0)],
        };
        let drops = focus_drops(&dest, 20.0, &|_| Some((92.0, 90.0)));
        // Slope (92 - 80) / (90 - 60) = 0.4: the axis 24 below the press cusp.
        assert!(drops.iter().all(|&d| (d - 24.0).abs() < 1e-9), "{drops:?}");
        // A press black at I 56: no deeper than halfway down to it (12).
        let shallow = focus_drops(&dest, 56.0, &|_| Some((92.0, 90.0)));
        assert!(
            shallow.iter().all(|&d| (d - FOCUS_DROP_SHARE * (80.0 - 56.0)).abs() < 1e-9),
            "{shallow:?}"
        );
        // A source cusp darker than the press's, or less chromatic: no drop.
        assert!(focus_drops(&dest, 20.0, &|_| Some((70.0, 90.0))).iter().all(|&d| d == 0.0));
        assert!(focus_drops(&dest, 20.0, &|_| Some((95.0, 55.0))).iter().all(|&d| d == 0.0));
        // Barely more chromatic: the drop fades in from zero, and is bounded.
        let slight = focus_drops(&dest, 20.0, &|_| Some((81.0, 61.0)));
        assert!(slight.iter().all(|&d| d > 0.0 && d < FOCUS_DROP_MAX * 0.1), "{slight:?}");
        assert!((drop_at(&drops, 7.3) - 24.0).abs() < 1e-9);
    }

    /// A boundary's bytes give it back bit for bit; bytes of another length
    /// or holding a negative chroma are refused.
    #[test]
    fn a_boundary_keeps_its_bits_through_its_bytes() {
        let samples = (0..2000).map(|i| {
            let t = i as f64 / 2000.0;
            Lab::new(10.0 + 85.0 * t, 60.0 * (t * 37.0).cos(), 60.0 * (t * 37.0).sin())
        });
        let boundary = GamutBoundary::from_samples(samples, 10.0, 95.0);
        let bytes = boundary.to_bytes();
        let back = GamutBoundary::from_bytes(&bytes).expect("a boundary's bytes");
        assert_eq!(back.to_bytes(), bytes);
        assert_eq!((back.l_min, back.l_max), (boundary.l_min, boundary.l_max));
        assert!(GamutBoundary::from_bytes(&bytes[..bytes.len() - 8]).is_none());
        let mut negative = bytes.clone();
        negative[16..24].copy_from_slice(&(-1.0f64).to_le_bytes());
        assert!(GamutBoundary::from_bytes(&negative).is_none());
    }

    #[test]
    fn knee_compression_is_increasing_and_ends_on_the_boundary() {
        for rs in [1.05, 1.5, 2.0, 4.0] {
            assert!((knee_compression(rs, rs) - 1.0).abs() < 1e-12, "{rs}");
            assert_eq!(knee_compression(KNEE, rs), KNEE);
            let mut prev = knee_compression(KNEE, rs);
            let steps = 1000;
            for k in 1..=steps {
                let r = KNEE + (rs - KNEE) * k as f64 / steps as f64;
                let v = knee_compression(r, rs);
                assert!(v > prev, "rs {rs}: flat at {r}");
                prev = v;
            }
            // The slope just past the knee is 1 (no crease).
            let e = 1e-7;
            assert!(((knee_compression(KNEE + e, rs) - KNEE) / e - 1.0).abs() < 1e-3);
        }
    }
}
