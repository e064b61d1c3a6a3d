//! Figures computed from a printing condition's model: the tone value
//! increase it predicts, the gray balance it needs, its deepest blacks and its
//! gamut volume under the ink limit. These are what `platesmith conditions
//! show` prints.

use super::gamut::{GamutOptions, GamutVolume, gamut_volume};
use super::{AIM_INKS, AIM_NAMES, MediaWhite, PressModel, PrintingCondition, TONE_CHANNEL, builtin};
use crate::colour::{Lab, ciede2000};
use crate::ink::{Cmyk, Ink};
use serde::Serialize;

/// Murray–Davies tone value (ISO 12647-1 / ISO 20654 practice) of a patch of
/// luminance factor `y` from paper `y_paper` and solid `y_solid`:
/// (Y_paper − Y) / (Y_paper − Y_solid).
pub fn murray_davies_tone_value(y: f64, y_paper: f64, y_solid: f64) -> f64 {
    (y_paper - y) / (y_paper - y_solid)
}

/// The tone value increase the model predicts for one ink printed alone at
/// `nominal` coverage (fractions), by Murray–Davies from tristimulus channel
/// `channel` (0 X, 1 Y, 2 Z; [`TONE_CHANNEL`] gives each ink's own).
pub fn predicted_tvi_in(model: &dyn PressModel, ink: Ink, nominal: f64, channel: usize) -> f64 {
    let mut a = [0.0; 4];
    a[ink.index()] = 1.0;
    let solid = model.xyz(Cmyk::from_array(a)).to_array()[channel];
    a[ink.index()] = nominal;
    let t = model.xyz(Cmyk::from_array(a)).to_array()[channel];
    murray_davies_tone_value(t, model.paper_xyz().to_array()[channel], solid) - nominal
}

/// The tone value increase on the ink's own tone channel (the figure the
/// condition's TVI configures).
pub fn predicted_tvi(model: &dyn PressModel, ink: Ink, nominal: f64) -> f64 {
    predicted_tvi_in(model, ink, nominal, TONE_CHANNEL[ink.index()])
}

/// The C, M, Y build that prints neutral (media-relative a* = b* = 0, i.e.
/// the gray a paper-white-relative proof shows as neutral) at a given cyan.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct GrayBalance {
    /// Ink build in percent C, M, Y (K = 0).
    pub cmy_percent: [f64; 3],
    /// Media-relative CIELAB of that build.
    pub relative_lab: Lab,
    /// Absolute CIELAB of that build.
    pub absolute_lab: Lab,
    /// False when no build within 0–100 % reaches neutral (then the closest is given).
    pub neutral_reached: bool,
}

/// Solves for magenta and yellow that make C = `cyan` print neutral
/// (media-relative a* = b* = 0), by Newton's method with a finite-difference
/// 2 × 2 Jacobian, clamped to 0..1.
pub fn gray_balance(model: &dyn PressModel, cyan: f64) -> GrayBalance {
    let white = MediaWhite::new(model.paper_xyz());
    let rel = |m: f64, y: f64| white.relative_lab(model.xyz(Cmyk::new(cyan, m, y, 0.0)));
    let (mut m, mut y) = (cyan * 0.8, cyan * 0.8);
    for _ in 0..50 {
        let p = rel(m, y);
        if p.a.hypot(p.b) < 1e-6 {
            break;
        }
        let h = 1e-5;
        let pm = rel((m + h).min(1.0), y);
        let py = rel(m, (y + h).min(1.0));
        let hm = (m + h).min(1.0) - m;
        let hy = (y + h).min(1.0) - y;
        if hm <= 0.0 || hy <= 0.0 {
            // At the top end: step back inside and continue.
            m = m.min(1.0 - 2.0 * h);
            y = y.min(1.0 - 2.0 * h);
            continue;
        }
        let j = [[(pm.a - p.a) / hm, (py.a - p.a) / hy], [(pm.b - p.b) / hm, (py.b - p.b) / hy]];
        let det = j[0][0] * j[1][1] - j[0][1] * j[1][0];
        if det.abs() < 1e-12 {
            break;
        }
        let dm = (j[1][1] * -p.a - j[0][1] * -p.b) / det;
        let dy = (-j[1][0] * -p.a + j[0][0] * -p.b) / det;
        m = (m + dm).clamp(0.0, 1.0);
        y = (y + dy).clamp(0.0, 1.0);
    }
    let ink = Cmyk::new(cyan, m, y, 0.0);
    let relative_lab = rel(m, y);
    GrayBalance {
        cmy_percent: [cyan * 100.0, m * 100.0, y * 100.0],
        relative_lab,
        absolute_lab: model.lab(ink),
        neutral_reached: relative_lab.a.hypot(relative_lab.b) < 0.05,
    }
}

/// How closely the model reproduces one of its aims.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct AimCheck {
    pub name: String,
    /// Where the aim comes from: "measured" (the data the condition was
    /// fitted to) or "parameter" (the condition's own aim values).
    pub from: &'static str,
    pub ink_percent: [f64; 4],
    pub aim: Lab,
    pub predicted: Lab,
    pub delta_e2000: f64,
}

/// The predicted tone value increase of one ink at 25, 50 and 75 %.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct InkTvi {
    pub ink: Ink,
    /// Tristimulus channel of the tone value: "X", "Y" or "Z".
    pub channel: &'static str,
    /// Percent points at 25, 50 and 75 % nominal, on the tone channel.
    pub tvi_percent: [f64; 3],
    /// The same from the luminance factor Y.
    pub tvi_luminance_percent: [f64; 3],
}

/// Everything `conditions show` reports about a condition.
#[derive(Debug, Clone, Serialize)]
pub struct ConditionReport {
    pub name: String,
    pub description: String,
    /// The data the condition was characterized from, or how else it was made.
    pub source: String,
    pub default: bool,
    pub built_in: bool,
    pub tac_percent: f64,
    pub min_dot_percent: f64,
    /// g/m² at 100 % per ink (C, M, Y, K).
    pub ink_film_g_per_m2: [f64; 4],
    pub black_generation: BlackPercent,
    /// Yule–Nielsen Neugebauer parameters, when the model has them.
    pub model: Option<ModelFigures>,
    /// Aims and how the model reproduces them (conditions with parameters).
    pub aims: Vec<AimCheck>,
    pub paper: Lab,
    pub predicted_tvi: Vec<InkTvi>,
    /// Gray balance at 50 % cyan.
    pub gray_balance: GrayBalance,
    /// Media-relative CIELAB of the common-practice 50/40/40 build.
    pub rule_of_thumb_50_40_40: Lab,
    /// CIELAB of 100/100/100/100.
    pub four_colour_400: Lab,
    /// Darkest colour found within the ink limit, ink in percent.
    pub darkest_within_tac_percent: [f64; 4],
    pub darkest_within_tac: Lab,
    pub gamut: GamutVolume,
}

/// Black generation in percent for people and scripts.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct BlackPercent {
    pub gcr: f64,
    pub black_start: f64,
    pub black_max: f64,
    pub shape: f64,
    pub uca: f64,
}

/// The model parameters in the units of the condition files.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct ModelFigures {
    pub kind: &'static str,
    pub yule_nielsen_n: f64,
    /// Configured TVI at 50 %, percent (C, M, Y, K).
    pub tvi50_percent: [f64; 4],
    /// First-surface parameter of the black overprint rule, percent of paper.
    pub black_surface_percent: f64,
}

impl ConditionReport {
    /// Computes every figure (the gamut volume takes a fraction of a second).
    pub fn new(c: &PrintingCondition, options: GamutOptions) -> ConditionReport {
        let model = c.model.as_ref();
        let white = MediaWhite::new(model.paper_xyz());
        let check = |name: &str, from: &'static str, ink: [f64; 4], aim: Lab| {
            let predicted = model.lab(Cmyk::from_array(ink));
            AimCheck {
                name: name.to_string(),
                from,
                ink_percent: ink.map(|v| v * 100.0),
                aim,
                predicted,
                delta_e2000: ciede2000(aim, predicted),
            }
        };
        let aims = match &c.params {
            _ if !c.measured.is_empty() => c.measured.iter().map(|m| check(&m.name, "measured", m.ink, m.lab)).collect(),
            Some(p) => AIM_NAMES
                .iter()
                .zip(p.aims.to_array())
                .zip(AIM_INKS)
                .map(|((name, aim), ink)| check(name, "parameter", ink, aim))
                .collect(),
            None => Vec::new(),
        };
        let gamut = gamut_volume(model, c.tac, options);
        let echo = crate::settings::InkEcho::new(c.tac, &c.black);
        ConditionReport {
            name: c.name.clone(),
            description: c.description.clone(),
            source: c.source.clone(),
            default: c.name == builtin::DEFAULT,
            built_in: builtin::names().contains(&c.name.as_str()) && builtin::by_name(&c.name).map(|b| b.params) == Some(c.params),
            tac_percent: echo.tac.0,
            min_dot_percent: c.min_dot * 100.0,
            ink_film_g_per_m2: c.ink_film,
            black_generation: BlackPercent {
                gcr: echo.gcr.0,
                black_start: echo.black_start.0,
                black_max: echo.black_max.0,
                shape: echo.black_shape,
                uca: echo.uca.0,
            },
            model: c.params.map(|p| ModelFigures {
                kind: if c.correction.is_some() {
                    "yule-nielsen-neugebauer+lattice"
                } else {
                    "yule-nielsen-neugebauer"
                },
                yule_nielsen_n: p.n,
                tvi50_percent: p.tvi50.map(|v| v * 100.0),
                black_surface_percent: p.black_surface * 100.0,
            }),
            aims,
            paper: model.lab(Cmyk::ZERO),
            predicted_tvi: Ink::ALL
                .iter()
                .map(|&ink| InkTvi {
                    ink,
                    channel: ["X", "Y", "Z"][TONE_CHANNEL[ink.index()]],
                    tvi_percent: [0.25, 0.5, 0.75].map(|a| predicted_tvi(model, ink, a) * 100.0),
                    tvi_luminance_percent: [0.25, 0.5, 0.75].map(|a| predicted_tvi_in(model, ink, a, 1) * 100.0),
                })
                .collect(),
            gray_balance: gray_balance(model, 0.5),
            rule_of_thumb_50_40_40: white.relative_lab(model.xyz(Cmyk::new(0.5, 0.4, 0.4, 0.0))),
            four_colour_400: model.lab(Cmyk::new(1.0, 1.0, 1.0, 1.0)),
            darkest_within_tac_percent: gamut.darkest_ink.to_percent(),
            darkest_within_tac: gamut.darkest_lab,
            gamut,
        }
    }
}
