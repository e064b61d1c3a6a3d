//! The Yule–Nielsen modified spectral Neugebauer model, applied to
//! tristimulus values (Viggiano 1990, "Modeling the color of multi-colored
//! halftones"; Yule & Nielsen 1951), with Demichel (1924) weights over the 16
//! Neugebauer primaries and a per-ink tone value increase curve.
//!
//! XYZ(c, m, y, k) = ( Σᵢ wᵢ · XYZᵢ^(1/n) )^n, where wᵢ are the Demichel
//! products of the effective coverages and XYZᵢ the colours of the 16
//! primaries (paper, the solids and their overprints). The Demichel sum is
//! exactly multilinear interpolation between the 16 corners of the unit
//! 4-cube, so it is evaluated as 15 linear interpolations (ink by ink), which
//! also gives the partial derivatives cheaply.
//!
//! Each ink's tone curve maps nominal coverage to effective coverage so that
//! the Murray–Davies tone value of that ink alone, computed from the
//! tristimulus value of its tone channel, TV = (T_paper − T)/(T_paper − T_solid),
//! equals a + 4·TVI₅₀·a·(1 − a): zero gain at 0 % and 100 %, the configured
//! gain at 50 %. The tone channel is the one that sees the ink as a
//! densitometer's complementary filter does: X for cyan (red filter), Y for
//! magenta (green) and black (visual), Z for yellow (blue). This is the
//! colorimetric tone value of ISO 12647-2:2013 / ISO 20654 practice (from
//! memory), and it matches the densitometric tone values on which the TVI
//! aims of ISO 12647-2 were set; the luminance factor Y alone barely sees
//! yellow (its solid keeps most of the paper's Y), so a gain set through Y
//! would make yellow midtones far too strong.

use super::PressModel;
use crate::colour::{D50, Lab, Xyz};
use crate::ink::Cmyk;

/// Sampling of the tone curves (effective coverage is interpolated linearly
/// between these points; the curves are smooth, so 1024 intervals keep the
/// error below 1e-6).
const TONE_STEPS: usize = 1024;

/// The tristimulus channel (0 X, 1 Y, 2 Z) that defines each ink's tone value:
/// cyan X, magenta Y, yellow Z, black Y.
pub const TONE_CHANNEL: [usize; 4] = [0, 1, 2, 1];

/// Everything that defines a Neugebauer model.
#[derive(Debug, Clone, PartialEq)]
pub struct NeugebauerParams {
    /// XYZ (absolute, D50) of the 16 primaries, indexed by a bit mask:
    /// bit 0 cyan, bit 1 magenta, bit 2 yellow, bit 3 black.
    pub primaries: [Xyz; 16],
    /// Yule–Nielsen n-factor (1 = Murray–Davies additivity).
    pub n: f64,
    /// Tone value increase at 50 % nominal, per ink (C, M, Y, K), as
    /// fractions, measured on the ink's [`TONE_CHANNEL`].
    pub tvi50: [f64; 4],
}

/// Nominal → effective coverage for one ink, tabulated.
#[derive(Debug, Clone)]
pub struct ToneCurve {
    /// TONE_STEPS + 1 samples of the curve.
    table: Box<[f64]>,
}

impl ToneCurve {
    /// The curve for one ink whose tone channel reads `paper_y` on paper and
    /// `solid_y` on the solid, with Yule–Nielsen factor `n` and gain `tvi50`.
    fn new(paper_y: f64, solid_y: f64, n: f64, tvi50: f64) -> ToneCurve {
        let pr = paper_y.max(0.0).powf(1.0 / n);
        let sr = solid_y.max(0.0).powf(1.0 / n);
        let span = pr - sr;
        let table = (0..=TONE_STEPS)
            .map(|i| {
                let a = i as f64 / TONE_STEPS as f64;
                let tone = (a + 4.0 * tvi50 * a * (1.0 - a)).clamp(0.0, 1.0);
                let y = paper_y - tone * (paper_y - solid_y);
                if span.abs() < 1e-12 {
                    tone
                } else {
                    ((pr - y.max(0.0).powf(1.0 / n)) / span).clamp(0.0, 1.0)
                }
            })
            .collect();
        ToneCurve { table }
    }

    /// Segment index and position inside it for nominal coverage `a`.
    #[inline(always)]
    fn locate(&self, a: f64) -> (usize, f64) {
        // `max` then `min` also maps NaN to 0 (max returns the non-NaN
        // operand), which `clamp` would pass through.
        #[allow(clippy::manual_clamp)]
        let x = a.max(0.0).min(1.0) * TONE_STEPS as f64;
        let i = (x as usize).min(TONE_STEPS - 1);
        (i, x - i as f64)
    }

    /// Effective coverage for nominal coverage `a` (clamped to 0..1).
    #[inline(always)]
    pub fn effective(&self, a: f64) -> f64 {
        let (i, t) = self.locate(a);
        let (lo, hi) = (self.table[i], self.table[i + 1]);
        lo + t * (hi - lo)
    }

    /// Effective coverage and its derivative with respect to nominal coverage
    /// (the slope of the tabulated segment; at and beyond the ends, the
    /// one-sided slope at the end).
    #[inline(always)]
    pub fn effective_with_slope(&self, a: f64) -> (f64, f64) {
        let (i, t) = self.locate(a);
        let (lo, hi) = (self.table[i], self.table[i + 1]);
        (lo + t * (hi - lo), (hi - lo) * TONE_STEPS as f64)
    }
}

/// Entries of the tables of [`fast_pow`]: 64 intervals of the mantissa for
/// the logarithm, 64 steps of 2^(j/64) for the exponential.
const POW_TABLE: usize = 64;

/// ln(x) for x in [0.5, 2] by the series 2·atanh(z), z = (x − 1)/(x + 1),
/// |z| ≤ 1/3, summed to z⁴¹ (remainder below 1e-20): the table values of
/// [`fast_pow`], computed at compile time.
const fn series_ln(x: f64) -> f64 {
    let z = (x - 1.0) / (x + 1.0);
    let z2 = z * z;
    let mut term = z;
    let mut sum = 0.0;
    let mut k = 1;
    while k <= 41 {
        sum += term / k as f64;
        term *= z2;
        k += 2;
    }
    2.0 * sum
}

/// e^x for |x| ≤ 1 by its Taylor series to the 25th power (remainder below 1e-25).
const fn series_exp(x: f64) -> f64 {
    let mut term = 1.0;
    let mut sum = 1.0;
    let mut k = 1;
    while k <= 25 {
        term *= x / k as f64;
        sum += term;
        k += 1;
    }
    sum
}

/// Per mantissa interval i (mantissa m in [1 + i/64, 1 + (i+1)/64)): the
/// reciprocal of the interval's centre, rounded, and −ln of that rounded value.
const LOG_TABLE: [(f64, f64); POW_TABLE] = {
    let mut t = [(0.0, 0.0); POW_TABLE];
    let mut i = 0;
    while i < POW_TABLE {
        let inv = 1.0 / (1.0 + (i as f64 + 0.5) / POW_TABLE as f64);
        t[i] = (inv, -series_ln(inv));
        i += 1;
    }
    t
};

/// 2^(j/64), j = 0..63.
const EXP_TABLE: [f64; POW_TABLE] = {
    let mut t = [0.0; POW_TABLE];
    let mut j = 0;
    while j < POW_TABLE {
        t[j] = series_exp(j as f64 * std::f64::consts::LN_2 / POW_TABLE as f64);
        j += 1;
    }
    t
};

/// The part of ln 2 that the f64 `LN_2` leaves out (ln 2 − LN_2).
const LN_2_LOW: f64 = 2.319_046_813_846_299_6e-17;

/// ln 2 cut to 40 bits after the point, so that its product with an exponent
/// (below 2¹¹ in magnitude) or a table step count (below 2¹³) is exact, and
/// the rest of ln 2.
const LN_2_HI: f64 = ((std::f64::consts::LN_2 * (1u64 << 40) as f64) as u64) as f64 / (1u64 << 40) as f64;
const LN_2_LO: f64 = (std::f64::consts::LN_2 - LN_2_HI) + LN_2_LOW;

/// Adding and subtracting 1.5·2⁵² rounds an f64 of magnitude below 2⁵¹ to
/// the nearest integer without a call (the baseline x86-64 target has no
/// rounding instruction).
const ROUNDER: f64 = 6_755_399_441_055_744.0;

/// s^n for s > 0 (0 for s ≤ 1e-300 or NaN), to a relative error below
/// 2e-15 · (2 + |n·ln s|) (the rounding of n·ln s, which no method avoids;
/// for the model's XYZ, a billionth of a CIELAB unit):
/// exp(n·ln s) by the table methods of Tang ("Table-driven implementation
/// of the logarithm function", ACM TOMS 16, 1990, and "… of the exponential
/// function", ACM TOMS 15, 1989): the logarithm from 64 intervals of the
/// mantissa and a series in the small remainder, the exponential from
/// 2^(j/64) and a series on |r| ≤ ln 2 / 128. Plain multiplications and
/// additions only (no fused multiply-add or rounding call, which the
/// baseline target lacks), inlined and without the special cases of the
/// library `powf`, so the three channels of a colour run side by side. The
/// tests compare it with `powf`.
#[inline(always)]
fn fast_pow(s: f64, n: f64) -> f64 {
    if s.is_nan() || s <= 1e-300 {
        return 0.0;
    }
    // ln s = e·ln 2 + ln(1/inv) + ln(1 + r), r = m·inv − 1, |r| < 1/128.
    let bits = s.to_bits();
    let e = (((bits >> 52) & 0x7ff) as i64 - 1023) as f64;
    let m = f64::from_bits((bits & 0x000f_ffff_ffff_ffff) | 0x3ff0_0000_0000_0000);
    let (inv, ln_c) = LOG_TABLE[((bits >> 46) & (POW_TABLE as u64 - 1)) as usize];
    let r = m * inv - 1.0;
    let r2 = r * r;
    // ln(1 + r) to r⁸ (remainder below 1e-19).
    let odd = r + r2 * (r * (1.0 / 3.0) - 0.5);
    let tail = (r * 0.2 - 0.25) + r2 * (r * (1.0 / 7.0) - 1.0 / 6.0) - r2 * r2 * 0.125;
    let ln_m = ln_c + (odd + r2 * r2 * tail);
    let y = n * (e * LN_2_HI + ln_m) + n * (e * LN_2_LO);
    // e^y = 2^(k/64) · e^r, r = y − k·ln 2/64.
    if y < -700.0 {
        return 0.0;
    }
    let k = (y * (POW_TABLE as f64 / std::f64::consts::LN_2) + ROUNDER) - ROUNDER;
    let r = (y - k * (LN_2_HI / POW_TABLE as f64)) - k * (LN_2_LO / POW_TABLE as f64);
    let ki = k as i64;
    let (q, j) = (ki.div_euclid(POW_TABLE as i64), ki.rem_euclid(POW_TABLE as i64) as usize);
    let r2 = r * r;
    // e^r to r⁶ (|r| ≤ 0.0055: remainder below 1e-18).
    let p = r + r2 * (0.5 + r * (1.0 / 6.0)) + r2 * r2 * ((1.0 / 24.0 + r * (1.0 / 120.0)) + r2 * (1.0 / 720.0));
    let scale = f64::from_bits(((q + 1023).clamp(1, 2046) as u64) << 52);
    EXP_TABLE[j] * scale * (1.0 + p)
}

/// How the final power `S^n` is taken: n = 2, 2.5 and 3 by multiplications
/// (and a square root), any other n by `powf`.
#[derive(Debug, Clone, Copy, PartialEq)]
enum Power {
    Square,
    TwoAndHalf,
    Cube,
    General(f64),
}

impl Power {
    fn new(n: f64) -> Power {
        match n {
            2.0 => Power::Square,
            2.5 => Power::TwoAndHalf,
            3.0 => Power::Cube,
            _ => Power::General(n),
        }
    }

    #[inline(always)]
    fn apply(self, s: f64) -> f64 {
        let s = s.max(0.0);
        match self {
            Power::Square => s * s,
            Power::TwoAndHalf => s * s * s.sqrt(),
            Power::Cube => s * s * s,
            Power::General(n) => fast_pow(s, n),
        }
    }

    /// `S^n` and its derivative `n·S^(n−1)`.
    #[inline(always)]
    fn apply_with_derivative(self, s: f64) -> (f64, f64) {
        let s = s.max(0.0);
        match self {
            Power::Square => (s * s, 2.0 * s),
            Power::Cube => (s * s * s, 3.0 * s * s),
            Power::TwoAndHalf => {
                let r = s.sqrt();
                (s * s * r, 2.5 * s * r)
            }
            Power::General(n) => {
                if s <= 0.0 {
                    (0.0, 0.0)
                } else {
                    let p = fast_pow(s, n);
                    (p, n * p / s)
                }
            }
        }
    }
}

/// A ready-to-evaluate Yule–Nielsen Neugebauer model.
#[derive(Debug, Clone)]
pub struct NeugebauerModel {
    params: NeugebauerParams,
    /// XYZᵢ^(1/n), per primary.
    roots: [[f64; 3]; 16],
    /// (XYZᵢ / XYZ of the D50 white)^(1/n), per primary: the Demichel sum of
    /// these raised to n/3 is CIELAB's f(X/Xn), f(Y/Yn), f(Z/Zn).
    white_roots: [[f64; 3]; 16],
    /// n / 3.
    third: f64,
    power: Power,
    curves: [ToneCurve; 4],
}

/// a + t·(b − a) per coordinate.
#[inline(always)]
pub(super) fn lerp3(a: [f64; 3], b: [f64; 3], t: f64) -> [f64; 3] {
    [a[0] + t * (b[0] - a[0]), a[1] + t * (b[1] - a[1]), a[2] + t * (b[2] - a[2])]
}

/// a − b per coordinate.
#[inline(always)]
pub(super) fn sub3(a: [f64; 3], b: [f64; 3]) -> [f64; 3] {
    [a[0] - b[0], a[1] - b[1], a[2] - b[2]]
}

const KAPPA: f64 = 24389.0 / 27.0;

/// ε^(1/3) = 6/29: CIELAB's f(t) is the cube root above this value of f.
const F_EPSILON: f64 = 6.0 / 29.0;

/// CIE 15:2004 f(t) for CIELAB of one channel, t = X/Xn, and its derivative
/// with respect to the Demichel root sum `s` of that channel, where t = sⁿ
/// (the primaries' roots normalised by the white): f = s^(n/3) in the
/// cube-root range, one power for the Yule–Nielsen exponent and the cube
/// root together; below it the linear segment in t = f³.
#[inline(always)]
fn lab_f_of_root_sum(s: f64, third: f64) -> f64 {
    let f = fast_pow(s, third);
    if f > F_EPSILON { f } else { (KAPPA * (f * f * f) + 16.0) / 116.0 }
}

/// [`lab_f_of_root_sum`] and its derivative df/ds (`n` = 3·`third`).
#[inline(always)]
fn lab_f_of_root_sum_with_derivative(s: f64, third: f64) -> (f64, f64) {
    if s.is_nan() || s <= 0.0 {
        return (16.0 / 116.0, 0.0);
    }
    let f = fast_pow(s, third);
    if f > F_EPSILON {
        (f, third * f / s)
    } else {
        let t = f * f * f;
        ((KAPPA * t + 16.0) / 116.0, KAPPA / 116.0 * 3.0 * third * t / s)
    }
}

/// Σ wᵢ·rᵢ by multilinear interpolation over the 16 primaries' values `r`,
/// ink by ink (c, m, y, k), and its derivative along each ink (rows c, m,
/// y, k) when asked.
#[inline(always)]
fn demichel_sum(r: &[[f64; 3]; 16], e: [f64; 4]) -> [f64; 3] {
    let [c, m, y, k] = e;
    let c8: [[f64; 3]; 8] = std::array::from_fn(|j| lerp3(r[2 * j], r[2 * j + 1], c));
    let m4: [[f64; 3]; 4] = std::array::from_fn(|j| lerp3(c8[2 * j], c8[2 * j + 1], m));
    let y2 = [lerp3(m4[0], m4[1], y), lerp3(m4[2], m4[3], y)];
    lerp3(y2[0], y2[1], k)
}

/// [`demichel_sum`] and its derivative along each effective coverage.
#[inline(always)]
fn demichel_sum_with_derivative(r: &[[f64; 3]; 16], e: [f64; 4]) -> ([f64; 3], [[f64; 3]; 4]) {
    let [ec, em, ey, ek] = e;
    // Values after interpolating along c, and their derivatives along c.
    let c8: [[f64; 3]; 8] = std::array::from_fn(|j| lerp3(r[2 * j], r[2 * j + 1], ec));
    let dc8: [[f64; 3]; 8] = std::array::from_fn(|j| sub3(r[2 * j + 1], r[2 * j]));
    let m4: [[f64; 3]; 4] = std::array::from_fn(|j| lerp3(c8[2 * j], c8[2 * j + 1], em));
    let dc4: [[f64; 3]; 4] = std::array::from_fn(|j| lerp3(dc8[2 * j], dc8[2 * j + 1], em));
    let dm4: [[f64; 3]; 4] = std::array::from_fn(|j| sub3(c8[2 * j + 1], c8[2 * j]));
    let y2 = [lerp3(m4[0], m4[1], ey), lerp3(m4[2], m4[3], ey)];
    let dc2 = [lerp3(dc4[0], dc4[1], ey), lerp3(dc4[2], dc4[3], ey)];
    let dm2 = [lerp3(dm4[0], dm4[1], ey), lerp3(dm4[2], dm4[3], ey)];
    let dy2 = [sub3(m4[1], m4[0]), sub3(m4[3], m4[2])];
    let s = lerp3(y2[0], y2[1], ek);
    let ds = [
        lerp3(dc2[0], dc2[1], ek),
        lerp3(dm2[0], dm2[1], ek),
        lerp3(dy2[0], dy2[1], ek),
        sub3(y2[1], y2[0]),
    ];
    (s, ds)
}

impl NeugebauerModel {
    pub fn new(params: NeugebauerParams) -> NeugebauerModel {
        let n = params.n;
        let inv = 1.0 / n;
        let roots = params
            .primaries
            .map(|p| [p.x.max(0.0).powf(inv), p.y.max(0.0).powf(inv), p.z.max(0.0).powf(inv)]);
        let paper = params.primaries[0].to_array();
        let curves = std::array::from_fn(|i| {
            let ch = TONE_CHANNEL[i];
            ToneCurve::new(paper[ch], params.primaries[1 << i].to_array()[ch], n, params.tvi50[i])
        });
        let w = D50.xyz;
        let white_roots = params.primaries.map(|p| {
            [
                (p.x / w.x).max(0.0).powf(inv),
                (p.y / w.y).max(0.0).powf(inv),
                (p.z / w.z).max(0.0).powf(inv),
            ]
        });
        let power = Power::new(n);
        NeugebauerModel {
            params,
            roots,
            white_roots,
            third: n / 3.0,
            power,
            curves,
        }
    }

    pub fn params(&self) -> &NeugebauerParams {
        &self.params
    }

    /// The tone curve of one ink (0 cyan, 1 magenta, 2 yellow, 3 black).
    pub fn tone_curve(&self, ink: usize) -> &ToneCurve {
        &self.curves[ink]
    }

    /// Effective (post tone value increase) coverage of each ink.
    #[inline(always)]
    pub fn effective(&self, ink: Cmyk) -> [f64; 4] {
        [
            self.curves[0].effective(ink.c),
            self.curves[1].effective(ink.m),
            self.curves[2].effective(ink.y),
            self.curves[3].effective(ink.k),
        ]
    }

    /// Effective coverage of each ink and its slope by nominal coverage.
    #[inline(always)]
    fn effective_with_slopes(&self, ink: Cmyk) -> ([f64; 4], [f64; 4]) {
        let [c, m, y, k] = [0, 1, 2, 3].map(|i| self.curves[i].effective_with_slope(ink.to_array()[i]));
        ([c.0, m.0, y.0, k.0], [c.1, m.1, y.1, k.1])
    }

    /// The model evaluated on effective coverages (no tone curve).
    #[inline(always)]
    pub fn xyz_effective(&self, e: [f64; 4]) -> Xyz {
        let s = demichel_sum(&self.roots, e);
        Xyz::new(self.power.apply(s[0]), self.power.apply(s[1]), self.power.apply(s[2]))
    }

    /// XYZ and its derivative d(X, Y, Z)/d(c, m, y, k) with respect to the
    /// nominal coverages (rows X, Y, Z; columns c, m, y, k).
    pub fn xyz_jacobian(&self, ink: Cmyk) -> (Xyz, [[f64; 4]; 3]) {
        let (e, slopes) = self.effective_with_slopes(ink);
        let (s, ds) = demichel_sum_with_derivative(&self.roots, e);
        let mut jac = [[0.0; 4]; 3];
        let mut out = [0.0; 3];
        for ch in 0..3 {
            let (v, dv) = self.power.apply_with_derivative(s[ch]);
            out[ch] = v;
            for ink in 0..4 {
                jac[ch][ink] = dv * ds[ink][ch] * slopes[ink];
            }
        }
        (Xyz::from_array(out), jac)
    }

    /// CIELAB (D50) of a build: the Demichel sum of the primaries' roots
    /// normalised by the white, raised to n/3, is CIELAB's f() of each
    /// channel ([`lab_f_of_root_sum`]); the same colour as CIELAB of
    /// [`PressModel::xyz`] (CIE 15:2004) to rounding, with one power per
    /// channel instead of a power and a cube root.
    #[inline(always)]
    pub fn lab_fused(&self, ink: Cmyk) -> Lab {
        let s = demichel_sum(&self.white_roots, self.effective(ink));
        let t = self.third;
        let (fx, fy, fz) = (lab_f_of_root_sum(s[0], t), lab_f_of_root_sum(s[1], t), lab_f_of_root_sum(s[2], t));
        Lab::new(116.0 * fy - 16.0, 500.0 * (fx - fy), 200.0 * (fy - fz))
    }

    /// [`NeugebauerModel::lab_fused`] and its derivative with respect to the
    /// nominal coverages (rows L*, a*, b*; columns c, m, y, k).
    #[inline(always)]
    pub fn lab_jacobian_fused(&self, ink: Cmyk) -> (Lab, [[f64; 4]; 3]) {
        let (e, slopes) = self.effective_with_slopes(ink);
        let (s, ds) = demichel_sum_with_derivative(&self.white_roots, e);
        let t = self.third;
        let (fx, gx) = lab_f_of_root_sum_with_derivative(s[0], t);
        let (fy, gy) = lab_f_of_root_sum_with_derivative(s[1], t);
        let (fz, gz) = lab_f_of_root_sum_with_derivative(s[2], t);
        let mut jac = [[0.0; 4]; 3];
        for ink in 0..4 {
            let (dx, dy, dz) = (
                gx * ds[ink][0] * slopes[ink],
                gy * ds[ink][1] * slopes[ink],
                gz * ds[ink][2] * slopes[ink],
            );
            jac[0][ink] = 116.0 * dy;
            jac[1][ink] = 500.0 * (dx - dy);
            jac[2][ink] = 200.0 * (dy - dz);
        }
        (Lab::new(116.0 * fy - 16.0, 500.0 * (fx - fy), 200.0 * (fy - fz)), jac)
    }
}

impl PressModel for NeugebauerModel {
    #[inline]
    fn xyz(&self, ink: Cmyk) -> Xyz {
        self.xyz_effective(self.effective(ink))
    }

    #[inline]
    fn lab(&self, ink: Cmyk) -> Lab {
        self.lab_fused(ink)
    }

    fn lab_jacobian(&self, ink: Cmyk) -> (Lab, [[f64; 4]; 3]) {
        self.lab_jacobian_fused(ink)
    }
}

/// Derives the XYZ of a primary printed with black on top from the primary
/// without black, the black solid and the paper: the inks act as filters, so
/// the light that passes both layers multiplies, once a first-surface
/// reflection `surface` (luminance factor the sheet returns before light
/// enters the ink, the same for every primary) is set aside:
/// R(P+K) = s + (R(P) − s)·(R(K) − s)/(R(paper) − s), per tristimulus channel.
pub fn overprint_black(primary: Xyz, black: Xyz, paper: Xyz, surface: f64) -> Xyz {
    let f = |p: f64, k: f64, w: f64| {
        let s = surface * w.min(1.0);
        s + (p - s).max(0.0) * (k - s).max(0.0) / (w - s).max(1e-9)
    };
    Xyz::new(
        f(primary.x, black.x, paper.x),
        f(primary.y, black.y, paper.y),
        f(primary.z, black.z, paper.z),
    )
}

/// Fills the 8 primaries with black from the 8 without, by [`overprint_black`].
pub fn complete_primaries(without_black: [Xyz; 8], black_solid: Xyz, surface: f64) -> [Xyz; 16] {
    let paper = without_black[0];
    let mut all = [Xyz::default(); 16];
    all[..8].copy_from_slice(&without_black);
    all[8] = black_solid;
    for i in 1..8 {
        all[8 + i] = overprint_black(without_black[i], black_solid, paper, surface);
    }
    all
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::press::finite_difference_lab_jacobian;

    fn model(n: f64) -> NeugebauerModel {
        let labs = [
            Lab::new(95.0, 0.0, -2.0),
            Lab::new(55.0, -37.0, -50.0),
            Lab::new(48.0, 74.0, -3.0),
            Lab::new(24.0, 22.0, -46.0),
            Lab::new(89.0, -5.0, 93.0),
            Lab::new(50.0, -65.0, 27.0),
            Lab::new(47.0, 68.0, 48.0),
            Lab::new(23.0, 0.0, 0.0),
        ];
        let primaries = complete_primaries(labs.map(|l| l.to_xyz()), Lab::new(16.0, 0.0, 0.0).to_xyz(), 0.006);
        NeugebauerModel::new(NeugebauerParams {
            primaries,
            n,
            tvi50: [0.14, 0.15, 0.13, 0.17],
        })
    }

    /// Demichel (1924) weights written out term by term, the textbook form.
    fn xyz_by_demichel_sum(m: &NeugebauerModel, e: [f64; 4]) -> Xyz {
        let n = m.params.n;
        let mut acc = [0.0; 3];
        for (i, p) in m.params.primaries.iter().enumerate() {
            let w: f64 = (0..4).map(|b| if i >> b & 1 == 1 { e[b] } else { 1.0 - e[b] }).product();
            for (a, v) in acc.iter_mut().zip(p.to_array()) {
                *a += w * v.powf(1.0 / n);
            }
        }
        Xyz::from_array(acc.map(|a| a.powf(n)))
    }

    #[test]
    fn interpolation_form_equals_demichel_sum() {
        for n in [1.0, 2.0, 2.7] {
            let m = model(n);
            for e in [[0.3, 0.7, 0.1, 0.9], [0.0, 1.0, 0.5, 0.25], [0.99, 0.01, 0.6, 0.0]] {
                let a = m.xyz_effective(e).to_array();
                let b = xyz_by_demichel_sum(&m, e).to_array();
                for (x, y) in a.iter().zip(b) {
                    assert!((x - y).abs() < 1e-12, "n {n} at {e:?}: {x} vs {y}");
                }
            }
        }
    }

    #[test]
    fn analytic_jacobian_matches_central_differences() {
        for n in [2.0, 2.6] {
            let m = model(n);
            for ink in [
                Cmyk::new(0.2, 0.3, 0.4, 0.1),
                Cmyk::new(0.7, 0.05, 0.9, 0.5),
                Cmyk::new(0.5, 0.4, 0.4, 0.0),
                Cmyk::new(0.95, 0.9, 0.85, 0.8),
            ] {
                let (lab, jac) = m.lab_jacobian(ink);
                let (lab_fd, fd) = finite_difference_lab_jacobian(&m, ink);
                assert!((lab.l - lab_fd.l).abs() < 1e-12);
                for r in 0..3 {
                    for c in 0..4 {
                        let tol = 1e-3 * (1.0 + fd[r][c].abs());
                        assert!(
                            (jac[r][c] - fd[r][c]).abs() < tol,
                            "n {n} {ink:?} [{r}][{c}]: {} vs {}",
                            jac[r][c],
                            fd[r][c]
                        );
                    }
                }
            }
        }
    }

    #[test]
    fn fused_lab_equals_cielab_of_the_modelled_xyz() {
        // Reference: CIE 15:2004 CIELAB (Lab::from_xyz, library cube root) of
        // the model's XYZ. The darkest builds (L* below 8, all inks solid)
        // take the linear segment of f.
        let mut worst: f64 = 0.0;
        let mut linear = 0;
        for n in [1.0, 1.3986, 2.0, 2.94, 3.0, 8.0] {
            let m = model(n);
            for i in 0..6usize.pow(4) {
                let v: [f64; 4] = std::array::from_fn(|a| (i / 6usize.pow(a as u32) % 6) as f64 / 5.0);
                let ink = Cmyk::from_array(v);
                let reference = Lab::from_xyz(m.xyz(ink));
                let fused = m.lab(ink);
                linear += usize::from(reference.l < 8.0);
                worst = worst
                    .max((fused.l - reference.l).abs())
                    .max((fused.a - reference.a).abs())
                    .max((fused.b - reference.b).abs());
                let (with_jacobian, _) = m.lab_jacobian(ink);
                assert_eq!(with_jacobian, fused);
            }
        }
        assert!(linear > 0, "no build reached the linear segment");
        assert!(worst < 1e-10, "{worst}");
    }

    #[test]
    fn fast_pow_equals_powf() {
        // Reference: the library powf (correctly rounded to within an ulp). The
        // error allowed grows with |n·ln s|, whose rounding no method avoids.
        let mut worst: f64 = 0.0;
        for n in [1.0, 1.3986, 2.0, 2.94, 3.7, 8.0] {
            for i in 0..=200_000 {
                // s from 1e-12 to 2, evenly in the logarithm: every mantissa interval, many exponents.
                let s = 2.0 * (1e-12f64).powf(1.0 - i as f64 / 200_000.0);
                let (a, b) = (fast_pow(s, n), s.powf(n));
                worst = worst.max(((a - b) / b).abs() / (2.0 + (n * s.ln()).abs()));
            }
        }
        // Measured: 1.3e-15 (plain multiplications, no fused multiply-add).
        assert!(worst < 2e-15, "{worst}");
        assert_eq!(fast_pow(0.0, 2.5), 0.0);
        assert_eq!(fast_pow(-1.0, 2.5), 0.0);
        assert_eq!(fast_pow(f64::NAN, 2.5), 0.0);
        assert!((fast_pow(1.0, 1.3986) - 1.0).abs() < 1e-15);
    }

    #[test]
    fn special_powers_equal_powf() {
        for n in [2.0, 2.5, 3.0] {
            let p = Power::new(n);
            assert_ne!(p, Power::General(n));
            for s in [0.0, 0.1, 0.5, 0.93] {
                let (v, d) = p.apply_with_derivative(s);
                assert!((p.apply(s) - s.powf(n)).abs() < 1e-15 && (v - s.powf(n)).abs() < 1e-15);
                if s > 0.0 {
                    assert!((d - n * s.powf(n - 1.0)).abs() < 1e-14);
                }
            }
        }
    }

    #[test]
    fn tone_curve_ends_are_exact() {
        let m = model(2.0);
        for i in 0..4 {
            assert_eq!(m.tone_curve(i).effective(0.0), 0.0);
            assert!((m.tone_curve(i).effective(1.0) - 1.0).abs() < 1e-15);
        }
    }

    #[test]
    fn nan_coverage_does_not_panic() {
        let m = model(2.0);
        let xyz = m.xyz(Cmyk::new(f64::NAN, 0.5, 0.5, 0.5));
        assert!(xyz.y.is_finite());
    }
}
