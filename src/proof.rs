//! Soft proofs: how CMYK prints on a condition, shown on a display.
//!
//! The printed colour is read through the condition's exported ICC output
//! profile (its AToB1 table, evaluated by lcms2), so a proof shows exactly
//! what a colour-managed application shows for a composite that embeds the
//! profile. Media-relative colorimetry puts the paper at the display white;
//! with paper simulation the colour is absolute (ICC.1:2022 Annex A: the
//! media white point scales it), so paper looks like paper. The display is
//! sRGB (IEC 61966-2-1, through `crate::colour`, Bradford from D50 to D65) or
//! an RGB display profile through lcms2. Out-of-gamut display colours are
//! clipped per channel, as lcms2 does for 8-bit output.

use crate::colour::{EncodedRgb, Lab, RgbConverter, RgbSpace};
use crate::error::{Error, Result};
use crate::raster::{Layout, Raster, Samples};
use lcms2::{CIExyY, ColorSpaceSignature, DisallowCache, Flags, GlobalContext, Intent, PixelFormat, Profile, Transform};
use rayon::prelude::*;
use std::path::Path;

type LabToRgb = Transform<[f64; 3], [u8; 3], GlobalContext, DisallowCache>;

/// Where a proof is shown.
enum Display {
    Srgb(RgbConverter),
    /// A display profile: transforms for relative and for absolute colorimetry, and its bytes.
    Profile {
        relative: LabToRgb,
        absolute: LabToRgb,
        bytes: Vec<u8>,
    },
}

/// Turns CMYK into display RGB for one printing condition.
pub struct Proofer {
    to_lab: Transform<[u16; 4], [f64; 3], GlobalContext, DisallowCache>,
    display: Display,
    paper_white: bool,
}

/// Ink channels shown in a progressive: C, C+M, C+M+Y, C+M+Y+K.
pub const PROGRESSIVES: [(&str, [bool; 4]); 4] = [
    ("1-c", [true, false, false, false]),
    ("2-cm", [true, true, false, false]),
    ("3-cmy", [true, true, true, false]),
    ("4-cmyk", [true; 4]),
];

fn lab_profile() -> Result<Profile> {
    Profile::new_lab4_context(GlobalContext::new(), CIExyY::d50()).map_err(|e| Error::Internal(format!("lcms2 Lab profile: {e}")))
}

impl Proofer {
    /// `output_profile`: the condition's CMYK output profile; `display`: an RGB
    /// display profile (file name for errors, bytes), or `None` for sRGB;
    /// `paper_white`: simulate the paper (absolute colorimetric).
    pub fn new(output_profile: &[u8], display: Option<(&Path, Vec<u8>)>, paper_white: bool) -> Result<Proofer> {
        let press =
            Profile::new_icc(output_profile).map_err(|e| Error::Internal(format!("the output profile cannot be read by lcms2: {e}")))?;
        let intent = if paper_white {
            Intent::AbsoluteColorimetric
        } else {
            Intent::RelativeColorimetric
        };
        let lab = lab_profile()?;
        let to_lab = Transform::new_flags_context(
            GlobalContext::new(),
            &press,
            PixelFormat::CMYK_16,
            &lab,
            PixelFormat::Lab_DBL,
            intent,
            Flags::NO_CACHE | Flags::NO_OPTIMIZE,
        )
        .map_err(|e| Error::Internal(format!("lcms2 cannot proof through the output profile: {e}")))?;
        let display = match display {
            None => Display::Srgb(RgbSpace::Srgb.converter()),
            Some((path, bytes)) => {
                let p = Profile::new_icc(&bytes).map_err(|e| Error::input(path, format!("is not a readable ICC profile ({e})")))?;
                if p.color_space() != ColorSpaceSignature::RgbData {
                    return Err(Error::input(
                        path,
                        format!("describes {:?} data; a display profile must be RGB", p.color_space()),
                    ));
                }
                let make = |intent| -> Result<LabToRgb> {
                    Transform::new_flags_context(
                        GlobalContext::new(),
                        &lab,
                        PixelFormat::Lab_DBL,
                        &p,
                        PixelFormat::RGB_8,
                        intent,
                        Flags::NO_CACHE,
                    )
                    .map_err(|e| Error::input(path, format!("cannot be used as a display profile ({e})")))
                };
                Display::Profile {
                    relative: make(Intent::RelativeColorimetric)?,
                    absolute: make(Intent::AbsoluteColorimetric)?,
                    bytes,
                }
            }
        };
        Ok(Proofer {
            to_lab,
            display,
            paper_white,
        })
    }

    /// The display profile's bytes (to embed in the PNG), `None` for sRGB.
    pub fn display_profile(&self) -> Option<&[u8]> {
        match &self.display {
            Display::Srgb(_) => None,
            Display::Profile { bytes, .. } => Some(bytes),
        }
    }

    /// Lab (PCS) → display RGB, 8 bits; `absolute` for colours that carry
    /// the paper (the proof with paper simulation).
    fn display_rgb(&self, labs: &[[f64; 3]], absolute: bool, out: &mut [u8]) {
        match &self.display {
            Display::Srgb(conv) => {
                for (lab, px) in labs.iter().zip(out.chunks_exact_mut(3)) {
                    // Clip in linear light (what a per-channel clip of the encoded value also gives).
                    let lin = conv.xyz_to_linear(Lab::from_array(*lab).to_xyz()).0.map(|v| v.clamp(0.0, 1.0));
                    let enc = conv.encode(crate::colour::LinearRgb(lin));
                    for (o, v) in px.iter_mut().zip(enc.0) {
                        *o = (v * 255.0).round().clamp(0.0, 255.0) as u8;
                    }
                }
            }
            Display::Profile {
                relative, absolute: abs, ..
            } => {
                let t = if absolute { abs } else { relative };
                let mut rgb = vec![[0u8; 3]; labs.len()];
                t.transform_pixels(labs, &mut rgb);
                for (px, v) in out.chunks_exact_mut(3).zip(rgb) {
                    px.copy_from_slice(&v);
                }
            }
        }
    }

    /// The proof of interleaved CMYK samples (0 = no ink) as interleaved 8-bit
    /// display RGB; channels not in `inks` are left unprinted (progressives).
    pub fn proof(&self, samples: &Samples, width: usize, inks: [bool; 4]) -> Vec<u8> {
        let pixels = samples.len() / 4;
        let width = width.max(1);
        let mut out = vec![0u8; pixels * 3];
        out.par_chunks_mut(3 * width).enumerate().for_each(|(row, dst)| {
            let start = row * width;
            let count = dst.len() / 3;
            let quads: Vec<[u16; 4]> = (start..start + count)
                .map(|p| {
                    std::array::from_fn(|c| {
                        if !inks[c] {
                            return 0;
                        }
                        match samples {
                            Samples::U8(v) => v[4 * p + c] as u16 * 257,
                            Samples::U16(v) => v[4 * p + c],
                        }
                    })
                })
                .collect();
            let mut labs = vec![[0.0; 3]; count];
            self.to_lab.transform_pixels(&quads, &mut labs);
            self.display_rgb(&labs, self.paper_white, dst);
        });
        out
    }

    /// The original artwork on the display: RGB or gray (alpha flattened onto
    /// white) through its embedded RGB profile or `space`, or CMYK through its
    /// embedded CMYK profile. `path` names the file in errors.
    pub fn original(&self, raster: &Raster, space: RgbSpace, path: &Path) -> Result<Vec<u8>> {
        let pixels = (raster.width * raster.height) as usize;
        let max = raster.max_value() as f64;
        let ch = raster.channels();
        let value = |i: usize| -> f64 {
            match &raster.samples {
                Samples::U8(v) => v[i] as f64 / max,
                Samples::U16(v) => v[i] as f64 / max,
            }
        };
        let lab = lab_profile()?;
        let labs: Vec<[f64; 3]> = if raster.layout == Layout::Cmyk {
            let bytes = raster.icc_profile.as_ref().ok_or_else(|| {
                Error::input(
                    path,
                    "CMYK input has no embedded profile to show as the original; --side-by-side needs one",
                )
            })?;
            let p = Profile::new_icc(bytes).map_err(|e| Error::input(path, format!("embedded ICC profile cannot be read ({e})")))?;
            if p.color_space() != ColorSpaceSignature::CmykData {
                return Err(Error::input(path, "embedded ICC profile does not describe CMYK"));
            }
            let t: Transform<[f64; 4], [f64; 3], GlobalContext, DisallowCache> = Transform::new_flags_context(
                GlobalContext::new(),
                &p,
                PixelFormat::CMYK_DBL,
                &lab,
                PixelFormat::Lab_DBL,
                Intent::RelativeColorimetric,
                Flags::NO_CACHE,
            )
            .map_err(|e| Error::input(path, format!("embedded ICC profile cannot convert to CIELAB ({e})")))?;
            let cmyk: Vec<[f64; 4]> = (0..pixels).map(|p| std::array::from_fn(|c| value(4 * p + c) * 100.0)).collect();
            let mut out = vec![[0.0; 3]; pixels];
            t.transform_pixels(&cmyk, &mut out);
            out
        } else {
            let rgb: Vec<[f64; 3]> = (0..pixels)
                .map(|p| {
                    let at = |c: usize| value(ch * p + c);
                    let (rgb, alpha) = match raster.layout {
                        Layout::Gray => ([at(0); 3], 1.0),
                        Layout::GrayAlpha => ([at(0); 3], at(1)),
                        Layout::Rgb => ([at(0), at(1), at(2)], 1.0),
                        _ => ([at(0), at(1), at(2)], at(3)),
                    };
                    rgb.map(|v| v * alpha + (1.0 - alpha))
                })
                .collect();
            let profile = match (&raster.icc_profile, raster.layout) {
                (Some(bytes), Layout::Rgb | Layout::Rgba) => Profile::new_icc(bytes)
                    .ok()
                    .filter(|p| p.color_space() == ColorSpaceSignature::RgbData),
                _ => None,
            };
            match profile {
                Some(p) => {
                    let t: Transform<[f64; 3], [f64; 3], GlobalContext, DisallowCache> = Transform::new_flags_context(
                        GlobalContext::new(),
                        &p,
                        PixelFormat::RGB_DBL,
                        &lab,
                        PixelFormat::Lab_DBL,
                        Intent::RelativeColorimetric,
                        Flags::NO_CACHE,
                    )
                    .map_err(|e| Error::input(path, format!("embedded ICC profile cannot convert to CIELAB ({e})")))?;
                    let mut out = vec![[0.0; 3]; pixels];
                    t.transform_pixels(&rgb, &mut out);
                    out
                }
                // No profile: the PNG colour chunks (sRGB, gAMA/cHRM) as `separate` reads them, else the assumed space.
                None => match raster.colour_chunks.as_ref().and_then(|c| c.space.as_ref()) {
                    Some(chunks) => {
                        let (_, source) = crate::source::RgbSource::from_chunks(chunks, path)?;
                        source.labs_of(&rgb).into_iter().map(|l| l.to_array()).collect()
                    }
                    None => {
                        let conv = space.converter();
                        rgb.iter().map(|&v| conv.to_lab(EncodedRgb(v)).to_array()).collect()
                    }
                },
            }
        };
        let mut out = vec![0u8; pixels * 3];
        out.par_chunks_mut(3 * 4096)
            .zip(labs.par_chunks(4096))
            .for_each(|(dst, src)| self.display_rgb(src, false, dst));
        Ok(out)
    }
}

/// Two RGB images of the same size side by side (left | right).
pub fn side_by_side(left: &[u8], right: &[u8], width: usize) -> Vec<u8> {
    let row = 3 * width.max(1);
    let mut out = Vec::with_capacity(left.len() + right.len());
    for (l, r) in left.chunks(row).zip(right.chunks(row)) {
        out.extend_from_slice(l);
        out.extend_from_slice(r);
    }
    out
}

/// Writes 8-bit RGB as PNG: tagged sRGB (sRGB chunk with the gAMA and cHRM
/// that PNG, ISO/IEC 15948 §11.3.3.5, recommends beside it) or with the
/// display profile in iCCP.
pub fn write_png<W: std::io::Write>(w: W, rgb: &[u8], width: u32, height: u32, icc: Option<&[u8]>) -> std::io::Result<()> {
    let mut info = png::Info::with_size(width, height);
    info.color_type = png::ColorType::Rgb;
    info.bit_depth = png::BitDepth::Eight;
    if let Some(bytes) = icc {
        info.icc_profile = Some(std::borrow::Cow::Owned(bytes.to_vec()));
    }
    let mut enc = png::Encoder::with_info(w, info).map_err(std::io::Error::other)?;
    if icc.is_none() {
        enc.set_source_srgb(png::SrgbRenderingIntent::RelativeColorimetric);
    }
    let mut writer = enc.write_header().map_err(std::io::Error::other)?;
    writer.write_image_data(rgb).map_err(std::io::Error::other)?;
    writer.finish().map_err(std::io::Error::other)
}
