//! Decoding TIFF (tiff crate) into a [`Raster`]: the page, the claimed size against the
//! strips, and the encodings print work meets.
//!
//! TIFF 6.0 (Adobe, 1992): NewSubfileType (254, bit 0 = reduced-resolution copy), Orientation
//! (274), PlanarConfiguration (284), ColorMap (320, 16-bit entries), ExtraSamples (338:
//! 1 = associated alpha, premultiplied; 2 = unassociated), SampleFormat (339, 3 = IEEE float),
//! YCbCr (§21: YCbCrCoefficients 529, ReferenceBlackWhite 532), JPEG compression (TIFF
//! Technical Note 2, compression 7), CMYK (Separated, InkSet 1).

use std::io::{BufRead, Seek, SeekFrom};
use std::path::Path;

use super::{Format, Layout, Orientation, Raster, ReadOptions, Samples, sniff};
use crate::error::io_reason;
use crate::{Error, Result};
use tiff::ColorType as T;
use tiff::decoder::{Decoder, DecodingResult};
use tiff::tags::Tag;

/// Pages followed at most (a longer chain is hostile or broken).
const MAX_PAGES: usize = 4096;

pub(super) fn read_tiff<R: BufRead + Seek>(path: &Path, mut reader: R, file_len: u64, options: &ReadOptions) -> Result<Raster> {
    let limits = &options.limits;
    let err = |e: tiff::TiffError| super::read::decode_error(path, Format::Tiff, e.to_string());
    let tl = decoder_limits(limits);
    // The first IFD's claim is checked before the decoder runs.
    if let Some((w, h, channels, bits)) = sniff::tiff_header(&mut reader) {
        limits.check(path, w, h, channels, bits.clamp(8, 16))?;
    }
    reader
        .seek(SeekFrom::Start(0))
        .map_err(|e| Error::input(path, format!("cannot read: {}", io_reason(&e))))?;
    let mut notes = Vec::new();
    let index = {
        let mut dec = Decoder::new(&mut reader).map_err(err)?.with_limits(tl.clone());
        let index = choose_page(path, &mut dec, options, &mut notes)?;
        if dec.find_tag_unsigned::<u16>(Tag::PhotometricInterpretation).map_err(err)? != Some(3) {
            return read_page(path, dec, file_len, options, notes, false);
        }
        index
    };
    // Palette (PhotometricInterpretation 3): the tiff crate decodes no palette image, so the
    // indices are decoded as gray from a copy whose photometric tag says so, and expanded
    // through the ColorMap here.
    if file_len > limits.max_bytes {
        return Err(Error::input(path, "palette TIFF file is larger than the limits setting allows"));
    }
    let mut bytes = Vec::new();
    reader
        .seek(SeekFrom::Start(0))
        .and_then(|_| reader.read_to_end(&mut bytes))
        .map_err(|e| Error::input(path, format!("cannot read: {}", io_reason(&e))))?;
    if sniff::set_tiff_photometric(&mut bytes, index, 1).is_none() {
        return Err(Error::input(path, "corrupt TIFF file: the palette page's directory cannot be read"));
    }
    let mut dec = Decoder::new(std::io::Cursor::new(bytes)).map_err(err)?.with_limits(tl);
    dec.seek_to_image(index).map_err(err)?;
    read_page(path, dec, file_len, options, notes, true)
}

/// The tiff crate's own allocation limits: decoded and intermediate buffers within the byte limit.
pub(super) fn decoder_limits(limits: &super::Limits) -> tiff::decoder::Limits {
    let mut tl = tiff::decoder::Limits::default();
    tl.decoding_buffer_size = usize::try_from(limits.max_bytes).unwrap_or(usize::MAX);
    tl.intermediate_buffer_size = tl.decoding_buffer_size;
    tl.ifd_value_size = 64 << 20; // room for large ICC profiles
    tl
}

/// Picks the page to read (see [`ReadOptions::page`]), notes the others, and goes to it.
pub(super) fn choose_page<R: std::io::Read + Seek>(
    path: &Path,
    dec: &mut Decoder<R>,
    options: &ReadOptions,
    notes: &mut Vec<String>,
) -> Result<usize> {
    let err = |e: tiff::TiffError| super::read::decode_error(path, Format::Tiff, e.to_string());
    // Pages: the first full-resolution one unless one is asked for.
    let mut reduced = Vec::new();
    loop {
        let kind = dec.find_tag_unsigned::<u32>(Tag::NewSubfileType).map_err(err)?.unwrap_or(0);
        reduced.push(kind & 1 == 1);
        if !dec.more_images() || reduced.len() >= MAX_PAGES {
            break;
        }
        dec.next_image().map_err(err)?;
    }
    let pages = reduced.len();
    let index = match options.page {
        Some(n) if n == 0 || n as usize > pages => {
            return Err(Error::input(
                path,
                format!("--page {n}: the file has {pages} page(s), numbered from 1"),
            ));
        }
        Some(n) => n as usize - 1,
        None => reduced.iter().position(|r| !r).unwrap_or(0),
    };
    dec.seek_to_image(index).map_err(err)?;
    if pages > 1 {
        let full = reduced.iter().filter(|r| !**r).count();
        notes.push(format!(
            "page {} of {pages} read ({full} full-resolution, {} reduced-resolution); give --page N for another",
            index + 1,
            pages - full
        ));
    } else if reduced[0] {
        notes.push("the only page is marked as a reduced-resolution copy (NewSubfileType 1)".into());
    }

    Ok(index)
}

fn read_page<R: std::io::Read + Seek>(
    path: &Path,
    mut dec: Decoder<R>,
    file_len: u64,
    options: &ReadOptions,
    notes: Vec<String>,
    palette: bool,
) -> Result<Raster> {
    let err = |e: tiff::TiffError| super::read::decode_error(path, Format::Tiff, e.to_string());
    let plan = PagePlan::read(path, &mut dec, file_len, options, palette, false)?;
    let mut result = DecodingResult::U8(Vec::new());
    let layout_pref = dec.read_image_to_buffer(&mut result).map_err(err)?;
    if plan.planar && result.as_buffer(0).as_bytes().len() < layout_pref.complete_len {
        return Err(Error::input(
            path,
            "planar TIFF does not fit the limits setting; raise the limits to read it",
        ));
    }
    let mut clipped = 0u64;
    let samples = plan.convert(path, result, plan.width as usize, plan.height as usize, options, &mut clipped)?;
    let mut raster = Raster {
        width: plan.width,
        height: plan.height,
        layout: plan.layout,
        bits: samples.bits(),
        samples,
        icc_profile: plan.icc_profile.clone(),
        resolution: plan.resolution,
        colour_chunks: None,
        format: Format::Tiff,
        notes: plan.notes(notes, options, clipped),
        line_art: plan.line_art(),
    };
    Orientation::apply_tag(&mut raster, plan.orientation, "TIFF");
    Ok(raster)
}

/// What a page's directory says, checked against the limits and the strips: everything
/// decoding needs but the samples. The whole read and the streamed read share it, and
/// [`PagePlan::convert`] turns decoded samples of any region into the raster's samples.
pub(super) struct PagePlan {
    pub(super) width: u32,
    pub(super) height: u32,
    colortype: T,
    pub(super) layout: Layout,
    alpha: bool,
    associated: bool,
    /// Samples per pixel in the file.
    spp: usize,
    pub(super) planar: bool,
    pub(super) orientation: Option<u16>,
    palette: Option<Vec<u16>>,
    ycbcr: Option<YcbcrSetup>,
    pub(super) resolution: Option<super::Resolution>,
    pub(super) icc_profile: Option<Vec<u8>>,
    /// Columns and rows of a strip or tile (a strip is as wide as the page).
    pub(super) chunk: (u32, u32),
    /// Whether the page is read a strip or a row of tiles at a time (see [`super::tiff_bands`]).
    pub(super) streamed: bool,
    /// Streamed uncompressed strips read straight from the file a band at a time (see
    /// [`super::tiff_bands`]): their offsets, and whether 16 and 32-bit samples are big-endian.
    pub(super) direct: Option<DirectStrips>,
}

/// Uncompressed strips whose rows are read straight from the file.
pub(super) struct DirectStrips {
    pub(super) offsets: Vec<u64>,
    pub(super) big_endian: bool,
    /// Bytes of one stored row.
    pub(super) row_bytes: u64,
}

impl PagePlan {
    /// Reads and checks the page's directory. With `may_stream`, a page that can be read a
    /// strip or a row of tiles at a time is checked against the side limits and the decoded
    /// size of one row of chunks, instead of the decoded size of the whole page.
    pub(super) fn read<R: std::io::Read + Seek>(
        path: &Path,
        dec: &mut Decoder<R>,
        file_len: u64,
        options: &ReadOptions,
        palette: bool,
        may_stream: bool,
    ) -> Result<PagePlan> {
        let limits = &options.limits;
        let err = |e: tiff::TiffError| super::read::decode_error(path, Format::Tiff, e.to_string());
        let (width, height) = dec.dimensions().map_err(err)?;
        let colortype = dec.colortype().map_err(|e| match e {
            tiff::TiffError::UnsupportedError(u) => Error::input(path, format!("unsupported TIFF layout: {u}")),
            other => err(other),
        })?;
        let colortype = match colortype {
            T::Gray(b) if palette => T::Palette(b),
            other => other,
        };
        let tag_u16 = |dec: &mut Decoder<R>, tag: Tag| -> Result<Option<u16>> { dec.find_tag_unsigned::<u16>(tag).map_err(err) };
        let formats = dec
            .find_tag_unsigned_vec::<u16>(Tag::SampleFormat)
            .map_err(err)?
            .unwrap_or_default();
        let float = match formats.first().copied().unwrap_or(1) {
            1 => false,
            3 => true,
            _ => {
                return Err(Error::input(
                    path,
                    "TIFF samples are signed integers; use unsigned integer or 32-bit float samples",
                ));
            }
        };
        let bits = colortype.bit_depth();
        if float && bits != 32 {
            return Err(Error::input(path, format!("unsupported TIFF float depth {bits}; use 32-bit float")));
        }
        let (layout, alpha) = match colortype {
            T::Gray(_) => (Layout::Gray, false),
            T::GrayA(_) | T::Multiband { num_samples: 2, .. } => (Layout::GrayAlpha, true),
            T::RGB(_) | T::YCbCr(_) | T::Palette(_) => (Layout::Rgb, false),
            T::RGBA(_) => (Layout::Rgba, true),
            T::CMYK(_) => (Layout::Cmyk, false),
            T::CMYKA(_) => (Layout::Cmyk, true),
            other => {
                return Err(Error::input(
                    path,
                    format!("unsupported TIFF layout {other:?}; use gray, RGB, palette or CMYK"),
                ));
            }
        };
        match (colortype, bits) {
            (T::Gray(1), _) | (T::Palette(1 | 2 | 4 | 8), _) | (T::YCbCr(8), _) | (_, 8 | 16) => {}
            (_, 32) if float => {}
            _ => {
                return Err(Error::input(
                    path,
                    format!("unsupported TIFF bit depth {bits} for {colortype:?}; use 8 or 16-bit integers, 32-bit float, or 1-bit gray"),
                ));
            }
        }
        if matches!(colortype, T::CMYK(_) | T::CMYKA(_)) && tag_u16(dec, Tag::Unknown(332))?.is_some_and(|s| s != 1) {
            // InkSet (332): 1 = CMYK, 2 = other inks (TIFF 6.0 §16).
            return Err(Error::input(
                path,
                "separated TIFF with inks other than CMYK (InkSet 2) is not supported",
            ));
        }
        let out_bits: u8 = if float { 16 } else { bits.clamp(8, 16) };
        let spp = usize::from(tag_u16(dec, Tag::SamplesPerPixel)?.unwrap_or(1)).max(1);
        let planar = tag_u16(dec, Tag::PlanarConfiguration)? == Some(2);
        let orientation = tag_u16(dec, Tag::Orientation)?;
        let chunk = chunk_size(dec, width, height).map_err(err)?;
        let channels = layout.channels().max(spp).min(255) as u8;
        // Planar YCbCr (subsampled planes) is left to the whole read.
        let streamed = may_stream && !(planar && matches!(colortype, T::YCbCr(_))) && super::tiff_bands::streams(orientation);
        let direct = if streamed && !planar {
            direct_strips(dec, width, height, spp, bits, chunk).map_err(err)?
        } else {
            None
        };
        if direct.is_some() {
            // Rows are read straight into the band asked for: nothing else is held.
            super::Limits {
                max_bytes: u64::MAX,
                ..*limits
            }
            .check(path, width, height, channels, out_bits)?;
        } else if streamed {
            // Only one row of chunks is held at a time: the byte limit bounds that row.
            super::Limits {
                max_bytes: u64::MAX,
                ..*limits
            }
            .check(path, width, height, channels, out_bits)?;
            super::tiff_bands::check_chunk_row(path, limits, width, chunk, channels, out_bits)?;
        } else {
            limits.check(path, width, height, channels, out_bits)?;
        }
        claim_fits_strips(path, dec, width, height, spp, bits, file_len)?;

        let resolution = super::read::tiff_resolution(dec).map_err(err)?;
        let icc_profile = match dec.find_tag(Tag::IccProfile).map_err(err)? {
            Some(v) => Some(v.into_u8_vec().map_err(err)?),
            None => None,
        };
        let extra = dec
            .find_tag_unsigned_vec::<u16>(Tag::ExtraSamples)
            .map_err(err)?
            .unwrap_or_default();
        let associated = extra.first() == Some(&1);
        let palette = if matches!(colortype, T::Palette(_)) {
            Some(dec.get_tag_u16_vec(Tag::ColorMap).map_err(err)?)
        } else {
            None
        };
        let ycbcr = if matches!(colortype, T::YCbCr(_)) {
            Some(ycbcr_setup(dec).map_err(err)?)
        } else {
            None
        };
        Ok(PagePlan {
            width,
            height,
            colortype,
            layout,
            alpha,
            associated,
            spp,
            planar,
            orientation,
            palette,
            ycbcr,
            resolution,
            icc_profile,
            chunk,
            streamed,
            direct,
        })
    }

    /// Samples per pixel in the file.
    pub(super) fn spp(&self) -> usize {
        self.spp
    }

    /// 1-bit line art, separated onto the black plate only.
    pub(super) fn line_art(&self) -> bool {
        matches!(self.colortype, T::Gray(1))
    }

    /// The notes of reading this page, after `notes` (the page's), in the order the steps
    /// of [`PagePlan::convert`] run; `clipped`: float samples outside 0–1 in the whole page.
    pub(super) fn notes(&self, mut notes: Vec<String>, options: &ReadOptions, clipped: u64) -> Vec<String> {
        match self.colortype {
            T::Gray(1) => notes.push("1-bit line art: separated onto the black plate only".into()),
            T::Palette(b) => notes.push(format!("palette of {} colours expanded to RGB", 1usize << b)),
            T::YCbCr(_) => notes.push("YCbCr converted to RGB (TIFF 6.0 §21)".into()),
            _ if self.float() => notes.push(format!(
                "32-bit float samples read as linear light in {} and encoded with its transfer curve to 16 bit{}",
                options.float_space.name(),
                if clipped > 0 {
                    format!("; {clipped} samples outside 0–1 clipped")
                } else {
                    String::new()
                }
            )),
            _ => {}
        }
        if matches!(self.colortype, T::CMYKA(_)) {
            notes.push(format!(
                "CMYK {} alpha flattened onto paper white (no ink where transparent)",
                if self.associated { "associated" } else { "unassociated" }
            ));
        } else if self.alpha && self.associated {
            notes.push("associated (premultiplied) alpha un-premultiplied before flattening".into());
        }
        notes
    }

    /// 32-bit float samples.
    pub(super) fn float(&self) -> bool {
        self.colortype.bit_depth() == 32
    }

    /// The depth of the raster's samples: 8 or 16.
    pub(super) fn out_bits(&self) -> u8 {
        match self.colortype {
            // 16 when the ColorMap holds more than 8-bit values: palette pages are read whole.
            T::Palette(_) => 8,
            _ if self.float() => 16,
            c => c.bit_depth().clamp(8, 16),
        }
    }

    /// Decoded samples of a region `w` × `h` px (the page, a strip or a tile) → the raster's
    /// samples of that region: bits unpacked, palette expanded, YCbCr and float converted,
    /// planes interleaved, alpha un-premultiplied or CMYK alpha flattened. `clipped` counts
    /// float samples outside 0–1.
    pub(super) fn convert(
        &self,
        path: &Path,
        result: DecodingResult,
        w: usize,
        h: usize,
        options: &ReadOptions,
        clipped: &mut u64,
    ) -> Result<Samples> {
        let (planar, spp, layout) = (self.planar, self.spp, self.layout);
        let samples = match (self.colortype, result) {
            (T::Gray(1), DecodingResult::U8(v)) => Samples::U8(unpack(&v, w, h, 1).into_iter().map(|b| b * 255).collect()),
            (T::Palette(b), DecodingResult::U8(v)) => {
                let map = self.palette.as_deref().unwrap_or_default();
                let indices = if b == 8 { v } else { unpack(&v, w, h, b) };
                expand_palette(path, &indices, map, b)?
            }
            (T::YCbCr(_), DecodingResult::U8(v)) => {
                let v = if planar { interleave(&v, w * h, spp) } else { v };
                Samples::U8(ycbcr_to_rgb(&v, self.ycbcr.unwrap_or_default()))
            }
            (_, DecodingResult::U8(v)) => Samples::U8(if planar { interleave(&v, w * h, spp) } else { v }),
            (_, DecodingResult::U16(v)) => Samples::U16(if planar { interleave(&v, w * h, spp) } else { v }),
            (_, DecodingResult::F32(v)) => {
                let v = if planar { interleave(&v, w * h, spp) } else { v };
                let transfer = options.float_space.converter().transfer();
                let colour = layout.channels() - usize::from(layout.has_alpha());
                let out = v
                    .iter()
                    .enumerate()
                    .map(|(i, &x)| {
                        let x = if x.is_finite() { f64::from(x) } else { 0.0 };
                        if !(0.0..=1.0).contains(&x) {
                            *clipped += 1;
                        }
                        let x = x.clamp(0.0, 1.0);
                        // Colour samples are linear light; alpha is a plain fraction.
                        let e = if i % spp < colour { transfer.encode(x) } else { x };
                        (e * 65535.0).round() as u16
                    })
                    .collect();
                Samples::U16(out)
            }
            _ => {
                return Err(Error::input(
                    path,
                    "unsupported TIFF sample type; use 8 or 16-bit integers or 32-bit float",
                ));
            }
        };
        let file_channels = layout.channels() + usize::from(matches!(self.colortype, T::CMYKA(_)));
        let expected = w * h * file_channels;
        if samples.len() != expected {
            return Err(Error::input(
                path,
                format!("TIFF decoded to {} samples, expected {expected}", samples.len()),
            ));
        }
        let mut samples = samples;
        if matches!(self.colortype, T::CMYKA(_)) {
            samples = flatten_cmyk_alpha(samples, self.associated);
        } else if self.alpha && self.associated {
            unpremultiply(&mut samples, layout.channels());
        }
        Ok(samples)
    }
}

/// Uncompressed interleaved strips of 8, 16 or 32-bit samples that need no work of the
/// decoder (no predictor; BlackIsZero, RGB or Separated, whose codes are the samples),
/// each long enough for its rows: their rows can be read straight from the file.
fn direct_strips<R: std::io::Read + Seek>(
    dec: &mut Decoder<R>,
    width: u32,
    height: u32,
    spp: usize,
    bits: u8,
    chunk: (u32, u32),
) -> tiff::TiffResult<Option<DirectStrips>> {
    let tag = |dec: &mut Decoder<R>, t: Tag| dec.find_tag_unsigned::<u32>(t);
    let plain = dec.find_tag(Tag::TileOffsets)?.is_none()
        && tag(dec, Tag::Compression)?.unwrap_or(1) == 1
        && tag(dec, Tag::Predictor)?.unwrap_or(1) == 1
        && matches!(tag(dec, Tag::PhotometricInterpretation)?, Some(1 | 2 | 5))
        && tag(dec, Tag::FillOrder)?.unwrap_or(1) == 1
        && matches!(bits, 8 | 16 | 32);
    if !plain {
        return Ok(None);
    }
    let offsets = dec.find_tag_unsigned_vec::<u64>(Tag::StripOffsets)?.unwrap_or_default();
    let counts = dec.find_tag_unsigned_vec::<u64>(Tag::StripByteCounts)?.unwrap_or_default();
    let row_bytes = u64::from(width) * spp as u64 * u64::from(bits / 8);
    let rows = chunk.1;
    let strips = height.div_ceil(rows) as usize;
    let fits = offsets.len() >= strips
        && counts.len() >= strips
        && (0..strips).all(|s| counts[s] >= u64::from(rows.min(height - s as u32 * rows)) * row_bytes);
    Ok(fits.then(|| DirectStrips {
        offsets,
        big_endian: dec.byte_order() == tiff::tags::ByteOrder::BigEndian,
        row_bytes,
    }))
}

/// Rows and columns of one strip or tile, from the directory: TileWidth and TileLength, or
/// the page's width and RowsPerStrip (default: the page's height; TIFF 6.0 §3 and §15).
fn chunk_size<R: std::io::Read + Seek>(dec: &mut Decoder<R>, width: u32, height: u32) -> tiff::TiffResult<(u32, u32)> {
    let tile_w = dec.find_tag_unsigned::<u32>(Tag::TileWidth)?;
    let tile_h = dec.find_tag_unsigned::<u32>(Tag::TileLength)?;
    Ok(match (tile_w, tile_h) {
        (Some(w), Some(h)) if w > 0 && h > 0 => (w, h),
        _ => {
            let rows = dec.find_tag_unsigned::<u32>(Tag::RowsPerStrip)?.unwrap_or(height);
            (width, rows.clamp(1, height.max(1)))
        }
    })
}

/// The bomb guard: the strips or tiles must lie inside the file, and their bytes must be able
/// to hold the claimed image under the file's compression (image-rs's Limits check allocation;
/// this checks the claim against the data first, so a small file cannot ask for gigabytes).
fn claim_fits_strips<R: std::io::Read + Seek>(
    path: &Path,
    dec: &mut Decoder<R>,
    width: u32,
    height: u32,
    spp: usize,
    bits: u8,
    file_len: u64,
) -> Result<()> {
    let err = |e: tiff::TiffError| super::read::decode_error(path, Format::Tiff, e.to_string());
    let tiled = dec.find_tag(Tag::TileOffsets).map_err(err)?.is_some();
    let (offsets_tag, counts_tag, what) = if tiled {
        (Tag::TileOffsets, Tag::TileByteCounts, "tile")
    } else {
        (Tag::StripOffsets, Tag::StripByteCounts, "strip")
    };
    let offsets = dec.find_tag_unsigned_vec::<u64>(offsets_tag).map_err(err)?.unwrap_or_default();
    let counts = dec.find_tag_unsigned_vec::<u64>(counts_tag).map_err(err)?.unwrap_or_default();
    if offsets.is_empty() || counts.len() != offsets.len() {
        return Err(Error::input(
            path,
            format!(
                "corrupt TIFF file: {} {what} offsets but {} byte counts",
                offsets.len(),
                counts.len()
            ),
        ));
    }
    for (k, (&o, &c)) in offsets.iter().zip(&counts).enumerate() {
        if o.checked_add(c).is_none_or(|end| end > file_len) {
            return Err(Error::input(
                path,
                format!(
                    "truncated TIFF file: {what} {} of {} lies past the end of the file ({file_len} bytes)",
                    k + 1,
                    offsets.len()
                ),
            ));
        }
    }
    let row_bytes = (u64::from(width) * spp as u64 * u64::from(bits)).div_ceil(8);
    let decoded = row_bytes * u64::from(height);
    let stored: u64 = counts.iter().sum();
    let compression = dec.find_tag_unsigned::<u16>(Tag::Compression).map_err(err)?.unwrap_or(1);
    // The most one stored byte can decode to, per compression (TIFF 6.0 and its notes).
    let (ratio, name): (u64, &str) = match compression {
        1 => (1, "uncompressed"),
        // PackBits (§9): 2 bytes repeat one byte at most 128 times.
        32773 => (64, "PackBits"),
        // LZW (§13): one code of at least 9 bits stands for at most 4096 bytes.
        5 => (4096 * 8 / 9, "LZW"),
        // Deflate (RFC 1951): 258 bytes per length code of at least 2 bits, 1032:1 at most.
        8 | 32946 => (1032, "Deflate"),
        // JPEG (ISO/IEC 10918-1): at least one bit per 8 × 8 block of a component.
        6 | 7 => (64 * 8 * u64::from(bits.div_ceil(8)), "JPEG"),
        // CCITT fax (T.4/T.6): at least one bit per row.
        2..=4 => (row_bytes.max(1) * 8, "CCITT fax"),
        _ => return Ok(()),
    };
    if stored.saturating_mul(ratio) < decoded {
        return Err(Error::input(
            path,
            format!(
                "TIFF header claims {width} × {height} px ({} decoded), but its {what}s hold {} {name}, which decodes to at most {}: refused as corrupt or hostile",
                super::human_bytes(decoded),
                super::human_bytes(stored),
                super::human_bytes(stored.saturating_mul(ratio))
            ),
        ));
    }
    Ok(())
}

/// Samples of `bits` (1, 2, 4) packed MSB first, rows padded to whole bytes, as one value each.
fn unpack(v: &[u8], w: usize, h: usize, bits: u8) -> Vec<u8> {
    let per_byte = 8 / usize::from(bits);
    let stride = w.div_ceil(per_byte);
    let mask = (1u16 << bits) as u8 - 1;
    let mut out = Vec::with_capacity(w * h);
    for y in 0..h {
        let row = v.get(y * stride..(y + 1) * stride).unwrap_or(&[]);
        for x in 0..w {
            let byte = row.get(x / per_byte).copied().unwrap_or(0);
            let shift = 8 - usize::from(bits) * (x % per_byte + 1);
            out.push((byte >> shift) & mask);
        }
    }
    out
}

/// Planes one after another (PlanarConfiguration 2) → interleaved samples.
fn interleave<S: Copy>(v: &[S], pixels: usize, spp: usize) -> Vec<S> {
    if v.len() < pixels * spp {
        return v.to_vec(); // the length check after decoding reports it
    }
    (0..pixels).flat_map(|p| (0..spp).map(move |s| v[s * pixels + p])).collect()
}

/// Palette indices → RGB through the ColorMap (all reds, then greens, then blues; 16-bit).
/// 8-bit output when every entry is an 8-bit value widened, else 16-bit.
fn expand_palette(path: &Path, indices: &[u8], map: &[u16], bits: u8) -> Result<Samples> {
    let n = 1usize << bits;
    if map.len() != 3 * n {
        return Err(Error::input(
            path,
            format!(
                "corrupt TIFF palette: {} ColorMap entries for {bits}-bit indices (need {})",
                map.len(),
                3 * n
            ),
        ));
    }
    let entry = |i: u8, c: usize| map[c * n + usize::from(i).min(n - 1)];
    // Writers widen 8-bit palettes as v · 257 or as v · 256 (libtiff's tools and Pillow):
    // either way the high byte is the 8-bit value.
    if map.iter().all(|&v| v % 257 == 0) || map.iter().all(|&v| v % 256 == 0) {
        Ok(Samples::U8(
            indices.iter().flat_map(|&i| [0, 1, 2].map(|c| (entry(i, c) >> 8) as u8)).collect(),
        ))
    } else {
        Ok(Samples::U16(indices.iter().flat_map(|&i| [0, 1, 2].map(|c| entry(i, c))).collect()))
    }
}

/// YCbCrCoefficients (luma weights of R, G, B) and ReferenceBlackWhite (six values).
#[derive(Debug, Clone, Copy)]
struct YcbcrSetup {
    luma: [f64; 3],
    reference: [f64; 6],
}

impl Default for YcbcrSetup {
    /// TIFF 6.0 §21 defaults: ITU-R BT.601 weights; full range, chroma centred on 128.
    fn default() -> YcbcrSetup {
        YcbcrSetup {
            luma: [0.299, 0.587, 0.114],
            reference: [0.0, 255.0, 128.0, 255.0, 128.0, 255.0],
        }
    }
}

fn ycbcr_setup<R: std::io::Read + Seek>(dec: &mut Decoder<R>) -> tiff::TiffResult<YcbcrSetup> {
    use tiff::decoder::ifd::Value;
    let mut s = YcbcrSetup::default();
    let floats = |v: Option<Value>| -> Option<Vec<f64>> {
        let list = match v? {
            Value::List(l) => l,
            other => vec![other],
        };
        list.into_iter()
            .map(|x| match x {
                Value::Rational(n, d) if d != 0 => Some(f64::from(n) / f64::from(d)),
                Value::Short(n) => Some(f64::from(n)),
                Value::Unsigned(n) => Some(f64::from(n)),
                _ => None,
            })
            .collect()
    };
    if let Some(l) = floats(dec.find_tag(Tag::Unknown(529))?).filter(|l| l.len() == 3 && l[1] > 0.0) {
        s.luma = [l[0], l[1], l[2]];
    }
    if let Some(r) = floats(dec.find_tag(Tag::Unknown(532))?).filter(|r| r.len() == 6 && r[1] != r[0] && r[3] != r[2] && r[5] != r[4]) {
        s.reference = [r[0], r[1], r[2], r[3], r[4], r[5]];
    }
    Ok(s)
}

/// TIFF 6.0 §21: codes to Y, Cb, Cr through ReferenceBlackWhite, then to R, G, B.
fn ycbcr_to_rgb(v: &[u8], s: YcbcrSetup) -> Vec<u8> {
    let [lr, lg, lb] = s.luma;
    let r = s.reference;
    let to_u8 = |x: f64| x.round().clamp(0.0, 255.0) as u8;
    v.chunks_exact(3)
        .flat_map(|p| {
            let y = (f64::from(p[0]) - r[0]) * 255.0 / (r[1] - r[0]);
            let cb = (f64::from(p[1]) - r[2]) * 127.0 / (r[3] - r[2]);
            let cr = (f64::from(p[2]) - r[4]) * 127.0 / (r[5] - r[4]);
            let red = cr * (2.0 - 2.0 * lr) + y;
            let blue = cb * (2.0 - 2.0 * lb) + y;
            let green = (y - lb * blue - lr * red) / lg;
            [to_u8(red), to_u8(green), to_u8(blue)]
        })
        .collect()
}

/// Colour samples divided by their (associated) alpha: TIFF 6.0 ExtraSamples = 1 stores
/// colour already multiplied by alpha. Fully transparent pixels keep 0.
fn unpremultiply(samples: &mut Samples, channels: usize) {
    fn go<S: Copy + Into<u32> + TryFrom<u32>>(v: &mut [S], channels: usize, max: u32) {
        for px in v.chunks_exact_mut(channels) {
            let a: u32 = px[channels - 1].into();
            if a == 0 || a == max {
                continue;
            }
            for c in &mut px[..channels - 1] {
                let x: u32 = (*c).into();
                let un = ((u64::from(x) * u64::from(max) + u64::from(a) / 2) / u64::from(a)).min(u64::from(max)) as u32;
                if let Ok(s) = S::try_from(un) {
                    *c = s;
                }
            }
        }
    }
    match samples {
        Samples::U8(v) => go(v, channels, 255),
        Samples::U16(v) => go(v, channels, 65535),
    }
}

/// CMYK + alpha → CMYK on paper white: unassociated ink is scaled by alpha; associated ink
/// is already multiplied by it, and paper white adds no ink.
fn flatten_cmyk_alpha(samples: Samples, associated: bool) -> Samples {
    fn go<S: Copy + Into<u32> + TryFrom<u32>>(v: &[S], associated: bool, max: u32) -> Vec<S> {
        v.chunks_exact(5)
            .flat_map(|p| {
                let a: u32 = p[4].into();
                std::array::from_fn::<S, 4, _>(|i| {
                    if associated {
                        p[i]
                    } else {
                        let x: u32 = p[i].into();
                        S::try_from(((u64::from(x) * u64::from(a) + u64::from(max) / 2) / u64::from(max)) as u32).unwrap_or(p[i])
                    }
                })
            })
            .collect()
    }
    match samples {
        Samples::U8(v) => Samples::U8(go(&v, associated, 255)),
        Samples::U16(v) => Samples::U16(go(&v, associated, 65535)),
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn ycbcr_defaults_give_the_jfif_equations() {
        // JFIF 1.02 / ITU-R BT.601 full range: Y 128, Cb 128, Cr 255 → R = 128 + 1.402 · 127.
        let rgb = ycbcr_to_rgb(&[128, 128, 255], YcbcrSetup::default());
        assert_eq!(rgb[0], (128.0_f64 + 1.402 * 127.0).round().min(255.0) as u8);
        assert_eq!(ycbcr_to_rgb(&[200, 128, 128], YcbcrSetup::default()), vec![200, 200, 200]);
    }

    #[test]
    fn unpack_reads_msb_first_with_padded_rows() {
        assert_eq!(unpack(&[0b1010_0000, 0b0100_0000], 3, 2, 1), vec![1, 0, 1, 0, 1, 0]);
        assert_eq!(unpack(&[0x1F], 2, 1, 4), vec![1, 15]);
    }
}
