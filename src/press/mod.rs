//! Printing conditions and their forward models: CMYK coverage → the colour
//! printed on the sheet (CIEXYZ and CIELAB, D50, absolute).
//!
//! A [`PressModel`] is shared by every thread: it is `Send + Sync`, does not
//! allocate per call and is cheap enough to be called millions of times.

pub mod builtin;
pub mod characterize;
pub mod condition_file;
pub mod correction;
pub mod figures;
pub mod fit;
pub mod gamut;
pub mod icc_model;
mod neugebauer;
mod params;

pub use condition_file::load_condition;
pub use correction::{Axis, CorrectedModel, Correction};
pub use neugebauer::{NeugebauerModel, NeugebauerParams, TONE_CHANNEL, ToneCurve, complete_primaries, overprint_black};
pub use params::{AIM_INKS, AIM_NAMES, Aims, BLACK_OVERPRINT_INKS, BLACK_OVERPRINT_NAMES, ModelParams};

use crate::colour::{D50, Lab, Xyz};
use crate::ink::Cmyk;
use crate::settings::BlackGeneration;
use std::fmt::Debug;
use std::sync::Arc;

/// A forward model of a printing condition.
pub trait PressModel: Send + Sync + Debug {
    /// Absolute CIEXYZ (D50 illuminant, 2° observer, Y = 1 for the perfect
    /// diffuser) printed for the given coverage. Coverage outside 0..1 is
    /// clamped.
    fn xyz(&self, ink: Cmyk) -> Xyz;

    /// Absolute CIELAB D50 printed for the given coverage.
    fn lab(&self, ink: Cmyk) -> Lab {
        Lab::from_xyz(self.xyz(ink))
    }

    /// The paper: what the sheet measures with no ink.
    fn paper_xyz(&self) -> Xyz {
        self.xyz(Cmyk::ZERO)
    }

    /// CIELAB and its derivative with respect to the nominal coverage
    /// fractions: rows L*, a*, b*; columns c, m, y, k. The default takes
    /// finite differences ([`finite_difference_lab_jacobian`]); models with an
    /// analytic derivative override it.
    fn lab_jacobian(&self, ink: Cmyk) -> (Lab, [[f64; 4]; 3]) {
        finite_difference_lab_jacobian(self, ink)
    }
}

/// Step of [`finite_difference_lab_jacobian`], in coverage fraction.
pub const JACOBIAN_STEP: f64 = 1e-5;

/// dLab/dCMYK by finite differences on the clamped coverage: central
/// differences inside 0..1, one-sided (inward) at the ends, so the result is
/// the derivative a model clamping its input has at its edge.
pub fn finite_difference_lab_jacobian<M: PressModel + ?Sized>(model: &M, ink: Cmyk) -> (Lab, [[f64; 4]; 3]) {
    let ink = ink.clamped();
    let base = ink.to_array();
    let lab = model.lab(ink);
    let mut jac = [[0.0; 4]; 3];
    for i in 0..4 {
        let lo = (base[i] - JACOBIAN_STEP).max(0.0);
        let hi = (base[i] + JACOBIAN_STEP).min(1.0);
        let mut a = base;
        let mut b = base;
        a[i] = lo;
        b[i] = hi;
        let la = model.lab(Cmyk::from_array(a)).to_array();
        let lb = model.lab(Cmyk::from_array(b)).to_array();
        for r in 0..3 {
            jac[r][i] = (lb[r] - la[r]) / (hi - lo);
        }
    }
    (lab, jac)
}

/// Conversion between absolute and media-relative colorimetry (ICC.1:2022
/// §6.3.2.2 and Annex A: relative XYZ = absolute XYZ scaled component-wise by
/// PCS white / media white).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct MediaWhite {
    scale: [f64; 3],
    /// The cube root of `scale` per channel.
    cbrt_scale: [f64; 3],
    pub white: Xyz,
}

/// ε^(1/3) = 6/29: CIELAB's f(t) is the cube root of t above this value of f.
const F_EPSILON: f64 = 6.0 / 29.0;

impl MediaWhite {
    pub fn new(white: Xyz) -> MediaWhite {
        let d = D50.xyz;
        let scale = [d.x / white.x, d.y / white.y, d.z / white.z];
        MediaWhite {
            scale,
            cbrt_scale: scale.map(f64::cbrt),
            white,
        }
    }

    /// Media-relative CIELAB from absolute CIELAB, as
    /// [`MediaWhite::relative_lab_from_absolute`] to rounding but without
    /// the round trip through XYZ where it can: where every channel's
    /// f(t) lies in the cube-root range of CIELAB against both whites,
    /// f(X/X_paper) = (X_n/X_paper)^(1/3)·f(X/X_n), so the relative f values
    /// are the absolute ones scaled (CIE 15:2004; the map is affine in L*,
    /// a*, b*). Elsewhere (the darkest colours) through XYZ.
    #[inline]
    pub fn relative_from_absolute_lab(&self, absolute: Lab) -> Lab {
        let fy = (absolute.l + 16.0) / 116.0;
        let f = [fy + absolute.a / 500.0, fy, fy - absolute.b / 200.0];
        let r: [f64; 3] = std::array::from_fn(|i| f[i] * self.cbrt_scale[i]);
        if (0..3).all(|i| f[i] > F_EPSILON && r[i] > F_EPSILON) {
            Lab::new(116.0 * r[1] - 16.0, 500.0 * (r[0] - r[1]), 200.0 * (r[1] - r[2]))
        } else {
            self.relative_lab_from_absolute(absolute)
        }
    }

    /// Absolute XYZ → media-relative XYZ (paper maps to the PCS white).
    #[inline]
    pub fn to_relative(&self, xyz: Xyz) -> Xyz {
        Xyz::new(xyz.x * self.scale[0], xyz.y * self.scale[1], xyz.z * self.scale[2])
    }

    /// Media-relative XYZ → absolute XYZ.
    #[inline]
    pub fn to_absolute(&self, xyz: Xyz) -> Xyz {
        Xyz::new(xyz.x / self.scale[0], xyz.y / self.scale[1], xyz.z / self.scale[2])
    }

    pub fn relative_lab(&self, absolute: Xyz) -> Lab {
        Lab::from_xyz(self.to_relative(absolute))
    }

    pub fn absolute_lab_from_relative(&self, relative: Lab) -> Lab {
        Lab::from_xyz(self.to_absolute(relative.to_xyz()))
    }

    pub fn relative_lab_from_absolute(&self, absolute: Lab) -> Lab {
        self.relative_lab(absolute.to_xyz())
    }
}

/// Ink film mass per ink (C, M, Y, K) at 100 % coverage, g/m², for ink
/// consumption estimates: common practice for sheetfed offset on coated
/// paper, used when a condition gives none.
pub const DEFAULT_INK_FILM: [f64; 4] = [1.1, 1.1, 1.1, 1.2];

/// A printing condition: its model plus the defaults a job starts from.
#[derive(Debug, Clone)]
pub struct PrintingCondition {
    /// Short name used on the command line (`coated-offset`) or a file's stem.
    pub name: String,
    /// One line for people.
    pub description: String,
    pub model: Arc<dyn PressModel>,
    /// Default total area coverage limit as a fraction (3.0 = 300 %).
    pub tac: f64,
    /// Default black generation.
    pub black: BlackGeneration,
    /// Smallest dot the plate and press hold, fraction (0.02 = 2 %).
    pub min_dot: f64,
    /// Ink film mass at 100 % coverage per ink (C, M, Y, K), g/m².
    pub ink_film: [f64; 4],
    /// The characterization parameters the model was built from (built-in and
    /// TOML conditions); `None` when the model comes from elsewhere (an ICC profile).
    pub params: Option<ModelParams>,
    /// The lattice correction fitted to measurements on top of the physical
    /// model of `params`, if any.
    pub correction: Option<Arc<Correction>>,
    /// Where the characterization comes from (a measurement data set, or
    /// "from memory"), for people; empty when not known.
    pub source: String,
    /// Measured CIELAB at the aim builds (paper, solids, overprints, and
    /// the primaries with black), from the data the condition was fitted to:
    /// (name, nominal CMYK fractions, measured).
    pub measured: Vec<MeasuredAim>,
}

/// One measured aim of a condition fitted to data.
#[derive(Debug, Clone, PartialEq)]
pub struct MeasuredAim {
    pub name: String,
    pub ink: [f64; 4],
    pub lab: Lab,
}

/// Name and nominal CMYK of every aim build: the nine aims, then the seven
/// primaries with black.
pub fn aim_builds() -> impl Iterator<Item = (&'static str, [f64; 4])> {
    AIM_NAMES
        .iter()
        .copied()
        .zip(AIM_INKS)
        .chain(BLACK_OVERPRINT_NAMES.iter().copied().zip(BLACK_OVERPRINT_INKS))
}

impl PrintingCondition {
    /// A condition around any model; ink film figures default to
    /// [`DEFAULT_INK_FILM`] and there are no characterization parameters.
    pub fn new(
        name: impl Into<String>,
        description: impl Into<String>,
        model: Arc<dyn PressModel>,
        tac: f64,
        black: BlackGeneration,
        min_dot: f64,
    ) -> PrintingCondition {
        PrintingCondition {
            name: name.into(),
            description: description.into(),
            model,
            tac,
            black,
            min_dot,
            ink_film: DEFAULT_INK_FILM,
            params: None,
            correction: None,
            source: String::new(),
            measured: Vec::new(),
        }
    }

    /// A condition whose model is the Yule–Nielsen Neugebauer model built from
    /// `params`; the other defaults are given by the remaining fields, set
    /// afterwards as needed.
    pub fn from_params(
        name: impl Into<String>,
        description: impl Into<String>,
        params: ModelParams,
        tac: f64,
        black: BlackGeneration,
        min_dot: f64,
    ) -> PrintingCondition {
        PrintingCondition::from_fitted(name, description, params, None, tac, black, min_dot)
    }

    /// A condition whose model is the physical model of `params` with the
    /// lattice `correction` on top.
    pub fn from_fitted(
        name: impl Into<String>,
        description: impl Into<String>,
        params: ModelParams,
        correction: Option<Arc<Correction>>,
        tac: f64,
        black: BlackGeneration,
        min_dot: f64,
    ) -> PrintingCondition {
        let model = CorrectedModel::new(params.model(), correction.clone());
        let mut condition = PrintingCondition::new(name, description, Arc::new(model), tac, black, min_dot);
        condition.params = Some(params);
        condition.correction = correction;
        condition
    }

    /// The same condition with its source named.
    pub fn with_source(mut self, source: impl Into<String>) -> PrintingCondition {
        self.source = source.into();
        self
    }

    /// The same condition with other ink film figures.
    pub fn with_ink_film(mut self, ink_film: [f64; 4]) -> PrintingCondition {
        self.ink_film = ink_film;
        self
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn relative_lab_without_xyz_equals_the_round_trip_through_xyz() {
        // Reference: ICC.1:2022 media-relative colorimetry through XYZ
        // (relative_lab_from_absolute: CIE 15:2004 both ways). Papers with
        // and without optical brightener; colours from paper to below L* 8,
        // where CIELAB turns linear and the round trip is taken.
        for paper in [Lab::new(96.39, -0.97, -4.46), Lab::new(89.0, 0.5, 4.0), Lab::new(100.0, 0.0, 0.0)] {
            let media = MediaWhite::new(paper.to_xyz());
            let mut worst: f64 = 0.0;
            for l in 0..=100 {
                for a in (-120..=120).step_by(8) {
                    for b in (-120..=120).step_by(8) {
                        let abs = Lab::new(l as f64, a as f64 * (l as f64 / 100.0), b as f64 * (l as f64 / 100.0));
                        let (fast, reference) = (media.relative_from_absolute_lab(abs), media.relative_lab_from_absolute(abs));
                        worst = worst
                            .max((fast.l - reference.l).abs())
                            .max((fast.a - reference.a).abs())
                            .max((fast.b - reference.b).abs());
                    }
                }
            }
            assert!(worst < 1e-10, "{paper:?}: {worst}");
        }
    }
}
