//! The gamut of one picture, for image-adaptive perceptual mapping.
//!
//! An ICC profile maps from a whole source space because it never sees the
//! image; a separation does. [`PictureGamut`] keeps, per lightness band and
//! hue sector of the working space of the perceptual mapping (IPT × 100, see
//! [`super::gamut::working_polar`]), the picture's colour of largest chroma:
//! the segment-maxima description of a gamut (Morovič & Luo, Color Res.
//! Appl. 25 (2000) 394–401). The perceptual mapping measures how far beyond
//! the press gamut each of them lies and compresses each region of colour
//! space only as far as the picture reaches there, so a picture that barely
//! leaves the press gamut is barely compressed
//! ([`super::PerceptualMap::for_picture`]).
//!
//! The colours are the picture's distinct values, gathered in bins of 4 × 4
//! × 4 eight-bit codes (2¹⁸ bins); each bin keeps its most colourful value
//! (largest spread between channels), which is the one that decides the
//! largest chroma. Sixteen-bit input is binned on its high byte.

use super::gamut::working_polar;
use crate::colour::Lab;
use rayon::prelude::*;

/// Lightness per band (working units, 0..100).
pub const BAND: f64 = 2.0;
pub const BANDS: usize = 51;
/// Hue per sector, degrees.
pub const SECTOR: f64 = 5.0;
pub const SECTORS: usize = 72;

/// The band and sector of a working-space lightness and hue.
pub fn cell_of(i: f64, h: f64) -> usize {
    let b = ((i / BAND).round().max(0.0) as usize).min(BANDS - 1);
    let s = ((h.rem_euclid(360.0) / SECTOR).round() as usize) % SECTORS;
    b * SECTORS + s
}

/// The colours of largest chroma of a picture, one per lightness band and
/// hue sector it occupies.
#[derive(Debug, Clone)]
pub struct PictureGamut {
    extremes: Vec<Lab>,
    colours: usize,
}

impl PictureGamut {
    /// From the picture's colours (CIELAB D50, media-relative, as the source gives them).
    pub fn from_colours(labs: &[Lab]) -> PictureGamut {
        let mut cells: Vec<Option<(f64, Lab)>> = vec![None; BANDS * SECTORS];
        for &lab in labs {
            let (i, c, h) = working_polar(lab);
            if !(i.is_finite() && c.is_finite() && h.is_finite()) {
                continue;
            }
            let cell = &mut cells[cell_of(i, h)];
            if cell.is_none_or(|(best, _)| c > best) {
                *cell = Some((c, lab));
            }
        }
        PictureGamut {
            extremes: cells.into_iter().flatten().map(|(_, lab)| lab).collect(),
            colours: labs.len(),
        }
    }

    /// Number of distinct colours (bins) the gamut was made from.
    pub fn colours(&self) -> usize {
        self.colours
    }

    /// The colour of largest chroma in each occupied band and sector.
    pub fn extremes(&self) -> &[Lab] {
        &self.extremes
    }
}

/// A sample type of interleaved RGB pixels.
pub trait RgbCode: Copy + Send + Sync {
    /// The value as an 8-bit code (the high byte of a 16-bit one).
    fn code8(self) -> u32;
}

impl RgbCode for u8 {
    fn code8(self) -> u32 {
        self as u32
    }
}

impl RgbCode for u16 {
    fn code8(self) -> u32 {
        (self >> 8) as u32
    }
}

const BIN_BITS: u32 = 6;

/// The distinct colours of interleaved RGB pixels, as encoded values 0..1:
/// one per occupied bin of 4 × 4 × 4 eight-bit codes, the bin's most
/// colourful value.
pub fn distinct_colours<T: RgbCode>(rgb: &[T]) -> Vec<[f64; 3]> {
    let mut colours = DistinctColours::new();
    colours.add(rgb);
    colours.colours()
}

/// [`distinct_colours`] gathered a part of the picture at a time (a streamed job
/// adds each band of rows): each bin keeps the largest of its pixels' keys, so
/// the result does not depend on how the picture was cut.
#[derive(Debug, Clone)]
pub struct DistinctColours {
    /// One set of bins per part of each addition (one part per thread), kept
    /// across additions and merged when the colours are asked for: a band
    /// costs no zeroing and no merging of whole sets of bins.
    parts: Vec<Vec<u64>>,
}

impl Default for DistinctColours {
    fn default() -> Self {
        DistinctColours::new()
    }
}

impl DistinctColours {
    pub fn new() -> DistinctColours {
        DistinctColours {
            parts: vec![vec![0; 1 << (3 * BIN_BITS)]; rayon::current_num_threads().max(1)],
        }
    }

    /// Adds interleaved RGB samples (whole pixels).
    pub fn add<T: RgbCode>(&mut self, rgb: &[T]) {
        let shift = 8 - BIN_BITS;
        let pixels = rgb.len() / 3;
        let per_part = pixels.div_ceil(self.parts.len()).max(1);
        self.parts
            .par_iter_mut()
            .zip(rgb.par_chunks(3 * per_part))
            .for_each(|(bins, part)| {
                for px in part.chunks_exact(3) {
                    let (r, g, b) = (px[0].code8(), px[1].code8(), px[2].code8());
                    let key = (((r >> shift) << (2 * BIN_BITS)) | ((g >> shift) << BIN_BITS) | (b >> shift)) as usize;
                    let spread = r.max(g).max(b) - r.min(g).min(b);
                    let value = ((spread as u64) << 32) | (1 << 31) | ((r << 16) | (g << 8) | b) as u64;
                    bins[key] = bins[key].max(value);
                }
            });
    }

    /// The colours gathered, one per occupied bin, as fractions 0..1.
    pub fn colours(&self) -> Vec<[f64; 3]> {
        (0..1usize << (3 * BIN_BITS))
            .map(|key| self.parts.iter().map(|bins| bins[key]).max().unwrap_or(0))
            .filter(|&v| v != 0)
            .map(|v| {
                let rgb = (v & 0xff_ffff) as u32;
                [(rgb >> 16) & 255, (rgb >> 8) & 255, rgb & 255].map(|c| c as f64 / 255.0)
            })
            .collect()
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn bins_keep_the_most_colourful_value() {
        // Two values in one bin (codes 200..203 and 40..43): the more colourful stays.
        let rgb: Vec<u8> = vec![200, 40, 40, 203, 40, 40, 201, 42, 41, 10, 10, 10];
        let got = distinct_colours(&rgb);
        assert_eq!(got.len(), 2);
        assert!(got.contains(&[203.0 / 255.0, 40.0 / 255.0, 40.0 / 255.0]), "{got:?}");
        let wide: Vec<u16> = rgb.iter().map(|&v| v as u16 * 257).collect();
        assert_eq!(distinct_colours(&wide), got);
    }

    #[test]
    fn the_picture_gamut_keeps_the_most_colourful_colour_of_each_cell() {
        let labs = [Lab::new(50.0, 20.0, 0.0), Lab::new(50.2, 40.0, 0.0), Lab::new(80.0, 0.0, 30.0)];
        let g = PictureGamut::from_colours(&labs);
        assert_eq!(g.colours(), 3);
        assert_eq!(g.extremes().len(), 2);
        assert!(g.extremes().contains(&labs[1]) && g.extremes().contains(&labs[2]));
    }
}
