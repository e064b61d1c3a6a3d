//! Speed of the separation engine's stages on the built-in coated-offset
//! condition: the forward press model, building a separator (black point
//! and gamut boundary), building the separation table, and single
//! inversions. Targets are in docs/PERFORMANCE.md; `scripts/bench.sh` runs
//! this and records the figures.

use criterion::{BenchmarkId, Criterion, Throughput, criterion_group, criterion_main};
use platesmith::colour::{Lab, RgbSpace};
use platesmith::ink::Cmyk;
use platesmith::press::builtin::coated_offset;
use platesmith::separation::{Intent, RgbGamut, SeparationSettings, SeparationTable, Separator};
use platesmith::separation::{IntentLab, RelativeLab};
use std::hint::black_box;
use std::time::Duration;

#[path = "../tests/support/rng.rs"]
mod rng;
use rng::SplitMix64 as Rng;

fn settings(intent: Intent, grid: usize) -> SeparationSettings {
    let mut s = SeparationSettings::for_condition(&coated_offset());
    s.intent = intent;
    s.table_grid = grid;
    s
}

fn separator(intent: Intent, grid: usize) -> Separator {
    Separator::new(coated_offset(), settings(intent, grid)).expect("built-in settings are valid")
}

/// Forward model CMYK → Lab, 4096 random builds per iteration.
fn forward_model(c: &mut Criterion) {
    let model = coated_offset().model;
    let mut rng = Rng(11);
    let builds: Vec<Cmyk> = (0..4096)
        .map(|_| Cmyk::new(rng.next_f64(), rng.next_f64(), rng.next_f64(), rng.next_f64()))
        .collect();
    let mut group = c.benchmark_group("forward_model");
    group.throughput(Throughput::Elements(builds.len() as u64));
    group.bench_function("lab", |b| {
        b.iter(|| {
            let mut acc = 0.0;
            for &x in &builds {
                acc += model.lab(black_box(x)).l;
            }
            acc
        })
    });
    group.finish();
}

/// Separator::new: black point search and the gamut boundary under the ink limit.
fn separator_build(c: &mut Criterion) {
    let mut group = c.benchmark_group("separator_new");
    group.sample_size(10).measurement_time(Duration::from_secs(4));
    group.bench_function("coated_offset", |b| {
        b.iter(|| Separator::new(coated_offset(), settings(Intent::Perceptual, 33)).expect("valid"))
    });
    group.finish();
}

/// The sRGB separation table (default settings) at grid 17 and 33 for the
/// perceptual and the relative intent, on the global rayon pool (all cores).
fn table_build(c: &mut Criterion) {
    let conv = RgbSpace::Srgb.converter();
    let gamut = RgbGamut(conv);
    let mut group = c.benchmark_group("table_build");
    group.sample_size(10).measurement_time(Duration::from_secs(6));
    for intent in [Intent::Perceptual, Intent::Relative] {
        for grid in [17usize, 33] {
            let sep = separator(intent, grid);
            let id = BenchmarkId::new(intent.name(), grid);
            group.bench_with_input(id, &grid, |b, _| {
                b.iter(|| {
                    let mapping = sep.source_mapping(&gamut);
                    SeparationTable::build(&sep, &mapping, &|rgb| IntentLab::new(conv.to_lab(rgb)))
                })
            });
        }
    }
    group.finish();
}

/// Single cold-start inversions (no warm start): 64 in-gamut targets (the
/// printed colours of in-limit builds) and 64 out-of-gamut targets (vivid
/// colours beyond the press gamut) per iteration.
fn invert(c: &mut Criterion) {
    let sep = separator(Intent::Relative, 33);
    let (tac, kmax) = (sep.settings().tac, sep.settings().black.black_max);
    let mut rng = Rng(12);
    let inside: Vec<Lab> = (0..64)
        .map(|_| {
            let mut x = Cmyk::new(rng.next_f64(), rng.next_f64(), rng.next_f64(), rng.next_f64() * kmax);
            if x.total() > tac {
                let s = tac / x.total();
                x = Cmyk::new(x.c * s, x.m * s, x.y * s, x.k * s);
            }
            sep.printed_relative(x).lab()
        })
        .collect();
    let outside: Vec<Lab> = (0..64)
        .map(|i| {
            let h = i as f64 / 64.0 * std::f64::consts::TAU;
            let l = 30.0 + 50.0 * rng.next_f64();
            Lab::new(l, 110.0 * h.cos(), 110.0 * h.sin())
        })
        .collect();
    assert!(
        outside.iter().all(|&lab| !sep.gamut_check(RelativeLab::new(lab)).0),
        "every out-of-gamut target is out of gamut"
    );
    let mut group = c.benchmark_group("invert");
    group.sample_size(10).measurement_time(Duration::from_secs(3));
    for (name, targets) in [("in_gamut", &inside), ("out_of_gamut", &outside)] {
        group.throughput(Throughput::Elements(targets.len() as u64));
        group.bench_function(name, |b| {
            b.iter(|| {
                let mut acc = 0.0;
                for &t in targets {
                    acc += sep.invert(black_box(RelativeLab::new(t)), None).x[3];
                }
                acc
            })
        });
    }
    group.finish();
}

criterion_group!(benches, forward_model, separator_build, table_build, invert);
criterion_main!(benches);
