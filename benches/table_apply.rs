//! Speed of applying the separation table to pixels: 8- and 16-bit RGB to
//! CMYK on a 4-megapixel buffer (2048 × 2048), on one thread and on every
//! thread of the global rayon pool. Throughput is in pixels. Targets are in
//! docs/PERFORMANCE.md; `scripts/bench.sh` runs this and records the figures.
//!
//! The buffer holds uniform random pixels: every lookup lands on an
//! unrelated part of the table, the unfavourable case for the cache (a
//! photograph's neighbouring pixels mostly reuse the same table cells).

use criterion::{BenchmarkId, Criterion, Throughput, criterion_group, criterion_main};
use platesmith::colour::RgbSpace;
use platesmith::press::builtin::coated_offset;
use platesmith::separation::IntentLab;
use platesmith::separation::{RgbGamut, SeparationSettings, SeparationTable, Separator};
use std::time::Duration;

const WIDTH: usize = 2048;
const HEIGHT: usize = 2048;
const PIXELS: usize = WIDTH * HEIGHT;

/// xorshift64*: deterministic pixels for every run.
struct Rng(u64);
impl Rng {
    fn next(&mut self) -> u64 {
        self.0 ^= self.0 >> 12;
        self.0 ^= self.0 << 25;
        self.0 ^= self.0 >> 27;
        self.0.wrapping_mul(0x2545F4914F6CDD1D)
    }
}

/// The default table: coated offset, its default settings, perceptual, grid 33.
fn default_table() -> SeparationTable {
    let condition = coated_offset();
    let settings = SeparationSettings::for_condition(&condition);
    let sep = Separator::new(condition, settings).expect("built-in settings are valid");
    let conv = RgbSpace::Srgb.converter();
    let gamut = RgbGamut(conv);
    let mapping = sep.source_mapping(&gamut);
    SeparationTable::build(&sep, &mapping, &|rgb| IntentLab::new(conv.to_lab(rgb)))
}

fn apply(c: &mut Criterion) {
    let table = default_table();
    let mut rng = Rng(0x5EED_1234_ABCD_0001);
    let rgb8: Vec<u8> = (0..PIXELS * 3).map(|_| (rng.next() >> 56) as u8).collect();
    let rgb16: Vec<u16> = (0..PIXELS * 3).map(|_| (rng.next() >> 48) as u16).collect();
    let mut cmyk8 = vec![0u8; PIXELS * 4];
    let mut cmyk16 = vec![0u16; PIXELS * 4];

    let mut group = c.benchmark_group("table_apply");
    group.sample_size(10).measurement_time(Duration::from_secs(3));
    group.throughput(Throughput::Elements(PIXELS as u64));
    // One thread: a pool of its own. All threads: the global pool, as the
    // program runs.
    let one = rayon::ThreadPoolBuilder::new().num_threads(1).build().expect("a one-thread pool");
    let all = format!("{}_threads", rayon::current_num_threads());
    group.bench_function(BenchmarkId::new("rgb8", "1_thread"), |b| {
        b.iter(|| one.install(|| table.apply_rgb8(&rgb8, &mut cmyk8, WIDTH)))
    });
    group.bench_function(BenchmarkId::new("rgb8", &all), |b| {
        b.iter(|| table.apply_rgb8(&rgb8, &mut cmyk8, WIDTH))
    });
    group.bench_function(BenchmarkId::new("rgb16", "1_thread"), |b| {
        b.iter(|| one.install(|| table.apply_rgb16(&rgb16, &mut cmyk16, WIDTH)))
    });
    group.bench_function(BenchmarkId::new("rgb16", &all), |b| {
        b.iter(|| table.apply_rgb16(&rgb16, &mut cmyk16, WIDTH))
    });
    group.finish();
    // The output is used, so the work cannot be optimised away.
    let checksum: u64 = cmyk8.iter().map(|&v| v as u64).sum::<u64>() + cmyk16.iter().map(|&v| v as u64).sum::<u64>();
    assert!(checksum > 0);
}

criterion_group!(benches, apply);
criterion_main!(benches);
