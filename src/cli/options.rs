//! Options shared by every command that separates or checks colour.

use crate::colour::RgbSpace;
use crate::error::{Error, Result};
use crate::press::PrintingCondition;
use crate::separation::{Intent, SeparationSettings};
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

/// The printing condition, rendering intent, ink limit and black generation.
#[derive(Debug, Clone, Default, Args)]
pub struct ModelArgs {
    /// Printing condition: a built-in name (see `platesmith conditions list`)
    /// or a condition file (.toml). Default: coated-offset.
    #[arg(long, value_name = "NAME|FILE")]
    pub condition: Option<String>,
    /// Rendering intent. Default: perceptual.
    #[arg(long, value_enum)]
    pub intent: Option<Intent>,
    /// Black point compensation (ISO 18619) with the relative intent.
    #[arg(long)]
    pub bpc: bool,
    /// Total ink limit in percent (e.g. 300). Default: the condition's.
    #[arg(long, value_name = "PERCENT")]
    pub tac: Option<f64>,
    /// Gray component replacement in percent (0 = skeleton black, 100 = black
    /// carries the neutral component as far as the limits allow).
    #[arg(long, value_name = "PERCENT")]
    pub gcr: Option<f64>,
    /// Darkness of the neutral component, in percent, at which black begins.
    #[arg(long, value_name = "PERCENT")]
    pub black_start: Option<f64>,
    /// Maximum black in percent.
    #[arg(long, value_name = "PERCENT")]
    pub black_max: Option<f64>,
    /// Exponent of the black curve above black start (1 linear, larger rises faster).
    #[arg(long, value_name = "EXPONENT")]
    pub black_shape: Option<f64>,
    /// Under colour addition in the deepest shadows, percent.
    #[arg(long, value_name = "PERCENT")]
    pub uca: Option<f64>,
    /// Source pure black prints as 100 % black ink only (black text stays one plate).
    #[arg(long)]
    pub keep_pure_black: bool,
    /// Nodes per axis of the separation table (5–129).
    #[arg(long, value_name = "N")]
    pub table_grid: Option<usize>,
    /// RGB space assumed for input without an embedded ICC profile. Default: srgb.
    #[arg(long, value_enum)]
    pub source_space: Option<SourceSpaceArg>,
}

/// A validated model configuration.
#[derive(Debug, Clone)]
pub struct ModelSetup {
    pub condition: PrintingCondition,
    pub settings: SeparationSettings,
    pub source_space: RgbSpace,
}

fn percent(name: &str, value: f64, lo: f64, hi: f64) -> Result<f64> {
    if value.is_finite() && (lo..=hi).contains(&value) {
        Ok(value / 100.0)
    } else {
        Err(Error::usage(format!("--{name} {value}: allowed range is {lo}–{hi} %")))
    }
}

impl ModelArgs {
    /// Resolves the condition and applies the flags over its defaults.
    pub fn resolve(&self) -> Result<ModelSetup> {
        let condition = crate::press::load_condition(self.condition.as_deref().unwrap_or(crate::press::DEFAULT_CONDITION))?;
        let mut settings = SeparationSettings::for_condition(&condition);
        if let Some(i) = self.intent {
            settings.intent = i;
        }
        settings.bpc |= self.bpc;
        if let Some(v) = self.tac {
            settings.tac = percent("tac", v, 100.0, 400.0)?;
        }
        if let Some(v) = self.gcr {
            settings.black.gcr = percent("gcr", v, 0.0, 100.0)?;
        }
        if let Some(v) = self.black_start {
            settings.black.black_start = percent("black-start", v, 0.0, 99.0)?;
        }
        if let Some(v) = self.black_max {
            settings.black.black_max = percent("black-max", v, 0.0, 100.0)?;
        }
        if let Some(v) = self.black_shape {
            settings.black.shape = v;
        }
        if let Some(v) = self.uca {
            settings.black.uca = percent("uca", v, 0.0, 100.0)?;
        }
        settings.keep_pure_black |= self.keep_pure_black;
        if let Some(n) = self.table_grid {
            settings.table_grid = n;
        }
        settings.validate()?;
        let source_space = self.source_space.map(RgbSpace::from).unwrap_or(RgbSpace::Srgb);
        Ok(ModelSetup { condition, settings, source_space })
    }
}
