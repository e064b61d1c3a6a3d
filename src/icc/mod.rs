//! ICC output profiles (device class `prtr`, CMYK data, CIELAB PCS) written
//! from a press model and a separation.
//!
//! A profile holds, per rendering intent, a CMYK → PCS table (AToB0/1/2), a
//! PCS → CMYK table (BToA0/1/2), a gamut table (PCS → one channel, 0 = in
//! gamut), the media white point, a description and a copyright
//! (ICC.1:2022 §8.2 and §8.5 list these as the tags an N-component LUT-based
//! output profile needs). Version 4.4 (ICC.1:2022) stores the tables as
//! `lutAtoBType` / `lutBtoAType` with the 16-bit PCSLAB encoding of §6.3.4.2;
//! version 2.4 (ICC.1:2001-04) stores them as `lut16Type` with the legacy
//! 16-bit encoding (L* 100 → 0xFF00). Version 4 profiles from `platesmith
//! profile` also carry floating-point BToD0/1/2 tables (`float_tables`).
//! lcms2 serialises the profile; the small unsafe layer it needs lives in
//! `ffi`.

mod encoding;
mod ffi;
mod float_tables;
mod separation_profile;
mod writer;

pub use encoding::{decode_lab, encode_lab, encode_unit, grid_lab};
pub use float_tables::{FloatIntent, FloatTables, LINEAR_RANGE, SrgbFrame, XyzScaling};
pub use separation_profile::{
    PERCEPTUAL_REFERENCE_BLACK, ProfileOptions, black_scaling, perceptual_pcs_black, profile_description, profile_for,
    profile_for_separator, scale_black,
};
pub use writer::{DEFAULT_A2B_GRID, DEFAULT_B2A_GRID, DEFAULT_COPYRIGHT, OutputProfileSpec, build_output_profile, default_description};

/// The ICC specification version a profile is written for.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, serde::Serialize, serde::Deserialize)]
pub enum IccVersion {
    /// ICC.1:2022 (profile version 4.4): `lutAtoBType`/`lutBtoAType`, 16-bit PCSLAB encoding.
    #[default]
    V4,
    /// ICC.1:2001-04 (profile version 2.4) for older software: `lut16Type`, legacy 16-bit PCSLAB encoding.
    V2,
}

impl IccVersion {
    /// The version number written in the header.
    pub fn number(self) -> f64 {
        match self {
            IccVersion::V4 => 4.4,
            IccVersion::V2 => 2.4,
        }
    }
}
