//! 16-bit encodings of PCS CIELAB and device values in ICC tables.
//!
//! Sources:
//! - ICC.1:2022 §6.3.4.2 (16-bit PCSLAB encoding, version 4): L* 0..100 ↦ 0x0000..0xFFFF,
//!   a*, b* −128..127 ↦ 0x0000..0xFFFF (0 ↦ 0x8080).
//! - ICC.1:2001-04 §6.5.5 and the `lut16Type` clause of ICC.1:2022 (legacy 16-bit PCSLAB
//!   encoding, used by version 2 `lut16Type` tables): L* 0..100 ↦ 0x0000..0xFF00,
//!   a*, b* −128..127.996 ↦ 0x0000..0xFFFF (0 ↦ 0x8000).
//!
//! Rounding follows lcms2 (`cmsFloat2LabEncoded`, `cmsFloat2LabEncodedV2`): values are
//! clamped to the encodable range and rounded to the nearest code; the unit tests in
//! `ffi` compare both encoders with lcms2's.

use super::IccVersion;
use crate::colour::Lab;

/// Largest encodable L* in the legacy (v2) encoding: 0xFFFF / 0xFF00 × 100.
const L_MAX_V2: f64 = 65535.0 * 100.0 / 65280.0;
/// Largest encodable a*, b* in the legacy (v2) encoding: 0xFFFF / 256 − 128.
const AB_MAX_V2: f64 = 65535.0 / 256.0 - 128.0;

#[inline]
fn quantize(v: f64) -> u16 {
    // NaN saturates to 0 in `as`; callers reject non-finite values before this.
    (v + 0.5).floor().clamp(0.0, 65535.0) as u16
}

/// Scale factors from (L*, a* + 128, b* + 128) to codes.
#[inline]
fn scales(version: IccVersion) -> (f64, f64) {
    match version {
        IccVersion::V4 => (655.35, 257.0),
        IccVersion::V2 => (652.8, 256.0),
    }
}

/// PCS CIELAB → 16-bit codes of `version`, clamped to the encodable range.
pub fn encode_lab(lab: Lab, version: IccVersion) -> [u16; 3] {
    let (sl, sab) = scales(version);
    let (l_max, ab_max) = match version {
        IccVersion::V4 => (100.0, 127.0),
        IccVersion::V2 => (L_MAX_V2, AB_MAX_V2),
    };
    [
        quantize(lab.l.clamp(0.0, l_max) * sl),
        quantize((lab.a.clamp(-128.0, ab_max) + 128.0) * sab),
        quantize((lab.b.clamp(-128.0, ab_max) + 128.0) * sab),
    ]
}

/// 16-bit codes of `version` → PCS CIELAB.
pub fn decode_lab(code: [u16; 3], version: IccVersion) -> Lab {
    let (sl, sab) = scales(version);
    Lab::new(code[0] as f64 / sl, code[1] as f64 / sab - 128.0, code[2] as f64 / sab - 128.0)
}

/// A device value 0..1 → its 16-bit code (0 ↦ 0x0000, 1 ↦ 0xFFFF), clamped.
#[inline]
pub fn encode_unit(v: f64) -> u16 {
    quantize(v.clamp(0.0, 1.0) * 65535.0)
}

/// The CIELAB colour at grid node `index` (0..grid) of each axis of a PCS-input table.
///
/// A CLUT with `grid` points per axis places node `j` at the input code
/// `j × 65535 / (grid − 1)` (ICC.1:2022 §10.12.3, the CLUT spans the full input
/// range); the colour there is that code, unrounded, decoded with the encoding
/// of `version`. In v2 tables the top node therefore sits at L* 100.39, a*, b* 128.
pub fn grid_lab(index: [u32; 3], grid: u32, version: IccVersion) -> Lab {
    let (sl, sab) = scales(version);
    let step = 65535.0 / (grid - 1) as f64;
    let code = index.map(|j| j as f64 * step);
    Lab::new(code[0] / sl, code[1] / sab - 128.0, code[2] / sab - 128.0)
}

#[cfg(test)]
mod tests {
    use super::*;

    // ICC.1:2022 §6.3.4.2: L* 100 ↦ 0xFFFF, a* 0 ↦ 0x8080, a* 127 ↦ 0xFFFF, a* −128 ↦ 0.
    #[test]
    fn v4_reference_codes() {
        assert_eq!(encode_lab(Lab::new(100.0, 0.0, 127.0), IccVersion::V4), [0xFFFF, 0x8080, 0xFFFF]);
        assert_eq!(encode_lab(Lab::new(0.0, -128.0, 0.0), IccVersion::V4), [0, 0, 0x8080]);
    }

    // ICC.1:2001-04 §6.5.5 (legacy encoding): L* 100 ↦ 0xFF00, a* 0 ↦ 0x8000.
    #[test]
    fn v2_reference_codes() {
        assert_eq!(encode_lab(Lab::new(100.0, 0.0, -128.0), IccVersion::V2), [0xFF00, 0x8000, 0]);
    }

    #[test]
    fn grid_nodes_span_the_encoding() {
        let top = grid_lab([16, 16, 16], 17, IccVersion::V4);
        assert!((top.l - 100.0).abs() < 1e-12 && (top.a - 127.0).abs() < 1e-12);
        let mid = grid_lab([8, 8, 8], 17, IccVersion::V2);
        assert!((mid.a - (32767.5 / 256.0 - 128.0)).abs() < 1e-12);
        let top2 = grid_lab([16, 16, 16], 17, IccVersion::V2);
        assert!((top2.l - L_MAX_V2).abs() < 1e-12);
    }

    #[test]
    fn round_trip_within_half_a_code() {
        for version in [IccVersion::V4, IccVersion::V2] {
            let lab = Lab::new(53.2, -41.7, 66.1);
            let back = decode_lab(encode_lab(lab, version), version);
            assert!((back.l - lab.l).abs() <= 0.5 / 652.8 && (back.a - lab.a).abs() <= 0.5 / 256.0);
        }
    }
}
