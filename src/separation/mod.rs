//! The separation engine: CIELAB → CMYK under a black generation rule and a
//! hard ink limit, gamut mapping per rendering intent, and the separation
//! table that applies the whole chain to pixels.

mod black;
mod engine;
pub mod gamut;
pub(crate) mod limits;
mod picture;
mod reseparation;
pub mod solve;
mod table;

pub use black::{BLACK_CURVE_STEPS, BlackGeneration, BlackOnlyCurve};
pub use engine::{CompressFrom, IN_GAMUT_TOLERANCE, Intent, Limit, LimitSet, Separation, SeparationSettings, Separator, SourceMapping};
pub use gamut::{GamutBoundary, PerceptualMap, RgbGamut, SourceGamut};
pub use picture::{PictureGamut, RgbCode, distinct_colours};
pub use reseparation::{CmykSourceGamut, DEFAULT_RESEPARATION_GRID, RESEPARATION_GRID_RANGE, ReseparationTable};
pub use table::SeparationTable;
