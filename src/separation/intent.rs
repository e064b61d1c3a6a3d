//! The colour each rendering intent asks the inversion for (ICC.1:2022
//! §6.2.2): relative colorimetric (optionally with black point compensation,
//! ISO 18619), perceptual through the prepared map from a source or picture
//! gamut, absolute colorimetric.

use super::engine::{Intent, Separator};
use super::frame::{IntentLab, RelativeLab};
use super::gamut::{PerceptualMap, SourceGamut, black_point_compensation};

/// The prepared mapping from one source gamut; see [`Separator::source_mapping`].
pub struct SourceMapping<'a> {
    perceptual: Option<PerceptualMap<'a>>,
}

impl<'a> SourceMapping<'a> {
    /// The perceptual map, when the intent is perceptual.
    pub(super) fn perceptual(&self) -> Option<&PerceptualMap<'a>> {
        self.perceptual.as_ref()
    }

    /// The picture's reach, when perceptual compression starts from a
    /// picture ([`PerceptualMap::picture_reach`]).
    pub fn picture_reach(&self) -> Option<&[f64]> {
        self.perceptual.as_ref().and_then(PerceptualMap::picture_reach)
    }
}

impl Separator {
    /// Converts a colour from the intent frame to the working (media-relative) frame.
    pub fn to_working(&self, lab: IntentLab) -> RelativeLab {
        RelativeLab::new(match self.settings.intent {
            Intent::Absolute => self.media.relative_lab_from_absolute(lab.lab()),
            _ => lab.lab(),
        })
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
    /// colour given as CIELAB D50 (the ICC PCS) in the frame the intent
    /// reads (media-relative, or absolute for the absolute intent).
    pub fn intent_target(&self, source: IntentLab, mapping: &SourceMapping) -> RelativeLab {
        let source = source.lab();
        RelativeLab::new(match self.settings.intent {
            Intent::Relative if self.settings.bpc => black_point_compensation(source, 0.0, self.black_point.to_xyz().y),
            Intent::Relative => source,
            Intent::Perceptual => match &mapping.perceptual {
                Some(map) => map.map(source),
                None => source,
            },
            Intent::Absolute => self.media.relative_lab_from_absolute(source),
        })
    }
}
