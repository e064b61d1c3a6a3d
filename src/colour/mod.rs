//! Colour science with no I/O: XYZ, xyY, CIELAB, CIELCh, IPT, white points and
//! Bradford adaptation, RGB colour spaces, and colour difference formulas.
//!
//! Conventions: CIELAB is relative to the ICC PCS white D50 and the CIE 1931
//! 2° observer; chromatic adaptation is Bradford; colour differences are
//! CIEDE2000 unless named otherwise. Each submodule names its published source.

mod difference;
mod ipt;
mod lab;
mod matrix;
mod rgb;
mod xyz;

pub use difference::{De2000Terms, De2000Weights, ciede2000, ciede2000_terms, ciede2000_with, delta_e76, delta_e94};
pub use ipt::Ipt;
pub use lab::{Lab, Lch};
pub use matrix::Mat3;
pub use rgb::{EncodedRgb, LinearRgb, RgbConverter, RgbDefinition, RgbSpace, Transfer, from_code, rgb_to_xyz_matrix, to_code};
pub use xyz::{BRADFORD, D50, D65, WhitePoint, Xyy, Xyz, bradford_adaptation};
