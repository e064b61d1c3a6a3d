//! The streamed `separate` job: bands of rows read, separated and written as
//! they come.
//!
//! - Streamed output is byte for byte the in-memory output (the entry point
//!   `inspect` and `proof` use), at band heights that cut strips anywhere: a
//!   consistency check of the band code against the whole-picture path, not
//!   of colour.
//! - A BigTIFF written above a lowered threshold reads back in Python
//!   tifffile (scripts/check_tiff.py, pinned in scripts/reference/requirements.txt)
//!   with the samples and tags of the separation: the outside reference for
//!   the BigTIFF layout (BigTIFF design, the 64-bit extension of TIFF 6.0).
//! - A read failure in a late band leaves no output and the input untouched.

use assert_cmd::Command;
use platesmith::error::{Error, Result};
use platesmith::ink::Ink;
use platesmith::job::{OutputPlace, PlateFormat, Workshop};
use platesmith::raster::{
    BIGTIFF_ABOVE_ENV, BandSource, CmykImage, Compression, RasterInfo, RowBand, Samples, TiffOptions, WholeRaster, read_raster,
};
use std::path::{Path, PathBuf};
use std::time::Instant;

/// Taller than a strip at every depth and plate kind (8-bit composite: 109
/// rows per strip at this width; 16-bit: 54; 8-bit plates: 436), so bands
/// cross strip boundaries.
const WIDTH: u32 = 600;
const HEIGHT: u32 = 240;

/// A test picture: hue sweep left to right, lightness top to bottom, fine
/// grain so neighbouring codes differ, and a solid black corner.
fn picture(channels: usize, max: u32) -> Vec<u32> {
    let mut out = Vec::new();
    for y in 0..HEIGHT {
        for x in 0..WIDTH {
            let (fx, fy) = (x as f64 / (WIDTH - 1) as f64, y as f64 / (HEIGHT - 1) as f64);
            let grain = ((x * 7 + y * 13) % 5) as f64 / 400.0;
            let rgb = [fx, (1.0 - fx) * fy, fy * 0.5 + 0.25 * fx].map(|v| if x < 20 && y < 20 { 0.0 } else { (v + grain).min(1.0) });
            let m = max as f64;
            match channels {
                1 => out.push((fy * m) as u32),
                3 => out.extend(rgb.map(|v| (v * m) as u32)),
                4 => {
                    out.extend(rgb.map(|v| (v * m) as u32));
                    out.push(((1.0 - fx * 0.8) * m) as u32);
                }
                _ => unreachable!(),
            }
        }
    }
    out
}

fn write_png(path: &Path, channels: usize, bits: u8) {
    let max = if bits == 16 { 65535 } else { 255 };
    let data = picture(channels, max);
    let file = std::io::BufWriter::new(std::fs::File::create(path).unwrap());
    let mut enc = png::Encoder::new(file, WIDTH, HEIGHT);
    enc.set_color(match channels {
        1 => png::ColorType::Grayscale,
        3 => png::ColorType::Rgb,
        _ => png::ColorType::Rgba,
    });
    enc.set_depth(if bits == 16 { png::BitDepth::Sixteen } else { png::BitDepth::Eight });
    let mut w = enc.write_header().unwrap();
    let bytes: Vec<u8> = if bits == 16 {
        data.iter().flat_map(|&v| (v as u16).to_be_bytes()).collect()
    } else {
        data.iter().map(|&v| v as u8).collect()
    };
    w.write_image_data(&bytes).unwrap();
}

/// A CMYK TIFF (the picture's RGB read as C, M, Y and a black ramp).
fn write_cmyk(path: &Path, bits: u8) {
    let max = if bits == 16 { 65535 } else { 255 };
    let rgb = picture(3, max);
    let cmyk: Vec<u32> = rgb
        .chunks_exact(3)
        .enumerate()
        .flat_map(|(i, p)| [p[0], p[1], p[2], (i as u32 * 7) % max])
        .collect();
    let samples = if bits == 16 {
        Samples::U16(cmyk.iter().map(|&v| v as u16).collect())
    } else {
        Samples::U8(cmyk.iter().map(|&v| v as u8).collect())
    };
    let image = CmykImage::new(WIDTH, HEIGHT, samples).unwrap();
    let mut file = std::io::BufWriter::new(std::fs::File::create(path).unwrap());
    platesmith::raster::write_cmyk_tiff(&mut file, &image, &TiffOptions::default()).unwrap();
}

/// A ticket with a smaller table than the default (17 nodes per axis), so the
/// many per-picture tables of these tests build quickly; the band code does
/// not depend on the grid.
fn workshop(dir: &Path) -> Workshop {
    let ticket = dir.join("small-table.toml");
    std::fs::write(&ticket, "[model]\ntable_grid = 17\n").unwrap();
    platesmith::setup::ticket_workshop(Some(&ticket), false).unwrap().0
}

fn files_of(dir: &Path) -> Vec<(String, Vec<u8>)> {
    let mut v: Vec<(String, Vec<u8>)> = std::fs::read_dir(dir)
        .unwrap()
        .map(|e| {
            let e = e.unwrap();
            (e.file_name().to_string_lossy().into_owned(), std::fs::read(e.path()).unwrap())
        })
        .collect();
    v.sort();
    v
}

/// The summary's ink figures (everything but the timings and the paths).
fn ink_figures(dir: &Path, stem: &str) -> serde_json::Value {
    let text = std::fs::read_to_string(dir.join(format!("{stem}.summary.json"))).unwrap();
    let v: serde_json::Value = serde_json::from_str(&text).unwrap();
    serde_json::json!({ "plates": v["plates"], "tac": v["tac"], "notes": v["notes"], "source": v["source"], "settings": v["settings"] })
}

#[test]
fn streamed_output_is_byte_identical_to_the_in_memory_output_at_any_band_height() {
    let dir = tempfile::tempdir().unwrap();
    let inputs: Vec<(PathBuf, &str)> = vec![
        (dir.path().join("rgb8.png"), "RGB 8-bit"),
        (dir.path().join("rgb16.png"), "RGB 16-bit"),
        (dir.path().join("rgba8.png"), "RGBA 8-bit (alpha flattened)"),
        (dir.path().join("gray8.png"), "gray 8-bit"),
        (dir.path().join("cmyk8.tif"), "CMYK 8-bit (re-separated)"),
        (dir.path().join("cmyk16.tif"), "CMYK 16-bit (re-separated)"),
    ];
    write_png(&inputs[0].0, 3, 8);
    write_png(&inputs[1].0, 3, 16);
    write_png(&inputs[2].0, 4, 8);
    write_png(&inputs[3].0, 1, 8);
    write_cmyk(&inputs[4].0, 8);
    write_cmyk(&inputs[5].0, 16);
    let mut shop = workshop(dir.path());
    // 1, 7 and 64 rows, and 100, which divides no strip height here.
    let heights = [1u32, 7, 64, 100];
    let mut compared = 0;
    for (input, what) in &inputs {
        for (bits, plates, gray) in [
            (8u8, PlateFormat::Tiff, platesmith::job::GrayMode::Neutral),
            (16, PlateFormat::Png, platesmith::job::GrayMode::BlackOnly),
        ] {
            shop.options.bits = bits;
            shop.options.plates = plates;
            shop.options.gray = gray;
            shop.options.compression = if bits == 8 { Compression::Deflate } else { Compression::Lzw };
            let whole = dir.path().join(format!("whole-{bits}"));
            std::fs::create_dir_all(&whole).unwrap();
            let separated = shop.separate_file(input).unwrap();
            let place = OutputPlace {
                dir: &whole,
                listed_dir: &whole,
                input_shown: input,
            };
            shop.write_outputs_in(input, &separated, Instant::now(), &place).unwrap();
            let expected = files_of(&whole);
            let stem = input.file_stem().unwrap().to_str().unwrap();
            for &rows in &heights {
                shop = shop.with_band_rows(rows);
                let streamed = dir.path().join(format!("streamed-{bits}-{rows}"));
                shop.options.out_dir = streamed.clone();
                let calls = std::sync::atomic::AtomicU64::new(0);
                let last = std::sync::Mutex::new((0, 0));
                shop.run_with_progress(input, &|done, total| {
                    calls.fetch_add(1, std::sync::atomic::Ordering::Relaxed);
                    *last.lock().unwrap() = (done, total);
                })
                .unwrap();
                let got = files_of(&streamed);
                let names = |v: &[(String, Vec<u8>)]| v.iter().map(|(n, _)| n.clone()).collect::<Vec<_>>();
                assert_eq!(names(&got), names(&expected), "{what}, {bits}-bit, bands of {rows}");
                for ((name, a), (_, b)) in got.iter().zip(&expected) {
                    if name.ends_with(".json") {
                        assert_eq!(
                            ink_figures(&streamed, stem),
                            ink_figures(&whole, stem),
                            "{what}: summary, bands of {rows}"
                        );
                    } else {
                        assert!(
                            a == b,
                            "{what}, {bits}-bit, bands of {rows}: {name} differs from the in-memory output"
                        );
                    }
                }
                // Progress: one call per band and pass, ending at the total.
                let (done, total) = *last.lock().unwrap();
                let per_pass = u64::from(HEIGHT.div_ceil(rows));
                assert_eq!(done, total, "{what}");
                assert!(
                    total == per_pass || total == 2 * per_pass,
                    "{what}: {total} bands for {per_pass} per pass"
                );
                assert_eq!(calls.load(std::sync::atomic::Ordering::Relaxed), total);
                std::fs::remove_dir_all(&streamed).unwrap();
                compared += 1;
            }
            // The composite decodes to the separation held in memory.
            let composite = read_raster(&whole.join(format!("{stem}.cmyk.tif")), &platesmith::raster::Limits::default()).unwrap();
            assert_eq!(composite.samples, separated.image.samples, "{what}");
            std::fs::remove_dir_all(&whole).unwrap();
        }
    }
    assert_eq!(compared, inputs.len() * 2 * heights.len());
}

/// Serves a picture's bands but fails on the band that starts at or after `fail_from`, as a file cut short would.
struct FailingBands {
    inner: WholeRaster,
    fail_from: u32,
    path: PathBuf,
    next: u32,
}

impl BandSource for FailingBands {
    fn info(&self) -> &RasterInfo {
        self.inner.info()
    }

    fn next_band(&mut self, max_rows: u32) -> Result<Option<RowBand>> {
        if self.next >= self.fail_from {
            return Err(Error::input(&self.path, "the data ends before the last row"));
        }
        let band = self.inner.next_band(max_rows)?;
        if let Some(b) = &band {
            self.next = b.y + b.rows;
        }
        Ok(band)
    }

    fn rewind(&mut self) -> Result<()> {
        self.next = 0;
        self.inner.rewind()
    }
}

/// Streams `late.png` (bands of 16 rows) through a source that fails at its
/// last band, under the settings of `ticket` (TOML); returns the error, the
/// bands the job reported done, and whether the output folder stayed empty
/// and the input unchanged.
fn fail_late(ticket: &str) -> (Error, u64, bool, bool) {
    let dir = tempfile::tempdir().unwrap();
    let input = dir.path().join("late.png");
    write_png(&input, 3, 8);
    let before = std::fs::read(&input).unwrap();
    let out = dir.path().join("out");
    std::fs::create_dir_all(&out).unwrap();
    let ticket_path = dir.path().join("job.toml");
    std::fs::write(&ticket_path, ticket).unwrap();
    let shop = platesmith::setup::ticket_workshop(Some(&ticket_path), false)
        .unwrap()
        .0
        .with_band_rows(16);
    let raster = read_raster(&input, &platesmith::raster::Limits::default()).unwrap();
    let bands = FailingBands {
        inner: WholeRaster::new(raster),
        fail_from: HEIGHT - 16,
        path: input.clone(),
        next: 0,
    };
    let place = OutputPlace {
        dir: &out,
        listed_dir: &out,
        input_shown: &input,
    };
    let done = std::sync::atomic::AtomicU64::new(0);
    let err = shop
        .stream_bands(&input, Box::new(bands), &place, Instant::now(), 0.0, &|n, _| {
            done.store(n, std::sync::atomic::Ordering::Relaxed);
        })
        .unwrap_err();
    let empty = std::fs::read_dir(&out).unwrap().next().is_none();
    let untouched = std::fs::read(&input).unwrap() == before;
    (err, done.load(std::sync::atomic::Ordering::Relaxed), empty, untouched)
}

#[test]
fn a_read_failure_in_a_late_band_of_the_colour_pass_leaves_no_output() {
    // The default perceptual intent: the failure comes in the first pass (the
    // picture's colours), after the outputs were opened.
    let (err, done, empty, untouched) = fail_late("[model]\ntable_grid = 17\n");
    assert!(
        err.to_string().contains("late.png") && err.to_string().contains("ends before"),
        "{err}"
    );
    assert_eq!(err.exit_code(), 2);
    assert_eq!(done, u64::from(HEIGHT / 16 - 1));
    assert!(empty, "files left behind after a failed job");
    assert!(untouched, "the input changed");
}

#[test]
fn a_read_failure_in_the_last_band_of_the_writing_pass_leaves_no_output() {
    // Relative colorimetric: one pass, so the failing band comes while the
    // outputs are being written, after every earlier band was.
    let (err, done, empty, untouched) = fail_late("[model]\ntable_grid = 17\nintent = \"relative\"\n");
    assert!(
        err.to_string().contains("late.png") && err.to_string().contains("ends before"),
        "{err}"
    );
    assert_eq!(done, u64::from(HEIGHT / 16 - 1));
    assert!(empty, "files left behind after a failed job");
    assert!(untouched, "the input changed");
}

#[test]
fn a_bigtiff_above_a_lowered_threshold_reads_back_in_tifffile() {
    if !crate::tifffile_available() {
        return;
    }
    let dir = tempfile::tempdir().unwrap();
    let input = dir.path().join("poster.png");
    write_png(&input, 3, 8);
    let ticket = dir.path().join("small-table.toml");
    std::fs::write(&ticket, "[model]\ntable_grid = 17\n").unwrap();
    // The expected samples: the in-memory separation with the same settings.
    let shop = workshop(dir.path());
    let separated = shop.separate_file(&input).unwrap();
    let icc_path = dir.path().join("profile.icc");
    std::fs::write(&icc_path, shop.output_profile().unwrap()).unwrap();
    let mut files = Vec::new();
    // The composite holds 576 000 bytes of samples and each plate 144 000:
    // 200 000 puts the composite over the threshold and the plates under it.
    for (threshold, name) in [("200000", "mixed"), ("1000", "big")] {
        let out = dir.path().join(name);
        Command::cargo_bin("platesmith")
            .unwrap()
            .env(BIGTIFF_ABOVE_ENV, threshold)
            .arg("separate")
            .arg(&input)
            .arg("--ticket")
            .arg(&ticket)
            .arg("--out-dir")
            .arg(&out)
            .assert()
            .success();
        let composite = out.join("poster.cmyk.tif");
        let head = std::fs::read(&composite).unwrap()[..4].to_vec();
        assert_eq!(head, [b'I', b'I', 43, 0], "{name}: BigTIFF header (version 43)");
        let samples = dir.path().join(format!("{name}.raw"));
        let Samples::U8(v) = &separated.image.samples else {
            panic!("8-bit output expected")
        };
        std::fs::write(&samples, v).unwrap();
        files.push(serde_json::json!({
            "path": composite, "photometric": 5, "samples_per_pixel": 4, "bits": 8, "compression": 8,
            "inkset": 1, "icc_path": icc_path, "x_ppi": 300.0, "y_ppi": 300.0, "samples_path": samples, "bigtiff": true,
        }));
        for ink in Ink::ALL {
            let plate = out.join(format!("poster.{}.tif", ink.letter()));
            let raw = dir.path().join(format!("{name}.{}.raw", ink.letter()));
            std::fs::write(&raw, v.chunks_exact(4).map(|px| px[ink.index()]).collect::<Vec<u8>>()).unwrap();
            files.push(serde_json::json!({
                "path": plate, "photometric": 0, "samples_per_pixel": 1, "bits": 8, "compression": 8,
                "icc_path": null, "x_ppi": 300.0, "y_ppi": 300.0, "samples_path": raw, "bigtiff": name == "big",
            }));
        }
    }
    let spec = dir.path().join("spec.json");
    std::fs::write(&spec, serde_json::to_vec(&serde_json::json!({ "files": files })).unwrap()).unwrap();
    let script = Path::new(env!("CARGO_MANIFEST_DIR")).join("scripts/check_tiff.py");
    let out = std::process::Command::new("python3").arg(script).arg(&spec).output().unwrap();
    let text = String::from_utf8_lossy(&out.stdout);
    println!("{text}{}", String::from_utf8_lossy(&out.stderr));
    assert!(out.status.success(), "tifffile disagrees:\n{text}");
    assert_eq!(text.lines().filter(|l| l.starts_with("ok")).count(), 10);
}
