//! Speed of applying the separation table to pixels: 8- and 16-bit RGB to
//! CMYK on a 4-megapixel buffer (2048 × 2048), on one thread and on every
//! thread of the global rayon pool, and 8-bit RGB on a photo-like picture
//! (the harbour of `support/photo.rs` at 4330 × 2887, 12.5 megapixels) on
//! one thread. Each 8-bit case runs with the kernel the program uses
//! (`PixelKernel::detected`) and with the scalar reference kernel, side by
//! side in one run. Throughput is in pixels. Targets are in
//! docs/PERFORMANCE.md; `scripts/bench.sh` runs this and records the figures.
//!
//! The 4-megapixel buffer holds uniform random pixels: every lookup lands
//! on an unrelated part of the table, the unfavourable case for the cache
//! (a photograph's neighbouring pixels mostly reuse the same table cells,
//! as the harbour's do).

use criterion::{BenchmarkId, Criterion, Throughput, criterion_group, criterion_main};
use platesmith::colour::RgbSpace;
use platesmith::press::builtin::coated_offset;
use platesmith::separation::IntentLab;
use platesmith::separation::{PixelKernel, RgbGamut, SeparationSettings, SeparationTable, Separator};
use std::time::Duration;

#[path = "support/photo.rs"]
mod photo;

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
    group.bench_function(BenchmarkId::new("rgb8_scalar", "1_thread"), |b| {
        b.iter(|| one.install(|| table.apply_rgb8_with(PixelKernel::Scalar, &rgb8, &mut cmyk8, WIDTH)))
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

    // The photo-like picture, one thread, both kernels. Made on first use,
    // so that a run filtered to other cases (such as a callgrind count)
    // does not pay for it.
    let (width, height) = (photo::WIDTH / 2, photo::HEIGHT / 2);
    let picture = std::cell::OnceCell::new();
    let mut picture_cmyk = Vec::new();
    let mut group = c.benchmark_group("table_apply");
    group.sample_size(10).measurement_time(Duration::from_secs(4));
    group.throughput(Throughput::Elements((width * height) as u64));
    for (name, kernel) in [("photo_rgb8", PixelKernel::detected()), ("photo_rgb8_scalar", PixelKernel::Scalar)] {
        group.bench_function(BenchmarkId::new(name, "1_thread"), |b| {
            let rgb = picture.get_or_init(|| photo::harbour_rgb8_sized(width, height));
            picture_cmyk.resize(width * height * 4, 0);
            b.iter(|| one.install(|| table.apply_rgb8_with(kernel, rgb, &mut picture_cmyk, width)))
        });
    }
    group.finish();
    eprintln!("8-bit kernel: {:?}", PixelKernel::detected());
    if !std::env::args().any(|a| a == "--profile-time") {
        let photo = picture.get_or_init(|| photo::harbour_rgb8_sized(width, height));
        picture_cmyk.resize(width * height * 4, 0);
        on_cpu(
            &one,
            &table,
            &[("random", &rgb8, WIDTH), ("photo", photo, width)],
            &mut picture_cmyk,
        );
    }
    // The output is used, so the work cannot be optimised away.
    let checksum: u64 = [&cmyk8, &picture_cmyk]
        .iter()
        .flat_map(|v| v.iter())
        .map(|&v| v as u64)
        .sum::<u64>()
        + cmyk16.iter().map(|&v| v as u64).sum::<u64>();
    assert!(checksum > 0);
}

/// On-CPU time of the calling thread in ns (`/proc/thread-self/schedstat`,
/// first field), which leaves out the time spent waiting for a core on a
/// shared machine; `None` where there is no such file.
fn thread_cpu_ns() -> Option<u64> {
    std::fs::read_to_string("/proc/thread-self/schedstat")
        .ok()?
        .split_whitespace()
        .next()?
        .parse()
        .ok()
}

/// Both 8-bit kernels on each buffer, one thread, alternated, best of five
/// runs each by on-CPU time of the pool's thread: printed, and written to
/// `target/criterion/table_apply/on_cpu.json` for `scripts/bench.sh`.
fn on_cpu(one: &rayon::ThreadPool, table: &SeparationTable, buffers: &[(&str, &[u8], usize)], out: &mut Vec<u8>) {
    let mut figures = Vec::new();
    for &(name, rgb, row) in buffers {
        let pixels = rgb.len() / 3;
        out.resize(pixels * 4, 0);
        let mut best = [u64::MAX; 2];
        for _ in 0..5 {
            for (k, kernel) in [PixelKernel::detected(), PixelKernel::Scalar].into_iter().enumerate() {
                let ns = one.install(|| {
                    let start = thread_cpu_ns()?;
                    table.apply_rgb8_with(kernel, rgb, out, row);
                    Some(thread_cpu_ns()? - start)
                });
                let Some(ns) = ns else { return };
                best[k] = best[k].min(ns.max(1));
            }
        }
        let rate = best.map(|ns| pixels as f64 / ns as f64 * 1e3);
        eprintln!(
            "on-CPU, 1 thread, {name} ({pixels} pixels): {:?} {:.1} Mpixel/s, scalar {:.1} Mpixel/s, {:.2} ×",
            PixelKernel::detected(),
            rate[0],
            rate[1],
            rate[0] / rate[1]
        );
        figures.push(format!(
            r#""{name}": {{"kernel": "{:?}", "pixels": {pixels}, "kernel_ns": {}, "scalar_ns": {}}}"#,
            PixelKernel::detected(),
            best[0],
            best[1]
        ));
    }
    let dir = std::path::Path::new(&std::env::var("CARGO_TARGET_DIR").unwrap_or_else(|_| "target".into())).join("criterion/table_apply");
    if std::fs::create_dir_all(&dir).is_ok() {
        let _ = std::fs::write(dir.join("on_cpu.json"), format!("{{{}}}\n", figures.join(", ")));
    }
}

criterion_group!(benches, apply);
criterion_main!(benches);
