//! Peak memory of `inspect` when the picture arrives band by band: a
//! photo-like 8-bit RGB picture (smooth gradients, a little noise, a patch
//! of saturated green outside the press gamut) is made one band at a time,
//! never whole, and inspected with the default settings through
//! `inspect::inspect_bands`. What it prints is the memory of the
//! inspection itself, without a decoder's buffers.
//!
//! `cargo run --release --example inspect_memory -- [WIDTH HEIGHT]`
//! (default 16000 × 12000, 192 megapixels); run it under `/usr/bin/time -v`
//! for the peak resident set size as the system sees it.

use platesmith::error::Result;
use platesmith::inspect::{InspectOptions, inspect_bands};
use platesmith::raster::{BandSource, Format, Layout, RasterInfo, Resolution, RowBand, Samples};
use platesmith::setup::{JobInput, JobKind, ModelInput};
use std::path::Path;
use std::time::Instant;

/// The picture, made row by row on request.
struct Made {
    info: RasterInfo,
    next_row: u32,
}

impl Made {
    fn pixel(&self, x: u32, y: u32) -> [u8; 3] {
        let (w, h) = (self.info.width as f64, self.info.height as f64);
        let (fx, fy) = (x as f64 / w, y as f64 / h);
        if (0.4..0.45).contains(&fx) && (0.5..0.55).contains(&fy) {
            return [0, 255, 0];
        }
        // A cheap hash as noise of ±3 codes.
        let noise = ((x.wrapping_mul(2_654_435_761) ^ y.wrapping_mul(40_503)) >> 13) % 7;
        let noise = noise as f64 - 3.0;
        let base = [
            255.0 * fx,
            255.0 * (1.0 - fx) * (0.3 + 0.7 * fy),
            255.0 * (0.5 + 0.5 * (fx * 9.0 + fy * 4.0).sin()) * (1.0 - 0.6 * fy),
        ];
        base.map(|v| (v + noise).clamp(0.0, 255.0) as u8)
    }
}

impl BandSource for Made {
    fn info(&self) -> &RasterInfo {
        &self.info
    }

    fn next_band(&mut self, max_rows: u32) -> Result<Option<RowBand>> {
        if self.next_row >= self.info.height {
            return Ok(None);
        }
        let y = self.next_row;
        let rows = max_rows.max(1).min(self.info.height - y);
        let mut v = Vec::with_capacity(rows as usize * self.info.row_len());
        for yy in y..y + rows {
            for x in 0..self.info.width {
                v.extend(self.pixel(x, yy));
            }
        }
        self.next_row = y + rows;
        Ok(Some(RowBand {
            y,
            rows,
            samples: Samples::U8(v),
        }))
    }

    fn rewind(&mut self) -> Result<()> {
        self.next_row = 0;
        Ok(())
    }
}

/// The peak resident set size so far, from the kernel (Linux), MiB.
fn peak_mib() -> Option<f64> {
    let status = std::fs::read_to_string("/proc/self/status").ok()?;
    let line = status.lines().find(|l| l.starts_with("VmHWM:"))?;
    let kib: f64 = line.split_whitespace().nth(1)?.parse().ok()?;
    Some(kib / 1024.0)
}

fn main() -> Result<()> {
    let args: Vec<u32> = std::env::args().skip(1).filter_map(|a| a.parse().ok()).collect();
    let (width, height) = match args[..] {
        [w, h] => (w, h),
        _ => (16_000, 12_000),
    };
    let model = ModelInput::default().resolve()?;
    let workshop = JobInput::default().resolve(JobKind::Inspect, model)?.workshop()?;
    let info = RasterInfo {
        width,
        height,
        layout: Layout::Rgb,
        bits: 8,
        icc_profile: None,
        resolution: Some(Resolution {
            x_ppi: 300.0,
            y_ppi: 300.0,
        }),
        colour_chunks: None,
        format: Format::Tiff,
        notes: Vec::new(),
        line_art: false,
    };
    let started = Instant::now();
    let source = Box::new(Made { info, next_row: 0 });
    let opts = InspectOptions {
        keep_maps: true,
        ..InspectOptions::default()
    };
    let inspection = inspect_bands(&workshop, Path::new("made-picture"), source, 0.0, &opts, started)?;
    let r = &inspection.report;
    println!(
        "{} × {} ({:.0} MP): {} regions, distinct values {}, {:.1} s wall",
        width,
        height,
        width as f64 * height as f64 / 1e6,
        r.regions_total,
        r.gamut.as_ref().map_or(0, |g| g.distinct_values),
        started.elapsed().as_secs_f64()
    );
    if let Some(peak) = peak_mib() {
        println!("peak resident set: {peak:.0} MiB");
    }
    Ok(())
}
