//! The separation engine against its requirements.
//!
//! Ground truth here is the forward press model itself (the inversion must
//! reproduce what the model prints), the ICC.1 definitions of the intents,
//! and rules of subtractive mixing marked "common practice".

use platesmith::colour::{EncodedRgb, Lab, RgbSpace, ciede2000};
use platesmith::ink::Cmyk;
use platesmith::press::builtin::coated_offset;
use platesmith::separation::{BlackGeneration, Intent, RgbGamut, SeparationSettings, SeparationTable, Separator};
use platesmith::separation::{IntentLab, RelativeLab};
use std::sync::OnceLock;

use crate::rng::SplitMix64 as Rng;

fn separator(intent: Intent) -> Separator {
    let c = coated_offset();
    let mut s = SeparationSettings::for_condition(&c);
    s.intent = intent;
    Separator::new(c, s).unwrap()
}

fn relative() -> &'static Separator {
    static S: OnceLock<Separator> = OnceLock::new();
    S.get_or_init(|| separator(Intent::Relative))
}

fn relative_table() -> &'static SeparationTable {
    static T: OnceLock<SeparationTable> = OnceLock::new();
    T.get_or_init(|| {
        let sep = relative();
        let conv = RgbSpace::Srgb.converter();
        let gamut = RgbGamut(conv);
        let mapping = sep.source_mapping(&gamut);
        SeparationTable::build(sep, &mapping, &|rgb| IntentLab::new(conv.to_lab(rgb)))
    })
}

fn percentile(mut v: Vec<f64>, p: f64) -> f64 {
    v.sort_by(f64::total_cmp);
    v[((v.len() - 1) as f64 * p).round() as usize]
}

/// Targets printed by random in-limit builds are in gamut by construction;
/// the inversion must find builds that print them again.
#[test]
fn in_gamut_targets_are_reproduced() {
    let (mean, p99, max) = round_trip(relative(), 1, 2000);
    eprintln!("in-gamut inversion: mean ΔE2000 {mean:.4}, p99 {p99:.4}, max {max:.4}");
    assert!(mean <= 0.3, "mean {mean}");
    assert!(p99 <= 1.0, "p99 {p99}");
}

/// ΔE2000 (mean, p99, max) between the colours `count` random in-limit
/// builds print (seeded by `seed`, under the separator's ink limit and
/// maximum black) and what the builds the inversion finds for them print.
fn round_trip(sep: &Separator, seed: u64, count: usize) -> (f64, f64, f64) {
    let (tac, kmax) = (sep.settings().tac, sep.settings().black.black_max);
    let mut rng = Rng(seed);
    let mut errors = Vec::new();
    while errors.len() < count {
        let mut x = Cmyk::new(rng.next_f64(), rng.next_f64(), rng.next_f64(), rng.next_f64() * kmax);
        if x.total() > tac {
            let s = tac / x.total();
            x = Cmyk::new(x.c * s, x.m * s, x.y * s, x.k * s);
        }
        let target = sep.printed_relative(x).lab();
        let s = sep.invert(RelativeLab::new(target), None);
        errors.push(ciede2000(target, sep.printed_relative(Cmyk::from_array(s.x)).lab()));
    }
    let mean = errors.iter().sum::<f64>() / errors.len() as f64;
    (mean, percentile(errors.clone(), 0.99), percentile(errors, 1.0))
}

/// The table against the direct solve, 10 000 random sRGB colours, for the
/// relative and the perceptual intent: mean ΔE2000 ≤ 0.5, max ≤ 2 (the
/// separation-engine requirement).
#[test]
fn table_agrees_with_direct_separation() {
    let (mean, _p99, max) = table_agrees(relative(), relative_table(), "relative");
    assert!(mean <= 0.5 && max <= 2.0, "relative: mean {mean} max {max}");
    let perceptual = separator(Intent::Perceptual);
    let (mean, p99, max) = table_agrees(&perceptual, &table_for(Intent::Perceptual, false), "perceptual");
    assert!(mean <= 0.5 && max <= 2.0, "perceptual: mean {mean} p99 {p99} max {max}");
}

fn table_agrees(sep: &Separator, table: &SeparationTable, label: &str) -> (f64, f64, f64) {
    let conv = RgbSpace::Srgb.converter();
    let gamut = RgbGamut(conv);
    let mapping = sep.source_mapping(&gamut);
    let mut rng = Rng(2);
    let mut errors = Vec::new();
    for _ in 0..10_000 {
        let rgb = [rng.next_f64(), rng.next_f64(), rng.next_f64()];
        let direct = sep.invert(sep.intent_target(IntentLab::new(conv.to_lab(EncodedRgb(rgb))), &mapping), None);
        let via_table = table.lookup(EncodedRgb(rgb));
        errors.push(ciede2000(
            sep.printed_relative(Cmyk::from_array(direct.x)).lab(),
            sep.printed_relative(via_table).lab(),
        ));
    }
    let mean = errors.iter().sum::<f64>() / errors.len() as f64;
    let p99 = percentile(errors.clone(), 0.99);
    let max = percentile(errors, 1.0);
    eprintln!("{label}: table vs direct: mean ΔE2000 {mean:.4}, p99 {p99:.4}, max {max:.4}");
    (mean, p99, max)
}

fn check_limits(cmyk: Cmyk, tac: f64, kmax: f64, what: &str) {
    assert!(cmyk.is_finite(), "{what}: NaN in {cmyk:?}");
    for v in cmyk.to_array() {
        assert!((0.0..=1.0).contains(&v), "{what}: channel out of range {cmyk:?}");
    }
    assert!(cmyk.total() <= tac + 1e-9, "{what}: total {} over {tac}", cmyk.total());
    assert!(cmyk.k <= kmax + 1e-9, "{what}: black {} over {kmax}", cmyk.k);
}

/// Every node of a 65³ table and 100 000 random colours through smaller
/// tables under random valid settings respect the ink limit and maximum black.
#[test]
fn limits_hold_for_every_node_and_pixel() {
    let conv = RgbSpace::Srgb.converter();
    let gamut = RgbGamut(conv);
    let mut rng = Rng(3);
    for round in 0..4 {
        let c = coated_offset();
        let mut s = SeparationSettings::for_condition(&c);
        s.intent = [Intent::Perceptual, Intent::Relative, Intent::Absolute, Intent::Relative][round];
        s.bpc = round == 3;
        s.tac = 2.2 + rng.next_f64() * 1.6;
        s.black = BlackGeneration {
            gcr: rng.next_f64(),
            black_start: rng.next_f64() * 0.6,
            black_max: 0.6 + rng.next_f64() * 0.4,
            shape: 0.5 + rng.next_f64() * 2.5,
            uca: rng.next_f64() * 0.5,
        };
        s.table_grid = if round == 0 { 65 } else { 17 };
        let sep = Separator::new(c, s.clone()).unwrap();
        let mapping = sep.source_mapping(&gamut);
        let table = SeparationTable::build(&sep, &mapping, &|rgb| IntentLab::new(conv.to_lab(rgb)));
        table_holds_limits(&table, s.table_grid, s.tac, s.black.black_max, &mut rng, &format!("{s:?}"));
    }
}

/// Every node of the n³ `table` and 25 000 random pixels through it (drawn
/// from `rng`) respect the ink limit `tac` and maximum black `kmax`, the
/// pixels after 8-bit rounding too; `what` names the table in a failure.
fn table_holds_limits(table: &SeparationTable, n: usize, tac: f64, kmax: f64, rng: &mut Rng, what: &str) {
    for i in 0..n * n * n {
        let rgb = [(i / (n * n)) as f64, ((i / n) % n) as f64, (i % n) as f64].map(|v| v / (n - 1) as f64);
        check_limits(table.lookup(EncodedRgb(rgb)), tac, kmax, &format!("{what}: node {rgb:?}"));
    }
    let pixels: Vec<u8> = (0..25_000 * 3).map(|_| (rng.next_f64() * 256.0) as u8).collect();
    let mut out = vec![0u8; 25_000 * 4];
    table.apply_rgb8(&pixels, &mut out, 1000);
    for px in out.chunks_exact(4) {
        // No code over the limits after 8-bit rounding either.
        crate::separation_reseparation::check_8bit(px, tac, kmax, what);
    }
}

/// The round trip and the ink limit on every built-in condition, each with
/// its own job defaults (ink limit, black generation): builds printed by
/// random in-limit builds are found again (relative colorimetric; mean
/// ΔE2000 ≤ 0.3, p99 ≤ 1.0 as on coated offset above), and every node of
/// a default perceptual table from sRGB and 25 000 random pixels through
/// it stay within the ink limit and maximum black, after 8-bit rounding
/// too. CIEDE2000: CIE 142-2001.
#[test]
fn round_trip_and_limits_hold_on_every_builtin_condition() {
    let conv = RgbSpace::Srgb.converter();
    let gamut = RgbGamut(conv);
    for name in platesmith::press::builtin::NAMES {
        let c = platesmith::press::builtin::by_name(name).unwrap();
        let mut s = SeparationSettings::for_condition(&c);
        s.intent = Intent::Relative;
        let (mean, p99, max) = round_trip(&Separator::new(c.clone(), s).unwrap(), 17, 600);
        eprintln!("{name}: round trip mean ΔE2000 {mean:.4}, p99 {p99:.4}, max {max:.4}");
        assert!(mean <= 0.3 && p99 <= 1.0, "{name}: round trip mean {mean} p99 {p99}");

        let mut s = SeparationSettings::for_condition(&c);
        s.table_grid = 17;
        let sep = Separator::new(c, s.clone()).unwrap();
        let mapping = sep.source_mapping(&gamut);
        let table = SeparationTable::build(&sep, &mapping, &|rgb| IntentLab::new(conv.to_lab(rgb)));
        table_holds_limits(&table, s.table_grid, s.tac, s.black.black_max, &mut Rng(18), name);
    }
}

fn table_for(intent: Intent, bpc: bool) -> SeparationTable {
    table_on(coated_offset(), intent, bpc)
}

fn table_on(c: platesmith::press::PrintingCondition, intent: Intent, bpc: bool) -> SeparationTable {
    let mut s = SeparationSettings::for_condition(&c);
    s.intent = intent;
    s.bpc = bpc;
    let sep = Separator::new(c, s).unwrap();
    let conv = RgbSpace::Srgb.converter();
    let gamut = RgbGamut(conv);
    let mapping = sep.source_mapping(&gamut);
    SeparationTable::build(&sep, &mapping, &|rgb| IntentLab::new(conv.to_lab(rgb)))
}

/// Every plate along 8-bit ramps moves by at most 3 % per input step, for
/// the intents that map the whole source range (perceptual, and relative
/// with black point compensation; plain relative colorimetric clips the
/// shadows below the press black point by definition). Perceptual on the
/// coated-offset built-in measures 2.75 % (the red ramp's code 42 under
/// K 94 %; 2.75 % before the focal point's descent near the black, at the
/// green ramp's code 18, and 3.14 % on the fit before that).
#[test]
fn ramps_separate_smoothly() {
    for (intent, bpc, limit) in [(Intent::Perceptual, false, 0.03), (Intent::Relative, true, 0.03)] {
        ramps_are_smooth(&table_for(intent, bpc), &format!("{intent:?} bpc {bpc}"), limit);
    }
}

/// The same on the other built-in conditions. Relative with BPC holds 3 %
/// on uncoated offset (2.35 %) and newsprint (1.57 %). Perceptual carries
/// the source black onto a press black near L* 30 (uncoated) or 44
/// (newsprint) by a lightness curve that rejoins the identity 10 L* above
/// it, so the darkest tenth of every ramp lands within about 1 L* of the
/// press black, where the gamut ends in a point and a small colour
/// difference takes a large change of build. It stepped by 3.92 %
/// (uncoated, the yellow ramp's first codes: C 100 → 72 % between the
/// nodes for codes 0 and 8) and 3.14 % (newsprint), 4.31 % on web offset
/// and 3.14 % on super-calendered, because the compression's rays from the
/// press cusp lifted dark colours 2 L* above the black; with the focal
/// point descending to the colour's lightness near the black (and the
/// shadow taper over 15 L* instead of 20) they measure 2.75 %, 2.35 %,
/// 2.75 % and 2.35 %. Uncoated-yellowish measured 3.53 % with no under
/// colour addition: its mapped yellow ramp is near neutral from its press
/// black (L* 29.6) to L* 32 over codes 0 to 34, and with black held at its
/// maximum (95 %) cyan alone falls from 73 % to 22 % there (measured with
/// the direct separation); its built-in's 5 % UCA
/// (`scripts/make-conditions.sh`) lets black share the change: 2.75 %.
#[test]
fn ramps_separate_smoothly_on_the_other_builtin_conditions() {
    for (name, intent, bpc, limit) in [
        ("uncoated-offset", Intent::Perceptual, false, 0.03),
        ("uncoated-offset", Intent::Relative, true, 0.03),
        ("newsprint", Intent::Relative, true, 0.03),
        ("newsprint", Intent::Perceptual, false, 0.03),
        ("web-offset-lwc", Intent::Perceptual, false, 0.03),
        ("supercalendered", Intent::Perceptual, false, 0.03),
        ("uncoated-yellowish", Intent::Perceptual, false, 0.03),
    ] {
        let c = platesmith::press::builtin::by_name(name).unwrap();
        ramps_are_smooth(&table_on(c, intent, bpc), &format!("{name} {intent:?} bpc {bpc}"), limit);
    }
}

fn ramps_are_smooth(table: &SeparationTable, label: &str, limit: f64) {
    let ramps: Vec<(&str, [f64; 3])> = vec![
        ("gray", [1.0, 1.0, 1.0]),
        ("red", [1.0, 0.0, 0.0]),
        ("green", [0.0, 1.0, 0.0]),
        ("blue", [0.0, 0.0, 1.0]),
        ("cyan", [0.0, 1.0, 1.0]),
        ("magenta", [1.0, 0.0, 1.0]),
        ("yellow", [1.0, 1.0, 0.0]),
    ];
    let mut worst = (0.0f64, String::new());
    for (name, dir) in ramps {
        let mut prev: Option<Cmyk> = None;
        for v in 0..=255u32 {
            let rgb: Vec<u8> = dir.iter().map(|&d| (d * v as f64) as u8).collect();
            let mut out = [0u8; 4];
            table.apply_rgb8(&rgb, &mut out, 1);
            let c = Cmyk::from_array(out.map(|x| x as f64 / 255.0));
            if let Some(p) = prev {
                for (a, b) in p.to_array().iter().zip(c.to_array()) {
                    if (a - b).abs() > worst.0 {
                        worst = ((a - b).abs(), format!("{name} ramp at {v}: {p:?} -> {c:?}"));
                    }
                }
            }
            prev = Some(c);
        }
    }
    eprintln!("{label}: largest plate step along ramps: {:.2} % ({})", worst.0 * 100.0, worst.1);
    assert!(
        worst.0 <= limit,
        "{label}: largest plate step {:.2} %: {}",
        worst.0 * 100.0,
        worst.1
    );
}

/// Relative colorimetric neutrals print neutral: |a*|, |b*| ≤ 1.5 relative
/// to paper for L* 20–95 (ICC.1 media-relative colorimetry).
#[test]
fn neutrals_print_neutral() {
    let sep = relative();
    let mut worst = 0.0f64;
    for l in (20..=95).step_by(5) {
        let s = sep.invert(RelativeLab::new(Lab::new(l as f64, 0.0, 0.0)), None);
        let p = sep.printed_relative(Cmyk::from_array(s.x)).lab();
        worst = worst.max(p.a.abs()).max(p.b.abs());
        assert!(p.a.abs() <= 1.5 && p.b.abs() <= 1.5, "L* {l}: printed {p:?}");
    }
    eprintln!("largest |a*|,|b*| on the neutral axis: {worst:.4}");
}

fn build_of(sep: &Separator, rgb: [u8; 3]) -> Cmyk {
    let conv = RgbSpace::Srgb.converter();
    let gamut = RgbGamut(conv);
    let mapping = sep.source_mapping(&gamut);
    sep.separate(IntentLab::new(conv.to_lab(EncodedRgb(rgb.map(|v| v as f64 / 255.0)))), &mapping)
        .cmyk
}

/// Facts of subtractive mixing (common practice).
#[test]
fn primaries_separate_as_subtractive_mixing_predicts() {
    for intent in [Intent::Perceptual, Intent::Relative] {
        let sep = separator(intent);
        let white = build_of(&sep, [255, 255, 255]);
        assert!(white.total() < 1e-6, "{intent:?} white {white:?}");
        let red = build_of(&sep, [255, 0, 0]);
        assert!(red.m > 0.7 && red.y > 0.7 && red.c < 0.1, "{intent:?} red {red:?}");
        let green = build_of(&sep, [0, 255, 0]);
        assert!(green.c > 0.5 && green.y > 0.7 && green.m < 0.1, "{intent:?} green {green:?}");
        let blue = build_of(&sep, [0, 0, 255]);
        // Perceptual keeps the IPT hue of sRGB blue rather than turning it
        // onto the process blue (C+M): 96 % cyan, 69 % magenta on coated
        // offset (measured), still a two-colour blue.
        let magenta = if intent == Intent::Perceptual { 0.6 } else { 0.7 };
        assert!(blue.c > 0.7 && blue.m > magenta && blue.y < 0.1, "{intent:?} blue {blue:?}");
        let black = build_of(&sep, [0, 0, 0]);
        let s = sep.settings();
        assert!(black.k >= s.black.black_max - 0.02, "{intent:?} black {black:?}");
        assert!(
            black.total() <= s.tac + 1e-9 && black.total() >= s.tac - 0.1,
            "{intent:?} black {black:?} is not rich"
        );
        // Neutral-to-cool rich black (common practice: around 60/40/40/100 coated).
        assert!(black.c >= black.m && black.m >= black.y, "{intent:?} black balance {black:?}");
    }
}

/// More GCR: more black, less C+M+Y, the same printed colour within 1 ΔE2000.
#[test]
fn more_gcr_means_more_black_for_the_same_colour() {
    let build = |gcr: f64| {
        let c = coated_offset();
        let mut s = SeparationSettings::for_condition(&c);
        s.intent = Intent::Relative;
        s.black.gcr = gcr;
        Separator::new(c, s).unwrap()
    };
    let (low, high) = (build(0.1), build(0.9));
    for lab in [
        Lab::new(40.0, 0.0, 0.0),
        Lab::new(55.0, 10.0, 20.0),
        Lab::new(35.0, -15.0, -20.0),
        Lab::new(60.0, 5.0, 5.0),
    ] {
        let a = Cmyk::from_array(low.invert(RelativeLab::new(lab), None).x);
        let b = Cmyk::from_array(high.invert(RelativeLab::new(lab), None).x);
        assert!(b.k > a.k + 0.02, "{lab:?}: {a:?} vs {b:?}");
        assert!(b.c + b.m + b.y < a.c + a.m + a.y, "{lab:?}: {a:?} vs {b:?}");
        let de = ciede2000(low.printed_relative(a).lab(), high.printed_relative(b).lab());
        assert!(de <= 1.0, "{lab:?}: ΔE {de}");
    }
}

/// Black start: no black in light neutrals below it.
#[test]
fn no_black_below_black_start() {
    let sep = relative();
    let s = sep.invert(RelativeLab::new(Lab::new(90.0, 0.0, 0.0)), None);
    assert!(s.x[3] < 1e-6, "{:?}", s.x);
}

/// Results are identical whatever the thread count.
#[test]
fn table_is_independent_of_thread_count() {
    let sep = relative();
    let conv = RgbSpace::Srgb.converter();
    let gamut = RgbGamut(conv);
    let mapping = sep.source_mapping(&gamut);
    let build = |threads: usize| {
        let pool = rayon::ThreadPoolBuilder::new().num_threads(threads).build().unwrap();
        pool.install(|| {
            let mut c = sep.clone();
            let _ = &mut c;
            let t = SeparationTable::build(sep, &mapping, &|rgb| IntentLab::new(conv.to_lab(rgb)));
            let rgb: Vec<u8> = (0..30_000u32).map(|i| (i.wrapping_mul(2654435761) >> 24) as u8).collect();
            let mut out = vec![0u8; 40_000];
            t.apply_rgb8(&rgb, &mut out, 100);
            out
        })
    };
    assert_eq!(build(1), build(2));
}

/// The other built-in conditions hold the same table accuracy (perceptual,
/// the default intent). Newsprint's yellowish paper leaves near-whites such
/// as sRGB (255, 255, 240) outside the gamut next to saturated yellows on the
/// same table line: a warm start from the yellow once clipped them to a
/// heavy olive build.
#[test]
fn table_agrees_with_direct_separation_on_every_builtin_condition() {
    for name in [
        "uncoated-offset",
        "newsprint",
        "web-offset-lwc",
        "supercalendered",
        "uncoated-yellowish",
    ] {
        let c = platesmith::press::builtin::by_name(name).unwrap();
        let s = SeparationSettings::for_condition(&c);
        let sep = Separator::new(c, s).unwrap();
        let conv = RgbSpace::Srgb.converter();
        let gamut = RgbGamut(conv);
        let mapping = sep.source_mapping(&gamut);
        let table = SeparationTable::build(&sep, &mapping, &|rgb| IntentLab::new(conv.to_lab(rgb)));
        let (mean, p99, max) = table_agrees(&sep, &table, name);
        // Newsprint's 240 % limit leaves dark colours two far-apart builds
        // (more cyan or more black) at nearly the same cost; on the earlier
        // model, where neighbouring nodes took the other one, interpolation
        // landed up to 2.4 ΔE2000 off. On the data-based models every
        // built-in measures max 0.93 (newsprint) to 1.48 (measured), so all
        // are held at the requirement.
        let max_allowed = 2.0;
        assert!(
            mean <= 0.5 && p99 <= 1.5 && max <= max_allowed,
            "{name}: mean {mean} p99 {p99} max {max}"
        );
        let near_white = table.lookup(EncodedRgb([1.0, 1.0, 240.0 / 255.0]));
        assert!(
            near_white.total() < 0.15,
            "{name}: sRGB (255, 255, 240) separates to {near_white:?}"
        );
    }
}

/// Colours just off neutral take the black of the neutral beside them: the
/// black range is found on the curve of exact solutions, whose end near
/// neutral lies where two inks reach zero together (L* 27.1, a* −0.25 once
/// printed with no black at all).
#[test]
fn near_neutral_colours_keep_the_neutral_black() {
    let sep = relative();
    for l in (20..=80).map(|v| v as f64 + 0.1) {
        let k_neutral = sep.invert(RelativeLab::new(Lab::new(l, 0.0, 0.0)), None).x[3];
        for (a, b) in [(-0.25, 0.0), (0.25, 0.0), (0.0, -0.25), (0.0, 0.25), (-0.5, 0.3), (0.4, -0.4)] {
            let s = sep.invert(RelativeLab::new(Lab::new(l, a, b)), None);
            assert!(
                (s.x[3] - k_neutral).abs() < 0.05,
                "L* {l} a* {a} b* {b}: black {:.3} beside the neutral's {k_neutral:.3}",
                s.x[3]
            );
        }
    }
}

/// The table build inverts each line of nodes with warm starts per search
/// (`Separator::invert_along`: Kmin, Kmax and the held black each from the
/// neighbour's answer to it). The builds must be those of the inversion
/// started from the neighbour's result alone (`Separator::invert`, as the
/// table was built before): the same Kmin, Kmax and black rule, so the same
/// build to the solver's tolerance. Ground truth: the model itself (both
/// must print the target) and the black rule.
#[test]
fn warm_starts_along_a_line_find_the_builds_of_the_plain_inversion() {
    use platesmith::separation::WarmStart;
    let conv = RgbSpace::Srgb.converter();
    for intent in [Intent::Relative, Intent::Perceptual] {
        let sep = separator(intent);
        let gamut = RgbGamut(conv);
        let mapping = sep.source_mapping(&gamut);
        let mut worst: f64 = 0.0;
        for (r, g) in [(0.0, 0.0), (0.5, 0.25), (1.0, 0.5), (0.25, 0.75), (0.8, 0.8)] {
            let mut warm = WarmStart::default();
            let mut start = None;
            for b in 0..33 {
                let rgb = EncodedRgb([r, g, b as f64 / 32.0]);
                let target = sep.intent_target(IntentLab::new(conv.to_lab(rgb)), &mapping);
                let along = sep.invert_along(target, &mut warm);
                let plain = sep.invert(target, start);
                start = Some(plain.x);
                let diff = (0..4).map(|i| (along.x[i] - plain.x[i]).abs()).fold(0.0, f64::max);
                worst = worst.max(diff);
            }
        }
        eprintln!(
            "{}: largest ink difference, warm starts per search against one: {worst:.2e}",
            intent.name()
        );
        assert!(worst < 1e-4, "{}: {worst}", intent.name());
    }
}
