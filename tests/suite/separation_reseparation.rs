//! Re-separation of CMYK from a source printing condition to a target one.
//!
//! Ground truth is the forward press models (the source model says what the
//! incoming file prints, the target model what the re-separated file
//! prints) and the ICC.1:2022 definitions of the intents (§6.2.2: the
//! colorimetric intents reproduce media-relative or absolute colour).

use platesmith::colour::ciede2000;
use platesmith::ink::Cmyk;
use platesmith::press::builtin::coated_offset;
use platesmith::press::{MediaWhite, NeugebauerModel, NeugebauerParams, PrintingCondition};
use platesmith::separation::{Intent, ReseparationTable, SeparationSettings, Separator};
use std::sync::{Arc, OnceLock};

use crate::rng::SplitMix64 as Rng;

fn separator(intent: Intent, tac: Option<f64>, black_max: Option<f64>) -> Separator {
    let c = coated_offset();
    let mut s = SeparationSettings::for_condition(&c);
    s.intent = intent;
    if let Some(t) = tac {
        s.tac = t;
    }
    if let Some(k) = black_max {
        s.black.black_max = k;
    }
    Separator::new(c, s).unwrap()
}

fn relative() -> &'static Separator {
    static S: OnceLock<Separator> = OnceLock::new();
    S.get_or_init(|| separator(Intent::Relative, None, None))
}

/// coated-offset re-separated to itself (relative colorimetric), pure black kept.
fn identity_table() -> &'static ReseparationTable {
    static T: OnceLock<ReseparationTable> = OnceLock::new();
    T.get_or_init(|| ReseparationTable::build(relative(), &coated_offset(), true, 11).unwrap())
}

/// Media-relative CIELAB of a build printed under a condition (ICC.1:2022 §6.3.2.2).
fn printed(condition: &PrintingCondition, ink: Cmyk) -> platesmith::colour::Lab {
    MediaWhite::new(condition.model.paper_xyz()).relative_lab(condition.model.xyz(ink))
}

/// TEST-ONLY printing condition: the primaries of coated-offset (read off its
/// model at the 16 solid and overprint corners, where tone value increase
/// is zero) with another tone value increase at 50 % on every ink. Invented
/// for the test, not a characterised condition.
fn coated_with_tvi(tvi50: f64) -> PrintingCondition {
    let base = coated_offset();
    let primaries = std::array::from_fn(|i| {
        let bit = |b: usize| ((i >> b) & 1) as f64;
        base.model.xyz(Cmyk::new(bit(0), bit(1), bit(2), bit(3)))
    });
    // n = 2 as in the built-in condition.
    let model = NeugebauerModel::new(NeugebauerParams {
        primaries,
        n: 2.0,
        tvi50: [tvi50; 4],
    });
    PrintingCondition {
        name: format!("test-only-tvi-{}", (tvi50 * 100.0).round()),
        description: "test-only: coated-offset primaries with another dot gain".into(),
        model: Arc::new(model),
        ..base
    }
}

/// Random builds within the limits, by rejection (uniform in the feasible set).
fn in_limit_builds(rng: &mut Rng, count: usize, tac: f64, black_max: f64) -> Vec<Cmyk> {
    let mut out = Vec::with_capacity(count);
    while out.len() < count {
        let x = Cmyk::new(rng.next_f64(), rng.next_f64(), rng.next_f64(), rng.next_f64() * black_max);
        if x.total() <= tac {
            out.push(x);
        }
    }
    out
}

/// Source = target condition under relative colorimetry: every in-limit
/// build is printable, so the re-separated build must print the colour the
/// incoming build prints (ICC.1 media-relative colorimetry; ground truth the
/// forward model). The build itself may change (the target's black
/// generation decides it), the colour may not.
#[test]
fn reseparation_to_the_same_condition_keeps_the_printed_colour() {
    let sep = relative();
    let table = identity_table();
    let condition = coated_offset();
    let (tac, kmax) = (sep.settings().tac, sep.settings().black.black_max);
    let mut rng = Rng(11);
    let mut errors: Vec<f64> = in_limit_builds(&mut rng, 5000, tac, kmax)
        .into_iter()
        .map(|x| ciede2000(printed(&condition, x), sep.printed_relative(table.lookup(x)).lab()))
        .collect();
    errors.sort_by(f64::total_cmp);
    let mean = errors.iter().sum::<f64>() / errors.len() as f64;
    let p99 = errors[(errors.len() as f64 * 0.99) as usize];
    let max = errors[errors.len() - 1];
    eprintln!("re-separation to the same condition (grid 11): mean ΔE2000 {mean:.3}, p99 {p99:.3}, max {max:.3}");
    assert!(mean <= 0.5, "mean {mean}");
}

/// Pure black stays black only, its curve is monotone and prints the L* of
/// the source black (same condition: the curve is the identity up to the
/// target's maximum black).
#[test]
fn pure_black_stays_black_only() {
    let sep = relative();
    let table = identity_table();
    let curve = table.black_curve().expect("pure black is kept");
    assert!(curve.windows(2).all(|w| w[0] <= w[1]), "black curve is not monotone");
    let kmax = sep.settings().black.black_max;
    assert!(*curve.last().unwrap() as f64 / 65535.0 <= kmax + 1e-9);

    let input: Vec<u8> = (0..=255u8).flat_map(|k| [0, 0, 0, k]).collect();
    let mut out = vec![0u8; input.len()];
    table.apply_cmyk8(&input, &mut out, 16);
    let mut prev = 0u8;
    for (k, px) in out.chunks_exact(4).enumerate() {
        assert_eq!(&px[..3], &[0, 0, 0], "source K {k}: {px:?} is not black only");
        assert!(px[3] >= prev, "black decreases at source K {k}");
        prev = px[3];
        let source_k = k as f64 / 255.0;
        if source_k <= kmax - 0.01 {
            // Same condition: the same black within 8-bit rounding.
            assert!((px[3] as f64 - k as f64).abs() <= 1.0, "source K {k} -> {}", px[3]);
        }
    }
    let input16: Vec<u16> = (0..=1000u32).flat_map(|i| [0, 0, 0, (i * 65535 / 1000) as u16]).collect();
    let mut out16 = vec![0u16; input16.len()];
    table.apply_cmyk16(&input16, &mut out16, 100);
    let mut prev = 0u16;
    for px in out16.chunks_exact(4) {
        assert_eq!(&px[..3], &[0, 0, 0]);
        assert!(px[3] >= prev);
        prev = px[3];
    }
    // Without the option, a solid source black under relative colorimetry is
    // matched in colour by the target's black generation, with other inks.
    let four_colour = ReseparationTable::build(sep, &coated_offset(), false, 5).unwrap();
    let build = four_colour.lookup(Cmyk::new(0.0, 0.0, 0.0, 1.0));
    assert!(build.c + build.m + build.y > 0.05, "without keep-pure-black: {build:?}");
}

/// Another source condition: its black-only tones map to target black of the
/// same media-relative L* (ground truth the two forward models).
#[test]
fn black_curve_matches_source_lightness() {
    let sep = relative();
    let source = coated_with_tvi(0.24);
    let table = ReseparationTable::build(sep, &source, true, 5).unwrap();
    let kmax = sep.settings().black.black_max;
    let target_darkest = sep.printed_relative(Cmyk::new(0.0, 0.0, 0.0, kmax)).lab().l;
    let mut worst = 0.0f64;
    for i in 0..=50 {
        let k = i as f64 / 50.0;
        let source_l = printed(&source, Cmyk::new(0.0, 0.0, 0.0, k)).l;
        let out = table.lookup(Cmyk::new(0.0, 0.0, 0.0, k));
        assert_eq!([out.c, out.m, out.y], [0.0, 0.0, 0.0]);
        let l = sep.printed_relative(out).lab().l;
        if source_l >= target_darkest + 0.05 {
            worst = worst.max((l - source_l).abs());
            assert!((l - source_l).abs() <= 0.05, "source K {k}: L* {source_l} vs {l}");
        } else {
            assert!(
                (out.k - kmax).abs() <= 1.0 / 65535.0,
                "source K {k} darker than target black: {out:?}"
            );
        }
    }
    eprintln!("black curve: largest L* difference {worst:.4}");
}

/// An 8-bit CMYK pixel within the ink limit `tac` and maximum black `kmax`
/// (also used by `separation_engine`).
pub(crate) fn check_8bit(px: &[u8], tac: f64, kmax: f64, what: &str) {
    let total: u32 = px.iter().map(|&v| v as u32).sum();
    // The limits hold after 8-bit rounding too: the issue allowed TAC + 1 %,
    // a hard limit allows nothing over.
    assert!(
        total <= (tac * 255.0 + 1e-9).floor() as u32,
        "{what}: 8-bit total {total} over {tac}"
    );
    assert!(
        px[3] as u32 <= (kmax * 255.0 + 1e-9).floor() as u32,
        "{what}: 8-bit black {}",
        px[3]
    );
}

/// The target's ink limit and maximum black hold at every node and for
/// 100 000 random pixels (a tenth of them pure black), for each intent.
#[test]
fn target_limits_hold_for_every_node_and_pixel() {
    let mut rng = Rng(12);
    for (intent, tac, kmax) in [
        (Intent::Perceptual, 2.8, 0.9),
        (Intent::Relative, 3.0, 0.85),
        (Intent::Absolute, 2.6, 1.0),
    ] {
        let sep = separator(intent, Some(tac), Some(kmax));
        let table = ReseparationTable::build(&sep, &coated_with_tvi(0.2), true, 9).unwrap();
        let mut nodes = 0;
        for b in table.node_builds() {
            nodes += 1;
            assert!(
                b.is_finite() && b.to_array().iter().all(|v| (0.0..=1.0).contains(v)),
                "{intent:?}: {b:?}"
            );
            assert!(b.total() <= tac + 1e-9, "{intent:?}: node {b:?} over {tac}");
            assert!(b.k <= kmax + 1e-9, "{intent:?}: node {b:?} over black {kmax}");
        }
        assert_eq!(nodes, 9usize.pow(4));
        let count = if intent == Intent::Perceptual { 100_000 } else { 20_000 };
        let input: Vec<u8> = (0..count)
            .flat_map(|_| {
                let pure_black = rng.next_f64() < 0.1;
                let mut px = [0u8; 4];
                for (ch, v) in px.iter_mut().enumerate() {
                    *v = if pure_black && ch < 3 { 0 } else { (rng.next_f64() * 256.0) as u8 };
                }
                px
            })
            .collect();
        let mut out = vec![0u8; input.len()];
        table.apply_cmyk8(&input, &mut out, 500);
        for px in out.chunks_exact(4) {
            check_8bit(px, tac, kmax, &format!("{intent:?}"));
        }
    }
}

/// A 400 % source build (every plate solid) re-separated for a 300 % target
/// ends at or under 300 %, in every path.
#[test]
fn full_ink_source_fits_a_lower_ink_limit() {
    let sep = separator(Intent::Relative, Some(3.0), None);
    let table = ReseparationTable::build(&sep, &coated_offset(), true, 5).unwrap();
    let b = table.lookup(Cmyk::new(1.0, 1.0, 1.0, 1.0));
    assert!(b.total() <= 3.0 + 1e-9, "{b:?}");
    let mut out = [0u8; 4];
    table.apply_cmyk8(&[255; 4], &mut out, 1);
    check_8bit(&out, 3.0, sep.settings().black.black_max, "8-bit solid");
    let mut out16 = [0u16; 4];
    table.apply_cmyk16(&[65535; 4], &mut out16, 1);
    let total: u32 = out16.iter().map(|&v| v as u32).sum();
    assert!(total as f64 / 65535.0 <= 3.0 + 1e-9, "16-bit total {total}");
}

/// The table and its output do not depend on the thread count.
#[test]
fn reseparation_is_independent_of_thread_count() {
    let sep = separator(Intent::Perceptual, None, None);
    let source = coated_with_tvi(0.2);
    let build = |threads: usize| {
        let pool = rayon::ThreadPoolBuilder::new().num_threads(threads).build().unwrap();
        pool.install(|| {
            let t = ReseparationTable::build(&sep, &source, true, 7).unwrap();
            let input: Vec<u8> = (0..40_000u32).map(|i| (i.wrapping_mul(2654435761) >> 24) as u8).collect();
            let mut out = vec![0u8; input.len()];
            t.apply_cmyk8(&input, &mut out, 100);
            (t, out)
        })
    };
    let (a, b) = (build(1), build(2));
    assert!(a.0 == b.0, "tables differ between 1 and 2 threads");
    assert_eq!(a.1, b.1);
}

/// A source press with more dot gain prints a 50 % tint darker than the
/// target does, so the target needs more than 50 % of that ink to print the
/// same colour; with less dot gain, less. Ground truth: the two forward
/// models (Yule–Nielsen Neugebauer with the tone value increase of
/// ISO 12647-2 form, a + 4·TVI₅₀·a·(1 − a)); the re-separated build must also
/// print the source colour.
#[test]
fn source_dot_gain_moves_the_builds_the_expected_way() {
    let sep = relative();
    let tints = [
        ("cyan", Cmyk::new(0.5, 0.0, 0.0, 0.0), 0),
        ("magenta", Cmyk::new(0.0, 0.5, 0.0, 0.0), 1),
        ("yellow", Cmyk::new(0.0, 0.0, 0.5, 0.0), 2),
        ("black", Cmyk::new(0.0, 0.0, 0.0, 0.5), 3),
    ];
    for (tvi, more) in [(0.24, true), (0.06, false)] {
        let source = coated_with_tvi(tvi);
        let table = ReseparationTable::build(sep, &source, true, 9).unwrap();
        for (name, tint, ch) in tints {
            let out = table.lookup(tint);
            let v = out.to_array()[ch];
            let de = ciede2000(printed(&source, tint), sep.printed_relative(out).lab());
            eprintln!(
                "source TVI {:.0} %: {name} 50 % -> {:.1} % (ΔE2000 {de:.2})",
                tvi * 100.0,
                v * 100.0
            );
            if more {
                assert!(v > 0.53, "TVI {tvi}: {name} 50 % -> {out:?}");
            } else {
                assert!(v < 0.47, "TVI {tvi}: {name} 50 % -> {out:?}");
            }
            // The re-separated build prints the source colour. Measured 1.19
            // for magenta at a source TVI of 24 %: the coated-offset model
            // carries a lattice correction fitted to FOGRA39L over its tone
            // curves, and this source press moves them far from that data.
            assert!(de <= 1.25, "TVI {tvi}: {name}: ΔE {de}");
        }
        // A three-colour midtone gray needs more (less) total ink as well.
        let gray = Cmyk::new(0.4, 0.3, 0.3, 0.0);
        let same = identity_table().lookup(gray);
        let out = table.lookup(gray);
        let de = ciede2000(printed(&source, gray), sep.printed_relative(out).lab());
        assert!(de <= 1.0, "TVI {tvi}: gray ΔE {de}");
        if more {
            assert!(out.total() > same.total() + 0.05, "TVI {tvi}: gray {out:?} vs {same:?}");
        } else {
            assert!(out.total() < same.total() - 0.05, "TVI {tvi}: gray {out:?} vs {same:?}");
        }
    }
}

/// Out-of-range grid sizes are a usage error, not a panic.
#[test]
fn grid_outside_the_allowed_range_is_refused() {
    for grid in [0, 4, 34] {
        let err = ReseparationTable::build(relative(), &coated_offset(), true, grid).unwrap_err();
        assert!(err.to_string().contains("5–33"), "{err}");
    }
}

/// The 16-bit path and the fractional lookup interpolate the same table.
#[test]
fn sixteen_bit_path_agrees_with_lookup() {
    let table = identity_table();
    let mut rng = Rng(13);
    let input: Vec<u16> = (0..4000 * 4).map(|_| (rng.next_f64() * 65536.0) as u16).collect();
    let mut out = vec![0u16; input.len()];
    table.apply_cmyk16(&input, &mut out, 64);
    for (px, got) in input.chunks_exact(4).zip(out.chunks_exact(4)) {
        let want = table.lookup(Cmyk::from_array([px[0], px[1], px[2], px[3]].map(|v| v as f64 / 65535.0)));
        for (g, w) in got.iter().zip(want.to_array()) {
            assert!((*g as f64 - w * 65535.0).abs() <= 2.0, "{px:?}: {got:?} vs {want:?}");
        }
    }
}

/// Builds with a trace of colour beside pure black (C, M, Y ≤ 6 %) keep
/// their printed colour too: the black-only path is for exact pure black and
/// does not bend the cells beside it (ground truth the forward model).
#[test]
fn near_pure_black_builds_keep_their_colour() {
    let sep = relative();
    let table = identity_table();
    let condition = coated_offset();
    let mut rng = Rng(14);
    let errors: Vec<f64> = (0..5000)
        .map(|_| {
            let x = Cmyk::new(
                rng.next_f64() * 0.06,
                rng.next_f64() * 0.06,
                rng.next_f64() * 0.06,
                rng.next_f64() * 0.95,
            );
            ciede2000(printed(&condition, x), sep.printed_relative(table.lookup(x)).lab())
        })
        .collect();
    let mean = errors.iter().sum::<f64>() / errors.len() as f64;
    let max = errors.iter().cloned().fold(0.0, f64::max);
    eprintln!("near pure black (grid 11): mean ΔE2000 {mean:.3}, max {max:.3}");
    assert!(mean <= 0.6, "mean {mean}");
}
