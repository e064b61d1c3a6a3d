//! Options shared by every command that separates or checks colour.

use crate::colour::RgbSpace;
use crate::error::{Error, Result};
use crate::press::PrintingCondition;
use crate::raster::Limits;
use crate::separation::{CompressFrom, Intent, SeparationSettings};
use crate::ticket::Ticket;
use clap::{Args, ValueEnum};

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
    /// Job ticket (TOML) with the job's settings; flags override it.
    #[arg(long, value_name = "FILE")]
    pub ticket: Option<std::path::PathBuf>,
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
    /// What the perceptual intent compresses from: the colours of the picture
    /// itself, or the whole source space. Default: picture.
    #[arg(long, value_enum, value_name = "FROM")]
    pub compress_from: Option<CompressFrom>,
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

/// A validated model configuration.
#[derive(Debug, Clone)]
pub struct ModelSetup {
    pub condition: PrintingCondition,
    /// The name or file the condition came from, as given.
    pub condition_spec: String,
    pub settings: SeparationSettings,
    pub source_space: RgbSpace,
    /// The ticket the job was read from (empty when none).
    pub ticket: Ticket,
}

impl ModelSetup {
    /// The effective model settings as a ticket section (percent), so a job
    /// can be repeated exactly.
    pub fn model_section(&self) -> crate::ticket::ModelSection {
        let s = &self.settings;
        let r = |v: f64| crate::report::round_to(v * 100.0, 4);
        crate::ticket::ModelSection {
            condition: Some(self.condition_spec.clone()),
            source_condition: self.ticket.model.source_condition.clone(),
            intent: Some(s.intent.name().to_string()),
            bpc: Some(s.bpc),
            compress_from: Some(s.compress_from.name().to_string()),
            tac: Some(r(s.tac)),
            gcr: Some(r(s.black.gcr)),
            black_start: Some(r(s.black.black_start)),
            black_max: Some(r(s.black.black_max)),
            black_shape: Some(s.black.shape),
            uca: Some(r(s.black.uca)),
            keep_pure_black: Some(s.keep_pure_black),
            table_grid: Some(s.table_grid),
            source_space: Some(self.source_space.name().to_string()),
            gray: self.ticket.model.gray.clone(),
        }
    }
}

fn percent(name: &str, value: f64, lo: f64, hi: f64) -> Result<f64> {
    if value.is_finite() && (lo..=hi).contains(&value) {
        Ok(value / 100.0)
    } else {
        Err(Error::usage(format!("--{name} {value}: allowed range is {lo}–{hi} %")))
    }
}

impl ModelArgs {
    /// Resolves the condition and applies the ticket, then the flags, over its defaults.
    pub fn resolve(&self) -> Result<ModelSetup> {
        let ticket = match &self.ticket {
            Some(path) => Ticket::load(path)?,
            None => Ticket::default(),
        };
        let t = &ticket.model;
        let condition_spec = self
            .condition
            .clone()
            .or_else(|| t.condition.clone())
            .unwrap_or_else(|| crate::press::builtin::DEFAULT.to_string());
        let condition = crate::press::load_condition(&condition_spec).map_err(|e| match (&self.condition, &self.ticket) {
            (None, Some(_)) if t.condition.is_some() => ticket.error_at("model", "condition", format!("= \"{condition_spec}\": {e}")),
            _ => e,
        })?;
        let mut settings = SeparationSettings::for_condition(&condition);
        // The ticket first (its values were range-checked when it was read)…
        if let Some(i) = &t.intent {
            settings.intent =
                Intent::from_str(i, true).map_err(|_| ticket.error_at("model", "intent", format!("= \"{i}\" is not an intent")))?;
        }
        if let Some(f) = &t.compress_from {
            settings.compress_from = CompressFrom::from_str(f, true)
                .map_err(|_| ticket.error_at("model", "compress_from", format!("= \"{f}\" is not picture or space")))?;
        }
        let pct = |v: f64| v / 100.0;
        settings.bpc = t.bpc.unwrap_or(settings.bpc);
        settings.tac = t.tac.map(pct).unwrap_or(settings.tac);
        settings.black.gcr = t.gcr.map(pct).unwrap_or(settings.black.gcr);
        settings.black.black_start = t.black_start.map(pct).unwrap_or(settings.black.black_start);
        settings.black.black_max = t.black_max.map(pct).unwrap_or(settings.black.black_max);
        settings.black.shape = t.black_shape.unwrap_or(settings.black.shape);
        settings.black.uca = t.uca.map(pct).unwrap_or(settings.black.uca);
        settings.keep_pure_black = t.keep_pure_black.unwrap_or(settings.keep_pure_black);
        settings.table_grid = t.table_grid.unwrap_or(settings.table_grid);
        let mut source_space = t.source_space.as_deref().and_then(RgbSpace::from_name).unwrap_or(RgbSpace::Srgb);
        // …then the flags.
        if let Some(i) = self.intent {
            settings.intent = i;
        }
        settings.bpc |= self.bpc;
        if let Some(f) = self.compress_from {
            settings.compress_from = f;
        }
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
            if !(v.is_finite() && (0.2..=5.0).contains(&v)) {
                return Err(Error::usage(format!("--black-shape {v}: allowed range is 0.2–5")));
            }
            settings.black.shape = v;
        }
        if let Some(v) = self.uca {
            settings.black.uca = percent("uca", v, 0.0, 100.0)?;
        }
        settings.keep_pure_black |= self.keep_pure_black;
        if let Some(n) = self.table_grid {
            if !(5..=129).contains(&n) {
                return Err(Error::usage(format!("--table-grid {n}: allowed range is 5–129")));
            }
            settings.table_grid = n;
        }
        if let Some(s) = self.source_space {
            source_space = s.into();
        }
        settings.validate()?;
        Ok(ModelSetup {
            condition,
            condition_spec,
            settings,
            source_space,
            ticket,
        })
    }
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
    /// Whether damaged JPEG data is accepted: the flag, else the ticket's `[limits] accept_damaged`.
    pub fn accept_damaged(&self, t: &Ticket) -> bool {
        self.accept_damaged || t.limits.accept_damaged.unwrap_or(false)
    }

    /// Reading limits: the flags, else the ticket's, else the defaults. A zero
    /// side and a zero or overflowing memory budget are refused.
    pub fn limits(&self, t: &Ticket) -> Result<Limits> {
        let mut limits = Limits::default();
        if let Some(side) = self.max_side.or(t.limits.max_side) {
            if side == 0 {
                return Err(Error::usage(
                    "--max-side is 0; give the largest image side to accept, in pixels (at least 1)",
                ));
            }
            limits.max_width = side;
            limits.max_height = side;
        }
        if let Some(mib) = self.max_memory.or(t.limits.max_memory_mib) {
            limits.max_bytes = match mib.checked_mul(1 << 20) {
                Some(bytes) if mib > 0 => bytes,
                _ => return Err(Error::usage(format!("--max-memory is {mib} MiB; give 1 to {} MiB", u64::MAX >> 20))),
            };
        }
        Ok(limits)
    }
}
