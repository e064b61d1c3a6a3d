//! Black generation settings.

pub use crate::settings::BlackGeneration;
