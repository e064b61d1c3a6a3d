//! Speed of the built-in press model: CMYK → CIELAB evaluations per second
//! (one core), and of its analytic Jacobian. Target: ≥ 5 million Lab
//! evaluations per second per core.

use criterion::{Criterion, Throughput, criterion_group, criterion_main};
use platesmith::ink::Cmyk;
use platesmith::press::builtin;
use std::hint::black_box;

/// 4096 builds spread over the ink space (a fixed low-discrepancy sequence).
fn inks() -> Vec<Cmyk> {
    (0..4096)
        .map(|i| {
            let f = |a: f64| (i as f64 * a).fract();
            Cmyk::new(f(0.618_033_988_7), f(0.754_877_666_2), f(0.569_840_290_9), f(0.441_487_542_1))
        })
        .collect()
}

fn bench(c: &mut Criterion) {
    let inks = inks();
    let mut group = c.benchmark_group("press_model");
    group.throughput(Throughput::Elements(inks.len() as u64));
    for name in builtin::names() {
        let condition = builtin::by_name(name).expect("built-in");
        let model = condition.model.clone();
        group.bench_function(format!("lab/{name}"), |b| {
            b.iter(|| {
                let mut acc = 0.0;
                for &ink in &inks {
                    acc += model.lab(black_box(ink)).l;
                }
                acc
            })
        });
        group.bench_function(format!("xyz/{name}"), |b| {
            b.iter(|| {
                let mut acc = 0.0;
                for &ink in &inks {
                    acc += model.xyz(black_box(ink)).y;
                }
                acc
            })
        });
        group.bench_function(format!("lab_jacobian/{name}"), |b| {
            b.iter(|| {
                let mut acc = 0.0;
                for &ink in &inks {
                    acc += model.lab_jacobian(black_box(ink)).1[0][3];
                }
                acc
            })
        });
    }
    group.finish();
}

criterion_group!(benches, bench);
criterion_main!(benches);
