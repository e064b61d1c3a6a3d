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
pub use neugebauer::{
    NeugebauerModel, NeugebauerParams, TONE_CHANNEL, ToneCurve, complete_primaries, lab_with_derivative, overprint_black,
};
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
    pub white: Xyz,
}

impl MediaWhite {
    pub fn new(white: Xyz) -> MediaWhite {
        let d = D50.xyz;
        MediaWhite {
            scale: [d.x / white.x, d.y / white.y, d.z / white.z],
            white,
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
