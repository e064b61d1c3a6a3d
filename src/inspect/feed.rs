//! Where the pass gets its bands: a CMYK file as read, an RGB or gray file
//! through its band separation ([`super::band_separation`]), or an image
//! already separated in memory, cut into bands so that it goes through the
//! same pass; or the bands of a separation job as it writes them (the hot
//! folder: read, separated, written and checked in one pass).

use super::band_separation::BandSeparation;
use crate::error::Result;
use crate::job::StreamedJob;
use crate::raster::{BandSource, Layout, Samples};
use std::time::Instant;

/// One band as the pass checks it.
pub(super) struct CheckedBand {
    /// Its first row and its number of rows.
    pub y: u32,
    pub rows: u32,
    pub cmyk: Samples,
    /// RGB and gray input: the source RGB (alpha flattened, gray expanded).
    pub rgb: Option<Samples>,
}

/// Bands in order from the top, with the time spent reading and separating.
pub(super) trait Feed {
    /// The next band of at most `max_rows` rows, or `None` after the last.
    fn next(&mut self, max_rows: u32) -> Result<Option<CheckedBand>>;
    /// Time spent reading so far, ms.
    fn read_ms(&self) -> f64;
    /// Time spent separating so far (with the set-up), ms.
    fn separate_ms(&self) -> f64;
}

fn ms_since(t: Instant) -> f64 {
    t.elapsed().as_secs_f64() * 1000.0
}

fn rounded(ms: f64) -> f64 {
    crate::report::round_to(ms, 1)
}

/// A CMYK file, checked as read.
pub(super) struct FileCmyk<'s> {
    bands: &'s mut dyn BandSource,
    read_ms: f64,
}

impl<'s> FileCmyk<'s> {
    /// `read_ms`: the time opening the file took.
    pub fn new(bands: &'s mut dyn BandSource, read_ms: f64) -> FileCmyk<'s> {
        FileCmyk { bands, read_ms }
    }
}

impl Feed for FileCmyk<'_> {
    fn next(&mut self, max_rows: u32) -> Result<Option<CheckedBand>> {
        let t = Instant::now();
        let band = self.bands.next_band(max_rows)?;
        self.read_ms += ms_since(t);
        Ok(band.map(|b| CheckedBand {
            y: b.y,
            rows: b.rows,
            cmyk: b.samples,
            rgb: None,
        }))
    }

    fn read_ms(&self) -> f64 {
        rounded(self.read_ms)
    }

    fn separate_ms(&self) -> f64 {
        0.0
    }
}

/// An RGB or gray file, separated band by band.
pub(super) struct FileSeparated<'s, 'w> {
    bands: &'s mut dyn BandSource,
    separation: BandSeparation<'w>,
    read_ms: f64,
    separate_ms: f64,
}

impl<'s, 'w> FileSeparated<'s, 'w> {
    pub fn new(bands: &'s mut dyn BandSource, separation: BandSeparation<'w>, read_ms: f64) -> FileSeparated<'s, 'w> {
        let separate_ms = separation.setup_ms;
        FileSeparated {
            bands,
            separation,
            read_ms,
            separate_ms,
        }
    }
}

impl Feed for FileSeparated<'_, '_> {
    fn next(&mut self, max_rows: u32) -> Result<Option<CheckedBand>> {
        let t = Instant::now();
        let Some(band) = self.bands.next_band(max_rows)? else {
            return Ok(None);
        };
        self.read_ms += ms_since(t);
        let t = Instant::now();
        let (y, rows) = (band.y, band.rows);
        let separated = self.separation.separate(band)?;
        self.separate_ms += ms_since(t);
        Ok(Some(CheckedBand {
            y,
            rows,
            cmyk: separated.cmyk,
            rgb: Some(separated.rgb),
        }))
    }

    fn read_ms(&self) -> f64 {
        rounded(self.read_ms)
    }

    fn separate_ms(&self) -> f64 {
        rounded(self.separate_ms)
    }
}

/// An image separated in memory, with its source RGB for RGB and gray input.
pub(super) struct InMemory<'a> {
    cmyk: &'a Samples,
    rgb: Option<&'a Samples>,
    width: usize,
    next_row: u32,
    rows: u32,
    read_ms: f64,
    separate_ms: f64,
}

impl<'a> InMemory<'a> {
    pub fn new(cmyk: &'a Samples, rgb: Option<&'a Samples>, width: u32, read_ms: f64, separate_ms: f64) -> InMemory<'a> {
        let width = width as usize;
        InMemory {
            cmyk,
            rgb,
            width,
            next_row: 0,
            rows: (cmyk.len() / 4).checked_div(width).unwrap_or(0) as u32,
            read_ms,
            separate_ms,
        }
    }
}

/// Rows `y0..y1` of interleaved samples with `per_row` samples a row.
fn rows_of(s: &Samples, y0: usize, y1: usize, per_row: usize) -> Samples {
    let range = y0 * per_row..y1 * per_row;
    match s {
        Samples::U8(v) => Samples::U8(v[range].to_vec()),
        Samples::U16(v) => Samples::U16(v[range].to_vec()),
    }
}

impl Feed for InMemory<'_> {
    fn next(&mut self, max_rows: u32) -> Result<Option<CheckedBand>> {
        if self.next_row >= self.rows {
            return Ok(None);
        }
        let y = self.next_row;
        let rows = max_rows.max(1).min(self.rows - y);
        let (y0, y1) = (y as usize, (y + rows) as usize);
        self.next_row = y + rows;
        Ok(Some(CheckedBand {
            y,
            rows,
            cmyk: rows_of(self.cmyk, y0, y1, self.width * 4),
            rgb: self.rgb.map(|rgb| rows_of(rgb, y0, y1, self.width * 3)),
        }))
    }

    fn read_ms(&self) -> f64 {
        self.read_ms
    }

    fn separate_ms(&self) -> f64 {
        self.separate_ms
    }
}

/// The bands of a separation job as it writes them: exactly the CMYK written,
/// with the source RGB for RGB and gray input.
pub(super) struct JobBands<'j, 'a> {
    job: &'j mut StreamedJob<'a>,
}

impl<'j, 'a> JobBands<'j, 'a> {
    pub fn new(job: &'j mut StreamedJob<'a>) -> JobBands<'j, 'a> {
        JobBands { job }
    }
}

impl Feed for JobBands<'_, '_> {
    fn next(&mut self, max_rows: u32) -> Result<Option<CheckedBand>> {
        let layout = self.job.info().layout;
        let Some(band) = self.job.next_band(max_rows)? else {
            return Ok(None);
        };
        let rgb = if layout == Layout::Cmyk {
            None
        } else {
            let converted = match crate::job::band_rgb(layout, &band.input) {
                std::borrow::Cow::Owned(rgb) => Some(rgb),
                std::borrow::Cow::Borrowed(_) => None,
            };
            // RGB bands are their own source RGB: moved, not copied.
            Some(converted.unwrap_or(band.input))
        };
        Ok(Some(CheckedBand {
            y: band.y,
            rows: band.rows,
            cmyk: band.cmyk,
            rgb,
        }))
    }

    fn read_ms(&self) -> f64 {
        self.job.read_ms()
    }

    fn separate_ms(&self) -> f64 {
        self.job.separate_ms()
    }
}

/// A feed that calls `tick` after each band it gives (a progress bar).
pub(super) struct Ticking<'t, F> {
    feed: F,
    tick: &'t dyn Fn(),
}

impl<'t, F: Feed> Ticking<'t, F> {
    pub fn new(feed: F, tick: &'t dyn Fn()) -> Ticking<'t, F> {
        Ticking { feed, tick }
    }
}

impl<F: Feed> Feed for Ticking<'_, F> {
    fn next(&mut self, max_rows: u32) -> Result<Option<CheckedBand>> {
        let band = self.feed.next(max_rows)?;
        if band.is_some() {
            (self.tick)();
        }
        Ok(band)
    }

    fn read_ms(&self) -> f64 {
        self.feed.read_ms()
    }

    fn separate_ms(&self) -> f64 {
        self.feed.separate_ms()
    }
}
