//! Writing the composite CMYK TIFF, plate TIFFs and plate PNG previews from one
//! interleaved [`CmykImage`], strip by strip, without copying the whole image.
//!
//! The TIFF directory is written by hand through the tiff crate's `DirectoryEncoder`
//! so that every tag is ours to choose (TIFF 6.0):
//! - composite: PhotometricInterpretation 5 (Separated), InkSet 1 (CMYK), SamplesPerPixel 4,
//!   0 = no ink (§16), ICC profile as tag 34675 of type UNDEFINED (ICC.1:2022 annex B.4);
//! - plates: PhotometricInterpretation 0 (WhiteIsZero), so the stored sample is the ink value;
//! - XResolution/YResolution in pixels per inch, ResolutionUnit 2 (inch);
//! - compression none (1), LZW (5) or Deflate (8, Adobe's "zlib" code), with the horizontal
//!   predictor (Predictor 2, §14) when compressed.
//!
//! A composite over 4 GiB is written as BigTIFF so strip offsets cannot overflow.

use std::borrow::Cow;
use std::io::{self, Seek, Write};

use rayon::prelude::*;
use tiff::encoder::compression::{CompressionAlgorithm, Deflate, DeflateLevel, Lzw};
use tiff::encoder::{Rational, TiffEncoder, TiffKind, TiffKindBig, TiffKindStandard, TiffValue};
use tiff::tags::{Tag, Type};

use super::{CmykImage, Ink, Resolution, Samples};

/// Strip compression of the TIFFs written.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum Compression {
    #[default]
    None,
    Lzw,
    Deflate,
}

impl Compression {
    fn tag(self) -> u16 {
        match self {
            Compression::None => 1,
            Compression::Lzw => 5,
            Compression::Deflate => 8,
        }
    }
}

/// Settings shared by the TIFF writers.
#[derive(Debug, Clone, Default)]
pub struct TiffOptions<'a> {
    pub compression: Compression,
    /// `None` writes [`Resolution::DEFAULT`] (300 ppi).
    pub resolution: Option<Resolution>,
    /// Output ICC profile embedded in the composite (plates carry none: they are single inks).
    pub icc_profile: Option<&'a [u8]>,
}

/// Bytes aimed at per strip: small enough to keep the working set low, large enough to compress well.
const STRIP_TARGET_BYTES: usize = 256 * 1024;
/// Strips compressed in parallel before being written in order.
const STRIP_BATCH: usize = 32;
/// Past this size a standard TIFF's 32-bit offsets could overflow: write BigTIFF.
const BIGTIFF_THRESHOLD: u64 = (u32::MAX as u64) - (64 << 20);

/// Writes the composite CMYK TIFF.
pub fn write_cmyk_tiff<W: Write + Seek>(out: &mut W, image: &CmykImage, options: &TiffOptions<'_>) -> io::Result<()> {
    write_tiff(out, image, None, options)
}

/// Writes one ink of `image` as a single-channel WhiteIsZero TIFF (stored sample = ink value).
pub fn write_plate_tiff<W: Write + Seek>(out: &mut W, image: &CmykImage, ink: Ink, options: &TiffOptions<'_>) -> io::Result<()> {
    write_tiff(out, image, Some(ink), options)
}

/// Writes one ink as an 8-bit gray PNG preview, ink dark on white (gray = 255 − ink),
/// with a pHYs chunk carrying the resolution (300 ppi when `None`).
pub fn write_plate_png<W: Write>(out: &mut W, image: &CmykImage, ink: Ink, resolution: Option<Resolution>) -> io::Result<()> {
    let res = resolution.unwrap_or(Resolution::DEFAULT);
    let mut enc = png::Encoder::new(out, image.width, image.height);
    enc.set_color(png::ColorType::Grayscale);
    enc.set_depth(png::BitDepth::Eight);
    enc.set_compression(png::Compression::Fast);
    // pHYs is in pixels per metre (ISO/IEC 15948 §11.3.5.3).
    let ppm = |ppi: f64| (ppi / Resolution::INCH_IN_METRES).round().clamp(1.0, f64::from(u32::MAX)) as u32;
    enc.set_pixel_dims(Some(png::PixelDimensions {
        xppu: ppm(res.x_ppi),
        yppu: ppm(res.y_ppi),
        unit: png::Unit::Meter,
    }));
    let mut writer = enc.write_header().map_err(png_err)?;
    let mut stream = writer.stream_writer().map_err(png_err)?;
    let width = image.width as usize;
    let rows = (STRIP_TARGET_BYTES / width).max(1);
    let c = ink.index();
    let mut buf = vec![0u8; rows * width];
    for y0 in (0..image.height as usize).step_by(rows) {
        let n = rows.min(image.height as usize - y0);
        let dst = &mut buf[..n * width];
        let range = y0 * width * 4..(y0 + n) * width * 4;
        match &image.samples {
            Samples::U8(v) => {
                for (d, px) in dst.iter_mut().zip(v[range].chunks_exact(4)) {
                    *d = 255 - px[c];
                }
            }
            Samples::U16(v) => {
                for (d, px) in dst.iter_mut().zip(v[range].chunks_exact(4)) {
                    *d = 255 - to_8bit(px[c]);
                }
            }
        }
        stream.write_all(dst)?;
    }
    stream.finish().map_err(png_err)?;
    Ok(())
}

/// 16 → 8 bit with rounding: round(v × 255 / 65535) = round(v / 257).
fn to_8bit(v: u16) -> u8 {
    ((u32::from(v) + 128) / 257) as u8
}

fn png_err(e: png::EncodingError) -> io::Error {
    match e {
        png::EncodingError::IoError(e) => e,
        other => io::Error::other(other.to_string()),
    }
}

fn tiff_err(e: tiff::TiffError) -> io::Error {
    match e {
        tiff::TiffError::IoError(e) => e,
        other => io::Error::other(other.to_string()),
    }
}

/// Bytes written as a TIFF field of type UNDEFINED (7), as the ICC profile tag requires.
struct Undefined<'a>(&'a [u8]);

impl TiffValue for Undefined<'_> {
    const BYTE_LEN: u8 = 1;
    const FIELD_TYPE: Type = Type::UNDEFINED;

    fn count(&self) -> usize {
        self.0.len()
    }

    fn data(&self) -> Cow<'_, [u8]> {
        Cow::Borrowed(self.0)
    }
}

/// A resolution in pixels per inch as a TIFF RATIONAL, exact to 1/1000 ppi.
fn rational(ppi: f64) -> Rational {
    let n = (ppi * 1000.0).round().clamp(1.0, f64::from(u32::MAX)) as u64;
    let d = 1000u64;
    let g = gcd(n, d);
    Rational {
        n: (n / g) as u32,
        d: (d / g) as u32,
    }
}

fn gcd(mut a: u64, mut b: u64) -> u64 {
    while b != 0 {
        (a, b) = (b, a % b);
    }
    a
}

fn write_tiff<W: Write + Seek>(out: &mut W, image: &CmykImage, ink: Option<Ink>, options: &TiffOptions<'_>) -> io::Result<()> {
    let spp: u64 = if ink.is_some() { 1 } else { 4 };
    let bytes = u64::from(image.width) * u64::from(image.height) * spp * u64::from(image.bits / 8);
    if bytes > BIGTIFF_THRESHOLD {
        write_tiff_kind::<W, TiffKindBig>(out, image, ink, options)
    } else {
        write_tiff_kind::<W, TiffKindStandard>(out, image, ink, options)
    }
}

fn write_tiff_kind<W: Write + Seek, K: TiffKind>(
    out: &mut W,
    image: &CmykImage,
    ink: Option<Ink>,
    options: &TiffOptions<'_>,
) -> io::Result<()> {
    let spp: usize = if ink.is_some() { 1 } else { 4 };
    let bytes_per_sample = usize::from(image.bits / 8);
    let width = image.width as usize;
    let height = image.height as usize;
    let row_bytes = width * spp * bytes_per_sample;
    let rows_per_strip = (STRIP_TARGET_BYTES / row_bytes).clamp(1, height);
    let strip_count = height.div_ceil(rows_per_strip);
    let strip_rows = |s: usize| s * rows_per_strip..((s + 1) * rows_per_strip).min(height);

    let mut encoder = TiffEncoder::<&mut W, K>::new_generic(out).map_err(tiff_err)?;
    let mut dir = encoder.image_directory().map_err(tiff_err)?;
    let mut offsets: Vec<K::OffsetType> = Vec::with_capacity(strip_count);
    let mut counts: Vec<K::OffsetType> = Vec::with_capacity(strip_count);
    let record = |offsets: &mut Vec<K::OffsetType>, counts: &mut Vec<K::OffsetType>, off: u64, len: usize| {
        offsets.push(K::convert_offset(off).map_err(tiff_err)?);
        counts.push(K::convert_offset(len as u64).map_err(tiff_err)?);
        io::Result::Ok(())
    };

    if options.compression == Compression::None && ink.is_none() {
        // The composite is already laid out as the file wants it: write the buffer's strips as they are.
        for s in 0..strip_count {
            let r = strip_rows(s);
            let range = r.start * width * 4..r.end * width * 4;
            let off = match &image.samples {
                Samples::U8(v) => dir.write_data(&v[range]),
                Samples::U16(v) => dir.write_data(&v[range]),
            }
            .map_err(tiff_err)?;
            record(&mut offsets, &mut counts, off, r.len() * row_bytes)?;
        }
    } else {
        // Plates and compressed strips: prepare a batch of strips in parallel, then write them in order.
        for batch in (0..strip_count).collect::<Vec<_>>().chunks(STRIP_BATCH) {
            let encoded: Vec<io::Result<Vec<u8>>> = batch
                .par_iter()
                .map(|&s| encode_strip(image, ink, strip_rows(s), options.compression))
                .collect();
            for strip in encoded {
                let strip = strip?;
                let off = dir.write_data(&strip[..]).map_err(tiff_err)?;
                record(&mut offsets, &mut counts, off, strip.len())?;
            }
        }
    }

    let res = options.resolution.unwrap_or(Resolution::DEFAULT);
    let bits = vec![u16::from(image.bits); spp];
    let formats = vec![1u16; spp];
    let t = |r: tiff::TiffResult<()>| r.map_err(tiff_err);
    t(dir.write_tag(Tag::NewSubfileType, 0u32))?;
    t(dir.write_tag(Tag::ImageWidth, image.width))?;
    t(dir.write_tag(Tag::ImageLength, image.height))?;
    t(dir.write_tag(Tag::BitsPerSample, &bits[..]))?;
    t(dir.write_tag(Tag::Compression, options.compression.tag()))?;
    // 5 = Separated (composite), 0 = WhiteIsZero (plate).
    t(dir.write_tag(Tag::PhotometricInterpretation, if ink.is_some() { 0u16 } else { 5u16 }))?;
    t(dir.write_tag(Tag::StripOffsets, K::convert_slice(&offsets)))?;
    t(dir.write_tag(Tag::SamplesPerPixel, spp as u16))?;
    t(dir.write_tag(Tag::RowsPerStrip, rows_per_strip as u32))?;
    t(dir.write_tag(Tag::StripByteCounts, K::convert_slice(&counts)))?;
    t(dir.write_tag(Tag::XResolution, rational(res.x_ppi)))?;
    t(dir.write_tag(Tag::YResolution, rational(res.y_ppi)))?;
    t(dir.write_tag(Tag::PlanarConfiguration, 1u16))?;
    t(dir.write_tag(Tag::ResolutionUnit, 2u16))?;
    t(dir.write_tag(Tag::Software, concat!("platesmith ", env!("CARGO_PKG_VERSION"))))?;
    if options.compression != Compression::None {
        t(dir.write_tag(Tag::Predictor, 2u16))?;
    }
    if ink.is_none() {
        t(dir.write_tag(Tag::Unknown(332), 1u16))?; // InkSet: CMYK
    }
    t(dir.write_tag(Tag::SampleFormat, &formats[..]))?;
    if let (None, Some(icc)) = (ink, options.icc_profile) {
        t(dir.write_tag(Tag::IccProfile, Undefined(icc)))?;
    }
    t(dir.finish())?;
    Ok(())
}

/// One strip as file bytes (native byte order, as the encoder's header declares),
/// with the horizontal predictor and compression applied when asked for.
fn encode_strip(image: &CmykImage, ink: Option<Ink>, rows: std::ops::Range<usize>, compression: Compression) -> io::Result<Vec<u8>> {
    let width = image.width as usize;
    let range = rows.start * width * 4..rows.end * width * 4;
    let predict = compression != Compression::None;
    let spp = if ink.is_some() { 1 } else { 4 };
    let row_samples = width * spp;
    let raw: Vec<u8> = match &image.samples {
        Samples::U8(v) => {
            let mut s: Vec<u8> = match ink {
                Some(i) => v[range].chunks_exact(4).map(|px| px[i.index()]).collect(),
                None => v[range].to_vec(),
            };
            if predict {
                for row in s.chunks_exact_mut(row_samples) {
                    for x in (spp..row.len()).rev() {
                        row[x] = row[x].wrapping_sub(row[x - spp]);
                    }
                }
            }
            s
        }
        Samples::U16(v) => {
            let mut s: Vec<u16> = match ink {
                Some(i) => v[range].chunks_exact(4).map(|px| px[i.index()]).collect(),
                None => v[range].to_vec(),
            };
            if predict {
                for row in s.chunks_exact_mut(row_samples) {
                    for x in (spp..row.len()).rev() {
                        row[x] = row[x].wrapping_sub(row[x - spp]);
                    }
                }
            }
            s.iter().flat_map(|x| x.to_ne_bytes()).collect()
        }
    };
    let mut out = Vec::with_capacity(raw.len() / 2 + 64);
    match compression {
        Compression::None => return Ok(raw),
        Compression::Lzw => Lzw.write_to(&mut out, &raw)?,
        Compression::Deflate => Deflate::with_level(DeflateLevel::Fast).write_to(&mut out, &raw)?,
    };
    Ok(out)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn rational_resolution() {
        let r = rational(300.0);
        assert_eq!((r.n, r.d), (300, 1));
        let r = rational(299.72);
        assert_eq!((r.n, r.d), (7493, 25));
    }

    #[test]
    fn sixteen_to_eight_bit_rounds() {
        assert_eq!(to_8bit(0), 0);
        assert_eq!(to_8bit(65535), 255);
        assert_eq!(to_8bit(257 * 100 + 128), 100);
        assert_eq!(to_8bit(257 * 100 + 129), 101);
    }
}
