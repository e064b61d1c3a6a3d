//! A TIFF page read a row of strips or tiles at a time ([`TiffBands`]), with the same
//! checks, notes and samples as the whole read in [`super::tiff_in`], whose
//! [`PagePlan`] both share: the directory is read and checked once, and every
//! strip or tile goes through [`PagePlan::convert`], the whole read's own conversion
//! (bits unpacked, YCbCr and float converted, alpha un-premultiplied, CMYK alpha
//! flattened).
//!
//! Streamed: strips and tiles of every layout and depth the whole read takes (gray,
//! gray+alpha, RGB, RGBA, CMYK, CMYK+alpha; 1, 8, 16-bit integers and 32-bit float; any
//! compression the tiff crate decodes, predictors included; YCbCr and JPEG-in-TIFF),
//! interleaved (PlanarConfiguration 1) or planar (2: the strips or tiles of each plane
//! covering the band are decoded and interleaved), and palette pages (the indices are
//! decoded as gray through a reader that shows the decoder PhotometricInterpretation 1
//! instead of 3, the two bytes the whole read patches in its copy of the file, and
//! expanded through the ColorMap), upright or with an undefined Orientation value.
//! One row of chunks is held decoded at a time: a strip (one per plane), or the tiles
//! across the page.
//! Uncompressed interleaved strips (BlackIsZero, RGB or Separated, no predictor, 8, 16 or
//! 32-bit samples) hold nothing: the rows of a band are read straight from the file, so a
//! page stored as one huge strip streams too.
//! Float pages are decoded twice, the first pass only counting the samples outside
//! 0–1 that the notes report.
//!
//! Read whole (memory grows with the picture; [`super::bands::WholeRaster`]):
//! - an Orientation that turns or mirrors the page (2–8): the first row served is not
//!   the first row stored;
//! - planar YCbCr pages (rare; their chroma planes may be subsampled).
//!
//! The limits: a streamed page is checked against the side limits (which bound its
//! pixel count) and its row of chunks against the byte limit, the memory it holds
//! (none for uncompressed strips read straight from the file);
//! a page read whole is checked against the byte limit for the whole page.

use std::fs::File;
use std::io::{BufReader, Read, Seek, SeekFrom};
use std::path::{Path, PathBuf};

use super::bands::{BandSource, RasterInfo, RowBand};
use super::tiff_in::PagePlan;
use super::{Format, Limits, Orientation, Raster, ReadOptions, Samples};
use crate::error::io_reason;
use crate::{Error, Result};
use tiff::decoder::{Decoder, DecodingResult};

/// Whether a page with this Orientation tag is served in stored order.
pub(super) fn streams(orientation: Option<u16>) -> bool {
    match orientation {
        None => true,
        Some(v) => Orientation::from_tag(v).is_none_or(|o| o == Orientation::Upright),
    }
}

/// The decoded size of one row of chunks (`chunk`: columns and rows of a strip or tile)
/// against the byte limit.
pub(super) fn check_chunk_row(path: &Path, limits: &Limits, width: u32, chunk: (u32, u32), channels: u8, bits: u8) -> Result<()> {
    let across = width.div_ceil(chunk.0.max(1));
    let bytes = super::decoded_bytes(chunk.0.saturating_mul(across), chunk.1, channels, bits);
    if bytes > limits.max_bytes {
        return Err(Error::input(
            path,
            format!(
                "a row of TIFF strips or tiles ({} rows) needs {} decoded, over the limits setting of {}; raise the limits to read it",
                chunk.1,
                super::human_bytes(bytes),
                super::human_bytes(limits.max_bytes)
            ),
        ));
    }
    Ok(())
}

/// A TIFF page served a row of strips or tiles at a time.
pub(super) struct TiffBands {
    path: PathBuf,
    options: ReadOptions,
    page: usize,
    dec: Decoder<Patched<BufReader<File>>>,
    /// Palette pages: where PhotometricInterpretation's value lies and the bytes shown there.
    patch: Option<(u64, [u8; 2])>,
    plan: PagePlan,
    info: RasterInfo,
    /// The decoded row of chunks: rows `held_y..held_y + held_rows`.
    held: Samples,
    held_y: u32,
    held_rows: u32,
    next_row: u32,
    /// Float samples outside 0–1 met so far.
    clipped: u64,
}

fn open_file(path: &Path) -> Result<(BufReader<File>, u64)> {
    let file = File::open(path).map_err(|e| Error::input(path, format!("cannot open: {}", io_reason(&e))))?;
    let len = file
        .metadata()
        .map_err(|e| Error::input(path, format!("cannot read: {}", io_reason(&e))))?
        .len();
    Ok((BufReader::with_capacity(1 << 16, file), len))
}

impl TiffBands {
    /// Opens the page `options` asks for; `None` when it must be read whole.
    pub(super) fn open(path: &Path, options: &ReadOptions) -> Result<Option<TiffBands>> {
        let limits = &options.limits;
        let err = |e: tiff::TiffError| super::read::decode_error(path, Format::Tiff, e.to_string());
        let (mut reader, file_len) = open_file(path)?;
        // The first directory's claim against the side limits before the decoder runs; the
        // byte limit is checked once it is known whether the page is streamed.
        if let Some((w, h, channels, bits)) = super::sniff::tiff_header(&mut reader) {
            Limits {
                max_bytes: u64::MAX,
                ..*limits
            }
            .check(path, w, h, channels, bits.clamp(8, 16))?;
        }
        reader
            .seek(SeekFrom::Start(0))
            .map_err(|e| Error::input(path, format!("cannot read: {}", io_reason(&e))))?;
        let mut notes = Vec::new();
        let mut dec = Decoder::new(Patched::new(reader, None))
            .map_err(err)?
            .with_limits(super::tiff_in::decoder_limits(limits));
        let page = super::tiff_in::choose_page(path, &mut dec, options, &mut notes)?;
        let palette = dec
            .find_tag_unsigned::<u16>(tiff::tags::Tag::PhotometricInterpretation)
            .map_err(err)?
            == Some(3);
        let mut patch = None;
        if palette {
            // The tiff crate decodes no palette image: the indices are decoded as gray.
            let Some((at, little)) = super::sniff::tiff_photometric_at(dec.inner(), page) else {
                return Ok(None);
            };
            patch = Some((at, if little { 1u16.to_le_bytes() } else { 1u16.to_be_bytes() }));
            dec = decoder_at(path, patch, limits, page)?;
        }
        let plan = PagePlan::read(path, &mut dec, file_len, options, palette, true)?;
        if !plan.streamed {
            return Ok(None);
        }
        let info = RasterInfo {
            width: plan.width,
            height: plan.height,
            layout: plan.layout,
            bits: plan.out_bits(),
            icc_profile: plan.icc_profile.clone(),
            resolution: plan.resolution,
            colour_chunks: None,
            format: Format::Tiff,
            notes: Vec::new(),
            line_art: plan.line_art(),
        };
        let held = empty_samples(info.bits);
        let mut bands = TiffBands {
            path: path.to_path_buf(),
            options: *options,
            page,
            dec,
            patch,
            plan,
            info,
            held,
            held_y: 0,
            held_rows: 0,
            next_row: 0,
            clipped: 0,
        };
        if bands.plan.float() {
            // The note counts the clipped samples of the whole page: a first pass counts them.
            let rows = if bands.plan.direct.is_some() { 64 } else { bands.plan.chunk.1 };
            while bands.next_band(rows)?.is_some() {}
        }
        let notes = bands.plan.notes(notes, options, bands.clipped);
        if bands.plan.float() {
            bands.rewind()?;
        }
        // An undefined Orientation value is noted and the page read as stored.
        let mut described = Raster::from_parts(
            RasterInfo {
                notes,
                ..bands.info.clone()
            },
            empty_samples(8),
        );
        Orientation::apply_tag(&mut described, bands.plan.orientation, "TIFF");
        bands.info.notes = described.notes;
        Ok(Some(bands))
    }

    /// Rows `y..y + rows` of uncompressed strips, read straight from the file into `out`.
    fn read_direct(&mut self, y: u32, rows: u32, out: &mut Samples) -> Result<()> {
        let path = self.path.as_path();
        let Some(direct) = &self.plan.direct else {
            return Ok(());
        };
        let per_strip = self.plan.chunk.1;
        let bytes_per_sample = (direct.row_bytes / (u64::from(self.plan.width) * self.plan.spp() as u64)).max(1);
        let mut at = y;
        while at < y + rows {
            let (strip, within) = ((at / per_strip) as usize, at % per_strip);
            let n = (per_strip - within).min(y + rows - at);
            let mut bytes = vec![0u8; (u64::from(n) * direct.row_bytes) as usize];
            let reader = self.dec.inner();
            reader
                .seek(SeekFrom::Start(direct.offsets[strip] + u64::from(within) * direct.row_bytes))
                .and_then(|_| reader.read_exact(&mut bytes))
                .map_err(|e| super::read::decode_error(path, Format::Tiff, e.to_string()))?;
            let big = direct.big_endian;
            let decoded = match bytes_per_sample {
                2 => DecodingResult::U16(
                    bytes
                        .chunks_exact(2)
                        .map(|b| {
                            if big {
                                u16::from_be_bytes([b[0], b[1]])
                            } else {
                                u16::from_le_bytes([b[0], b[1]])
                            }
                        })
                        .collect(),
                ),
                4 => DecodingResult::F32(
                    bytes
                        .chunks_exact(4)
                        .map(|b| {
                            let b = [b[0], b[1], b[2], b[3]];
                            if big { f32::from_be_bytes(b) } else { f32::from_le_bytes(b) }
                        })
                        .collect(),
                ),
                _ => DecodingResult::U8(bytes),
            };
            let part = self.plan.convert(
                path,
                decoded,
                self.plan.width as usize,
                n as usize,
                &self.options,
                &mut self.clipped,
            )?;
            match (&mut *out, part) {
                (Samples::U8(o), Samples::U8(p)) => o.extend_from_slice(&p),
                (Samples::U16(o), Samples::U16(p)) => o.extend_from_slice(&p),
                _ => return Err(Error::input(path, "corrupt TIFF file: strips of different sample depths")),
            }
            at += n;
        }
        Ok(())
    }

    /// Decodes the `r`-th row of chunks into `held`.
    fn load_chunk_row(&mut self, r: u32) -> Result<()> {
        let path = self.path.as_path();
        let (cw, ch) = self.plan.chunk;
        let (width, height) = (self.plan.width, self.plan.height);
        let y0 = r * ch;
        let rows = ch.min(height - y0);
        let across = width.div_ceil(cw);
        let channels = self.info.channels();
        let row_len = width as usize * channels;
        resize(&mut self.held, row_len * rows as usize);
        // Planar pages: the chunks of plane p follow those of the planes before it.
        let planes = if self.plan.planar { self.plan.spp() as u32 } else { 1 };
        let per_plane = across * height.div_ceil(ch);
        for c in 0..across {
            let index = r * across + c;
            let mut parts = Vec::with_capacity(planes as usize);
            for p in 0..planes {
                let part = self
                    .dec
                    .read_chunk(p * per_plane + index)
                    .map_err(|e| super::read::decode_error(path, Format::Tiff, e.to_string()))?;
                parts.push(part);
            }
            let decoded = planes_joined(path, parts)?;
            let dw = cw.min(width - c * cw) as usize;
            let part = self
                .plan
                .convert(path, decoded, dw, rows as usize, &self.options, &mut self.clipped)?;
            let x0 = (c * cw) as usize * channels;
            let n = dw * channels;
            match (&mut self.held, part) {
                (Samples::U8(dst), Samples::U8(src)) => place(dst, &src, row_len, x0, n),
                (Samples::U16(dst), Samples::U16(src)) => place(dst, &src, row_len, x0, n),
                _ => return Err(Error::input(path, "corrupt TIFF file: strips or tiles of different sample depths")),
            }
        }
        self.held_y = y0;
        self.held_rows = rows;
        Ok(())
    }
}

/// The decoded chunks of each plane one after another, as the whole read gets a planar page.
fn planes_joined(path: &Path, parts: Vec<DecodingResult>) -> Result<DecodingResult> {
    let mut parts = parts.into_iter();
    let Some(mut joined) = parts.next() else {
        return Err(Error::input(path, "corrupt TIFF file: a page without samples"));
    };
    for part in parts {
        match (&mut joined, part) {
            (DecodingResult::U8(a), DecodingResult::U8(b)) => a.extend_from_slice(&b),
            (DecodingResult::U16(a), DecodingResult::U16(b)) => a.extend_from_slice(&b),
            (DecodingResult::F32(a), DecodingResult::F32(b)) => a.extend_from_slice(&b),
            _ => return Err(Error::input(path, "corrupt TIFF file: planes of different sample types")),
        }
    }
    Ok(joined)
}

/// A decoder on page `page` of `path`, through `patch` (palette pages).
fn decoder_at(path: &Path, patch: Option<(u64, [u8; 2])>, limits: &Limits, page: usize) -> Result<Decoder<Patched<BufReader<File>>>> {
    let err = |e: tiff::TiffError| super::read::decode_error(path, Format::Tiff, e.to_string());
    let (reader, _) = open_file(path)?;
    let mut dec = Decoder::new(Patched::new(reader, patch))
        .map_err(err)?
        .with_limits(super::tiff_in::decoder_limits(limits));
    dec.seek_to_image(page).map_err(err)?;
    Ok(dec)
}

/// A file read with two of its bytes shown changed (nothing when `patch` is `None`).
pub(super) struct Patched<R> {
    inner: R,
    pos: u64,
    patch: Option<(u64, [u8; 2])>,
}

impl<R> Patched<R> {
    fn new(inner: R, patch: Option<(u64, [u8; 2])>) -> Patched<R> {
        Patched { inner, pos: 0, patch }
    }
}

impl<R: Read> Read for Patched<R> {
    fn read(&mut self, buf: &mut [u8]) -> std::io::Result<usize> {
        let n = self.inner.read(buf)?;
        if let Some((at, bytes)) = self.patch {
            for (i, &b) in bytes.iter().enumerate() {
                let p = at + i as u64;
                if (self.pos..self.pos + n as u64).contains(&p) {
                    buf[(p - self.pos) as usize] = b;
                }
            }
        }
        self.pos += n as u64;
        Ok(n)
    }
}

impl<R: Seek> Seek for Patched<R> {
    fn seek(&mut self, from: SeekFrom) -> std::io::Result<u64> {
        self.pos = self.inner.seek(from)?;
        Ok(self.pos)
    }
}

fn empty_samples(bits: u8) -> Samples {
    if bits == 16 {
        Samples::U16(Vec::new())
    } else {
        Samples::U8(Vec::new())
    }
}

fn resize(samples: &mut Samples, len: usize) {
    match samples {
        Samples::U8(v) => v.resize(len, 0),
        Samples::U16(v) => v.resize(len, 0),
    }
}

/// Copies the rows of a chunk `n` samples wide into rows of `row_len` samples from column `x0`.
fn place<S: Copy>(dst: &mut [S], src: &[S], row_len: usize, x0: usize, n: usize) {
    for (row, part) in dst.chunks_exact_mut(row_len).zip(src.chunks_exact(n)) {
        row[x0..x0 + n].copy_from_slice(part);
    }
}

/// Appends rows `from..from + rows` of `held` (rows of `row_len` samples) to `out`.
fn take_rows(out: &mut Samples, held: &Samples, from: usize, rows: usize, row_len: usize) {
    let range = from * row_len..(from + rows) * row_len;
    match (out, held) {
        (Samples::U8(o), Samples::U8(h)) => o.extend_from_slice(&h[range]),
        (Samples::U16(o), Samples::U16(h)) => o.extend_from_slice(&h[range]),
        _ => {}
    }
}

impl BandSource for TiffBands {
    fn info(&self) -> &RasterInfo {
        &self.info
    }

    fn next_band(&mut self, max_rows: u32) -> Result<Option<RowBand>> {
        let height = self.info.height;
        let Some((y, rows)) = super::bands::next_span(self.next_row, height, max_rows) else {
            return Ok(None);
        };
        let row_len = self.info.row_len();
        let mut samples = empty_samples(self.info.bits);
        match &mut samples {
            Samples::U8(v) => v.reserve_exact(rows as usize * row_len),
            Samples::U16(v) => v.reserve_exact(rows as usize * row_len),
        }
        let path = self.path.clone();
        if self.plan.direct.is_some() {
            super::read::guarded(&path, Format::Tiff, || self.read_direct(y, rows, &mut samples))?;
            self.next_row = y + rows;
            return Ok(Some(RowBand { y, rows, samples }));
        }
        let mut at = y;
        while at < y + rows {
            if !(self.held_y..self.held_y + self.held_rows).contains(&at) {
                let r = at / self.plan.chunk.1;
                super::read::guarded(&path, Format::Tiff, || self.load_chunk_row(r))?;
            }
            let take = (self.held_y + self.held_rows).min(y + rows) - at;
            take_rows(&mut samples, &self.held, (at - self.held_y) as usize, take as usize, row_len);
            at += take;
        }
        self.next_row = y + rows;
        if self.next_row >= height {
            // The last row is out: the decoded chunk is no longer needed.
            self.held = empty_samples(self.info.bits);
            self.held_rows = 0;
        }
        Ok(Some(RowBand { y, rows, samples }))
    }

    fn streamed(&self) -> bool {
        true
    }

    fn rewind(&mut self) -> Result<()> {
        self.dec = decoder_at(&self.path, self.patch, &self.options.limits, self.page)?;
        self.held_y = 0;
        self.held_rows = 0;
        self.next_row = 0;
        self.clipped = 0;
        Ok(())
    }
}
