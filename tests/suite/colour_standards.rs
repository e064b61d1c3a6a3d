//! The colour core against the published standards themselves: the sRGB
//! encoding of IEC 61966-2-1, the CIELAB equations of CIE 15:2004 /
//! ISO/CIE 11664-4, and the published RGB → XYZ matrices of the RGB spaces.

use platesmith::colour::{D50, D65, EncodedRgb, Lab, LinearRgb, Mat3, RgbSpace, Transfer, Xyz, bradford_adaptation, rgb_to_xyz_matrix};

/// Largest absolute difference between two matrices.
fn max_matrix_deviation(a: &Mat3, b: &Mat3) -> f64 {
    let mut worst = 0.0_f64;
    for i in 0..3 {
        for j in 0..3 {
            worst = worst.max((a.0[i][j] - b.0[i][j]).abs());
        }
    }
    worst
}

/// Checks our matrix against a matrix published with `decimals` decimals:
/// every entry must round to the published one (within half a unit of the last decimal).
fn check_published_matrix(name: &str, ours: &Mat3, published: Mat3, decimals: i32) -> f64 {
    let half_unit = 0.5 * 10f64.powi(-decimals);
    let worst = max_matrix_deviation(ours, &published);
    assert!(
        worst <= half_unit + 1e-12,
        "{name}: our matrix {ours:?} deviates by {worst:e} from {published:?}"
    );
    eprintln!("{name}: max |ours - published| = {worst:.2e} (published to {decimals} decimals)");
    worst
}

// ---------------------------------------------------------------- sRGB, IEC 61966-2-1:1999

#[test]
fn srgb_matrix_is_the_published_iec_61966_2_1_matrix() {
    // IEC 61966-2-1:1999: linear sRGB → XYZ (D65), published to 4 decimals (the same matrix
    // is MATRIX_sRGB_TO_XYZ in colour-science 0.4.7, which cites the standard).
    let published = Mat3([[0.4124, 0.3576, 0.1805], [0.2126, 0.7152, 0.0722], [0.0193, 0.1192, 0.9505]]);
    let ours = rgb_to_xyz_matrix(&RgbSpace::Srgb.definition());
    check_published_matrix("sRGB RGB→XYZ vs IEC 61966-2-1", &ours, published, 4);
}

#[test]
fn srgb_white_is_d65() {
    // IEC 61966-2-1: the reference white is D65, given by its chromaticity x 0.3127, y 0.3290.
    let ours = rgb_to_xyz_matrix(&RgbSpace::Srgb.definition()).apply([1.0, 1.0, 1.0]);
    let xyy = Xyz::from_array(ours).to_xyy().expect("white has a chromaticity");
    assert!((xyy.x - 0.3127).abs() < 1e-12 && (xyy.y - 0.3290).abs() < 1e-12 && (xyy.big_y - 1.0).abs() < 1e-12);
    let want = [0.3127 / 0.3290, 1.0, (1.0 - 0.3127 - 0.3290) / 0.3290];
    for (o, w) in ours.iter().zip(want) {
        assert!((o - w).abs() < 1e-12, "{ours:?}");
    }
    assert_eq!(D65.xyz.to_array(), want);
    // And through the whole chain encoded white lands on the PCS white (relative colorimetry).
    let lab = RgbSpace::Srgb.converter().to_lab(EncodedRgb([1.0, 1.0, 1.0]));
    assert!((lab.l - 100.0).abs() < 1e-9 && lab.a.abs() < 1e-9 && lab.b.abs() < 1e-9, "{lab:?}");
}

#[test]
fn srgb_transfer_function_both_segments() {
    // IEC 61966-2-1:1999, decoding and encoding equations:
    //   V ≤ 0.04045:  L = V / 12.92             (linear segment)
    //   V > 0.04045:  L = ((V + 0.055) / 1.055)^2.4
    //   L ≤ 0.0031308: V = 12.92 L
    //   L > 0.0031308: V = 1.055 L^(1/2.4) − 0.055
    let t = RgbSpace::Srgb.converter().transfer();
    assert_eq!(t, Transfer::Srgb);
    // Linear segment, exact: these are the standard's own numbers.
    for v in [0.0, 0.001, 0.01, 0.02, 0.04, 0.04045] {
        assert!((t.decode(v) - v / 12.92).abs() < 1e-15, "decode({v})");
    }
    for l in [0.0, 0.0001, 0.001, 0.003, 0.0031308] {
        assert!((t.encode(l) - 12.92 * l).abs() < 1e-15, "encode({l})");
    }
    // Power segment, against the formula written out.
    for v in [0.0405, 0.05, 0.1, 0.2, 0.5, 0.735, 0.9, 1.0] {
        let want = ((v + 0.055) / 1.055_f64).powf(2.4);
        assert!((t.decode(v) - want).abs() < 1e-15, "decode({v})");
    }
    for l in [0.0032_f64, 0.01, 0.18, 0.5, 1.0] {
        let want = 1.055 * l.powf(1.0 / 2.4) - 0.055;
        assert!((t.encode(l) - want).abs() < 1e-15, "encode({l})");
    }
    // Worked values (computed from the formula, rounded): mid-grey code 0.5 → 0.214041;
    // 18 % grey → 0.461356; both segments meet at the breakpoints (the standard's
    // 0.04045 ↔ 0.0031308 pair) to within 1e-7.
    assert!((t.decode(0.5) - 0.214041).abs() < 5e-7);
    assert!((t.encode(0.18) - 0.461356).abs() < 5e-7);
    assert!((0.04045 / 12.92 - ((0.04045 + 0.055) / 1.055_f64).powf(2.4)).abs() < 1e-7);
    assert!((t.encode(0.0031308) - 0.04045).abs() < 1e-6);
}

#[test]
fn srgb_8_bit_black_and_white() {
    // Code 0 is black (Y 0) and full code the reference white (Y 1): IEC 61966-2-1.
    let c = RgbSpace::Srgb.converter();
    let black = c.linear_to_xyz(c.decode(EncodedRgb([0.0; 3])));
    assert_eq!(black.to_array(), [0.0; 3]);
    let white = c.linear_to_xyz(c.decode(EncodedRgb([1.0; 3])));
    assert!((white.y - 1.0).abs() < 1e-12);
}

// ------------------------------------------------------- other spaces' published matrices

#[test]
fn oprgb_matrix_is_the_published_adobe_rgb_1998_matrix() {
    // Adobe Systems (2005), "Adobe RGB (1998) Color Image Encoding" (5 decimals), as
    // transcribed in colour-science 0.4.7 (MATRIX_ADOBE_RGB1998_TO_XYZ). opRGB of
    // IEC 61966-2-5 has the same primaries, white and 563/256 power.
    let published = Mat3([
        [0.57667, 0.18556, 0.18823],
        [0.29734, 0.62736, 0.07529],
        [0.02703, 0.07069, 0.99134],
    ]);
    let def = RgbSpace::Oprgb.definition();
    check_published_matrix("opRGB RGB→XYZ vs Adobe RGB (1998)", &rgb_to_xyz_matrix(&def), published, 5);
    assert_eq!(def.transfer, Transfer::Power(563.0 / 256.0));
}

#[test]
fn romm_matrix_is_the_published_iso_22028_2_matrix_and_needs_no_adaptation() {
    // ROMM RGB (ISO 22028-2; ANSI (2003) "Specification of ROMM RGB"; Spaulding et al. 2000),
    // 4 decimals, as transcribed in colour-science 0.4.7 (MATRIX_ROMM_RGB_TO_XYZ). Its rows sum to the ICC PCS white.
    let published = Mat3([[0.7977, 0.1352, 0.0313], [0.2880, 0.7119, 0.0001], [0.0, 0.0, 0.8249]]);
    let def = RgbSpace::Romm.definition();
    let ours = rgb_to_xyz_matrix(&def);
    check_published_matrix("ROMM RGB→XYZ vs ISO 22028-2", &ours, published, 4);
    // ROMM's white is the PCS white, so the converter's D50 matrix is the native one.
    let to_pcs = RgbSpace::Romm.converter().to_pcs_matrix();
    assert!(max_matrix_deviation(&ours, &to_pcs) < 1e-12);
    let white = ours.apply([1.0, 1.0, 1.0]);
    for (o, w) in white.iter().zip(D50.xyz.to_array()) {
        assert!((o - w).abs() < 1e-12, "{white:?}");
    }
}

#[test]
fn romm_transfer_function_both_segments() {
    // ROMM RGB (ISO 22028-2; ANSI 2003): encoded = 16 L for L < Et = 1/512, else L^(1/1.8).
    let t = RgbSpace::Romm.definition().transfer;
    for l in [0.0, 0.0005, 0.001, 0.0019] {
        assert!((t.encode(l) - 16.0 * l).abs() < 1e-15, "encode({l})");
    }
    for l in [0.002_f64, 0.01, 0.18, 1.0] {
        assert!((t.encode(l) - l.powf(1.0 / 1.8)).abs() < 1e-15, "encode({l})");
    }
    // The segments meet at Et: 16/512 = (1/512)^(1/1.8) = 1/32 exactly.
    assert!((16.0_f64 / 512.0 - (1.0_f64 / 512.0).powf(1.0 / 1.8)).abs() < 1e-15);
}

#[test]
fn display_p3_uses_dci_p3_primaries_d65_and_the_srgb_curve() {
    // SMPTE EG 432-1 (DCI-P3 primaries); Display P3 pairs them with D65 and the sRGB curve.
    let def = RgbSpace::DisplayP3.definition();
    assert_eq!(def.primaries, [(0.680, 0.320), (0.265, 0.690), (0.150, 0.060)]);
    assert_eq!(def.white, (0.3127, 0.3290));
    assert_eq!(def.transfer, Transfer::Srgb);
    // Green primary's luminance Y_G = 0.6917385 (the usual P3-D65 matrix, from memory).
    let m = rgb_to_xyz_matrix(&def);
    assert!((m.0[1][1] - 0.6917385).abs() < 1e-7, "{m:?}");
}

// ------------------------------------------------------------ CIELAB, CIE 15:2004 §8.2.1

#[test]
fn lab_from_xyz_follows_cie_15_above_the_linear_segment() {
    // CIE 15:2004 §8.2.1 with f(t) = t^(1/3) for t > (24/116)^3.
    let white = D50.xyz;
    for &(x, y, z) in &[(0.5, 0.4, 0.3), (0.2, 0.1, 0.6), (0.9642, 1.0, 0.8249), (0.05, 0.02, 0.01)] {
        let lab = Lab::from_xyz(Xyz::new(x, y, z));
        let (fx, fy, fz) = ((x / white.x).cbrt(), (y / white.y).cbrt(), (z / white.z).cbrt());
        assert!((lab.l - (116.0 * fy - 16.0)).abs() < 1e-12);
        assert!((lab.a - 500.0 * (fx - fy)).abs() < 1e-12);
        assert!((lab.b - 200.0 * (fy - fz)).abs() < 1e-12);
    }
    // Worked value: Y/Yn = 0.18 → L* = 116 × 0.18^(1/3) − 16 = 49.4961.
    assert!((Lab::from_xyz(Xyz::new(0.18 * white.x, 0.18, 0.18 * white.z)).l - 49.4961).abs() < 5e-5);
}

#[test]
fn lab_from_xyz_linear_segment_near_black() {
    // CIE 15:2004 §8.2.1 / ISO/CIE 11664-4:2019: for t ≤ (24/116)^3 = 0.008856,
    // f(t) = (841/108) t + 16/116, so L* = 903.3 Y/Yn (exactly 24389/27 Y/Yn).
    let white = D50.xyz;
    let limit = (24.0_f64 / 116.0).powi(3);
    for yr in [0.0, 1e-5, 1e-4, 0.001, 0.005, 0.008, limit] {
        let lab = Lab::from_xyz(Xyz::new(yr * white.x, yr, yr * white.z));
        assert!((lab.l - 24389.0 / 27.0 * yr).abs() < 1e-10, "Y {yr}: L* {}", lab.l);
        assert!(
            (lab.l - 903.3 * yr).abs() <= 0.004 * yr + 1e-15,
            "CIE 15 rounded slope 903.3 at Y {yr}"
        );
        assert!(lab.a.abs() < 1e-12 && lab.b.abs() < 1e-12);
    }
    // a*, b* in the linear segment: 500 (841/108)(X/Xn − Y/Yn) and 200 (841/108)(Y/Yn − Z/Zn).
    let (xr, yr, zr) = (0.004, 0.002, 0.007);
    let lab = Lab::from_xyz(Xyz::new(xr * white.x, yr, zr * white.z));
    assert!((lab.a - 500.0 * 841.0 / 108.0 * (xr - yr)).abs() < 1e-10, "{lab:?}");
    assert!((lab.b - 200.0 * 841.0 / 108.0 * (yr - zr)).abs() < 1e-10, "{lab:?}");
    // Worked value: Y/Yn = 0.001 → L* = 0.9033 (CIE 15:2004 with 903.3).
    assert!((lab_l(0.001) - 0.9033).abs() < 5e-5);
    // The two segments meet at the limit: L* = 8 exactly there.
    assert!((lab_l(limit) - 8.0).abs() < 1e-12);
    assert!((lab_l(limit * (1.0 + 1e-9)) - 8.0).abs() < 1e-6);
}

fn lab_l(yr: f64) -> f64 {
    Lab::from_xyz(Xyz::new(yr * D50.xyz.x, yr, yr * D50.xyz.z)).l
}

#[test]
fn lab_inverse_recovers_xyz_in_both_segments() {
    // The inverse of CIE 15:2004 §8.2.1 (as given in ISO/CIE 11664-4).
    for xyz in [
        Xyz::new(0.4, 0.35, 0.2),
        Xyz::new(0.001, 0.0005, 0.002),
        Xyz::new(0.01, 0.02, 0.0001),
    ] {
        let back = Lab::from_xyz(xyz).to_xyz();
        for (b, w) in back.to_array().iter().zip(xyz.to_array()) {
            assert!((b - w).abs() < 1e-14, "{xyz:?} → {back:?}");
        }
    }
}

// ----------------------------------------------------------- Bradford, ICC.1:2022 Annex E

#[test]
fn bradford_d65_to_d50_matches_the_published_matrix() {
    // Bradford D65 → D50 as published by B. Lindbloom ("Chromatic Adaptation",
    // brucelindbloom.com) for D65 0.95047 1 1.08883 and D50 0.96422 1 0.82521, 7 decimals
    // (from memory):
    let m = bradford_adaptation(Xyz::new(0.95047, 1.0, 1.08883), Xyz::new(0.96422, 1.0, 0.82521));
    let published = Mat3([
        [1.0478112, 0.0228866, -0.0501270],
        [0.0295424, 0.9904844, -0.0170491],
        [-0.0092345, 0.0150436, 0.7521316],
    ]);
    let worst = max_matrix_deviation(&m, &published);
    assert!(worst <= 5e-8, "{m:?}");
    eprintln!("Bradford D65→D50 vs published 7-decimal matrix: max deviation = {worst:.2e}");
    // Adapted linear white maps to the PCS white, so encoded white is L* 100 in every space.
    for space in RgbSpace::ALL {
        let c = space.converter();
        let w = c.linear_to_xyz(LinearRgb([1.0; 3]));
        for (o, d) in w.to_array().iter().zip(D50.xyz.to_array()) {
            assert!((o - d).abs() < 1e-12, "{space:?}: white {w:?}");
        }
    }
}
