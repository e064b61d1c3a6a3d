//! Options shared by every command that separates or checks colour.

use crate::colour::RgbSpace;
use crate::error::Result;
use crate::separation::{CompressFrom, Intent};
use crate::settings::Percent;
use crate::setup::{ModelInput, ModelSetup, ReadInput};
use clap::Args;

/// Named source RGB spaces, as typed on the command line.
#[derive(Debug, Clone, Copy, PartialEq, Eq, clap::ValueEnum)]
pub enum SourceSpaceArg {
    Srgb,
    DisplayP3,
    Oprgb,
    Romm,
}

impl From<SourceSpaceArg> for RgbSpace {
    fn from(s: SourceSpaceArg) -> RgbSpace {
        match s {
            SourceSpaceArg::Srgb => RgbSpace::Srgb,
            SourceSpaceArg::DisplayP3 => RgbSpace::DisplayP3,
            SourceSpaceArg::Oprgb => RgbSpace::Oprgb,
            SourceSpaceArg::Romm => RgbSpace::Romm,
        }
    }
}

/// Rendering intents as ICC.1:2022 §6.2.2 defines them, as typed on the command line.
#[derive(Debug, Clone, Copy, PartialEq, Eq, clap::ValueEnum)]
pub enum IntentArg {
    /// Compress the source gamut into the printable gamut, keeping relations.
    Perceptual,
    /// Media-relative colorimetric: paper white is the white; out-of-gamut
    /// colours are clipped to the nearest printable colour of the same hue.
    Relative,
    /// Absolute colorimetric: the colour as measured, paper tint included.
    Absolute,
}

impl From<IntentArg> for Intent {
    fn from(i: IntentArg) -> Intent {
        match i {
            IntentArg::Perceptual => Intent::Perceptual,
            IntentArg::Relative => Intent::Relative,
            IntentArg::Absolute => Intent::Absolute,
        }
    }
}

/// Which gamut the perceptual intent compresses from, as typed on the command line.
#[derive(Debug, Clone, Copy, PartialEq, Eq, clap::ValueEnum)]
pub enum CompressFromArg {
    /// The colours of the picture being separated: a picture that barely
    /// leaves the press gamut is barely compressed.
    Picture,
    /// The whole source space, whatever the picture holds (as an ICC
    /// profile's perceptual table must).
    Space,
}

impl From<CompressFromArg> for CompressFrom {
    fn from(c: CompressFromArg) -> CompressFrom {
        match c {
            CompressFromArg::Picture => CompressFrom::Picture,
            CompressFromArg::Space => CompressFrom::Space,
        }
    }
}

/// The printing condition, rendering intent, ink limit and black generation.
#[derive(Debug, Clone, Default, Args)]
pub struct ModelArgs {
    /// Job ticket (TOML) with the job's settings; flags override it.
    #[arg(long, value_name = "FILE")]
    pub ticket: Option<std::path::PathBuf>,
    /// Printing condition: a built-in name (see `platesmith conditions list`)
    /// or a condition file (.toml). Default: coated-offset.
    #[arg(long, value_name = "NAME|FILE")]
    pub condition: Option<String>,
    /// Rendering intent. Default: perceptual.
    #[arg(long, value_enum)]
    pub intent: Option<IntentArg>,
    /// Black point compensation (ISO 18619) with the relative intent.
    #[arg(long)]
    pub bpc: bool,
    /// What the perceptual intent compresses from: the colours of the picture
    /// itself, or the whole source space. Default: picture.
    #[arg(long, value_enum, value_name = "FROM")]
    pub compress_from: Option<CompressFromArg>,
    /// Total ink limit in percent (e.g. 300). Default: the condition's.
    #[arg(long, value_name = "PERCENT")]
    pub tac: Option<Percent>,
    /// Gray component replacement in percent (0 = skeleton black, 100 = black
    /// carries the neutral component as far as the limits allow).
    #[arg(long, value_name = "PERCENT")]
    pub gcr: Option<Percent>,
    /// Darkness of the neutral component, in percent, at which black begins.
    #[arg(long, value_name = "PERCENT")]
    pub black_start: Option<Percent>,
    /// Maximum black in percent.
    #[arg(long, value_name = "PERCENT")]
    pub black_max: Option<Percent>,
    /// Exponent of the black curve above black start (1 linear, larger rises faster).
    #[arg(long, value_name = "EXPONENT")]
    pub black_shape: Option<f64>,
    /// Under colour addition in the deepest shadows, percent.
    #[arg(long, value_name = "PERCENT")]
    pub uca: Option<Percent>,
    /// Source pure black prints as black ink only, at the maximum black (black text stays one plate).
    #[arg(long)]
    pub keep_pure_black: bool,
    /// Nodes per axis of the separation table (5–129).
    #[arg(long, value_name = "N")]
    pub table_grid: Option<usize>,
    /// RGB space assumed for input without an embedded ICC profile. Default: srgb.
    #[arg(long, value_enum)]
    pub source_space: Option<SourceSpaceArg>,
}

impl ModelArgs {
    /// The flags as the settings layer's input (no merging yet).
    pub fn input(&self) -> ModelInput {
        ModelInput {
            ticket: self.ticket.clone(),
            condition: self.condition.clone(),
            intent: self.intent.map(Intent::from),
            bpc: self.bpc,
            compress_from: self.compress_from.map(CompressFrom::from),
            tac: self.tac,
            gcr: self.gcr,
            black_start: self.black_start,
            black_max: self.black_max,
            black_shape: self.black_shape,
            uca: self.uca,
            keep_pure_black: self.keep_pure_black,
            table_grid: self.table_grid,
            source_space: self.source_space.map(RgbSpace::from),
            no_cache: false,
        }
    }

    /// Resolves the condition and applies the ticket, then the flags, over its defaults.
    pub fn resolve(&self) -> Result<ModelSetup> {
        self.input().resolve()
    }

    /// [`ModelArgs::resolve`] for the commands that take `--no-cache`, which
    /// also keeps a measurement file's fit out of the cache folder.
    pub fn resolve_with(&self, cache: &CacheArgs) -> Result<ModelSetup> {
        ModelInput {
            no_cache: cache.no_cache,
            ..self.input()
        }
        .resolve()
    }
}

/// The cache of separation tables and embedded profiles: shared by the commands that separate.
#[derive(Debug, Clone, Default, Args)]
pub struct CacheArgs {
    /// Build the separation table and the embedded profile (and fit a
    /// measurement file given as the condition) anew, neither reading nor
    /// writing the cache folder ($PLATESMITH_CACHE_DIR, else
    /// $XDG_CACHE_HOME/platesmith, else ~/.cache/platesmith). The output is
    /// the same either way; the cache only saves time.
    #[arg(long)]
    pub no_cache: bool,
}

/// How input images are read: shared by the commands that read them.
#[derive(Debug, Clone, Default, Args)]
pub struct InputArgs {
    /// When an embedded profile is unusable, assume --source-space instead of failing.
    #[arg(long)]
    pub ignore_bad_profile: bool,
    /// Largest width or height accepted, pixels. Default: 40000.
    #[arg(long, value_name = "PIXELS")]
    pub max_side: Option<u32>,
    /// Largest decoded image accepted, MiB. Default: 4096.
    #[arg(long, value_name = "MIB")]
    pub max_memory: Option<u64>,
    /// Separate JPEG files whose data is cut short or corrupt (the decoder fills
    /// the gap); the summary notes it. Without it such a file is an error.
    #[arg(long)]
    pub accept_damaged: bool,
    /// The page of a multi-page TIFF to read, from 1. Default: the first
    /// full-resolution page (reduced-resolution copies are passed over).
    #[arg(long, value_name = "N")]
    pub page: Option<u32>,
}

impl InputArgs {
    /// The flags as the settings layer's input; the ticket's `[limits]` fills the rest.
    pub fn read(&self) -> ReadInput {
        ReadInput {
            ignore_bad_profile: self.ignore_bad_profile,
            max_side: self.max_side,
            max_memory_mib: self.max_memory,
            accept_damaged: self.accept_damaged,
            page: self.page,
        }
    }
}
