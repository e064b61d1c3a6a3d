//! The separation engine: CIELAB → CMYK under a black generation rule and a
//! hard ink limit, gamut mapping per rendering intent, and the separation
//! table that applies the whole chain to pixels.

mod black;
mod engine;
pub mod gamut;
pub mod solve;
mod table;

pub use black::BlackGeneration;
pub use engine::{IN_GAMUT_TOLERANCE, Intent, Limit, LimitSet, Separation, SeparationSettings, Separator, SourceMapping};
pub use table::SeparationTable;
pub use gamut::{GamutBoundary, PerceptualMap, RgbGamut, SourceGamut};
