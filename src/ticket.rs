//! Job tickets: a TOML file that holds every model, black generation, limit
//! and output setting of a job, so that it can be repeated exactly. Flags on
//! the command line override the ticket; the ticket overrides the printing
//! condition's defaults. Values a person reads are percent.
//!
//! ```toml
//! [model]
//! condition = "coated-offset"
//! intent = "perceptual"
//! tac = 300
//! gcr = 60
//!
//! [output]
//! bits = 8
//! plates = "tiff"
//! ```

use crate::error::{Error, Result};
use crate::settings::{Origin, Percent, Setting};
use serde::{Deserialize, Serialize};
use std::path::{Path, PathBuf};

/// The separation model of a job.
#[derive(Debug, Clone, Default, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct ModelSection {
    #[serde(skip_serializing_if = "Option::is_none")]
    pub condition: Option<String>,
    /// Condition a CMYK input was separated for.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub source_condition: Option<String>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub intent: Option<String>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub bpc: Option<bool>,
    /// Where perceptual compression starts from: "picture" or "space".
    #[serde(skip_serializing_if = "Option::is_none")]
    pub compress_from: Option<String>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub tac: Option<Percent>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub gcr: Option<Percent>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub black_start: Option<Percent>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub black_max: Option<Percent>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub black_shape: Option<f64>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub uca: Option<Percent>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub keep_pure_black: Option<bool>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub table_grid: Option<usize>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub source_space: Option<String>,
    /// Grayscale input: "neutral" (separated as neutrals) or "black-only".
    #[serde(skip_serializing_if = "Option::is_none")]
    pub gray: Option<String>,
}

/// What a job writes.
#[derive(Debug, Clone, Default, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct OutputSection {
    #[serde(skip_serializing_if = "Option::is_none")]
    pub out_dir: Option<PathBuf>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub bits: Option<u8>,
    /// "tiff", "png" or "none".
    #[serde(skip_serializing_if = "Option::is_none")]
    pub plates: Option<String>,
    /// "none", "lzw" or "deflate" (the default).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub compression: Option<String>,
}

/// Resource limits for reading images.
#[derive(Debug, Clone, Default, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct LimitsSection {
    /// Largest width or height accepted, pixels.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub max_side: Option<u32>,
    /// Largest decoded image accepted, MiB.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub max_memory_mib: Option<u64>,
    /// Separate JPEG files whose data is cut short or corrupt (noted in the summary and the
    /// hot folder's log) instead of refusing them.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub accept_damaged: Option<bool>,
}

/// Pass/fail rules for checks (`inspect`, the hot folder).
#[derive(Debug, Clone, Default, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct ChecksSection {
    #[serde(default, skip_serializing_if = "Vec::is_empty")]
    pub fail_if: Vec<String>,
}

/// A whole ticket.
#[derive(Debug, Clone, Default, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Ticket {
    #[serde(default)]
    pub model: ModelSection,
    #[serde(default)]
    pub output: OutputSection,
    #[serde(default)]
    pub limits: LimitsSection,
    #[serde(default)]
    pub checks: ChecksSection,
    /// Where the ticket was read from (for messages), not part of the file.
    #[serde(skip)]
    pub source: Option<(PathBuf, String)>,
}

/// The 1-based line where `section.key` is set in a ticket's text.
pub fn line_of(text: &str, section: &str, key: &str) -> Option<usize> {
    let mut current = String::new();
    for (i, line) in text.lines().enumerate() {
        let t = line.trim();
        if let Some(rest) = t.strip_prefix('[') {
            current = rest.trim_end_matches(']').trim().to_string();
            continue;
        }
        if current == section
            && let Some((k, _)) = t.split_once('=')
            && k.trim().trim_matches('"') == key
        {
            return Some(i + 1);
        }
    }
    None
}

impl Ticket {
    /// Reads and validates a ticket file.
    pub fn load(path: &Path) -> Result<Ticket> {
        let text = std::fs::read_to_string(path)
            .map_err(|e| Error::input(path, format!("cannot read the ticket: {}", crate::error::io_reason(&e))))?;
        Ticket::parse(&text, path)
    }

    pub fn parse(text: &str, path: &Path) -> Result<Ticket> {
        let mut ticket: Ticket = toml::from_str(text).map_err(|e| {
            let line = e
                .span()
                .map(|s| text.as_bytes()[..s.start.min(text.len())].iter().filter(|&&b| b == b'\n').count() + 1);
            let msg = e.message().trim().to_string();
            match line {
                Some(l) => Error::input(path, format!("line {l}: {msg}")),
                None => Error::input(path, msg),
            }
        })?;
        ticket.source = Some((path.to_path_buf(), text.to_string()));
        ticket.validate()?;
        Ok(ticket)
    }

    /// An error about `section.key`, naming the ticket file and the line.
    pub fn error_at(&self, section: &str, key: &str, message: impl std::fmt::Display) -> Error {
        match &self.source {
            Some((path, text)) => match line_of(text, section, key) {
                Some(line) => Error::input(path, format!("line {line}: {section}.{key} {message}")),
                None => Error::input(path, format!("{section}.{key} {message}")),
            },
            None => Error::usage(format!("{section}.{key} {message}")),
        }
    }

    /// Checks `[model] key = value` through the one table of ranges.
    fn check(&self, key: &str, value: Option<f64>, setting: Setting) -> Result<()> {
        let Some(v) = value else { return Ok(()) };
        let name = format!("model.{key}");
        let origin = match &self.source {
            Some((path, text)) => Origin::File {
                path,
                key: &name,
                line: line_of(text, "model", key),
            },
            None => Origin::Key(&name),
        };
        setting.check(v, origin).map(|_| ())
    }

    fn validate(&self) -> Result<()> {
        let m = &self.model;
        let p = |v: Option<Percent>| v.map(|p| p.0);
        self.check("tac", p(m.tac), Setting::Tac)?;
        self.check("gcr", p(m.gcr), Setting::Gcr)?;
        self.check("black_start", p(m.black_start), Setting::BlackStart)?;
        self.check("black_max", p(m.black_max), Setting::BlackMax)?;
        self.check("black_shape", m.black_shape, Setting::BlackShape)?;
        self.check("uca", p(m.uca), Setting::Uca)?;
        self.check("table_grid", m.table_grid.map(|n| n as f64), Setting::TableGrid)?;
        let choice = |section: &str, key: &str, value: &Option<String>, allowed: &[&str]| -> Result<()> {
            match value {
                Some(v) if !allowed.contains(&v.as_str()) => {
                    Err(self.error_at(section, key, format!("= \"{v}\": expected one of {}", allowed.join(", "))))
                }
                _ => Ok(()),
            }
        };
        choice("model", "intent", &m.intent, &["perceptual", "relative", "absolute"])?;
        choice("model", "compress_from", &m.compress_from, &["picture", "space"])?;
        choice("model", "source_space", &m.source_space, &["srgb", "display-p3", "oprgb", "romm"])?;
        choice("model", "gray", &m.gray, &["neutral", "black-only"])?;
        choice("output", "plates", &self.output.plates, &["tiff", "png", "none"])?;
        choice("output", "compression", &self.output.compression, &["none", "lzw", "deflate"])?;
        if let Some(b) = self.output.bits
            && b != 8
            && b != 16
        {
            return Err(self.error_at("output", "bits", format!("= {b}: expected 8 or 16")));
        }
        if let Some(s) = self.limits.max_side
            && s == 0
        {
            return Err(self.error_at("limits", "max_side", "= 0: must be at least 1"));
        }
        if let Some(s) = self.limits.max_memory_mib
            && s == 0
        {
            return Err(self.error_at("limits", "max_memory_mib", "= 0: must be at least 1"));
        }
        Ok(())
    }

    /// The ticket as TOML text.
    pub fn to_toml(&self) -> Result<String> {
        toml::to_string_pretty(self).map_err(|e| Error::Internal(format!("cannot write the ticket: {e}")))
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn unknown_keys_name_the_line() {
        let err = Ticket::parse("[model]\ntac = 300\ncolour = 1\n", Path::new("job.toml"))
            .unwrap_err()
            .to_string();
        assert!(
            err.contains("job.toml") && err.contains("line 3") && err.contains("colour"),
            "{err}"
        );
    }

    #[test]
    fn out_of_range_values_name_key_line_and_range() {
        let err = Ticket::parse("[model]\n\ntac = 450\n", Path::new("job.toml"))
            .unwrap_err()
            .to_string();
        assert!(
            err.contains("line 3") && err.contains("model.tac") && err.contains("100–400"),
            "{err}"
        );
        let err = Ticket::parse("[model]\ngcr = -5\n", Path::new("job.toml")).unwrap_err().to_string();
        assert!(err.contains("line 2") && err.contains("model.gcr"), "{err}");
    }

    #[test]
    fn broken_toml_names_the_line() {
        let err = Ticket::parse("[model]\ntac = = 3\n", Path::new("job.toml"))
            .unwrap_err()
            .to_string();
        assert!(err.contains("line 2"), "{err}");
    }

    #[test]
    fn round_trip() {
        let t = Ticket::parse(
            "[model]\ntac = 300\nintent = \"relative\"\n[output]\nbits = 16\n",
            Path::new("a.toml"),
        )
        .unwrap();
        let back = Ticket::parse(&t.to_toml().unwrap(), Path::new("b.toml")).unwrap();
        assert_eq!(back.model, t.model);
        assert_eq!(back.output, t.output);
    }
}
