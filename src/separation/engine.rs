//! The separator: its settings, what it reports for one colour, and the
//! colour of a build as printed. Its work is spread by concern:
//! `intent` (the target each rendering intent asks for), `inversion` (Lab →
//! CMYK), `black` (the black rule), `limits` (the ink limit and maximum
//! black), `printable` (black point, gamut boundary, gamut check).

use super::BlackGeneration;
use super::frame::{AbsoluteLab, IntentLab, RelativeLab};
use super::gamut::GamutBoundary;
use super::intent::SourceMapping;
use super::limits::InkBounds;
use crate::colour::{Lab, Mat3};
use crate::error::Result;
use crate::ink::Cmyk;
use crate::press::{MediaWhite, PressModel, PrintingCondition};
use serde::{Deserialize, Serialize};
use std::sync::Arc;

/// Rendering intents as ICC.1:2022 §6.2.2 defines them.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, Serialize, Deserialize)]
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
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, Default, Serialize, Deserialize)]
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

    /// Checks every value against its allowed range (`crate::settings::Setting`).
    pub fn validate(&self) -> Result<()> {
        use crate::settings::{Coverage, Origin, Setting};
        let pct = |v: f64| Coverage(v).percent().0;
        Setting::Tac.check(pct(self.tac), Origin::Key("TAC"))?;
        Setting::Gcr.check(pct(self.black.gcr), Origin::Key("GCR"))?;
        Setting::BlackStart.check(pct(self.black.black_start), Origin::Key("black start"))?;
        Setting::BlackMax.check(pct(self.black.black_max), Origin::Key("maximum black"))?;
        Setting::Uca.check(pct(self.black.uca), Origin::Key("UCA"))?;
        Setting::BlackShape.check(self.black.shape, Origin::Key("black shape"))?;
        Setting::TableGrid.check_count(self.table_grid, Origin::Key("table grid"))?;
        Ok(())
    }
}

/// One separated colour with what happened to it.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Separation {
    pub cmyk: Cmyk,
    /// The requested colour in the frame of the intent (media-relative for
    /// perceptual and relative, absolute for absolute).
    pub target: IntentLab,
    /// The printed colour of `cmyk` in the same frame.
    pub printed: IntentLab,
    /// The printed colour as an instrument would read it off the sheet.
    pub printed_absolute: AbsoluteLab,
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

/// A separator for one printing condition and one set of settings, built
/// once and shared by every thread.
#[derive(Debug, Clone)]
pub struct Separator {
    pub(super) condition: PrintingCondition,
    pub(super) settings: SeparationSettings,
    pub(super) model: Arc<dyn PressModel>,
    pub(super) media: MediaWhite,
    pub(super) bounds: InkBounds,
    pub(super) black_point: Lab,
    pub(super) black_point_ink: Cmyk,
    pub(super) gamut: Arc<GamutBoundary>,
    pub(super) relative_from_absolute: Mat3,
}

impl Separator {
    pub fn new(condition: PrintingCondition, settings: SeparationSettings) -> Result<Separator> {
        Separator::new_with_boundary(condition, settings, &|sep| sep.printable_boundary())
    }

    /// [`Separator::new`] with the printable gamut's boundary from
    /// `boundary`, which is given the separator with its black point found
    /// and returns its boundary: [`Separator::printable_boundary`], or the
    /// same kept from an earlier run (the table cache keeps it).
    pub fn new_with_boundary(
        condition: PrintingCondition,
        settings: SeparationSettings,
        boundary: &dyn Fn(&Separator) -> GamutBoundary,
    ) -> Result<Separator> {
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
        sep.gamut = Arc::new(boundary(&sep));
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
    pub fn black_point(&self) -> (RelativeLab, Cmyk) {
        (RelativeLab::new(self.black_point), self.black_point_ink)
    }

    pub fn gamut(&self) -> &GamutBoundary {
        &self.gamut
    }

    /// The printed colour, media-relative.
    #[inline]
    pub fn printed_relative(&self, ink: Cmyk) -> RelativeLab {
        RelativeLab::new(self.media.relative_from_absolute_lab(self.model.lab(ink)))
    }

    /// The printed colour, absolute (as measured).
    #[inline]
    pub fn printed_absolute(&self, ink: Cmyk) -> AbsoluteLab {
        AbsoluteLab::new(self.model.lab(ink))
    }

    /// The printed colour in the frame of the configured intent.
    #[inline]
    pub fn printed_in_frame(&self, ink: Cmyk) -> IntentLab {
        IntentLab::new(match self.settings.intent {
            Intent::Absolute => self.printed_absolute(ink).lab(),
            _ => self.printed_relative(ink).lab(),
        })
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

    /// Separates one source colour (CIELAB D50, the ICC PCS, in the frame
    /// the intent reads) with a full account: printed colour, ΔE, gamut
    /// membership and limits.
    pub fn separate(&self, source: IntentLab, mapping: &SourceMapping) -> Separation {
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
            delta_e: requested.delta_e(printed),
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
