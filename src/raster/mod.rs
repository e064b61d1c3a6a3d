//! Raster files in and out: reading PNG, TIFF and JPEG with limits checked on
//! the header before any pixel buffer is allocated, and writing the composite
//! CMYK TIFF, one plate image per ink (TIFF or PNG preview) through a staged
//! output set that leaves no partial file behind.
//!
//! Conventions (TIFF 6.0, Adobe, 1992; PNG, ISO/IEC 15948:2004; JPEG, ISO/IEC 10918-1 with
//! JFIF 1.02 and the ICC.1 annex B embedding):
//! - samples are interleaved, 8 or 16 bit, in native integers (`u8` or `u16`);
//! - `Layout::Gray` stores a gray level (0 = black), whatever the file's photometric tag;
//! - `Layout::Cmyk` stores ink amounts, 0 = no ink and the maximum (255 or 65535) = solid,
//!   as TIFF "Separated" does; Adobe-style inverted CMYK JPEGs are turned round on reading;
//! - resolution is in pixels per inch.
//!
//! # The `limits` setting
//! [`Limits`] bounds the width, height and decoded size of an image. The defaults
//! ([`Limits::default`]: 40 000 px a side, 4 GiB) suit print work; an image over them is
//! refused from its header with a message that names the `limits` setting, which the
//! command line and the job ticket expose (maximum pixels a side, maximum memory).

pub mod bands;
mod jpeg_scan;
mod orient;
mod output;
mod png_bands;
pub mod png_colour;
mod read;
mod sniff;
mod tiff_bands;
mod tiff_in;
mod write;

pub use bands::{BandSource, RasterInfo, RasterRows, RowBand, WholeRaster, open_bands};
pub use orient::Orientation;
pub use output::{OpenFile, OutputSet, StageFn, StagedWriter};
pub use read::{decoder_panic_is_caught, read_raster, read_raster_bytes, read_raster_bytes_with, read_raster_with};
pub use write::{
    BIGTIFF_ABOVE_ENV, Compression, PngPlateWriter, TiffOptions, TiffStripWriter, bigtiff_threshold, write_cmyk_tiff, write_plate_png,
    write_plate_tiff,
};

#[doc(hidden)]
pub use output::FAIL_AFTER_ENV;

/// Bounds on what the readers accept, checked on the header before allocating.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct Limits {
    /// Largest accepted width in pixels.
    pub max_width: u32,
    /// Largest accepted height in pixels.
    pub max_height: u32,
    /// Largest accepted decoded size in bytes (width × height × channels × bytes per sample).
    pub max_bytes: u64,
}

impl Limits {
    /// 40 000 px a side: a 3.3 m print at 300 ppi.
    pub const DEFAULT_MAX_SIDE: u32 = 40_000;
    /// 4 GiB of decoded samples.
    pub const DEFAULT_MAX_BYTES: u64 = 4 << 30;

    /// Checks a header's claim against the limits; `path` names the file in the error.
    pub fn check(&self, path: &std::path::Path, width: u32, height: u32, channels: u8, bits: u8) -> crate::Result<()> {
        if width == 0 || height == 0 {
            return Err(crate::Error::input(
                path,
                format!("image header claims {width} × {height} px (empty image)"),
            ));
        }
        if width > self.max_width || height > self.max_height {
            return Err(crate::Error::input(
                path,
                format!(
                    "image is {width} × {height} px, over the limits setting of {} × {} px; raise the limits to read it",
                    self.max_width, self.max_height
                ),
            ));
        }
        let bytes = decoded_bytes(width, height, channels, bits);
        if bytes > self.max_bytes {
            return Err(crate::Error::input(
                path,
                format!(
                    "image needs {} decoded, over the limits setting of {}; raise the limits to read it",
                    human_bytes(bytes),
                    human_bytes(self.max_bytes)
                ),
            ));
        }
        Ok(())
    }
}

impl Default for Limits {
    fn default() -> Limits {
        Limits {
            max_width: Limits::DEFAULT_MAX_SIDE,
            max_height: Limits::DEFAULT_MAX_SIDE,
            max_bytes: Limits::DEFAULT_MAX_BYTES,
        }
    }
}

/// How images are read: the limits, whether damaged data is accepted, which page.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct ReadOptions {
    pub limits: Limits,
    /// Separate a JPEG whose data is cut short or corrupt (the decoder fills the gap);
    /// the summary notes it. Off: such a file is an input error.
    pub accept_damaged: bool,
    /// The page of a multi-page TIFF to read, counted from 1. `None`: the first
    /// full-resolution page (NewSubfileType bit 0 clear).
    pub page: Option<u32>,
    /// The space whose transfer curve encodes 32-bit float samples, which are read as
    /// linear light (the source space the job assumes).
    pub float_space: crate::colour::RgbSpace,
}

impl Default for ReadOptions {
    fn default() -> ReadOptions {
        ReadOptions {
            limits: Limits::default(),
            accept_damaged: false,
            page: None,
            float_space: crate::colour::RgbSpace::Srgb,
        }
    }
}

impl From<Limits> for ReadOptions {
    fn from(limits: Limits) -> ReadOptions {
        ReadOptions {
            limits,
            ..ReadOptions::default()
        }
    }
}

fn decoded_bytes(width: u32, height: u32, channels: u8, bits: u8) -> u64 {
    u64::from(width) * u64::from(height) * u64::from(channels) * u64::from(bits.div_ceil(8))
}

fn human_bytes(bytes: u64) -> String {
    const GIB: f64 = (1u64 << 30) as f64;
    const MIB: f64 = (1u64 << 20) as f64;
    let b = bytes as f64;
    if b >= GIB {
        format!("{:.1} GiB", b / GIB)
    } else if b >= MIB {
        format!("{:.1} MiB", b / MIB)
    } else if bytes >= 1024 {
        format!("{:.1} KiB", b / 1024.0)
    } else {
        format!("{bytes} bytes")
    }
}

/// How the channels of a pixel are arranged.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub enum Layout {
    Gray,
    GrayAlpha,
    Rgb,
    Rgba,
    /// Ink amounts, 0 = no ink.
    Cmyk,
}

impl Layout {
    /// Samples per pixel.
    pub fn channels(self) -> usize {
        match self {
            Layout::Gray => 1,
            Layout::GrayAlpha => 2,
            Layout::Rgb => 3,
            Layout::Rgba | Layout::Cmyk => 4,
        }
    }

    /// Whether the last channel is alpha.
    pub fn has_alpha(self) -> bool {
        matches!(self, Layout::GrayAlpha | Layout::Rgba)
    }
}

/// Interleaved samples at 8 or 16 bit.
#[derive(Debug, Clone, PartialEq, Eq)]
pub enum Samples {
    U8(Vec<u8>),
    U16(Vec<u16>),
}

impl Samples {
    /// Number of samples (not bytes).
    pub fn len(&self) -> usize {
        match self {
            Samples::U8(v) => v.len(),
            Samples::U16(v) => v.len(),
        }
    }

    pub fn is_empty(&self) -> bool {
        self.len() == 0
    }

    /// 8 or 16.
    pub fn bits(&self) -> u8 {
        match self {
            Samples::U8(_) => 8,
            Samples::U16(_) => 16,
        }
    }

    /// Size in memory in bytes.
    pub fn byte_len(&self) -> usize {
        match self {
            Samples::U8(v) => v.len(),
            Samples::U16(v) => v.len() * 2,
        }
    }
}

/// A borrowed row (or any run) of samples.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum SampleRow<'a> {
    U8(&'a [u8]),
    U16(&'a [u16]),
}

/// Pixels per inch along each axis.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Resolution {
    pub x_ppi: f64,
    pub y_ppi: f64,
}

impl Resolution {
    /// The resolution assumed when a file states none (common practice for print).
    pub const DEFAULT: Resolution = Resolution {
        x_ppi: 300.0,
        y_ppi: 300.0,
    };

    /// Metres per inch (exact by definition of the inch, 25.4 mm).
    pub(crate) const INCH_IN_METRES: f64 = 0.0254;

    fn valid(self) -> Option<Resolution> {
        let ok = |v: f64| v.is_finite() && v > 0.0;
        (ok(self.x_ppi) && ok(self.y_ppi)).then_some(self)
    }
}

/// The file format an image was read from (detected from the content).
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub enum Format {
    Png,
    Tiff,
    Jpeg,
}

impl Format {
    pub fn name(self) -> &'static str {
        match self {
            Format::Png => "PNG",
            Format::Tiff => "TIFF",
            Format::Jpeg => "JPEG",
        }
    }
}

/// A decoded image.
#[derive(Debug, Clone, PartialEq)]
pub struct Raster {
    pub width: u32,
    pub height: u32,
    pub layout: Layout,
    /// 8 or 16, always equal to `samples.bits()`.
    pub bits: u8,
    pub samples: Samples,
    /// The embedded ICC profile, byte for byte.
    pub icc_profile: Option<Vec<u8>>,
    pub resolution: Option<Resolution>,
    /// PNG sRGB, gAMA and cHRM chunks (`None` for other formats and for PNG without them).
    pub colour_chunks: Option<png_colour::ColourChunks>,
    pub format: Format,
    /// What reading did or found that the summary reports (orientation applied, further
    /// pages, damaged data accepted, float samples encoded, alpha un-premultiplied…).
    pub notes: Vec<String>,
    /// 1-bit line art: separated onto the black plate only.
    pub line_art: bool,
}

impl Raster {
    /// Samples per pixel.
    pub fn channels(&self) -> usize {
        self.layout.channels()
    }

    /// Samples in one row.
    pub fn row_len(&self) -> usize {
        self.width as usize * self.channels()
    }

    /// The samples of row `y` (panics if `y >= height`, like slice indexing).
    pub fn row(&self, y: u32) -> SampleRow<'_> {
        let n = self.row_len();
        let start = y as usize * n;
        match &self.samples {
            Samples::U8(v) => SampleRow::U8(&v[start..start + n]),
            Samples::U16(v) => SampleRow::U16(&v[start..start + n]),
        }
    }

    /// The largest sample value: 255 or 65535.
    pub fn max_value(&self) -> u16 {
        if self.bits == 16 { u16::MAX } else { u8::MAX as u16 }
    }
}

/// The four inks of a composite, in file order (the crate's own ink type).
pub use crate::ink::Ink;

/// An interleaved CMYK image of ink amounts (0 = no ink), the input of the writers.
#[derive(Debug, Clone, PartialEq)]
pub struct CmykImage {
    pub width: u32,
    pub height: u32,
    /// 8 or 16, always equal to `samples.bits()`.
    pub bits: u8,
    pub samples: Samples,
}

impl CmykImage {
    /// Checks that the buffer holds exactly `width × height × 4` samples.
    pub fn new(width: u32, height: u32, samples: Samples) -> crate::Result<CmykImage> {
        let expected = width as usize * height as usize * 4;
        if width == 0 || height == 0 || samples.len() != expected {
            return Err(crate::Error::Internal(format!(
                "CMYK buffer of {} samples does not match {width} × {height} px",
                samples.len()
            )));
        }
        let bits = samples.bits();
        Ok(CmykImage {
            width,
            height,
            bits,
            samples,
        })
    }

    /// The largest sample value: 255 or 65535.
    pub fn max_value(&self) -> u16 {
        if self.bits == 16 { u16::MAX } else { u8::MAX as u16 }
    }

    /// Samples in one row.
    pub fn row_len(&self) -> usize {
        self.width as usize * 4
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn sizes_in_messages_keep_their_magnitude() {
        assert_eq!(human_bytes(48), "48 bytes");
        assert_eq!(human_bytes(3 << 10), "3.0 KiB");
        assert_eq!(human_bytes(5 << 20), "5.0 MiB");
        assert_eq!(human_bytes(30_000_000_000), "27.9 GiB");
    }
}
