//! Printing conditions and their forward models: CMYK coverage → the colour
//! printed on the sheet (CIEXYZ and CIELAB, D50, absolute).
//!
//! A [`PressModel`] is shared by every thread: it is `Send + Sync`, does not
//! allocate per call and is cheap enough to be called millions of times.

pub mod builtin;
pub mod icc_model;
mod neugebauer;

pub use neugebauer::{NeugebauerModel, NeugebauerParams, ToneCurve, complete_primaries, overprint_black};

use crate::colour::{D50, Lab, Xyz};
use crate::ink::Cmyk;
use crate::separation::BlackGeneration;
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
        MediaWhite { scale: [d.x / white.x, d.y / white.y, d.z / white.z], white }
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
}
