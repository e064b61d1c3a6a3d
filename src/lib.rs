//! platesmith: separation of RGB artwork into CMYK plates through a
//! colorimetric model of a printing condition, with black generation, a hard
//! ink limit and checks of gamut and ink before plating.
//!
//! The numeric core (`colour`, `press`, `separation`) does no I/O; file formats
//! and lcms2 live at the edges.

pub mod cache;
pub mod calendar;
pub mod cgats;
pub mod cli;
pub mod colour;
pub mod compare;
pub mod condition_fit;
pub mod error;
pub mod hotfolder;
pub mod icc;
pub mod ink;
pub mod inspect;
pub mod job;
pub mod press;
pub mod proof;
pub mod raster;
pub mod recipe;
pub mod report;
pub mod separation;
pub mod settings;
pub mod setup;
pub mod source;
pub mod ticket;

pub use error::{Error, Result};
