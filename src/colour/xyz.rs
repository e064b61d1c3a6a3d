//! CIE XYZ tristimulus values, chromaticity (xyY), white points and
//! Bradford chromatic adaptation.
//!
//! Sources: CIE 15:2004 (XYZ, xyY); ICC.1:2022 (PCS illuminant D50 as
//! X 0.9642, Y 1.0, Z 0.8249, and the Bradford transform of its Annex E);
//! Lam (1985) for the Bradford cone response matrix.

use super::matrix::Mat3;

/// CIE 1931 XYZ tristimulus values, scaled so that a perfect diffuser has Y = 1.
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub struct Xyz {
    pub x: f64,
    pub y: f64,
    pub z: f64,
}

/// Chromaticity coordinates x, y and luminance factor Y.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Xyy {
    pub x: f64,
    pub y: f64,
    pub big_y: f64,
}

impl Xyz {
    pub const fn new(x: f64, y: f64, z: f64) -> Xyz {
        Xyz { x, y, z }
    }

    pub fn to_array(self) -> [f64; 3] {
        [self.x, self.y, self.z]
    }

    pub fn from_array(v: [f64; 3]) -> Xyz {
        Xyz { x: v[0], y: v[1], z: v[2] }
    }

    /// Chromaticity; the black point (X+Y+Z = 0) has no chromaticity and returns `None`.
    pub fn to_xyy(self) -> Option<Xyy> {
        let sum = self.x + self.y + self.z;
        if sum.abs() < 1e-15 {
            return None;
        }
        Some(Xyy {
            x: self.x / sum,
            y: self.y / sum,
            big_y: self.y,
        })
    }
}

impl Xyy {
    pub const fn new(x: f64, y: f64, big_y: f64) -> Xyy {
        Xyy { x, y, big_y }
    }

    /// XYZ from chromaticity (CIE 15:2004, eq. 7.3).
    pub fn to_xyz(self) -> Xyz {
        let scale = self.big_y / self.y;
        Xyz {
            x: self.x * scale,
            y: self.big_y,
            z: (1.0 - self.x - self.y) * scale,
        }
    }
}

/// A named reference white, given as XYZ with Y = 1.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct WhitePoint {
    pub name: &'static str,
    pub xyz: Xyz,
}

/// The ICC profile connection space illuminant (ICC.1:2022 §7.2.16): D50 as
/// X 0.9642, Y 1.0, Z 0.8249. All CIELAB in platesmith is relative to this white.
pub const D50: WhitePoint = WhitePoint {
    name: "D50",
    xyz: Xyz::new(0.9642, 1.0, 0.8249),
};

/// CIE D65 from its chromaticity x 0.3127, y 0.3290 (IEC 61966-2-1, the sRGB white).
pub const D65: WhitePoint = WhitePoint {
    name: "D65",
    // x/y and (1-x-y)/y for (0.3127, 0.3290), written out so the constant is exact.
    xyz: Xyz::new(0.3127 / 0.3290, 1.0, (1.0 - 0.3127 - 0.3290) / 0.3290),
};

/// Bradford cone response matrix (Lam 1985; ICC.1:2022 Annex E).
pub const BRADFORD: Mat3 = Mat3([[0.8951, 0.2664, -0.1614], [-0.7502, 1.7135, 0.0367], [0.0389, -0.0685, 1.0296]]);

/// Bradford (linearised, as in ICC.1 Annex E) chromatic adaptation matrix from
/// `source` white to `destination` white: `XYZ_dst = M × XYZ_src`.
pub fn bradford_adaptation(source: Xyz, destination: Xyz) -> Mat3 {
    let s = BRADFORD.apply(source.to_array());
    let d = BRADFORD.apply(destination.to_array());
    let scale = Mat3::diagonal([d[0] / s[0], d[1] / s[1], d[2] / s[2]]);
    let inverse = BRADFORD.inverse().expect("the Bradford matrix is invertible");
    inverse.mul(&scale).mul(&BRADFORD)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn adaptation_maps_white_to_white() {
        let m = bradford_adaptation(D65.xyz, D50.xyz);
        let w = m.apply(D65.xyz.to_array());
        for (got, want) in w.iter().zip(D50.xyz.to_array()) {
            assert!((got - want).abs() < 1e-12);
        }
    }

    #[test]
    fn xyy_round_trip() {
        let c = Xyz::new(0.3, 0.4, 0.5);
        let back = c.to_xyy().unwrap().to_xyz();
        assert!((back.x - c.x).abs() < 1e-15 && (back.z - c.z).abs() < 1e-15);
    }
}
