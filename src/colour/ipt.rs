//! IPT, the hue-linear opponent colour space of F. Ebner and M. D. Fairchild,
//! "Development and testing of a color space (IPT) with improved hue
//! uniformity", Proc. IS&T/SID 6th Color Imaging Conference (1998) 8–13.
//!
//! XYZ relative to D65 (Y of the white = 1) goes through the
//! Hunt–Pointer–Estévez cone matrix normalised to D65, a power of 0.43 on the
//! magnitude of each cone signal (sign kept), and a second matrix to I
//! (lightness, 0..1), P (red–green) and T (yellow–blue). Its constant-hue
//! lines were fitted to the hue-constancy data of Hung and Berns (1995), so
//! that chroma can be scaled at constant IPT hue without the hue shift
//! CIELAB shows for blues (a saturated blue scaled at constant CIELAB hue
//! turns purple).
//!
//! platesmith's colours are CIELAB relative to the ICC PCS white D50; they are
//! carried to D65 by the Bradford adaptation of ICC.1:2022 Annex E before
//! the IPT matrices ([`Ipt::from_lab`]), and back ([`Ipt::to_lab`]).

use super::lab::Lab;
use super::matrix::Mat3;
use super::xyz::{D50, D65, Xyz, bradford_adaptation};
use std::sync::OnceLock;

/// XYZ (D65) → LMS, Ebner & Fairchild (1998), eq. 1.
const XYZ_TO_LMS: Mat3 = Mat3([[0.4002, 0.7075, -0.0807], [-0.2280, 1.1500, 0.0612], [0.0, 0.0, 0.9184]]);

/// L'M'S' → IPT, Ebner & Fairchild (1998), eq. 3.
const LMS_TO_IPT: Mat3 = Mat3([[0.4000, 0.4000, 0.2000], [4.4550, -4.8510, 0.3960], [0.8056, 0.3572, -1.1628]]);

/// The exponent on the cone signals, Ebner & Fairchild (1998), eq. 2.
const EXPONENT: f64 = 0.43;

/// A colour in IPT: I lightness (0 black, 1 the D65 white), P and T opponent.
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub struct Ipt {
    pub i: f64,
    pub p: f64,
    pub t: f64,
}

struct Matrices {
    /// PCS XYZ (D50) → LMS: the Bradford adaptation to D65, then the cone matrix.
    pcs_to_lms: Mat3,
    lms_to_pcs: Mat3,
    lms_to_ipt: Mat3,
    ipt_to_lms: Mat3,
    xyz_to_lms: Mat3,
    lms_to_xyz: Mat3,
}

fn matrices() -> &'static Matrices {
    static M: OnceLock<Matrices> = OnceLock::new();
    M.get_or_init(|| {
        let pcs_to_lms = XYZ_TO_LMS.mul(&bradford_adaptation(D50.xyz, D65.xyz));
        let invert = |m: &Mat3| m.inverse().unwrap_or(Mat3::IDENTITY); // all three are invertible constants
        Matrices {
            lms_to_pcs: invert(&pcs_to_lms),
            pcs_to_lms,
            lms_to_ipt: LMS_TO_IPT,
            ipt_to_lms: invert(&LMS_TO_IPT),
            xyz_to_lms: XYZ_TO_LMS,
            lms_to_xyz: invert(&XYZ_TO_LMS),
        }
    })
}

fn compress(v: f64) -> f64 {
    v.signum() * v.abs().powf(EXPONENT)
}

fn expand(v: f64) -> f64 {
    v.signum() * v.abs().powf(1.0 / EXPONENT)
}

impl Ipt {
    pub const fn new(i: f64, p: f64, t: f64) -> Ipt {
        Ipt { i, p, t }
    }

    fn from_lms(lms: [f64; 3]) -> Ipt {
        let [i, p, t] = matrices().lms_to_ipt.apply(lms.map(compress));
        Ipt { i, p, t }
    }

    fn to_lms(self) -> [f64; 3] {
        matrices().ipt_to_lms.apply([self.i, self.p, self.t]).map(expand)
    }

    /// From XYZ relative to D65 (Y of the white = 1), as the paper defines it.
    pub fn from_xyz_d65(xyz: Xyz) -> Ipt {
        Ipt::from_lms(matrices().xyz_to_lms.apply(xyz.to_array()))
    }

    /// Back to XYZ relative to D65.
    pub fn to_xyz_d65(self) -> Xyz {
        Xyz::from_array(matrices().lms_to_xyz.apply(self.to_lms()))
    }

    /// From CIELAB relative to the PCS white D50 (Bradford to D65 first).
    pub fn from_lab(lab: Lab) -> Ipt {
        Ipt::from_lms(matrices().pcs_to_lms.apply(lab.to_xyz().to_array()))
    }

    /// Back to CIELAB relative to the PCS white D50.
    pub fn to_lab(self) -> Lab {
        Lab::from_xyz(Xyz::from_array(matrices().lms_to_pcs.apply(self.to_lms())))
    }

    /// Chroma, √(P² + T²).
    pub fn chroma(self) -> f64 {
        self.p.hypot(self.t)
    }

    /// Hue angle atan2(T, P) in degrees, 0..360.
    pub fn hue(self) -> f64 {
        self.t.atan2(self.p).to_degrees().rem_euclid(360.0)
    }

    /// The colour of lightness `i`, chroma `c` and hue `h` (degrees).
    pub fn from_polar(i: f64, c: f64, h: f64) -> Ipt {
        let (s, co) = h.to_radians().sin_cos();
        Ipt { i, p: c * co, t: c * s }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn white_is_one_and_neutral() {
        // Ebner & Fairchild (1998): the D65 white has I = 1, P = T = 0 (to the
        // four-decimal matrices' rounding).
        let w = Ipt::from_xyz_d65(D65.xyz);
        assert!((w.i - 1.0).abs() < 2e-4 && w.p.abs() < 2e-4 && w.t.abs() < 2e-4, "{w:?}");
        let pcs_white = Ipt::from_lab(Lab::new(100.0, 0.0, 0.0));
        assert!(
            (pcs_white.i - w.i).abs() < 1e-9 && (pcs_white.p - w.p).abs() < 1e-9,
            "{pcs_white:?}"
        );
    }

    #[test]
    fn round_trips() {
        for lab in [
            Lab::new(50.0, 60.0, -80.0),
            Lab::new(5.0, -3.0, 4.0),
            Lab::new(90.0, -40.0, 90.0),
            Lab::new(0.0, 0.0, 0.0),
        ] {
            let back = Ipt::from_lab(lab).to_lab();
            assert!((back.l - lab.l).abs() < 1e-9 && (back.a - lab.a).abs() < 1e-9 && (back.b - lab.b).abs() < 1e-9);
        }
    }
}
