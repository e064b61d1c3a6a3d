//! CIELAB and CIELCh(ab).
//!
//! Source: CIE 15:2004 §8.2.1 and ISO/CIE 11664-4:2019, with the exact
//! constants ε = 216/24389 and κ = 24389/27 for the linear segment near black.
//! In platesmith every `Lab` is relative to the ICC PCS white D50
//! ([`super::D50`]) unless a function says otherwise.

use super::xyz::{D50, Xyz};

/// CIE 1976 L*a*b*.
#[derive(Debug, Clone, Copy, PartialEq, Default, serde::Serialize, serde::Deserialize)]
pub struct Lab {
    pub l: f64,
    pub a: f64,
    pub b: f64,
}

/// CIE 1976 L*C*h(ab), hue in degrees 0..360.
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub struct Lch {
    pub l: f64,
    pub c: f64,
    pub h: f64,
}

const EPSILON: f64 = 216.0 / 24389.0;
const KAPPA: f64 = 24389.0 / 27.0;

#[inline]
fn f(t: f64) -> f64 {
    if t > EPSILON { t.cbrt() } else { (KAPPA * t + 16.0) / 116.0 }
}

#[inline]
fn f_inv(t: f64) -> f64 {
    let t3 = t * t * t;
    if t3 > EPSILON { t3 } else { (116.0 * t - 16.0) / KAPPA }
}

impl Lab {
    pub const fn new(l: f64, a: f64, b: f64) -> Lab {
        Lab { l, a, b }
    }

    /// CIELAB of `xyz` relative to `white` (CIE 15:2004 eq. 8.3–8.6).
    #[inline]
    pub fn from_xyz_with_white(xyz: Xyz, white: Xyz) -> Lab {
        let fx = f(xyz.x / white.x);
        let fy = f(xyz.y / white.y);
        let fz = f(xyz.z / white.z);
        Lab {
            l: 116.0 * fy - 16.0,
            a: 500.0 * (fx - fy),
            b: 200.0 * (fy - fz),
        }
    }

    /// CIELAB relative to the PCS white D50.
    #[inline]
    pub fn from_xyz(xyz: Xyz) -> Lab {
        Lab::from_xyz_with_white(xyz, D50.xyz)
    }

    /// XYZ from CIELAB relative to `white` (the inverse of [`Lab::from_xyz_with_white`]).
    #[inline]
    pub fn to_xyz_with_white(self, white: Xyz) -> Xyz {
        let fy = (self.l + 16.0) / 116.0;
        let fx = fy + self.a / 500.0;
        let fz = fy - self.b / 200.0;
        let yr = if self.l > KAPPA * EPSILON { fy * fy * fy } else { self.l / KAPPA };
        Xyz {
            x: f_inv(fx) * white.x,
            y: yr * white.y,
            z: f_inv(fz) * white.z,
        }
    }

    /// XYZ relative to the PCS white D50.
    #[inline]
    pub fn to_xyz(self) -> Xyz {
        self.to_xyz_with_white(D50.xyz)
    }

    /// Chroma C*ab.
    #[inline]
    pub fn chroma(self) -> f64 {
        self.a.hypot(self.b)
    }

    pub fn to_lch(self) -> Lch {
        let mut h = self.b.atan2(self.a).to_degrees();
        if h < 0.0 {
            h += 360.0;
        }
        Lch {
            l: self.l,
            c: self.chroma(),
            h,
        }
    }

    pub fn to_array(self) -> [f64; 3] {
        [self.l, self.a, self.b]
    }

    pub fn from_array(v: [f64; 3]) -> Lab {
        Lab { l: v[0], a: v[1], b: v[2] }
    }

    /// True when all three coordinates are finite numbers.
    pub fn is_finite(self) -> bool {
        self.l.is_finite() && self.a.is_finite() && self.b.is_finite()
    }
}

impl Lch {
    pub const fn new(l: f64, c: f64, h: f64) -> Lch {
        Lch { l, c, h }
    }

    pub fn to_lab(self) -> Lab {
        let h = self.h.to_radians();
        Lab {
            l: self.l,
            a: self.c * h.cos(),
            b: self.c * h.sin(),
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn white_is_l100() {
        let lab = Lab::from_xyz(D50.xyz);
        assert!((lab.l - 100.0).abs() < 1e-12 && lab.a.abs() < 1e-12 && lab.b.abs() < 1e-12);
    }

    #[test]
    fn round_trip_through_both_segments() {
        for &l in &[0.5, 5.0, 7.9, 8.1, 50.0, 99.0] {
            let lab = Lab::new(l, 12.0, -30.0);
            let back = Lab::from_xyz(lab.to_xyz());
            assert!((back.l - lab.l).abs() < 1e-9, "{lab:?} -> {back:?}");
            assert!((back.a - lab.a).abs() < 1e-9 && (back.b - lab.b).abs() < 1e-9);
        }
    }

    #[test]
    fn lch_round_trip() {
        let lab = Lab::new(40.0, -20.0, -35.0);
        let back = lab.to_lch().to_lab();
        assert!((back.a - lab.a).abs() < 1e-12 && (back.b - lab.b).abs() < 1e-12);
    }
}
