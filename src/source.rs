//! Where source RGB colour comes from: a named RGB space, the ICC profile
//! embedded in the file, or the space a PNG file's gAMA and cHRM chunks
//! describe, both of the latter through lcms2.
//!
//! Both give CIELAB D50 in the ICC profile connection space (media-relative
//! colorimetry, ICC.1:2022 §6.3) for the nodes of the separation table, and a
//! gamut for the perceptual intent.

use crate::colour::{EncodedRgb, Lab, RgbSpace};
use crate::error::{Error, Result};
use crate::raster::png_colour::{Chromaticities, ChunkSpace};
use crate::separation::{RgbGamut, SourceGamut};
use lcms2::{
    CIExyY, CIExyYTRIPLE, ColorSpaceSignature, DisallowCache, Flags, GlobalContext, Intent, PixelFormat, Profile, ToneCurve, Transform,
};
use std::path::Path;

/// An ICC-described RGB source, shareable across threads.
pub struct IccRgb {
    /// How the summary names it: the embedded profile by its description tag, or
    /// the PNG chunks it was built from.
    description: String,
    to_lab: Transform<[f64; 3], [f64; 3], GlobalContext, DisallowCache>,
    from_lab: Transform<[f64; 3], [f64; 3], GlobalContext, DisallowCache>,
}

/// The colour space of source RGB values.
pub enum RgbSource {
    Named(RgbSpace),
    Icc(Box<IccRgb>),
}

impl RgbSource {
    /// Opens an embedded RGB profile; `file` names the image for errors.
    pub fn from_icc(bytes: &[u8], file: &Path) -> Result<RgbSource> {
        let bad = |what: &str| Error::input(file, format!("embedded ICC profile {what}"));
        let profile = Profile::new_icc(bytes).map_err(|e| bad(&format!("cannot be read ({e})")))?;
        if profile.color_space() != ColorSpaceSignature::RgbData {
            let space = format!("{:?}", profile.color_space());
            return Err(bad(&format!("describes {} data, not RGB", space.trim_end_matches("Data"))));
        }
        let description = profile
            .info(lcms2::InfoType::Description, lcms2::Locale::none())
            .filter(|d| !d.trim().is_empty())
            .unwrap_or_else(|| "unnamed".to_string());
        Self::from_profile(&profile, format!("embedded ICC profile \"{description}\""), &bad)
    }

    /// The space that PNG gAMA and cHRM chunks describe (`ChunkSpace::Described`),
    /// built as a matrix/TRC profile by lcms2 (`cmsCreateRGBProfile`: the primaries
    /// adapted to D50 by Bradford, ICC.1:2022 Annex E); a missing chunk stands in
    /// with sRGB's primaries or its transfer function. A named space (the sRGB
    /// chunk) is returned as such. Together with the profile's ICC bytes, which key
    /// the table cache.
    pub fn from_chunks(space: &ChunkSpace, file: &Path) -> Result<(Vec<u8>, RgbSource)> {
        let (gamma, chromaticities) = match space {
            ChunkSpace::Described { gamma, chromaticities } => (*gamma, chromaticities.unwrap_or(Chromaticities::SRGB)),
            other => {
                let named = other.named().unwrap_or(RgbSpace::Srgb);
                return Ok((format!("named:{}", named.name()).into_bytes(), RgbSource::Named(named)));
            }
        };
        let bad = |what: &str| Error::input(file, format!("PNG colour chunks {what}"));
        let xyy = |p: [f64; 2]| CIExyY { x: p[0], y: p[1], Y: 1.0 };
        let white = xyy(chromaticities.white);
        let primaries = CIExyYTRIPLE {
            Red: xyy(chromaticities.red),
            Green: xyy(chromaticities.green),
            Blue: xyy(chromaticities.blue),
        };
        let curve = match gamma {
            // gAMA is the encoding exponent (ISO/IEC 15948 §11.3.3.2): decode with its inverse.
            Some(g) => ToneCurve::new(1.0 / g),
            // The sRGB transfer function (IEC 61966-2-1) as ICC parametric curve type 4.
            None => ToneCurve::new_parametric(4, &[2.4, 1.0 / 1.055, 0.055 / 1.055, 1.0 / 12.92, 0.04045])
                .map_err(|e| Error::Internal(format!("sRGB tone curve: {e}")))?,
        };
        let profile =
            Profile::new_rgb(&white, &primaries, &[&curve, &curve, &curve]).map_err(|e| bad(&format!("give no colour space ({e})")))?;
        let key = profile.icc().map_err(|e| Error::Internal(format!("PNG chunk profile: {e}")))?;
        Ok((key, Self::from_profile(&profile, space.describe(), &bad)?))
    }

    fn from_profile(profile: &Profile, description: String, bad: &dyn Fn(&str) -> Error) -> Result<RgbSource> {
        let lab = Profile::new_lab4_context(GlobalContext::new(), CIExyY::d50()).map_err(|e| Error::Internal(e.to_string()))?;
        let intent = Intent::RelativeColorimetric;
        let to_lab = Transform::new_flags_context(
            GlobalContext::new(),
            profile,
            PixelFormat::RGB_DBL,
            &lab,
            PixelFormat::Lab_DBL,
            intent,
            Flags::NO_CACHE,
        )
        .map_err(|e| bad(&format!("cannot convert to CIELAB ({e})")))?;
        let from_lab = Transform::new_flags_context(
            GlobalContext::new(),
            &lab,
            PixelFormat::Lab_DBL,
            profile,
            PixelFormat::RGB_DBL,
            intent,
            Flags::NO_CACHE,
        )
        .map_err(|e| bad(&format!("cannot convert from CIELAB ({e})")))?;
        Ok(RgbSource::Icc(Box::new(IccRgb {
            description,
            to_lab,
            from_lab,
        })))
    }

    /// How the summary names the source.
    pub fn describe(&self) -> String {
        match self {
            RgbSource::Named(s) => s.name().to_string(),
            RgbSource::Icc(p) => p.description.clone(),
        }
    }

    /// CIELAB D50 of the nodes of an n³ table, in table order ((r·n + g)·n + b).
    pub fn node_labs(&self, n: usize) -> Vec<Lab> {
        let coord = |i: usize| i as f64 / (n - 1) as f64;
        let rgb: Vec<[f64; 3]> = (0..n * n * n)
            .map(|i| [coord(i / (n * n)), coord((i / n) % n), coord(i % n)])
            .collect();
        self.labs_of(&rgb)
    }

    /// CIELAB D50 (PCS) of many encoded RGB values (0..1), in order.
    pub fn labs_of(&self, rgb: &[[f64; 3]]) -> Vec<Lab> {
        match self {
            RgbSource::Named(space) => {
                let conv = space.converter();
                rgb.iter().map(|&v| conv.to_lab(EncodedRgb(v))).collect()
            }
            RgbSource::Icc(p) => {
                // lcms2's floating-point RGB is 0..1, its Lab_DBL is plain L*a*b*.
                let mut out = vec![[0.0; 3]; rgb.len()];
                p.to_lab.transform_pixels(rgb, &mut out);
                out.into_iter().map(Lab::from_array).collect()
            }
        }
    }

    /// The source gamut, for the perceptual intent.
    pub fn gamut(&self) -> Box<dyn SourceGamut + '_> {
        match self {
            RgbSource::Named(space) => Box::new(RgbGamut(space.converter())),
            RgbSource::Icc(p) => Box::new(IccGamut(p)),
        }
    }
}

struct IccGamut<'a>(&'a IccRgb);

impl SourceGamut for IccGamut<'_> {
    fn contains(&self, lab: Lab) -> bool {
        let mut out = [[0.0; 3]];
        self.0.from_lab.transform_pixels(&[lab.to_array()], &mut out);
        let back = {
            let mut l = [[0.0; 3]];
            self.0.to_lab.transform_pixels(&out, &mut l);
            Lab::from_array(l[0])
        };
        // lcms2 clamps where a profile is table-based: a colour is inside when
        // it survives the round trip.
        out[0].iter().all(|&v| (-1e-6..=1.0 + 1e-6).contains(&v)) && crate::colour::delta_e76(back, lab) < 0.5
    }

    fn primaries(&self) -> Option<[Lab; 6]> {
        let corners = crate::separation::gamut::RGB_CORNERS;
        let mut out = [[0.0; 3]; 6];
        self.0.to_lab.transform_pixels(&corners, &mut out);
        Some(out.map(Lab::from_array))
    }

    fn ridge(&self) -> Option<Vec<Lab>> {
        let corners = crate::separation::gamut::RGB_CORNERS;
        let pts = std::cell::RefCell::new(Vec::new());
        crate::separation::gamut::ridge_samples(&corners, &|rgb| {
            pts.borrow_mut().push(rgb);
            Lab::default()
        });
        let pts = pts.into_inner();
        let mut out = vec![[0.0; 3]; pts.len()];
        self.0.to_lab.transform_pixels(&pts, &mut out);
        Some(out.into_iter().map(Lab::from_array).collect())
    }
}
