//! RGB colour spaces: primaries, white points, transfer functions, and
//! conversion to and from CIELAB D50.
//!
//! Sources:
//! - sRGB: IEC 61966-2-1:1999 (primaries, D65 white, the piecewise curve with
//!   2.4 exponent, 0.04045 / 0.0031308 breakpoints and 12.92 linear slope).
//! - Display P3: the DCI-P3 primaries (SMPTE EG 432-1) with the D65 white and
//!   the sRGB transfer curve.
//! - opRGB: IEC 61966-2-5:2007 (primaries, D65 white, pure power 563/256).
//! - ROMM RGB: ISO 22028-2:2013 (primaries, the ICC PCS D50 white, 1/1.8 power
//!   with a linear segment of slope 16 below 1/512).
//!
//! XYZ in a space's own white is adapted to the PCS white D50 with Bradford.
//! Linear and encoded values are different types so that they cannot be mixed.

use super::lab::Lab;
use super::matrix::Mat3;
use super::xyz::{D50, Xyy, Xyz, bradford_adaptation};

/// A named RGB colour space known to platesmith.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, serde::Serialize, serde::Deserialize)]
#[serde(rename_all = "kebab-case")]
pub enum RgbSpace {
    Srgb,
    DisplayP3,
    Oprgb,
    Romm,
}

/// Encoded (non-linear, as stored in a file) RGB values, nominally 0..1.
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub struct EncodedRgb(pub [f64; 3]);

/// Linear-light RGB values, nominally 0..1.
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub struct LinearRgb(pub [f64; 3]);

/// A transfer function (encoding curve) from linear light to code values.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Transfer {
    /// The sRGB piecewise curve of IEC 61966-2-1.
    Srgb,
    /// A pure power law: encoded = linear^(1/gamma).
    Power(f64),
    /// ROMM RGB of ISO 22028-2.
    Romm,
}

impl Transfer {
    /// Encoded value → linear light. Negative inputs are mirrored so the
    /// curve stays monotonic outside 0..1 (unclamped, for round trips).
    #[inline]
    pub fn decode(self, v: f64) -> f64 {
        let s = v.signum();
        let v = v.abs();
        s * match self {
            Transfer::Srgb => {
                if v <= 0.04045 {
                    v / 12.92
                } else {
                    ((v + 0.055) / 1.055).powf(2.4)
                }
            }
            Transfer::Power(g) => v.powf(g),
            Transfer::Romm => {
                if v < 16.0 / 512.0 {
                    v / 16.0
                } else {
                    v.powf(1.8)
                }
            }
        }
    }

    /// Linear light → encoded value (the inverse of [`Transfer::decode`]).
    #[inline]
    pub fn encode(self, v: f64) -> f64 {
        let s = v.signum();
        let v = v.abs();
        s * match self {
            Transfer::Srgb => {
                if v <= 0.0031308 {
                    v * 12.92
                } else {
                    1.055 * v.powf(1.0 / 2.4) - 0.055
                }
            }
            Transfer::Power(g) => v.powf(1.0 / g),
            Transfer::Romm => {
                if v < 1.0 / 512.0 {
                    v * 16.0
                } else {
                    v.powf(1.0 / 1.8)
                }
            }
        }
    }
}

/// Chromaticity of the ICC PCS white X 0.9642, Y 1, Z 0.8249 (sum 2.7891): the white of ROMM RGB.
const ROMM_WHITE: (f64, f64) = (0.9642 / 2.7891, 1.0 / 2.7891);

/// The published definition of an RGB space.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct RgbDefinition {
    /// Chromaticities x, y of the red, green and blue primaries.
    pub primaries: [(f64, f64); 3],
    /// Chromaticity x, y of the reference white.
    pub white: (f64, f64),
    pub transfer: Transfer,
}

impl RgbSpace {
    pub const ALL: [RgbSpace; 4] = [RgbSpace::Srgb, RgbSpace::DisplayP3, RgbSpace::Oprgb, RgbSpace::Romm];

    /// The name used on the command line and in reports.
    pub fn name(self) -> &'static str {
        match self {
            RgbSpace::Srgb => "srgb",
            RgbSpace::DisplayP3 => "display-p3",
            RgbSpace::Oprgb => "oprgb",
            RgbSpace::Romm => "romm",
        }
    }

    pub fn from_name(name: &str) -> Option<RgbSpace> {
        RgbSpace::ALL.into_iter().find(|s| s.name().eq_ignore_ascii_case(name))
    }

    pub fn definition(self) -> RgbDefinition {
        match self {
            RgbSpace::Srgb => RgbDefinition {
                primaries: [(0.64, 0.33), (0.30, 0.60), (0.15, 0.06)],
                white: (0.3127, 0.3290),
                transfer: Transfer::Srgb,
            },
            RgbSpace::DisplayP3 => RgbDefinition {
                primaries: [(0.680, 0.320), (0.265, 0.690), (0.150, 0.060)],
                white: (0.3127, 0.3290),
                transfer: Transfer::Srgb,
            },
            RgbSpace::Oprgb => RgbDefinition {
                primaries: [(0.64, 0.33), (0.21, 0.71), (0.15, 0.06)],
                white: (0.3127, 0.3290),
                transfer: Transfer::Power(563.0 / 256.0),
            },
            RgbSpace::Romm => RgbDefinition {
                primaries: [(0.7347, 0.2653), (0.1596, 0.8404), (0.0366, 0.0001)],
                // ROMM RGB is referred to the ICC PCS white itself (X 0.9642, Y 1, Z 0.8249), not
                // to the rounded chromaticity 0.3457, 0.3585: its published 4-decimal matrix
                // (ISO 22028-2; checked in tests/suite/colour_standards.rs) has rows summing to exactly
                // that white, and only this white reproduces it. So ROMM needs no adaptation.
                white: ROMM_WHITE,
                transfer: Transfer::Romm,
            },
        }
    }

    /// The conversion of this space, ready for repeated use.
    pub fn converter(self) -> RgbConverter {
        RgbConverter::new(self.definition())
    }
}

/// Normalised primary matrix: linear RGB → XYZ in the space's own white
/// (SMPTE RP 177-1993 method).
pub fn rgb_to_xyz_matrix(def: &RgbDefinition) -> Mat3 {
    let p: Vec<[f64; 3]> = def
        .primaries
        .iter()
        .map(|&(x, y)| Xyy::new(x, y, 1.0).to_xyz().to_array())
        .collect();
    let m = Mat3([
        [p[0][0], p[1][0], p[2][0]],
        [p[0][1], p[1][1], p[2][1]],
        [p[0][2], p[1][2], p[2][2]],
    ]);
    let white = Xyy::new(def.white.0, def.white.1, 1.0).to_xyz();
    let s = m.inverse().expect("primaries are independent").apply(white.to_array());
    m.mul(&Mat3::diagonal(s))
}

/// Converts one RGB space to and from CIELAB D50 (Bradford-adapted).
#[derive(Debug, Clone, Copy)]
pub struct RgbConverter {
    transfer: Transfer,
    /// Linear RGB → XYZ adapted to D50.
    to_pcs: Mat3,
    /// XYZ D50 → linear RGB.
    from_pcs: Mat3,
}

impl RgbConverter {
    pub fn new(def: RgbDefinition) -> RgbConverter {
        let native = rgb_to_xyz_matrix(&def);
        let white = Xyy::new(def.white.0, def.white.1, 1.0).to_xyz();
        let adapt = bradford_adaptation(white, D50.xyz);
        let to_pcs = adapt.mul(&native);
        let from_pcs = to_pcs.inverse().expect("conversion matrix is invertible");
        RgbConverter {
            transfer: def.transfer,
            to_pcs,
            from_pcs,
        }
    }

    #[inline]
    pub fn decode(&self, rgb: EncodedRgb) -> LinearRgb {
        LinearRgb(rgb.0.map(|v| self.transfer.decode(v)))
    }

    #[inline]
    pub fn encode(&self, rgb: LinearRgb) -> EncodedRgb {
        EncodedRgb(rgb.0.map(|v| self.transfer.encode(v)))
    }

    /// Linear RGB → XYZ relative to D50.
    #[inline]
    pub fn linear_to_xyz(&self, rgb: LinearRgb) -> Xyz {
        Xyz::from_array(self.to_pcs.apply(rgb.0))
    }

    #[inline]
    pub fn xyz_to_linear(&self, xyz: Xyz) -> LinearRgb {
        LinearRgb(self.from_pcs.apply(xyz.to_array()))
    }

    /// Encoded RGB → CIELAB D50.
    #[inline]
    pub fn to_lab(&self, rgb: EncodedRgb) -> Lab {
        Lab::from_xyz(self.linear_to_xyz(self.decode(rgb)))
    }

    /// CIELAB D50 → encoded RGB, unclamped (values outside 0..1 mean the
    /// colour lies outside the space).
    #[inline]
    pub fn from_lab(&self, lab: Lab) -> EncodedRgb {
        self.encode(self.xyz_to_linear(lab.to_xyz()))
    }

    /// The matrix linear RGB → XYZ D50 (for embedding in ICC profiles and tests).
    pub fn to_pcs_matrix(&self) -> Mat3 {
        self.to_pcs
    }

    pub fn transfer(&self) -> Transfer {
        self.transfer
    }
}

/// Integer code value → 0..1 for an n-bit channel.
#[inline]
pub fn from_code(value: u16, bits: u32) -> f64 {
    value as f64 / ((1u32 << bits) - 1) as f64
}

/// 0..1 → integer code value for an n-bit channel, rounded and clamped.
#[inline]
pub fn to_code(value: f64, bits: u32) -> u16 {
    let max = ((1u32 << bits) - 1) as f64;
    (value * max).round().clamp(0.0, max) as u16
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn srgb_white_is_pcs_white() {
        let lab = RgbSpace::Srgb.converter().to_lab(EncodedRgb([1.0, 1.0, 1.0]));
        assert!((lab.l - 100.0).abs() < 1e-9 && lab.a.abs() < 1e-9 && lab.b.abs() < 1e-9);
    }

    #[test]
    fn transfer_curves_invert() {
        for t in [Transfer::Srgb, Transfer::Power(563.0 / 256.0), Transfer::Romm] {
            for i in 0..=1000 {
                let v = i as f64 / 1000.0;
                assert!((t.encode(t.decode(v)) - v).abs() < 1e-12, "{t:?} at {v}");
            }
        }
    }

    #[test]
    fn names_round_trip() {
        for s in RgbSpace::ALL {
            assert_eq!(RgbSpace::from_name(s.name()), Some(s));
        }
    }
}
