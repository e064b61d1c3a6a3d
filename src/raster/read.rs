//! Decoding PNG (png crate), TIFF (tiff crate) and JPEG (zune-jpeg) into a [`Raster`].
//! The format is told by the file's signature; the extension only improves messages.

use std::fs::File;
use std::io::{BufRead, BufReader, Cursor, Read, Seek, SeekFrom};
use std::path::Path;

use super::bands::{BandSource, RasterInfo};
use super::png_bands::PngBands;
use super::sniff::{self, JpegHeader};
use super::tiff_bands::TiffBands;
use super::{Format, Layout, Limits, Orientation, Raster, ReadOptions, Resolution, Samples, jpeg_scan};
use crate::error::io_reason;
use crate::{Error, Result};

/// Reads an image, refusing from its header anything over `limits`.
///
/// PNG: gray, gray+alpha, RGB, RGBA at 8 or 16 bit; palette and low-bit gray are expanded
/// to 8 bit (a tRNS chunk becomes an alpha channel); pHYs, iCCP and the colour chunks
/// (sRGB, gAMA, cHRM: [`super::png_colour`]) are read.
/// TIFF: gray (BlackIsZero or WhiteIsZero, returned as gray level), gray+alpha, RGB, RGBA and
/// CMYK (Separated, InkSet CMYK) at 8 or 16 bit, any compression the tiff crate decodes;
/// XResolution/YResolution/ResolutionUnit and the ICC profile tag (34675) are read.
/// JPEG: gray, YCbCr/RGB and CMYK/YCCK (Adobe APP14 inverted samples are turned round so
/// 0 = no ink); the JFIF density or EXIF resolution and APP2 ICC_PROFILE chunks are read.
pub fn read_raster(path: &Path, limits: &Limits) -> Result<Raster> {
    read_raster_with(path, &ReadOptions::from(*limits))
}

/// [`read_raster`] with all the reading options: damaged JPEG data accepted or not, the
/// TIFF page, the transfer curve of float samples.
pub fn read_raster_with(path: &Path, options: &ReadOptions) -> Result<Raster> {
    let (reader, len) = open_file(path)?;
    read_from(path, reader, len, options)
}

/// Opens `path` for reading, refusing a folder; the file and its length.
fn open_file(path: &Path) -> Result<(BufReader<File>, u64)> {
    let file = File::open(path).map_err(|e| Error::input(path, format!("cannot open: {}", io_reason(&e))))?;
    let meta = file
        .metadata()
        .map_err(|e| Error::input(path, format!("cannot read: {}", io_reason(&e))))?;
    if meta.is_dir() {
        return Err(Error::input(path, "is a folder, not an image file"));
    }
    Ok((BufReader::with_capacity(1 << 16, file), meta.len()))
}

/// Decodes an image held in memory through the same path as [`read_raster`]; `name`
/// stands for the file in messages (and its extension only improves them).
pub fn read_raster_bytes(bytes: &[u8], name: &Path, limits: &Limits) -> Result<Raster> {
    read_raster_bytes_with(bytes, name, &ReadOptions::from(*limits))
}

/// [`read_raster_bytes`] with all the reading options (as [`read_raster_with`]).
pub fn read_raster_bytes_with(bytes: &[u8], name: &Path, options: &ReadOptions) -> Result<Raster> {
    read_from(name, Cursor::new(bytes), bytes.len() as u64, options)
}

/// The format told by the signature, and the hint added to messages when the extension
/// says otherwise.
fn detect_format<R: BufRead + Seek>(path: &Path, reader: &mut R, len: u64) -> Result<(Format, String)> {
    if len == 0 {
        return Err(Error::input(path, "empty file (0 bytes), not an image"));
    }
    let mut head = [0u8; 8];
    let n = read_up_to(reader, &mut head).map_err(|e| Error::input(path, format!("cannot read: {}", io_reason(&e))))?;
    reader
        .seek(SeekFrom::Start(0))
        .map_err(|e| Error::input(path, format!("cannot read: {}", io_reason(&e))))?;
    let Some(format) = sniff::detect(&head[..n]) else {
        let looks_text = head[..n].iter().all(|b| b.is_ascii_graphic() || b.is_ascii_whitespace());
        let what = if looks_text { "a text file" } else { "an unrecognised file" };
        return Err(Error::input(
            path,
            format!("not a PNG, TIFF or JPEG image (the content looks like {what})"),
        ));
    };
    let hint = match sniff::format_from_extension(path) {
        Some(ext) if ext != format => format!(" (the content is {}, despite the extension)", format.name()),
        _ => String::new(),
    };
    Ok((format, hint))
}

fn read_from<R: BufRead + Seek>(path: &Path, mut reader: R, len: u64, options: &ReadOptions) -> Result<Raster> {
    let (format, hint) = detect_format(path, &mut reader, len)?;
    let result = guarded(path, format, || match format {
        Format::Png => read_png(path, reader, &options.limits),
        Format::Tiff => super::tiff_in::read_tiff(path, reader, len, options),
        Format::Jpeg => read_jpeg(path, reader, len, options),
    });
    finish_open(path, format, &hint, options, result)
}

/// The page asked of a format without pages, and the extension's hint, as every read reports them.
fn finish_open<T>(path: &Path, format: Format, hint: &str, options: &ReadOptions, result: Result<T>) -> Result<T> {
    // Only TIFF has pages: a page asked of another format is a usage mistake, not silence.
    let result = result.and_then(|r| match options.page {
        Some(n) if n != 1 && format != Format::Tiff => {
            Err(Error::input(path, format!("--page {n}: a {} file has one page", format.name())))
        }
        _ => Ok(r),
    });
    result.map_err(|e| match e {
        Error::Input { path, message } if !hint.is_empty() => Error::Input {
            path,
            message: format!("{message}{hint}"),
        },
        other => other,
    })
}

/// Opens `path` to be read a band of rows at a time: `None` when its format or encoding
/// is read whole (JPEG, interlaced PNG, and the TIFF pages [`super::tiff_bands`] lists).
/// The checks and messages are those of [`read_raster_with`].
pub(super) fn open_streamed(path: &Path, options: &ReadOptions) -> Result<Option<Box<dyn BandSource>>> {
    let (mut reader, len) = open_file(path)?;
    let (format, hint) = detect_format(path, &mut reader, len)?;
    let opened = guarded(path, format, || -> Result<Option<Box<dyn BandSource>>> {
        Ok(match format {
            Format::Png => PngBands::open(path, reader, options)?.map(|b| Box::new(b) as Box<dyn BandSource>),
            Format::Tiff => TiffBands::open(path, options)?.map(|b| Box::new(b) as Box<dyn BandSource>),
            Format::Jpeg => None,
        })
    });
    let opened = finish_open(path, format, &hint, options, opened)?;
    Ok(match opened {
        // Data that ends early shows in a later band: its message gets the hint too.
        Some(bands) if !hint.is_empty() => Some(Box::new(Hinted { bands, hint })),
        other => other,
    })
}

/// A band source whose input errors carry the extension's hint, as the whole read's do.
struct Hinted {
    bands: Box<dyn BandSource>,
    hint: String,
}

impl Hinted {
    fn hinted<T>(&self, result: Result<T>) -> Result<T> {
        result.map_err(|e| match e {
            Error::Input { path, message } => Error::Input {
                path,
                message: format!("{message}{}", self.hint),
            },
            other => other,
        })
    }
}

impl BandSource for Hinted {
    fn info(&self) -> &super::RasterInfo {
        self.bands.info()
    }

    fn next_band(&mut self, max_rows: u32) -> Result<Option<super::RowBand>> {
        let band = self.bands.next_band(max_rows);
        self.hinted(band)
    }

    fn rewind(&mut self) -> Result<()> {
        let rewound = self.bands.rewind();
        self.hinted(rewound)
    }

    fn streamed(&self) -> bool {
        self.bands.streamed()
    }
}

/// Runs a decoder step: a decoder that panics on a hostile file is a bug to report, not a
/// crash, so the panic becomes [`Error::Internal`] naming the file.
pub(super) fn guarded<T>(path: &Path, format: Format, step: impl FnOnce() -> Result<T>) -> Result<T> {
    DECODING.with(|d| d.set(true));
    let decoded = std::panic::catch_unwind(std::panic::AssertUnwindSafe(step));
    DECODING.with(|d| d.set(false));
    decoded.unwrap_or_else(|_| {
        Err(Error::Internal(format!(
            "the {} decoder failed on {}",
            format.name(),
            path.display()
        )))
    })
}

thread_local! {
    static DECODING: std::cell::Cell<bool> = const { std::cell::Cell::new(false) };
}

/// Whether this thread is inside a decoder, whose panic [`read_raster`] catches and
/// returns as [`Error::Internal`] naming the file (a panic hook can stay quiet then).
pub fn decoder_panic_is_caught() -> bool {
    DECODING.with(|d| d.get())
}

fn read_up_to(r: &mut impl Read, buf: &mut [u8]) -> std::io::Result<usize> {
    let mut n = 0;
    while n < buf.len() {
        match r.read(&mut buf[n..]) {
            Ok(0) => break,
            Ok(k) => n += k,
            Err(e) if e.kind() == std::io::ErrorKind::Interrupted => {}
            Err(e) => return Err(e),
        }
    }
    Ok(n)
}

fn is_truncation(message: &str) -> bool {
    let m = message.to_ascii_lowercase();
    m.contains("eof")
        || m.contains("end of file")
        || m.contains("truncat")
        || m.contains("no more bytes")
        || m.contains("failed to fill whole buffer")
}

pub(super) fn decode_error(path: &Path, format: Format, message: String) -> Error {
    let message = message.split_whitespace().collect::<Vec<_>>().join(" ");
    if is_truncation(&message) {
        Error::input(path, format!("truncated {} file: the data ends early ({message})", format.name()))
    } else {
        Error::input(path, format!("corrupt or unsupported {} file: {message}", format.name()))
    }
}

// ---------------------------------------------------------------- PNG

fn read_png<R: BufRead + Seek>(path: &Path, reader: R, limits: &Limits) -> Result<Raster> {
    let (mut reader, info) = open_png(path, reader, limits, false)?;
    let size = reader
        .output_buffer_size()
        .ok_or_else(|| Error::input(path, "PNG dimensions overflow memory size"))?;
    let mut buf = try_alloc_u8(path, size)?;
    reader
        .next_frame(&mut buf)
        .map_err(|e| decode_error(path, Format::Png, e.to_string()))?;
    let bits = info.bits;
    Ok(Raster::from_parts(info, png_samples(buf, bits)))
}

/// Decoded PNG bytes as samples: 16-bit samples are stored big-endian (ISO/IEC 15948 §7.1).
pub(super) fn png_samples(buf: Vec<u8>, bits: u8) -> Samples {
    if bits == 16 {
        Samples::U16(buf.chunks_exact(2).map(|b| u16::from_be_bytes([b[0], b[1]])).collect())
    } else {
        Samples::U8(buf)
    }
}

/// Reads a PNG's header and the chunks before the image data, checked against `limits`;
/// with `may_stream`, a non-interlaced picture, read a row at a time, is checked against
/// the side limits only (it never holds more than a row decoded).
pub(super) fn open_png<R: BufRead + Seek>(
    path: &Path,
    mut reader: R,
    limits: &Limits,
    may_stream: bool,
) -> Result<(png::Reader<R>, RasterInfo)> {
    // The header's claim is checked before the decoder reads on (it would fail on a file
    // that is only a header, or go on to buffer chunks).
    let mut head = [0u8; 29];
    let n = read_up_to(&mut reader, &mut head).map_err(|e| Error::input(path, format!("cannot read: {}", io_reason(&e))))?;
    // IHDR's interlace method, the 13th byte of its data (ISO/IEC 15948 §11.2.2).
    let streamed = may_stream && n == head.len() && head[28] == 0;
    let checked = if streamed {
        Limits {
            max_bytes: u64::MAX,
            ..*limits
        }
    } else {
        *limits
    };
    if let Some((w, h, channels, bits)) = sniff::png_header(&head[..n]) {
        checked.check(path, w, h, channels, bits)?;
    }
    reader
        .seek(SeekFrom::Start(0))
        .map_err(|e| Error::input(path, format!("cannot read: {}", io_reason(&e))))?;
    let mut decoder = png::Decoder::new(reader);
    // The png crate's own byte limit guards its chunk buffers (iCCP, text); the image buffer
    // is checked against our limits below, from the header, before it is allocated.
    decoder.set_limits(png::Limits {
        bytes: usize::try_from(limits.max_bytes).unwrap_or(usize::MAX),
    });
    decoder.set_transformations(png::Transformations::EXPAND);
    let reader = decoder.read_info().map_err(|e| decode_error(path, Format::Png, e.to_string()))?;
    let (color, depth) = reader.output_color_type();
    let layout = match color {
        png::ColorType::Grayscale => Layout::Gray,
        png::ColorType::GrayscaleAlpha => Layout::GrayAlpha,
        png::ColorType::Rgb => Layout::Rgb,
        png::ColorType::Rgba => Layout::Rgba,
        png::ColorType::Indexed => return Err(Error::input(path, "PNG palette could not be expanded")),
    };
    let bits: u8 = match depth {
        png::BitDepth::Sixteen => 16,
        png::BitDepth::Eight => 8,
        other => {
            return Err(Error::input(path, format!("unsupported PNG bit depth {other:?} after expansion")));
        }
    };
    let (width, height) = (reader.info().width, reader.info().height);
    let checked = if reader.info().interlaced { *limits } else { checked };
    checked.check(path, width, height, layout.channels() as u8, bits)?;
    let resolution = reader.info().pixel_dims.and_then(|d| match d.unit {
        // pHYs in pixels per metre (ISO/IEC 15948 §11.3.5.3).
        png::Unit::Meter => Resolution {
            x_ppi: f64::from(d.xppu) * Resolution::INCH_IN_METRES,
            y_ppi: f64::from(d.yppu) * Resolution::INCH_IN_METRES,
        }
        .valid(),
        png::Unit::Unspecified => None,
    });
    let info = RasterInfo {
        width,
        height,
        layout,
        bits,
        icc_profile: reader.info().icc_profile.as_ref().map(|p| p.to_vec()),
        resolution,
        colour_chunks: super::png_colour::ColourChunks::from_info(reader.info()),
        format: Format::Png,
        notes: Vec::new(),
        line_art: false,
    };
    Ok((reader, info))
}

fn try_alloc_u8(path: &Path, size: usize) -> Result<Vec<u8>> {
    let mut v = Vec::new();
    v.try_reserve_exact(size)
        .map_err(|_| Error::input(path, format!("not enough memory to decode the image ({size} bytes)")))?;
    v.resize(size, 0);
    Ok(v)
}

// ---------------------------------------------------------------- TIFF (resolution; the reader is in tiff_in.rs)

pub(super) fn tiff_resolution<R: Read + Seek>(dec: &mut tiff::decoder::Decoder<R>) -> tiff::TiffResult<Option<Resolution>> {
    use tiff::decoder::ifd::Value;
    use tiff::tags::Tag;
    let as_f64 = |v: Option<Value>| -> Option<f64> {
        match v? {
            Value::Rational(n, d) if d != 0 => Some(f64::from(n) / f64::from(d)),
            Value::Unsigned(n) => Some(f64::from(n)),
            Value::Short(n) => Some(f64::from(n)),
            Value::Float(f) => Some(f64::from(f)),
            Value::Double(f) => Some(f),
            _ => None,
        }
    };
    let x = as_f64(dec.find_tag(Tag::XResolution)?);
    let y = as_f64(dec.find_tag(Tag::YResolution)?);
    // ResolutionUnit (296): 1 none, 2 inch (the default), 3 centimetre (TIFF 6.0 §8).
    let unit = dec.find_tag_unsigned::<u16>(Tag::ResolutionUnit)?.unwrap_or(2);
    let scale = match unit {
        2 => 1.0,
        3 => 2.54,
        _ => return Ok(None),
    };
    Ok(match (x, y) {
        (Some(x), Some(y)) => Resolution {
            x_ppi: x * scale,
            y_ppi: y * scale,
        }
        .valid(),
        (Some(x), None) => Resolution {
            x_ppi: x * scale,
            y_ppi: x * scale,
        }
        .valid(),
        _ => None,
    })
}

// ---------------------------------------------------------------- JPEG

fn read_jpeg<R: BufRead + Seek>(path: &Path, mut reader: R, file_len: u64, options: &ReadOptions) -> Result<Raster> {
    let limits = &options.limits;
    use zune_core::colorspace::ColorSpace as Z;
    // JPEG data is read whole: it is small next to the decoded image, and zune-jpeg decodes from memory.
    if file_len > limits.max_bytes {
        return Err(Error::input(
            path,
            "JPEG file is larger than the limits setting allows; raise the limits to read it",
        ));
    }
    let mut data = Vec::new();
    data.try_reserve_exact(usize::try_from(file_len).unwrap_or(usize::MAX))
        .map_err(|_| Error::input(path, format!("not enough memory to read the JPEG file ({file_len} bytes)")))?;
    reader
        .read_to_end(&mut data)
        .map_err(|e| Error::input(path, format!("cannot read: {}", io_reason(&e))))?;
    let header: JpegHeader = sniff::scan_jpeg(&data);
    let mut notes = Vec::new();
    let damaged = |what: &str, notes: &mut Vec<String>| -> Result<()> {
        if options.accept_damaged {
            notes.push(format!(
                "{what}; accepted (--accept-damaged): the missing or corrupt part is filled by the decoder"
            ));
            Ok(())
        } else {
            Err(Error::input(path, format!("{what}; give --accept-damaged to separate it anyway")))
        }
    };
    if !header.complete {
        damaged(
            "truncated JPEG file: the image data ends before the end-of-image marker",
            &mut notes,
        )?;
    }
    // Strict mode turns a stream that ends early into an error instead of gray padding.
    let zune_options = zune_core::options::DecoderOptions::default()
        .set_strict_mode(true)
        .set_max_width(usize::from(u16::MAX))
        .set_max_height(usize::from(u16::MAX));
    let mut dec = zune_jpeg::JpegDecoder::new_with_options(zune_core::bytestream::ZCursor::new(&data[..]), zune_options);
    dec.decode_headers().map_err(|e| decode_error(path, Format::Jpeg, e.to_string()))?;
    let info = dec.info().ok_or_else(|| Error::input(path, "JPEG header could not be read"))?;
    let (width, height) = (u32::from(info.width), u32::from(info.height));
    let input = dec
        .input_colorspace()
        .ok_or_else(|| Error::input(path, "JPEG header could not be read"))?;
    let (layout, out_space) = match input {
        Z::Luma => (Layout::Gray, Z::Luma),
        Z::YCbCr | Z::RGB => (Layout::Rgb, Z::RGB),
        Z::CMYK => (Layout::Cmyk, Z::CMYK),
        // YCCK is decoded raw and converted below: zune-jpeg only converts it to RGB.
        Z::YCCK => (Layout::Cmyk, Z::YCCK),
        other => return Err(Error::input(path, format!("unsupported JPEG colour space {other:?}"))),
    };
    limits.check(path, width, height, layout.channels() as u8, 8)?;
    // The claimed size against the data that can hold it, before anything is allocated.
    if let Some(frame) = jpeg_scan::frame(&data) {
        let least = frame.min_entropy_bytes();
        if frame.data_after_first_scan < least {
            return Err(Error::input(
                path,
                format!(
                    "JPEG header claims {} × {} px, which needs at least {} of image data; the file holds {}: refused as corrupt or hostile",
                    frame.width,
                    frame.height,
                    super::human_bytes(least),
                    super::human_bytes(frame.data_after_first_scan)
                ),
            ));
        }
    }
    if header.complete
        && let jpeg_scan::Walk::Damaged(what) = jpeg_scan::walk(&data)
    {
        damaged(&what, &mut notes)?;
    }
    let icc_profile = dec.icc_profile();
    let zune_options = zune_options.set_strict_mode(notes.is_empty());
    dec.set_options(zune_options.jpeg_set_out_colorspace(out_space));
    let size = dec
        .output_buffer_size()
        .ok_or_else(|| Error::input(path, "JPEG dimensions overflow memory size"))?;
    let mut buf = try_alloc_u8(path, size)?;
    dec.decode_into(&mut buf)
        .map_err(|e| decode_error(path, Format::Jpeg, e.to_string()))?;
    drop(data);
    if out_space == Z::YCCK {
        ycck_to_cmyk(&mut buf);
    }
    if layout == Layout::Cmyk && header.adobe {
        // Adobe writes CMYK JPEGs with inverted samples (255 = no ink); libjpeg-based readers
        // invert them on reading (common practice, documented in libjpeg's jdcolor.c notes).
        for s in &mut buf {
            *s = 255 - *s;
        }
    }
    let mut raster = Raster {
        width,
        height,
        layout,
        bits: 8,
        samples: Samples::U8(buf),
        icc_profile,
        resolution: header.resolution,
        colour_chunks: None,
        format: Format::Jpeg,
        notes,
        line_art: false,
    };
    Orientation::apply_tag(&mut raster, header.orientation, "EXIF");
    Ok(raster)
}

/// YCCK → (inverted) CMYK as libjpeg's `ycck_cmyk_convert`: the YCbCr triple is turned into
/// RGB with the JFIF equations (ITU-R BT.601 full range) and C, M, Y = 255 − R, G, B; K is kept.
fn ycck_to_cmyk(buf: &mut [u8]) {
    for px in buf.chunks_exact_mut(4) {
        let y = f32::from(px[0]);
        let cb = f32::from(px[1]) - 128.0;
        let cr = f32::from(px[2]) - 128.0;
        let r = y + 1.402 * cr;
        let g = y - 0.344_136 * cb - 0.714_136 * cr;
        let b = y + 1.772 * cb;
        let to_u8 = |v: f32| v.round().clamp(0.0, 255.0) as u8;
        px[0] = 255 - to_u8(r);
        px[1] = 255 - to_u8(g);
        px[2] = 255 - to_u8(b);
    }
}
