//! The one seam between inspection and the separation job: how an RGB or
//! gray picture read band by band becomes the CMYK that `separate` writes,
//! a band at a time, with what the report says of its source.
//!
//! [`band_separation`] prepares it through the job's own band code
//! ([`Workshop::prepare_bands`]: for the default perceptual intent that
//! compresses from the picture's own gamut, a first pass over the bands
//! gathers the picture's colours, then the table is taken from the cache or
//! built), and each band is separated by [`Workshop::separate_band`], the
//! function `separate` runs on its bands: the CMYK is the same, sample for
//! sample, as `separate` writes.

use crate::error::{Error, Result};
use crate::job::{self, Workshop};
use crate::raster::{BandSource, Layout, RowBand, Samples};
use crate::separation::CompressFrom;
use crate::source::RgbSource;
use std::path::Path;
use std::time::Instant;

/// A band separated: the source RGB it was separated from (alpha flattened
/// onto paper white, gray expanded to neutral RGB) and its CMYK.
pub struct SeparatedBand {
    pub rgb: Samples,
    pub cmyk: Samples,
}

type SeparateFn<'w> = Box<dyn FnMut(RowBand) -> Result<SeparatedBand> + 'w>;

/// The separation of one picture, band by band.
pub struct BandSeparation<'w> {
    /// The source colour space, when the separation has one (not for gray on
    /// the black plate only).
    pub source: Option<RgbSource>,
    /// How the reports name the source.
    pub description: String,
    /// What reading and the set-up did (as the `separate` summary lists them).
    pub notes: Vec<String>,
    /// What the perceptual intent compressed from.
    pub compressed_from: Option<CompressFrom>,
    /// Time of the set-up (the colour pass and the table), ms.
    pub setup_ms: f64,
    separate: SeparateFn<'w>,
}

impl BandSeparation<'_> {
    /// The next band's source RGB and CMYK.
    pub fn separate(&mut self, band: RowBand) -> Result<SeparatedBand> {
        (self.separate)(band)
    }
}

/// Prepares the separation of the RGB or gray picture `bands` read from
/// `path` (rewound after a first pass when the table depends on the
/// picture), as `workshop` separates it; `tick` is called after each band
/// of that first pass.
pub fn band_separation<'w>(workshop: &'w Workshop, path: &Path, bands: &mut dyn BandSource, tick: &dyn Fn()) -> Result<BandSeparation<'w>> {
    let t = Instant::now();
    let info = bands.info().clone();
    if info.layout == Layout::Cmyk {
        return Err(Error::Internal(format!("{}: CMYK has no band separation from RGB", path.display())));
    }
    let mut prepared = workshop.prepare_bands(path, bands, tick)?;
    let source = prepared.rgb_source.take();
    let description = std::mem::take(&mut prepared.source_description);
    let notes = std::mem::take(&mut prepared.notes);
    let compressed_from = prepared.compressed_from;
    let separate: SeparateFn<'w> = Box::new(move |band: RowBand| {
        let cmyk = workshop.separate_band(&prepared, &info, &band.samples);
        // RGB bands are their own source RGB: moved, not copied.
        let converted = match job::band_rgb(info.layout, &band.samples) {
            std::borrow::Cow::Owned(rgb) => Some(rgb),
            std::borrow::Cow::Borrowed(_) => None,
        };
        let rgb = converted.unwrap_or(band.samples);
        Ok(SeparatedBand { rgb, cmyk })
    });
    Ok(BandSeparation {
        source,
        description,
        notes,
        compressed_from,
        setup_ms: ms(t),
        separate,
    })
}

fn ms(t: Instant) -> f64 {
    crate::report::round_to(t.elapsed().as_secs_f64() * 1000.0, 1)
}
