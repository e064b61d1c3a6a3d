//! The colour core against Little CMS 2 (crate `lcms2`, bundled static build)
//! as a reference implementation:
//! - sRGB → CIELAB D50: lcms2's built-in sRGB profile (IEC 61966-2-1
//!   primaries, D65 white adapted to D50 by Bradford, the parametric sRGB
//!   curve) to its built-in Lab v4 profile with the D50 PCS white, relative
//!   colorimetric intent, 8-bit and 16-bit input, double-precision Lab output.
//! - CIEDE2000: lcms2's cmsCIE2000DeltaE with kL = kC = kH = 1.

use lcms2::{CIELab, CIELabExt, CIExyY, GlobalContext, Intent, PixelFormat, Profile, Transform};
use platesmith::colour::{EncodedRgb, Lab, RgbSpace, ciede2000, from_code};

const SAMPLES: usize = 10_000;
/// Largest ΔE00 accepted between our sRGB → Lab and lcms2's.
const RGB_TOLERANCE: f64 = 0.05;
/// Largest difference accepted between our CIEDE2000 and lcms2's.
const DE2000_TOLERANCE: f64 = 1e-4;

use crate::rng::SplitMix64;

fn lab_d50_profile() -> Profile {
    Profile::new_lab4_context(GlobalContext::new(), CIExyY::d50()).expect("lcms2 builds a Lab D50 profile")
}

#[test]
fn lcms2_d50_is_the_pcs_white_we_use() {
    let d50 = lcms2::CIEXYZ::d50();
    let ours = platesmith::colour::D50.xyz;
    assert!((d50.X - ours.x).abs() < 1e-12 && (d50.Y - ours.y).abs() < 1e-12 && (d50.Z - ours.z).abs() < 1e-12);
}

/// Max ΔE00 between our conversion and lcms2's for `rgb` samples given as code values.
fn compare_srgb(codes: &[[u16; 3]], bits: u32, lcms_lab: &[[f64; 3]]) -> (f64, [u16; 3]) {
    let ours = RgbSpace::Srgb.converter();
    let mut worst = (0.0_f64, [0; 3]);
    for (code, theirs) in codes.iter().zip(lcms_lab) {
        let lab = ours.to_lab(EncodedRgb(code.map(|c| from_code(c, bits))));
        let d = ciede2000(lab, Lab::from_array(*theirs));
        if d > worst.0 {
            worst = (d, *code);
        }
    }
    worst
}

#[test]
fn srgb_8_bit_to_lab_matches_lcms2() {
    let mut rng = SplitMix64(0x5EED_0008);
    let mut pixels: Vec<[u8; 3]> = (0..SAMPLES).map(|_| [0; 3].map(|_: u8| (rng.next_u64() >> 56) as u8)).collect();
    // The corners of the cube and the darkest codes (linear segment of the curve) are always included.
    pixels.extend([
        [0, 0, 0],
        [255, 255, 255],
        [255, 0, 0],
        [0, 255, 0],
        [0, 0, 255],
        [1, 1, 1],
        [10, 10, 10],
    ]);
    let transform: Transform<[u8; 3], [f64; 3]> = Transform::new(
        &Profile::new_srgb(),
        PixelFormat::RGB_8,
        &lab_d50_profile(),
        PixelFormat::Lab_DBL,
        Intent::RelativeColorimetric,
    )
    .expect("lcms2 builds the sRGB → Lab transform");
    let mut lab = vec![[0.0; 3]; pixels.len()];
    transform.transform_pixels(&pixels, &mut lab);
    let codes: Vec<[u16; 3]> = pixels.iter().map(|p| p.map(u16::from)).collect();
    let (worst, at) = compare_srgb(&codes, 8, &lab);
    eprintln!(
        "sRGB 8-bit → Lab D50 vs lcms2, {} colours: max ΔE00 = {worst:.2e} at {at:?}",
        codes.len()
    );
    assert!(worst <= RGB_TOLERANCE, "max ΔE00 {worst} at {at:?}");
}

#[test]
fn srgb_16_bit_to_lab_matches_lcms2() {
    let mut rng = SplitMix64(0x5EED_0016);
    let mut pixels: Vec<[u16; 3]> = (0..SAMPLES).map(|_| [0; 3].map(|_: u16| (rng.next_u64() >> 48) as u16)).collect();
    pixels.extend([
        [0, 0, 0],
        [65535, 65535, 65535],
        [65535, 0, 0],
        [0, 65535, 0],
        [0, 0, 65535],
        [1, 1, 1],
        [300, 300, 300],
    ]);
    let transform: Transform<[u16; 3], [f64; 3]> = Transform::new(
        &Profile::new_srgb(),
        PixelFormat::RGB_16,
        &lab_d50_profile(),
        PixelFormat::Lab_DBL,
        Intent::RelativeColorimetric,
    )
    .expect("lcms2 builds the sRGB → Lab transform");
    let mut lab = vec![[0.0; 3]; pixels.len()];
    transform.transform_pixels(&pixels, &mut lab);
    let (worst, at) = compare_srgb(&pixels, 16, &lab);
    eprintln!(
        "sRGB 16-bit → Lab D50 vs lcms2, {} colours: max ΔE00 = {worst:.2e} at {at:?}",
        pixels.len()
    );
    assert!(worst <= RGB_TOLERANCE, "max ΔE00 {worst} at {at:?}");
}

#[test]
fn ciede2000_matches_lcms2() {
    let mut rng = SplitMix64(0x5EED_2000);
    let mut random_lab = || {
        Lab::new(
            100.0 * rng.next_f64(),
            256.0 * rng.next_f64() - 128.0,
            256.0 * rng.next_f64() - 128.0,
        )
    };
    let mut worst = (0.0_f64, Lab::default(), Lab::default());
    for i in 0..SAMPLES {
        let a = random_lab();
        // Half the pairs are near each other (the range where CIEDE2000 is meant to be used).
        let b = if i % 2 == 0 {
            random_lab()
        } else {
            let c = random_lab();
            Lab::new(a.l + 0.05 * (c.l - 50.0), a.a + 0.05 * c.a, a.b + 0.05 * c.b)
        };
        let theirs = CIELab { L: a.l, a: a.a, b: a.b }.cie2000_delta_e(&CIELab { L: b.l, a: b.a, b: b.b }, 1.0, 1.0, 1.0);
        let d = (ciede2000(a, b) - theirs).abs();
        if d > worst.0 {
            worst = (d, a, b);
        }
    }
    eprintln!(
        "CIEDE2000 vs lcms2 cmsCIE2000DeltaE, {SAMPLES} pairs: max |difference| = {:.2e}",
        worst.0
    );
    assert!(worst.0 <= DE2000_TOLERANCE, "{worst:?}");
}
