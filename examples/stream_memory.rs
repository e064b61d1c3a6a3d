//! Memory of reading a picture a band of rows at a time, against reading it whole.
//!
//!   stream_memory write PATH WIDTH HEIGHT   an uncompressed 8-bit RGB TIFF in strips of 16 rows,
//!                                           written a strip at a time (a smooth field of our own)
//!   stream_memory bands PATH [ROWS]         reads it through `open_bands`, bands of ROWS (default 64)
//!   stream_memory whole PATH                reads it through `read_raster_with`
//!
//! Each prints its peak resident memory (VmHWM); `scripts/stream-memory.sh` runs them under
//! `/usr/bin/time -v` and records the figures in docs/PERFORMANCE.md.

use std::io::BufWriter;
use std::path::Path;

use platesmith::raster::{Limits, ReadOptions, Samples, open_bands, read_raster_with};
use tiff::encoder::{TiffEncoder, colortype::RGB8};

fn peak_rss_kib() -> u64 {
    std::fs::read_to_string("/proc/self/status")
        .ok()
        .and_then(|s| s.lines().find(|l| l.starts_with("VmHWM:")).map(str::to_owned))
        .and_then(|l| l.split_whitespace().nth(1).and_then(|v| v.parse().ok()))
        .unwrap_or(0)
}

/// Sum of all samples, so that nothing is optimised away and two reads can be compared.
fn checksum(s: &Samples) -> u64 {
    match s {
        Samples::U8(v) => v.iter().map(|&x| u64::from(x)).sum(),
        Samples::U16(v) => v.iter().map(|&x| u64::from(x)).sum(),
    }
}

fn write(path: &Path, width: u32, height: u32) -> Result<(), Box<dyn std::error::Error>> {
    const ROWS: u32 = 16;
    let file = BufWriter::with_capacity(1 << 20, std::fs::File::create(path)?);
    let mut encoder = TiffEncoder::new(file)?;
    let mut image = encoder.new_image::<RGB8>(width, height)?;
    image.rows_per_strip(ROWS)?;
    let mut y = 0;
    let mut strip = Vec::new();
    while image.next_strip_sample_count() > 0 {
        let rows = ROWS.min(height - y);
        strip.clear();
        for yy in y..y + rows {
            for x in 0..width {
                strip.extend([(x * 255 / width) as u8, (yy * 255 / height) as u8, ((x + yy) % 256) as u8]);
            }
        }
        image.write_strip(&strip)?;
        y += rows;
    }
    image.finish()?;
    Ok(())
}

fn main() -> Result<(), Box<dyn std::error::Error>> {
    let args: Vec<String> = std::env::args().skip(1).collect();
    let options = ReadOptions {
        // The default byte limit (4 GiB) refuses a 192 MP picture read whole only past 1.4 GP.
        limits: Limits::default(),
        ..ReadOptions::default()
    };
    match args.iter().map(String::as_str).collect::<Vec<_>>().as_slice() {
        ["write", path, w, h] => {
            write(Path::new(path), w.parse()?, h.parse()?)?;
            println!("written={path}");
        }
        ["bands", path, rest @ ..] => {
            let rows: u32 = rest.first().map(|r| r.parse()).transpose()?.unwrap_or(64);
            let start = std::time::Instant::now();
            let mut source = open_bands(Path::new(path), &options)?;
            let (w, h) = (source.info().width, source.info().height);
            let mut sum = 0;
            while let Some(band) = source.next_band(rows)? {
                sum += checksum(&band.samples);
            }
            println!("pixels={}", u64::from(w) * u64::from(h));
            println!("streamed={}", source.streamed());
            println!("band_rows={rows}");
            println!("checksum={sum}");
            println!("seconds={:.2}", start.elapsed().as_secs_f64());
            println!("peak_rss_mib={}", peak_rss_kib() / 1024);
        }
        ["whole", path] => {
            let start = std::time::Instant::now();
            let raster = read_raster_with(Path::new(path), &options)?;
            println!("pixels={}", u64::from(raster.width) * u64::from(raster.height));
            println!("checksum={}", checksum(&raster.samples));
            println!("seconds={:.2}", start.elapsed().as_secs_f64());
            println!("peak_rss_mib={}", peak_rss_kib() / 1024);
        }
        _ => {
            eprintln!("usage: stream_memory write PATH WIDTH HEIGHT | bands PATH [ROWS] | whole PATH");
            std::process::exit(2);
        }
    }
    Ok(())
}
