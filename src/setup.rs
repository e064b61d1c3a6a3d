//! Job set-up: from what a person asked for (flags, a ticket, a printing
//! condition's defaults) to validated, immutable settings and a ready
//! [`Workshop`]. `separate`, `inspect`, `proof` and the hot folder all go
//! through here; the command line only turns its parsed flags into a
//! [`ModelInput`] and a [`JobInput`].
//!
//! Precedence: a flag overrides the ticket, the ticket overrides the
//! condition's defaults. Every range is checked through
//! `crate::settings::Setting` (one table, one wording naming the flag or the
//! ticket's file, key and line).
//!
//! This module sits above `job` and `report` (it builds a workshop and its
//! settings echo) and below `hotfolder` and `cli`; the pure settings types it
//! merges live in `crate::settings`, below `press`.

use crate::colour::RgbSpace;
use crate::error::{Error, Result};
use crate::job::{GrayMode, JobOptions, PlateFormat, Workshop};
use crate::press::PrintingCondition;
use crate::raster::{Compression, Limits};
use crate::report::{SettingsReport, round_to};
use crate::separation::{CompressFrom, Intent, SeparationSettings, Separator};
use crate::settings::{InkEcho, Origin, Percent, Setting};
use crate::ticket::{LimitsSection, ModelSection, OutputSection, Ticket};
use std::path::{Path, PathBuf};

/// The model settings as given on the command line (or by another front
/// end), before the ticket and the condition are merged in: `None` and
/// `false` mean "not given".
#[derive(Debug, Clone, Default)]
pub struct ModelInput {
    pub ticket: Option<PathBuf>,
    /// A built-in condition name or a condition file.
    pub condition: Option<String>,
    pub intent: Option<Intent>,
    pub bpc: bool,
    pub compress_from: Option<CompressFrom>,
    pub tac: Option<Percent>,
    pub gcr: Option<Percent>,
    pub black_start: Option<Percent>,
    pub black_max: Option<Percent>,
    pub black_shape: Option<f64>,
    pub uca: Option<Percent>,
    pub keep_pure_black: bool,
    pub table_grid: Option<usize>,
    pub source_space: Option<RgbSpace>,
    /// Fit a measurement file given as the condition anew, neither reading
    /// nor writing the cache folder.
    pub no_cache: bool,
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
    pub fn model_section(&self) -> ModelSection {
        let s = &self.settings;
        let e = InkEcho::new(s.tac, &s.black);
        let r = |v: Percent| Percent(round_to(v.0, 4));
        ModelSection {
            condition: Some(self.condition_spec.clone()),
            source_condition: self.ticket.model.source_condition.clone(),
            intent: Some(s.intent.name().to_string()),
            bpc: Some(s.bpc),
            compress_from: Some(s.compress_from.name().to_string()),
            tac: Some(r(e.tac)),
            gcr: Some(r(e.gcr)),
            black_start: Some(r(e.black_start)),
            black_max: Some(r(e.black_max)),
            black_shape: Some(e.black_shape),
            uca: Some(r(e.uca)),
            keep_pure_black: Some(s.keep_pure_black),
            table_grid: Some(s.table_grid),
            source_space: Some(self.source_space.name().to_string()),
            gray: self.ticket.model.gray.clone(),
        }
    }

    /// The settings echo of the reports of this model.
    pub fn settings_report(&self) -> SettingsReport {
        SettingsReport::new(&self.condition, &self.settings, self.source_space)
    }

    /// The separator of this model.
    pub fn separator(&self) -> Result<Separator> {
        Separator::new(self.condition.clone(), self.settings.clone())
    }
}

/// The intent a ticket names (the ticket checked the name when it was read).
fn intent_named(name: &str) -> Option<Intent> {
    [Intent::Perceptual, Intent::Relative, Intent::Absolute]
        .into_iter()
        .find(|i| i.name() == name)
}

fn compress_from_named(name: &str) -> Option<CompressFrom> {
    [CompressFrom::Picture, CompressFrom::Space].into_iter().find(|c| c.name() == name)
}

/// A flag's percent value checked and converted to coverage.
fn flag_percent(flag: &str, value: Percent, setting: Setting) -> Result<f64> {
    Ok(Percent(setting.check(value.0, Origin::Flag(flag))?).coverage().0)
}

/// Reads a ticket and checks its `[checks] fail_if` rules, whose syntax
/// belongs to the inspection (`inspect::rules`), so that a bad rule is
/// refused with the ticket's file and line before any job starts, whichever
/// command reads the ticket.
pub fn load_ticket(path: &std::path::Path) -> Result<Ticket> {
    let ticket = Ticket::load(path)?;
    for rule in &ticket.checks.fail_if {
        if let Err(why) = crate::inspect::rules::Rule::parse_plain(rule) {
            return Err(ticket.error_at("checks", "fail_if", format!("rule \"{rule}\": {why}")));
        }
    }
    Ok(ticket)
}

impl ModelInput {
    /// Resolves the condition and applies the ticket, then the flags, over its defaults.
    pub fn resolve(&self) -> Result<ModelSetup> {
        let ticket = match &self.ticket {
            Some(path) => load_ticket(path)?,
            None => Ticket::default(),
        };
        let t = &ticket.model;
        let condition_spec = self
            .condition
            .clone()
            .or_else(|| t.condition.clone())
            .unwrap_or_else(|| crate::press::builtin::DEFAULT.to_string());
        let condition =
            crate::condition_fit::load_condition(&condition_spec, !self.no_cache).map_err(|e| match (&self.condition, &self.ticket) {
                (None, Some(_)) if t.condition.is_some() => ticket.error_at("model", "condition", format!("= \"{condition_spec}\": {e}")),
                _ => e,
            })?;
        let mut settings = SeparationSettings::for_condition(&condition);
        // The ticket first (its values were range-checked when it was read)…
        if let Some(i) = &t.intent {
            settings.intent = intent_named(i).ok_or_else(|| ticket.error_at("model", "intent", format!("= \"{i}\" is not an intent")))?;
        }
        if let Some(f) = &t.compress_from {
            settings.compress_from = compress_from_named(f)
                .ok_or_else(|| ticket.error_at("model", "compress_from", format!("= \"{f}\" is not picture or space")))?;
        }
        let pct = |v: Percent| v.coverage().0;
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
            settings.tac = flag_percent("--tac", v, Setting::Tac)?;
        }
        if let Some(v) = self.gcr {
            settings.black.gcr = flag_percent("--gcr", v, Setting::Gcr)?;
        }
        if let Some(v) = self.black_start {
            settings.black.black_start = flag_percent("--black-start", v, Setting::BlackStart)?;
        }
        if let Some(v) = self.black_max {
            settings.black.black_max = flag_percent("--black-max", v, Setting::BlackMax)?;
        }
        if let Some(v) = self.black_shape {
            settings.black.shape = Setting::BlackShape.check(v, Origin::Flag("--black-shape"))?;
        }
        if let Some(v) = self.uca {
            settings.black.uca = flag_percent("--uca", v, Setting::Uca)?;
        }
        settings.keep_pure_black |= self.keep_pure_black;
        if let Some(n) = self.table_grid {
            settings.table_grid = Setting::TableGrid.check_count(n, Origin::Flag("--table-grid"))?;
        }
        if let Some(s) = self.source_space {
            source_space = s;
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

/// How input images are read, as given (flags); the ticket's `[limits]` fills the rest.
#[derive(Debug, Clone, Default)]
pub struct ReadInput {
    /// When an embedded profile is unusable, assume the source space instead of failing.
    pub ignore_bad_profile: bool,
    /// Largest width or height accepted, pixels.
    pub max_side: Option<u32>,
    /// Largest decoded image accepted, MiB.
    pub max_memory_mib: Option<u64>,
    /// Separate JPEG files whose data is cut short or corrupt.
    pub accept_damaged: bool,
    /// The page of a multi-page TIFF, from 1.
    pub page: Option<u32>,
}

impl ReadInput {
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
        if let Some(mib) = self.max_memory_mib.or(t.limits.max_memory_mib) {
            limits.max_bytes = match mib.checked_mul(1 << 20) {
                Some(bytes) if mib > 0 => bytes,
                _ => return Err(Error::usage(format!("--max-memory is {mib} MiB; give 1 to {} MiB", u64::MAX >> 20))),
            };
        }
        Ok(limits)
    }
}

/// What a job is for: it decides which output settings apply.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum JobKind {
    /// `separate` and the hot folder: composite, plates and summary, every
    /// output setting from the flags, else the ticket, else the defaults.
    Separate,
    /// `inspect`: the separation is checked at the bits of the flag or the
    /// ticket, nothing is written by the workshop, CMYK input is checked as
    /// it is for the target condition.
    Inspect,
    /// `proof`: the separation is shown as `separate` makes it at 8 bits;
    /// CMYK input is shown as it is.
    Proof,
}

/// The job settings besides the model, as given: `None` and `false` mean
/// "not given".
#[derive(Debug, Clone, Default)]
pub struct JobInput {
    pub out_dir: Option<PathBuf>,
    pub bits: Option<u8>,
    pub plates: Option<PlateFormat>,
    pub compression: Option<Compression>,
    pub gray: Option<GrayMode>,
    /// CMYK input: the condition it was separated for (a name or a file).
    pub source_condition: Option<String>,
    /// CMYK input: re-separate black-only pixels too.
    pub reseparate_pure_black: bool,
    /// Replace outputs that exist.
    pub overwrite: bool,
    pub read: ReadInput,
    /// Keep tables and the embedded profile out of the cache folder.
    pub no_cache: bool,
}

/// The validated settings of one job: the model and every output and input
/// setting, ready to build its [`Workshop`].
#[derive(Debug, Clone)]
pub struct JobSetup {
    pub kind: JobKind,
    pub model: ModelSetup,
    pub out_dir: PathBuf,
    pub bits: u8,
    pub plates: PlateFormat,
    pub compression: Compression,
    pub gray: GrayMode,
    pub limits: Limits,
    pub accept_damaged: bool,
    pub page: Option<u32>,
    pub ignore_bad_profile: bool,
    pub overwrite: bool,
    /// The condition CMYK input was separated for, as given (`None`: the target's).
    pub source_condition: Option<String>,
    pub keep_pure_black_cmyk: bool,
    /// Tables and the embedded profile are kept in the cache folder (`crate::cache`).
    pub use_cache: bool,
}

/// The gray mode: the flag, else the ticket's, else neutral.
fn gray_mode(flag: Option<GrayMode>, t: &Ticket) -> GrayMode {
    flag.unwrap_or(match t.model.gray.as_deref() {
        Some("black-only") => GrayMode::BlackOnly,
        _ => GrayMode::Neutral,
    })
}

fn compression_name(c: Compression) -> &'static str {
    match c {
        Compression::None => "none",
        Compression::Lzw => "lzw",
        Compression::Deflate => "deflate",
    }
}

impl JobInput {
    /// The job's settings over a resolved model: the flags, else the ticket,
    /// else the defaults, as `kind` uses them.
    pub fn resolve(&self, kind: JobKind, model: ModelSetup) -> Result<JobSetup> {
        let t = &model.ticket;
        let separate = kind == JobKind::Separate;
        let out_dir = match kind {
            JobKind::Separate => self
                .out_dir
                .clone()
                .or_else(|| t.output.out_dir.clone())
                .unwrap_or_else(|| PathBuf::from("separated")),
            JobKind::Inspect | JobKind::Proof => self.out_dir.clone().unwrap_or_else(|| PathBuf::from(".")),
        };
        let bits = match kind {
            JobKind::Proof => 8,
            JobKind::Separate | JobKind::Inspect => self.bits.unwrap_or(t.output.bits.unwrap_or(8)),
        };
        let plates = match kind {
            JobKind::Separate => self.plates.unwrap_or(match t.output.plates.as_deref() {
                Some("png") => PlateFormat::Png,
                Some("none") => PlateFormat::None,
                _ => PlateFormat::Tiff,
            }),
            JobKind::Inspect | JobKind::Proof => PlateFormat::None,
        };
        let compression = match kind {
            JobKind::Separate => self.compression.unwrap_or(match t.output.compression.as_deref() {
                Some("none") => Compression::None,
                Some("lzw") => Compression::Lzw,
                _ => Compression::Deflate,
            }),
            JobKind::Inspect | JobKind::Proof => Compression::None,
        };
        let gray = gray_mode(self.gray.filter(|_| separate), t);
        let limits = self.read.limits(t)?;
        let source_condition = if separate {
            self.source_condition.clone().or_else(|| t.model.source_condition.clone())
        } else {
            None
        };
        Ok(JobSetup {
            kind,
            out_dir,
            bits,
            plates,
            compression,
            gray,
            limits,
            accept_damaged: self.read.accept_damaged(t),
            page: self.read.page,
            ignore_bad_profile: self.read.ignore_bad_profile,
            overwrite: self.overwrite,
            source_condition,
            keep_pure_black_cmyk: !(separate && self.reseparate_pure_black),
            use_cache: !self.no_cache,
            model,
        })
    }
}

impl JobSetup {
    /// The workshop that runs this job: the separator, its settings echo and the job options.
    pub fn workshop(&self) -> Result<Workshop> {
        let m = &self.model;
        let report = m.settings_report();
        let cache = crate::cache::open(self.use_cache);
        let separator = Separator::new_with_boundary(m.condition.clone(), m.settings.clone(), &|sep| {
            cache.boundary(&m.condition, &m.settings, || sep.printable_boundary())
        })?;
        let source_condition = match self.source_condition.as_deref() {
            Some(spec) => crate::condition_fit::load_condition(spec, self.use_cache)?,
            None => m.condition.clone(),
        };
        let options = JobOptions {
            out_dir: self.out_dir.clone(),
            bits: self.bits,
            plates: self.plates,
            compression: self.compression,
            overwrite: self.overwrite,
            limits: self.limits,
            accept_damaged: self.accept_damaged,
            page: self.page,
            gray: self.gray,
            ignore_bad_profile: self.ignore_bad_profile,
            source_space: m.source_space,
            source_condition,
            keep_pure_black_cmyk: self.keep_pure_black_cmyk,
        };
        Ok(Workshop::new(separator, report, options).with_cache(cache))
    }

    /// Every setting of this job as a ticket, so that it can be repeated exactly.
    pub fn effective_ticket(&self) -> Ticket {
        let t = &self.model.ticket;
        let mut model = self.model.model_section();
        model.source_condition = self.source_condition.clone();
        model.gray = Some(
            match self.gray {
                GrayMode::Neutral => "neutral",
                GrayMode::BlackOnly => "black-only",
            }
            .into(),
        );
        Ticket {
            model,
            output: OutputSection {
                out_dir: Some(self.out_dir.clone()),
                bits: Some(self.bits),
                plates: Some(format!("{:?}", self.plates).to_lowercase()),
                compression: Some(compression_name(self.compression).into()),
            },
            limits: LimitsSection {
                max_side: Some(self.limits.max_width),
                max_memory_mib: Some(self.limits.max_bytes >> 20),
                accept_damaged: self.accept_damaged.then_some(true),
            },
            checks: t.checks.clone(),
            source: None,
        }
    }
}

/// The [`Workshop`] of a separation job from a ticket alone (the hot
/// folder's), or from the built-in defaults when there is none, using the
/// cache folder when `use_cache`; the ticket as read is returned beside it
/// (its `[checks]` rules, for callers that check).
pub fn ticket_workshop(ticket: Option<&Path>, use_cache: bool) -> Result<(Workshop, Ticket)> {
    let model = ModelInput {
        ticket: ticket.map(Path::to_path_buf),
        no_cache: !use_cache,
        ..ModelInput::default()
    }
    .resolve()?;
    let job = JobInput {
        no_cache: !use_cache,
        ..JobInput::default()
    }
    .resolve(JobKind::Separate, model)?;
    Ok((job.workshop()?, job.model.ticket.clone()))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn a_bad_check_rule_in_a_ticket_names_the_line_and_the_problem() {
        let dir = std::env::temp_dir().join(format!("platesmith-setup-{}", std::process::id()));
        std::fs::create_dir_all(&dir).unwrap();
        let bad = dir.join("bad.toml");
        std::fs::write(&bad, "[checks]\nfail_if = [\"tac>300\", \"ink>3\"]\n").unwrap();
        let err = load_ticket(&bad).unwrap_err().to_string();
        assert!(
            err.contains("line 2") && err.contains("checks.fail_if") && err.contains("unknown metric 'ink'"),
            "{err}"
        );
        let good = dir.join("good.toml");
        std::fs::write(&good, "[checks]\nfail_if = [\"tac>300\"]\n").unwrap();
        assert!(load_ticket(&good).is_ok());
        std::fs::remove_dir_all(&dir).unwrap();
    }
}
