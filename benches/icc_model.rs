//! Speed of the ICC-sampled press model (target: ≥ 10 million lookups/s per
//! core) and of writing an output profile (17⁴ AToB + 3 × 33³ BToA + 33³ gamut).

use criterion::{Criterion, Throughput, criterion_group, criterion_main};
use platesmith::colour::Lab;
use platesmith::icc::{IccVersion, OutputProfileSpec, build_output_profile, default_description};
use platesmith::ink::Cmyk;
use platesmith::press::builtin::coated_offset;
use platesmith::press::icc_model::{IccModelOptions, IccPressModel};
use platesmith::press::{MediaWhite, PressModel};
use std::hint::black_box;
use std::path::Path;

/// A cheap stand-in for a separation (Lab → CMY by lightness and opponent
/// axes), so the profile benchmark measures the writer, not an inversion.
fn cheap_b2a(lab: Lab) -> Cmyk {
    let d = 1.0 - lab.l / 100.0;
    Cmyk::new(d - lab.a / 400.0, d + lab.a / 400.0 - lab.b / 800.0, d + lab.b / 300.0, 0.0).clamped()
}

fn spec<'a>(
    a2b: &'a (dyn Fn(Cmyk) -> Lab + Sync),
    b2a: &'a (dyn Fn(Lab) -> Cmyk + Sync),
    gamut: &'a (dyn Fn(Lab) -> f64 + Sync),
    white: platesmith::colour::Xyz,
) -> OutputProfileSpec<'a> {
    OutputProfileSpec {
        description: default_description("coated-offset"),
        copyright: "benchmark".into(),
        version: IccVersion::V4,
        media_white: white,
        a2b,
        a2b_perceptual: None,
        b2a: [b2a, b2a, b2a],
        gamut,
        a2b_grid: 17,
        b2a_grid: 33,
        float_b2d: None,
    }
}

fn benches(c: &mut Criterion) {
    let model = coated_offset().model;
    let media = MediaWhite::new(model.paper_xyz());
    let a2b = |ink: Cmyk| media.relative_lab(model.xyz(ink));
    let gamut = |_: Lab| 0.0;
    let s = spec(&a2b, &cheap_b2a, &gamut, model.paper_xyz());
    let bytes = build_output_profile(&s).expect("profile");

    let mut group = c.benchmark_group("icc_profile");
    group.sample_size(10);
    group.bench_function("build 17^4 + 3x33^3 + 33^3, v4", |b| {
        b.iter(|| build_output_profile(black_box(&s)).unwrap())
    });
    group.bench_function("load as IccPressModel, 21^4 grid", |b| {
        b.iter(|| IccPressModel::from_bytes(black_box(&bytes), Path::new("bench.icc"), IccModelOptions::default()).unwrap())
    });
    group.finish();

    let icc = IccPressModel::from_bytes(&bytes, Path::new("bench.icc"), IccModelOptions::default()).unwrap();
    let mut state = 0x2545_f491_4f6c_dd1d_u64;
    let points: Vec<Cmyk> = (0..4096)
        .map(|_| {
            let mut unit = || {
                state ^= state << 13;
                state ^= state >> 7;
                state ^= state << 17;
                (state >> 11) as f64 / (1u64 << 53) as f64
            };
            Cmyk::new(unit(), unit(), unit(), unit())
        })
        .collect();
    let mut group = c.benchmark_group("icc_model");
    group.throughput(Throughput::Elements(points.len() as u64));
    group.bench_function("lab, one thread", |b| {
        b.iter(|| {
            let mut sum = 0.0;
            for &p in &points {
                sum += icc.lab(black_box(p)).l;
            }
            sum
        })
    });
    group.bench_function("xyz, one thread", |b| {
        b.iter(|| {
            let mut sum = 0.0;
            for &p in &points {
                sum += icc.xyz(black_box(p)).y;
            }
            sum
        })
    });
    group.finish();
}

criterion_group!(icc, benches);
criterion_main!(icc);
