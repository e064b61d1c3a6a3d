//! Writing the composite CMYK TIFF, plate TIFFs and plate PNG previews, strip by
//! strip as bands of rows arrive ([`TiffStripWriter`], [`PngPlateWriter`]:
//! `begin → push → finish`), so a job never holds more than a band. The strip
//! layout depends on the image width and depth only, never on how the rows were
//! handed in: the same picture gives the same bytes whatever the band height.
//! The whole-image functions ([`write_cmyk_tiff`], …) push an image in bands.
//!
//! The TIFF structure is written here, so every tag is ours to choose (TIFF 6.0):
//! - composite: PhotometricInterpretation 5 (Separated), InkSet 1 (CMYK), SamplesPerPixel 4,
//!   0 = no ink (§16), ICC profile as tag 34675 of type UNDEFINED (ICC.1:2022 annex B.4);
//! - plates: PhotometricInterpretation 0 (WhiteIsZero), so the stored sample is the ink value;
//! - XResolution/YResolution in pixels per inch, ResolutionUnit 2 (inch);
//! - compression none (1), LZW (5) or Deflate (8, Adobe's "zlib" code: a zlib stream,
//!   RFC 1950/1951, through flate2's zlib-rs backend), with the horizontal predictor
//!   (Predictor 2, §14) when compressed; strips are compressed in parallel.
//!
//! Layout: header, strips in order, the out-of-line tag values, then the one directory
//! (its offset patched into the header). An output whose samples would pass
//! [`bigtiff_threshold`] (just under 4 GiB) is written as BigTIFF (64-bit offsets,
//! header version 43, 20-byte directory entries), so strip offsets cannot overflow.

use std::io::{self, Seek, SeekFrom, Write};

use rayon::prelude::*;
use tiff::encoder::compression::{CompressionAlgorithm, Lzw};

use super::{CmykImage, Ink, Resolution, Samples};

/// Strip compression of the TIFFs written.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum Compression {
    /// Stored as is: the fastest to write and to read, the largest file.
    None,
    /// LZW (code 5): read by every TIFF reader, slow to write and larger than Deflate.
    Lzw,
    /// Deflate (code 8): the smallest file and fast to write; read by current
    /// readers (libtiff, prepress and layout software), not by some old RIPs.
    #[default]
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
/// Past this size a standard TIFF's 32-bit offsets could overflow: write BigTIFF.
const BIGTIFF_THRESHOLD: u64 = (u32::MAX as u64) - (64 << 20);
/// Environment variable: a lower sample size in bytes above which TIFFs are
/// written as BigTIFF (for tests and for readers that want BigTIFF); values
/// above the built-in threshold are ignored.
pub const BIGTIFF_ABOVE_ENV: &str = "PLATESMITH_BIGTIFF_ABOVE_BYTES";
/// Deflate level: zlib-rs level 1 is its fast strategy; higher levels gain a few
/// percent of size for several times the time (docs/PERFORMANCE.md).
const DEFLATE_LEVEL: u32 = 1;

/// The uncompressed sample size above which a TIFF is written as BigTIFF: just
/// under 4 GiB (room for the directory and profile), or lower through [`BIGTIFF_ABOVE_ENV`].
pub fn bigtiff_threshold() -> u64 {
    let lowered = std::env::var(BIGTIFF_ABOVE_ENV).ok().and_then(|v| v.trim().parse::<u64>().ok());
    lowered.map_or(BIGTIFF_THRESHOLD, |v| v.min(BIGTIFF_THRESHOLD))
}

/// Rows handed to the writers at a time by the whole-image functions.
fn image_band_rows(image: &CmykImage) -> usize {
    (8 << 20) / (image.width as usize * 4 * usize::from(image.bits / 8)).max(1)
}

/// Pushes a whole image through `push` in bands of rows.
fn push_image(image: &CmykImage, mut push: impl FnMut(&Samples) -> io::Result<()>) -> io::Result<()> {
    let rows = image_band_rows(image).max(1);
    let row = image.width as usize * 4;
    for y0 in (0..image.height as usize).step_by(rows) {
        let range = y0 * row..((y0 + rows).min(image.height as usize)) * row;
        push(&match &image.samples {
            Samples::U8(v) => Samples::U8(v[range].to_vec()),
            Samples::U16(v) => Samples::U16(v[range].to_vec()),
        })?;
    }
    Ok(())
}

/// Writes the composite CMYK TIFF.
pub fn write_cmyk_tiff<W: Write + Seek>(out: &mut W, image: &CmykImage, options: &TiffOptions<'_>) -> io::Result<()> {
    let mut w = TiffStripWriter::begin(out, image.width, image.height, image.bits, None, options)?;
    push_image(image, |band| w.push(band))?;
    w.finish().map(drop)
}

/// Writes one ink of `image` as a single-channel WhiteIsZero TIFF (stored sample = ink value).
pub fn write_plate_tiff<W: Write + Seek>(out: &mut W, image: &CmykImage, ink: Ink, options: &TiffOptions<'_>) -> io::Result<()> {
    let mut w = TiffStripWriter::begin(out, image.width, image.height, image.bits, Some(ink), options)?;
    push_image(image, |band| w.push(band))?;
    w.finish().map(drop)
}

/// Writes one ink as an 8-bit gray PNG preview, ink dark on white (gray = 255 − ink),
/// with a pHYs chunk carrying the resolution (300 ppi when `None`).
pub fn write_plate_png<W: Write>(out: &mut W, image: &CmykImage, ink: Ink, resolution: Option<Resolution>) -> io::Result<()> {
    let mut writer = png_encoder(out, image.width, image.height, resolution)
        .write_header()
        .map_err(png_err)?;
    let mut stream = writer.stream_writer().map_err(png_err)?;
    push_image(image, |band| stream.write_all(&plate_gray(band, ink)))?;
    stream.finish().map_err(png_err)
}

/// The encoder of a plate preview: 8-bit gray, fast compression, pHYs from `resolution`.
fn png_encoder<W: Write>(out: W, width: u32, height: u32, resolution: Option<Resolution>) -> png::Encoder<'static, W> {
    let res = resolution.unwrap_or(Resolution::DEFAULT);
    let mut enc = png::Encoder::new(out, width, height);
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
    enc
}

/// One ink of CMYK rows as preview gray: 255 − ink, 16-bit rounded to 8.
fn plate_gray(cmyk: &Samples, ink: Ink) -> Vec<u8> {
    let c = ink.index();
    match cmyk {
        Samples::U8(v) => v.chunks_exact(4).map(|px| 255 - px[c]).collect(),
        Samples::U16(v) => v.chunks_exact(4).map(|px| 255 - to_8bit(px[c])).collect(),
    }
}

/// One ink as an 8-bit PNG preview (as [`write_plate_png`]), written as bands of
/// CMYK rows arrive.
pub struct PngPlateWriter<W: Write + 'static> {
    stream: png::StreamWriter<'static, W>,
    ink: Ink,
    rows_left: usize,
    width: usize,
}

impl<W: Write + 'static> PngPlateWriter<W> {
    /// Writes the PNG header.
    pub fn begin(out: W, width: u32, height: u32, ink: Ink, resolution: Option<Resolution>) -> io::Result<PngPlateWriter<W>> {
        let writer = png_encoder(out, width, height, resolution).write_header().map_err(png_err)?;
        Ok(PngPlateWriter {
            stream: writer.into_stream_writer().map_err(png_err)?,
            ink,
            rows_left: height as usize,
            width: width as usize,
        })
    }

    /// Writes the next rows: interleaved CMYK samples of whole rows.
    pub fn push(&mut self, cmyk: &Samples) -> io::Result<()> {
        let rows = whole_rows(cmyk.len(), self.width * 4)?;
        if rows > self.rows_left {
            return Err(io::Error::new(io::ErrorKind::InvalidInput, "more rows than the image has"));
        }
        self.stream.write_all(&plate_gray(cmyk, self.ink))?;
        self.rows_left -= rows;
        Ok(())
    }

    /// Ends the file (every row must have been pushed) and flushes it.
    pub fn finish(self) -> io::Result<()> {
        if self.rows_left != 0 {
            return Err(io::Error::new(
                io::ErrorKind::InvalidInput,
                format!("{} rows were never written", self.rows_left),
            ));
        }
        self.stream.finish().map_err(png_err)
    }
}

/// The number of whole rows in `len` samples of rows of `row` samples.
fn whole_rows(len: usize, row: usize) -> io::Result<usize> {
    if row == 0 || !len.is_multiple_of(row) {
        return Err(io::Error::new(io::ErrorKind::InvalidInput, "a band must hold whole rows"));
    }
    Ok(len / row)
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

/// A resolution in pixels per inch as a TIFF RATIONAL (numerator, denominator), exact to 1/1000 ppi.
fn rational(ppi: f64) -> (u32, u32) {
    let n = (ppi * 1000.0).round().clamp(1.0, f64::from(u32::MAX)) as u64;
    let d = 1000u64;
    let g = gcd(n, d);
    ((n / g) as u32, (d / g) as u32)
}

fn gcd(mut a: u64, mut b: u64) -> u64 {
    while b != 0 {
        (a, b) = (b, a % b);
    }
    a
}

/// TIFF field types (TIFF 6.0 §2; LONG8 from BigTIFF).
const ASCII: u16 = 2;
const SHORT: u16 = 3;
const LONG: u16 = 4;
const RATIONAL: u16 = 5;
const UNDEFINED: u16 = 7;
const LONG8: u16 = 16;

/// One directory entry: its tag, type, count and value bytes (little-endian).
struct Field {
    tag: u16,
    kind: u16,
    count: u64,
    data: Vec<u8>,
}

impl Field {
    fn shorts(tag: u16, v: &[u16]) -> Field {
        Field {
            tag,
            kind: SHORT,
            count: v.len() as u64,
            data: v.iter().flat_map(|x| x.to_le_bytes()).collect(),
        }
    }

    fn long(tag: u16, v: u32) -> Field {
        Field {
            tag,
            kind: LONG,
            count: 1,
            data: v.to_le_bytes().to_vec(),
        }
    }

    /// Offsets or byte counts: LONG in a classic TIFF (refused past 4 GiB), LONG8 in BigTIFF.
    fn offsets(tag: u16, v: &[u64], big: bool) -> io::Result<Field> {
        let data: Vec<u8> = if big {
            v.iter().flat_map(|x| x.to_le_bytes()).collect()
        } else {
            let mut d = Vec::with_capacity(v.len() * 4);
            for &x in v {
                d.extend(u32::try_from(x).map_err(|_| past_4_gib())?.to_le_bytes());
            }
            d
        };
        Ok(Field {
            tag,
            kind: if big { LONG8 } else { LONG },
            count: v.len() as u64,
            data,
        })
    }

    fn rational(tag: u16, ppi: f64) -> Field {
        let (n, d) = rational(ppi);
        Field {
            tag,
            kind: RATIONAL,
            count: 1,
            data: [n.to_le_bytes(), d.to_le_bytes()].concat(),
        }
    }

    fn ascii(tag: u16, text: &str) -> Field {
        let mut data = text.as_bytes().to_vec();
        data.push(0);
        Field {
            tag,
            kind: ASCII,
            count: data.len() as u64,
            data,
        }
    }

    /// Bytes of type UNDEFINED (7), as the ICC profile tag requires.
    fn undefined(tag: u16, bytes: &[u8]) -> Field {
        Field {
            tag,
            kind: UNDEFINED,
            count: bytes.len() as u64,
            data: bytes.to_vec(),
        }
    }
}

fn past_4_gib() -> io::Error {
    io::Error::other("the TIFF passed 4 GiB as a classic TIFF; lower the BigTIFF threshold")
}

/// A composite CMYK or one-plate TIFF written strip by strip: [`begin`](Self::begin)
/// writes the header, [`push`](Self::push) takes bands of whole CMYK rows of any height
/// (full strips are compressed in parallel and written in order, the rest is kept for
/// the next band), [`finish`](Self::finish) writes the last strip and the directory.
/// Memory is one band and one strip, whatever the image size.
pub struct TiffStripWriter<'o, W: Write + Seek> {
    out: W,
    ink: Option<Ink>,
    width: usize,
    height: usize,
    bits: u8,
    compression: Compression,
    options: TiffOptions<'o>,
    big: bool,
    rows_per_strip: usize,
    /// Stored bytes (little-endian, not yet predicted) of rows that do not fill a strip yet.
    partial: Vec<u8>,
    rows_in: usize,
    /// Where the next byte goes (the file starts at the writer's position 0).
    pos: u64,
    offsets: Vec<u64>,
    counts: Vec<u64>,
}

impl<'o, W: Write + Seek> TiffStripWriter<'o, W> {
    /// Writes the header of a `width` × `height` TIFF at `bits` per sample: the CMYK
    /// composite (`ink` = `None`) or the plate of `ink`. BigTIFF when the samples
    /// would pass [`bigtiff_threshold`].
    pub fn begin(mut out: W, width: u32, height: u32, bits: u8, ink: Option<Ink>, options: &TiffOptions<'o>) -> io::Result<Self> {
        let spp: u64 = if ink.is_some() { 1 } else { 4 };
        let bytes = u64::from(width) * u64::from(height) * spp * u64::from(bits / 8);
        let big = bytes > bigtiff_threshold();
        let row_bytes = (width as usize * spp as usize * usize::from(bits / 8)).max(1);
        let rows_per_strip = (STRIP_TARGET_BYTES / row_bytes).clamp(1, (height as usize).max(1));
        let pos = if big {
            // "II", version 43, offset size 8, reserved 0, first directory (patched at the end).
            out.write_all(&[b'I', b'I', 43, 0, 8, 0, 0, 0])?;
            out.write_all(&0u64.to_le_bytes())?;
            16
        } else {
            out.write_all(&[b'I', b'I', 42, 0])?;
            out.write_all(&0u32.to_le_bytes())?;
            8
        };
        Ok(TiffStripWriter {
            out,
            ink,
            width: width as usize,
            height: height as usize,
            bits,
            compression: options.compression,
            options: options.clone(),
            big,
            rows_per_strip,
            partial: Vec::new(),
            rows_in: 0,
            pos,
            offsets: Vec::new(),
            counts: Vec::new(),
        })
    }

    /// Whether this file is a BigTIFF.
    pub fn is_bigtiff(&self) -> bool {
        self.big
    }

    fn spp(&self) -> usize {
        if self.ink.is_some() { 1 } else { 4 }
    }

    fn row_bytes(&self) -> usize {
        self.width * self.spp() * usize::from(self.bits / 8)
    }

    /// Takes the next rows: interleaved CMYK samples of whole rows, at the file's depth.
    pub fn push(&mut self, cmyk: &Samples) -> io::Result<()> {
        let rows = whole_rows(cmyk.len(), self.width * 4)?;
        if rows > self.height - self.rows_in {
            return Err(io::Error::new(io::ErrorKind::InvalidInput, "more rows than the image has"));
        }
        let depth_matches = matches!((cmyk, self.bits), (Samples::U8(_), 8) | (Samples::U16(_), 16));
        if !depth_matches {
            return Err(io::Error::new(
                io::ErrorKind::InvalidInput,
                "band samples at another depth than the file",
            ));
        }
        match (cmyk, self.ink) {
            (Samples::U8(v), None) => self.partial.extend_from_slice(v),
            (Samples::U8(v), Some(i)) => self.partial.extend(v.chunks_exact(4).map(|px| px[i.index()])),
            (Samples::U16(v), None) => self.partial.extend(v.iter().flat_map(|x| x.to_le_bytes())),
            (Samples::U16(v), Some(i)) => self.partial.extend(v.chunks_exact(4).flat_map(|px| px[i.index()].to_le_bytes())),
        }
        self.rows_in += rows;
        let strip_bytes = self.rows_per_strip * self.row_bytes();
        let full = self.partial.len() / strip_bytes * strip_bytes;
        if full > 0 {
            let partial = std::mem::take(&mut self.partial);
            self.write_strips(&partial[..full], strip_bytes)?;
            self.partial = partial[full..].to_vec();
        }
        Ok(())
    }

    /// Compresses the strips of `bytes` (whole strips of `strip_bytes`, the last may be
    /// shorter) in parallel and writes them in order.
    fn write_strips(&mut self, bytes: &[u8], strip_bytes: usize) -> io::Result<()> {
        let (compression, row_bytes, spp, wide) = (self.compression, self.row_bytes(), self.spp(), self.bits == 16);
        let encoded: Vec<io::Result<Vec<u8>>> = if compression == Compression::None {
            bytes.chunks(strip_bytes).map(|s| Ok(s.to_vec())).collect()
        } else {
            bytes
                .par_chunks(strip_bytes)
                .map(|s| encode_strip(s, row_bytes, spp, wide, compression))
                .collect()
        };
        for strip in encoded {
            let strip = strip?;
            self.out.write_all(&strip)?;
            self.offsets.push(self.pos);
            self.counts.push(strip.len() as u64);
            self.pos += strip.len() as u64;
        }
        Ok(())
    }

    /// Writes the last strip, the tag values and the directory, points the header at
    /// it and flushes; every row must have been pushed. Returns the writer.
    pub fn finish(mut self) -> io::Result<W> {
        if self.rows_in != self.height {
            return Err(io::Error::new(
                io::ErrorKind::InvalidInput,
                format!("{} of {} rows were written", self.rows_in, self.height),
            ));
        }
        if !self.partial.is_empty() {
            let rest = std::mem::take(&mut self.partial);
            let strip_bytes = self.rows_per_strip * self.row_bytes();
            self.write_strips(&rest, strip_bytes)?;
        }
        let fields = self.fields()?;
        let big = self.big;
        let inline = if big { 8 } else { 4 };
        // Values too long for their entry go before the directory, each on a word boundary.
        let mut value_at = Vec::with_capacity(fields.len());
        for f in &fields {
            if f.data.len() > inline {
                self.align()?;
                value_at.push(Some(self.pos));
                self.out.write_all(&f.data)?;
                self.pos += f.data.len() as u64;
            } else {
                value_at.push(None);
            }
        }
        self.align()?;
        let ifd = self.pos;
        let mut dir = Vec::with_capacity(8 + fields.len() * 20 + 8);
        if big {
            dir.extend((fields.len() as u64).to_le_bytes());
        } else {
            dir.extend((fields.len() as u16).to_le_bytes());
        }
        for (f, at) in fields.iter().zip(&value_at) {
            dir.extend(f.tag.to_le_bytes());
            dir.extend(f.kind.to_le_bytes());
            let mut value = match at {
                Some(off) if big => off.to_le_bytes().to_vec(),
                Some(off) => u32::try_from(*off).map_err(|_| past_4_gib())?.to_le_bytes().to_vec(),
                None => f.data.clone(),
            };
            value.resize(inline, 0);
            if big {
                dir.extend(f.count.to_le_bytes());
            } else {
                dir.extend(u32::try_from(f.count).map_err(|_| past_4_gib())?.to_le_bytes());
            }
            dir.extend(value);
        }
        // No next directory.
        dir.extend(std::iter::repeat_n(0u8, inline));
        self.out.write_all(&dir)?;
        if big {
            self.out.seek(SeekFrom::Start(8))?;
            self.out.write_all(&ifd.to_le_bytes())?;
        } else {
            self.out.seek(SeekFrom::Start(4))?;
            self.out.write_all(&u32::try_from(ifd).map_err(|_| past_4_gib())?.to_le_bytes())?;
        }
        self.out.seek(SeekFrom::End(0))?;
        self.out.flush()?;
        Ok(self.out)
    }

    fn align(&mut self) -> io::Result<()> {
        if self.pos % 2 == 1 {
            self.out.write_all(&[0])?;
            self.pos += 1;
        }
        Ok(())
    }

    /// The directory's entries in ascending tag order (TIFF 6.0 §2).
    fn fields(&self) -> io::Result<Vec<Field>> {
        let spp = self.spp();
        let res = self.options.resolution.unwrap_or(Resolution::DEFAULT);
        let mut f = vec![
            Field::long(254, 0), // NewSubfileType
            Field::long(256, self.width as u32),
            Field::long(257, self.height as u32),
            Field::shorts(258, &vec![u16::from(self.bits); spp]), // BitsPerSample
            Field::shorts(259, &[self.compression.tag()]),
            // PhotometricInterpretation: 5 = Separated (composite), 0 = WhiteIsZero (plate).
            Field::shorts(262, &[if self.ink.is_some() { 0 } else { 5 }]),
            Field::offsets(273, &self.offsets, self.big)?, // StripOffsets
            Field::shorts(277, &[spp as u16]),             // SamplesPerPixel
            Field::long(278, self.rows_per_strip as u32),  // RowsPerStrip
            Field::offsets(279, &self.counts, self.big)?,  // StripByteCounts
            Field::rational(282, res.x_ppi),
            Field::rational(283, res.y_ppi),
            Field::shorts(284, &[1]), // PlanarConfiguration: chunky
            Field::shorts(296, &[2]), // ResolutionUnit: inch
            Field::ascii(305, concat!("platesmith ", env!("CARGO_PKG_VERSION"))),
        ];
        if self.compression != Compression::None {
            f.push(Field::shorts(317, &[2])); // Predictor: horizontal differencing
        }
        if self.ink.is_none() {
            f.push(Field::shorts(332, &[1])); // InkSet: CMYK
        }
        f.push(Field::shorts(339, &vec![1; spp])); // SampleFormat: unsigned integer
        if let (None, Some(icc)) = (self.ink, self.options.icc_profile) {
            f.push(Field::undefined(34675, icc));
        }
        Ok(f)
    }
}

/// One strip's stored bytes (little-endian samples, `row_bytes` per row) with the
/// horizontal predictor and compression applied.
fn encode_strip(raw: &[u8], row_bytes: usize, spp: usize, wide: bool, compression: Compression) -> io::Result<Vec<u8>> {
    if compression == Compression::None {
        return Ok(raw.to_vec());
    }
    // The horizontal predictor (TIFF 6.0 §14) from the raw row into a new
    // one, front to back, so the loop vectorises.
    let mut s = vec![0u8; raw.len()];
    for (row, source) in s.chunks_exact_mut(row_bytes).zip(raw.chunks_exact(row_bytes)) {
        if wide {
            let step = 2 * spp;
            row[..step].copy_from_slice(&source[..step]);
            for ((d, c), p) in row[step..]
                .chunks_exact_mut(2)
                .zip(source[step..].chunks_exact(2))
                .zip(source.chunks_exact(2))
            {
                let v = u16::from_le_bytes([c[0], c[1]]).wrapping_sub(u16::from_le_bytes([p[0], p[1]]));
                d.copy_from_slice(&v.to_le_bytes());
            }
        } else {
            row[..spp].copy_from_slice(&source[..spp]);
            for ((d, &c), &p) in row[spp..].iter_mut().zip(&source[spp..]).zip(source) {
                *d = c.wrapping_sub(p);
            }
        }
    }
    let mut out = Vec::with_capacity(s.len() / 2 + 64);
    match compression {
        Compression::None => {}
        Compression::Lzw => {
            Lzw.write_to(&mut out, &s)?;
        }
        Compression::Deflate => {
            let mut z = flate2::write::ZlibEncoder::new(out, flate2::Compression::new(DEFLATE_LEVEL));
            z.write_all(&s)?;
            out = z.finish()?;
        }
    }
    Ok(out)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn rational_resolution() {
        assert_eq!(rational(300.0), (300, 1));
        assert_eq!(rational(299.72), (7493, 25));
    }

    #[test]
    fn sixteen_to_eight_bit_rounds() {
        assert_eq!(to_8bit(0), 0);
        assert_eq!(to_8bit(65535), 255);
        assert_eq!(to_8bit(257 * 100 + 128), 100);
        assert_eq!(to_8bit(257 * 100 + 129), 101);
    }
}
