//! The perceptual intent against the criteria of CIE 156:2004 ("Guidelines
//! for the evaluation of gamut mapping algorithms"): what a gamut mapping
//! should keep (colours inside the destination gamut, hue) and what it is
//! compared with (the hue-preserving minimum-ΔE clip, HPMINDE, which is the
//! relative colorimetric intent here). Colour differences are CIEDE2000
//! (CIE 142:2001); hue constancy is judged in IPT (Ebner & Fairchild 1998),
//! fitted to the constant-hue data of Hung & Berns (1995). Every check runs
//! on each built-in condition, since their numbers change as the press
//! model does; the thresholds are the requirements, not the model's figures.

use platesmith::colour::{EncodedRgb, Ipt, Lab, RgbSpace, ciede2000};
use platesmith::press::builtin;
use platesmith::separation::{IN_GAMUT_TOLERANCE, IntentLab};
use platesmith::separation::{Intent, PictureGamut, RgbGamut, SeparationSettings, Separator};

use crate::rng::SplitMix64 as Rng;

fn separator(condition: &str, intent: Intent, bpc: bool) -> Separator {
    let c = builtin::by_name(condition).unwrap();
    let mut s = SeparationSettings::for_condition(&c);
    s.intent = intent;
    s.bpc = bpc;
    Separator::new(c, s).unwrap()
}

fn percentile(mut v: Vec<f64>, p: f64) -> f64 {
    v.sort_by(f64::total_cmp);
    v[((v.len() - 1) as f64 * p).round() as usize]
}

fn hue_difference(a: f64, b: f64) -> f64 {
    let d = (a - b).rem_euclid(360.0);
    d.min(360.0 - d)
}

/// sRGB colours that relative colorimetric reproduces exactly (ΔE2000 < 0.5
/// after the inversion) with L* ≥ 25 print under perceptual within a mean
/// of 1.0 and a 95th percentile of 2.5 ΔE2000 of themselves, and with
/// chroma above 10 their CIELAB hue turns by at most 1° on average and 3°
/// at most. Mapped from the whole sRGB space (the larger compression).
#[test]
fn printable_colours_stay() {
    let conv = RgbSpace::Srgb.converter();
    let space = RgbGamut(conv);
    let mut failures = Vec::new();
    for name in builtin::NAMES {
        let relative = separator(name, Intent::Relative, false);
        let perceptual = separator(name, Intent::Perceptual, false);
        let (rel_map, per_map) = (relative.source_mapping(&space), perceptual.source_mapping(&space));
        let mut rng = Rng(18);
        let (mut errors, mut turns, mut lightness) = (Vec::new(), Vec::new(), 0.0f64);
        let mut worst_turn = (Lab::new(0.0, 0.0, 0.0), Lab::new(0.0, 0.0, 0.0));
        let mut tried = 0;
        while errors.len() < 400 && tried < 20_000 {
            tried += 1;
            let lab = conv.to_lab(EncodedRgb([rng.next_f64(), rng.next_f64(), rng.next_f64()]));
            if lab.l < 25.0 || relative.separate(IntentLab::new(lab), &rel_map).delta_e >= 0.5 {
                continue;
            }
            let printed = perceptual.separate(IntentLab::new(lab), &per_map).printed.lab();
            errors.push(ciede2000(lab, printed));

            lightness = lightness.max((printed.l - lab.l).abs());
            if lab.to_lch().c > 10.0 {
                let turn = hue_difference(lab.to_lch().h, printed.to_lch().h);
                if turns.iter().all(|&t| t < turn) {
                    worst_turn = (lab, printed);
                }
                turns.push(turn);
            }
        }
        eprintln!("{name}: press black L* {:.2}", perceptual.black_point().0.lab().l);
        assert!(errors.len() >= 200, "{name}: only {} printable colours in {tried}", errors.len());
        let mean = errors.iter().sum::<f64>() / errors.len() as f64;
        let p95 = percentile(errors.clone(), 0.95);
        let turn_mean = turns.iter().sum::<f64>() / turns.len() as f64;
        let turn_max = percentile(turns.clone(), 1.0);
        eprintln!(
            "{name}: {} printable colours: ΔE2000 mean {mean:.3} p95 {p95:.3} max {:.3}; L* moved up to {lightness:.2}; \
             hue (C* > 10, {}) mean {turn_mean:.3}° max {turn_max:.3}°",
            errors.len(),
            percentile(errors.clone(), 1.0),
            turns.len()
        );
        eprintln!("{name}: largest hue turn: {:?} printed {:?}", worst_turn.0, worst_turn.1);
        if !(mean <= 1.0 && p95 <= 2.5) {
            failures.push(format!("{name}: mean {mean} p95 {p95}"));
        }
        if !(turn_mean <= 1.0 && turn_max <= 3.0) {
            failures.push(format!("{name}: hue turns mean {turn_mean} max {turn_max}"));
        }
    }
    assert!(failures.is_empty(), "{failures:#?}");
}

/// Saturated sRGB colours around the hue circle (the six cube edges between
/// the primaries and secondaries, at full value and at 60 %): each prints
/// within 3° of its source hue in IPT, and on average its ΔE2000 to the
/// source exceeds the relative colorimetric clip's by at most 3.
#[test]
fn out_of_gamut_colours_keep_their_hue() {
    let conv = RgbSpace::Srgb.converter();
    let space = RgbGamut(conv);
    let mut colours = Vec::new();
    for value in [1.0, 0.6] {
        for step in 0..48 {
            let x = (step % 8) as f64 / 8.0;
            let rgb = match step / 8 {
                0 => [1.0, x, 0.0],
                1 => [1.0 - x, 1.0, 0.0],
                2 => [0.0, 1.0, x],
                3 => [0.0, 1.0 - x, 1.0],
                4 => [x, 0.0, 1.0],
                _ => [1.0, 0.0, 1.0 - x],
            };
            colours.push(conv.to_lab(EncodedRgb(rgb.map(|v| v * value))));
        }
    }
    for name in builtin::NAMES {
        let relative = separator(name, Intent::Relative, false);
        let perceptual = separator(name, Intent::Perceptual, false);
        let (rel_map, per_map) = (relative.source_mapping(&space), perceptual.source_mapping(&space));
        let (mut worst_hue, mut excess, mut outside) = (0.0f64, Vec::new(), 0);
        for &lab in &colours {
            let clip = relative.separate(IntentLab::new(lab), &rel_map);
            if clip.in_gamut {
                continue;
            }
            outside += 1;
            let printed = perceptual.separate(IntentLab::new(lab), &per_map).printed.lab();
            let turn = hue_difference(Ipt::from_lab(lab).hue(), Ipt::from_lab(printed).hue());
            worst_hue = worst_hue.max(turn);
            assert!(turn <= 3.0, "{name}: {lab:?} printed {printed:?}: IPT hue turned {turn:.2}°");
            excess.push(ciede2000(lab, printed) - clip.delta_e);
        }
        let mean_excess = excess.iter().sum::<f64>() / excess.len() as f64;
        eprintln!(
            "{name}: {outside} out-of-gamut colours: IPT hue within {worst_hue:.2}°; ΔE2000 over the clip's: mean {mean_excess:.2}, max {:.2}",
            percentile(excess.clone(), 1.0)
        );
        assert!(outside >= 30, "{name}: only {outside} of the saturated colours are out of gamut");
        assert!(
            mean_excess <= 3.0,
            "{name}: perceptual is {mean_excess:.2} ΔE2000 further than the clip on average"
        );
    }
}

/// A picture whose colours are all printable is not compressed: its
/// perceptual separation equals relative colorimetric within one 8-bit code
/// per plate above L* 30 (the lightness curve of the perceptual intent acts
/// below). Against relative colorimetric with black point compensation
/// (ISO 18619), which moves L* 30 by about 2.6 on coated offset, the
/// difference is printed, not held: keeping printable colours forbids it.
#[test]
fn a_printable_picture_separates_as_relative() {
    let conv = RgbSpace::Srgb.converter();
    let mut failures = Vec::new();
    for name in builtin::NAMES {
        let relative = separator(name, Intent::Relative, false);
        let with_bpc = separator(name, Intent::Relative, true);
        let perceptual = separator(name, Intent::Perceptual, false);
        let space = RgbGamut(conv);
        let (rel_map, bpc_map) = (relative.source_mapping(&space), with_bpc.source_mapping(&space));
        // The picture: random colours that relative colorimetric reproduces
        // exactly, within the tolerance of the inversion's own gamut check
        // (IN_GAMUT_TOLERANCE, 0.1 ΔE2000). A looser choice (0.5) let in
        // colours that lie beyond the press gamut by that check (one on
        // uncoated offset, reproduced 0.46 ΔE2000 off on the C+M edge), which
        // perceptual rightly compresses (2 codes apart; measured).
        let mut rng = Rng(30);
        let mut labs: Vec<Lab> = Vec::new();
        while labs.len() < 300 {
            let lab = conv.to_lab(EncodedRgb([rng.next_f64(), rng.next_f64(), rng.next_f64()]));
            // Above L* 30 and above the lightness curve's reach (which is
            // higher where the press black is lighter than coated offset's).
            let curve_free = platesmith::separation::gamut::shadow_lightness(lab.l, 0.0, perceptual.black_point().0.lab().l) == lab.l;
            if lab.l >= 30.0 && curve_free && relative.separate(IntentLab::new(lab), &rel_map).delta_e <= IN_GAMUT_TOLERANCE {
                labs.push(lab);
            }
        }
        let picture = PictureGamut::from_colours(&labs);
        let per_map = perceptual.picture_mapping(&picture);
        let codes = |a: [f64; 4], b: [f64; 4]| {
            a.iter()
                .zip(b)
                .map(|(x, y)| ((x * 255.0).round() - (y * 255.0).round()).abs())
                .fold(0.0, f64::max)
        };
        let (mut worst, mut worst_bpc) = (0.0f64, 0.0f64);
        for &lab in &labs {
            let p = perceptual.separate(IntentLab::new(lab), &per_map).cmyk.to_array();
            worst = worst.max(codes(relative.separate(IntentLab::new(lab), &rel_map).cmyk.to_array(), p));
            worst_bpc = worst_bpc.max(codes(with_bpc.separate(IntentLab::new(lab), &bpc_map).cmyk.to_array(), p));
        }
        eprintln!(
            "{name}: printable picture, perceptual against relative: largest difference {worst} codes \
             (against relative with BPC: {worst_bpc} codes)"
        );
        if worst > 1.0 {
            failures.push(format!("{name}: {worst} codes apart"));
        }
    }
    assert!(failures.is_empty(), "{failures:#?}");
}

/// The synthetic coastal scene (tests/support/scene.rs) through the real
/// pipeline, 8-bit, on every built-in condition: over the pixels relative
/// colorimetric can print (its separation within 1 ΔE2000 of the source),
/// the perceptual print is within a mean of 2 ΔE2000 of the original, from
/// the picture and from the whole space; and the saturated ramp along the
/// bottom (mid-gray to sRGB blue, 256 codes, leaving the gamut) keeps
/// distinct output: no run of more than 8 consecutive input codes prints
/// the same CMYK, under either source of compression.
#[test]
fn the_coastal_scene_keeps_its_printable_colours_and_its_ramp() {
    use crate::scene::{RAMP_ROWS, SCENE_H, SCENE_W, ramp_colour, scene};
    use platesmith::colour::RgbSpace;
    use platesmith::job::{table_for_picture, table_for_source};
    use platesmith::raster::Samples;
    use platesmith::source::RgbSource;
    use std::collections::HashMap;

    // Near sRGB blue the ramp runs past the press boundary, where the knee
    // curve is flattest: at most 8 codes print alike on any built-in
    // (measured on web offset from the picture since the focal point drops
    // for colours lighter than the press cusp, 6 before; 7 on coated offset
    // from the picture after the refit with the lattice's mixed differences;
    // 10 on newsprint when the knee curve fell to half the linear slope).
    // The requirement is a stated number: 8, the number stated first.
    const LONGEST_FLAT_RUN: usize = 8;
    let rgb = scene();
    let source = RgbSource::Named(RgbSpace::Srgb);
    let conv = RgbSpace::Srgb.converter();
    let ramp: Vec<u8> = (0..256).flat_map(ramp_colour).collect();
    let mut failures = Vec::new();
    for name in builtin::NAMES {
        let relative = separator(name, Intent::Relative, false);
        let perceptual = separator(name, Intent::Perceptual, false);
        let space = RgbGamut(conv);
        let rel_map = relative.source_mapping(&space);
        let samples = Samples::U8(rgb.clone());
        for (from, table) in [
            ("picture", table_for_picture(&perceptual, &source, &samples)),
            ("space", table_for_source(&perceptual, &source)),
        ] {
            let mut cmyk = vec![0u8; SCENE_W * SCENE_H * 4];
            table.apply_rgb8(&rgb, &mut cmyk, SCENE_W);
            let mut memo: HashMap<([u8; 3], [u8; 4]), Option<f64>> = HashMap::new();
            let (mut sum, mut n, mut all) = (0.0, 0usize, 0.0);
            for y in 0..SCENE_H {
                if RAMP_ROWS.contains(&y) {
                    continue;
                }
                for x in 0..SCENE_W {
                    let i = y * SCENE_W + x;
                    let px: [u8; 3] = rgb[i * 3..][..3].try_into().unwrap();
                    let ink: [u8; 4] = cmyk[i * 4..][..4].try_into().unwrap();
                    let de = *memo.entry((px, ink)).or_insert_with(|| {
                        let lab = conv.to_lab(EncodedRgb(px.map(|v| v as f64 / 255.0)));
                        let printed = perceptual
                            .printed_relative(platesmith::ink::Cmyk::from_array(ink.map(|v| v as f64 / 255.0)))
                            .lab();
                        let de = ciede2000(lab, printed);
                        (relative.separate(IntentLab::new(lab), &rel_map).delta_e <= 1.0).then_some(de)
                    });
                    if let Some(de) = de {
                        sum += de;
                        n += 1;
                    }
                    all += 1.0;
                }
            }
            let mean = sum / n as f64;
            let mut out = vec![0u8; 256 * 4];
            table.apply_rgb8(&ramp, &mut out, 256);
            let (mut longest, mut run, mut at) = (1usize, 1usize, 0usize);
            for v in 1..256 {
                run = if out[v * 4..][..4] == out[(v - 1) * 4..][..4] { run + 1 } else { 1 };
                if run > longest {
                    (longest, at) = (run, v);
                }
            }
            eprintln!("{name} {from}: longest run ends at ramp step {at}: {:?}", &out[at * 4..][..4]);
            eprintln!(
                "{name}, from the {from}: printable pixels {:.1} %: mean ΔE2000 {mean:.2} to the original; \
                 ramp: longest run of one output {longest} codes",
                100.0 * n as f64 / all
            );
            assert!(n as f64 > 0.2 * all, "{name}: only {n} printable pixels");
            if mean > 2.0 {
                failures.push(format!("{name}, from the {from}: mean ΔE2000 {mean:.2} over the printable areas"));
            }
            if longest > LONGEST_FLAT_RUN {
                failures.push(format!("{name}, from the {from}: {longest} codes of the ramp print alike"));
            }
        }
    }
    assert!(failures.is_empty(), "{failures:#?}");
}

/// Near the press black the compression acts at constant lightness: the
/// first node of each sRGB primary and secondary ramp of an 8-bit table
/// (code 8, L* 0.1 to 2.1) maps within 0.5 L* of where the neutral of its
/// own lightness maps, on every built-in. Rays from the press cusp (SGCK,
/// CIE 156:2004) lifted them: the yellow one 4.4 L* above it on
/// uncoated-yellowish, 2.1 on uncoated offset, where near the rich black a few L* take a
/// quarter of a plate: the first codes of the ramps stepped by 3.9 % of a
/// plate per code (tests/suite/separation_engine.rs).
#[test]
fn dark_colours_keep_their_lightness_near_the_press_black() {
    let conv = RgbSpace::Srgb.converter();
    let space = RgbGamut(conv);
    let code = 8.0 / 255.0;
    for name in builtin::NAMES {
        let sep = separator(name, Intent::Perceptual, false);
        let map = sep.source_mapping(&space);
        let mapped = |lab: Lab| sep.intent_target(IntentLab::new(lab), &map).lab().l;
        for rgb in [
            [1.0, 0.0, 0.0],
            [0.0, 1.0, 0.0],
            [0.0, 0.0, 1.0],
            [0.0, 1.0, 1.0],
            [1.0, 0.0, 1.0],
            [1.0, 1.0, 0.0],
        ] {
            let lab = conv.to_lab(EncodedRgb(rgb.map(|v| v * code)));
            let (l, neutral) = (mapped(lab), mapped(Lab::new(lab.l, 0.0, 0.0)));
            eprintln!(
                "{name}: {rgb:?} at code 8 (L* {:.2}) maps to L* {l:.2}, its neutral to {neutral:.2}",
                lab.l
            );
            assert!(
                (l - neutral).abs() <= 0.5,
                "{name}: {rgb:?} at code 8 maps to L* {l:.2}, its neutral to {neutral:.2}"
            );
        }
    }
}
