//! Speed of `inspect` on one 50-megapixel file (8660 × 5774), RGB and CMYK,
//! on the global rayon pool (every core): reading the file, for RGB the
//! separation (table built afresh each time) and the per-pixel ΔE2000, total
//! ink, plates and regions. Targets are in docs/PERFORMANCE.md (≤ 4 s RGB,
//! ≤ 2 s CMYK on 2 cores); `scripts/bench.sh` runs this and records the
//! figures.
//!
//! The RGB picture is photograph-like: smooth gradients of hue and lightness
//! with a little noise, about 1.5 million distinct values, some of them far
//! outside the press gamut. The CMYK picture is the same kind of content as
//! ink values, with a block over the ink limit.

use criterion::{BatchSize, Criterion, criterion_group, criterion_main};
use platesmith::inspect::{InspectOptions, inspect_file};
use platesmith::job::{GrayMode, JobOptions, PlateFormat, Workshop};
use platesmith::press::builtin::coated_offset;
use platesmith::raster::{CmykImage, Compression, Limits, Resolution, Samples, TiffOptions, write_cmyk_tiff};
use platesmith::report::SettingsReport;
use platesmith::separation::{SeparationSettings, Separator};
use std::path::{Path, PathBuf};
use std::time::Duration;

const WIDTH: u32 = 8660;
const HEIGHT: u32 = 5774;

#[path = "../tests/support/rng.rs"]
mod rng;
use rng::SplitMix64 as Rng;

fn picture(channels: usize) -> Vec<u8> {
    let mut rng = Rng(0x1A5E_7700_0000_0050);
    let (w, h) = (WIDTH as usize, HEIGHT as usize);
    let mut v = vec![0u8; w * h * channels];
    for y in 0..h {
        for x in 0..w {
            let (fx, fy) = (x as f64 / w as f64, y as f64 / h as f64);
            let noise = (rng.next_u64() % 7) as f64 - 3.0;
            let base = [
                255.0 * fx,
                255.0 * (1.0 - fx) * (0.3 + 0.7 * fy),
                255.0 * (0.5 + 0.5 * (fx * 9.0 + fy * 4.0).sin()) * (1.0 - 0.6 * fy),
                255.0 * fy * fy,
            ];
            let i = (y * w + x) * channels;
            for c in 0..channels {
                v[i + c] = (base[c] + noise).clamp(0.0, 255.0) as u8;
            }
            if channels == 4 && (w / 3..w / 3 + 400).contains(&x) && (h / 2..h / 2 + 300).contains(&y) {
                v[i..i + 4].copy_from_slice(&[255; 4]);
            }
        }
    }
    v
}

fn write_rgb_png(path: &Path, data: &[u8]) {
    let file = std::fs::File::create(path).expect("bench file");
    let mut enc = png::Encoder::new(std::io::BufWriter::new(file), WIDTH, HEIGHT);
    enc.set_color(png::ColorType::Rgb);
    enc.set_depth(png::BitDepth::Eight);
    enc.set_compression(png::Compression::Fast);
    enc.write_header().expect("PNG header").write_image_data(data).expect("PNG data");
}

fn write_cmyk(path: &Path, data: Vec<u8>) {
    let image = CmykImage::new(WIDTH, HEIGHT, Samples::U8(data)).expect("CMYK image");
    let mut file = std::fs::File::create(path).expect("bench file");
    let opts = TiffOptions {
        compression: Compression::None,
        resolution: Some(Resolution {
            x_ppi: 300.0,
            y_ppi: 300.0,
        }),
        icc_profile: None,
    };
    write_cmyk_tiff(&mut file, &image, &opts).expect("CMYK TIFF");
}

fn workshop(separator: &Separator) -> Workshop {
    let condition = coated_offset();
    let options = JobOptions {
        out_dir: PathBuf::from("."),
        bits: 8,
        plates: PlateFormat::None,
        compression: Compression::None,
        overwrite: false,
        limits: Limits::default(),
        accept_damaged: false,
        page: None,
        gray: GrayMode::Neutral,
        ignore_bad_profile: false,
        source_space: platesmith::colour::RgbSpace::Srgb,
        source_condition: condition.clone(),
        keep_pure_black_cmyk: true,
    };
    let report = SettingsReport::new(&condition, separator.settings(), platesmith::colour::RgbSpace::Srgb);
    Workshop::new(separator.clone(), report, options)
}

fn inspect(c: &mut Criterion) {
    let dir = tempfile::tempdir().expect("temporary folder");
    let rgb = dir.path().join("scene-50mp.png");
    let cmyk = dir.path().join("scene-50mp.cmyk.tif");
    write_rgb_png(&rgb, &picture(3));
    write_cmyk(&cmyk, picture(4));
    let condition = coated_offset();
    let settings = SeparationSettings::for_condition(&condition);
    let separator = Separator::new(condition, settings).expect("built-in settings are valid");
    let opts = InspectOptions::default();

    // One run of each, with the report's own phase timings (for reading the figures).
    for path in [&rgb, &cmyk] {
        let t = inspect_file(&workshop(&separator), path, &opts).expect("inspect").report.timings;
        eprintln!(
            "{}: read {} ms, separate {} ms, analyse {} ms, total {} ms",
            path.display(),
            t.read_ms,
            t.separate_ms,
            t.analyse_ms,
            t.total_ms
        );
    }
    if std::env::var_os("INSPECT_BENCH_PHASES_ONLY").is_some() {
        return;
    }
    let mut group = c.benchmark_group("inspect");
    group
        .sample_size(10)
        .measurement_time(Duration::from_secs(30))
        .warm_up_time(Duration::from_secs(1));
    // A fresh workshop each time: the separation table is built as in a new run.
    group.bench_function("rgb_50mp", |b| {
        b.iter_batched(
            || workshop(&separator),
            |w| inspect_file(&w, &rgb, &opts).expect("inspect").report.regions_total,
            BatchSize::PerIteration,
        )
    });
    group.bench_function("cmyk_50mp", |b| {
        b.iter_batched(
            || workshop(&separator),
            |w| inspect_file(&w, &cmyk, &opts).expect("inspect").report.regions_total,
            BatchSize::PerIteration,
        )
    });
    group.finish();
}

criterion_group!(benches, inspect);
criterion_main!(benches);
