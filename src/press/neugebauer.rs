//! The Yule–Nielsen modified spectral Neugebauer model, applied to
//! tristimulus values (Viggiano 1990, "Modeling the color of multi-colored
//! halftones"; Yule & Nielsen 1951), with Demichel (1924) weights over the 16
//! Neugebauer primaries and a per-ink tone value increase curve.
//!
//! XYZ(c, m, y, k) = ( Σᵢ wᵢ · XYZᵢ^(1/n) )^n, where wᵢ are the Demichel
//! products of the effective coverages and XYZᵢ the colours of the 16
//! primaries (paper, the solids and their overprints).
//!
//! Each ink's tone curve maps nominal coverage to effective coverage so that
//! the Murray–Davies tone value computed from the luminance factor Y of that
//! ink alone, TV = (Y_paper − Y)/(Y_paper − Y_solid), equals
//! a + 4·TVI₅₀·a·(1 − a): zero gain at 0 % and 100 %, the configured gain at 50 %.

use super::PressModel;
use crate::colour::{Lab, Xyz};
use crate::ink::Cmyk;

/// Sampling of the tone curves (effective coverage is interpolated linearly
/// between these points; the curves are smooth, so 1024 intervals keep the
/// error below 1e-6).
const TONE_STEPS: usize = 1024;

/// Everything that defines a Neugebauer model.
#[derive(Debug, Clone, PartialEq)]
pub struct NeugebauerParams {
    /// XYZ (absolute, D50) of the 16 primaries, indexed by a bit mask:
    /// bit 0 cyan, bit 1 magenta, bit 2 yellow, bit 3 black.
    pub primaries: [Xyz; 16],
    /// Yule–Nielsen n-factor (1 = Murray–Davies additivity).
    pub n: f64,
    /// Tone value increase at 50 % nominal, per ink (C, M, Y, K), as fractions.
    pub tvi50: [f64; 4],
}

/// Nominal → effective coverage for one ink, tabulated.
#[derive(Debug, Clone)]
pub struct ToneCurve {
    table: Vec<f64>,
}

impl ToneCurve {
    /// The curve for one ink whose paper and solid have root luminance factors
    /// `paper_root` = Y_paper^(1/n) and `solid_root` = Y_solid^(1/n).
    fn new(paper_y: f64, solid_y: f64, n: f64, tvi50: f64) -> ToneCurve {
        let pr = paper_y.powf(1.0 / n);
        let sr = solid_y.powf(1.0 / n);
        let table = (0..=TONE_STEPS)
            .map(|i| {
                let a = i as f64 / TONE_STEPS as f64;
                let tone = (a + 4.0 * tvi50 * a * (1.0 - a)).clamp(0.0, 1.0);
                let y = paper_y - tone * (paper_y - solid_y);
                ((pr - y.powf(1.0 / n)) / (pr - sr)).clamp(0.0, 1.0)
            })
            .collect();
        ToneCurve { table }
    }

    /// Effective coverage for nominal coverage `a` (clamped to 0..1).
    #[inline]
    pub fn effective(&self, a: f64) -> f64 {
        let x = a.clamp(0.0, 1.0) * TONE_STEPS as f64;
        let i = (x as usize).min(TONE_STEPS - 1);
        let t = x - i as f64;
        self.table[i] + t * (self.table[i + 1] - self.table[i])
    }
}

/// A ready-to-evaluate Yule–Nielsen Neugebauer model.
#[derive(Debug, Clone)]
pub struct NeugebauerModel {
    params: NeugebauerParams,
    /// XYZᵢ^(1/n), per primary.
    roots: [[f64; 3]; 16],
    curves: [ToneCurve; 4],
}

impl NeugebauerModel {
    pub fn new(params: NeugebauerParams) -> NeugebauerModel {
        let n = params.n;
        let roots = params.primaries.map(|p| [p.x.max(0.0).powf(1.0 / n), p.y.max(0.0).powf(1.0 / n), p.z.max(0.0).powf(1.0 / n)]);
        let paper_y = params.primaries[0].y;
        let curves = std::array::from_fn(|i| ToneCurve::new(paper_y, params.primaries[1 << i].y, n, params.tvi50[i]));
        NeugebauerModel { params, roots, curves }
    }

    pub fn params(&self) -> &NeugebauerParams {
        &self.params
    }

    /// Effective (post tone value increase) coverage of each ink.
    #[inline]
    pub fn effective(&self, ink: Cmyk) -> [f64; 4] {
        [
            self.curves[0].effective(ink.c),
            self.curves[1].effective(ink.m),
            self.curves[2].effective(ink.y),
            self.curves[3].effective(ink.k),
        ]
    }

    /// The model evaluated on effective coverages (no tone curve).
    #[inline]
    pub fn xyz_effective(&self, e: [f64; 4]) -> Xyz {
        let mut acc = [0.0f64; 3];
        let [c, m, y, k] = e;
        // Demichel weights factorised ink by ink: w = Π (a or 1 − a).
        let wc = [1.0 - c, c];
        let wm = [1.0 - m, m];
        let wy = [1.0 - y, y];
        let wk = [1.0 - k, k];
        for (i, root) in self.roots.iter().enumerate() {
            let w = wc[i & 1] * wm[(i >> 1) & 1] * wy[(i >> 2) & 1] * wk[(i >> 3) & 1];
            acc[0] += w * root[0];
            acc[1] += w * root[1];
            acc[2] += w * root[2];
        }
        let n = self.params.n;
        Xyz::new(acc[0].powf(n), acc[1].powf(n), acc[2].powf(n))
    }
}

impl PressModel for NeugebauerModel {
    #[inline]
    fn xyz(&self, ink: Cmyk) -> Xyz {
        self.xyz_effective(self.effective(ink))
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
    Xyz::new(f(primary.x, black.x, paper.x), f(primary.y, black.y, paper.y), f(primary.z, black.z, paper.z))
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

