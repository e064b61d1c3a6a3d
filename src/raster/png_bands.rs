//! A non-interlaced PNG read a row at a time ([`PngBands`]): the png crate unfilters one
//! row into a row buffer, so a band holds only its own rows. The header, the colour
//! chunks and the checks are those of the whole read ([`super::read`]'s `open_png`).
//! An interlaced (Adam7) PNG is read whole: its passes each cover the whole picture.

use std::fs::File;
use std::io::BufReader;
use std::path::{Path, PathBuf};

use super::bands::{BandSource, RasterInfo, RowBand};
use super::{Format, ReadOptions};
use crate::error::io_reason;
use crate::{Error, Result};

/// A PNG served a row at a time.
pub(super) struct PngBands {
    path: PathBuf,
    options: ReadOptions,
    reader: png::Reader<BufReader<File>>,
    info: RasterInfo,
    next_row: u32,
    row: Vec<u8>,
}

impl PngBands {
    /// Opens a PNG whose header `reader` is at; `None` when it is interlaced (read whole).
    pub(super) fn open(path: &Path, reader: BufReader<File>, options: &ReadOptions) -> Result<Option<PngBands>> {
        let (reader, info) = super::read::open_png(path, reader, &options.limits, true)?;
        if reader.info().interlaced {
            return Ok(None);
        }
        let row = vec![0; reader.output_line_size(info.width).unwrap_or(0)];
        Ok(Some(PngBands {
            path: path.to_path_buf(),
            options: *options,
            reader,
            info,
            next_row: 0,
            row,
        }))
    }

    fn read_row(&mut self) -> Result<()> {
        let path = &self.path;
        match self.reader.read_row(&mut self.row) {
            Ok(Some(_)) => Ok(()),
            Ok(None) => Err(Error::input(
                path,
                "truncated PNG file: the image data ends early (fewer rows than the header claims)",
            )),
            Err(e) => Err(super::read::decode_error(path, Format::Png, e.to_string())),
        }
    }
}

impl BandSource for PngBands {
    fn info(&self) -> &RasterInfo {
        &self.info
    }

    fn next_band(&mut self, max_rows: u32) -> Result<Option<RowBand>> {
        let height = self.info.height;
        let Some((y, rows)) = super::bands::next_span(self.next_row, height, max_rows) else {
            return Ok(None);
        };
        let mut bytes = Vec::with_capacity(rows as usize * self.row.len());
        let path = self.path.clone();
        super::read::guarded(&path, Format::Png, || {
            for _ in 0..rows {
                self.read_row()?;
                bytes.extend_from_slice(&self.row);
            }
            if y + rows == height {
                // The rest of the image data is read and checked, as the whole read does.
                self.reader
                    .read_row(&mut self.row)
                    .map_err(|e| super::read::decode_error(&self.path, Format::Png, e.to_string()))?;
            }
            Ok(())
        })?;
        self.next_row = y + rows;
        Ok(Some(RowBand {
            y,
            rows,
            samples: super::read::png_samples(bytes, self.info.bits),
        }))
    }

    fn streamed(&self) -> bool {
        true
    }

    fn rewind(&mut self) -> Result<()> {
        let file = File::open(&self.path).map_err(|e| Error::input(&self.path, format!("cannot open: {}", io_reason(&e))))?;
        let (reader, _) = super::read::open_png(&self.path, BufReader::with_capacity(1 << 16, file), &self.options.limits, true)?;
        self.reader = reader;
        self.next_row = 0;
        Ok(())
    }
}
