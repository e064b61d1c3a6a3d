//! The separation as an ICC output profile: the press model in the AToB
//! tables, platesmith's own inversion (black generation, ink limit, gamut
//! mapping) in the BToA tables.
//!
//! What each table holds (PCS CIELAB D50; "PCS black" is the black of the
//! perceptual PCS: the perceptual reference medium black of ICC.1:2022
//! §6.2.4.3, X 0.00336 Y 0.0034731 Z 0.00287 (L* 3.14), in version 4, and
//! L* 0 in version 2, which defines no reference medium):
//!
//! - AToB1 (relative colorimetric): the press model's printed colour,
//!   media-relative (paper = L* 100). Absolute colorimetry follows from it
//!   and the media white point (ICC.1:2022 Annex A).
//! - AToB0 and AToB2 (perceptual, saturation; one shared table): the same
//!   colour with the press black scaled onto the PCS black by the linear XYZ
//!   scaling of black point compensation (ISO 18619:2015), so the printed
//!   black is the reference medium black.
//! - BToA1 (relative colorimetric): [`Separator::invert`] of the PCS colour,
//!   exactly as `separate --intent relative` separates it; outside the gamut
//!   the hue-weighted minimum ΔE clip (after HPMINDE, CIE 156:2004).
//! - BToA0 (perceptual): the PCS black scaled back to L* 0 (the inverse of
//!   the scaling a CMM applies to a v4 perceptual transform from a source
//!   whose black is zero, as lcms2 does for matrix-shaper sources), then the
//!   perceptual map of [`crate::separation::PerceptualMap`] (shadow
//!   lightness curve, knee compression at constant IPT hue toward the SGCK
//!   focal point of CIE 156:2004) from the whole sRGB gamut (IEC
//!   61966-2-1): a profile cannot know its source, let alone the picture,
//!   and sRGB is the reference gamut that `separate` assumes for untagged
//!   artwork. So an sRGB image converted through BToA0 by a CMM prints as
//!   `separate --intent perceptual --compress-from space` separates it. Colours outside
//!   the sRGB gamut map onto the press gamut boundary.
//! - BToA2 (saturation): black point compensation (ISO 18619:2015) from the
//!   PCS black to the press black point, then the same clipping as BToA1:
//!   inside the gamut colours print as asked, outside they land on the gamut
//!   boundary as saturated as the press allows. Unlike BToA0 nothing is
//!   compressed, so chroma is kept wherever the press reaches it (for
//!   business graphics, where saturation matters more than gradation).
//! - gamut: CIEDE2000 between the PCS colour and what BToA1 prints for it.
//!
//! - BToD0/1/2 (version 4, unless left out): the same three intents on a
//!   grid in sRGB coordinates ([`super::float_tables`]), whose nodes include
//!   those of the separation table, so a CMM that reads them separates sRGB
//!   node for node as `separate` does.
//!
//! The grids are solved line by line along their last axis with warm
//! starts, in parallel over lines, as the separation table is.

use super::float_tables::{FloatIntent, FloatTables, SrgbFrame, XyzScaling};
use super::{DEFAULT_A2B_GRID, DEFAULT_B2A_GRID, DEFAULT_COPYRIGHT};
use super::{IccVersion, OutputProfileSpec, build_output_profile, default_description, grid_lab};
use crate::colour::{D50, Lab, RgbSpace, Xyz, ciede2000};
use crate::error::Result;
use crate::ink::Cmyk;
use crate::press::PrintingCondition;
use crate::separation::{Intent, IntentLab, RelativeLab, RgbGamut, SeparationSettings, Separator};
use rayon::prelude::*;

/// Black of the perceptual reference medium in PCSXYZ (ICC.1:2022 §6.2.4.3;
/// the values lcms2 uses, `cmsPERCEPTUAL_BLACK_X/Y/Z`).
pub const PERCEPTUAL_REFERENCE_BLACK: Xyz = Xyz {
    x: 0.00336,
    y: 0.0034731,
    z: 0.00287,
};

/// How a profile is written.
#[derive(Debug, Clone, PartialEq)]
pub struct ProfileOptions {
    pub version: IccVersion,
    /// Points per CMYK axis of the AToB tables.
    pub a2b_grid: u32,
    /// Points per L*, a*, b* axis of the BToA and gamut tables.
    pub b2a_grid: u32,
    /// Description (`desc`); `None` writes one naming the condition and settings.
    pub description: Option<String>,
    /// Copyright text (`cprt`); `None` writes [`DEFAULT_COPYRIGHT`].
    pub copyright: Option<String>,
    /// Also write the floating-point BToD0/1/2 tables in sRGB coordinates
    /// (version 4 only; see [`super::float_tables`]): 1.5 MB per intent,
    /// worth it wherever the profile separates artwork.
    pub float_tables: bool,
}

impl Default for ProfileOptions {
    fn default() -> ProfileOptions {
        ProfileOptions {
            version: IccVersion::V4,
            a2b_grid: DEFAULT_A2B_GRID,
            b2a_grid: DEFAULT_B2A_GRID,
            description: None,
            copyright: None,
            float_tables: true,
        }
    }
}

/// The black of the perceptual (and saturation) PCS of a profile version.
pub fn perceptual_pcs_black(version: IccVersion) -> Xyz {
    match version {
        IccVersion::V4 => PERCEPTUAL_REFERENCE_BLACK,
        IccVersion::V2 => Xyz::new(0.0, 0.0, 0.0),
    }
}

/// Linear XYZ scaling that carries black `from` onto black `to` and keeps the
/// PCS white (D50): the black point compensation of ISO 18619:2015, per
/// tristimulus channel in the form lcms2 computes it
/// (`ComputeBlackPointCompensation`, cmscnvrt.c).
pub fn scale_black(lab: Lab, from: Xyz, to: Xyz) -> Lab {
    let s = black_scaling(from, to);
    let v = lab.to_xyz().to_array();
    Lab::from_xyz(Xyz::from_array(std::array::from_fn(|i| s.scale[i] * v[i] + s.offset[i])))
}

/// The coefficients of [`scale_black`]: X' = scale·X + offset per channel.
pub fn black_scaling(from: Xyz, to: Xyz) -> XyzScaling {
    let w = D50.xyz.to_array();
    let (f, t) = (from.to_array(), to.to_array());
    XyzScaling {
        scale: std::array::from_fn(|i| (t[i] - w[i]) / (f[i] - w[i])),
        offset: std::array::from_fn(|i| -w[i] * (t[i] - f[i]) / (f[i] - w[i])),
    }
}

/// The default description of a profile: the condition and the settings that
/// shape its separation.
pub fn profile_description(separator: &Separator) -> String {
    let s = separator.settings();
    let e = crate::settings::InkEcho::new(s.tac, &s.black);
    format!(
        "{}; TAC {:.0} %, GCR {:.0} %, black start {:.0} %, maximum black {:.0} %",
        default_description(&separator.condition().name),
        e.tac.0,
        e.gcr.0,
        e.black_start.0,
        e.black_max.0
    )
}

/// The output profile of a condition and separation settings (the intent in
/// `settings` does not matter: a profile holds every intent).
pub fn profile_for(condition: &PrintingCondition, settings: &SeparationSettings, options: &ProfileOptions) -> Result<Vec<u8>> {
    let separator = Separator::new(condition.clone(), settings.clone())?;
    profile_for_separator(&separator, options)
}

/// The output profile of a separator's condition and settings, reusing its
/// gamut boundary and black point.
pub fn profile_for_separator(separator: &Separator, options: &ProfileOptions) -> Result<Vec<u8>> {
    let version = options.version;
    let perceptual = separator.with_intent(Intent::Perceptual, false);
    let colorimetric = separator.with_intent(Intent::Relative, false);
    let source = RgbGamut(RgbSpace::Srgb.converter());
    let mapping = perceptual.source_mapping(&source);
    let pcs_black = perceptual_pcs_black(version);
    let press_black = colorimetric.black_point().0.lab().to_xyz();
    let zero = Xyz::new(0.0, 0.0, 0.0);

    // The three BToA intents and the gamut measure, solved once per node.
    let n = options.b2a_grid.clamp(2, 255) as usize;
    let mut nodes = solve_grid(&colorimetric, n, &|[li, ai, bi]| {
        let lab = grid_lab([li, ai, bi].map(|i| i as u32), n as u32, version);
        [
            perceptual
                .intent_target(IntentLab::new(scale_black(lab, pcs_black, zero)), &mapping)
                .lab(),
            lab,
            scale_black(lab, pcs_black, press_black),
        ]
    });
    repair_black_outliers(&colorimetric, &mut nodes, n);
    nodes.par_iter_mut().enumerate().for_each(|(i, node)| {
        let lab = grid_lab([(i / (n * n)) as u32, (i / n % n) as u32, (i % n) as u32], n as u32, version);
        node.gamut = ciede2000(lab, colorimetric.printed_relative(Cmyk::from_array(node.ink[1])).lab());
    });
    // The writer asks for each node's colour by its grid position; find the
    // node again from the colour, and solve afresh for any other colour.
    let node_of = |lab: Lab| -> Option<&Node> {
        let index = grid_index(lab, n as u32, version)?;
        nodes.get(((index[0] as usize) * n + index[1] as usize) * n + index[2] as usize)
    };
    let b2a = |intent: usize, lab: Lab| -> Cmyk {
        match node_of(lab) {
            Some(node) => Cmyk::from_array(node.ink[intent]),
            None => {
                let target = match intent {
                    0 => perceptual
                        .intent_target(IntentLab::new(scale_black(lab, pcs_black, zero)), &mapping)
                        .lab(),
                    1 => lab,
                    _ => scale_black(lab, pcs_black, press_black),
                };
                Cmyk::from_array(colorimetric.invert(RelativeLab::new(target), None).x)
            }
        }
    };
    let b2a0 = |lab: Lab| b2a(0, lab);
    let b2a1 = |lab: Lab| b2a(1, lab);
    let b2a2 = |lab: Lab| b2a(2, lab);
    let gamut = |lab: Lab| match node_of(lab) {
        Some(node) => node.gamut,
        None => ciede2000(lab, colorimetric.printed_relative(b2a1(lab)).lab()),
    };
    // The same intents on a grid in sRGB coordinates, for the floating-point
    // tables: the PCS colour of a node is that of its sRGB value, seen
    // through each intent's black scaling (none for relative colorimetry).
    let float_b2d = match (options.float_tables, version) {
        (true, IccVersion::V4) => {
            let frame = SrgbFrame::new(separator.settings().table_grid)?;
            let float_nodes = solve_grid(&colorimetric, frame.grid(), &|index| {
                let source = Lab::from_xyz(frame.node_xyz(index));
                [
                    perceptual.intent_target(IntentLab::new(source), &mapping).lab(),
                    source,
                    scale_black(source, zero, press_black),
                ]
            });
            let to_zero = black_scaling(pcs_black, zero);
            let intents = [to_zero, XyzScaling::IDENTITY, to_zero]
                .into_iter()
                .enumerate()
                .map(|(i, scaling)| FloatIntent {
                    scaling,
                    table: float_nodes.iter().flat_map(|node| node.ink[i].map(|v| v as f32)).collect(),
                });
            let intents: Vec<FloatIntent> = intents.collect();
            let intents: [FloatIntent; 3] = intents.try_into().expect("three intents");
            Some(FloatTables { frame, intents })
        }
        _ => None,
    };
    let a2b = |ink: Cmyk| colorimetric.printed_relative(ink).lab();
    let a2b_perceptual = |ink: Cmyk| scale_black(colorimetric.printed_relative(ink).lab(), press_black, pcs_black);
    let spec = OutputProfileSpec {
        description: options.description.clone().unwrap_or_else(|| profile_description(separator)),
        copyright: options.copyright.clone().unwrap_or_else(|| DEFAULT_COPYRIGHT.to_string()),
        version,
        media_white: separator.media_white().white,
        a2b: &a2b,
        a2b_perceptual: Some(&a2b_perceptual),
        b2a: [&b2a0, &b2a1, &b2a2],
        gamut: &gamut,
        a2b_grid: options.a2b_grid,
        b2a_grid: options.b2a_grid,
        float_b2d: float_b2d.as_ref(),
    };
    build_output_profile(&spec)
}

/// Solves the three intents at every node of an n³ grid from the working-frame
/// targets `targets_of` gives per node (perceptual, relative, saturation).
/// Lines along the last axis are solved in order with warm starts, so
/// neighbouring nodes take the same branch of the inversion and the result
/// does not depend on threads; lines run in parallel.
fn solve_grid(separator: &Separator, n: usize, targets_of: &(dyn Fn([usize; 3]) -> [Lab; 3] + Sync)) -> Vec<Node> {
    let lines: Vec<Vec<Node>> = (0..n * n)
        .into_par_iter()
        .map(|line| {
            let mut starts: [Option<[f64; 4]>; 3] = [None; 3];
            (0..n)
                .map(|last| {
                    let targets = targets_of([line / n, line % n, last]);
                    let ink: [[f64; 4]; 3] = std::array::from_fn(|i| {
                        let s = separator.invert(RelativeLab::new(targets[i]), starts[i]);
                        starts[i] = Some(s.x);
                        s.x
                    });
                    Node { ink, targets, gamut: 0.0 }
                })
                .collect()
        })
        .collect();
    lines.into_iter().flatten().collect()
}

/// One node of a grid: ink per BToA intent (perceptual, relative,
/// saturation), the working-frame targets they were solved for, and the
/// gamut measure.
struct Node {
    ink: [[f64; 4]; 3],
    targets: [Lab; 3],
    gamut: f64,
}

/// Black that differs from the median of a node's grid neighbours by more
/// than this (fraction) marks a node for a second look.
const BLACK_OUTLIER: f64 = 0.03;

/// Printed colours within this of their target (ΔE2000) count as exact
/// inversions for [`repair_black_outliers`].
const EXACT: f64 = 0.5;

/// How much further from its target (ΔE2000) a repaired node may print.
const REPAIR_ALLOWANCE: f64 = 1.0;

/// Smooths nodes whose black stands out from their grid neighbours.
///
/// Black generation varies smoothly over colour space, but the inversion's
/// search for the largest possible black occasionally fails for a colour
/// near neutral and falls back to the least black. In a table such a node
/// would be interpolated into a streak across three units of L* and eight of
/// a*, b*, mixing two very different builds of one colour. A node that the
/// inversion printed exactly, whose black differs from the median of its six
/// neighbours by more than [`BLACK_OUTLIER`], takes the mean build of the
/// neighbours that agree with that median, provided it prints within
/// [`REPAIR_ALLOWANCE`] ΔE2000 of the target (a mean of in-limit builds is
/// in the limits). Out-of-gamut (clipped) nodes are left as solved.
fn repair_black_outliers(separator: &Separator, nodes: &mut [Node], n: usize) {
    let strides = [n * n, n, 1];
    let neighbours = |i: usize| -> Vec<usize> {
        let mut out = Vec::with_capacity(6);
        for &d in &strides {
            let pos = (i / d) % n;
            if pos > 0 {
                out.push(i - d);
            }
            if pos + 1 < n {
                out.push(i + d);
            }
        }
        out
    };
    for _pass in 0..3 {
        let fixes: Vec<(usize, usize, [f64; 4])> = (0..nodes.len())
            .into_par_iter()
            .flat_map_iter(|i| {
                let around = neighbours(i);
                let mut found = Vec::new();
                for intent in 0..3 {
                    let mut k: Vec<f64> = around.iter().map(|&j| nodes[j].ink[intent][3]).collect();
                    k.sort_by(f64::total_cmp);
                    let median = if k.len() % 2 == 1 {
                        k[k.len() / 2]
                    } else {
                        0.5 * (k[k.len() / 2 - 1] + k[k.len() / 2])
                    };
                    let own = nodes[i].ink[intent];
                    if (own[3] - median).abs() <= BLACK_OUTLIER {
                        continue;
                    }
                    let target = nodes[i].targets[intent];
                    let error = |x: [f64; 4]| ciede2000(target, separator.printed_relative(Cmyk::from_array(x)).lab());
                    let own_error = error(own);
                    if own_error > EXACT {
                        continue;
                    }
                    let agreeing: Vec<[f64; 4]> = around
                        .iter()
                        .map(|&j| nodes[j].ink[intent])
                        .filter(|x| (x[3] - median).abs() <= BLACK_OUTLIER)
                        .collect();
                    if agreeing.len() < 2 {
                        continue;
                    }
                    let mean: [f64; 4] = std::array::from_fn(|c| agreeing.iter().map(|x| x[c]).sum::<f64>() / agreeing.len() as f64);
                    if error(mean) <= own_error + REPAIR_ALLOWANCE {
                        found.push((i, intent, mean));
                    }
                }
                found
            })
            .collect();
        if fixes.is_empty() {
            break;
        }
        for (i, intent, x) in fixes {
            nodes[i].ink[intent] = x;
        }
    }
}

/// The grid position of a colour that is exactly a grid node, else `None`.
fn grid_index(lab: Lab, grid: u32, version: IccVersion) -> Option<[u32; 3]> {
    let corner = grid_lab([grid - 1; 3], grid, version);
    let origin = grid_lab([0; 3], grid, version);
    let pos = |v: f64, lo: f64, hi: f64| ((v - lo) / (hi - lo) * (grid - 1) as f64).round();
    let index = [
        pos(lab.l, origin.l, corner.l),
        pos(lab.a, origin.a, corner.a),
        pos(lab.b, origin.b, corner.b),
    ];
    if !index.iter().all(|&j| (0.0..grid as f64).contains(&j)) {
        return None;
    }
    let index = index.map(|j| j as u32);
    let back = grid_lab(index, grid, version);
    (back.to_array().map(f64::to_bits) == lab.to_array().map(f64::to_bits)).then_some(index)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn perceptual_black_matches_lcms2() {
        // lcms2's constants for the perceptual reference medium black.
        let p = PERCEPTUAL_REFERENCE_BLACK;
        assert_eq!(
            [p.x, p.y, p.z],
            [
                lcms2_sys::PERCEPTUAL_BLACK_X,
                lcms2_sys::PERCEPTUAL_BLACK_Y,
                lcms2_sys::PERCEPTUAL_BLACK_Z
            ]
        );
        // ICC.1:2022 §6.2.4.3 gives the reference medium black as L* 3.1373.
        assert!((Lab::from_xyz(p).l - 3.1373).abs() < 2e-3, "{:?}", Lab::from_xyz(p));
    }

    #[test]
    fn black_scaling_moves_black_and_keeps_white() {
        let bp = Lab::new(18.0, 0.5, -1.0).to_xyz();
        let white = Lab::new(100.0, 0.0, 0.0);
        let w = scale_black(white, bp, PERCEPTUAL_REFERENCE_BLACK);
        assert!((w.l - 100.0).abs() < 1e-9 && w.a.abs() < 1e-9 && w.b.abs() < 1e-9);
        let b = scale_black(Lab::from_xyz(bp), bp, PERCEPTUAL_REFERENCE_BLACK);
        let want = Lab::from_xyz(PERCEPTUAL_REFERENCE_BLACK);
        assert!(crate::colour::delta_e76(b, want) < 1e-9);
        // The scaling is invertible by swapping the black points.
        let mid = Lab::new(47.0, 20.0, -30.0);
        let there = scale_black(mid, bp, PERCEPTUAL_REFERENCE_BLACK);
        assert!(crate::colour::delta_e76(scale_black(there, PERCEPTUAL_REFERENCE_BLACK, bp), mid) < 1e-9);
    }

    #[test]
    fn grid_positions_are_found_again() {
        for version in [IccVersion::V4, IccVersion::V2] {
            for index in [[0, 0, 0], [32, 32, 32], [5, 16, 31], [32, 0, 7]] {
                assert_eq!(grid_index(grid_lab(index, 33, version), 33, version), Some(index));
            }
            assert_eq!(grid_index(Lab::new(50.1, 0.0, 0.0), 33, version), None);
        }
    }
}
