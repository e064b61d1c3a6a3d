//! Memory of reading a picture a band of rows at a time, against reading it whole.
//!
//!   stream_memory write PATH WIDTH HEIGHT   an uncompressed 8-bit RGB TIFF in strips of 16 rows,
//!                                           written a strip at a time (a smooth field of our own)
//!   stream_memory write-planar PATH W H     the same picture, PlanarConfiguration 2 (each plane
//!                                           in strips of 16 rows), written a strip at a time
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

/// The picture of [`write`] as a planar TIFF (TIFF 6.0 §8, PlanarConfiguration 2):
/// uncompressed strips of 16 rows, all of the red plane, then green, then blue, laid out
/// by hand (little-endian classic TIFF) since the tiff crate writes interleaved pages only.
fn write_planar(path: &Path, width: u32, height: u32) -> Result<(), Box<dyn std::error::Error>> {
    use std::io::Write;
    const ROWS: u32 = 16;
    let strips = height.div_ceil(ROWS);
    let plane = u64::from(width) * u64::from(height);
    if 3 * plane + 4096 + 24 * u64::from(strips) > u64::from(u32::MAX) {
        return Err("picture too large for a classic TIFF".into());
    }
    let mut out = BufWriter::with_capacity(1 << 20, std::fs::File::create(path)?);
    out.write_all(b"II*\0")?;
    let data_at = 8u64;
    let ifd_at = data_at + 3 * plane;
    out.write_all(&(ifd_at as u32).to_le_bytes())?;
    let mut offsets = Vec::new();
    let mut counts = Vec::new();
    let mut at = data_at;
    for p in 0..3u32 {
        let mut y = 0;
        while y < height {
            let rows = ROWS.min(height - y);
            let mut strip = Vec::with_capacity((rows * width) as usize);
            for yy in y..y + rows {
                for x in 0..width {
                    let px = [(x * 255 / width) as u8, (yy * 255 / height) as u8, ((x + yy) % 256) as u8];
                    strip.push(px[p as usize]);
                }
            }
            out.write_all(&strip)?;
            offsets.push(at as u32);
            counts.push(strip.len() as u32);
            at += strip.len() as u64;
            y += rows;
        }
    }
    let n = offsets.len() as u32;
    let entries: u16 = 10;
    let extra_at = ifd_at + 2 + 12 * u64::from(entries) + 4;
    let (bits_at, offsets_at) = (extra_at, extra_at + 8);
    let counts_at = offsets_at + 4 * u64::from(n);
    let mut ifd = Vec::new();
    ifd.extend(entries.to_le_bytes());
    let mut entry = |tag: u16, kind: u16, count: u32, value: u32| {
        ifd.extend(tag.to_le_bytes());
        ifd.extend(kind.to_le_bytes());
        ifd.extend(count.to_le_bytes());
        ifd.extend(value.to_le_bytes());
    };
    let (short, long) = (3, 4);
    entry(256, long, 1, width);
    entry(257, long, 1, height);
    entry(258, short, 3, bits_at as u32);
    entry(259, short, 1, 1);
    entry(262, short, 1, 2);
    entry(273, long, n, offsets_at as u32);
    entry(277, short, 1, 3);
    entry(278, long, 1, ROWS);
    entry(279, long, n, counts_at as u32);
    entry(284, short, 1, 2);
    ifd.extend(0u32.to_le_bytes());
    for _ in 0..3 {
        ifd.extend(8u16.to_le_bytes());
    }
    ifd.extend([0u8; 2]);
    ifd.extend(offsets.iter().flat_map(|o| o.to_le_bytes()));
    ifd.extend(counts.iter().flat_map(|c| c.to_le_bytes()));
    out.write_all(&ifd)?;
    out.flush()?;
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
        ["write-planar", path, w, h] => {
            write_planar(Path::new(path), w.parse()?, h.parse()?)?;
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
            eprintln!("usage: stream_memory write PATH WIDTH HEIGHT | write-planar PATH WIDTH HEIGHT | bands PATH [ROWS] | whole PATH");
            std::process::exit(2);
        }
    }
    Ok(())
}
