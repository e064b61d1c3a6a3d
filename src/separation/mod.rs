//! The separation engine: CIELAB → CMYK under a black generation rule and a
//! hard ink limit, gamut mapping per rendering intent, and the separation
//! table that applies the whole chain to pixels.

mod black;
mod engine;
pub mod frame;
pub mod gamut;
mod intent;
mod inversion;
mod kernel;
pub(crate) mod limits;
mod picture;
mod printable;
mod reseparation;
mod shadows;
mod simd;
pub mod solve;
mod table;
mod table_base;

pub use black::{BLACK_CURVE_STEPS, BlackGeneration, BlackOnlyCurve};
pub use engine::{CompressFrom, Intent, Limit, LimitSet, Separation, SeparationSettings, Separator};
pub use frame::{AbsoluteLab, IntentLab, LabIn, RelativeLab};
pub use gamut::{GamutBoundary, PerceptualMap, RgbGamut, SourceGamut};
pub use intent::SourceMapping;
pub use inversion::WarmStart;
pub use picture::{DistinctColours, PictureGamut, RgbCode, distinct_colours};
pub use printable::IN_GAMUT_TOLERANCE;
pub use reseparation::{CmykSourceGamut, DEFAULT_RESEPARATION_GRID, RESEPARATION_GRID_RANGE, ReseparationTable};
pub use simd::PixelKernel;
pub use table::SeparationTable;
pub use table_base::{NodeLab, PictureCells, PictureStep, TableBase};
