//! What a PNG file's colour chunks say about its samples, in the order of
//! precedence of the PNG specification (colour space information: W3C PNG 3rd
//! edition §11.3.2; ISO/IEC 15948:2004 §11.3.3): an ICC profile (iCCP) first, then the sRGB
//! chunk, then cHRM with gAMA. A chunk lower in the order is a fallback for
//! readers that do not understand the ones above it, and is not used when one
//! of those is present.
//!
//! - iCCP is carried by [`super::Raster::icc_profile`]; here it only outranks the rest.
//! - sRGB: the samples are sRGB (IEC 61966-2-1), whatever the gAMA and cHRM say.
//! - gAMA holds the encoding exponent g (sample = linear^g, §11.3.3.2), so the
//!   samples decode with the power 1/g. cHRM holds the CIE 1931 xy chromaticities
//!   of the white point and the three primaries (§11.3.3.1). Where one of the two
//!   is missing, the sRGB one stands in for it (the sRGB primaries and white
//!   point, or the sRGB transfer function; common practice), and the summary says so.
//!
//! cICP (3rd edition, above iCCP in the order) is not read: a file that carries one
//! gets a note, and the chunks below it are used.

use crate::colour::RgbSpace;

/// CIE 1931 xy chromaticities of a cHRM chunk: white point, red, green, blue.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Chromaticities {
    pub white: [f64; 2],
    pub red: [f64; 2],
    pub green: [f64; 2],
    pub blue: [f64; 2],
}

impl Chromaticities {
    /// ITU-R BT.709 primaries with the D65 white point: those of sRGB (IEC 61966-2-1 §3.2).
    pub const SRGB: Chromaticities = Chromaticities {
        white: [0.3127, 0.3290],
        red: [0.64, 0.33],
        green: [0.30, 0.60],
        blue: [0.15, 0.06],
    };

    /// Whether the chromaticities describe a usable space: every point a real
    /// chromaticity (x, y > 0, x + y ≤ 1) and the primaries spanning a triangle
    /// round the white point (the RGB → XYZ matrix is then invertible).
    pub fn is_valid(&self) -> bool {
        let points = [self.white, self.red, self.green, self.blue];
        let real = points
            .iter()
            .all(|&[x, y]| x.is_finite() && y.is_finite() && x >= 0.0 && y > 0.0 && x + y <= 1.0 + 1e-9);
        if !real {
            return false;
        }
        // Signed areas of the triangles the white point makes with each edge: all of one
        // sign when the white point lies inside the primaries' triangle.
        let cross = |a: [f64; 2], b: [f64; 2], p: [f64; 2]| (b[0] - a[0]) * (p[1] - a[1]) - (b[1] - a[1]) * (p[0] - a[0]);
        let sides = [
            cross(self.red, self.green, self.white),
            cross(self.green, self.blue, self.white),
            cross(self.blue, self.red, self.white),
        ];
        sides.iter().all(|&s| s > 1e-9) || sides.iter().all(|&s| s < -1e-9)
    }
}

/// The colour space the chunks below iCCP give.
#[derive(Debug, Clone, PartialEq)]
pub enum ChunkSpace {
    /// The sRGB chunk: the samples are sRGB.
    Srgb { rendering_intent: &'static str },
    /// gAMA and/or cHRM; a missing one is `None` (sRGB's stands in).
    Described {
        gamma: Option<f64>,
        chromaticities: Option<Chromaticities>,
    },
}

impl ChunkSpace {
    /// The named space this is, when it is one.
    pub fn named(&self) -> Option<RgbSpace> {
        match self {
            ChunkSpace::Srgb { .. } => Some(RgbSpace::Srgb),
            ChunkSpace::Described { .. } => None,
        }
    }

    /// How the summary names it.
    pub fn describe(&self) -> String {
        match self {
            ChunkSpace::Srgb { rendering_intent } => format!("sRGB (PNG sRGB chunk, {rendering_intent} intent)"),
            ChunkSpace::Described { gamma, chromaticities } => {
                let gamma = match gamma {
                    Some(g) => format!("gAMA {} (decoding exponent {:.3})", trim(*g), 1.0 / g),
                    None => "no gAMA (sRGB transfer assumed)".to_string(),
                };
                let xy = |p: [f64; 2]| format!("{} {}", trim(p[0]), trim(p[1]));
                let chrm = match chromaticities {
                    Some(c) => format!(
                        "cHRM white {}, red {}, green {}, blue {}",
                        xy(c.white),
                        xy(c.red),
                        xy(c.green),
                        xy(c.blue)
                    ),
                    None => "no cHRM (sRGB primaries and D65 white assumed)".to_string(),
                };
                format!("PNG {gamma}, {chrm}")
            }
        }
    }
}

/// A chunk value (a multiple of 1/100 000) without trailing zeros.
fn trim(v: f64) -> String {
    let s = format!("{v:.5}");
    s.trim_end_matches('0').trim_end_matches('.').to_string()
}

/// The colour chunks of a PNG file other than iCCP.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct ColourChunks {
    /// The space given by sRGB, or by gAMA and cHRM; `None` when the file has none of them
    /// (or only unusable ones).
    pub space: Option<ChunkSpace>,
    /// The colour chunks present (sRGB, gAMA, cHRM, cICP), in that order: the ones an
    /// iCCP profile outranks are named in the summary.
    pub present: Vec<&'static str>,
    /// What was present and could not be used (an invalid cHRM, a cICP chunk).
    pub notes: Vec<String>,
}

impl ColourChunks {
    /// Reads the chunks the png crate decoded. `None` when there are none.
    pub(super) fn from_info(info: &png::Info) -> Option<ColourChunks> {
        let mut chunks = ColourChunks::default();
        let gamma = info.gama_chunk.map(|g| f64::from(g.into_scaled()) / 100_000.0);
        let chrm = info.chrm_chunk.map(|c| {
            let xy = |p: (png::ScaledFloat, png::ScaledFloat)| [f64::from(p.0.into_scaled()) / 1e5, f64::from(p.1.into_scaled()) / 1e5];
            Chromaticities {
                white: xy(c.white),
                red: xy(c.red),
                green: xy(c.green),
                blue: xy(c.blue),
            }
        });
        if info.srgb.is_some() {
            chunks.present.push("sRGB");
        }
        if gamma.is_some() {
            chunks.present.push("gAMA");
        }
        if chrm.is_some() {
            chunks.present.push("cHRM");
        }
        if let Some(cicp) = &info.coding_independent_code_points {
            chunks.present.push("cICP");
            chunks.notes.push(format!(
                "PNG cICP chunk (primaries {}, transfer {}) not read; the chunks below it in the PNG order of precedence are used",
                cicp.color_primaries, cicp.transfer_function
            ));
        }
        if chunks.present.is_empty() {
            return None;
        }
        chunks.space = if let Some(intent) = info.srgb {
            Some(ChunkSpace::Srgb {
                rendering_intent: match intent {
                    png::SrgbRenderingIntent::Perceptual => "perceptual",
                    png::SrgbRenderingIntent::RelativeColorimetric => "relative colorimetric",
                    png::SrgbRenderingIntent::Saturation => "saturation",
                    png::SrgbRenderingIntent::AbsoluteColorimetric => "absolute colorimetric",
                },
            })
        } else {
            let chromaticities = match chrm {
                Some(c) if !c.is_valid() => {
                    chunks
                        .notes
                        .push("PNG cHRM chunk ignored: its chromaticities do not form a colour space".into());
                    None
                }
                other => other,
            };
            // The png crate refuses a gAMA of 0; a finite positive exponent is all that is left.
            let gamma = gamma.filter(|g| g.is_finite() && *g > 0.0);
            (gamma.is_some() || chromaticities.is_some()).then_some(ChunkSpace::Described { gamma, chromaticities })
        };
        Some(chunks)
    }

    /// The note for a file whose iCCP profile was used: the chunks it outranked.
    pub fn outranked_note(&self) -> Option<String> {
        let below: Vec<&str> = self.present.iter().copied().filter(|c| *c != "cICP").collect();
        (!below.is_empty()).then(|| format!("PNG {} not used: the iCCP profile takes precedence", below.join(", ")))
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn srgb_chromaticities_are_valid_and_degenerate_ones_are_not() {
        assert!(Chromaticities::SRGB.is_valid());
        // Collinear primaries: no triangle.
        let flat = Chromaticities {
            red: [0.6, 0.3],
            green: [0.4, 0.3],
            blue: [0.2, 0.3],
            ..Chromaticities::SRGB
        };
        assert!(!flat.is_valid());
        // White point outside the primaries.
        let outside = Chromaticities {
            white: [0.7, 0.29],
            ..Chromaticities::SRGB
        };
        assert!(!outside.is_valid());
        // y = 0 is no chromaticity.
        let zero = Chromaticities {
            blue: [0.15, 0.0],
            ..Chromaticities::SRGB
        };
        assert!(!zero.is_valid());
    }

    #[test]
    fn the_summary_names_the_chunk_values() {
        let s = ChunkSpace::Described {
            gamma: Some(1.0),
            chromaticities: None,
        };
        assert_eq!(
            s.describe(),
            "PNG gAMA 1 (decoding exponent 1.000), no cHRM (sRGB primaries and D65 white assumed)"
        );
    }
}
