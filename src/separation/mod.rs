//! The separation engine: CIELAB → CMYK under a black generation rule and a
//! hard ink limit, gamut mapping per rendering intent, and the separation
//! table that applies the whole chain to pixels.

mod black;

pub use black::BlackGeneration;
