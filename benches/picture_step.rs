//! The table of one picture under perceptual compression from its own gamut
//! (the default), on the built-in coated-offset condition at the default
//! 33³ grid, side by side in one run: the full build (every node solved
//! exactly) and the per-picture step from the cached picture-independent
//! base (the picture's gamut, map and cells, the nodes of its cells
//! mapped, the moved ones solved), and the same step from an empty base
//! (the base first solved where the picture's cells need it, as a job
//! with an empty cache does). Pictures: the demo (examples/harbour-lights.png) and the demo
//! with half and with a quarter of its chroma (the latter inside the press
//! gamut: 161 nodes move). Figures in docs/PERFORMANCE.md.

use criterion::{BenchmarkId, Criterion, criterion_group, criterion_main};
use platesmith::colour::RgbSpace;
use platesmith::job::{base_for_source, exact_table_for_picture, table_for_picture, table_for_picture_from};
use platesmith::press::builtin::coated_offset;
use platesmith::raster::Samples;
use platesmith::separation::{SeparationSettings, Separator};
use platesmith::source::RgbSource;
use std::time::Duration;

#[path = "support/picture_step_pictures.rs"]
mod pictures;
use pictures::{demo, toward_gray};

fn picture_table(c: &mut Criterion) {
    let grid = 33;
    let condition = coated_offset();
    let mut settings = SeparationSettings::for_condition(&condition);
    settings.table_grid = grid;
    let sep = Separator::new(condition, settings).expect("valid");
    let source = RgbSource::Named(RgbSpace::Srgb);
    let mut base = base_for_source(&sep, &source).expect("a perceptual separator");
    let demo = demo();
    let (muted, inside) = (toward_gray(&demo, 2), toward_gray(&demo, 1));
    let mut group = c.benchmark_group("picture_table");
    group.sample_size(10).measurement_time(Duration::from_secs(5));
    for (name, rgb) in [("harbour-lights", demo), ("half-chroma", muted), ("quarter-chroma", inside)] {
        let samples = Samples::U8(rgb);
        group.bench_with_input(BenchmarkId::new("full_build", name), &samples, |b, s| {
            b.iter(|| exact_table_for_picture(&sep, &source, s))
        });
        // The picture's gamut, map and cells, then the step on the base
        // (what a job with the base in the cache does per file).
        group.bench_with_input(BenchmarkId::new("picture_step", name), &samples, |b, s| {
            b.iter(|| table_for_picture_from(&sep, &source, Some(&mut base), s))
        });
        // The same from an empty base (a job with an empty cache): the base
        // solved where the picture's cells need it, then the step.
        group.bench_with_input(BenchmarkId::new("cold_step", name), &samples, |b, s| {
            b.iter(|| table_for_picture(&sep, &source, s))
        });
    }
    group.finish();
}

criterion_group!(benches, picture_table);
criterion_main!(benches);
