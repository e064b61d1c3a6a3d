//! The per-picture step of a picture's separation table against the full
//! build (sRGB on coated offset, perceptual from the picture), on four
//! pictures: the demo (examples/harbour-lights.png), the demo with half and
//! with a quarter of its chroma (the latter inside the press gamut) and a
//! saturated one (the sRGB cube's edges). For each: the wall and processor
//! time of the full build, of the picture's gamut and map, and of the step
//! from the picture-independent base (all on the global rayon pool), the
//! nodes the step solved, and node error against the full build (max and
//! p99 ink in %, CIEDE2000 of the printed colour). Then the step a job runs,
//! for the cells the picture's pixels fall in only: on the complete base
//! (warm) and from an empty base (cold, the base solved on where the cells
//! need it), each checked bit for bit against the whole-grid step at every
//! node those cells read. Figures go to docs/PERFORMANCE.md.
//!
//! `cargo run --release --example picture_step [grid]`

use platesmith::colour::{EncodedRgb, RgbSpace, ciede2000};
use platesmith::ink::Cmyk;
use platesmith::job::{base_for_source, distinct_of, exact_table_for_picture, picture_gamut};
use platesmith::press::builtin::coated_offset;
use platesmith::raster::Samples;
use platesmith::separation::{IntentLab, PictureCells, SeparationSettings, SeparationTable, Separator, TableBase};
use platesmith::source::RgbSource;
use std::time::Instant;

#[path = "../benches/support/picture_step_pictures.rs"]
mod pictures;
use pictures::{demo, toward_gray};

fn pictures() -> Vec<(&'static str, Vec<u8>)> {
    let demo = demo();
    let (muted, inside) = (toward_gray(&demo, 2), toward_gray(&demo, 1));
    let mut saturated = Vec::new();
    for t in 0..=255u8 {
        for c in [
            [255, t, 0],
            [255 - t, 255, 0],
            [0, 255, t],
            [0, 255 - t, 255],
            [t, 0, 255],
            [255, 0, 255 - t],
        ] {
            saturated.extend(c);
        }
    }
    vec![
        ("harbour-lights", demo),
        ("muted (half its chroma)", muted),
        ("inside the gamut (a quarter of its chroma)", inside),
        ("saturated", saturated),
    ]
}

/// CPU time of every thread of this process so far (ns), from /proc.
fn cpu_ns() -> u64 {
    std::fs::read_dir("/proc/self/task")
        .map(|d| {
            d.flatten()
                .filter_map(|t| std::fs::read_to_string(t.path().join("schedstat")).ok())
                .filter_map(|s| s.split_whitespace().next()?.parse::<u64>().ok())
                .sum()
        })
        .unwrap_or(0)
}

fn percentile(mut v: Vec<f64>, p: f64) -> f64 {
    v.sort_by(f64::total_cmp);
    v[((v.len() - 1) as f64 * p).round() as usize]
}

fn main() {
    let grid: usize = std::env::args().nth(1).map(|g| g.parse().expect("a grid")).unwrap_or(33);
    let condition = coated_offset();
    let mut settings = SeparationSettings::for_condition(&condition);
    settings.table_grid = grid;
    let sep = Separator::new(condition, settings).expect("valid");
    let source = RgbSource::Named(RgbSpace::Srgb);
    let (c0, t) = (cpu_ns(), Instant::now());
    let base = base_for_source(&sep, &source).expect("a perceptual separator");
    println!(
        "grid {grid}: base {:.0} ms (cpu {:.0} ms); base bytes {:.1} MB",
        t.elapsed().as_secs_f64() * 1e3,
        (cpu_ns() - c0) as f64 / 1e6,
        base.to_bytes().len() as f64 / 1e6
    );
    for (name, rgb) in pictures() {
        let samples = Samples::U8(rgb);
        let (c0, t) = (cpu_ns(), Instant::now());
        let full = exact_table_for_picture(&sep, &source, &samples);
        let (full_ms, full_cpu) = (t.elapsed().as_secs_f64() * 1e3, (cpu_ns() - c0) as f64 / 1e6);
        let (c0, t) = (cpu_ns(), Instant::now());
        let mapping = sep.picture_mapping(&picture_gamut(&source, &samples));
        let (gamut_ms, gamut_cpu) = (t.elapsed().as_secs_f64() * 1e3, (cpu_ns() - c0) as f64 / 1e6);
        let (c0, t) = (cpu_ns(), Instant::now());
        let (step, counts): (SeparationTable, _) = base.table_for(&sep, &mapping).expect("a perceptual mapping");
        let (step_ms, step_cpu) = (t.elapsed().as_secs_f64() * 1e3, (cpu_ns() - c0) as f64 / 1e6);
        let (mut ink, mut de) = (Vec::new(), Vec::new());
        for (a, b) in full.nodes().iter().zip(step.nodes()) {
            let d = (0..4).map(|c| (a[c] as f64 - b[c] as f64).abs()).fold(0.0, f64::max);
            ink.push(d / 65535.0 * 100.0);
            let printed = |x: &[u16; 4]| sep.printed_relative(Cmyk::from_array(x.map(|v| v as f64 / 65535.0))).lab();
            de.push(ciede2000(printed(a), printed(b)));
        }
        let over1 = ink.iter().filter(|&&v| v > 1.0).count();
        println!(
            "{name}: full build {full_ms:.0} ms (cpu {full_cpu:.0}); picture gamut and map {gamut_ms:.1} ms (cpu {gamut_cpu:.1}); \
             step {step_ms:.1} ms (cpu {step_cpu:.1}; {} nodes solved, {} kept); \
             ink max {:.3} % p99 {:.4} % ({over1} nodes over 1 %); ΔE2000 max {:.4} p99 {:.5}",
            counts.solved,
            counts.kept,
            percentile(ink.clone(), 1.0),
            percentile(ink, 0.99),
            percentile(de.clone(), 1.0),
            percentile(de, 0.99),
        );
        // The step a job runs: the picture's cells only.
        // The node colours as `base_for_source` takes them.
        let labs = source.node_labs(grid);
        let node_lab = |EncodedRgb(c): EncodedRgb| {
            let idx = |v: f64| (v * (grid - 1) as f64).round() as usize;
            IntentLab::new(labs[(idx(c[0]) * grid + idx(c[1])) * grid + idx(c[2])])
        };
        let cells = PictureCells::of_colours(grid, &distinct_of(&samples));
        let needed = cells.corners();
        for (what, mut from) in [("warm", base.clone()), ("cold", TableBase::empty(&sep).expect("perceptual"))] {
            let (c0, t) = (cpu_ns(), Instant::now());
            let (table, counts, _) = from.finish(&sep, &mapping, &node_lab, &cells).expect("a perceptual mapping");
            let (ms, cpu) = (t.elapsed().as_secs_f64() * 1e3, (cpu_ns() - c0) as f64 / 1e6);
            let (mut differ, mut ink_max, mut de_max) = (0, 0.0_f64, 0.0_f64);
            for i in (0..needed.len()).filter(|&i| needed[i]) {
                let (a, b) = (table.nodes()[i], step.nodes()[i]);
                if a != b {
                    differ += 1;
                    let d = (0..4).map(|c| (a[c] as f64 - b[c] as f64).abs()).fold(0.0, f64::max);
                    ink_max = ink_max.max(d / 65535.0 * 100.0);
                    let printed = |x: &[u16; 4]| sep.printed_relative(Cmyk::from_array(x.map(|v| v as f64 / 65535.0))).lab();
                    de_max = de_max.max(ciede2000(printed(&a), printed(&b)));
                }
            }
            println!(
                "  {what} step on its {} cells: {ms:.1} ms (cpu {cpu:.1}); base solved {}, picture solved {}, kept {}, \
                 skipped {}; of the {} nodes its pixels read, {differ} differ from the whole-grid step \
                 (ink max {ink_max:.3} %, ΔE2000 max {de_max:.4})",
                cells.count(),
                counts.base_solved,
                counts.solved,
                counts.kept,
                counts.skipped,
                needed.iter().filter(|&&x| x).count(),
            );
        }
    }
}
