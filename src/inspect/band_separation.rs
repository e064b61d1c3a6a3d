//! The one seam between inspection and the separation job: how an RGB or
//! gray picture read band by band becomes the CMYK that `separate` writes,
//! a band at a time, with what the report says of its source.
//!
//! [`band_separation`] prepares it: for the default perceptual intent that
//! compresses from the picture's own gamut, a first pass over the bands
//! gathers the picture's colours (the per-bin extremes of
//! [`crate::separation::distinct_colours`], which merge band by band into
//! exactly those of the whole picture), then the table is built once. Each
//! band is then separated through the job's own entry point, or through that
//! table with the alpha flattening of [`job::to_rgb`], so the CMYK is the
//! same, sample for sample, as `separate` makes from the whole picture.

use crate::error::{Error, Result};
use crate::job::{self, GrayMode, Workshop};
use crate::raster::{BandSource, Layout, Raster, RasterInfo, RowBand, Samples};
use crate::separation::{CompressFrom, Intent, SeparationTable, Separator};
use crate::source::RgbSource;
use std::path::Path;
use std::time::Instant;

/// Pixels per band of the first pass over the picture's colours (about four
/// million: few bands, each a few tens of megabytes).
const COLOUR_PASS_PIXELS: u32 = 1 << 22;

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

/// One band as a raster of its own (the picture's description, the band's rows).
fn band_raster(info: &RasterInfo, band: RowBand) -> Raster {
    Raster::from_parts(
        RasterInfo {
            height: band.rows,
            ..info.clone()
        },
        band.samples,
    )
}

/// The source RGB of a band raster (alpha flattened, gray expanded).
fn source_rgb(raster: Raster) -> Samples {
    if raster.layout == Layout::Rgb {
        return raster.samples;
    }
    job::to_rgb(&raster, &mut Vec::new())
        .map(|c| c.into_owned())
        .unwrap_or(raster.samples)
}

/// Prepares the separation of the RGB or gray picture `bands` read from
/// `path` (rewound after a first pass when the table depends on the
/// picture), as `workshop` separates it.
pub fn band_separation<'w>(workshop: &'w Workshop, path: &'w Path, bands: &mut dyn BandSource) -> Result<BandSeparation<'w>> {
    let t = Instant::now();
    let info = bands.info().clone();
    if info.layout == Layout::Cmyk {
        return Err(Error::Internal(format!("{}: CMYK has no band separation from RGB", path.display())));
    }
    let settings = workshop.separator.settings();
    let gray = matches!(info.layout, Layout::Gray | Layout::GrayAlpha);
    let black_only = gray && (workshop.options.gray == GrayMode::BlackOnly || info.line_art);
    let picture = !black_only && settings.intent == Intent::Perceptual && settings.compress_from == CompressFrom::Picture;
    // A one-pixel picture with the file's description: what the job notes
    // and which source it takes do not depend on the pixels.
    let max = info.max_value();
    let probe_samples = match info.bits {
        8 => Samples::U8(vec![max as u8; info.channels()]),
        _ => Samples::U16(vec![max; info.channels()]),
    };
    let probe = Raster::from_parts(
        RasterInfo {
            width: 1,
            height: 1,
            ..info.clone()
        },
        probe_samples,
    );
    if !picture {
        // The job separates every band with the table it keeps for the source.
        let probe = workshop.separate_raster(path, probe, 0.0)?;
        let separate: SeparateFn<'w> = Box::new(move |band: RowBand| {
            let separated = workshop.separate_raster(path, band_raster(&info, band), 0.0)?;
            Ok(SeparatedBand {
                cmyk: separated.image.samples,
                rgb: source_rgb(separated.raster),
            })
        });
        return Ok(BandSeparation {
            source: probe.rgb_source,
            description: probe.source_description,
            notes: probe.notes,
            compressed_from: probe.compressed_from,
            setup_ms: ms(t),
            separate,
        });
    }
    // The picture's colours, band by band.
    let mut colours: Vec<u8> = Vec::new();
    let mut merged_len = 0;
    let rows = (COLOUR_PASS_PIXELS / info.width.max(1)).max(1);
    while let Some(band) = bands.next_band(rows)? {
        let rgb = source_rgb(band_raster(&info, band));
        let found = match &rgb {
            Samples::U8(v) => crate::separation::distinct_colours(v),
            Samples::U16(v) => crate::separation::distinct_colours(v),
        };
        colours.extend(codes(&found));
        // The extremes of the extremes are the extremes of the whole.
        if colours.len() > 4 * merged_len.max(1 << 16) {
            colours = codes(&crate::separation::distinct_colours(&colours));
            merged_len = colours.len();
        }
    }
    bands.rewind()?;
    // The job's notes and source, from a separator that builds a table of the
    // smallest grid (the job's own table is built below, from the colours).
    let mut probe_settings = settings.clone();
    probe_settings.intent = Intent::Relative;
    probe_settings.bpc = false;
    probe_settings.table_grid = crate::settings::Setting::TableGrid.range().lo as usize;
    let probe_workshop = Workshop::new(
        Separator::new(workshop.separator.condition().clone(), probe_settings)?,
        workshop.settings_report.clone(),
        workshop.options.clone(),
    );
    let probe = probe_workshop.separate_raster(path, probe, 0.0)?;
    let source = probe
        .rgb_source
        .ok_or_else(|| Error::Internal(format!("{}: the separation of RGB has no source", path.display())))?;
    let table = job::table_for_picture(&workshop.separator, &source, &Samples::U8(colours));
    let bits = workshop.options.bits;
    let separate: SeparateFn<'w> = Box::new(move |band: RowBand| {
        let width = info.width as usize;
        let rgb = source_rgb(band_raster(&info, band));
        let cmyk = apply(&table, &rgb, width, bits);
        Ok(SeparatedBand { rgb, cmyk })
    });
    Ok(BandSeparation {
        source: Some(source),
        description: probe.source_description,
        notes: probe.notes,
        compressed_from: Some(CompressFrom::Picture),
        setup_ms: ms(t),
        separate,
    })
}

/// Colours 0..1 on the 8-bit grid as interleaved 8-bit RGB.
fn codes(colours: &[[f64; 3]]) -> Vec<u8> {
    colours.iter().flat_map(|c| c.map(|v| (v * 255.0).round() as u8)).collect()
}

/// A band of source RGB through `table` at the job's depth, as the job
/// applies it to a whole picture (the job keeps its own application private;
/// this is the same four cases, a band at a time).
fn apply(table: &SeparationTable, rgb: &Samples, width: usize, bits: u8) -> Samples {
    let pixels = rgb.len() / 3;
    match (rgb, bits) {
        (Samples::U8(v), 8) => {
            let mut out = vec![0u8; pixels * 4];
            table.apply_rgb8(v, &mut out, width);
            Samples::U8(out)
        }
        (Samples::U8(v), _) => {
            let wide: Vec<u16> = v.iter().map(|&x| x as u16 * 257).collect();
            let mut out = vec![0u16; pixels * 4];
            table.apply_rgb16(&wide, &mut out, width);
            Samples::U16(out)
        }
        (Samples::U16(v), 16) => {
            let mut out = vec![0u16; pixels * 4];
            table.apply_rgb16(v, &mut out, width);
            Samples::U16(out)
        }
        (Samples::U16(v), _) => {
            let mut out = vec![0u16; pixels * 4];
            table.apply_rgb16(v, &mut out, width);
            Samples::U8(table.narrow_to_8bit(&out))
        }
    }
}

fn ms(t: Instant) -> f64 {
    crate::report::round_to(t.elapsed().as_secs_f64() * 1000.0, 1)
}
