//! A picture read as bands of whole rows, top to bottom, so that a job can
//! separate, check and write it without holding all of it in memory.
//!
//! [`open_bands`] is the one entry point. [`WholeRaster`] serves the bands
//! of a picture already decoded in memory: the reference every streamed
//! reader must agree with sample for sample, and the reader of the formats
//! and encodings that cannot be read a band at a time.
//!
//! Streamed: TIFF strips and tiles, interleaved, planar or palette, upright
//! (`tiff_bands`, which lists what it reads whole), and non-interlaced PNG
//! (`png_bands`). Read whole (memory grows with the picture, bounded by the byte
//! limit): JPEG (zune-jpeg decodes a whole frame), interlaced PNG (each pass covers
//! the picture), and turned or mirrored TIFF pages. The streamed readers
//! check the same header against the same limits, except that the byte limit bounds
//! what they hold (a row of strips or tiles; a PNG row) instead of the whole picture,
//! whose size the side limits bound; they give the same [`RasterInfo`], notes in the
//! same order, the same samples and the same errors naming the file, and a decode
//! error in a later band is an error of that band.

use std::path::Path;

use super::png_colour::ColourChunks;
use super::{Format, Layout, Raster, ReadOptions, Resolution, Samples};
use crate::error::Result;

/// Everything a [`Raster`] says about a picture except its samples.
#[derive(Debug, Clone, PartialEq)]
pub struct RasterInfo {
    pub width: u32,
    pub height: u32,
    pub layout: Layout,
    /// 8 or 16: the depth of every band's samples.
    pub bits: u8,
    /// The embedded ICC profile, byte for byte.
    pub icc_profile: Option<Vec<u8>>,
    pub resolution: Option<Resolution>,
    pub colour_chunks: Option<ColourChunks>,
    pub format: Format,
    /// What reading did or found that the summary reports.
    pub notes: Vec<String>,
    /// 1-bit line art: separated onto the black plate only.
    pub line_art: bool,
}

impl RasterInfo {
    /// Samples per pixel.
    pub fn channels(&self) -> usize {
        self.layout.channels()
    }

    /// Samples in one row.
    pub fn row_len(&self) -> usize {
        self.width as usize * self.channels()
    }

    /// The largest sample value: 255 or 65535.
    pub fn max_value(&self) -> u16 {
        if self.bits == 16 { u16::MAX } else { u8::MAX as u16 }
    }
}

/// Consecutive whole rows of a picture, interleaved as [`RasterInfo::layout`].
#[derive(Debug, Clone, PartialEq)]
pub struct RowBand {
    /// The first row's index in the picture.
    pub y: u32,
    /// Rows in the band (`samples.len() == rows × row_len`).
    pub rows: u32,
    pub samples: Samples,
}

/// A picture served as bands of rows, in order from the top.
pub trait BandSource: Send {
    fn info(&self) -> &RasterInfo;

    /// The next band of at most `max_rows` rows (at least one), or `None`
    /// after the last row.
    fn next_band(&mut self, max_rows: u32) -> Result<Option<RowBand>>;

    /// Starts again from the first row, for a second pass over the picture.
    fn rewind(&mut self) -> Result<()>;

    /// Whether the picture is decoded a band at a time (memory bounded by a band and the
    /// decoder's own buffers) rather than held whole.
    fn streamed(&self) -> bool {
        false
    }
}

/// The first row and the rows of the band after `next_row`: at most `max_rows` (at least
/// one), `None` after the last row of a picture `height` rows high.
pub(super) fn next_span(next_row: u32, height: u32, max_rows: u32) -> Option<(u32, u32)> {
    (next_row < height).then(|| (next_row, max_rows.max(1).min(height - next_row)))
}

/// A picture decoded whole, served as bands: owned ([`WholeRaster::new`])
/// or borrowed from a raster in memory ([`RasterRows::borrowed`]).
#[derive(Debug, Clone)]
pub struct RasterRows<'a> {
    info: RasterInfo,
    samples: std::borrow::Cow<'a, Samples>,
    next_row: u32,
}

/// A picture decoded whole and owned, served as bands.
pub type WholeRaster = RasterRows<'static>;

impl RasterRows<'static> {
    pub fn new(raster: Raster) -> WholeRaster {
        let (info, samples) = raster.into_parts();
        RasterRows {
            info,
            samples: std::borrow::Cow::Owned(samples),
            next_row: 0,
        }
    }
}

impl<'a> RasterRows<'a> {
    /// The bands of a raster in memory, without copying it whole.
    pub fn borrowed(raster: &'a Raster) -> RasterRows<'a> {
        RasterRows {
            info: raster.info(),
            samples: std::borrow::Cow::Borrowed(&raster.samples),
            next_row: 0,
        }
    }
}

impl BandSource for RasterRows<'_> {
    fn info(&self) -> &RasterInfo {
        &self.info
    }

    fn next_band(&mut self, max_rows: u32) -> Result<Option<RowBand>> {
        let Some((y, rows)) = next_span(self.next_row, self.info.height, max_rows) else {
            return Ok(None);
        };
        let n = self.info.row_len();
        let range = y as usize * n..(y + rows) as usize * n;
        let samples = match &*self.samples {
            Samples::U8(v) => Samples::U8(v[range].to_vec()),
            Samples::U16(v) => Samples::U16(v[range].to_vec()),
        };
        self.next_row = y + rows;
        Ok(Some(RowBand { y, rows, samples }))
    }

    fn rewind(&mut self) -> Result<()> {
        self.next_row = 0;
        Ok(())
    }
}

impl Raster {
    /// Everything the raster says of its picture except the samples.
    pub fn info(&self) -> RasterInfo {
        RasterInfo {
            width: self.width,
            height: self.height,
            layout: self.layout,
            bits: self.bits,
            icc_profile: self.icc_profile.clone(),
            resolution: self.resolution,
            colour_chunks: self.colour_chunks.clone(),
            format: self.format,
            notes: self.notes.clone(),
            line_art: self.line_art,
        }
    }

    /// The description and the samples apart.
    pub fn into_parts(self) -> (RasterInfo, Samples) {
        let info = RasterInfo {
            width: self.width,
            height: self.height,
            layout: self.layout,
            bits: self.bits,
            icc_profile: self.icc_profile,
            resolution: self.resolution,
            colour_chunks: self.colour_chunks,
            format: self.format,
            notes: self.notes,
            line_art: self.line_art,
        };
        (info, self.samples)
    }

    /// A raster from its description and samples (the inverse of [`Raster::into_parts`]).
    pub fn from_parts(info: RasterInfo, samples: Samples) -> Raster {
        Raster {
            width: info.width,
            height: info.height,
            layout: info.layout,
            bits: info.bits,
            samples,
            icc_profile: info.icc_profile,
            resolution: info.resolution,
            colour_chunks: info.colour_chunks,
            format: info.format,
            notes: info.notes,
            line_art: info.line_art,
        }
    }
}

/// Opens `path` as a band source, checked as [`super::read_raster_with`]
/// checks it (same limits, same errors naming the file).
pub fn open_bands(path: &Path, options: &ReadOptions) -> Result<Box<dyn BandSource>> {
    match super::read::open_streamed(path, options)? {
        Some(source) => Ok(source),
        None => Ok(Box::new(WholeRaster::new(super::read_raster_with(path, options)?))),
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn raster(width: u32, height: u32) -> Raster {
        let samples: Vec<u8> = (0..width * height * 3).map(|i| (i % 251) as u8).collect();
        Raster {
            width,
            height,
            layout: Layout::Rgb,
            bits: 8,
            samples: Samples::U8(samples),
            icc_profile: None,
            resolution: None,
            colour_chunks: None,
            format: Format::Png,
            notes: vec![],
            line_art: false,
        }
    }

    #[test]
    fn bands_cover_the_picture_once_in_order_and_rewind() {
        let whole = raster(5, 7);
        let mut source = WholeRaster::new(whole.clone());
        for _ in 0..2 {
            let mut joined = Vec::new();
            let mut next_y = 0;
            while let Some(band) = source.next_band(3).unwrap() {
                assert_eq!(band.y, next_y);
                assert!(band.rows >= 1 && band.rows <= 3);
                next_y += band.rows;
                match band.samples {
                    Samples::U8(v) => joined.extend(v),
                    Samples::U16(_) => unreachable!(),
                }
            }
            assert_eq!(next_y, 7);
            assert_eq!(Samples::U8(joined), whole.samples);
            source.rewind().unwrap();
        }
        let (info, samples) = whole.clone().into_parts();
        assert_eq!(Raster::from_parts(info, samples), whole);
    }
}
