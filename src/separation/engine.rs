//! The separator: settings, black generation and gamut mapping around the
//! constrained inversion, for one colour at a time.

use super::BlackGeneration;
use super::gamut::{GamutBoundary, PerceptualMap, SourceGamut, black_point_compensation};
use super::limits::InkBounds;
use super::solve::{Problem, Solution};
use crate::colour::{Lab, Mat3, ciede2000};
use crate::error::{Error, Result};
use crate::ink::Cmyk;
use crate::press::{MediaWhite, PressModel, PrintingCondition};
use serde::{Deserialize, Serialize};
use std::sync::Arc;

/// Rendering intents as ICC.1:2022 §6.2.2 defines them.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, Serialize, Deserialize, clap::ValueEnum)]
#[serde(rename_all = "kebab-case")]
pub enum Intent {
    /// Compress the source gamut into the printable gamut, keeping relations.
    Perceptual,
    /// Media-relative colorimetric: paper white is the white; out-of-gamut
    /// colours are clipped to the nearest printable colour of the same hue.
    Relative,
    /// Absolute colorimetric: the colour as measured, paper tint included.
    Absolute,
}

impl Intent {
    pub fn name(self) -> &'static str {
        match self {
            Intent::Perceptual => "perceptual",
            Intent::Relative => "relative",
            Intent::Absolute => "absolute",
        }
    }
}

/// Which gamut the perceptual intent compresses from.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, Default, Serialize, Deserialize, clap::ValueEnum)]
#[serde(rename_all = "kebab-case")]
pub enum CompressFrom {
    /// The colours of the picture being separated: a picture that barely
    /// leaves the press gamut is barely compressed.
    #[default]
    Picture,
    /// The whole source space, whatever the picture holds (as an ICC
    /// profile's perceptual table must).
    Space,
}

impl CompressFrom {
    pub fn name(self) -> &'static str {
        match self {
            CompressFrom::Picture => "picture",
            CompressFrom::Space => "space",
        }
    }
}

/// What kept a colour from being printed as asked.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, Serialize, Deserialize)]
#[serde(rename_all = "kebab-case")]
pub enum Limit {
    /// The inks cannot make the colour at any coverage.
    InkGamut,
    /// The colour needs more total ink than the limit allows.
    InkLimit,
    /// The colour needs more black than the maximum black allows.
    MaximumBlack,
}

impl Limit {
    pub fn name(self) -> &'static str {
        match self {
            Limit::InkGamut => "ink-gamut",
            Limit::InkLimit => "ink-limit",
            Limit::MaximumBlack => "maximum-black",
        }
    }
}

/// Everything that decides a separation besides the printing condition.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct SeparationSettings {
    pub intent: Intent,
    /// Black point compensation (ISO 18619) for the relative intent.
    pub bpc: bool,
    /// Total ink limit as a fraction (3.2 = 320 %).
    pub tac: f64,
    pub black: BlackGeneration,
    /// Source pure black (RGB 0,0,0 or CMYK 0/0/0/100) prints as black ink only.
    pub keep_pure_black: bool,
    /// Nodes per axis of the separation table.
    pub table_grid: usize,
    /// The gamut perceptual mapping compresses from.
    #[serde(default)]
    pub compress_from: CompressFrom,
}

impl SeparationSettings {
    /// The condition's defaults with the perceptual intent.
    pub fn for_condition(condition: &PrintingCondition) -> SeparationSettings {
        SeparationSettings {
            intent: Intent::Perceptual,
            bpc: false,
            tac: condition.tac,
            black: condition.black,
            keep_pure_black: false,
            table_grid: 33,
            compress_from: CompressFrom::Picture,
        }
    }

    /// Checks every value against its allowed range.
    pub fn validate(&self) -> Result<()> {
        let pct = |name: &str, v: f64, lo: f64, hi: f64| {
            if !(v.is_finite() && v >= lo && v <= hi) {
                Err(Error::usage(format!(
                    "{name} is {:.4}; allowed range is {}–{} %",
                    v * 100.0,
                    lo * 100.0,
                    hi * 100.0
                )))
            } else {
                Ok(())
            }
        };
        pct("TAC", self.tac, 1.0, 4.0)?;
        pct("GCR", self.black.gcr, 0.0, 1.0)?;
        pct("black start", self.black.black_start, 0.0, 0.99)?;
        pct("maximum black", self.black.black_max, 0.0, 1.0)?;
        pct("UCA", self.black.uca, 0.0, 1.0)?;
        if !(self.black.shape.is_finite() && (0.2..=5.0).contains(&self.black.shape)) {
            return Err(Error::usage(format!("black shape is {}; allowed range is 0.2–5", self.black.shape)));
        }
        if !(5..=129).contains(&self.table_grid) {
            return Err(Error::usage(format!(
                "table grid is {}; allowed range is 5–129 nodes per axis",
                self.table_grid
            )));
        }
        Ok(())
    }
}

/// One separated colour with what happened to it.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Separation {
    pub cmyk: Cmyk,
    /// The requested colour in the frame of the intent (media-relative for
    /// perceptual and relative, absolute for absolute).
    pub target: Lab,
    /// The printed colour of `cmyk` in the same frame.
    pub printed: Lab,
    /// The printed colour as an instrument would read it off the sheet.
    pub printed_absolute: Lab,
    /// CIEDE2000 between `target` and `printed`.
    pub delta_e: f64,
    /// True when the requested colour is printable under the limits.
    pub in_gamut: bool,
    /// What kept an out-of-gamut colour out (empty when in gamut).
    pub limited_by: LimitSet,
}

/// A small set of [`Limit`]s.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub struct LimitSet {
    bits: u8,
}

impl LimitSet {
    pub fn insert(&mut self, limit: Limit) {
        self.bits |= 1 << limit as u8;
    }
    pub fn contains(&self, limit: Limit) -> bool {
        self.bits & (1 << limit as u8) != 0
    }
    pub fn is_empty(&self) -> bool {
        self.bits == 0
    }
    pub fn iter(&self) -> impl Iterator<Item = Limit> + '_ {
        [Limit::InkGamut, Limit::InkLimit, Limit::MaximumBlack]
            .into_iter()
            .filter(|l| self.contains(*l))
    }
}

/// The prepared mapping from one source gamut; see [`Separator::source_mapping`].
pub struct SourceMapping<'a> {
    perceptual: Option<PerceptualMap<'a>>,
}

/// A colour counts as printable when the inversion reaches it this closely.
pub const IN_GAMUT_TOLERANCE: f64 = 0.1;

/// A clipped solution this close to its target (colour-error units) lies on
/// the curve of exact solutions, near enough for the exact search to start.
const REACH_TOLERANCE: f64 = 1e-2;

/// Weight of the black aim in the inversion (colour-error units per unit black).
const BLACK_AIM_WEIGHT: f64 = 0.05;

/// Weight of hue error relative to lightness and chroma error when clipping
/// (hue-preserving minimum-ΔE clipping, after HPMINDE of CIE 156:2004).
const HUE_WEIGHT: f64 = 3.0;

/// A separator for one printing condition and one set of settings, built
/// once and shared by every thread.
#[derive(Debug, Clone)]
pub struct Separator {
    condition: PrintingCondition,
    pub(super) settings: SeparationSettings,
    model: Arc<dyn PressModel>,
    media: MediaWhite,
    pub(super) bounds: InkBounds,
    pub(super) black_point: Lab,
    black_point_ink: Cmyk,
    gamut: Arc<GamutBoundary>,
    relative_from_absolute: Mat3,
}

/// C, M, Y of the six process colours in hue order: red (M+Y), yellow,
/// green (C+Y), cyan, blue (C+M), magenta.
const PROCESS_CORNERS: [[f64; 3]; 6] = [
    [0.0, 1.0, 1.0],
    [0.0, 0.0, 1.0],
    [1.0, 0.0, 1.0],
    [1.0, 0.0, 0.0],
    [1.0, 1.0, 0.0],
    [0.0, 1.0, 0.0],
];

impl Separator {
    pub fn new(condition: PrintingCondition, settings: SeparationSettings) -> Result<Separator> {
        settings.validate()?;
        let model = condition.model.clone();
        let media = MediaWhite::new(model.paper_xyz());
        let bounds = InkBounds::new(settings.tac, settings.black.black_max);
        let mut sep = Separator {
            condition,
            settings,
            model,
            media,
            bounds,
            black_point: Lab::new(0.0, 0.0, 0.0),
            black_point_ink: Cmyk::ZERO,
            gamut: Arc::new(GamutBoundary::from_samples(std::iter::empty(), 0.0, 100.0)),
            relative_from_absolute: Self::relative_jacobian(&media),
        };
        let (bp_ink, bp) = sep.find_black_point();
        sep.black_point = bp;
        sep.black_point_ink = bp_ink;
        sep.gamut = Arc::new(sep.build_gamut_boundary());
        Ok(sep)
    }

    pub fn settings(&self) -> &SeparationSettings {
        &self.settings
    }

    pub fn condition(&self) -> &PrintingCondition {
        &self.condition
    }

    pub fn media_white(&self) -> &MediaWhite {
        &self.media
    }

    /// The darkest printable neutral (media-relative) and its ink build.
    pub fn black_point(&self) -> (Lab, Cmyk) {
        (self.black_point, self.black_point_ink)
    }

    pub fn gamut(&self) -> &GamutBoundary {
        &self.gamut
    }

    /// The printed colour, media-relative.
    #[inline]
    pub fn printed_relative(&self, ink: Cmyk) -> Lab {
        self.media.relative_lab(self.model.xyz(ink))
    }

    /// The printed colour, absolute (as measured).
    #[inline]
    pub fn printed_absolute(&self, ink: Cmyk) -> Lab {
        self.model.lab(ink)
    }

    /// The printed colour in the frame of the configured intent.
    #[inline]
    pub fn printed_in_frame(&self, ink: Cmyk) -> Lab {
        match self.settings.intent {
            Intent::Absolute => self.printed_absolute(ink),
            _ => self.printed_relative(ink),
        }
    }

    /// Converts a colour from the intent frame to the working (media-relative) frame.
    fn to_working(&self, lab: Lab) -> Lab {
        match self.settings.intent {
            Intent::Absolute => self.media.relative_lab_from_absolute(lab),
            _ => lab,
        }
    }

    /// The printed colour (media-relative) and its derivatives by coverage,
    /// from the model's own Jacobian of absolute CIELAB. Media-relative Lab
    /// is CIELAB of the same XYZ against the paper as white, which in the
    /// cube-root range of CIELAB is an affine map of absolute Lab
    /// ([`Separator::relative_from_absolute`]); its matrix carries the
    /// Jacobian across (near black, where CIELAB turns linear, the step is
    /// still a good Newton direction and the residual stays exact).
    fn forward(&self, x: [f64; 4]) -> ([f64; 3], [[f64; 4]; 3]) {
        let (abs, jac) = self.model.lab_jacobian(Cmyk::from_array(x));
        let rel = self.media.relative_lab_from_absolute(abs).to_array();
        let m = &self.relative_from_absolute.0;
        let mut out = [[0.0; 4]; 3];
        for r in 0..3 {
            for c in 0..4 {
                out[r][c] = m[r][0] * jac[0][c] + m[r][1] * jac[1][c] + m[r][2] * jac[2][c];
            }
        }
        (rel, out)
    }

    /// d(relative Lab)/d(absolute Lab) in the cube-root range of CIELAB:
    /// f(X/X_paper) = (X_n/X_paper)^(1/3)·f(X/X_n) per tristimulus channel.
    fn relative_jacobian(media: &MediaWhite) -> Mat3 {
        let d50 = crate::colour::D50.xyz;
        let w = media.white;
        let (cx, cy, cz) = ((d50.x / w.x).cbrt(), (d50.y / w.y).cbrt(), (d50.z / w.z).cbrt());
        Mat3([
            [cy, 0.0, 0.0],
            [500.0 * (cx - cy) / 116.0, cx, 0.0],
            [200.0 * (cy - cz) / 116.0, 0.0, cz],
        ])
    }

    /// The colour-error weighting for a target: lightness and chroma error
    /// count once, hue error `HUE_WEIGHT` times, phased in with chroma since a
    /// neutral has no hue.
    fn clip_metric(target: Lab) -> Mat3 {
        let c = target.chroma();
        if c < 1e-9 {
            return Mat3::IDENTITY;
        }
        let (u1, u2) = (target.a / c, target.b / c);
        let t = (c / 5.0).clamp(0.0, 1.0);
        let w = 1.0 + (HUE_WEIGHT - 1.0) * t * t * (3.0 - 2.0 * t);
        Mat3([[1.0, 0.0, 0.0], [0.0, u1, u2], [0.0, -w * u2, w * u1]])
    }

    fn solve_with(&self, target: Lab, k_aim: f64, bounds: InkBounds, start: [f64; 4]) -> Solution {
        let forward = |x: [f64; 4]| self.forward(x);
        Problem {
            forward: &forward,
            target: target.to_array(),
            metric: Self::clip_metric(target),
            k_aim,
            lambda: BLACK_AIM_WEIGHT,
            bounds,
        }
        .solve(start)
    }

    /// A first guess for a target: a neutral build of about its lightness.
    fn cold_start(target: Lab) -> [f64; 4] {
        let v = ((100.0 - target.l) / 80.0).clamp(0.0, 1.0);
        [v * 0.8, v * 0.7, v * 0.7, (v - 0.6).max(0.0)]
    }

    /// Targets darker than the black point or lighter than paper have no
    /// printable neighbour of their own lightness: clip lightness first to
    /// the printable range (keeping a*, b*, offset by the black point's own
    /// tint below it), so that the deepest shadows all land on the rich black
    /// and not on scattered builds along the flat floor of the gamut.
    fn clamp_lightness(&self, target: Lab) -> Lab {
        let bp = self.black_point;
        if target.l < bp.l {
            Lab::new(bp.l, target.a + bp.a, target.b + bp.b)
        } else if target.l > 100.0 {
            Lab::new(100.0, target.a, target.b)
        } else {
            target
        }
    }

    pub(super) fn solve_exact(&self, target: Lab, k_aim: f64, bounds: InkBounds, start: [f64; 4]) -> Option<Solution> {
        let forward = |x: [f64; 4]| self.forward(x);
        Problem {
            forward: &forward,
            target: target.to_array(),
            metric: Mat3::IDENTITY,
            k_aim,
            lambda: BLACK_AIM_WEIGHT,
            bounds,
        }
        .solve_exact(start)
    }

    /// The nearest printable colour (hue-weighted), for targets outside the
    /// gamut. A neighbour's solution (`start`) keeps neighbouring colours on
    /// one branch, but a neighbour across a steep part of the table (say a
    /// saturated yellow beside a near-white) can lead to a far local minimum,
    /// so the neutral start of the target's lightness is always tried too;
    /// with no neighbour, two more starts.
    fn clip(&self, target: Lab, start: Option<[f64; 4]>) -> Solution {
        let cold = Self::cold_start(target);
        let mut best = self.solve_with(target, 0.0, self.bounds, start.unwrap_or(cold));
        if start.is_some() {
            let s = self.solve_with(target, 0.0, self.bounds, cold);
            if s.colour_error + 1e-9 < best.colour_error {
                best = s;
            }
        } else {
            for alt in [[0.0, 0.0, 0.0, 0.0], [0.9, 0.8, 0.8, self.bounds.k_max]] {
                let s = self.solve_with(target, 0.0, self.bounds, alt);
                if s.colour_error + 1e-9 < best.colour_error {
                    best = s;
                }
            }
        }
        best
    }

    /// Inverts a working-frame target under the black generation rule.
    /// `start` is a warm start (a neighbour's solution) when there is one.
    ///
    /// For a printable target the exact solutions form a curve through ink
    /// space along which black runs from its least (Kmin) to its most (Kmax)
    /// possible value; black generation picks
    /// K = Kmin + share·(Kmax − Kmin), where the share grows with the
    /// darkness of the target past black start (see [`Separator::black_share`]).
    pub fn invert(&self, target: Lab, start: Option<[f64; 4]>) -> Solution {
        let target = self.clamp_lightness(target);
        let cold = Self::cold_start(target);
        let first = start.unwrap_or(cold);
        let low = self
            .solve_exact(target, 0.0, self.bounds, first)
            .or_else(|| self.solve_exact(target, 0.0, self.bounds, cold))
            .or_else(|| self.solve_exact(target, 0.0, self.bounds, [0.9, 0.8, 0.8, self.bounds.k_max]));
        // Newton from a far start can run into a corner of the ink bounds
        // before it reaches the curve of exact solutions; the bounded
        // least-squares clip gets there robustly, and the exact search then
        // starts on the curve.
        let low = match low {
            Some(low) => low,
            None => {
                let clipped = self.clip(target, start);
                if clipped.colour_error > REACH_TOLERANCE {
                    return clipped;
                }
                self.solve_exact(target, 0.0, self.bounds, clipped.x).unwrap_or(clipped)
            }
        };
        self.generate_black(target, low)
    }

    /// True where the table smooths the deepest shadows in ink space: the
    /// intents that carry the source black onto the press black (relative
    /// colorimetric with black point compensation, ISO 18619, and
    /// perceptual, whose lightness curve compresses the deep shadows toward
    /// the press black), where the inversion swings the plates widely for
    /// small colour differences.
    pub fn smooths_shadows_in_ink(&self) -> bool {
        self.settings.intent == Intent::Relative && self.settings.bpc
    }

    /// The printed red (M+Y), yellow, green (C+Y), cyan, blue (C+M) and
    /// magenta solids, media-relative.
    pub fn process_primaries(&self) -> [Lab; 6] {
        PROCESS_CORNERS.map(|[c, m, y]| self.printed_relative(Cmyk::new(c, m, y, 0.0)))
    }

    /// Dense samples along the edges of the ink cube (no black) joining the
    /// process colours: the ridge of the printable gamut that holds its cusps.
    pub fn process_ridge(&self) -> Vec<Lab> {
        super::gamut::ridge_samples(&PROCESS_CORNERS, &|[c, m, y]| self.printed_relative(Cmyk::new(c, m, y, 0.0)))
    }

    /// Prepares the mapping of colours from one whole source gamut (the
    /// perceptual intent compresses from it; the colorimetric intents need
    /// none). See [`Separator::picture_mapping`] for a picture's own gamut.
    pub fn source_mapping<'a>(&'a self, source: &'a dyn SourceGamut) -> SourceMapping<'a> {
        let perceptual = (self.settings.intent == Intent::Perceptual)
            .then(|| PerceptualMap::new(&self.gamut, &self.process_ridge(), self.black_point, source, 0.0));
        SourceMapping { perceptual }
    }

    /// Prepares the mapping of one picture's colours: as
    /// [`Separator::source_mapping`], but perceptual compression starts from
    /// the picture's own gamut (`CompressFrom::Picture`).
    pub fn picture_mapping(&self, picture: &super::PictureGamut) -> SourceMapping<'_> {
        let perceptual = (self.settings.intent == Intent::Perceptual)
            .then(|| PerceptualMap::for_picture(&self.gamut, &self.process_ridge(), self.black_point, picture, 0.0));
        SourceMapping { perceptual }
    }

    /// The colour the intent asks for, in the working frame, for a source
    /// colour given as media-relative CIELAB D50 (the ICC PCS).
    pub fn intent_target(&self, source: Lab, mapping: &SourceMapping) -> Lab {
        match self.settings.intent {
            Intent::Relative if self.settings.bpc => black_point_compensation(source, 0.0, self.black_point.to_xyz().y),
            Intent::Relative => source,
            Intent::Perceptual => match &mapping.perceptual {
                Some(map) => map.map(source),
                None => source,
            },
            Intent::Absolute => self.media.relative_lab_from_absolute(source),
        }
    }

    /// Separates one source colour (media-relative CIELAB D50) with a full
    /// account: printed colour, ΔE, gamut membership and limits.
    pub fn separate(&self, source: Lab, mapping: &SourceMapping) -> Separation {
        let target = self.intent_target(source, mapping);
        let solution = self.invert(target, None);
        let cmyk = Cmyk::from_array(solution.x);
        let requested = source; // in the intent frame (absolute intent: PCS taken as absolute)
        let printed = self.printed_in_frame(cmyk);
        let (in_gamut, limited_by) = self.gamut_check(self.to_working(requested));
        Separation {
            cmyk,
            target: requested,
            printed,
            printed_absolute: self.printed_absolute(cmyk),
            delta_e: ciede2000(requested, printed),
            in_gamut,
            limited_by,
        }
    }

    /// Separates an ink build given directly (`cmyk:` recipes): the build is
    /// kept as it is, but reported against the limits.
    pub fn describe_build(&self, cmyk: Cmyk) -> Separation {
        let printed = self.printed_in_frame(cmyk);
        let limited_by = self.bounds.broken_by(cmyk);
        Separation {
            cmyk,
            target: printed,
            printed,
            printed_absolute: self.printed_absolute(cmyk),
            delta_e: 0.0,
            in_gamut: limited_by.is_empty(),
            limited_by,
        }
    }

    /// Whether a working-frame colour is printable under the limits and, if
    /// not, which limits keep it out: relaxing a limit that lets the colour
    /// be reached names that limit; if none does, the inks themselves.
    pub fn gamut_check(&self, target: Lab) -> (bool, LimitSet) {
        let mut limits = LimitSet::default();
        let reach = |bounds: InkBounds| {
            let mut best = self.solve_with(target, 0.0, bounds, Self::cold_start(target));
            for alt in [[0.0; 4], [0.9, 0.8, 0.8, bounds.k_max]] {
                let s = self.solve_with(target, 0.0, bounds, alt);
                if s.colour_error < best.colour_error {
                    best = s;
                }
            }
            ciede2000(target, Lab::from_array(best.lab))
        };
        if reach(self.bounds) <= IN_GAMUT_TOLERANCE {
            return (true, limits);
        }
        let free_tac = InkBounds { tac: 4.0, ..self.bounds };
        let free_black = InkBounds { k_max: 1.0, ..self.bounds };
        let free_both = InkBounds::new(4.0, 1.0);
        let tac_helps = self.bounds.tac < 4.0 && reach(free_tac) <= IN_GAMUT_TOLERANCE;
        let black_helps = self.bounds.k_max < 1.0 && reach(free_black) <= IN_GAMUT_TOLERANCE;
        if tac_helps {
            limits.insert(Limit::InkLimit);
        }
        if black_helps {
            limits.insert(Limit::MaximumBlack);
        }
        if !tac_helps && !black_helps {
            if (self.bounds.tac < 4.0 || self.bounds.k_max < 1.0) && reach(free_both) <= IN_GAMUT_TOLERANCE {
                limits.insert(Limit::InkLimit);
                if self.bounds.k_max < 1.0 {
                    limits.insert(Limit::MaximumBlack);
                }
            } else {
                limits.insert(Limit::InkGamut);
            }
        }
        (false, limits)
    }

    /// The rich black: black at its maximum, the other inks filling the ink
    /// limit in a neutral to slightly cool balance (common practice), found as
    /// the darkest build whose a*, b* sit at (0, −0.5).
    fn find_black_point(&self) -> (Cmyk, Lab) {
        let forward = |x: [f64; 4]| self.forward(x);
        let k = self.bounds.k_max;
        let problem = Problem {
            forward: &forward,
            target: [0.0, 0.0, -0.5],
            metric: Mat3::diagonal([0.15, 1.0, 1.0]),
            k_aim: k,
            lambda: 50.0,
            bounds: self.bounds,
        };
        let rest = ((self.bounds.tac - k) / 3.0).clamp(0.0, 1.0);
        let s = problem.solve([rest, rest, rest, k]);
        let ink = Cmyk::from_array(s.x);
        (ink, self.printed_relative(ink))
    }

    /// Samples the boundary of the feasible ink set and describes the
    /// printable gamut (media-relative).
    ///
    /// The outer surface of the gamut is the image of the two-dimensional
    /// faces of the ink box (two inks at a bound), of the faces where the ink
    /// limit meets one bound, and of folds inside the three-dimensional faces:
    /// the first two are sampled densely, the three-dimensional faces coarsely.
    fn build_gamut_boundary(&self) -> GamutBoundary {
        use rayon::prelude::*;
        const DENSE: usize = 129;
        const COARSE: usize = 17;
        let b = self.bounds;
        let upper = |a: usize| if a == 3 { b.k_max } else { 1.0 };
        // Each job: a set of fixed coordinates, the free ones on a grid, and
        // optionally one coordinate solved from the ink limit.
        struct Job {
            fixed: Vec<(usize, f64)>,
            free: Vec<usize>,
            solved: Option<usize>,
            steps: usize,
        }
        let mut jobs = Vec::new();
        for a1 in 0..4 {
            for a2 in a1 + 1..4 {
                for (v1, v2) in [(0.0, 0.0), (0.0, 1.0), (1.0, 0.0), (1.0, 1.0)] {
                    let free: Vec<usize> = (0..4).filter(|&a| a != a1 && a != a2).collect();
                    jobs.push(Job {
                        fixed: vec![(a1, v1 * upper(a1)), (a2, v2 * upper(a2))],
                        free,
                        solved: None,
                        steps: DENSE,
                    });
                }
            }
            for v in [0.0, 1.0] {
                let free: Vec<usize> = (0..4).filter(|&a| a != a1).collect();
                jobs.push(Job {
                    fixed: vec![(a1, v * upper(a1))],
                    free,
                    solved: None,
                    steps: COARSE,
                });
            }
        }
        if b.tac < 3.0 + b.k_max {
            for bound in 0..4 {
                for v in [0.0, 1.0] {
                    let rest: Vec<usize> = (0..4).filter(|&a| a != bound).collect();
                    for &solved in &rest {
                        let free: Vec<usize> = rest.iter().copied().filter(|&a| a != solved).collect();
                        jobs.push(Job {
                            fixed: vec![(bound, v * upper(bound))],
                            free,
                            solved: Some(solved),
                            steps: DENSE,
                        });
                    }
                }
            }
            for solved in 0..4 {
                let free: Vec<usize> = (0..4).filter(|&a| a != solved).collect();
                jobs.push(Job {
                    fixed: vec![],
                    free,
                    solved: Some(solved),
                    steps: COARSE,
                });
            }
        }
        let mut samples: Vec<Lab> = jobs
            .par_iter()
            .flat_map_iter(|job| {
                let n = job.steps;
                let count = n.pow(job.free.len() as u32);
                let mut out = Vec::with_capacity(count);
                for idx in 0..count {
                    let mut x = [0.0; 4];
                    for &(a, v) in &job.fixed {
                        x[a] = v;
                    }
                    let mut rem = idx;
                    for &a in &job.free {
                        x[a] = (rem % n) as f64 / (n - 1) as f64 * upper(a);
                        rem /= n;
                    }
                    if let Some(sv) = job.solved {
                        let rest = b.tac - (x.iter().sum::<f64>() - x[sv]);
                        if !(0.0..=upper(sv)).contains(&rest) {
                            continue;
                        }
                        x[sv] = rest;
                    } else if x.iter().sum::<f64>() > b.tac + 1e-12 {
                        continue;
                    }
                    out.push(self.printed_relative(Cmyk::from_array(x)));
                }
                out
            })
            .collect();
        // The edges of the ink box carry the ridges and cusps of the gamut
        // (solids, overprints): sample them densely.
        const EDGE_STEPS: usize = 512;
        for corner in 0..16usize {
            for axis in 0..4 {
                if corner & (1 << axis) != 0 {
                    continue;
                }
                for i in 0..=EDGE_STEPS {
                    let t = i as f64 / EDGE_STEPS as f64;
                    let mut x: [f64; 4] = std::array::from_fn(|a| ((corner >> a) & 1) as f64);
                    x[axis] = t;
                    x[3] *= b.k_max;
                    let x = b.project(x);
                    samples.push(self.printed_relative(Cmyk::from_array(x)));
                }
            }
        }
        GamutBoundary::from_samples(samples, self.black_point.l, 100.0)
    }

    /// The same separator for another rendering intent (and black point
    /// compensation setting). The printing condition, limits, black point and
    /// gamut boundary do not depend on the intent and are shared, so this is
    /// cheap (an ICC profile needs all intents from one set of settings).
    pub fn with_intent(&self, intent: Intent, bpc: bool) -> Separator {
        let mut sep = self.clone();
        sep.settings.intent = intent;
        sep.settings.bpc = bpc;
        sep
    }
}
