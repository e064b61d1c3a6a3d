//! End-to-end speed of one `separate` job on a 50-megapixel 8-bit RGB
//! picture: read the uncompressed TIFF, build the separator and the default
//! table (coated offset, sRGB, perceptual, grid 33), separate, write the
//! composite and four plate TIFFs uncompressed through the staged output set,
//! and the summary — the work of `platesmith separate` after argument
//! parsing. The input is a photo-like picture made by the bench itself
//! (`support/photo.rs`) in a temporary folder. Target in docs/PERFORMANCE.md;
//! `scripts/bench.sh` runs this and also times the release binary on the same
//! picture for wall time and peak memory.

use criterion::{Criterion, Throughput, criterion_group, criterion_main};
use platesmith::colour::RgbSpace;
use platesmith::job::{GrayMode, JobOptions, PlateFormat, Workshop};
use platesmith::press::builtin::coated_offset;
use platesmith::raster::{Compression, Limits};
use platesmith::report::SettingsReport;
use platesmith::separation::{SeparationSettings, Separator};
use std::time::Duration;

#[path = "support/photo.rs"]
mod photo;

fn end_to_end(c: &mut Criterion) {
    let dir = tempfile::tempdir().expect("a temporary folder");
    let input = dir.path().join("harbour.tif");
    let rgb = photo::harbour_rgb8();
    photo::write_rgb8_tiff(&input, &rgb, photo::WIDTH, photo::HEIGHT).expect("the input picture is written");
    drop(rgb);
    let out_dir = dir.path().join("out");
    std::fs::create_dir_all(&out_dir).expect("the output folder");

    let mut group = c.benchmark_group("end_to_end");
    group
        .sample_size(10)
        .measurement_time(Duration::from_secs(40))
        .warm_up_time(Duration::from_secs(3));
    group.throughput(Throughput::Elements((photo::WIDTH * photo::HEIGHT) as u64));
    group.bench_function("separate_50mp_rgb8", |b| {
        b.iter(|| {
            let condition = coated_offset();
            let settings = SeparationSettings::for_condition(&condition);
            let report = SettingsReport::new(&condition, &settings, RgbSpace::Srgb);
            let separator = Separator::new(condition.clone(), settings).expect("built-in settings are valid");
            let options = JobOptions {
                out_dir: out_dir.clone(),
                bits: 8,
                plates: PlateFormat::Tiff,
                compression: Compression::None,
                overwrite: true,
                limits: Limits::default(),
                accept_damaged: false,
                page: None,
                gray: GrayMode::Neutral,
                ignore_bad_profile: false,
                source_space: RgbSpace::Srgb,
                source_condition: condition,
                keep_pure_black_cmyk: true,
            };
            let summary = Workshop::new(separator, report, options).run(&input).expect("the job runs");
            assert_eq!(summary.outputs.len(), 6, "composite, four plates and the summary");
            summary
        })
    });
    group.finish();
}

criterion_group!(benches, end_to_end);
criterion_main!(benches);
