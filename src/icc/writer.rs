//! Building a CMYK output profile from callbacks sampled on regular grids.

use super::IccVersion;
use super::encoding::{encode_lab, encode_unit, grid_lab};
use super::ffi::{Framing, clut_pipeline};
use super::float_tables::{self, FloatTables};
use crate::colour::{Lab, Xyz};
use crate::ink::Cmyk;
use crate::{Error, Result};
use lcms2::{CIEXYZ, ColorSpaceSignature, Intent, Locale, MLU, Profile, ProfileClassSignature, Tag, TagSignature};
use rayon::prelude::*;

/// Default grid of the AToB tables (points per CMYK axis): 17⁴ = 83 521 nodes,
/// 0.5 MB per table. The accuracy this gives is measured in tests/suite/icc_profile.rs.
pub const DEFAULT_A2B_GRID: u32 = 17;
/// Default grid of the BToA and gamut tables (points per L*, a*, b* axis): 33³ nodes.
pub const DEFAULT_B2A_GRID: u32 = 33;
/// Copyright text written when the caller has nothing more specific.
pub const DEFAULT_COPYRIGHT: &str = "Made with platesmith from a model of the printing condition; free to use and share.";

/// Largest table accepted, in 16-bit values (48 MiB of table data, e.g. 63⁴ × 3):
/// far beyond any useful grid, small enough to never exhaust memory.
const MAX_TABLE_VALUES: usize = 24 << 20;

/// The description written for a printing condition.
pub fn default_description(condition: &str) -> String {
    format!("platesmith output profile for {condition}")
}

/// Everything a CMYK output profile is made from.
///
/// The callbacks work in the PCS of their intent and must be thread-safe:
/// tables are sampled in parallel.
pub struct OutputProfileSpec<'a> {
    /// Profile description (`desc`), e.g. from [`default_description`].
    pub description: String,
    /// Copyright text (`cprt`).
    pub copyright: String,
    pub version: IccVersion,
    /// The paper as measured: absolute CIEXYZ, D50, Y of the perfect diffuser = 1.
    /// Written as the media white point (`wtpt`): ICC.1:2022 §9.2.36 asks output
    /// profiles for the media white adapted to the PCS white; measurements under
    /// D50 need no adaptation, so no `chad` tag is written.
    pub media_white: Xyz,
    /// CMYK (fractions) → media-relative CIELAB D50 (paper = L* 100): AToB1,
    /// and AToB0/AToB2 unless `a2b_perceptual` is given.
    pub a2b: &'a (dyn Fn(Cmyk) -> Lab + Sync),
    /// CMYK → CIELAB for the perceptual and saturation intents (AToB0, AToB2).
    /// In v4 the perceptual PCS refers to the perceptual reference medium
    /// (ICC.1:2022 §6.2.4.3, black L* ≈ 3.14) and lcms2 assumes that black for
    /// v4 perceptual tables; `None` writes the colorimetric table there.
    pub a2b_perceptual: Option<&'a (dyn Fn(Cmyk) -> Lab + Sync)>,
    /// PCS CIELAB → CMYK for perceptual (BToA0), relative colorimetric (BToA1)
    /// and saturation (BToA2). The input of BToA1 is media-relative CIELAB.
    pub b2a: [&'a (dyn Fn(Lab) -> Cmyk + Sync); 3],
    /// Media-relative CIELAB → how far outside the gamut the colour lies (ΔE2000;
    /// 0 inside). Stored as the gamut tag with one code per ΔE, rounded, as
    /// lcms2's own gamut tables count: colours under 0.5 ΔE outside count as inside.
    pub gamut: &'a (dyn Fn(Lab) -> f64 + Sync),
    /// Points per CMYK axis of the AToB tables (2..=255).
    pub a2b_grid: u32,
    /// Points per L*, a*, b* axis of the BToA and gamut tables (2..=255).
    pub b2a_grid: u32,
    /// Floating-point BToD0/1/2 tables (version 4 only; ignored for version 2,
    /// which has no `multiProcessElementsType`).
    pub float_b2d: Option<&'a FloatTables>,
}

/// Builds the profile and returns its bytes.
///
/// Errors: `Usage` for grids out of range, `Internal` when a callback returns a
/// non-finite value (the node is named) or lcms2 refuses a tag.
pub fn build_output_profile(spec: &OutputProfileSpec) -> Result<Vec<u8>> {
    check_grid("AToB", spec.a2b_grid, 4, 3)?;
    check_grid("BToA", spec.b2a_grid, 3, 4)?;
    let w = spec.media_white;
    if !(w.x > 0.0 && w.y > 0.0 && w.z > 0.0 && w.x.is_finite() && w.y.is_finite() && w.z.is_finite()) {
        return Err(Error::usage(format!("media white must be positive XYZ, got {w:?}")));
    }
    let version = spec.version;
    let framing = match version {
        IccVersion::V4 => Framing::CurvesAroundClut,
        IccVersion::V2 => Framing::ClutOnly,
    };

    let a2b_colorimetric = sample_a2b("AToB1", spec.a2b, spec.a2b_grid, version)?;
    let a2b_perceptual = match spec.a2b_perceptual {
        Some(f) => Some(sample_a2b("AToB0", f, spec.a2b_grid, version)?),
        None => None,
    };
    let names = ["BToA0", "BToA1", "BToA2"];
    let mut b2a = Vec::with_capacity(3);
    for (name, f) in names.iter().zip(spec.b2a) {
        b2a.push(sample_pcs(name, spec.b2a_grid, version, 4, &|lab, out: &mut [u16]| {
            let ink = f(lab);
            if !ink.is_finite() {
                return false;
            }
            for (o, v) in out.iter_mut().zip(ink.to_array()) {
                *o = encode_unit(v);
            }
            true
        })?);
    }
    let gamut = sample_pcs("gamut", spec.b2a_grid, version, 1, &|lab, out: &mut [u16]| {
        let de = (spec.gamut)(lab);
        if !de.is_finite() {
            return false;
        }
        out[0] = (de.max(0.0) + 0.5).floor().min(65535.0) as u16;
        true
    })?;

    let mut profile = Profile::new_placeholder();
    profile.set_device_class(ProfileClassSignature::OutputClass);
    profile.set_color_space(ColorSpaceSignature::CmykData);
    profile.set_pcs(ColorSpaceSignature::LabData);
    profile.set_version(version.number());
    profile.set_header_rendering_intent(Intent::Perceptual);

    let locale = Locale::new("en_US");
    let mut description = MLU::new(1);
    let mut copyright = MLU::new(1);
    if !description.set_text(&spec.description, locale) || !copyright.set_text(&spec.copyright, locale) {
        return Err(Error::usage(
            "profile description and copyright must be text without NUL characters",
        ));
    }
    write(&mut profile, TagSignature::ProfileDescriptionTag, Tag::MLU(&description))?;
    write(&mut profile, TagSignature::CopyrightTag, Tag::MLU(&copyright))?;
    let white = CIEXYZ { X: w.x, Y: w.y, Z: w.z };
    write(&mut profile, TagSignature::MediaWhitePointTag, Tag::CIEXYZ(&white))?;

    let pipe = |grid, inputs, outputs, table: &[u16]| clut_pipeline(inputs, outputs, grid, table, framing);
    let colorimetric = pipe(spec.a2b_grid, 4, 3, &a2b_colorimetric)?;
    write(&mut profile, TagSignature::AToB1Tag, Tag::Pipeline(&colorimetric))?;
    match a2b_perceptual {
        Some(table) => {
            let perceptual = pipe(spec.a2b_grid, 4, 3, &table)?;
            write(&mut profile, TagSignature::AToB0Tag, Tag::Pipeline(&perceptual))?;
            link(&mut profile, TagSignature::AToB2Tag, TagSignature::AToB0Tag)?;
        }
        None => {
            link(&mut profile, TagSignature::AToB0Tag, TagSignature::AToB1Tag)?;
            link(&mut profile, TagSignature::AToB2Tag, TagSignature::AToB1Tag)?;
        }
    }
    // Identical BToA tables (callers often pass one inversion for two intents)
    // are stored once and shared (ICC.1:2022 §7.3.1 allows tags to share data).
    let b2a_tags = [TagSignature::BToA0Tag, TagSignature::BToA1Tag, TagSignature::BToA2Tag];
    for i in 0..3 {
        match (0..i).find(|&j| b2a[j] == b2a[i]) {
            Some(j) => link(&mut profile, b2a_tags[i], b2a_tags[j])?,
            None => {
                let p = pipe(spec.b2a_grid, 3, 4, &b2a[i])?;
                write(&mut profile, b2a_tags[i], Tag::Pipeline(&p))?;
            }
        }
    }
    let gamut = pipe(spec.b2a_grid, 3, 1, &gamut)?;
    write(&mut profile, TagSignature::GamutTag, Tag::Pipeline(&gamut))?;
    if let (Some(tables), IccVersion::V4) = (spec.float_b2d, version) {
        let b2d_tags = [TagSignature::BToD0Tag, TagSignature::BToD1Tag, TagSignature::BToD2Tag];
        for i in 0..3 {
            match (0..i).find(|&j| tables.intents[j] == tables.intents[i]) {
                Some(j) => link(&mut profile, b2d_tags[i], b2d_tags[j])?,
                None => {
                    if let Some(bad) = tables.intents[i].table.iter().position(|v| !v.is_finite()) {
                        return Err(Error::Internal(format!(
                            "{}: node {} is not a number",
                            names[i].replace("BToA", "BToD"),
                            bad / 4
                        )));
                    }
                    let p = float_tables::pipeline(&tables.frame, &tables.intents[i])?;
                    write(&mut profile, b2d_tags[i], Tag::Pipeline(&p))?;
                }
            }
        }
    }

    let serialise = |p: &Profile| {
        p.icc()
            .map_err(|e| Error::Internal(format!("lcms2 could not serialise the profile: {e}")))
    };
    let mut bytes = serialise(&profile)?;
    stamp_creation_date(&mut bytes, creation_epoch());
    if version == IccVersion::V4 {
        // The profile ID (MD5 of the profile, ICC.1:2022 §7.2.18) exists only
        // in v4; it covers the date, so it is computed after the stamp.
        let mut stamped = Profile::new_icc(&bytes).map_err(|e| Error::Internal(format!("lcms2 could not read back the profile: {e}")))?;
        stamped.set_default_profile_id();
        bytes = serialise(&stamped)?;
    }
    Ok(bytes)
}

/// 2026-01-01T00:00:00Z, the creation date written when SOURCE_DATE_EPOCH is
/// not set.
const FIXED_CREATION_EPOCH: i64 = 1_767_225_600;

/// The creation date of every profile: `SOURCE_DATE_EPOCH` (seconds since
/// 1970, the reproducible-builds convention) when set, else a fixed date, so
/// that the same settings give byte-identical profiles and composites.
fn creation_epoch() -> i64 {
    std::env::var("SOURCE_DATE_EPOCH")
        .ok()
        .and_then(|v| v.trim().parse::<i64>().ok())
        .filter(|&v| v >= 0)
        .unwrap_or(FIXED_CREATION_EPOCH)
}

/// Writes the header's creation date (ICC.1:2022 §7.2.8, a dateTimeNumber at
/// byte 24: year, month, day, hours, minutes, seconds as big-endian u16, UTC).
fn stamp_creation_date(bytes: &mut [u8], epoch: i64) {
    if bytes.len() < 36 {
        return;
    }
    let (days, secs) = (epoch.div_euclid(86_400), epoch.rem_euclid(86_400));
    let (year, month, day) = crate::calendar::civil_from_days(days);
    let fields = [
        year as u16,
        month as u16,
        day as u16,
        (secs / 3600) as u16,
        (secs / 60 % 60) as u16,
        (secs % 60) as u16,
    ];
    for (i, v) in fields.iter().enumerate() {
        bytes[24 + 2 * i..26 + 2 * i].copy_from_slice(&v.to_be_bytes());
    }
}

fn check_grid(what: &str, grid: u32, inputs: u32, outputs: usize) -> Result<()> {
    if !(2..=255).contains(&grid) {
        return Err(Error::usage(format!("{what} grid must have 2 to 255 points per axis, got {grid}")));
    }
    if (grid as usize).pow(inputs) * outputs > MAX_TABLE_VALUES {
        return Err(Error::usage(format!(
            "{what} grid of {grid} points per axis makes a table too large to write"
        )));
    }
    Ok(())
}

fn write(profile: &mut Profile, sig: TagSignature, tag: Tag<'_>) -> Result<()> {
    if profile.write_tag(sig, tag) {
        Ok(())
    } else {
        Err(Error::Internal(format!("lcms2 could not write the {sig:?} tag")))
    }
}

fn link(profile: &mut Profile, sig: TagSignature, to: TagSignature) -> Result<()> {
    if profile.link_tag(sig, to) {
        Ok(())
    } else {
        Err(Error::Internal(format!("lcms2 could not link the {sig:?} tag to {to:?}")))
    }
}

/// Samples CMYK → Lab on a 4D grid (C slowest, K fastest).
fn sample_a2b(name: &str, f: &(dyn Fn(Cmyk) -> Lab + Sync), grid: u32, version: IccVersion) -> Result<Vec<u16>> {
    let n = grid as usize;
    let step = 1.0 / (n - 1) as f64;
    let mut table = vec![0u16; n.pow(4) * 3];
    table.par_chunks_mut(3).enumerate().try_for_each(|(node, out)| {
        let idx = [node / (n * n * n), node / (n * n) % n, node / n % n, node % n];
        let ink = Cmyk::from_array(idx.map(|i| i as f64 * step));
        let lab = f(ink);
        if !lab.is_finite() {
            return Err(Error::Internal(format!(
                "{name}: the colour of C {:.1} M {:.1} Y {:.1} K {:.1} % is not a number",
                ink.c * 100.0,
                ink.m * 100.0,
                ink.y * 100.0,
                ink.k * 100.0
            )));
        }
        out.copy_from_slice(&encode_lab(lab, version));
        Ok(())
    })?;
    Ok(table)
}

/// Samples a PCS-input table on a 3D grid (L* slowest, b* fastest); `f`
/// writes one node's outputs and returns false for a non-finite result.
fn sample_pcs(
    name: &str,
    grid: u32,
    version: IccVersion,
    outputs: usize,
    f: &(dyn Fn(Lab, &mut [u16]) -> bool + Sync),
) -> Result<Vec<u16>> {
    let n = grid as usize;
    let mut table = vec![0u16; n.pow(3) * outputs];
    table.par_chunks_mut(outputs).enumerate().try_for_each(|(node, out)| {
        let idx = [node / (n * n), node / n % n, node % n].map(|i| i as u32);
        let lab = grid_lab(idx, grid, version);
        if f(lab, out) {
            Ok(())
        } else {
            Err(Error::Internal(format!(
                "{name}: the result for L* {:.2} a* {:.2} b* {:.2} is not a number",
                lab.l, lab.a, lab.b
            )))
        }
    })?;
    Ok(table)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn creation_date_is_written_as_icc_date_time_number() {
        // 2026-01-01T00:00:00Z and the instant 1234567890 =
        // 2009-02-13T23:31:30Z (from memory; `calendar`'s tests check the
        // same conversion against Python's datetime and the system date tool).
        let mut header = vec![0u8; 128];
        stamp_creation_date(&mut header, FIXED_CREATION_EPOCH);
        assert_eq!(&header[24..36], &[0x07, 0xEA, 0, 1, 0, 1, 0, 0, 0, 0, 0, 0]);
        stamp_creation_date(&mut header, 1_234_567_890);
        let words: Vec<u16> = header[24..36].chunks(2).map(|c| u16::from_be_bytes([c[0], c[1]])).collect();
        assert_eq!(words, [2009, 2, 13, 23, 31, 30]);
    }
}
